"""Meshing: section -> triangles.

:func:`mesh_section` meshes a :class:`~femodes.section.Section` with gmsh's Python API:

* element size ``h_max`` away from singular points, set by the caller from the accuracy wanted;
* grading toward re-entrant corners (with ``all_corners``, toward every corner whose exponent
  pi / angle is not whole and below p: convex 120, 135, 150 degrees too),
  h(r) = h_max (r / R)^(1 - mu) with mu = lambda / (p + 1)
  for elements of order p and corner exponent lambda = pi / angle: this equidistributes the
  energy error of the singular field r^lambda, so that the eigenvalue error falls like h^(2p)
  as on a smooth problem instead of like h^(2 lambda);
* small fillets and arcs are resolved (h <= a fraction of their radius of curvature);
* second-order geometry: gmsh places mid-edge nodes on the true arcs, so circles are not polygons.

The mesh comes back as plain data (:class:`Mesh`), independent of gmsh.  :func:`read_mesh` reads an
external triangle mesh (gmsh .msh or anything meshio reads), keeping its named groups of triangles
(gmsh physical surfaces, or meshio cell sets) so that :meth:`Mesh.with_materials` can fill them
with dielectric; :func:`write_mesh` writes one.
Meshing is deterministic: one thread, fixed algorithm, no random perturbation.
"""

from __future__ import annotations

import difflib
import math
import os
from contextlib import contextmanager
from dataclasses import dataclass, field, replace

import numpy as np

from femodes.errors import FemodesError
from femodes.geometry.checks import check_mesh, check_section
from femodes.geometry.locate import locate_straight
from femodes.geometry.loops import Arc, Corner, Line, _point_edge_distances
from femodes.geometry.section import Section, material_values

__all__ = ["Mesh", "MeshMaterial", "mesh_section", "read_mesh", "write_mesh"]


@dataclass(frozen=True)
class MeshMaterial:
    """The material of one named group of a mesh file (:meth:`Mesh.with_material`).

    group       : the group's name in the file (a gmsh physical surface, a meshio cell set)
    eps_r, mu_r : relative permittivity and permeability (real, > 0)
    tan_delta   : dielectric loss tangent, 0 <= tan_delta < 1 (first-order loss, femodes.vector)
    name        : what the report calls the region (default: the group's name)
    """

    group: str
    eps_r: float = 1.0
    mu_r: float = 1.0
    tan_delta: float = 0.0
    name: str = ""


@dataclass(frozen=True)
class Mesh:
    """A triangle mesh of a cross-section, in metres.

    points    : (2, n) vertex coordinates
    triangles : (3, m) vertex indices per triangle, each column sorted ascending
    curved_edges : (2, k) vertex index pairs (sorted) of edges whose mid-point is not the
                   straight mid-point (edges on arcs)
    curved_midpoints : (2, k) the true mid-point of those edges
    curves    : (q, 5) the exact curves (cx, cy, rx, ry, rotation) of the section's arcs
    edge_curve: (k,) which curve each curved edge lies on (-1: unknown, e.g. a mesh file)
    regions   : (m,) material region of each triangle.  A mesh of a Section: 0 the background
                fill, i the i-th of the section's materials (empty for a homogeneous section).  A
                mesh file: the number of the triangle's group (gmsh physical tag; 0 none)
    region_names : a mesh file's named groups, {name: number in ``regions``} (-1: a group of
                curves or points)
    materials : (MeshMaterial, ...) the groups filled with a material (:meth:`with_material`);
                the rest of the mesh holds the background fill
    source    : the file the mesh was read from (for messages), or None
    """

    points: np.ndarray
    triangles: np.ndarray
    curved_edges: np.ndarray
    curved_midpoints: np.ndarray
    curves: np.ndarray = field(default_factory=lambda: np.zeros((0, 5)))
    edge_curve: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    regions: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    region_names: dict = field(default_factory=dict)
    materials: tuple = ()
    source: str | None = None

    @property
    def n_triangles(self):
        return self.triangles.shape[1]

    @property
    def n_vertices(self):
        return self.points.shape[1]

    @property
    def is_curved(self):
        return self.curved_edges.shape[1] > 0

    # -- named groups and their materials (mesh files) ----------------------------------
    @property
    def groups(self):
        """The names of the file's groups that hold triangles, in the order of their numbers."""
        if not self.region_names or self.regions.size != self.n_triangles:
            return ()
        present = set(np.unique(self.regions).tolist())
        return tuple(n for n, t in sorted(self.region_names.items(), key=lambda kv: kv[1]) if t in present)

    def _where(self):
        return f"mesh file {self.source}" if self.source else "the mesh"

    def _group_tag(self, group):
        """The number of the named group, or FemodesError naming the file and the groups there."""
        if not isinstance(group, str):
            raise FemodesError(f"a group of {self._where()} is named by a string, got {group!r}")
        have = self.groups
        if not have:
            raise FemodesError(
                f"{self._where()} has no named groups of triangles, so group {group!r} cannot be given a "
                "material; name the regions in the mesh (gmsh: a physical surface per region, e.g. "
                "gmsh.model.addPhysicalGroup(2, [surface tags], name=\"rod\"))")
        if group not in have:
            close = difflib.get_close_matches(group, list(have), n=1, cutoff=0.6)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            if group in self.region_names:
                what = (f"group {group!r} of {self._where()} holds no triangles (a group of curves or points, "
                        "or an empty one)")
            else:
                what = f"there is no group {group!r} in {self._where()}{hint}"
            raise FemodesError(f"{what}; groups of triangles there: {', '.join(map(repr, have))}")
        return self.region_names[group]

    def with_material(self, group, eps_r=1.0, mu_r=1.0, tan_delta=0.0, name=""):
        """A copy in which the triangles of the named ``group`` (a gmsh physical surface of the
        file) are filled with a material of relative permittivity ``eps_r`` and permeability
        ``mu_r`` (loss tangent ``tan_delta``; ``name`` for reports, default the group's name).
        Every triangle not in a group given a material holds the background fill (the
        ``eps_r``, ``mu_r`` of :func:`femodes.solve`).  A group can be given one material only."""
        self._group_tag(group)
        if any(m.group == group for m in self.materials):
            raise FemodesError(f"group {group!r} of {self._where()} is given a material twice; give each "
                               f"group once (groups there: {', '.join(map(repr, self.groups))})")
        eps, mu, tand, name = material_values(eps_r, mu_r, tan_delta, name)
        mat = MeshMaterial(group, eps, mu, tand, name or group)
        return replace(self, materials=self.materials + (mat,))

    def with_materials(self, materials):
        """A copy with a material in each named group: ``materials`` maps a group's name to its
        eps_r (a number) or to the keywords of :meth:`with_material`, e.g.
        ``mesh.with_materials({"rod": dict(eps_r=6.0, tan_delta=1e-4), "sleeve": 2.1})``."""
        if not isinstance(materials, dict):
            raise FemodesError(f"with_materials needs a dict {{group name: eps_r or dict(eps_r=..., mu_r=..., "
                               f"tan_delta=..., name=...)}}, got {type(materials).__name__}")
        out = self
        for group, spec in materials.items():
            if isinstance(spec, dict):
                bad = sorted(set(spec) - {"eps_r", "mu_r", "tan_delta", "name"})
                if bad:
                    raise FemodesError(f"group {group!r}: unknown material key(s) {', '.join(map(repr, bad))} "
                                       "(valid: eps_r, mu_r, tan_delta, name)")
                out = out.with_material(group, **spec)
            else:
                out = out.with_material(group, eps_r=spec)
        return out

    def material_index(self):
        """(m,) per triangle: 0 the background fill, i where it lies in the group of the i-th of
        ``materials``."""
        out = np.zeros(self.n_triangles, dtype=np.int64)
        for i, m in enumerate(self.materials, start=1):
            out[self.regions == self.region_names[m.group]] = i
        return out

    @property
    def kind(self):
        return "mesh"

    @property
    def params(self):
        return {}

    @property
    def area(self):
        p = self.points[:, self.triangles]
        return float(0.5 * np.sum(np.abs((p[0, 1] - p[0, 0]) * (p[1, 2] - p[1, 0])
                                         - (p[0, 2] - p[0, 0]) * (p[1, 1] - p[1, 0]))))

    @property
    def size(self):
        """The larger side of the bounding box (m)."""
        return float(np.max(np.ptp(self.points, axis=1)))

    def describe(self):
        """One line for reports: the file, its size, and the materials of its groups."""
        name = os.path.basename(self.source) if self.source else "external mesh"
        text = f"mesh {name} ({self.n_triangles} triangles"
        if self.groups:
            text += f"; groups {', '.join(self.groups)}"
        text += ")"
        if self.materials:
            text += " with " + ", ".join(f"{m.group}: eps_r = {m.eps_r:g}" + (f", mu_r = {m.mu_r:g}" if m.mu_r != 1
                                                                              else "") for m in self.materials)
        return text

    def to_skfem(self, order=2):
        """The scikit-fem mesh, with geometry of the given polynomial ``order`` where curved.

        Straight meshes give a MeshTri1.  Curved ones give an isoparametric mesh: MeshTri2 with
        gmsh's true mid-nodes, or for order 3 and 4 a mesh whose extra nodes follow that quadratic
        map inside the elements and lie exactly on the section's arcs on the boundary.
        Triangle vertices are sorted (scikit-fem's convention): P3 and P4 elements give wrong
        answers on a curved mesh that keeps gmsh's vertex order.
        """
        from skfem import MeshTri1, MeshTri2

        m1 = MeshTri1(np.ascontiguousarray(self.points), np.ascontiguousarray(self.triangles))
        if not self.is_curved:
            return m1
        m2 = MeshTri2.from_mesh(m1)
        doflocs = m2.doflocs.copy()
        nv = m1.p.shape[1]
        idx, found = self._curved_facets(m1)
        doflocs[:, nv + idx] = self.curved_midpoints[:, found]
        m2 = MeshTri2(doflocs, m2.t)
        if order <= 2:
            return m2
        cls = _high_order_mesh_class(order)
        mh = cls.from_mesh(m2)
        if len(self.curves) and np.any(self.edge_curve >= 0):
            doflocs = mh.doflocs.copy()
            fd = mh.dofs.facet_dofs  # (dofs per edge, n_facets)
            for c in np.unique(self.edge_curve[self.edge_curve >= 0]):
                sel = idx[self.edge_curve[found] == c]
                d = fd[:, sel].ravel()
                doflocs[:, d] = _project_to_curve(doflocs[:, d], self.curves[c])
            mh = cls(doflocs, mh.t)
        return mh

    def _curved_facets(self, m1):
        nv = m1.p.shape[1]
        facets = np.sort(m1.facets, axis=0)
        key = facets[0].astype(np.int64) * nv + facets[1]
        order = np.argsort(key)
        ce = np.sort(self.curved_edges, axis=0)
        ckey = ce[0].astype(np.int64) * nv + ce[1]
        pos = np.searchsorted(key[order], ckey)
        found = (pos < len(key)) & (key[order][np.minimum(pos, len(key) - 1)] == ckey)
        return order[pos[found]], found


def _project_to_curve(pts, curve):
    """Move points (2, n) onto the ellipse (cx, cy, rx, ry, rot) along its 'radial' direction."""
    cx, cy, rx, ry, rot = curve
    c, s = math.cos(rot), math.sin(rot)
    dx, dy = pts[0] - cx, pts[1] - cy
    u, v = (c * dx + s * dy) / rx, (-s * dx + c * dy) / ry
    t = np.arctan2(v, u)
    u, v = rx * np.cos(t), ry * np.sin(t)
    return np.array([cx + c * u - s * v, cy + s * u + c * v])


_MESH_CLASSES = {}


def _high_order_mesh_class(order):
    """Triangle mesh classes with cubic or quartic isoparametric geometry (scikit-fem)."""
    if order not in _MESH_CLASSES:
        from dataclasses import dataclass as _dc

        from skfem import ElementTriP3, ElementTriP4, MeshTri1
        from skfem.mesh.mesh_2d_2 import Mesh2D2

        elem = {3: ElementTriP3, 4: ElementTriP4}[order]
        cls = _dc(repr=False)(type(f"MeshTri{order}", (Mesh2D2, MeshTri1),
                                   {"__annotations__": {"elem": type, "affine": bool, "sort_t": bool},
                                    "elem": elem, "affine": False, "sort_t": False}))
        _MESH_CLASSES[order] = cls
    return _MESH_CLASSES[order]


def _gmsh():
    try:
        import gmsh
    except OSError as exc:  # missing X11/GL system libraries
        raise RuntimeError(
            "gmsh could not load its shared libraries (" + str(exc) + "). On Debian/Ubuntu install: "
            "apt-get install libglu1-mesa libxrender1 libxcursor1 libxft2 libxinerama1 libfontconfig1") from exc
    return gmsh


@contextmanager
def gmsh_session(name="femodes"):
    """gmsh, quiet and single-threaded, with a fresh model that is removed afterwards (gmsh is
    initialised here unless the caller already did)."""
    gmsh = _gmsh()
    initialized_here = not gmsh.isInitialized()
    if initialized_here:
        gmsh.initialize(readConfigFiles=False, interruptible=False)
    try:
        gmsh.option.setNumber("General.Terminal", 0)
        gmsh.option.setNumber("General.Verbosity", 1)
        gmsh.option.setNumber("General.NumThreads", 1)
        gmsh.model.add(name)
        yield gmsh
    finally:
        gmsh.model.remove()
        if initialized_here:
            gmsh.finalize()


def _add_loop(kernel, loop):
    """Add one closed loop of lines and (elliptic) arcs to a gmsh CAD kernel (``gmsh.model.geo``
    or ``gmsh.model.occ``, which share these calls); arcs are split below pi as gmsh needs.
    Returns the curve-loop tag."""
    segs = []
    for s in loop.segments:
        segs.extend(s.split(math.pi / 2) if isinstance(s, Arc) else [s])
    pts = [kernel.addPoint(s.start[0], s.start[1], 0.0) for s in segs]
    curves = []
    for i, s in enumerate(segs):
        a, b = pts[i], pts[(i + 1) % len(segs)]
        if isinstance(s, Line):
            curves.append(kernel.addLine(a, b))
            continue
        c = kernel.addPoint(s.center[0], s.center[1], 0.0)
        if s.is_circular:
            curves.append(kernel.addCircleArc(a, c, b))
            continue
        cr, sr = math.cos(s.rotation), math.sin(s.rotation)
        if s.rx >= s.ry:
            mx, my = s.center[0] + cr * s.rx, s.center[1] + sr * s.rx
        else:
            mx, my = s.center[0] - sr * s.ry, s.center[1] + cr * s.ry
        curves.append(kernel.addEllipseArc(a, c, kernel.addPoint(mx, my, 0.0), b))
    return kernel.addCurveLoop(curves)


def _build_geometry(gmsh, section: Section):
    """A homogeneous section in gmsh's built-in kernel: one plane surface with holes."""
    geo = gmsh.model.geo
    geo.addPlaneSurface([_add_loop(geo, l) for l in section.loops])
    geo.synchronize()


def _build_geometry_occ(gmsh, section: Section):
    """Guide and material regions in OpenCASCADE, fragmented so the mesh conforms to every
    material interface; region parts outside the guide are removed."""
    occ = gmsh.model.occ

    def face(outer, holes):
        # holes are cut out as faces of their own: a hole wire handed to addPlaneSurface keeps
        # the section's clockwise orientation, and OpenCASCADE then builds a face that the
        # fragment below silently fails to cut (a coaxial guide's inner conductor inside a
        # dielectric ring gave a mesh that ignored the ring's boundary)
        tag = occ.addPlaneSurface([_add_loop(occ, outer)])
        if not holes:
            return [(2, tag)]
        cutters = [(2, occ.addPlaneSurface([_add_loop(occ, h)])) for h in holes]
        out, _ = occ.cut([(2, tag)], cutters)
        return out

    guide = face(section.outer, section.holes)
    regions = [dt for m in section.materials for dt in face(m.region, m.holes)]
    _, pieces = occ.fragment(guide, regions)
    keep = {dt for i in range(len(guide)) for dt in pieces[i]}  # the pieces the guide was cut into
    drop = [dt for dt in occ.getEntities(2) if dt not in keep]
    if drop:
        occ.remove(drop, recursive=True)
    occ.removeAllDuplicates()
    occ.synchronize()


def singular_corners(section, order=None):
    """The points where the fields are singular: re-entrant wall corners, and the corners of
    material regions.  A region corner is graded like a 270-degree conducting corner (exponent
    2/3), a conservative choice for any contrast; a right-angled region corner standing on a
    straight wall is regular (its image in the wall is a straight interface) and is left out.

    With ``order`` the wall corners are all those whose smallest non-integer exponent
    k pi / angle limits the convergence of order-``order`` elements
    (:meth:`Section.rate_limiting_corners`: convex ones of 120, 135, 150 degrees too), wall
    corners first in either case."""

    L0 = section.size
    walls = np.hstack([l.polyline(64, line_pieces=1) for l in section.loops])
    material_corners = []
    for l in _material_loops(section):
        for c in l.corners():
            on_wall = _point_edge_distances(np.array([[c.point[0]], [c.point[1]]]), walls)[0] < 1e-9 * L0
            if not (on_wall and abs(c.angle - 0.5 * math.pi) < 1e-6):
                material_corners.append(Corner(c.point, 1.5 * math.pi))
    wall = section.reentrant_corners() if order is None else section.rate_limiting_corners(order)
    return list(wall) + material_corners


def _size_fields(gmsh, section: Section, h_max: float, order: int, grading: float, radius=None,
                 floor=1e-7, all_corners=False):
    """Install the element-size field as gmsh fields (evaluated in C++, so meshing stays fast).

    Singular corner of exponent lambda: h = h_max (r / L)^e with e = 1 - grading lambda / (p + 1),
    r the distance to the corner and L the grading radius (default the section size); r / L is
    floored at ``floor``.  The graded corners are the re-entrant ones, or with ``all_corners``
    every corner whose exponent limits the rate at this order (convex ones included; e is
    clipped at 0: a mild corner is never meshed coarser than h_max).
    """
    fld = gmsh.model.mesh.field
    L0 = section.size
    L = L0 if radius is None else min(float(radius), L0)
    ids = []
    pts = {}
    for tag in (t for _, t in gmsh.model.getEntities(0)):
        x, y, _ = gmsh.model.getValue(0, tag, [])
        pts[(round(x / L0, 9), round(y / L0, 9))] = tag
    by_exponent = {}  # corners of one angle share one Distance field (fewer fields: faster meshing)
    for c in singular_corners(section, order if all_corners else None):
        tag = pts.get((round(c.point[0] / L0, 9), round(c.point[1] / L0, 9)))
        if tag is not None:
            e = max(0.0, 1.0 - grading * c.exponent / (order + 1))
            by_exponent.setdefault(round(e, 12), []).append(tag)
    for e, tags in by_exponent.items():
        d = fld.add("Distance")
        fld.setNumbers(d, "PointsList", tags)
        f = fld.add("MathEval")
        fld.setString(f, "F", f"{h_max!r} * Max(F{d} / {L!r}, {float(floor)!r}) ^ {e!r}")
        ids.append(f)
    # arcs: concave ones (rounded re-entrant corners, inner conductors) get the corner law
    # measured from the arc, h = h_max ((d + rc) / L)^e; small convex ones h <= sqrt(rc/L) h_max + d/2
    curve_of = _gmsh_arc_curves(gmsh, section)
    for arc, tags in curve_of:
        rc = arc.radius_of_curvature
        d = fld.add("Distance")
        fld.setNumbers(d, "PointsList", [])
        fld.setNumbers(d, "CurvesList", tags)
        fld.setNumber(d, "Sampling", 32)
        f = fld.add("MathEval")
        if _arc_is_concave(arc):
            e = 1.0 - grading * (2.0 / 3.0) / (order + 1)
            fld.setString(f, "F", f"{h_max!r} * ((F{d} + {rc!r}) / {L!r}) ^ {e!r}")
        elif rc < 0.1 * L0:
            # small convex arcs (fillets, the tips of a thin ellipse): h = sqrt(rc / L) h_max at
            # the arc, growing away from it.  Proportional to h_max, so that refining the mesh
            # refines here too (a fixed size would freeze this part of the error and fool the
            # two-mesh error estimate)
            fld.setString(f, "F", f"{math.sqrt(rc / L0) * h_max!r} + 0.5 * F{d}")
        else:
            continue
        ids.append(f)
    if ids:
        m = fld.add("Min")
        fld.setNumbers(m, "FieldsList", ids)
        fld.setAsBackgroundMesh(m)


def _arc_is_concave(arc):
    """True where the guide lies on the far side of the arc from its centre (a rounded
    re-entrant corner, an inner conductor).  Loops run with the guide on the left, so an arc
    that turns clockwise (t1 < t0) has its centre on the right."""
    return arc.t1 < arc.t0


def _gmsh_arc_curves(gmsh, section):
    """(arc, [gmsh curve tags]) for each arc of the section, matched by geometry."""
    out = []
    ents = [t for _, t in gmsh.model.getEntities(1) if gmsh.model.getType(1, t) in ("Circle", "Ellipse")]
    L = section.size
    mids = {}
    for t in ents:
        lo, hi = gmsh.model.getParametrizationBounds(1, t)
        x, y, _ = gmsh.model.getValue(1, t, [0.5 * (lo[0] + hi[0])])
        mids[t] = (x, y)
    for loop in list(section.loops) + _material_loops(section):
        for s in loop.segments:
            if not isinstance(s, Arc):
                continue
            tags = []
            for piece in s.split(math.pi / 2):
                m = piece.point(np.array([0.5]))[:, 0]
                best = min(ents, key=lambda t: math.dist(mids[t], m), default=None)
                if best is not None and math.dist(mids[best], m) < 1e-6 * L:
                    tags.append(best)
            if tags:
                out.append((s, tags))
    return out


def mesh_section(section: Section, h_max: float, order: int = 3, grading: float = 1.0,
                 curved: bool = True, graded: bool = True, grading_radius=None,
                 grading_floor: float = 1e-7, all_corners: bool = False) -> Mesh:
    """Mesh ``section`` with maximum element size ``h_max`` (m), graded for elements of ``order``.

    Returns a :class:`Mesh`; with ``curved`` (default) edges on arcs carry their true mid-points.
    ``graded=False`` gives a uniform mesh (for comparisons); ``grading`` scales the corner
    exponent (1 = equidistributing); ``all_corners`` grades toward every wall corner whose
    exponent limits the rate at ``order`` (convex ones of 120, 135, 150 degrees ...), not only
    the re-entrant ones.
    """
    if not (h_max > 0):
        raise FemodesError(f"mesh size must be positive, got {h_max!r}")
    check_section(section)  # a moved section skipped the checks at construction
    with gmsh_session() as gmsh:
        if section.materials:
            _build_geometry_occ(gmsh, section)
        else:
            _build_geometry(gmsh, section)
        gmsh.option.setNumber("Mesh.MeshSizeExtendFromBoundary", 0)
        gmsh.option.setNumber("Mesh.MeshSizeFromPoints", 0)
        gmsh.option.setNumber("Mesh.MeshSizeFromCurvature", 0)
        gmsh.option.setNumber("Mesh.Algorithm", 5)  # Delaunay: robust with strong grading
        gmsh.option.setNumber("Mesh.RandomFactor", 1e-9)
        gmsh.option.setNumber("Mesh.LcIntegrationPrecision", 1e-4)  # 1-D size integration: ample
        gmsh.option.setNumber("Mesh.MeshSizeMax", float(h_max))
        gmsh.option.setNumber("Mesh.MeshSizeMin", 0.0)
        if graded:
            _size_fields(gmsh, section, h_max, order, grading, grading_radius, grading_floor,
                         all_corners)
        gmsh.model.mesh.generate(2)
        # second-order nodes only where a wall or an interface is an arc: on straight sections
        # they would lie on the chords anyway (setOrder took 1.1 s of 3.4 at 1.1e6 P4 unknowns)
        curved = curved and _has_arcs(section)
        if curved:
            gmsh.model.mesh.setOrder(2)
        mesh = _mesh_from_gmsh(gmsh, curved)
    mesh = _attach_curves(mesh, section)
    if section.materials:
        mesh = replace(mesh, regions=_triangle_regions(mesh, section))
    return mesh


def _has_arcs(section):
    """Whether any wall or material outline of ``section`` has a curved (arc) segment."""
    return any(isinstance(seg, Arc) for loop in list(section.loops) + _material_loops(section)
               for seg in loop.segments)


def _material_loops(section):
    return [l for m in section.materials for l in (m.region,) + tuple(m.holes)]


def _triangle_regions(mesh: Mesh, section: Section) -> np.ndarray:
    """Material index of each triangle from its centroid (the mesh conforms to the interfaces,
    so each triangle lies in one region); the last region containing it wins."""
    return triangle_regions(section, mesh.points, mesh.triangles)


def triangle_regions(section: Section, points, triangles) -> np.ndarray:
    """Material index (0 the fill, i the i-th of ``section.materials``) of each triangle
    (``triangles`` (3, m) indices into ``points`` (2, n)), from its centroid.  ``section`` may
    also be a Mesh with materials (a mesh file): the triangles are then located in it."""
    c = np.asarray(points)[:, np.asarray(triangles)].mean(axis=1)
    if isinstance(section, Mesh):
        index = section.material_index()
        same = (np.shape(triangles) == section.triangles.shape
                and np.array_equal(np.sort(np.asarray(triangles), axis=0), section.triangles)
                and np.shape(points)[1] >= section.n_vertices
                and np.allclose(np.asarray(points)[:, :section.n_vertices], section.points))
        if same:
            return index
        cells, _, _ = locate_straight(section.points, section.triangles, c)
        return index[cells]
    out = np.zeros(c.shape[1], dtype=np.int64)
    for i, mat in enumerate(section.materials, start=1):
        out[mat.contains(c[0], c[1])] = i
    return out


def _attach_curves(mesh: Mesh, section: Section) -> Mesh:
    """Record on which of the section's arcs each curved edge lies (for exact high-order nodes)."""
    curves = []
    for loop in list(section.loops) + _material_loops(section):
        for s in loop.segments:
            if isinstance(s, Arc):
                key = (s.center[0], s.center[1], s.rx, s.ry, s.rotation % (2 * math.pi))
                if not any(np.allclose(key, c, rtol=0, atol=1e-12 * section.size) for c in curves):
                    curves.append(key)
    if not curves or not mesh.is_curved:
        return mesh
    curves = np.array(curves, dtype=float)
    mid = mesh.curved_midpoints
    resid = np.empty((len(curves), mid.shape[1]))
    for i, (cx, cy, rx, ry, rot) in enumerate(curves):
        c, s = math.cos(rot), math.sin(rot)
        dx, dy = mid[0] - cx, mid[1] - cy
        resid[i] = np.abs(np.hypot((c * dx + s * dy) / rx, (-s * dx + c * dy) / ry) - 1.0)
    which = np.argmin(resid, axis=0)
    which[resid[which, np.arange(mid.shape[1])] > 1e-6] = -1
    return replace(mesh, curves=curves, edge_curve=which.astype(np.int64))


def _mesh_from_gmsh(gmsh, curved: bool) -> Mesh:
    tags, coords, _ = gmsh.model.mesh.getNodes()
    coords = np.asarray(coords).reshape(-1, 3)[:, :2].T
    etype = 9 if curved else 2
    _, conn = gmsh.model.mesh.getElementsByType(etype)
    nper = 6 if curved else 3
    conn = np.asarray(conn, dtype=np.int64).reshape(-1, nper).T
    lookup = np.zeros(int(tags.max()) + 1, dtype=np.int64)
    lookup[tags] = np.arange(len(tags))
    conn = lookup[conn]
    return _mesh_from_connectivity(coords, conn)


def _mesh_from_connectivity(coords, conn) -> Mesh:
    """Build a :class:`Mesh` from node coordinates and 3- or 6-node triangle connectivity.

    Keeps only the vertices that triangles use (gmsh also returns arc centres), sorts each
    triangle's vertices, and records curved mid-points.
    """
    tri = conn[:3]
    used = np.unique(tri)
    renum = -np.ones(coords.shape[1], dtype=np.int64)
    renum[used] = np.arange(len(used))
    points = coords[:, used]
    t = renum[tri]
    # orientation-independent: sort vertices per triangle
    t_sorted = np.sort(t, axis=0)
    ce = np.zeros((2, 0), dtype=np.int64)
    cm = np.zeros((2, 0))
    if conn.shape[0] == 6:
        edges, mids = [], []
        for (i, j), k in (((0, 1), 3), ((1, 2), 4), ((2, 0), 5)):
            e = np.sort(np.vstack([t[i], t[j]]), axis=0)
            edges.append(e)
            mids.append(coords[:, conn[k]])
        e = np.hstack(edges)
        m = np.hstack(mids)
        straight = 0.5 * (points[:, e[0]] + points[:, e[1]])
        length = np.linalg.norm(points[:, e[0]] - points[:, e[1]], axis=0)
        scale = float(np.max(np.abs(points))) if points.size else 1.0
        off = np.linalg.norm(m - straight, axis=0) > 1e-9 * length + 1e-12 * scale
        e, m = e[:, off], m[:, off]
        # each interior curved edge appears twice; keep one
        if e.shape[1]:
            _, first = np.unique(e[0] * points.shape[1] + e[1], return_index=True)
            ce, cm = e[:, first], m[:, first]
    # drop degenerate triangles (should not happen with gmsh)
    p = points[:, t_sorted]
    area = 0.5 * ((p[0, 1] - p[0, 0]) * (p[1, 2] - p[1, 0]) - (p[0, 2] - p[0, 0]) * (p[1, 1] - p[1, 0]))
    if np.any(np.abs(area) == 0):
        raise FemodesError("the mesh has triangles of zero area; check the file or the geometry")
    return Mesh(np.ascontiguousarray(points), np.ascontiguousarray(t_sorted, dtype=np.int64),
                np.ascontiguousarray(ce, dtype=np.int64), np.ascontiguousarray(cm))


def read_mesh(path, scale=1.0) -> Mesh:
    """Read a triangle mesh (gmsh .msh, or any format meshio reads) with 3- or 6-node triangles.

    ``scale`` multiplies coordinates into metres (e.g. 1e-3 for a mesh drawn in millimetres).
    All boundary edges are taken as PEC walls.  Named groups of triangles are kept (``regions``,
    ``region_names``, ``groups``): a gmsh file's physical surfaces (named, or by their number
    as a string, e.g. ``"2"``, where unnamed), else the cell sets of other formats.  Give them
    materials with :meth:`Mesh.with_material` / :meth:`Mesh.with_materials`.  (gmsh writes only
    the elements of physical groups once any group is defined: name every surface of the guide,
    the air too, or set gmsh's Mesh.SaveAll option.)
    """
    import meshio

    if not os.path.exists(path):
        raise FemodesError(f"mesh file not found: {path}")
    try:
        if str(path).lower().endswith(".msh"):
            try:
                m = meshio.read(path, file_format="gmsh")
            except Exception:  # not a gmsh file: let meshio try the other .msh formats
                m = meshio.read(path)
        else:
            m = meshio.read(path)
    except (Exception, SystemExit) as exc:  # meshio raises many types (and calls exit()) on bad files
        why = str(exc).rstrip(".") or type(exc).__name__
        raise FemodesError(f"could not read mesh file {path}: {why}; give a triangle mesh "
                           "meshio reads (gmsh .msh, .vtu, .xdmf, ...)") from None
    blocks = [c for c in m.cells if c.type in ("triangle", "triangle6")]
    if not blocks:
        kinds = sorted({c.type for c in m.cells})
        raise FemodesError(f"mesh file {path} has no triangles (cell types: {', '.join(kinds) or 'none'}); "
                           "femodes needs a 2-D triangle mesh of the cross-section")
    kind = "triangle6" if any(b.type == "triangle6" for b in blocks) else "triangle"
    used = [i for i, c in enumerate(m.cells) if c.type == kind]
    try:
        conn = np.vstack([m.cells[i].data for i in used]).T.astype(np.int64)
        coords = np.asarray(m.points[:, :2], dtype=float).T * float(scale)
    except (IndexError, ValueError, TypeError) as exc:
        raise FemodesError(f"mesh file {path} has unusable points or triangles ({exc}); fix the file") from None
    if conn.shape[1] == 0 or not np.all((conn >= 0) & (conn < coords.shape[1])):
        raise FemodesError(f"mesh file {path} has triangles that name missing points; fix the file")
    mesh = _mesh_from_connectivity(coords, conn)
    check_mesh(mesh.points, mesh.triangles, f"mesh file {path}")
    tags, names = _file_groups(m, used)
    if tags is not None:
        mesh = replace(mesh, regions=tags, region_names=names)
    return replace(mesh, source=str(path))


def _file_groups(m, used):
    """(per-triangle group numbers, {name: number}) of a meshio mesh's triangles (cell blocks
    ``used``), or (None, {}) without groups: gmsh physical tags named from field_data (surface
    groups only; unnamed tags by their number), else named cell sets, numbered from 1."""
    phys = m.cell_data.get("gmsh:physical")
    if phys is not None:
        tags = np.concatenate([np.asarray(phys[i], dtype=np.int64).ravel() for i in used])
        names = {}
        for name, val in (m.field_data or {}).items():
            val = np.asarray(val).ravel()
            if len(val) >= 2 and int(val[1]) == 2:  # (tag, dimension): surfaces only
                names[str(name)] = int(val[0])
        for name, val in (m.field_data or {}).items():  # curve or point groups: named, no triangles
            if str(name) not in names:
                names[str(name)] = -1
        for t in np.unique(tags):
            if t > 0 and int(t) not in names.values():
                names[str(int(t))] = int(t)
        return tags, names
    sets = {k: v for k, v in (m.cell_sets or {}).items() if not str(k).startswith("gmsh:")}
    if not sets:
        return None, {}
    tags = [np.zeros(len(m.cells[i].data), dtype=np.int64) for i in used]
    names = {}
    for number, (name, per_block) in enumerate(sets.items(), start=1):
        names[str(name)] = number
        for j, i in enumerate(used):
            idx = per_block[i] if i < len(per_block) and per_block[i] is not None else []
            tags[j][np.asarray(idx, dtype=np.int64)] = number
    return np.concatenate(tags), names


def write_mesh(mesh: Mesh, path, point_data=None):
    """Write ``mesh`` through meshio (format from the file name: .msh, .vtu, .xdmf, ...).

    Curved meshes are written as 6-node triangles; a mesh file's named groups are written back
    as gmsh physical surfaces (.msh).
    """
    import meshio

    pts = mesh.points
    tri = mesh.triangles
    if mesh.is_curved:
        sk = mesh.to_skfem()
        nv = pts.shape[1]
        allp = sk.doflocs
        t2 = sk.t2f + nv  # edge dof index = nv + facet index
        conn = np.vstack([sk.t, t2[[0, 1, 2]]])
        # scikit-fem facet order per triangle is (0,1), (1,2), (0,2); gmsh's is (0,1), (1,2), (2,0)
        cells = [("triangle6", conn.T)]
        xyz = np.vstack([allp, np.zeros(allp.shape[1])]).T
    else:
        cells = [("triangle", tri.T)]
        xyz = np.vstack([pts, np.zeros(pts.shape[1])]).T
    fmt = "gmsh22" if str(path).lower().endswith(".msh") else None  # .msh: gmsh, not ANSYS
    kw = {"file_format": fmt, "binary": False} if fmt else {}
    cell_data, field_data = {}, {}
    if fmt:  # gmsh wants physical and geometrical tags: one surface, tag 1, or a mesh file's groups
        n = len(cells[0][1])
        phys = np.ones(n, dtype=int)
        if mesh.region_names and mesh.regions.size == n:
            phys = mesh.regions.astype(int)
            field_data = {k: np.array([v, 2]) for k, v in mesh.region_names.items() if v >= 0}
        cell_data = {"gmsh:physical": [phys], "gmsh:geometrical": [np.maximum(phys, 1)]}
    meshio.write(str(path), meshio.Mesh(xyz, cells, point_data=point_data or {}, cell_data=cell_data,
                                        field_data=field_data), **kw)
