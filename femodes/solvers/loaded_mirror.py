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

Accuracy.  All classes run in one accuracy loop (that of
:func:`femodes.solvers.loaded.solve_loaded`: three meshes, Richardson, the same safety) on the
same reduced meshes, of the element sizes the whole solve would take: each mesh is made and
assembled once (the classes differ only in which cut dofs they keep: VectorProblem's
``assembled``), every class solved on it for its share of the modes plus one (a class all of
whose computed modes fall among the wanted ones is asked for more, on the meshes of the estimate
too, so that the k-th best overall is proven).  The estimate and the stopping rule are over the
wanted modes of all classes together (for cutoffs the trend floor too, as the whole solve applies
it over its modes); the next mesh is planned from the worst class (the slowest rate observed
among its modes that miss the accuracy).  The final mesh is common, so every class's modes and
errors come from it.  The empty guide that names the parents is solved class by class on the
reduced mesh too (:func:`_empty_guide_classes`).
"""

from __future__ import annotations

import cmath
import functools
import itertools
import math
import warnings

import numpy as np

from femodes.constants import C0
from femodes.errors import FemodesError
from femodes.geometry.mirror import canonical, copy_mirrors, mirror_planes, reduce, to_frame, unfold_mesh
from femodes.solvers.eigen import lowest_eigenpairs
from femodes.solvers.loaded import ORDER, LoadedSolution, _debug, _estimate, _first_size, _kept, _mesh, _problem, _rate, _step, _trend_floor
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
    sigma E_red(R x') (scalar), per whole triangle (``sigma``: (nw,) class signs, or (nw, columns)
    where the columns belong to different classes; S from the copy's flips), from the reduced ``coeffs`` (one column per field): a least-squares fit of each
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
        sg = sigma[sel].reshape(sel.size, -1)   # (m, 1) or (m, k): the class sign of each column
        if vector:
            target[:, sel] = val * flips[:, sel][:, :, None, None] * sg[None, :, None, :]
        else:
            target[sel] = val * sg[:, None, :]
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


def _rank(values, frequency):
    """(class, index) of every value of every class, best first: ascending cutoff k0^2, or
    descending beta^2 (then its imaginary part) at a frequency."""
    rows = [(ci, j, v) for ci, vals in enumerate(values) for j, v in enumerate(vals)]
    if frequency is not None:
        rows.sort(key=lambda r: (-complex(r[2]).real, -complex(r[2]).imag))
    else:
        rows.sort(key=lambda r: float(np.real(r[2])))
    return [(ci, j) for ci, j, _ in rows]


def _empty_guide_classes(rprob, interiors_z, classes, axes, size, unfold, signs_tm, signs_te, whole, count):
    """The empty guide's lowest modes on the whole (unfolded) mesh, found class by class on the
    reduced one: what :func:`femodes.modes.parents._empty_guide` returns for ``whole``
    ([(family, kc^2, E_t, u)] at the quadrature points of whole.basis_t, count + 1 TE with the
    constant H_z, count TM), for sections without inner conductors.

    The physics: a magnetic cut (E_z even, E_x odd across it) makes E_z = psi of TM even and
    H_z = psi of TE odd (E_y = dH_z/dx even): TM Neumann, TE Dirichlet on the cut; an electric
    cut the reverse.  Outer walls: TM Dirichlet, TE Neumann.  The whole mesh being the reduced
    one mirrored, each class's eigenvector mirrored with its signs (TM: the class's sigma, TE:
    -sigma per plane crossed) is an exact eigenvector of the whole discrete problem, so the
    values and fields are those of the whole solve (up to the order of exactly degenerate ones).
    A class all of whose computed modes fall among the lowest wanted is asked for more.
    ``unfold``: the scalar unfolding of the reduced Lagrange coefficients (sigma per column);
    ``signs_tm`` / ``signs_te``: per class, the sign of each whole triangle's copy."""
    from skfem import BilinearForm, asm
    from skfem.helpers import dot, grad

    bz = rprob.basis_z
    S = asm(BilinearForm(lambda u, v, w: dot(grad(u), grad(v))), bz).tocsr()
    T = rprob.mats["T_z1"].tocsr()
    area = float(np.sum(rprob.basis_t.dx))
    shift = -1.0 / area
    tol = 1e-9 * size
    on_cut = {a: np.abs(bz.doflocs[0 if a == "x" else 1]) <= tol for a in axes}
    everything = np.arange(bz.N)
    nc = len(classes)
    out = []
    for family, want in (("TE", count + 1), ("TM", count)):
        free, sig = [], []
        for ci, cls in enumerate(classes):
            if family == "TM":
                free.append(interiors_z[ci])
                sig.append(signs_tm[ci])
            else:
                dirichlet = np.zeros(bz.N, dtype=bool)
                for a, kind in cls.items():
                    if kind == "magnetic":
                        dirichlet |= on_cut[a]
                free.append(everything[~dirichlet])
                sig.append(signs_te[ci])
        ask = [min(want, math.ceil(want / nc) + 2, f.size - 2) for f in free]
        got = [None] * nc
        todo = list(range(nc))
        for _ in range(6):
            for ci in todo:
                f = free[ci]
                got[ci] = lowest_eigenpairs(S[f][:, f], T[f][:, f], ask[ci], shift, tol=1e-9)
            order = sorted(((lam, ci, j) for ci in range(nc) for j, lam in enumerate(got[ci][0])))[:want]
            todo = [ci for ci in range(nc) if ask[ci] < min(want, free[ci].size - 2)
                    and sum(1 for _, c, _ in order if c == ci) >= ask[ci]]
            if not todo:
                break
            for ci in todo:
                ask[ci] = min(want, 2 * ask[ci], free[ci].size - 2)
        cols = np.zeros((bz.N, len(order)))
        sg = np.ones((whole.basis_z.mesh.t.shape[1], len(order)))
        for k, (_, ci, j) in enumerate(order):
            cols[free[ci], k] = got[ci][1][:, j]
            sg[:, k] = sig[ci]
        full = unfold(coeffs=cols, sigma=sg) if order else cols
        for (lam, _, _), c in zip(order, full.T):
            f = whole.basis_z.interpolate(c)
            g, u = np.asarray(f.grad), np.asarray(f)
            if family == "TE":
                if lam > 1e-8 / area:  # not the constant
                    out.append(("TE", float(lam), np.array([-g[1], g[0]]), u))
            else:
                out.append(("TM", float(lam), g, u))
    return sorted(out, key=lambda m: m[1])


def solve_loaded_mirror(section, modes, frequency=None, eps_r=1.0, mu_r=1.0, accuracy=1e-6, order=None,
                        evanescent=False, tan_delta=0.0, mesh_size=None, max_iterations=5):
    """:func:`femodes.solvers.loaded.solve_loaded` of a section with mirror planes: every class on
    the same reduced meshes in one accuracy loop (module docstring), unfolded: a LoadedSolution
    on the whole section's mesh, or None where the section has no mirror plane or its reduced
    part is not one piece (then solve it whole)."""
    axes = mirror_planes(section)
    if not axes:
        return None
    canon = canonical(section)
    red = reduce(canon, axes)
    if red is None:
        return None
    p = ORDER if order is None else int(order)
    if p not in (1, 2, 3):
        raise FemodesError(f"order must be 1, 2 or 3 for loaded guides (edge elements), got {order!r}")
    classes = mirror_classes(axes)
    nc = len(classes)
    walls = [_wall_test(c, canon.size) for c in classes]
    rate = _rate(red, p)
    # the whole section's first mesh size and wavenumber: the reduced meshes are the whole
    # solve's meshes cut by the planes (the same element size, 1 / 2^planes the elements)
    h, k_max, scale = _first_size(section, modes, frequency, eps_r, mu_r, mesh_size)
    # each class asked for its share of the modes plus one; a class all of whose computed modes
    # fall among the wanted ones may hide a lower one and is asked for more (on the meshes of
    # the estimate too)
    counts = [min(modes, math.ceil(modes / nc) + 1)] * nc

    def solve(prob, n):
        if frequency is not None:
            got = prob.solve(frequency, modes=n, evanescent=True)
            return np.array([m.beta2 for m in got]), got, prob.n_dofs
        got = prob.cutoffs(modes=n)
        return np.array([c.k0 ** 2 for c in got]), got, prob.n_dofs

    def run(size):
        """The reduced mesh of element size ``size``, meshed and assembled once (the classes
        differ only in which cut dofs they keep), and every class's problem and solution."""
        mesh = _mesh(red, size, p, k_max)
        first = _problem(red, mesh, eps_r, mu_r, p, tan_delta, walls[0])
        probs = [first] + [_problem(red, mesh, eps_r, mu_r, p, tan_delta, w, first) for w in walls[1:]]
        return {"mesh": mesh, "probs": probs, "res": [solve(pr, n) for pr, n in zip(probs, counts)]}

    def wanted(runs):
        """(class, index) of the ``modes`` best values of the finest mesh."""
        return _rank([r[0] for r in runs[-1]["res"]], frequency)[:modes]

    def complete(runs):
        """Ask the short classes for more until none is short (a few rounds at most)."""
        for _ in range(4):
            top = wanted(runs)
            short = [ci for ci in range(nc) if counts[ci] < modes
                     and sum(1 for c, _ in top if c == ci) >= len(runs[-1]["res"][ci][0])]
            if not short:
                return
            for ci in short:
                counts[ci] = min(modes, counts[ci] + max(2, counts[ci] // 2))
                for r in runs[-3:]:
                    r["res"][ci] = solve(r["probs"][ci], counts[ci])

    def estimate(runs):
        """Per class (errors, observed rates) of the finest mesh's values (loaded._estimate);
        for cutoffs the trend floor over the wanted modes of all classes together (as the whole
        solve applies it over its modes)."""
        est = [_estimate([r["res"][ci] for r in runs[-3:]], frequency, rate, p, trend=False) for ci in range(nc)]
        if frequency is None:
            top = wanted(runs)
            idx = [(ci, j) for ci, j in top if j < len(est[ci][0])]
            if idx:
                vals = np.array([np.real(runs[-1]["res"][ci][0][j]) for ci, j in idx])
                floored = _trend_floor(vals, np.array([est[ci][0][j] for ci, j in idx]), rate)
                for (ci, j), e in zip(idx, floored):
                    est[ci][0][j] = e
        return est

    runs = [run(k * h) for k in (1.35 ** 2, 1.35, 1.0)]
    complete(runs)
    for _ in range(max_iterations):
        est = estimate(runs)
        rel, qs, cls = [], [], []
        for ci, j in wanted(runs):
            err, q = est[ci]
            if j < len(err) and np.isfinite(err[j]):  # complex pairs not on every mesh: judged at the end
                v = runs[-1]["res"][ci][0][j]
                rel.append(err[j] / scale if frequency is not None else err[j] / (2 * abs(v)))
                qs.append(q[j])
                cls.append(ci)
        rel, qs, cls = np.array(rel), np.array(qs), np.array(cls, dtype=int)
        worst = float(rel.max()) if rel.size else 0.0
        # the next mesh planned from the worst class: the slowest rate observed among its modes
        # that miss the accuracy, not below half the model's (the whole loop's rule, per class)
        missing = (rel > accuracy) & (cls == cls[np.argmax(rel)]) if rel.size else rel > accuracy
        plan = max(rate / 2, float(np.min(qs[missing]))) if np.any(missing) else rate
        _debug(f"loaded classes loop: h={h:.4g} N={[r[2] for r in runs[-1]['res']]} modes {counts} "
               f"worst estimate {worst:.2e} (rate plan {plan:.2f})")
        if worst <= accuracy:
            break
        unknowns = sum(r[2] for r in runs[-1]["res"])
        if unknowns > 1_500_000:
            warnings.warn(f"femodes: asked accuracy {accuracy:.1e} not reached; estimated {worst:.1e} "
                          f"with {unknowns} unknowns over the symmetry classes", RuntimeWarning, stacklevel=3)
            break
        h *= _step(worst, plan, rate, accuracy)
        runs = runs[-2:] + [run(h)]
        complete(runs)
    else:
        warnings.warn(f"femodes: asked accuracy {accuracy:.1e} not reached after {max_iterations} "
                      f"refinements; estimated {worst:.1e}", RuntimeWarning, stacklevel=3)
    est = estimate(runs)
    mesh = runs[-1]["mesh"]
    per_class = []
    for ci in range(nc):
        vals, objs, _ = runs[-1]["res"][ci]
        err = np.full(len(objs), np.nan)
        err[:len(est[ci][0])] = est[ci][0]
        keep = set(_kept(est[ci][0], objs, frequency, True))
        per_class.append((objs, vals, err, keep, runs[-1]["probs"][ci]))
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
    rskm = per_class[0][4].mesh
    emap = _element_map(rskm, wskm, axes, canon.size)
    n_red = rskm.t.shape[1]
    # the modes reported: the best ``modes`` over all classes (both members of a complex pair)
    order_ = _rank([pc[1] for pc in per_class], frequency)
    n = min(modes, len(order_))
    if n < len(order_) and getattr(per_class[order_[n - 1][0]][0][order_[n - 1][1]], "family", "") == "complex":
        n += 1
    picked = order_[:n]
    signs = [_class_signs(c, axes, n_red, wskm.t.shape[1]) for c in classes]
    rprob = per_class[0][4]  # every class's problem has the same mesh and bases (their cut dofs differ)
    ut = functools.partial(unfold_coefficients, elem_t, rskm, rprob.basis_t.element_dofs, elem_t, wskm,
                           whole.basis_t.element_dofs, whole.basis_t.N, emap, vector=True)
    uz = functools.partial(unfold_coefficients, elem_z, rskm, rprob.basis_z.element_dofs, elem_z, wskm,
                           whole.basis_z.element_dofs, whole.basis_z.N, emap, vector=False)
    if frequency is not None:
        k0 = 2 * math.pi * frequency / C0
        objs = [per_class[ci][0][j] for ci, j in picked]
        b2 = np.array([o.beta2 for o in objs])
        if not np.any(np.imag(b2)):
            b2 = b2.real
        # E_z = w / (j beta): w = j beta E_z is what the pencil's eigenvector holds
        jbeta = np.array([1j * cmath.sqrt(v) if v.imag else (1j * math.sqrt(v.real) if v.real >= 0
                                                             else math.sqrt(-v.real))
                          for v in b2.astype(complex)])
        sig = np.column_stack([signs[ci] for ci, _ in picked]) if picked else np.ones((wskm.t.shape[1], 0))
        ET = ut(coeffs=np.column_stack([np.asarray(o.et) for o in objs]), sigma=sig)
        WZ = uz(coeffs=np.column_stack([np.asarray(o.ez) * jb for o, jb in zip(objs, jbeta)]), sigma=sig)
        if not np.iscomplexobj(b2):
            ET, WZ = ET.real, WZ.real
        unfolded = whole._modes(k0, b2, ET[whole.interior_t], WZ[whole.interior_z]) if picked else ()
    else:
        unfolded = [None] * n
        for field, un in (("TE", ut), ("TM", uz)):
            cols = [i for i, (ci, j) in enumerate(picked) if per_class[ci][0][j].field == field]
            if cols:
                c = un(coeffs=np.column_stack([per_class[picked[i][0]][0][picked[i][1]].coeffs for i in cols]),
                       sigma=np.column_stack([signs[picked[i][0]] for i in cols]))
                for i, v in zip(cols, c.T):
                    o = per_class[picked[i][0]][0][picked[i][1]]
                    unfolded[i] = VectorCutoff(o.k0, o.field, v / math.sqrt(2 ** len(axes)), o.residual)
    values = np.array([per_class[ci][1][j] for ci, j in picked])
    errors = np.array([per_class[ci][2][j] for ci, j in picked], dtype=float)
    objects = tuple(unfolded)
    keep = tuple(i for i, (ci, j) in enumerate(picked) if j in per_class[ci][3] and np.isfinite(errors[i])
                 and (frequency is None or evanescent or objects[i].propagating))

    def lower_modes():
        """The modes of order p - 1 on the whole final mesh, for the error of field quantities."""
        return _problem(section, placed, eps_r, mu_r, p - 1, tan_delta).solve(frequency, modes=len(objects) + 2,
                                                                              evanescent=False)

    lower = functools.lru_cache(maxsize=1)(lower_modes) if frequency is not None and p > 1 else None
    empty = None
    if len(canon.loops) == 1:  # no inner conductor: no TEM modes, the classes give the empty guide
        flipped = [{a: ("electric" if k == "magnetic" else "magnetic") for a, k in c.items()} for c in classes]
        signs_te = [_class_signs(c, axes, n_red, wskm.t.shape[1]) for c in flipped]
        empty = functools.partial(_empty_guide_classes, rprob, [pc[4].interior_z for pc in per_class], classes,
                                  axes, canon.size, uz, signs, signs_te, whole)
    return LoadedSolution(values, errors, objects, keep, whole, p, lower, placed, empty)
