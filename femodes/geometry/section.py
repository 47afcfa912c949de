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

from femodes.errors import FemodesError, check_positive, material_number, nonnegative_number
from femodes.geometry.checks import check_scale, check_section
from femodes.geometry.loops import Line, Loop, _max_distance, _min_distance, _point_in_polygon, _point_map, _polyline_self_intersects, _polylines_cross
from femodes.geometry.walls import magnetic_lines, mark_points, resolve_marks, wall_junctions

__all__ = ["Section", "Material", "material_values"]


def material_values(eps_r, mu_r, tan_delta, name):
    """(eps_r, mu_r, tan_delta, name) of a material region, checked: eps_r, mu_r > 0 (real),
    0 <= tan_delta < 1, name a string (stripped)."""
    eps, mu = material_number("eps_r", eps_r), material_number("mu_r", mu_r)
    tand = nonnegative_number("tan_delta", tan_delta)
    if tand >= 1:
        raise FemodesError(f"tan_delta is a loss tangent and must lie in 0 <= tan_delta < 1, got {tan_delta!r}")
    if not isinstance(name, str):
        raise FemodesError(f"name must be a string, got {type(name).__name__}")
    return eps, mu, tand, name.strip()


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
    cuts : the symmetry walls of a reduced section (:func:`femodes.geometry.mirror.reduce`):
                'x' for a wall on the line x = 0, 'y' for y = 0 (their kind, electric or
                magnetic, is chosen per symmetry class by the solver); () for a whole section
    magnetic : points (x, y) in metres, each on a straight side of the outer wall that the user
                marked a magnetic wall (PMC, :meth:`with_walls`, :mod:`femodes.geometry.walls`);
                every other wall is electric (PEC)
    """

    outer: Loop
    holes: tuple = ()
    kind: str = "polygon"
    params: dict = field(default_factory=dict, compare=False)
    frame: tuple = (0.0, 0.0, 0.0)
    materials: tuple = ()
    cuts: tuple = ()
    magnetic: tuple = ()

    def __post_init__(self):
        trusted = self.params.pop("_valid", False) if isinstance(self.params, dict) else False
        if not trusted:  # before any area: sizes near the float range overflow
            check_scale(self.outer.polyline(8))
        outer = self.outer
        if outer.signed_area() < 0:
            outer = outer.reversed()
        holes = tuple(h if h.signed_area() < 0 else h.reversed() for h in self.holes)
        object.__setattr__(self, "outer", outer)
        object.__setattr__(self, "holes", holes)
        if not trusted:
            self._validate()
        if self.magnetic:
            object.__setattr__(self, "magnetic", mark_points(self.magnetic))
            if self.materials:
                raise FemodesError("magnetic walls are solved for homogeneously filled guides only (the scalar "
                                   "solver): remove the material regions or the magnetic wall marks")
            if self.holes:
                raise FemodesError("magnetic walls on a section with inner conductors are not supported (its TEM "
                                   "statics take every wall as a conductor): mark walls of a hollow guide only")
            if self.cuts:
                raise FemodesError("a reduced section (with symmetry cuts) cannot carry magnetic wall marks")
            resolve_marks(self, self.magnetic)  # every mark on a straight side, not all sides

    # -- checks --------------------------------------------------------------
    def _validate(self):
        po = self.outer.polyline(48)
        scale = float(np.max(np.ptp(po, axis=1)))
        if not np.all(np.isfinite(po)) or scale <= 0:
            raise FemodesError("the outline has no extent: give at least three distinct vertices")
        check_scale(po)
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
        check_section(self)  # touching, slivers, scale (femodes.geometry.checks)

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
        """All corners of all loops (see :class:`Corner`); those on a symmetry wall (``cuts``)
        are ``mixed``: their exponents are those of the Dirichlet-Neumann corner too.  So are the
        junctions of a magnetic side with an electric one (``magnetic``), straight joints
        (angle pi, exponent 1/2) included."""
        out = [c for l in self.loops for c in l.corners()]
        if self.magnetic:
            junctions = wall_junctions(self, magnetic_lines(self))
            tol = 1e-9 * self.size
            out = [c for c in out if not any(math.dist(c.point, j.point) <= tol for j in junctions)] + junctions
        if self.cuts:
            tol = 1e-9 * self.size
            on = [c for c in out if any(abs(c.point[0 if a == "x" else 1]) <= tol for a in self.cuts)]
            out = [replace(c, mixed=True) if c in on else c for c in out]
        return out

    def reentrant_corners(self):
        return [c for c in self.corners() if c.reentrant]

    def rate_limiting_corners(self, order):
        """Wall corners, convex or re-entrant, whose smallest non-integer exponent k pi / angle
        is below ``order``: they cap the eigenvalue convergence of order-``order`` elements
        unless the mesh is graded toward them (see :meth:`Corner.exponents`).  Every re-entrant
        corner is among them; so are convex corners of 120, 135, 150 degrees (exponents 1.5,
        4/3, 1.2), not those of 90, 60 or 45 degrees (pi / angle whole: smooth)."""
        return [c for c in self.corners() if c.limits_rate(order)]

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
        if self.magnetic:  # the marked sides must map onto marked sides
            mids = lambda sec: [((l.start[0] + l.end[0]) / 2, (l.start[1] + l.end[1]) / 2) for l in magnetic_lines(sec)]
            ours, theirs = mids(self), mids(other)
            if len(ours) != len(theirs) or any(min(math.dist(p, q) for q in theirs) > 1e-7 * scale for p in ours):
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
                       tuple(m.transformed(kind, arg) for m in self.materials), (),
                       tuple(f(p) for p in self.magnetic))

    def translated(self, dx, dy):
        """The same section moved by (dx, dy) metres."""
        dx, dy = _finite("dx", dx, "m"), _finite("dy", dy, "m")
        return self._moved("translate", (dx, dy))

    def rotated(self, angle):
        """The same section rotated counter-clockwise by ``angle`` radians about the origin."""
        return self._moved("rotate", _finite("angle", angle, "radians"))

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
                       self.kind, params, (x0 * s, y0 * s, ang), mats, (),
                       tuple((x * s, y * s) for x, y in self.magnetic))

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
        eps, mu, tand, name = material_values(eps_r, mu_r, tan_delta, name)
        if self.magnetic:
            raise FemodesError("magnetic walls are solved for homogeneously filled guides only (the scalar "
                               "solver): a section with magnetic wall marks cannot take material regions")
        mat = Material(shape.outer, tuple(shape.holes), eps, mu, tand, name)
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

    def with_walls(self, magnetic=(), electric=()):
        """The same section with walls marked magnetic (PMC, n x H = 0) or electric again (PEC,
        n x E = 0, every wall's default): each mark is a point (x, y) in metres on a straight
        side of the outer wall and marks that whole side.  Marks add to those already made;
        ``electric`` marks take a side back.  Used to solve a section cut by hand along a plane of
        symmetry: the scalar solver puts TM's E_z free (Neumann) and TE's H_z = 0 (Dirichlet) on a
        magnetic wall (:mod:`femodes.geometry.walls`).  Homogeneously filled hollow guides only.

        Example: ``rectangle(a, b).with_walls(magnetic=[(a / 2, 0)])`` is the half of a guide of
        width 2a that holds the modes whose E_z is even (H_z odd) about its middle plane."""
        new = mark_points(magnetic, "magnetic")
        back = mark_points(electric, "electric")
        if not new and not back:
            raise FemodesError("with_walls needs magnetic=[(x, y), ...] (points in metres on the sides to mark "
                               "magnetic) or electric=[...] (sides to take back)")
        if self.materials:
            raise FemodesError("magnetic walls are solved for homogeneously filled guides only (the scalar "
                               "solver): remove the material regions or the magnetic wall marks")
        trial = replace(self, params=dict(self.params, _valid=True), magnetic=())
        sides = lambda pts: set(resolve_marks(trial, pts)) if pts else set()
        if back:
            try:
                drop = set(resolve_marks(trial, back))
            except FemodesError as e:
                raise FemodesError(str(e).replace("magnetic wall mark", "electric wall mark")) from None
        else:
            drop = set()
        both = sides(new) & drop
        if both:
            raise FemodesError("a side is marked both magnetic and electric in the same call: give each side once")
        old = [p for p in self.magnetic if not (sides([p]) & drop)]
        kept = tuple(old) + tuple(p for p in new if not (sides([p]) & sides(old)))
        return replace(self, params=dict(self.params, _valid=True), magnetic=kept)

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
        if self.magnetic:
            n = len(magnetic_lines(self))
            text += f" with {n} magnetic wall" + ("s" if n > 1 else "")
        if self.materials:
            text += " with " + ", ".join(f"a region of eps_r = {m.eps_r:g}" + (f", mu_r = {m.mu_r:g}" if m.mu_r != 1 else "")
                                         for m in self.materials)
        return text


_ANGLE_KEYS = {"angle"}


def _finite(name, value, unit):
    """A finite number (not a boolean) as float, else FemodesError."""
    if isinstance(value, bool):
        raise FemodesError(f"{name} must be a number in {unit}, got {value!r}")
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise FemodesError(f"{name} must be a number in {unit}, got {value!r}") from None
    if not math.isfinite(x):
        raise FemodesError(f"{name} must be a finite number in {unit}, got {value!r}")
    return x


def _loop_key(loop):
    p = loop.polyline(16)
    return (round(float(np.mean(p[0])), 9), round(float(np.mean(p[1])), 9))
