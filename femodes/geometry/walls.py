"""Walls a user marks magnetic (PMC) on a section cut by hand.

Every wall of a section is a perfect electric conductor (PEC: n x E = 0) unless marked.  A user
who cuts a guide along a plane of symmetry and solves one symmetry class by hand marks the cut
a magnetic wall (PMC: n x H = 0), the image-theory model of a plane the electric field crosses at
right angles (common practice).  For the scalar potentials of a homogeneously filled guide the
magnetic wall is

* TM (psi = E_z): n x H = 0 leaves E_z free and makes its normal derivative zero, since
  H_t = (j omega eps / kc^2) z x grad_t E_z has the tangential component
  (j omega eps / kc^2) d E_z / dn: Neumann, the natural condition;
* TE (psi = H_z): H_z itself is tangential, so H_z = 0: Dirichlet.

That is the reverse of an electric wall (TM Dirichlet, TE Neumann).  A mark is a point on a
straight side of the outer wall and marks that whole side (loop segment); marks are points so
that rigid motions and scaling carry them like every other coordinate of the section.

Where a magnetic side meets an electric one the problem is Dirichlet on one side and Neumann on
the other, and the corner exponents are those of the mixed problem, (k - 1/2) pi / alpha
(:class:`femodes.geometry.loops.Corner` with ``mixed``); a junction inside a straight line
(alpha = pi) is singular like r^(1/2).
"""

from __future__ import annotations

import math

import numpy as np

from femodes.errors import FemodesError
from femodes.geometry.loops import Corner, Line

__all__ = ["mark_points", "resolve_marks", "magnetic_lines", "on_lines", "wall_junctions"]


def mark_points(points, what="magnetic"):
    """A tuple of (x, y) float pairs from the user's ``points`` (metres), checked."""
    if points is None:
        return ()
    if isinstance(points, (str, bytes)) or not hasattr(points, "__iter__"):
        raise FemodesError(f"{what} walls are given as a list of points (x, y) in metres, one on each "
                           f"side to mark, got {points!r}")
    pts = list(points)
    if len(pts) == 2 and all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in pts):
        pts = [pts]  # one point given bare
    out = []
    for p in pts:
        try:
            x, y = (float(v) for v in p)
            bad = any(isinstance(v, bool) for v in p)
        except (TypeError, ValueError):
            raise FemodesError(f"each {what} wall mark must be a point (x, y) of two numbers in metres, "
                               f"got {p!r}") from None
        if bad or not (math.isfinite(x) and math.isfinite(y)):
            raise FemodesError(f"each {what} wall mark must be a point (x, y) of two finite numbers in metres, "
                               f"got {p!r}")
        out.append((x, y))
    return tuple(out)


def _distance_to_line(seg, p):
    """Distance from point p to the straight segment and the parameter (0..1) of the nearest point."""
    a, b = np.asarray(seg.start, float), np.asarray(seg.end, float)
    d = b - a
    t = float(np.clip(np.dot(np.asarray(p) - a, d) / max(float(np.dot(d, d)), 1e-300), 0.0, 1.0))
    return float(np.hypot(*(a + t * d - np.asarray(p)))), t


def resolve_marks(section, points):
    """For each mark (x, y) the index of the straight side of the outer wall it lies on, checked:
    on the outer wall (not an inner conductor, not an arc), away from the side's ends, not every
    side marked."""
    if not points:
        return ()
    size = section.size
    tol = 1e-6 * size
    segs = section.outer.segments
    out = []
    for p in points:
        best = min(range(len(segs)), key=lambda i: _seg_distance(segs[i], p))
        dist = _seg_distance(segs[best], p)
        hole = min((_seg_distance(s, p) for h in section.holes for s in h.segments), default=math.inf)
        if hole <= tol and hole < dist:
            raise FemodesError(f"the magnetic wall mark ({p[0] * 1e3:.6g}, {p[1] * 1e3:.6g}) mm lies on an inner "
                               "conductor: only sides of the outer wall can be marked magnetic")
        if dist > tol:
            raise FemodesError(f"the magnetic wall mark ({p[0] * 1e3:.6g}, {p[1] * 1e3:.6g}) mm is not on the outer "
                               f"wall (nearest side {dist * 1e3:.3g} mm away): give a point on the side to mark, "
                               "where the guide lies after any move")
        seg = segs[best]
        if not isinstance(seg, Line):
            raise FemodesError(f"the magnetic wall mark ({p[0] * 1e3:.6g}, {p[1] * 1e3:.6g}) mm lies on a curved "
                               "side: only straight sides can be marked magnetic (a symmetry cut is straight)")
        _, t = _distance_to_line(seg, p)
        if min(t, 1.0 - t) * seg.length <= 1e3 * tol:
            raise FemodesError(f"the magnetic wall mark ({p[0] * 1e3:.6g}, {p[1] * 1e3:.6g}) mm is at a corner "
                               "of the outline, where two sides meet: give a point inside the side to mark")
        out.append(best)
    if len(set(out)) == len(segs):
        raise FemodesError("every side of the outer wall is marked magnetic: at least one wall must stay "
                           "electric (a guide needs a conductor)")
    return tuple(sorted(set(out)))


def _seg_distance(seg, p):
    if isinstance(seg, Line):
        return _distance_to_line(seg, p)[0]
    q = seg.samples(256)
    return float(np.min(np.hypot(q[0] - p[0], q[1] - p[1])))


def magnetic_lines(section):
    """The straight sides of ``section`` marked magnetic (Line segments, outer wall)."""
    marks = getattr(section, "magnetic", ())
    if not marks:
        return ()
    return tuple(section.outer.segments[i] for i in resolve_marks(section, marks))


def on_lines(lines, a, b, size):
    """Mask of the facets with end points ``a``, ``b`` (2, m) that lie on one of ``lines``
    (both ends within 1e-9 of ``size`` of the same side)."""
    a, b = np.asarray(a, float), np.asarray(b, float)
    out = np.zeros(a.shape[1], dtype=bool)
    tol = 1e-9 * size
    for seg in lines:
        s, e = np.asarray(seg.start, float)[:, None], np.asarray(seg.end, float)[:, None]
        d = e - s
        dd = float(np.sum(d * d))

        def near(p):
            t = np.clip(np.sum((p - s) * d, axis=0) / dd, 0.0, 1.0)
            return np.hypot(*(s + t * d - p)) <= tol
        out |= near(a) & near(b)
    return out


def wall_junctions(section, lines):
    """Corners of the outer wall where a magnetic side meets an electric one, as ``mixed``
    Corners: the loop's own corners there, and straight joints (angle pi) too."""
    segs = section.outer.segments
    marked = set(id(s) for s in lines)
    out = []
    for i in range(len(segs)):
        a, b = segs[i - 1], segs[i]
        if (id(a) in marked) == (id(b) in marked):
            continue
        ta, tb = a.tangent(1.0), b.tangent(0.0)
        turn = math.atan2(ta[0] * tb[1] - ta[1] * tb[0], float(np.dot(ta, tb)))
        out.append(Corner(tuple(float(v) for v in b.start), math.pi - turn, mixed=True))
    return out
