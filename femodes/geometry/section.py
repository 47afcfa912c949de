"""Cross-sections: what the guide is.

A :class:`Section` is plain immutable data: one outer boundary loop and zero or more holes
(inner conductors), each loop a closed chain of straight :class:`Line` and elliptic/circular
:class:`Arc` segments, all in metres.  Loops are stored oriented so that the guide interior lies
to the left of the direction of travel (outer loop counter-clockwise, holes clockwise).  Every wall
is a perfect electric conductor (PEC).

Shapes are validated when they are built: a bad parameter raises :class:`FemodesError` saying what
is wrong and what would be valid.  Built-in shapes are centred at the origin unless stated.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from femodes.errors import FemodesError, check_nonnegative, check_positive, nonnegative_number, positive_number

__all__ = [
    "Line", "Arc", "Loop", "Corner", "Section", "Material",
    "rectangle", "circle", "ellipse", "coaxial", "rectangular_coax", "ridged", "single_ridge",
    "double_ridge", "l_shape", "sector", "polygon",
]


# ----------------------------------------------------------------------------- segments

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


# ----------------------------------------------------------------------------- loops

@dataclass(frozen=True)
class Corner:
    """A point where two boundary segments meet at an angle.

    ``angle`` is the interior angle seen from inside the guide (radians).  Corners with
    angle > pi are re-entrant: the transverse fields are singular there, like r^(pi/angle - 1).
    """

    point: tuple
    angle: float

    @property
    def reentrant(self):
        return self.angle > math.pi * (1 + 1e-9)

    @property
    def exponent(self):
        """Singular exponent lambda = pi / angle of the potential near the corner."""
        return math.pi / self.angle


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


# ----------------------------------------------------------------------------- geometry checks

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


# ----------------------------------------------------------------------------- section

@dataclass(frozen=True)
class Material:
    """A region of the cross-section filled with a material other than the background fill.

    region : Loop           counter-clockwise outline of the region
    holes  : tuple of Loop  parts of the region left out (a dielectric ring around a conductor)
    eps_r, mu_r : relative permittivity and permeability (real, > 0)
    tan_delta   : dielectric loss tangent (>= 0); the modes are solved lossless and the loss
                  enters as a first-order perturbation (femodes.vector, dielectric attenuation)
    name        : what the report calls the region ("" : by its permittivity)
    """

    region: Loop
    holes: tuple = ()
    eps_r: float = 1.0
    mu_r: float = 1.0
    tan_delta: float = 0.0
    name: str = ""

    def contains(self, x, y):
        """Boolean mask of the points (arrays x, y) inside the region (outside its holes)."""
        inside = _points_in_polygon(x, y, self.region.polyline(64))
        for h in self.holes:
            inside &= ~_points_in_polygon(x, y, h.polyline(64))
        return inside

    def transformed(self, kind, arg):
        return replace(self, region=self.region.transformed(kind, arg),
                       holes=tuple(h.transformed(kind, arg) for h in self.holes))


def _points_in_polygon(x, y, poly):
    """Vectorised even-odd test of points (x, y) against a closed polyline (2, n)."""
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    px, py = poly
    qx, qy = np.roll(px, -1), np.roll(py, -1)
    inside = np.zeros(np.broadcast(x, y).shape, dtype=bool)
    for x0, y0, x1, y1 in zip(px, py, qx, qy):
        if y0 == y1:
            continue
        cond = (y0 > y) != (y1 > y)
        xc = x0 + (y - y0) * (x1 - x0) / (y1 - y0)
        inside ^= cond & (x < xc)
    return inside


@dataclass(frozen=True)
class Section:
    """A waveguide cross-section: outer PEC wall, PEC inner conductors (holes), homogeneous fill.

    Attributes
    ----------
    outer : Loop            counter-clockwise outer wall
    holes : tuple of Loop   clockwise inner-conductor boundaries
    kind : str              'rectangle', 'circle', 'coaxial', 'polygon', ... (for mode labels)
    params : dict           shape parameters in metres/radians (for labels and reports)
    frame : (x0, y0, angle) where the shape's own centre and x axis lie after moves
    materials : tuple of Material, in the order given (a later one wins where two overlap);
                everywhere else the guide holds the background fill given to ``solve``
    """

    outer: Loop
    holes: tuple = ()
    kind: str = "polygon"
    params: dict = field(default_factory=dict, compare=False)
    frame: tuple = (0.0, 0.0, 0.0)
    materials: tuple = ()

    def __post_init__(self):
        trusted = self.params.pop("_valid", False) if isinstance(self.params, dict) else False
        outer = self.outer
        if outer.signed_area() < 0:
            outer = outer.reversed()
        holes = tuple(h if h.signed_area() < 0 else h.reversed() for h in self.holes)
        object.__setattr__(self, "outer", outer)
        object.__setattr__(self, "holes", holes)
        if not trusted:
            self._validate()

    # -- checks --------------------------------------------------------------
    def _validate(self):
        po = self.outer.polyline(48)
        scale = float(np.max(np.ptp(po, axis=1)))
        if not np.all(np.isfinite(po)) or scale <= 0:
            raise FemodesError("the outline has no extent: give at least three distinct vertices")
        if _polyline_self_intersects(self.outer.polyline(8), scale):
            raise FemodesError("the outline crosses itself: list the vertices in order around the boundary")
        area = abs(self.outer.signed_area())
        if area < 1e-9 * scale * scale:
            raise FemodesError(f"the outline encloses (almost) zero area ({area:.3g} m^2): "
                               "its vertices must not all lie on one line")
        for k, h in enumerate(self.holes):
            ph = h.polyline(48)
            if abs(h.signed_area()) < 1e-12 * scale * scale:
                raise FemodesError(f"hole {k + 1} encloses zero area")
            if _polyline_self_intersects(h.polyline(8), scale):
                raise FemodesError(f"hole {k + 1} crosses itself: list its vertices in order")
            if not all(_point_in_polygon(p, po) for p in ph.T[:: max(1, ph.shape[1] // 16)]) \
                    or not _point_in_polygon(ph[:, 0], po) or _polylines_cross(ph, po) \
                    or any(_point_in_polygon(p, ph) for p in po.T):
                raise FemodesError(f"hole {k + 1} (inner conductor) is not inside the outer wall: "
                                   "move or shrink it so that it lies wholly inside")
            gap = min(_min_distance(ph, po), _min_distance(po, ph))
            if gap < 1e-6 * scale:
                raise FemodesError(f"hole {k + 1} touches or crosses the outer wall (clearance {gap * 1e3:.3g} mm): "
                                   "leave a gap between inner conductor and wall")
            for j in range(k):
                pj = self.holes[j].polyline(48)
                if _point_in_polygon(ph[:, 0], pj) or _point_in_polygon(pj[:, 0], ph) or _polylines_cross(ph, pj) or \
                        min(_min_distance(ph, pj), _min_distance(pj, ph)) < 1e-6 * scale:
                    raise FemodesError(f"holes {j + 1} and {k + 1} touch or overlap: keep inner conductors apart")

    # -- derived -------------------------------------------------------------
    @property
    def loops(self):
        return (self.outer,) + tuple(self.holes)

    @property
    def area(self):
        return abs(self.outer.signed_area()) - sum(abs(h.signed_area()) for h in self.holes)

    @property
    def perimeter(self):
        return sum(l.length for l in self.loops)

    @property
    def size(self):
        """Largest extent of the outline (m)."""
        return float(np.max(np.ptp(self.outer.polyline(32), axis=1)))

    @property
    def bounds(self):
        p = self.outer.polyline(32)
        return (float(p[0].min()), float(p[1].min()), float(p[0].max()), float(p[1].max()))

    def corners(self):
        """All corners of all loops (see :class:`Corner`)."""
        return [c for l in self.loops for c in l.corners()]

    def reentrant_corners(self):
        return [c for c in self.corners() if c.reentrant]

    @property
    def n_conductors(self):
        """Number of separate conductors: 1 for a hollow guide, 1 + holes for coax-like guides."""
        return 1 + len(self.holes)

    def is_symmetric(self, axis):
        """True if the section is unchanged by the mirror x -> -x (axis='x') or y -> -y (axis='y')."""
        other = self.mirrored(axis)
        scale = self.size
        def close(a, b):
            pa, pb = a.polyline(64, line_pieces=16), b.polyline(64, line_pieces=16)
            return max(_max_distance(pa, pb), _max_distance(pb, pa)) <= 1e-7 * scale

        if len(self.loops) != len(other.loops) or len(self.materials) != len(other.materials):
            return False
        for a, b in zip(sorted(self.loops, key=_loop_key), sorted(other.loops, key=_loop_key)):
            if not close(a, b):
                return False
        for m in self.materials:  # every region must map onto a region of the same material
            if not any(close(m.region, n.region) and (m.eps_r, m.mu_r) == (n.eps_r, n.mu_r)
                       for n in other.materials):
                return False
        return True

    # -- rigid motions ---------------------------------------------------------
    def _moved(self, kind, arg):
        f = _point_map(kind, arg)
        x0, y0, ang = self.frame
        nx, ny = f((x0, y0))
        if kind == "rotate":
            ang = ang + arg
        elif kind == "mirror_x":
            ang = math.pi - ang
        elif kind == "mirror_y":
            ang = -ang
        # a rigid motion of a valid section is valid: skip the checks
        return Section(self.outer.transformed(kind, arg), tuple(h.transformed(kind, arg) for h in self.holes),
                       self.kind, dict(self.params, _valid=True), (nx, ny, ang),
                       tuple(m.transformed(kind, arg) for m in self.materials))

    def translated(self, dx, dy):
        """The same section moved by (dx, dy) metres."""
        return self._moved("translate", (float(dx), float(dy)))

    def rotated(self, angle):
        """The same section rotated counter-clockwise by ``angle`` radians about the origin."""
        return self._moved("rotate", float(angle))

    def mirrored(self, axis="x"):
        """Mirror image: axis='x' maps x -> -x, axis='y' maps y -> -y."""
        if axis not in ("x", "y"):
            raise FemodesError(f"mirror axis must be 'x' or 'y', got {axis!r}")
        return self._moved("mirror_" + axis, None)

    def scaled(self, factor):
        """The section scaled about the origin by ``factor`` (> 0)."""
        s = check_positive("scale factor", factor, unit="")

        def seg(x):
            if isinstance(x, Line):
                return Line((x.start[0] * s, x.start[1] * s), (x.end[0] * s, x.end[1] * s))
            return replace(x, center=(x.center[0] * s, x.center[1] * s), rx=x.rx * s, ry=x.ry * s)
        params = {k: (v * s if k not in _ANGLE_KEYS and isinstance(v, (int, float)) else v)
                  for k, v in self.params.items()}
        x0, y0, ang = self.frame

        def loop(l):
            return Loop(tuple(seg(x) for x in l.segments))
        mats = tuple(replace(m, region=loop(m.region), holes=tuple(loop(h) for h in m.holes))
                     for m in self.materials)
        return Section(loop(self.outer), tuple(loop(h) for h in self.holes),
                       self.kind, params, (x0 * s, y0 * s, ang), mats)

    # -- materials -------------------------------------------------------------
    def with_material(self, shape, eps_r=1.0, mu_r=1.0, tan_delta=0.0, name=""):
        """A new section in which the part inside ``shape`` (any shape, placed with
        ``.translated`` / ``.rotated``; its holes are left out of the region) is filled with a
        material of relative permittivity ``eps_r`` and permeability ``mu_r`` (loss tangent
        ``tan_delta``, used for the dielectric attenuation; ``name`` for reports).  A later call
        wins where two regions overlap; parts of ``shape`` outside the guide are ignored."""
        if not isinstance(shape, Section):
            raise FemodesError(f"with_material needs a shape (e.g. femodes.rectangle(...).translated(...)), "
                               f"got {type(shape).__name__}")
        eps, mu = positive_number("eps_r", eps_r), positive_number("mu_r", mu_r)
        tand = nonnegative_number("tan_delta", tan_delta)
        if tand >= 1:
            raise FemodesError(f"tan_delta is a loss tangent and must lie in 0 <= tan_delta < 1, got {tan_delta!r}")
        if not isinstance(name, str):
            raise FemodesError(f"name must be a string, got {type(name).__name__}")
        mat = Material(shape.outer, tuple(shape.holes), eps, mu, tand, name.strip())
        # the region must reach into the guide: test sample points of both outlines
        guide_pts = np.hstack([l.polyline(32, line_pieces=8) for l in self.loops])
        reg_pts = np.hstack([mat.region.polyline(32, line_pieces=8)] + [h.polyline(32, 8) for h in mat.holes])
        inner = 0.999 * (reg_pts - reg_pts.mean(axis=1, keepdims=True)) + reg_pts.mean(axis=1, keepdims=True)
        hits = np.any(self.contains(inner[0], inner[1])) or np.any(mat.contains(guide_pts[0], guide_pts[1]))
        if not hits:
            raise FemodesError("the material region lies wholly outside the guide: move it inside "
                               "(shapes are centred at the origin; use .translated(dx, dy))")
        return Section(self.outer, self.holes, self.kind, dict(self.params, _valid=True), self.frame,
                       self.materials + (mat,))

    def contains(self, x, y):
        """Boolean mask of points (arrays x, y) inside the guide (inside the wall, outside holes)."""
        inside = _points_in_polygon(x, y, self.outer.polyline(64))
        for h in self.holes:
            inside &= ~_points_in_polygon(x, y, h.polyline(64))
        return inside

    def material_at(self, x, y, eps_r=1.0, mu_r=1.0):
        """(eps_r, mu_r) arrays at points (x, y): the last material region containing each point,
        else the background values given."""
        x = np.asarray(x, dtype=float)
        eps = np.full(x.shape, float(eps_r))
        mu = np.full(x.shape, float(mu_r))
        for m in self.materials:
            inside = m.contains(x, y)
            eps[inside], mu[inside] = m.eps_r, m.mu_r
        return eps, mu

    @property
    def is_homogeneous(self):
        return not self.materials

    def describe(self):
        """One line for reports, in millimetres."""
        bits = ", ".join(f"{k}={v * 1e3:.6g} mm" if k not in _ANGLE_KEYS else f"{k}={math.degrees(v):.6g} deg"
                         for k, v in self.params.items() if isinstance(v, (int, float)))
        text = f"{self.kind}({bits})" if bits else self.kind
        if self.materials:
            text += " with " + ", ".join(f"a region of eps_r = {m.eps_r:g}" + (f", mu_r = {m.mu_r:g}" if m.mu_r != 1 else "")
                                         for m in self.materials)
        return text


_ANGLE_KEYS = {"angle"}


def _loop_key(loop):
    p = loop.polyline(16)
    return (round(float(np.mean(p[0])), 9), round(float(np.mean(p[1])), 9))


# ----------------------------------------------------------------------------- built-in shapes

def rectangle(width, height, corner_radius=0.0):
    """Rectangle ``width`` (x) by ``height`` (y) metres, centred at the origin.

    ``corner_radius`` rounds all four corners (a milled guide); it must be below half the smaller side.
    """
    a = check_positive("width", width)
    b = check_positive("height", height)
    r = check_nonnegative("corner_radius", corner_radius)
    if r >= 0.5 * min(a, b) * (1 - 1e-12) and r > 0:
        raise FemodesError(f"corner_radius {r * 1e3:.6g} mm is too large: it must be below half the smaller "
                           f"side, {0.5 * min(a, b) * 1e3:.6g} mm")
    v = [(-a / 2, -b / 2), (a / 2, -b / 2), (a / 2, b / 2), (-a / 2, b / 2)]
    loop = _filleted_loop(v, [r] * 4) if r > 0 else _polygon_loop(v)
    params = {"width": a, "height": b}
    if r > 0:
        params["corner_radius"] = r
    return Section(loop, (), "rectangle" if r == 0 else "rounded_rectangle", params)


def circle(radius):
    """Circle of ``radius`` metres centred at the origin."""
    r = check_positive("radius", radius)
    return Section(_full_ellipse_loop((0.0, 0.0), r, r), (), "circle", {"radius": r})


def ellipse(a, b):
    """Ellipse with semi-axis ``a`` along x and ``b`` along y (metres), centred at the origin."""
    a = check_positive("semi-axis a", a)
    b = check_positive("semi-axis b", b)
    if math.isclose(a, b, rel_tol=1e-12):
        return Section(_full_ellipse_loop((0.0, 0.0), a, a), (), "circle", {"radius": a})
    return Section(_full_ellipse_loop((0.0, 0.0), a, b), (), "ellipse", {"a": a, "b": b})


def coaxial(outer_radius, inner_radius, offset=(0.0, 0.0)):
    """Coaxial line: outer wall of ``outer_radius`` centred at the origin, inner conductor of
    ``inner_radius`` centred at ``offset`` (metres)."""
    b = check_positive("outer_radius", outer_radius)
    a = check_positive("inner_radius", inner_radius)
    if a >= b:
        raise FemodesError(f"inner_radius ({a * 1e3:.6g} mm) must be smaller than outer_radius ({b * 1e3:.6g} mm)")
    try:
        dx, dy = (float(offset[0]), float(offset[1]))
    except (TypeError, IndexError, ValueError):
        raise FemodesError(f"offset must be a pair (dx, dy) in metres, got {offset!r}") from None
    if math.hypot(dx, dy) + a >= b * (1 - 1e-6):
        raise FemodesError(f"the inner conductor (radius {a * 1e3:.6g} mm, offset {math.hypot(dx, dy) * 1e3:.6g} mm) "
                           f"touches the outer wall: the offset must be below {(b - a) * 1e3:.6g} mm")
    inner = _full_ellipse_loop((dx, dy), a, a)
    params = {"outer_radius": b, "inner_radius": a}
    if dx or dy:
        params.update(offset_x=dx, offset_y=dy)
    return Section(_full_ellipse_loop((0.0, 0.0), b, b), (inner,), "coaxial", params)


def rectangular_coax(width, height, inner_width, inner_height, offset=(0.0, 0.0)):
    """Rectangular coax: a ``width`` x ``height`` outer wall with an ``inner_width`` x ``inner_height``
    rectangular inner conductor centred at ``offset`` (metres)."""
    a = check_positive("width", width)
    b = check_positive("height", height)
    w = check_positive("inner_width", inner_width)
    h = check_positive("inner_height", inner_height)
    try:
        dx, dy = (float(offset[0]), float(offset[1]))
    except (TypeError, IndexError, ValueError):
        raise FemodesError(f"offset must be a pair (dx, dy) in metres, got {offset!r}") from None
    if abs(dx) + w / 2 >= a / 2 or abs(dy) + h / 2 >= b / 2:
        raise FemodesError(f"the inner conductor ({w * 1e3:.6g} x {h * 1e3:.6g} mm at offset "
                           f"({dx * 1e3:.6g}, {dy * 1e3:.6g}) mm) does not fit inside the "
                           f"{a * 1e3:.6g} x {b * 1e3:.6g} mm outer wall")
    inner = _polygon_loop([(dx - w / 2, dy - h / 2), (dx + w / 2, dy - h / 2),
                           (dx + w / 2, dy + h / 2), (dx - w / 2, dy + h / 2)])
    outer = _polygon_loop([(-a / 2, -b / 2), (a / 2, -b / 2), (a / 2, b / 2), (-a / 2, b / 2)])
    params = {"width": a, "height": b, "inner_width": w, "inner_height": h}
    if dx or dy:
        params.update(offset_x=dx, offset_y=dy)
    return Section(outer, (inner,), "rectangular_coax", params)


def ridged(width, height, ridge_width, gap, ridges=2, ridge_corner_radius=0.0, base_radius=0.0):
    """Rectangular guide ``width`` x ``height`` with one (``ridges=1``, from the bottom wall) or two
    (``ridges=2``, top and bottom, symmetric) centred ridges of ``ridge_width``; ``gap`` is the
    distance between the ridge face and the opposite ridge (or wall).

    ``ridge_corner_radius`` rounds the ridge tips; ``base_radius`` rounds the re-entrant corners
    where a ridge meets its wall (a milling-tool radius).
    """
    a = check_positive("width", width)
    b = check_positive("height", height)
    s = check_positive("ridge_width", ridge_width)
    g = check_positive("gap", gap)
    rt = check_nonnegative("ridge_corner_radius", ridge_corner_radius)
    rb = check_nonnegative("base_radius", base_radius)
    if ridges not in (1, 2):
        raise FemodesError(f"ridges must be 1 or 2, got {ridges!r}")
    if s >= a:
        raise FemodesError(f"ridge_width ({s * 1e3:.6g} mm) must be smaller than the guide width ({a * 1e3:.6g} mm)")
    if g >= b:
        raise FemodesError(f"gap ({g * 1e3:.6g} mm) must be smaller than the guide height ({b * 1e3:.6g} mm)")
    depth = (b - g) / ridges  # how far each ridge protrudes
    if rt > 0 and rt >= min(s / 2, depth) * (1 - 1e-9):
        raise FemodesError(f"ridge_corner_radius ({rt * 1e3:.6g} mm) must be below half the ridge width and the "
                           f"ridge depth: at most {min(s / 2, depth) * 1e3:.4g} mm")
    if rb > 0 and rb >= min((a - s) / 2, depth) * (1 - 1e-9):
        raise FemodesError(f"base_radius ({rb * 1e3:.6g} mm) must be below the ridge depth and the side clearance: "
                           f"at most {min((a - s) / 2, depth) * 1e3:.4g} mm")
    ya, yb = -b / 2, b / 2
    # counter-clockwise, starting at the bottom-left outer corner
    v, r = [], []
    v += [(-a / 2, ya)]
    r += [0]
    y_bot = ya + depth
    v += [(-s / 2, ya), (-s / 2, y_bot), (s / 2, y_bot), (s / 2, ya)]
    r += [rb, rt, rt, rb]
    v += [(a / 2, ya), (a / 2, yb)]
    r += [0, 0]
    if ridges == 2:
        y_top = yb - depth
        v += [(s / 2, yb), (s / 2, y_top), (-s / 2, y_top), (-s / 2, yb)]
        r += [rb, rt, rt, rb]
    v += [(-a / 2, yb)]
    r += [0]
    loop = _filleted_loop(v, r) if (rt or rb) else _polygon_loop(v)
    params = {"width": a, "height": b, "ridge_width": s, "gap": g}
    if rt:
        params["ridge_corner_radius"] = rt
    if rb:
        params["base_radius"] = rb
    return Section(loop, (), "double_ridge" if ridges == 2 else "single_ridge", params)


def single_ridge(width, height, ridge_width, gap, ridge_corner_radius=0.0, base_radius=0.0):
    """Single-ridge guide (ridge on the bottom wall); see :func:`ridged`."""
    return ridged(width, height, ridge_width, gap, 1, ridge_corner_radius, base_radius)


def double_ridge(width, height, ridge_width, gap, ridge_corner_radius=0.0, base_radius=0.0):
    """Double-ridge guide (ridges on top and bottom walls); see :func:`ridged`."""
    return ridged(width, height, ridge_width, gap, 2, ridge_corner_radius, base_radius)


def l_shape(width, height, notch_width, notch_height):
    """L-shaped guide: the ``width`` x ``height`` rectangle [0, width] x [0, height] with the
    ``notch_width`` x ``notch_height`` rectangle removed from its top-right corner.
    (The lower-left corner sits at the origin.)"""
    a = check_positive("width", width)
    b = check_positive("height", height)
    nw = check_positive("notch_width", notch_width)
    nh = check_positive("notch_height", notch_height)
    if nw >= a or nh >= b:
        raise FemodesError(f"the notch ({nw * 1e3:.6g} x {nh * 1e3:.6g} mm) must be smaller than the guide "
                           f"({a * 1e3:.6g} x {b * 1e3:.6g} mm) in both directions")
    v = [(0, 0), (a, 0), (a, b - nh), (a - nw, b - nh), (a - nw, b), (0, b)]
    return Section(_polygon_loop(v), (), "l_shape",
                   {"width": a, "height": b, "notch_width": nw, "notch_height": nh})


def sector(radius, angle, inner_radius=0.0):
    """Circular sector of ``radius`` and opening ``angle`` (radians, 0 < angle < 2 pi), apex at the
    origin, straight edges along angle 0 and ``angle``; with ``inner_radius`` > 0 an annular sector
    centred at the origin."""
    R = check_positive("radius", radius)
    try:
        ang = float(angle)
    except (TypeError, ValueError):
        raise FemodesError(f"angle must be a number of radians, got {angle!r}") from None
    if not (0 < ang < 2 * math.pi):
        raise FemodesError(f"sector angle must lie strictly between 0 and 2 pi rad (360 deg), got {ang!r} rad")
    ri = check_nonnegative("inner_radius", inner_radius)
    if ri >= R:
        raise FemodesError(f"inner_radius ({ri * 1e3:.6g} mm) must be smaller than radius ({R * 1e3:.6g} mm)")
    outer_arcs = Arc((0.0, 0.0), R, R, 0.0, 0.0, ang).split(math.pi / 2)
    end = outer_arcs[-1].end
    if ri == 0:
        segs = [Line((0.0, 0.0), (R, 0.0))] + outer_arcs + [Line(end, (0.0, 0.0))]
    else:
        inner_arcs = Arc((0.0, 0.0), ri, ri, 0.0, ang, 0.0).split(math.pi / 2)
        segs = [Line((ri, 0.0), (R, 0.0))] + outer_arcs + [Line(end, inner_arcs[0].start)] + inner_arcs
    params = {"radius": R, "angle": ang}
    if ri:
        params["inner_radius"] = ri
    return Section(Loop(tuple(segs)), (), "sector", params)


def polygon(vertices, holes=()):
    """General polygonal guide: ``vertices`` is a list of (x, y) points in metres in order around the
    outline; each hole is a vertex list or a shape (its outline is used; move it with
    ``.translated``) and is a PEC inner conductor."""
    try:
        v = [(float(p[0]), float(p[1])) for p in vertices]
    except (TypeError, IndexError, ValueError):
        raise FemodesError("vertices must be a list of (x, y) pairs in metres") from None
    if len(v) < 3:
        raise FemodesError(f"a polygon needs at least 3 vertices, got {len(v)}")
    if not np.all(np.isfinite(v)):
        raise FemodesError("vertices must be finite numbers")
    for i in range(len(v)):
        if math.dist(v[i], v[(i + 1) % len(v)]) == 0:
            raise FemodesError(f"vertices {i + 1} and {(i + 1) % len(v) + 1} coincide at {v[i]}: remove the repeat")
    loops = []
    for k, h in enumerate(holes):
        if isinstance(h, Section):
            loops.append(h.outer)
        else:
            try:
                hv = [(float(p[0]), float(p[1])) for p in h]
            except (TypeError, IndexError, ValueError):
                raise FemodesError(f"hole {k + 1} must be a list of (x, y) pairs or a shape") from None
            if len(hv) < 3:
                raise FemodesError(f"hole {k + 1} needs at least 3 vertices, got {len(hv)}")
            loops.append(_polygon_loop(hv))
    # drop collinear vertices so that no spurious 180-degree corners are reported
    return Section(_polygon_loop(v), tuple(loops), "polygon", {})
