"""Outline pieces of a cross-section: straight and circular segments (:class:`Line`, :class:`Arc`),
closed loops of them (:class:`Loop`), their corners (:class:`Corner`, with the interior angle that
sets the field's singularity), filleted polygons, and the plane-geometry checks the sections use
(self-intersection, crossing, containment, distances).  SI metres.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from femodes.errors import FemodesError


@dataclass(frozen=True)
class Line:
    """Straight segment from ``start`` to ``end`` (metres)."""

    start: tuple
    end: tuple

    def point(self, s):
        s = np.asarray(s, dtype=float)
        a, b = np.asarray(self.start), np.asarray(self.end)
        return a[:, None] + (b - a)[:, None] * s[None, :]

    def tangent(self, s):
        a, b = np.asarray(self.start), np.asarray(self.end)
        d = b - a
        return d / np.linalg.norm(d)

    def reversed(self):
        return Line(self.end, self.start)

    def mapped(self, f):
        return Line(f(self.start), f(self.end))

    def samples(self, n):
        return self.point(np.linspace(0.0, 1.0, n + 1))

    @property
    def length(self):
        return float(math.dist(self.start, self.end))

    radius_of_curvature = math.inf


@dataclass(frozen=True)
class Arc:
    """Arc of the ellipse ``center + R(rotation) [rx cos t, ry sin t]`` for t from ``t0`` to ``t1``.

    A circular arc has ``rx == ry``.  ``t1 > t0`` runs counter-clockwise (before any mirroring).
    """

    center: tuple
    rx: float
    ry: float
    rotation: float
    t0: float
    t1: float

    def _xy(self, t):
        c, s = math.cos(self.rotation), math.sin(self.rotation)
        u, v = self.rx * np.cos(t), self.ry * np.sin(t)
        return np.array([self.center[0] + c * u - s * v, self.center[1] + s * u + c * v])

    def point(self, s):
        s = np.asarray(s, dtype=float)
        return self._xy(self.t0 + (self.t1 - self.t0) * s)

    def tangent(self, s):
        t = self.t0 + (self.t1 - self.t0) * s
        c, sn = math.cos(self.rotation), math.sin(self.rotation)
        du, dv = -self.rx * math.sin(t), self.ry * math.cos(t)
        d = np.array([c * du - sn * dv, sn * du + c * dv]) * math.copysign(1.0, self.t1 - self.t0)
        return d / np.linalg.norm(d)

    @property
    def start(self):
        return tuple(float(v) for v in self._xy(self.t0))

    @property
    def end(self):
        return tuple(float(v) for v in self._xy(self.t1))

    def reversed(self):
        return replace(self, t0=self.t1, t1=self.t0)

    def samples(self, n):
        return self.point(np.linspace(0.0, 1.0, n + 1))

    @property
    def is_circular(self):
        return math.isclose(self.rx, self.ry, rel_tol=1e-12)

    @property
    def radius_of_curvature(self):
        """Smallest radius of curvature of the full ellipse: min(rx, ry)^2 / max(rx, ry)."""
        return min(self.rx, self.ry) ** 2 / max(self.rx, self.ry)

    @property
    def length(self):
        p = self.samples(256)
        return float(np.sum(np.linalg.norm(np.diff(p, axis=1), axis=0)))

    def split(self, max_sweep=math.pi / 2):
        """Split into arcs whose parameter sweep is at most ``max_sweep`` (gmsh needs < pi)."""
        n = max(1, int(math.ceil(abs(self.t1 - self.t0) / max_sweep - 1e-12)))
        ts = np.linspace(self.t0, self.t1, n + 1)
        return [replace(self, t0=float(a), t1=float(b)) for a, b in zip(ts[:-1], ts[1:])]


def _affine_arc(arc: Arc, kind: str, arg) -> Arc:
    """Apply a rigid motion to an arc. kind: 'translate' (dx, dy), 'rotate' angle, 'mirror_x', 'mirror_y'."""
    cx, cy = arc.center
    if kind == "translate":
        return replace(arc, center=(cx + arg[0], cy + arg[1]))
    if kind == "rotate":
        c, s = math.cos(arg), math.sin(arg)
        return replace(arc, center=(c * cx - s * cy, s * cx + c * cy), rotation=arc.rotation + arg)
    if kind == "mirror_x":  # x -> -x
        return Arc((-cx, cy), arc.rx, arc.ry, -arc.rotation, math.pi - arc.t0, math.pi - arc.t1)
    if kind == "mirror_y":  # y -> -y
        return Arc((cx, -cy), arc.rx, arc.ry, -arc.rotation, -arc.t0, -arc.t1)
    raise ValueError(kind)


def _point_map(kind, arg):
    if kind == "translate":
        return lambda p: (p[0] + arg[0], p[1] + arg[1])
    if kind == "rotate":
        c, s = math.cos(arg), math.sin(arg)
        return lambda p: (c * p[0] - s * p[1], s * p[0] + c * p[1])
    if kind == "mirror_x":
        return lambda p: (-p[0], p[1])
    if kind == "mirror_y":
        return lambda p: (p[0], -p[1])
    raise ValueError(kind)


@dataclass(frozen=True)
class Corner:
    """A point where two boundary segments meet at an angle.

    ``angle`` is the interior angle seen from inside the guide (radians).  Corners with
    angle > pi are re-entrant: the transverse fields are singular there, like r^(pi/angle - 1).
    """

    point: tuple
    angle: float
    #: True where a symmetry wall (a cut of :mod:`femodes.geometry.mirror`) meets a wall or
    #: another cut: depending on the symmetry class the corner is Dirichlet-Neumann (mixed), or
    #: of one kind, and its exponents are those of both problems (see :meth:`exponents`)
    mixed: bool = False

    @property
    def reentrant(self):
        return self.angle > math.pi * (1 + 1e-9)

    @property
    def exponent(self):
        """Singular exponent lambda = pi / angle of the potential near the corner; at a
        ``mixed`` corner pi / (2 angle), the first exponent of the Dirichlet-Neumann problem."""
        return math.pi / (2.0 * self.angle) if self.mixed else math.pi / self.angle

    def exponents(self, upto):
        """The corner exponents lambda_k = k pi / angle, k = 1, 2, ..., up to ``upto``.

        Near a straight-sided corner of interior angle alpha on a PEC wall a solution of the
        Helmholtz equation expands in r^(lambda_k) sin(lambda_k theta) (Dirichlet: TM's E_z,
        and a wall potential) or r^(lambda_k) cos(lambda_k theta) (Neumann: TE's H_z; k = 0 is the
        constant), times power series in r^2, with lambda_k = k pi / alpha for both problems
        (Grisvard, "Elliptic problems in nonsmooth domains", 1985, sections 4.4 and 5.1; Strang &
        Fix, "An analysis of the finite element method", 1973, ch. 8; from memory).  A term is
        smooth (a polynomial times an entire function) when lambda_k is a whole number, and singular
        otherwise: its derivatives of order > lambda_k blow up at the corner.  A corner where a
        straight side meets an arc (or two arcs meet) is taken with its tangent angle.

        At a ``mixed`` corner (a symmetry wall meeting a wall) the problem is Dirichlet on one
        side and Neumann on the other for some symmetry classes: r^(mu_k) sin(mu_k theta) with
        mu_k = (k - 1/2) pi / alpha (Grisvard 1985, section 5.2; from memory), and of one kind
        for the others (k pi / alpha): together every multiple of pi / (2 alpha), which is what
        is returned (the one mesh serves every class).
        """
        lam = self.exponent
        return [k * lam for k in range(1, int(upto / lam) + 1)]

    @property
    def singular_exponent(self):
        """The smallest non-integer exponent k pi / angle (Dirichlet and Neumann alike), or inf
        where pi / angle is a whole number (angles pi / n: every term is smooth).  It is the
        first term, k = 1, whenever pi / angle is not whole; when it is whole, so is every
        multiple."""
        lam = self.exponent
        return math.inf if abs(lam - round(lam)) < 1e-9 else lam

    def limits_rate(self, order):
        """True if the corner's singular term caps the eigenvalue convergence of conforming
        order-``order`` elements on a quasi-uniform mesh: the error of the eigenvalue falls like
        h^(2 min(p, lambda)) (Strang & Fix ch. 8), so the corner limits when lambda < p."""
        return self.singular_exponent < order


@dataclass(frozen=True)
class Loop:
    """A closed chain of segments; each segment's end is the next one's start."""

    segments: tuple

    def polyline(self, per_segment=64, line_pieces=1):
        """Sampled points (2, n) of the closed loop, last point not repeated: ``line_pieces``
        pieces along each straight segment, and ``per_segment`` pieces along each arc."""
        pts = [seg.samples(line_pieces if isinstance(seg, Line) else per_segment)[:, :-1] for seg in self.segments]
        return np.hstack(pts)

    def signed_area(self):
        """Enclosed area (m^2), positive for counter-clockwise loops (exact for lines and arcs)."""
        return sum(_gauss_area(s) for s in self.segments)

    def reversed(self):
        return Loop(tuple(s.reversed() for s in reversed(self.segments)))

    def transformed(self, kind, arg):
        f = _point_map(kind, arg)
        segs = []
        for s in self.segments:
            segs.append(s.mapped(f) if isinstance(s, Line) else _affine_arc(s, kind, arg))
        loop = Loop(tuple(segs))
        if kind.startswith("mirror"):
            loop = loop.reversed()  # a reflection flips orientation; restore it
        return loop

    def corners(self):
        """Corners between consecutive segments with a tangent jump (interior on the left)."""
        out = []
        n = len(self.segments)
        for i in range(n):
            a, b = self.segments[i - 1], self.segments[i]
            ta, tb = a.tangent(1.0), b.tangent(0.0)
            turn = math.atan2(ta[0] * tb[1] - ta[1] * tb[0], float(np.dot(ta, tb)))
            if abs(turn) > 1e-9:
                out.append(Corner(tuple(float(v) for v in b.start), math.pi - turn))
        return out

    @property
    def length(self):
        return sum(s.length for s in self.segments)


def _polygon_loop(vertices) -> Loop:
    v = [tuple(float(c) for c in p) for p in vertices]
    return Loop(tuple(Line(v[i], v[(i + 1) % len(v)]) for i in range(len(v))))


def _full_ellipse_loop(center, rx, ry) -> Loop:
    return Loop(tuple(Arc(tuple(center), rx, ry, 0.0, 0.0, 2 * math.pi).split(math.pi / 2)))


def _filleted_loop(vertices, radii) -> Loop:
    """Polygon with circular fillets of the given radius at each vertex (0 = sharp).

    Works for convex and re-entrant vertices; raises if two fillets do not fit on their shared edge.
    """
    v = np.asarray(vertices, dtype=float)
    n = len(v)
    geo = []  # per vertex: (d_in, d_out, half_angle, tangent_length)
    for i in range(n):
        p, a, b = v[i], v[i - 1], v[(i + 1) % n]
        d1 = (a - p) / np.linalg.norm(a - p)
        d2 = (b - p) / np.linalg.norm(b - p)
        half = 0.5 * math.acos(max(-1.0, min(1.0, float(np.dot(d1, d2)))))
        r = float(radii[i])
        t = r / math.tan(half) if (r > 0 and 1e-9 < half < math.pi / 2 - 1e-12) else 0.0
        geo.append((d1, d2, half, t))
    for i in range(n):
        j = (i + 1) % n
        edge = float(np.linalg.norm(v[j] - v[i]))
        if geo[i][3] + geo[j][3] > edge * (1 + 1e-12):
            raise FemodesError(
                f"corner radii do not fit on the edge from ({v[i][0] * 1e3:.6g}, {v[i][1] * 1e3:.6g}) mm to "
                f"({v[j][0] * 1e3:.6g}, {v[j][1] * 1e3:.6g}) mm ({edge * 1e3:.6g} mm long): the two fillets need "
                f"{(geo[i][3] + geo[j][3]) * 1e3:.6g} mm; use smaller radii")
    arcs = []
    for i in range(n):
        d1, d2, half, t = geo[i]
        p = v[i]
        if t == 0.0:
            arcs.append(None)
            continue
        r = float(radii[i])
        q1, q2 = p + d1 * t, p + d2 * t
        bis = (d1 + d2) / np.linalg.norm(d1 + d2)
        c = p + bis * (r / math.sin(half))
        a1 = math.atan2(q1[1] - c[1], q1[0] - c[0])
        a2 = math.atan2(q2[1] - c[1], q2[0] - c[0])
        sweep = (a2 - a1 + math.pi) % (2 * math.pi) - math.pi  # the short way round
        arcs.append(Arc((float(c[0]), float(c[1])), r, r, 0.0, a1, a1 + sweep))
    segs = []
    for i in range(n):
        j = (i + 1) % n
        if arcs[i] is not None:
            segs.append(arcs[i])
        start = arcs[i].end if arcs[i] is not None else tuple(float(c) for c in v[i])
        stop = arcs[j].start if arcs[j] is not None else tuple(float(c) for c in v[j])
        if math.dist(start, stop) > 1e-12 * float(np.max(np.ptp(v, axis=0))):
            segs.append(Line(start, stop))
    return Loop(tuple(segs))


def _polyline_self_intersects(pts, scale):
    """True if two non-adjacent edges of the closed polyline (2, n) cross (vectorised)."""
    a = pts.T
    b = np.roll(a, -1, axis=0)
    n = len(a)
    eps = 1e-12 * scale * scale

    def orient(p, q, r):
        return (q[..., 0] - p[..., 0]) * (r[..., 1] - p[..., 1]) - (q[..., 1] - p[..., 1]) * (r[..., 0] - p[..., 0])

    for i in range(n - 2):
        j = np.arange(i + 2, n if i > 0 else n - 1)
        if j.size == 0:
            continue
        d1 = orient(a[j], b[j], a[i])
        d2 = orient(a[j], b[j], b[i])
        d3 = orient(a[i], b[i], a[j])
        d4 = orient(a[i], b[i], b[j])
        cross = (((d1 > eps) & (d2 < -eps)) | ((d1 < -eps) & (d2 > eps))) & \
                (((d3 > eps) & (d4 < -eps)) | ((d3 < -eps) & (d4 > eps)))
        if np.any(cross):
            return True
    return False


def _polylines_cross(pa, pb):
    """True if an edge of closed polyline pa properly crosses an edge of closed polyline pb."""
    a0, b0 = pa.T, pb.T
    a1, b1 = np.roll(a0, -1, axis=0), np.roll(b0, -1, axis=0)

    def orient(p, q, r):
        return (q[..., 0] - p[..., 0]) * (r[..., 1] - p[..., 1]) - (q[..., 1] - p[..., 1]) * (r[..., 0] - p[..., 0])

    P, Q = a0[:, None, :], a1[:, None, :]
    R, S = b0[None, :, :], b1[None, :, :]
    d1, d2 = orient(R, S, P), orient(R, S, Q)
    d3, d4 = orient(P, Q, R), orient(P, Q, S)
    return bool(np.any((d1 * d2 < 0) & (d3 * d4 < 0)))


def _point_in_polygon(pt, poly):
    x, y = pt
    px, py = poly
    inside = False
    n = len(px)
    j = n - 1
    for i in range(n):
        if (py[i] > y) != (py[j] > y):
            xc = px[j] + (y - py[j]) * (px[i] - px[j]) / (py[i] - py[j])
            if x < xc:
                inside = not inside
        j = i
    return inside


def _point_edge_distances(pa, pb):
    """For each vertex of polyline pa (2, n): its distance to the nearest edge of closed polyline pb."""
    a = pa.T
    b0 = pb.T
    b1 = np.roll(b0, -1, axis=0)
    d = b1 - b0
    L2 = np.maximum(np.sum(d * d, axis=1), 1e-300)
    out = []
    for chunk in np.array_split(a, max(1, len(a) // 256)):
        w = chunk[:, None, :] - b0[None, :, :]
        t = np.clip(np.sum(w * d[None], axis=2) / L2[None], 0, 1)
        proj = b0[None] + t[..., None] * d[None]
        out.append(np.sqrt(np.min(np.sum((chunk[:, None, :] - proj) ** 2, axis=2), axis=1)))
    return np.concatenate(out)


def _min_distance(pa, pb):
    """Smallest distance between the vertices of one closed polyline and the edges of another."""
    return float(np.min(_point_edge_distances(pa, pb)))


def _max_distance(pa, pb):
    """Largest vertex-to-nearest-edge distance (one-sided Hausdorff distance of pa from pb)."""
    return float(np.max(_point_edge_distances(pa, pb)))


def _gauss_area(seg, n=24):
    """(1/2) int (x dy - y dx) along one segment, Gauss-Legendre (exact to rounding for arcs <= pi/2)."""
    if isinstance(seg, Line):
        (x0, y0), (x1, y1) = seg.start, seg.end
        return 0.5 * (x0 * y1 - x1 * y0)
    s, w = np.polynomial.legendre.leggauss(n)
    total = 0.0
    for piece in seg.split(math.pi / 4):
        t = piece.t0 + (piece.t1 - piece.t0) * 0.5 * (s + 1)
        c, sn = math.cos(piece.rotation), math.sin(piece.rotation)
        u, v = piece.rx * np.cos(t), piece.ry * np.sin(t)
        du, dv = -piece.rx * np.sin(t), piece.ry * np.cos(t)
        x, y = piece.center[0] + c * u - sn * v, piece.center[1] + sn * u + c * v
        dx, dy = c * du - sn * dv, sn * du + c * dv
        total += 0.5 * float(np.sum(w * (x * dy - y * dx))) * 0.5 * (piece.t1 - piece.t0)
    return total
