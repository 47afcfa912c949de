"""Loaded guides with mirror planes: each symmetry class solved on the half or quarter section
with electric or magnetic walls on the cuts, the modes unfolded to the whole section.

The physics.  A guide whose walls and material regions (eps_r, mu_r) are unchanged by the mirror
R: x -> -x (in the section's own frame, :func:`femodes.geometry.mirror.mirror_planes`) maps a
mode E(x, y) onto the mode E'(x, y) = S E(-x, y), S = diag(-1, 1, 1) (E is a polar vector: its
x component changes sign under the reflection), of the same beta.  The modes split into the two
classes E' = +E and E' = -E:

* E' = +E: E_x odd, E_y even, E_z even in x (H_x even, H_y odd, H_z odd).  On the plane x = 0
  E_x = 0 (no normal E) and H_y = H_z = 0 (no tangential H): a magnetic wall (PMC, n x H = 0).
* E' = -E: E_x even, E_y odd, E_z odd.  On the plane E_y = E_z = 0 (no tangential E): an
  electric wall (PEC, n x E = 0).

The same for y -> -y with S = diag(1, -1, 1).  Each class is the eigenproblem of the half
section x >= 0 with that wall on the cut: an electric wall removes the cut's edge and nodal dofs
(as every other wall), a magnetic one leaves them free (n x H = 0 and n . eps E = 0 are the
natural conditions of the curl-curl form and of the discrete Gauss law; VectorProblem's
``magnetic``).  Two planes give four classes on the quarter section.  Where a cut meets a metal
wall the corner is electric on one side and, for the magnetic classes, magnetic on the other:
the mixed problem, whose exponents (k - 1/2) pi / alpha (Corner.mixed) are graded toward like the
others (:func:`femodes.solvers.loaded._rate` then takes the conservative rate where they are
singular).

Unfolding.  The whole mesh is the reduced one mirrored (:func:`femodes.geometry.mirror.unfold_mesh`),
so a reduced eigenvector mirrored with its class's signs, E(x') = sigma S E_red(R x') with sigma
= +1 for a magnetic cut and -1 for an electric one (per plane), lies exactly in the whole mesh's
Nedelec / Lagrange spaces and is an eigenvector of the whole discrete pencil.  Its coefficients
are found element by element: the mirrored field sampled at 21 points of each whole triangle and
the element's own basis fitted to it by least squares (exact up to round-off, since the field is
in the element's space; the Nedelec dofs' orientations are scikit-fem's own).  The whole
VectorProblem then measures each unfolded mode (normalisation, residual of the whole pencil, Gauss
law, energy shares), so an unfolding error would show as a residual.

Accuracy.  Each class runs the loaded accuracy loop of :func:`femodes.solvers.loaded.solve_loaded`
on the reduced section (three meshes, Richardson, the same safety).  The modes are reported on
one final mesh: a class whose loop stopped on a coarser mesh than the finest class's is solved
once more on that mesh and keeps its own (coarser-mesh) error estimate, an overestimate of the
finer mesh's error in the asymptotic range.
"""

from __future__ import annotations

import cmath
import functools
import itertools
import math

import numpy as np

from femodes.constants import C0
from femodes.geometry.mirror import canonical, copy_mirrors, mirror_planes, reduce, to_frame, unfold_mesh
from femodes.solvers.loaded import LoadedSolution, _match, _problem, solve_loaded
from femodes.solvers.vector.common import _elements, _skfem_mesh
from femodes.solvers.vector.modes import VectorCutoff

__all__ = ["solve_loaded_mirror", "mirror_classes", "unfold_coefficients"]


def mirror_classes(axes):
    """The symmetry classes of a section with mirror planes ``axes``: one dict {axis: 'magnetic'
    | 'electric'} (the wall on that cut) per class, magnetic first."""
    return [dict(zip(axes, kinds)) for kinds in itertools.product(("magnetic", "electric"), repeat=len(axes))]


def _wall_test(cls, size):
    """VectorProblem's ``magnetic`` for a class: the facets with both ends on a magnetic cut."""
    planes = [0 if a == "x" else 1 for a, kind in cls.items() if kind == "magnetic"]
    if not planes:
        return None
    tol = 1e-9 * size

    def magnetic(a, b):
        out = np.zeros(a.shape[1], dtype=bool)
        for k in planes:
            out |= (np.abs(a[k]) <= tol) & (np.abs(b[k]) <= tol)
        return out
    return magnetic


# 21 points inside the reference triangle (a lattice of step 1/8): more samples than the 15
# (N3) or 10 (P3) local functions, so the fit is determined
_I, _J = np.meshgrid(np.arange(1, 7), np.arange(1, 7), indexing="ij")
_KEEP = (_I + _J) <= 7
_REF = np.vstack([_I[_KEEP], _J[_KEEP]]).astype(float) / 8.0


def _element_map(red_skm, whole_skm, axes, size):
    """For each triangle of the whole (unfolded) mesh: its source triangle in the reduced mesh,
    the x and y flips of its copy, and the permutation perm[k'] = k of its vertices (vertex k' of
    the whole triangle is the mirror image of vertex k of the source)."""
    n = red_skm.t.shape[1]
    nw = whole_skm.t.shape[1]
    if nw != n * 2 ** len(axes):
        raise AssertionError("the unfolded mesh is not made of mirrored copies of the reduced one")
    src = np.arange(nw) % n
    copy = np.arange(nw) // n
    flips = np.ones((2, nw))
    for c in range(2 ** len(axes)):
        for a in copy_mirrors(c, axes):
            flips[0 if a == "x" else 1, copy == c] *= -1
    Q = whole_skm.p[:, whole_skm.t] * flips[:, None, :]      # (2, 3, nw): mirrored back
    P = red_skm.p[:, red_skm.t[:, src]]                       # (2, 3, nw)
    d = np.linalg.norm(Q[:, :, None, :] - P[:, None, :, :], axis=0)   # (3 k', 3 k, nw)
    perm = np.argmin(d, axis=1)                               # (3, nw)
    if np.max(np.min(d, axis=1)) > 1e-8 * size:
        raise AssertionError("a triangle of the unfolded mesh is not the mirror image of its source")
    return src, flips, perm


def unfold_coefficients(red_elem, red_skm, red_dofs, whole_elem, whole_skm, whole_dofs, n_whole,
                        emap, coeffs, sigma, vector):
    """The coefficients on the whole mesh of the fields E(x') = sigma S E_red(R x') (vector) or
    sigma E_red(R x') (scalar), per whole triangle (``sigma``: (nw,) class signs; S from the copy's
    flips), from the reduced ``coeffs`` (one column per field): a least-squares fit of each
    element's basis to the field sampled at the 21 reference points (exact: the field is in the
    space).  Returns (n_whole, columns)."""
    src, flips, perm = emap
    coeffs = np.asarray(coeffs).reshape(coeffs.shape[0], -1)
    k = coeffs.shape[1]
    nw = whole_skm.t.shape[1]
    q = _REF.shape[1]
    tind = np.arange(nw)
    wmap, rmap = whole_skm.mapping(), red_skm.mapping()
    nloc = whole_dofs.shape[0]
    Phi = np.array([np.asarray(whole_elem.gbasis(wmap, _REF, i, tind=tind)[0]) for i in range(nloc)])
    dtype = np.result_type(coeffs.dtype, float)
    target = np.zeros((2, nw, q, k) if vector else (nw, q, k), dtype=dtype)
    lam_w = np.vstack([1.0 - _REF[0] - _REF[1], _REF[0], _REF[1]])   # barycentrics of the points
    keys = perm[0] * 9 + perm[1] * 3 + perm[2]
    for key in np.unique(keys):
        sel = np.flatnonzero(keys == key)
        pk = perm[:, sel[0]]
        lam = np.zeros_like(lam_w)
        lam[pk] = lam_w            # source barycentric k = perm[k'] takes the whole one's k'
        X = lam[1:]
        s = src[sel]
        val = 0
        for i in range(red_dofs.shape[0]):
            b = np.asarray(red_elem.gbasis(rmap, X, i, tind=s)[0])   # (2, m, q) or (m, q)
            c = coeffs[red_dofs[i, s]]                                # (m, k)
            val = val + (b[..., None] * c[None, :, None, :] if vector else b[..., None] * c[:, None, :])
        if vector:
            target[:, sel] = val * (sigma[sel] * flips[:, sel])[:, :, None, None]
        else:
            target[sel] = val * sigma[sel][:, None, None]
    if vector:
        A = np.transpose(Phi, (2, 1, 3, 0)).reshape(nw, 2 * q, nloc)   # (nw, rows, nloc)
        t = np.transpose(target, (1, 0, 2, 3)).reshape(nw, 2 * q, k)
    else:
        A = np.transpose(Phi, (1, 2, 0))
        t = target
    G = np.einsum("erk,erl->ekl", A, A)
    r = np.einsum("erk,erc->ekc", A, t)
    c = np.linalg.solve(G.astype(dtype), r)                            # (nw, nloc, k)
    out = np.zeros((n_whole, k), dtype=dtype)
    out[whole_dofs] = np.transpose(c, (1, 0, 2))
    return out


def _class_signs(cls, axes, n_red, nw):
    """sigma per whole triangle: the product over the copy's mirrors of +1 (magnetic cut) or -1
    (electric cut)."""
    sigma = np.ones(nw)
    copy = np.arange(nw) // n_red
    for c in range(2 ** len(axes)):
        for a in copy_mirrors(c, axes):
            if cls[a] == "electric":
                sigma[copy == c] *= -1
    return sigma


def _same_mesh(a, b):
    return a.points.shape == b.points.shape and a.triangles.shape == b.triangles.shape \
        and np.array_equal(a.triangles, b.triangles) and np.allclose(a.points, b.points, rtol=0, atol=0)


def solve_loaded_mirror(section, modes, frequency=None, eps_r=1.0, mu_r=1.0, accuracy=1e-6, order=None,
                        evanescent=False, tan_delta=0.0, mesh_size=None):
    """:func:`femodes.solvers.loaded.solve_loaded` of a section with mirror planes, class by class
    on the reduced section (module docstring), unfolded: a LoadedSolution on the whole section's
    mesh, or None where the section has no mirror plane or its reduced part is not one piece
    (then solve it whole)."""
    axes = mirror_planes(section)
    if not axes:
        return None
    canon = canonical(section)
    red = reduce(canon, axes)
    if red is None:
        return None
    classes = mirror_classes(axes)
    nc = len(classes)
    kw = dict(frequency=frequency, eps_r=eps_r, mu_r=mu_r, accuracy=accuracy, order=order, evanescent=True,
              tan_delta=tan_delta, mesh_size=mesh_size, meshes={})  # the classes share meshes and assembly
    walls = [_wall_test(c, canon.size) for c in classes]
    # each class asked for its share of the modes plus one; the refinement is driven by the
    # share alone (a class's extra mode lies deeper in its spectrum than any wanted one and would
    # ask for a finer mesh than the whole solve needs).  Then: a class all of whose modes fall
    # among the wanted ones may hide more, and one with more wanted modes than judged must meet
    # the accuracy on all of them: both are solved again
    share = math.ceil(modes / nc)
    counts, judged = [min(modes, share + 1)] * nc, [share] * nc
    sols = [solve_loaded(red, counts[i], magnetic=walls[i], judged=judged[i], **kw) for i in range(nc)]

    def ranked(sols):
        rows = []
        for ci, sol in enumerate(sols):
            for j, v in enumerate(sol.values):
                rows.append((ci, j, v))
        key = (lambda r: (-r[2].real, -r[2].imag)) if frequency is not None else (lambda r: r[2].real)
        return sorted(rows, key=key)
    for _ in range(3):
        top = ranked(sols)[:modes]
        again = []
        for ci in range(nc):
            n_in = sum(1 for r in top if r[0] == ci)
            if (n_in >= len(sols[ci].values) and counts[ci] < modes) or n_in > judged[ci]:
                judged[ci] = n_in
                counts[ci] = min(modes, n_in + 2)
                again.append(ci)
        if not again:
            break
        for ci in again:
            sols[ci] = solve_loaded(red, counts[ci], magnetic=walls[ci], judged=judged[ci], **kw)
    # one final mesh for all classes: the finest class's
    fine = max(range(nc), key=lambda ci: sols[ci].mesh.n_triangles)
    mesh = sols[fine].mesh
    p = sols[fine].order
    per_class = []
    for ci, sol in enumerate(sols):
        err = np.full(len(sol.objects), np.nan)
        err[:len(sol.errors)] = sol.errors
        keep = set(sol.keep)
        objs, vals, prob = sol.objects, np.asarray(sol.values), sol.problem
        if not _same_mesh(sol.mesh, mesh):
            like = next((pr for m, pr in kw["meshes"].values() if m is mesh), None)
            prob = _problem(red, mesh, eps_r, mu_r, p, tan_delta, walls[ci], like)
            if frequency is not None:
                objs = prob.solve(frequency, modes=counts[ci], evanescent=True)
                new = np.array([m.beta2 for m in objs])
            else:
                objs = prob.cutoffs(modes=counts[ci])
                new = np.array([c.k0 ** 2 for c in objs])
            idx = _match(vals, new)
            err = np.where(idx >= 0, err[np.maximum(idx, 0)], np.nan)
            keep = {i for i in range(len(objs)) if idx[i] >= 0 and idx[i] in keep}
            vals = new
        per_class.append((objs, vals, err, keep, prob))
    # the whole section's mesh and problem
    whole_canon = unfold_mesh(mesh, axes, canon)
    placed = to_frame(whole_canon, section)
    if section.materials:
        from_placed = placed.regions
        if from_placed.size != placed.n_triangles:
            raise AssertionError("the unfolded mesh lost its material regions")
    whole = _problem(section, placed, eps_r, mu_r, p, tan_delta)
    elem_t, elem_z, _ = _elements(p)
    wskm = _skfem_mesh(whole_canon, p)
    rskm = per_class[fine][4].mesh
    emap = _element_map(rskm, wskm, axes, canon.size)
    n_red = rskm.t.shape[1]
    rows = []
    k0 = 2 * math.pi * frequency / C0 if frequency is not None else None
    for ci, (objs, vals, err, keep, prob) in enumerate(per_class):
        sigma = _class_signs(classes[ci], axes, n_red, wskm.t.shape[1])
        ut = functools.partial(unfold_coefficients, elem_t, prob.mesh, prob.basis_t.element_dofs, elem_t, wskm,
                               whole.basis_t.element_dofs, whole.basis_t.N, emap, sigma=sigma, vector=True)
        uz = functools.partial(unfold_coefficients, elem_z, prob.mesh, prob.basis_z.element_dofs, elem_z, wskm,
                               whole.basis_z.element_dofs, whole.basis_z.N, emap, sigma=sigma, vector=False)
        if frequency is not None:
            jbeta = []
            for o in objs:
                b2 = o.beta2
                if isinstance(b2, complex):
                    jbeta.append(1j * cmath.sqrt(b2))
                else:
                    jbeta.append(1j * math.sqrt(b2) if b2 >= 0 else math.sqrt(-b2))
            ET = ut(coeffs=np.column_stack([np.asarray(o.et) for o in objs]))
            WZ = uz(coeffs=np.column_stack([np.asarray(o.ez) * jb for o, jb in zip(objs, jbeta)]))
        else:
            te = [j for j, o in enumerate(objs) if o.field == "TE"]
            tm = [j for j, o in enumerate(objs) if o.field == "TM"]
            unf = {}
            if te:
                unf.update(zip(te, ut(coeffs=np.column_stack([objs[j].coeffs for j in te])).T))
            if tm:
                unf.update(zip(tm, uz(coeffs=np.column_stack([objs[j].coeffs for j in tm])).T))
        for j, o in enumerate(objs):
            if frequency is not None:
                b2 = o.beta2
                et, w = ET[:, j], WZ[:, j]
                if not isinstance(b2, complex):
                    et, w = et.real, w.real
                E = et[whole.interior_t][:, None]
                W = w[whole.interior_z][:, None]
                obj = whole._modes(k0, np.array([b2]), E, W)[0]
            else:
                obj = VectorCutoff(o.k0, o.field, unf[j] / math.sqrt(2 ** len(axes)), o.residual)
            rows.append((vals[j], err[j], obj, j in keep))
    if frequency is not None:
        rows.sort(key=lambda r: (-complex(r[0]).real, -complex(r[0]).imag))
    else:
        rows.sort(key=lambda r: float(np.real(r[0])))
    n = modes
    if n < len(rows) and getattr(rows[n - 1][2], "family", "") == "complex":
        n += 1  # both members of a complex pair
    rows = rows[:n]
    values = np.array([r[0] for r in rows])
    errors = np.array([r[1] for r in rows], dtype=float)
    objects = tuple(r[2] for r in rows)
    keep = tuple(i for i, r in enumerate(rows) if r[3] and np.isfinite(r[1])
                 and (frequency is None or evanescent or r[2].propagating))

    def lower_modes():
        """The modes of order p - 1 on the whole final mesh, for the error of field quantities."""
        return _problem(section, placed, eps_r, mu_r, p - 1, tan_delta).solve(frequency, modes=len(objects) + 2,
                                                                              evanescent=False)

    lower = functools.lru_cache(maxsize=1)(lower_modes) if frequency is not None and p > 1 else None
    return LoadedSolution(values, errors, objects, keep, whole, p, lower, placed)
