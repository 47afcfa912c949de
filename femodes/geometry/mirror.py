"""Mirror symmetry of a section: its mirror planes, the reduced (half or quarter) section, and the
mesh of the reduced section unfolded to the whole one.

A homogeneously filled section unchanged by the mirror x -> -x (in its own frame: the shape's
centre and axes, ``Section.frame``) has scalar potentials psi (E_z of TM, H_z of TE) that are
either even or odd across the plane x = 0, and each parity class is the eigenproblem of the half
section x >= 0 with a symmetry wall on the cut: psi odd -> psi = 0 there (Dirichlet), psi even ->
d psi / dn = 0 (Neumann).  For TM (psi = E_z) the odd class has an electric wall on the cut, the
even class a magnetic one; for TE (psi = H_z, E_t = Z z x grad_t H_z / ...) the opposite: H_z even
means the tangential E vanishes on the cut (electric wall), H_z odd a magnetic wall.  Two planes
give four classes on the quarter section.

:func:`mirror_planes` finds the planes (materials included: a section with material regions is
not reduced here), :func:`reduce` clips the outline loops at the planes (lines and elliptic arcs
are split exactly where they cross; the crossing pieces are joined by straight cut segments),
:func:`unfold_mesh` mirrors a mesh of the reduced section back to a mesh of the whole one (the
unfolded mesh is exactly symmetric, so a reduced eigenvector mirrored with its class's sign is an
exact eigenvector of the whole discrete problem on it).
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from femodes.geometry.loops import Line, Loop
from femodes.geometry.mesh import Mesh, _attach_curves, _mesh_from_connectivity, triangle_regions
from femodes.geometry.section import Section

__all__ = ["mirror_planes", "canonical", "reduce", "unfold_mesh", "copy_mirrors", "to_frame"]


def canonical(section):
    """The section moved to its own frame (centre at the origin, own x axis along x)."""
    x0, y0, th = section.frame
    return section.translated(-x0, -y0).rotated(-th)


def mirror_planes(section):
    """The mirror planes ('x': x -> -x, 'y': y -> -y, in the section's own frame) of a section,
    material regions included (every region must map onto a region of the same eps_r and mu_r,
    :meth:`Section.is_symmetric`); () for a section with walls marked magnetic by the user
    (:meth:`Section.with_walls`: solved as given, not reduced)."""
    if section.magnetic:
        return ()
    canon = canonical(section)
    return tuple(a for a in ("x", "y") if canon.is_symmetric(a))


def _swap(section, axis):
    """Rotate so that the plane of ``axis`` becomes x = 0 with the kept side x >= 0."""
    return section if axis == "x" else section.rotated(-math.pi / 2)


def _unswap(section, axis):
    return section if axis == "x" else section.rotated(math.pi / 2)


def reduce(section, axes):
    """The part x >= 0 (axis 'x') and / or y >= 0 (axis 'y') of ``section`` (already in its own
    frame, see :func:`canonical`), as a Section whose ``cuts`` name the symmetry walls; None if the
    clipped part is not one connected piece (then the section is solved whole)."""
    out = section
    cuts = ()
    for a in axes:
        red = _clip(_swap(replace(out, cuts=()), a))
        if red is None:
            return None
        out = _unswap(red, a)
        cuts = cuts + (a,)
    outer = _snap_loop(out.outer, section.size)
    holes = tuple(_snap_loop(h, section.size) for h in out.holes)
    mats = tuple(replace(m, region=_snap_loop(m.region, section.size),
                         holes=tuple(_snap_loop(h, section.size) for h in m.holes)) for m in out.materials)
    return Section(outer, holes, "polygon", {"_valid": True}, (0.0, 0.0, 0.0), mats, cuts)


def _clip_materials(section, tol):
    """The material regions of ``section`` clipped to x >= 0: a region wholly on that side kept,
    one wholly on the other dropped (its mirror image is kept), one across the plane clipped like
    the outline; None if a clipped region is not one connected piece."""
    out = []
    for m in section.materials:
        xs = m.region.polyline(64, line_pieces=1)[0]
        if xs.min() >= -tol:
            out.append(m)
        elif xs.max() <= tol:
            continue
        else:
            part = _clip(Section(m.region, tuple(m.holes), "polygon", {"_valid": True}))
            if part is None:
                return None
            out.append(replace(m, region=part.outer, holes=tuple(part.holes)))
    return tuple(out)


def _snap(v, tol):
    return 0.0 if abs(v) <= tol else float(v)


def _snap_loop(loop, size):
    """Round coordinates within 1e-12 of the section's size to 0 (the cuts lie on x = 0, y = 0:
    rotations leave round-off there)."""
    tol = 1e-12 * size
    segs = []
    for s in loop.segments:
        if isinstance(s, Line):
            segs.append(Line((_snap(s.start[0], tol), _snap(s.start[1], tol)),
                             (_snap(s.end[0], tol), _snap(s.end[1], tol))))
        else:
            segs.append(replace(s, center=(_snap(s.center[0], tol), _snap(s.center[1], tol))))
    return Loop(tuple(segs))


def _split(seg, tol):
    """Pieces of one segment cut where it crosses x = 0."""
    if isinstance(seg, Line):
        xa, xb = seg.start[0], seg.end[0]
        if (xa < -tol and xb > tol) or (xa > tol and xb < -tol):
            s = xa / (xa - xb)
            pt = (0.0, seg.start[1] + s * (seg.end[1] - seg.start[1]))
            return [Line(seg.start, pt), Line(pt, seg.end)]
        return [seg]
    # x(t) = cx + A cos t + B sin t = cx + R cos(t - phi)
    c, s = math.cos(seg.rotation), math.sin(seg.rotation)
    A, B = c * seg.rx, -s * seg.ry
    R, phi = math.hypot(A, B), math.atan2(B, A)
    cx = seg.center[0]
    if abs(cx) >= R:
        return [seg]
    base = math.acos(-cx / R)
    lo, hi = sorted((seg.t0, seg.t1))
    roots = set()
    for r in (phi + base, phi - base):
        k0 = math.floor((lo - r) / (2 * math.pi)) - 1
        for k in range(k0, k0 + 4):
            t = r + 2 * math.pi * k
            if lo + 1e-12 < t < hi - 1e-12:
                roots.add(t)
    ts = sorted(roots, reverse=seg.t1 < seg.t0)
    if not ts:
        return [seg]
    knots = [seg.t0] + ts + [seg.t1]
    return [replace(seg, t0=a, t1=b) for a, b in zip(knots[:-1], knots[1:])]


def _mid_x(seg):
    return float(seg.point(np.array([0.5]))[0, 0])


def _start(seg):
    return tuple(float(v) for v in seg.point(np.array([0.0]))[:, 0])


def _end(seg):
    return tuple(float(v) for v in seg.point(np.array([1.0]))[:, 0])


def _clip(section):
    """The part x >= 0 of a section (loops with the guide on their left)."""
    size = section.size
    tol = 1e-10 * size
    chains, closed = [], []
    for li, loop in enumerate(section.loops):
        pieces = [q for s in loop.segments for q in _split(s, tol)]
        keep = [_mid_x(q) > tol for q in pieces]
        if all(keep):
            if li == 0:
                return None  # the outer wall does not reach the plane
            closed.append(loop)
            continue
        if not any(keep):
            continue
        first = keep.index(False)
        pieces = pieces[first:] + pieces[:first]
        keep = keep[first:] + keep[:first]
        run = []
        for q, k in zip(pieces + [None], keep + [False]):
            if k:
                run.append(q)
            elif run:
                chains.append(run)
                run = []
    if not chains:
        return None
    for ch in chains:  # every chain must start and end on the plane
        if abs(_start(ch[0])[0]) > 1e-8 * size or abs(_end(ch[-1])[0]) > 1e-8 * size:
            return None
    # along the plane the guide (x > 0) is on the left of the downward direction: each chain's
    # end is joined downward to the nearest chain start below it
    starts = [_start(ch[0])[1] for ch in chains]
    used = [False] * len(chains)
    loops = []
    for i0 in range(len(chains)):
        if used[i0]:
            continue
        segs, i = [], i0
        while not used[i]:
            used[i] = True
            segs.extend(chains[i])
            ye = _end(chains[i][-1])[1]
            below = [(y, j) for j, y in enumerate(starts) if y < ye - 1e-9 * size]
            if not below:
                return None
            y, j = max(below)
            segs.append(Line((0.0, ye), (0.0, y)))
            i = j
        if i != i0:
            return None
        loops.append(Loop(tuple(segs)))
    outer = [lp for lp in loops if lp.signed_area() > 0]
    if len(outer) != 1:
        return None
    holes = [lp for lp in loops if lp.signed_area() < 0] + closed
    mats = _clip_materials(section, tol) if section.materials else ()
    if mats is None:
        return None
    return Section(outer[0], tuple(holes), "polygon", {"_valid": True}, (0.0, 0.0, 0.0), mats)


def _mirror_mesh(mesh, axis, tol):
    """The mesh and its mirror image across x = 0 (axis 'x') or y = 0, joined on the plane."""
    k = 0 if axis == "x" else 1
    pts = mesh.points.copy()
    on = np.abs(pts[k]) <= tol
    pts[k, on] = 0.0
    n = pts.shape[1]
    refl = pts.copy()
    refl[k] *= -1
    new = np.flatnonzero(~on)
    index = np.arange(n)
    index[new] = n + np.arange(len(new))
    points = np.hstack([pts, refl[:, new]])
    tri = np.hstack([mesh.triangles, index[mesh.triangles]])
    if mesh.is_curved:
        mid = mesh.curved_midpoints.copy()
        rmid = mid.copy()
        rmid[k] *= -1
        conn_mid = np.hstack([mid, rmid])
        ce = np.hstack([mesh.curved_edges, index[mesh.curved_edges]])
    # a 6-node connectivity: mid-points straight except on the curved edges
    t = tri
    nv = points.shape[1]
    if mesh.is_curved:
        ces = np.sort(ce, axis=0)
        ckey = ces[0].astype(np.int64) * nv + ces[1]
        order = np.argsort(ckey)
        ckey = ckey[order]
        conn_mid = conn_mid[:, order]
    coords, mids, nxt = [points], [], nv
    for a, b in ((0, 1), (1, 2), (2, 0)):
        pa, pb = t[a], t[b]
        m = 0.5 * (points[:, pa] + points[:, pb])
        if mesh.is_curved and len(ckey):
            key = np.minimum(pa, pb).astype(np.int64) * nv + np.maximum(pa, pb)
            pos = np.minimum(np.searchsorted(ckey, key), len(ckey) - 1)
            hit = ckey[pos] == key
            m[:, hit] = conn_mid[:, pos[hit]]
        mids.append(nxt + np.arange(len(pa)))
        coords.append(m)
        nxt += len(pa)
    conn = np.vstack([t] + mids)
    return _mesh_from_connectivity(np.hstack(coords), conn)


def unfold_mesh(mesh, axes, section):
    """The mesh of the whole section (in its own frame) from a mesh of its reduced section:
    mirrored across each plane in ``axes``, nodes on the planes shared; the curves of the
    whole ``section`` (own frame) attached for the exact high-order boundary nodes.  The
    triangles come in copies: the reduced mesh's, then its mirror across the first plane, then
    (two planes) the mirror of both across the second: triangle i of copy c is the image of
    reduced triangle i under the mirrors of the bits of c (:func:`copy_mirrors`).  With material
    regions each triangle's region is that of ``section`` (its centroid, as meshing gives it)."""
    tol = 1e-9 * section.size
    out = mesh
    for a in axes:
        out = _mirror_mesh(out, a, tol)
    out = _attach_curves(out, section)
    if section.materials:
        out = replace(out, regions=triangle_regions(section, out.points, out.triangles))
    return out


def copy_mirrors(copy, axes):
    """The mirrors (axes) that map the reduced mesh onto copy number ``copy`` of
    :func:`unfold_mesh`."""
    return tuple(a for k, a in enumerate(axes) if (copy >> k) & 1)


def to_frame(mesh, section):
    """A mesh drawn in ``section``'s own frame moved to where the section lies."""
    x0, y0, th = section.frame
    if (x0, y0, th) == (0.0, 0.0, 0.0):
        return mesh
    c, s = math.cos(th), math.sin(th)

    def move(p):
        return np.array([x0 + c * p[0] - s * p[1], y0 + s * p[0] + c * p[1]])
    moved = Mesh(move(mesh.points), mesh.triangles, mesh.curved_edges,
                 move(mesh.curved_midpoints) if mesh.is_curved else mesh.curved_midpoints,
                 regions=mesh.regions)
    return _attach_curves(moved, section)
