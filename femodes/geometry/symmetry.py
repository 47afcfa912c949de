"""The point symmetry group of a cross-section, found from its geometry (materials included).

A rigid motion that keeps the guide's centroid fixed and maps its walls onto its walls, and the
outline of every material region onto an outline of a region of the same material, leaves
Maxwell's equations in the section unchanged: each mode's longitudinal potential psi (E_z for
TM, H_z for TE) then transforms by one of the group's classes (irreducible representations),
and modes of a class of dimension two come in degenerate pairs (a square's TE10/TE01).

The groups of a bounded plane figure are the cyclic groups C_n (turns by multiples of
360/n degrees about the centroid) and the dihedral groups D_n (those turns and n mirror lines
through the centroid, 180/n degrees apart); D1 is one mirror line and no turn, C1 no symmetry.
A circle (and a centred coax) is kept by every turn: ``rotation_order`` 0, name "circular".

How it is found (:func:`symmetry_group`): the walls and the material outlines are sampled; the
centre is the area centroid (every symmetry fixes it); a turn or a mirror is a symmetry when every
sample point, mapped, lies within ``tolerance`` of a wall (or an outline of the same material).
Turns of order 2..12 are tried and the largest order n kept (the orders that pass are the
divisors of n); a turn by one radian passing means every turn does.  Mirror lines are tried
through the section's corners and joints, bisecting pairs of corners at equal distance from the
centre, along the principal axes of the area and along the section's own axes; with n-fold turns
the mirrors come n at a time.  For a mesh file the walls are the edges on one triangle only and
the outlines the edges between triangles of different materials; the tolerance is 5 % of the
median wall edge (a curved wall meshed by chords is symmetric only to within the chords' sag);
for a Section 1e-6 of its size (arcs are cut into chords of 0.0015 rad, sag 3e-7 of the radius).

The group's classes (:meth:`SymmetryGroup.classes`) carry their characters (the trace of the
operation on the class) for each operation of :meth:`SymmetryGroup.operations`, and are named in
words: a one-dimensional class by the parity of psi about each mirror line (or its sign under a
turn), a two-dimensional one as a degenerate pair of the group.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from femodes.errors import FemodesError
from femodes.geometry.loops import Line, Loop
from femodes.geometry.walls import magnetic_lines

__all__ = ["SymmetryGroup", "SymmetryOperation", "SymmetryClass", "symmetry_group", "line_name"]

_MAX_ORDER = 12


@dataclass(frozen=True)
class SymmetryOperation:
    """A turn by ``angle`` (rad, counter-clockwise) about the centre, or a mirror about the line
    through the centre at ``angle`` (rad) from the section's own x axis."""

    kind: str  # "turn" or "mirror"
    angle: float


@dataclass(frozen=True)
class SymmetryClass:
    """One class (irreducible representation) of a symmetry group.

    key        : short name inside femodes ('1', 'turn-odd', 'pair1', ...)
    dimension  : 1, or 2 for a degenerate pair
    characters : the trace of each operation of :meth:`SymmetryGroup.operations` on the class
    words      : what the tables print, e.g. 'even about the x axis; odd about the 45-degree line'
    """

    key: str
    dimension: int
    characters: tuple
    words: str


@dataclass(frozen=True)
class SymmetryGroup:
    """The symmetry group of a cross-section (plain data).

    name            : 'C1', 'D1', 'C2', 'D2', 'D3', 'D4', ..., or 'circular'
    rotation_order  : n, the section is kept by turns of 360/n degrees (1: no turn; 0: every turn)
    mirrors         : angles (rad, in [0, pi)) of the mirror lines from the section's own x axis
    centre          : (x, y) metres, the centroid, on every mirror line and the centre of the turns
    reference_angle : the section's own x axis, rad from the global x axis (0 for a mesh file)
    tolerance       : metres, how far a mapped wall point may lie from a wall
    """

    name: str
    rotation_order: int
    mirrors: tuple
    centre: tuple
    reference_angle: float = 0.0
    tolerance: float = 0.0

    @property
    def continuous(self):
        return self.rotation_order == 0

    @property
    def order(self):
        """Number of operations (infinite for a circular section)."""
        return math.inf if self.continuous else len(self.operations())

    def operations(self):
        """The operations: turns by 2 pi k / n (k = 0..n-1, the first is the identity), then the
        mirrors in the order of ``mirrors``.  A circular section gives those of its D12 subgroup
        (mirrors at the section's axes and every 15 degrees)."""
        n = 12 if self.continuous else self.rotation_order
        ops = [SymmetryOperation("turn", 2 * math.pi * k / n) for k in range(n)]
        mirrors = tuple(math.pi * j / n for j in range(n)) if self.continuous else self.mirrors
        return tuple(ops + [SymmetryOperation("mirror", a) for a in mirrors])

    def apply(self, op, xy):
        """The points xy (2, m) (global metres) moved by operation ``op``."""
        xy = np.asarray(xy, dtype=float)
        cx, cy = self.centre
        dx, dy = xy[0] - cx, xy[1] - cy
        if op.kind == "turn":
            c, s = math.cos(op.angle), math.sin(op.angle)
            return np.array([cx + c * dx - s * dy, cy + s * dx + c * dy])
        a = 2 * (op.angle + self.reference_angle)
        c, s = math.cos(a), math.sin(a)
        return np.array([cx + c * dx + s * dy, cy + s * dx - c * dy])

    def describe(self):
        """One line for reports, e.g. 'D4: 4 mirror lines (x axis, 45-degree line, ...), 90-degree turns'."""
        if self.continuous:
            return "circular: every turn about the centre and every mirror line through it"
        bits = []
        if self.mirrors:
            k = len(self.mirrors)
            bits.append(f"{k} mirror line{'s' if k > 1 else ''} ({', '.join(line_name(a) for a in self.mirrors)})")
        if self.rotation_order > 1:
            bits.append(f"{_deg(2 * math.pi / self.rotation_order)}-degree turns")
        return f"{self.name}: " + (", ".join(bits) if bits else "no symmetry")

    def classes(self):
        """The group's classes (:class:`SymmetryClass`) with their characters over
        :meth:`operations`: for D_n the classes even / odd about every mirror, and for even n the
        two that change sign under a 1/n turn (even about one set of alternate mirror lines, odd
        about the other), and the (n - 1) // 2 pairs with turn characters 2 cos(2 pi p k / n) and
        mirror characters 0; for C_n the same without mirrors (the pairs rotate).  A circular
        section gives those of D12."""
        n = 12 if self.continuous else self.rotation_order
        gname = "D12" if self.continuous else self.name
        has_mirrors = self.continuous or bool(self.mirrors)
        mirrors = tuple(math.pi * j / n for j in range(n)) if self.continuous else self.mirrors
        turns = [2 * math.pi * k / n for k in range(n)]
        out = []
        signs_list = [(1, (1,) * len(mirrors)), (1, (-1,) * len(mirrors))] if has_mirrors else [(1, ())]
        if n % 2 == 0:
            alt = tuple((-1) ** j for j in range(len(mirrors)))
            signs_list += ([(-1, alt), (-1, tuple(-s for s in alt))] if has_mirrors else [(-1, ())])
        for ti, (tsign, msigns) in enumerate(signs_list):
            chars = tuple(float(tsign ** k) for k in range(n)) + tuple(float(s) for s in msigns)
            out.append(SymmetryClass(f"one{ti + 1}", 1, chars, self._one_words(n, tsign, msigns, mirrors)))
        npairs = (n - 1) // 2
        for p in range(1, npairs + 1):
            chars = tuple(2 * math.cos(2 * math.pi * p * k / n) for k in range(n)) + (0.0,) * len(mirrors)
            num = f" {p}" if npairs > 1 else ""
            if has_mirrors:
                words = f"degenerate pair: 2-D class{num} of {gname}"
            else:
                words = f"degenerate pair{num} of {gname} (rotating)"
            out.append(SymmetryClass(f"pair{p}", 2, chars, words))
        del turns
        return tuple(out)

    @staticmethod
    def _one_words(n, tsign, msigns, mirrors):
        if msigns:
            even = [line_name(a) for a, s in zip(mirrors, msigns) if s > 0]
            odd = [line_name(a) for a, s in zip(mirrors, msigns) if s < 0]
            if len(mirrors) >= 3 and not (even and odd):
                return f"{'even' if even else 'odd'} about all {len(mirrors)} mirror lines"
            parts = []
            if even:
                parts.append("even about " + " and ".join(even))
            if odd:
                parts.append("odd about " + " and ".join(odd))
            return "; ".join(parts)
        if n == 1:
            return "no symmetry"
        turn = f"a {_deg(2 * math.pi / n)}-degree turn"
        return f"unchanged by {turn}" if tsign > 0 else f"changes sign under {turn}"


def _deg(a):
    return f"{math.degrees(a):.4g}"


def line_name(angle):
    """Words for the mirror line at ``angle`` (rad) from the section's own x axis."""
    d = math.degrees(angle) % 180.0
    if min(d, 180 - d) < 1e-6:
        return "the x axis"
    if abs(d - 90) < 1e-6:
        return "the y axis"
    return f"the {d:.4g}-degree line"


# ------------------------------------------------------------------------------------ detection
def symmetry_group(obj, tolerance=None):
    """The :class:`SymmetryGroup` of a :class:`~femodes.geometry.section.Section` or a
    :class:`~femodes.geometry.mesh.Mesh` (a mesh file: its walls and the boundaries between
    groups of different materials).  ``tolerance`` (m) overrides the default: 1e-4 of the size
    for a Section, 5 % of the median wall edge for a mesh."""
    if hasattr(obj, "outer") and hasattr(obj, "loops"):
        sets, joints, centre, inertia, size, ref = _section_sets(obj)
        tol = 1e-6 * size
    elif hasattr(obj, "points") and hasattr(obj, "triangles"):
        keys = _mesh_keys(obj)
        sets, joints, centre, inertia, size, med = _mesh_sets(obj.points, obj.triangles, keys)
        ref = 0.0
        tol = 0.05 * med + 1e-9 * size
    else:
        raise FemodesError(f"symmetry_group needs a Section or a Mesh, got {type(obj).__name__}")
    if tolerance is not None:
        tol = float(tolerance)
    return _detect(sets, joints, centre, inertia, ref, tol)


def mesh_symmetry(points, triangles, keys=None, tolerance=None):
    """The group of a bare triangle mesh (``points`` (2, n), ``triangles`` (3, m), optional
    per-triangle material ``keys``): walls are edges on one triangle, outlines the edges between
    triangles of different keys."""
    sets, joints, centre, inertia, size, med = _mesh_sets(np.asarray(points, float), np.asarray(triangles), keys)
    tol = 0.05 * med + 1e-9 * size if tolerance is None else float(tolerance)
    return _detect(sets, joints, centre, inertia, 0.0, tol)


def _mesh_keys(mesh):
    if not mesh.materials or mesh.regions.size != mesh.n_triangles:
        return None
    idx = mesh.material_index()
    vals = [(1.0, 1.0)] + [(m.eps_r, m.mu_r) for m in mesh.materials]
    uniq = {v: i for i, v in enumerate(dict.fromkeys(vals))}
    return np.array([uniq[vals[i]] for i in idx])


def _polygon_centroid(poly):
    x, y = poly
    xn, yn = np.roll(x, -1), np.roll(y, -1)
    cr = x * yn - xn * y
    a = 0.5 * np.sum(cr)
    return a, np.sum((x + xn) * cr) / 6.0, np.sum((y + yn) * cr) / 6.0


def _polygon_moments(poly):
    """(Ixx, Ixy, Iyy) = int x^2, xy, y^2 dA over a closed polygon (signed by orientation)."""
    x, y = poly
    xn, yn = np.roll(x, -1), np.roll(y, -1)
    cr = x * yn - xn * y
    ixx = np.sum(cr * (x * x + x * xn + xn * xn)) / 12.0
    iyy = np.sum(cr * (y * y + y * yn + yn * yn)) / 12.0
    ixy = np.sum(cr * (x * yn + 2 * x * y + 2 * xn * yn + xn * y)) / 24.0
    return ixx, ixy, iyy


def _section_sets(sec):
    """[(key, test points (2, k), chord starts (m, 2), chord ends (m, 2))], joints (2, j) with keys,
    centroid, area inertia about it, size, reference angle."""
    fine = [l.polyline(256) for l in sec.loops]
    area, mx, my = 0.0, 0.0, 0.0
    for p in fine:
        a, sx, sy = _polygon_centroid(p)
        area, mx, my = area + a, mx + sx, my + sy
    c = (mx / area, my / area)
    ixx = ixy = iyy = 0.0
    for p in fine:
        q = p - np.array(c)[:, None]
        m = _polygon_moments(q)
        ixx, ixy, iyy = ixx + m[0], ixy + m[1], iyy + m[2]
    groups = [("wall", sec.loops)]
    for m in sec.materials:
        groups.append(((m.eps_r, m.mu_r), (m.region,) + tuple(m.holes)))
    if getattr(sec, "magnetic", ()):  # marked magnetic sides: a symmetry must map them onto each other
        groups.append(("magnetic", tuple(Loop((seg,)) for seg in magnetic_lines(sec))))
    sets, joints, jkeys = [], [], []
    for key, loops in groups:
        for l in loops:
            test = l.polyline(64, line_pieces=8)
            la, lb, aa, ab = [], [], [], []
            for sg in l.segments:
                if isinstance(sg, Line):
                    la.append(sg.start)
                    lb.append(sg.end)
                else:  # an arc: chords of 0.0015 rad (sag 3e-7 of the radius)
                    q = sg.samples(max(8, int(math.ceil(abs(sg.t1 - sg.t0) / 0.0015))))
                    aa.append(q[:, :-1].T)
                    ab.append(q[:, 1:].T)
            sets.append((key, test, np.array(la, float).reshape(-1, 2), np.array(lb, float).reshape(-1, 2),
                         np.vstack(aa) if aa else np.zeros((0, 2)), np.vstack(ab) if ab else np.zeros((0, 2))))
            for sg in l.segments:
                joints.append(np.asarray(sg.start, float))
                jkeys.append(key)
                if isinstance(sg, Line):
                    joints.append(0.5 * (np.asarray(sg.start, float) + np.asarray(sg.end, float)))
                    jkeys.append(key)
    merged = {}
    for key, test, la, lb, aa, ab in sets:
        if key in merged:
            t0, la0, lb0, aa0, ab0 = merged[key]
            merged[key] = (np.hstack([t0, test]), np.vstack([la0, la]), np.vstack([lb0, lb]),
                           np.vstack([aa0, aa]), np.vstack([ab0, ab]))
        else:
            merged[key] = (test, la, lb, aa, ab)
    sets = [(k, v[0], _Walls(v[1], v[2], v[3], v[4])) for k, v in merged.items()]
    return sets, (np.array(joints).T, jkeys), c, (ixx, ixy, iyy), sec.size, float(sec.frame[2])


class _Walls:
    """Chords to measure distances to: a few long ones (straight walls, mesh edges) searched
    whole, and many short ones (arcs cut finely) searched near the nearest chord start (a
    k-d tree): a point within the tolerance of an arc lies next to a chord beside its nearest
    chord start."""

    def __init__(self, a, b, arc_a=None, arc_b=None):
        self.a, self.b = np.asarray(a, float), np.asarray(b, float)
        self.arc_a = np.zeros((0, 2)) if arc_a is None else np.asarray(arc_a, float)
        self.arc_b = np.zeros((0, 2)) if arc_b is None else np.asarray(arc_b, float)
        self.tree = None
        if len(self.arc_a):
            from scipy.spatial import cKDTree

            self.tree = cKDTree(self.arc_a)

    def distance(self, pts):
        """Distance of each point (k, 2) to the nearest chord."""
        out = np.full(len(pts), np.inf)
        if len(self.a):
            out = _distances(pts, self.a, self.b)
        if self.tree is not None:
            _, j = self.tree.query(pts)
            n = len(self.arc_a)
            for dj in (-1, 0, 1):
                jj = np.clip(j + dj, 0, n - 1)
                a, b = self.arc_a[jj], self.arc_b[jj]
                d = b - a
                L2 = np.maximum(np.sum(d * d, axis=1), 1e-300)
                t = np.clip(np.sum((pts - a) * d, axis=1) / L2, 0, 1)
                r = pts - a - t[:, None] * d
                out = np.minimum(out, np.sqrt(np.sum(r * r, axis=1)))
        return out


def _mesh_sets(p, t, keys):
    p = np.asarray(p, float)[:2]
    t = np.asarray(t, dtype=np.int64)
    pt = p[:, t]
    ar = 0.5 * ((pt[0, 1] - pt[0, 0]) * (pt[1, 2] - pt[1, 0]) - (pt[0, 2] - pt[0, 0]) * (pt[1, 1] - pt[1, 0]))
    aa = np.abs(ar)
    cen = pt.mean(axis=1)
    area = float(aa.sum())
    c = (float(np.sum(aa * cen[0]) / area), float(np.sum(aa * cen[1]) / area))
    # inertia about the centroid: exact for triangles (vertex and centroid rule)
    q = pt - np.array(c)[:, None, None]
    ixx = float(np.sum(aa * (q[0] ** 2).sum(0) + aa * q[0].sum(0) ** 2) / 12.0)
    iyy = float(np.sum(aa * (q[1] ** 2).sum(0) + aa * q[1].sum(0) ** 2) / 12.0)
    ixy = float(np.sum(aa * (q[0] * q[1]).sum(0) + aa * q[0].sum(0) * q[1].sum(0)) / 12.0)
    m = t.shape[1]
    edges = np.hstack([t[[0, 1]], t[[1, 2]], t[[2, 0]]])
    owner = np.tile(np.arange(m), 3)
    e = np.sort(edges, axis=0)
    code = e[0] * p.shape[1] + e[1]
    order = np.argsort(code, kind="stable")
    code_s = code[order]
    uniq, first, counts = np.unique(code_s, return_index=True, return_counts=True)
    sets = {}
    size = float(np.max(np.ptp(p, axis=1)))
    wall_len = []
    for u, f0, cnt in zip(uniq, first, counts):
        i0 = order[f0]
        if cnt == 1:
            key = "wall"
        elif keys is not None:
            k1, k2 = keys[owner[i0]], keys[owner[order[f0 + 1]]]
            if k1 == k2:
                continue
            key = (min(k1, k2), max(k1, k2))
        else:
            continue
        sets.setdefault(key, []).append(e[:, i0])
    out, joints, jkeys = [], [], []
    for key, es in sets.items():
        es = np.array(es).T
        a, b = p[:, es[0]].T, p[:, es[1]].T
        if key == "wall":
            wall_len = np.hypot(*(b - a).T)
        test = np.hstack([p[:, np.unique(es)], 0.5 * (a + b).T])
        out.append((key, test, _Walls(a, b)))
        corners = _turning_nodes(p, es)
        joints.append(p[:, corners])
        jkeys += [key] * len(corners)
    med = float(np.median(wall_len)) if len(wall_len) else 1e-6 * size
    return out, (np.hstack(joints), jkeys), c, (ixx, ixy, iyy), size, med


def _turning_nodes(p, es):
    """Nodes of the edge set ``es`` (2, k) where the edges meeting there turn by more than 10
    degrees (corners of the walls; every node where more or fewer than two edges meet)."""
    nodes, inv = np.unique(es, return_inverse=True)
    inv = inv.reshape(es.shape)
    nb = [[] for _ in nodes]
    for k in range(es.shape[1]):
        nb[inv[0, k]].append(es[1, k])
        nb[inv[1, k]].append(es[0, k])
    out = []
    for i, n in enumerate(nodes):
        if len(nb[i]) != 2:
            out.append(n)
            continue
        u = p[:, nb[i][0]] - p[:, n]
        v = p[:, n] - p[:, nb[i][1]]
        cosang = float(np.dot(u, v) / (np.linalg.norm(u) * np.linalg.norm(v)))
        if cosang < math.cos(math.radians(10)):
            out.append(n)
    return np.array(out, dtype=np.int64)


def _distances(pts, a, b):
    """Distance of each point (k, 2) to the nearest chord (a[i] -> b[i])."""
    d = b - a
    L2 = np.maximum(np.sum(d * d, axis=1), 1e-300)
    out = np.empty(len(pts))
    step = max(1, 200000 // max(1, len(a)))
    for s in range(0, len(pts), step):
        w = pts[s:s + step, None, :] - a[None]
        tt = np.clip(np.sum(w * d[None], axis=2) / L2[None], 0, 1)
        r = w - tt[..., None] * d[None]
        out[s:s + step] = np.sqrt(np.min(np.sum(r * r, axis=2), axis=1))
    return out


def _keeps(group, op, sets, tol):
    """True if ``op`` maps every sample point onto the chords of its own key (within tol)."""
    for quick in (True, False):
        for key, test, walls in sets:
            pts = test if not quick else test[:, :: max(1, test.shape[1] // 24)]
            moved = group.apply(op, pts).T
            if np.max(walls.distance(moved)) > tol:
                return False
    return True


def _detect(sets, joints, centre, inertia, ref, tol):
    probe = SymmetryGroup("C1", 1, (), tuple(float(v) for v in centre), ref, tol)
    if _keeps(probe, SymmetryOperation("turn", 1.0), sets, tol) and \
            _keeps(probe, SymmetryOperation("turn", 2 * math.pi / 7.3), sets, tol):
        return SymmetryGroup("circular", 0, (), probe.centre, ref, tol)
    n = 1
    for k in range(_MAX_ORDER, 1, -1):
        if _keeps(probe, SymmetryOperation("turn", 2 * math.pi / k), sets, tol):
            n = k
            break
    period = math.pi / n  # mirror lines come every pi / n
    cands = [0.0, math.pi / 2]
    ixx, ixy, iyy = inertia
    if abs(ixx - iyy) + abs(ixy) > 1e-6 * (abs(ixx) + abs(iyy)):
        axis = 0.5 * math.atan2(2 * ixy, ixx - iyy) - ref
        cands += [axis, axis + math.pi / 2]
    jp, jk = joints
    if jp.size:
        rel = jp - np.array(centre)[:, None]
        r = np.hypot(rel[0], rel[1])
        ang = np.arctan2(rel[1], rel[0]) - ref
        ok = r > tol
        cands += list(ang[ok])
        idx = np.nonzero(ok)[0]
        if len(idx) <= 400:
            for ii, i in enumerate(idx):
                for j in idx[ii + 1:]:
                    if jk[i] == jk[j] and abs(r[i] - r[j]) <= tol:
                        cands.append(0.5 * (ang[i] + ang[j]))
    red = sorted({round(float(a) % period, 9) for a in cands})
    # merge near-equal candidates (angles closer than the tolerance allows to tell apart)
    dtheta = max(tol / max(np.max(np.hypot(*(jp - np.array(centre)[:, None]))) if jp.size else 1.0, 1e-30), 1e-9)
    merged = []
    for a in red:
        if not merged or a - merged[-1] > dtheta:
            merged.append(a)
    theta0 = None
    for a in merged:
        if _keeps(probe, SymmetryOperation("mirror", a), sets, tol):
            theta0 = a
            break
    if theta0 is None:
        return SymmetryGroup(f"C{n}", n, (), probe.centre, ref, tol)
    mirrors = tuple(sorted(round((theta0 + j * period) % math.pi, 12) % math.pi for j in range(n)))
    return SymmetryGroup(f"D{n}", n, mirrors, probe.centre, ref, tol)
