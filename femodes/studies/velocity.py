"""The mesh velocity a shape parameter induces: boundary nodes by their parametric position on
their segment of the outline rebuilt at p +- delta, the inside by harmonic extension (shared by
the homogeneous shape derivative, :mod:`femodes.studies.sensitivity`, and the loaded one,
:mod:`femodes.studies.loaded_sensitivity`).

Loaded guides (:func:`loaded_velocity`).  The regions stay where they are placed, so every node
of a material interface (a facet between triangles of different regions) keeps V = 0, or the
velocity ``interface_velocity`` gives it (for regions that follow the parameter), and the
harmonic extension is solved with the wall and interface nodes both fixed: no interface node
leaves its interface.  Where an interface meets a wall that moves (a slab spanning the width
while the width changes) the meeting node must stay on both: V . n = V_wall . n (n the wall's
normal) and V . n_i = U . n_i (n_i the interface's normal, U its velocity, 0 if fixed), a 2 x 2
system; with U = 0 the node slides along the interface, V = t (V_wall . n) / (t . n).  It has no
solution where the interface runs along the moving wall, and where a region's own edge lies on
the moving wall (a slab on the floor while the height changes) the wall moving out opens a
layer of the fill, moving in cuts the region: the cutoff has a kink there (two one-sided
derivatives).  :func:`loaded_velocity` says so instead of returning a velocity; the caller
keeps its differences of whole solves for that case.  A region reaching beyond the wall (cut
by it) just grows or shrinks with the wall: no kink.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.sparse.linalg import splu

from femodes.geometry.loops import Arc, Line
from femodes.solvers.eigen import restrict

__all__ = ["loaded_velocity", "region_motion"]


def _same_pieces(a, b):
    """'' if sections a and b have the same loops made of the same kinds of segments, else why not."""
    if len(a.loops) != len(b.loops):
        return "changes the number of walls"
    for la, lb in zip(a.loops, b.loops):
        if len(la.segments) != len(lb.segments) or any(type(x) is not type(y) for x, y in zip(la.segments, lb.segments)):
            return "changes the pieces of the outline (e.g. a fillet appears)"
    return ""


def _locate_on_outline(section, pts):
    """For boundary points (2, n): (loop index, segment index, parametric position s in [0, 1])
    of the nearest outline segment, and the distance to it."""
    n = pts.shape[1]
    best = np.full(n, np.inf)
    where = np.zeros((2, n), dtype=np.int64)
    pos = np.zeros(n)
    for li, loop in enumerate(section.loops):
        for si, seg in enumerate(loop.segments):
            s = _parameter_on(seg, pts)
            d = np.linalg.norm(seg.point(s) - pts, axis=0)
            better = d < best
            best[better] = d[better]
            where[0, better], where[1, better] = li, si
            pos[better] = s[better]
    return where, pos, best


def _parameter_on(seg, pts):
    """Parametric position s in [0, 1] of the point of segment ``seg`` nearest to each of pts."""
    if isinstance(seg, Line):
        a, b = np.asarray(seg.start)[:, None], np.asarray(seg.end)[:, None]
        d = b - a
        return np.clip(np.sum((pts - a) * d, axis=0) / float(np.sum(d * d)), 0.0, 1.0)
    if not isinstance(seg, Arc):
        raise TypeError(type(seg))
    c, s = math.cos(seg.rotation), math.sin(seg.rotation)
    dx, dy = pts[0] - seg.center[0], pts[1] - seg.center[1]
    t = np.arctan2((-s * dx + c * dy) / seg.ry, (c * dx + s * dy) / seg.rx)
    sweep = seg.t1 - seg.t0
    dt = np.mod((t - seg.t0) * math.copysign(1.0, sweep), 2 * math.pi)
    out = dt / abs(sweep)
    beyond = out > 1.0
    # past the end: the nearer end, measured round the ellipse's parameter
    back = (2 * math.pi - dt) / abs(sweep)
    out[beyond] = np.where(back[beyond] < out[beyond] - 1.0, 0.0, 1.0)
    return out


def _boundary_velocity(where, pos, plus, minus, step):
    """V = (x+(s) - x-(s)) / step at the located boundary points (2, n)."""
    V = np.zeros((2, pos.size))
    for li, (lp, lm) in enumerate(zip(plus.loops, minus.loops)):
        for si, (sp, sm) in enumerate(zip(lp.segments, lm.segments)):
            sel = (where[0] == li) & (where[1] == si)
            if np.any(sel):
                V[:, sel] = (sp.point(pos[sel]) - sm.point(pos[sel])) / step
    return V



def region_motion(nominal, plus, minus, step, size):
    """(velocity, why) of regions that follow a parameter: ``nominal``, ``plus``, ``minus`` the
    placed Sections of each moving region at p and p +- step / 2.  ``velocity`` maps points (2, n)
    to (2, n): at a point on a moving region's outline, the motion of its parametric position
    there (as for the walls), where it lies on none (a fixed region's interface) 0; None with
    ``why`` where a region's outline changes its pieces between p - step / 2 and p + step / 2."""
    for nom, p, m in zip(nominal, plus, minus):
        why = _same_pieces(nom, p) or _same_pieces(nom, m)
        if why:
            return None, f"a region's outline {why.replace('outline', 'region')}"
    tol = 1e-6 * size

    def velocity(pts):
        pts = np.asarray(pts, dtype=float).reshape(2, -1)
        V = np.zeros_like(pts)
        best = np.full(pts.shape[1], np.inf)
        for nom, p, m in zip(nominal, plus, minus):
            where, pos, dist = _locate_on_outline(nom, pts)
            on = (dist <= tol) & (dist < best)
            if np.any(on):
                V[:, on] = _boundary_velocity(where[:, on], pos[on], p, m, step)
                best[on] = dist[on]
        return V

    return velocity, ""


def _region_at(section, x, y):
    """Region index (0 the fill, i the i-th material; a later one wins) at points x, y."""
    out = np.zeros(np.size(x), dtype=np.int64)
    for i, mat in enumerate(section.materials, start=1):
        out[mat.contains(np.atleast_1d(x), np.atleast_1d(y))] = i
    return out


def _region_name(section, i):
    return section.materials[i - 1].name or f"eps_r {section.materials[i - 1].eps_r:g}" if i else "the fill"


def loaded_velocity(section, skm, region, plus, minus, step, interface_velocity=None):
    """(V, why): the velocity (2, N) at the geometry dofs of the scikit-fem mesh ``skm`` (its
    ``doflocs`` order) of a section with regions when its outline moves from ``minus`` to
    ``plus`` (the bare shape rebuilt at p -+ step / 2, same pieces), with the interfaces fixed
    (or moving with ``interface_velocity``, a function of points (2, n) -> (2, n)), and '';
    or (None, why) where the derivative has a kink (module docstring).  ``region``: the region
    index of each triangle."""
    from skfem import Basis, asm
    from skfem.models.poisson import laplace

    geo = Basis(skm, skm.elem())
    p, facets, f2t = skm.p, skm.facets, skm.f2t
    region = np.asarray(region)
    bfac = skm.boundary_facets()
    bnd = np.unique(geo.get_dofs(facets=bfac).flatten())
    inner = np.flatnonzero(f2t[1] >= 0)
    ifac = inner[region[f2t[0, inner]] != region[f2t[1, inner]]]
    idofs = np.unique(geo.get_dofs(facets=ifac).flatten()) if ifac.size else np.zeros(0, dtype=np.int64)
    where, pos, dist = _locate_on_outline(section, geo.doflocs[:, bnd])
    if np.max(dist) > 1e-6 * section.size:
        raise RuntimeError(f"boundary nodes off the outline by {np.max(dist):.3g} m")
    V = np.zeros((2, geo.N))
    V[:, bnd] = _boundary_velocity(where, pos, plus, minus, step)
    vmax = float(np.max(np.linalg.norm(V[:, bnd], axis=0)))
    tol = 1e-6 * max(vmax, 1e-300)

    # outward unit normals of the wall facets (chords), oriented away from their triangle
    a, b = p[:, facets[0, bfac]], p[:, facets[1, bfac]]
    d = b - a
    length = np.linalg.norm(d, axis=0)
    n = np.array([d[1], -d[0]]) / length
    cen = p[:, skm.t[:3, f2t[0, bfac]]].mean(axis=1)
    n *= np.where(np.sum(n * (0.5 * (a + b) - cen), axis=0) < 0, -1.0, 1.0)
    vn = np.maximum(np.abs(np.sum(V[:, facets[0, bfac]] * n, axis=0)), np.abs(np.sum(V[:, facets[1, bfac]] * n, axis=0)))
    moving = vn > tol
    # a region's own edge on a moving wall: the material beyond the wall differs from inside
    out_pt = 0.5 * (a + b) + 0.1 * length * n
    r_in, r_out = region[f2t[0, bfac]], _region_at(section, out_pt[0], out_pt[1])
    bad = moving & (r_in != r_out)
    if np.any(bad) and interface_velocity is not None:
        # a region that moves with the wall there (a slab on the floor that follows the height)
        # keeps its edge on it: no layer opens, no kink
        ends = np.concatenate([facets[0, bfac[bad]], facets[1, bfac[bad]]])
        U = np.asarray(interface_velocity(p[:, ends]), dtype=float).reshape(2, -1)
        nn = np.concatenate([n[:, bad], n[:, bad]], axis=1)
        off = np.abs(np.sum((U - V[:, ends]) * nn, axis=0)) > tol
        follows = ~(off[:bad.sum()] | off[bad.sum():])
        bad[np.flatnonzero(bad)[follows]] = False
    if np.any(bad):
        k = int(np.flatnonzero(bad)[0])
        r = r_in[k] if r_in[k] else r_out[k]
        return None, (f"region {_region_name(section, r)} has an edge on a wall that moves with the parameter "
                      "(a kink: the wall moving out opens a layer of the fill, moving in cuts the region)")

    U = np.zeros((2, idofs.size))
    if interface_velocity is not None and idofs.size:
        U = np.asarray(interface_velocity(geo.doflocs[:, idofs]), dtype=float).reshape(2, -1)
    V_if = dict(zip(idofs.tolist(), U.T))
    # nodes where an interface meets the wall: on both (2 x 2 system of the module docstring)
    ivert = np.unique(facets[:, ifac]) if ifac.size else np.zeros(0, dtype=np.int64)
    bvert = np.unique(facets[:, bfac])
    for j in np.intersect1d(ivert, bvert):
        wall = np.flatnonzero((facets[0, bfac] == j) | (facets[1, bfac] == j))
        if np.min(n[:, wall].T @ n[:, wall[0]]) < math.cos(math.radians(30)) and np.any(moving[wall]):
            return None, "a material interface meets a moving wall at a corner of the wall"
        nw = n[:, wall].sum(axis=1)
        nw /= np.linalg.norm(nw)
        rows, rhs = [nw], [float(V[:, j] @ nw)]
        for f in ifac[(facets[0, ifac] == j) | (facets[1, ifac] == j)]:
            e = p[:, facets[1, f]] - p[:, facets[0, f]]
            ni = np.array([e[1], -e[0]]) / np.linalg.norm(e)
            rows.append(ni)
            rhs.append(float(V_if.get(int(j), np.zeros(2)) @ ni))
        A, r = np.array(rows), np.array(rhs)
        sol, *_ = np.linalg.lstsq(A, r, rcond=None)
        if np.linalg.norm(A @ sol - r) > tol or (np.linalg.cond(A) > 1e6 and abs(rhs[0]) > tol):
            return None, ("a material interface runs along a moving wall, or several interfaces meet it at one "
                          "point: the meeting point cannot stay on all of them")
        V[:, j] = sol
    rest = np.setdiff1d(idofs, bvert)
    if rest.size:
        V[:, rest] = np.array([V_if[int(i)] for i in rest]).T

    fixed = np.union1d(bnd, idofs)
    free = np.setdiff1d(np.arange(geo.N), fixed)
    if free.size:
        K = asm(laplace, geo).tocsr()
        lu = splu(restrict(K, free).tocsc())
        K_fb = K[free][:, fixed]
        for c in range(2):
            V[c, free] = lu.solve(-(K_fb @ V[c, fixed]))
    return V, ""
