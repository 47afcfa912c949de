"""Checks before meshing: what the mesher or the solver cannot take, refused with a message
that says what to fix.

- an outline that touches itself without crossing (a vertex on another edge, two edges meeting
  at one point): gmsh fails or hangs on it, and the guide is two guides joined at a point;
- slivers: a corner sharper than :data:`MIN_CORNER_DEG`, an elliptic arc more elongated than
  :data:`MAX_ELLIPSE_RATIO` (its tips have a radius of curvature b^2 / a: the mesher crawls);
- scale and precision: a section outside :data:`SIZE_LIMITS`, or so far from the origin that its
  coordinates keep fewer than about 12 significant digits of its size (:data:`MAX_OFFSET_RATIO`);
- thinness: a section much longer than it is thick (:data:`MAX_THINNESS`, from its size over
  2 area / perimeter, the thickness of a strip), or two walls closer than :data:`MIN_GAP_RATIO`
  of its size (a hole near the outline or another hole): the mesher then crawls for minutes
  through slivers;
- a mesh file: every edge in at most two triangles, no vertex on the inside of another
  triangle's boundary edge (conformity), one edge-connected piece (connectivity);
- the unknowns a mesh will have, before meshing or assembling it.

SI metres.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components

from femodes.errors import FemodesError

__all__ = ["check_section", "check_loop_touching", "check_mesh", "lagrange_unknowns", "check_unknowns", "predicted_unknowns", "check_scale",
           "SIZE_LIMITS", "MAX_OFFSET_RATIO", "MAX_ELLIPSE_RATIO", "MIN_CORNER_DEG", "MAX_THINNESS", "MIN_GAP_RATIO"]

#: smallest and largest extent of a section (m): 1 nm .. 10 km (outside, the mesher's absolute
#: tolerances and double-precision areas (size^2, size^4 in the matrices) break down)
SIZE_LIMITS = (1e-9, 1e4)
#: largest distance from the origin in units of the section's size: 1e4 keeps 12 of the 16
#: digits of a coordinate for the shape itself (the solver's accuracy floor is 1e-11)
MAX_OFFSET_RATIO = 1e4
#: largest axis ratio of an elliptic wall
MAX_ELLIPSE_RATIO = 50.0
#: sharpest corner (degrees)
MIN_CORNER_DEG = 0.5
#: a vertex closer than this (relative to the size) to another edge touches it
TOUCH_TOL = 1e-9
#: largest size over thickness (2 area / perimeter) of a section.  Measured 2026-12-05 (22.86 mm
#: strips, 2 modes at 1e-4): 22860:1 in 2.7 s, 45720:1 in 6.4 s, 114300:1 still meshing after 100 s;
#: a 1 um ring gap round the inner conductor of a 20 x 10 mm guide is 20000:1 (7 s)
MAX_THINNESS = 5e4
#: narrowest distance between two different walls (outline and hole, or two holes) over the size:
#: a 1 um ring gap round the inner conductor of a 20 x 10 mm guide (5e-5) solves in seconds, a hole
#: 0.25 um from the outline of a 22.86 mm guide (1.1e-5) ran for minutes (measured 2026-12-05)
MIN_GAP_RATIO = 2e-5


def _mm(p):
    return f"({p[0] * 1e3:.6g}, {p[1] * 1e3:.6g}) mm"


def check_scale(points, what="the section"):
    """Size and distance from the origin of the points (2, n) of an outline or a mesh."""
    pts = np.asarray(points, dtype=float)
    if not np.all(np.isfinite(pts)):
        raise FemodesError(f"{what} has coordinates that are not finite numbers: give finite lengths")
    with np.errstate(over="ignore", invalid="ignore"):
        size = float(np.max(np.ptp(pts, axis=1)))
    lo, hi = SIZE_LIMITS
    if not (lo <= size <= hi):
        raise FemodesError(f"{what} is {size:.3g} m across: give a size between {lo:g} m and {hi:g} m "
                           "(femodes takes metres; the case file's lengths are in its units)")
    far = float(np.max(np.abs(pts)))
    if far > MAX_OFFSET_RATIO * size:
        raise FemodesError(f"{what} lies {far:.3g} m from the origin but is only {size:.3g} m across: its "
                           "coordinates would lose precision; place it near the origin (an offset below "
                           f"{MAX_OFFSET_RATIO:g} times its size)")
    return size


def check_loop_touching(pts, scale, what="the outline"):
    """Refuse a closed polyline (2, n) a vertex of which lies on (or within TOUCH_TOL x scale
    of) an edge not next to it: the outline touches itself without crossing."""
    a = np.asarray(pts, dtype=float).T
    n = len(a)
    if n < 4:
        return
    b = np.roll(a, -1, axis=0)
    d = b - a
    L2 = np.maximum(np.sum(d * d, axis=1), 1e-300)
    tol = TOUCH_TOL * scale
    idx = np.arange(n)
    for start in range(0, n, 256):
        v = a[start:start + 256]
        w = v[:, None, :] - a[None, :, :]
        t = np.clip(np.sum(w * d[None], axis=2) / L2[None], 0.0, 1.0)
        dist = np.linalg.norm(w - t[..., None] * d[None], axis=2)
        vi = idx[start:start + 256][:, None]
        adjacent = (idx[None, :] == vi) | (idx[None, :] == (vi - 1) % n)
        hit = (dist <= tol) & ~adjacent
        if np.any(hit):
            i, j = np.argwhere(hit)[0]
            raise FemodesError(f"{what} touches itself: the vertex at {_mm(v[i])} lies on the edge from "
                               f"{_mm(a[j])} to {_mm(b[j])}; separate them (an outline must not touch or cross "
                               "itself: a guide joined at one point is two guides) or give the parts as one "
                               "outline without the contact")


def check_section(section):
    """Every check of a Section before meshing (see the module docstring)."""
    from_loops = [section.outer] + list(section.holes) + [l for m in section.materials
                                                           for l in (m.region,) + tuple(m.holes)]
    pts = np.hstack([l.polyline(16) for l in from_loops])
    size = check_scale(pts)
    for k, loop in enumerate([section.outer] + list(section.holes)):
        what = "the outline" if k == 0 else f"hole {k}"
        check_loop_touching(loop.polyline(8), size, what)
        for seg in loop.segments:
            rx, ry = getattr(seg, "rx", None), getattr(seg, "ry", None)
            if rx is not None and max(rx, ry) > MAX_ELLIPSE_RATIO * min(rx, ry):
                raise FemodesError(f"an elliptic wall of {what} has semi-axes {rx * 1e3:.6g} and {ry * 1e3:.6g} mm, "
                                   f"a ratio of {max(rx, ry) / min(rx, ry):.4g}: above {MAX_ELLIPSE_RATIO:g} its tips "
                                   "are too sharp to mesh; use a ratio below "
                                   f"{MAX_ELLIPSE_RATIO:g} or a polygon")
        for c in loop.corners():
            if math.degrees(c.angle) < MIN_CORNER_DEG:
                raise FemodesError(f"{what} has a corner of {math.degrees(c.angle):.3g} deg at {_mm(c.point)}: a sliver "
                                   f"sharper than {MIN_CORNER_DEG:g} deg cannot be meshed; blunt the tip")
    check_thinness(section.area, section.perimeter, size)
    walls = [section.outer] + list(section.holes)
    for i in range(len(walls)):
        for j in range(i + 1, len(walls)):
            gap = _loop_distance(walls[i].polyline(8), walls[j].polyline(8))
            if gap < MIN_GAP_RATIO * size:
                what = "the outline and hole 1" if i == 0 and len(walls) == 2 else \
                    (f"the outline and hole {j}" if i == 0 else f"holes {i} and {j}")
                raise FemodesError(f"{what} come within {gap * 1e3:.3g} mm of each other, below {MIN_GAP_RATIO:g} of "
                                   f"the guide's size ({size * 1e3:.4g} mm): the mesher cannot resolve so narrow a "
                                   f"gap in reasonable time; widen it to at least {MIN_GAP_RATIO * size * 1e3:.3g} mm")
    return size


def check_thinness(area, perimeter, size):
    """Refuse a section longer than :data:`MAX_THINNESS` times its thickness 2 area / perimeter."""
    thickness = 2.0 * area / perimeter if perimeter > 0 else 0.0
    if thickness <= 0 or size / thickness > MAX_THINNESS:
        raise FemodesError(f"the section is {size * 1e3:.4g} mm across but only about {thickness * 1e3:.3g} mm thick "
                           f"(2 area / perimeter), a ratio of {size / max(thickness, 1e-300):.3g}:1: above "
                           f"{MAX_THINNESS:g}:1 the mesher cannot fill it in reasonable time; make it thicker")


def _loop_distance(a, b):
    """Smallest distance between the closed polylines a and b (2 x n, 2 x m): every vertex of
    each against every segment of the other."""
    def one_way(p, q):
        q0, q1 = q, np.roll(q, -1, axis=1)
        d = q1 - q0
        L2 = np.maximum(np.einsum("ij,ij->j", d, d), 1e-300)
        rel = p[:, :, None] - q0[:, None, :]                          # (2, n, m)
        t = np.clip(np.einsum("inm,im->nm", rel, d) / L2, 0.0, 1.0)
        foot = q0[:, None, :] + t[None] * d[:, None, :]
        return float(np.sqrt(np.min(np.sum((p[:, :, None] - foot) ** 2, axis=0))))
    return min(one_way(a, b), one_way(b, a))


def check_mesh(points, triangles, what="the mesh"):
    """Conformity and connectivity of a straight triangle mesh: points (2, n), triangles (3, m)."""
    pts = np.asarray(points, dtype=float)
    tri = np.asarray(triangles, dtype=np.int64)
    check_scale(pts, what)
    m = tri.shape[1]
    edges = np.sort(np.hstack([tri[[0, 1]], tri[[1, 2]], tri[[2, 0]]]), axis=0)
    key = edges[0] * pts.shape[1] + edges[1]
    uniq, inverse, count = np.unique(key, return_inverse=True, return_counts=True)
    if np.any(count > 2):
        e = edges[:, np.flatnonzero(count[inverse] > 2)[0]]
        raise FemodesError(f"{what} is not conforming: the edge from {_mm(pts[:, e[0]])} to {_mm(pts[:, e[1]])} "
                           "belongs to more than two triangles (overlapping triangles); fix the mesh in its mesher")
    # conformity: no vertex on the inside of a boundary edge (a hanging node)
    bnd = edges[:, np.flatnonzero(count[inverse] == 1)]
    bnd = np.unique(bnd, axis=1)
    verts = np.unique(bnd)
    p0, p1 = pts[:, bnd[0]].T, pts[:, bnd[1]].T
    d = p1 - p0
    L2 = np.maximum(np.sum(d * d, axis=1), 1e-300)
    scale = float(np.max(np.ptp(pts, axis=1)))
    for start in range(0, len(verts), 512):
        vi = verts[start:start + 512]
        v = pts[:, vi].T
        w = v[:, None, :] - p0[None]
        t = np.sum(w * d[None], axis=2) / L2[None]
        dist = np.linalg.norm(w - np.clip(t, 0, 1)[..., None] * d[None], axis=2)
        inside = (t > 1e-9) & (t < 1 - 1e-9) & (dist <= 1e-9 * scale)
        inside &= (vi[:, None] != bnd[0][None]) & (vi[:, None] != bnd[1][None])
        if np.any(inside):
            i, j = np.argwhere(inside)[0]
            raise FemodesError(f"{what} is not conforming: the vertex at {_mm(v[i])} lies inside the edge from "
                               f"{_mm(p0[j])} to {_mm(p1[j])} of another triangle (a hanging node); split that "
                               "triangle or remesh so that neighbouring triangles share whole edges")
    # connectivity through shared edges
    owner = np.tile(np.arange(m), 3)
    order = np.argsort(inverse, kind="stable")
    inv_s, own_s = inverse[order], owner[order]
    pair = np.flatnonzero(inv_s[1:] == inv_s[:-1])
    g = coo_matrix((np.ones(len(pair)), (own_s[pair], own_s[pair + 1])), shape=(m, m))
    n_parts, _ = connected_components(g, directed=False)
    if n_parts > 1:
        raise FemodesError(f"{what} falls into {n_parts} pieces that share no edge (joined at single points, or "
                           "not at all): a guide must be one connected cross-section; mesh each guide on its own "
                           "or join the pieces along an edge")


def lagrange_unknowns(n_vertices, n_edges, n_triangles, order):
    """Unknowns of order-``order`` Lagrange elements: vertices + (p - 1) per edge +
    (p - 1)(p - 2) / 2 per triangle."""
    p = int(order)
    return int(n_vertices + (p - 1) * n_edges + (p - 1) * (p - 2) // 2 * n_triangles)


def predicted_unknowns(area, h, order):
    """Unknowns of a uniform mesh of element size h on a region of ``area`` (a lower bound for a
    graded mesh): about 2 A / (sqrt(3) / 4 h^2) / 2 vertices, three edges and two triangles per
    vertex (Euler's formula for a large triangulation)."""
    v = area / (math.sqrt(3) / 4 * h * h) / 2
    return lagrange_unknowns(v, 3 * v, 2 * v, order)


def check_unknowns(n, limit, what="the mesh"):
    """Refuse before meshing or assembling when ``n`` unknowns exceed ``limit``."""
    if n > limit:
        raise FemodesError(f"{what} would need about {n:.3g} unknowns, more than the limit {limit}: ask for a "
                           "looser accuracy or fewer modes (or a coarser mesh file)")
