"""Which empty-guide mode a loaded-guide mode grows from: the empty guide solved on the same mesh
(pure TE / TM / TEM modes) and the share of each in a loaded mode's transverse field.
"""

from __future__ import annotations

import numpy as np

from femodes.solvers.eigen import lowest_eigenpairs
from femodes.solvers.scalar import _conductors

PARENT_SHARE = 0.8  # share of int |E_t|^2 in one or two empty-guide modes that names a parent


def _empty_guide(problem, count):
    """The empty guide's lowest modes on ``problem``'s mesh: [(family, kc^2, E_t, u)], E_t (2, ne, nq)
    and the potential u (H_z of TE, E_z of TM, phi of TEM; (ne, nq)) at the quadrature points of
    ``problem.basis_t``.

    The empty (homogeneous) guide's modes are pure (common practice): TE from the Neumann
    eigenproblem of H_z, E_t = z x grad H_z; TM from the Dirichlet one of E_z, E_t = grad E_z;
    TEM (kc = 0, one per inner conductor) from the electrostatic potentials, E_t = grad phi.  The
    Lagrange elements of the longitudinal field serve for all three, so this costs two small
    symmetric eigensolves instead of a second vector problem."""
    from scipy.sparse.linalg import spsolve
    from skfem import BilinearForm, asm
    from skfem.helpers import dot, grad


    bz = problem.basis_z
    S = asm(BilinearForm(lambda u, v, w: dot(grad(u), grad(v))), bz).tocsr()
    T = problem.mats["T_z1"].tocsr()
    iz = problem.interior_z
    scale = float(np.sum(problem.basis_t.dx))  # the area
    sigma = -1.0 / scale  # below every eigenvalue (kc^2 > 0, or 0 for the constant H_z)

    def fields(cols):
        for c in cols.T:
            f = bz.interpolate(c)
            yield np.asarray(f.grad), np.asarray(f)

    out = []
    lam, X, _ = lowest_eigenpairs(S, T, count + 1, sigma, tol=1e-9)  # labels and shares only
    for kc2, (g, u) in zip(lam, fields(X)):
        if kc2 > 1e-8 / scale:  # not the constant
            out.append(("TE", float(kc2), np.array([-g[1], g[0]]), u))
    lam, X, _ = lowest_eigenpairs(S[iz][:, iz], T[iz][:, iz], count, sigma, tol=1e-9)
    full = np.zeros((bz.N, X.shape[1]))
    full[iz] = X
    out += [("TM", float(kc2), g, u) for kc2, (g, u) in zip(lam, fields(full))]
    groups = _conductors(bz.mesh)
    if len(groups) > 1:
        cond = [np.unique(bz.get_dofs(facets=gr).flatten()) for gr in groups]
        bnd = np.setdiff1d(np.arange(bz.N), iz)
        phis = np.zeros((bz.N, len(groups) - 1))
        for i in range(1, len(groups)):
            phis[cond[i], i - 1] = 1.0
            phis[iz, i - 1] = spsolve(S[iz][:, iz].tocsc(), -(S[iz][:, bnd] @ phis[bnd, i - 1]))
        out += [("TEM", 0.0, g, u) for g, u in fields(phis)]
    return sorted(out, key=lambda m: m[1])


def _parents(section, problem, loaded_modes, eps_r, mu_r, ref, empty=None):
    """For each loaded VectorMode (or VectorCutoff): (parent label or None, share).  The empty guide (the section
    without its regions) is solved on the same mesh (:func:`_empty_guide`); its modes are pure
    TE / TM / TEM and are named by matching their kc to the scalar solver's labelled modes of the
    bare section.  A loaded mode's parent is the empty-guide mode (or pair of them) holding >=
    PARENT_SHARE of its int |E_t|^2; the transverse fields of distinct empty-guide modes are
    orthogonal (common practice: the modal orthogonality of homogeneous guides), so the shares
    add up to at most 1.  A degenerate group (TE11 and TM11 of a rectangle, a circle's TE11 pair,
    the TEM modes of several inner conductors) is one parent, its share the projection on the
    group's span.  At a cutoff the comparison is of like with like: the transverse E of a TE-type
    cutoff with the empty guide's TE and TEM modes, the E_z of a TM-type cutoff with its TM modes
    (an empty-guide TM mode has no transverse E at cutoff, a TE mode no E_z).  ``ref``: the
    bare section's labelled scalar modes (femodes.api._bare_modes), at least len(loaded_modes) + 8.
    ``empty``: count -> the empty guide's modes on ``problem``'s mesh, where the solver found
    them more cheaply (LoadedSolution.empty: the symmetry classes on the reduced mesh)."""
    n = len(loaded_modes)
    if n == 0:
        return []
    count = n + 8
    empty = _empty_guide(problem, count) if empty is None else empty(count)
    # labels only: kc is matched to 1e-3, so 1e-4 is plenty
    kmax2 = max([r.kc ** 2 for r in ref] + [m[1] for m in empty])
    names = []
    for fam, kc2, _, _ in empty:
        hits = [r for r in ref if r.family == fam and abs(r.kc ** 2 - kc2) <= 1e-3 * max(r.kc ** 2, 1e-6 * kmax2)]
        names.append(hits[0].label if hits else None)
    # group the empty modes by kc (degenerate groups); unnamed ones stay alone
    groups = []
    for j, (fam, kc2, _, _) in enumerate(empty):
        for gr in groups:
            i = gr[0]
            if names[i] and names[j] and abs(empty[i][1] - kc2) <= 1e-5 * max(kc2, 1e-6 * kmax2):
                gr.append(j)
                break
        else:
            groups.append([j])
    dx = problem.basis_t.dx
    bt = problem.basis_t
    ip = lambda a, b: float(np.sum(np.einsum("kij,kij->ij", a, b) * dx))  # noqa: E731
    ips = lambda a, b: float(np.sum(a * b * dx))  # noqa: E731
    grams = [np.array([[ip(empty[a][2], empty[b][2]) for b in gr] for a in gr]) for gr in groups]
    grams_z = [np.array([[ips(empty[a][3], empty[b][3]) for b in gr] for a in gr]) for gr in groups]

    def group_name(members):
        labs = [names[i] for i in members if names[i]]
        if len(labs) < len(members):
            return None
        if len(labs) > 1 and all(empty[i][0] == "TEM" for i in members):
            return "TEM"
        return "/".join(dict.fromkeys(sorted(labs, key=lambda t: (t[:2] != "TE", t))))

    out = []
    for lm in loaded_modes:
        cutoff = hasattr(lm, "field")  # a VectorCutoff
        if cutoff and lm.field == "TM":
            e = np.asarray(problem.basis_z.interpolate(lm.coeffs))
            prod, slot, G_all, want = ips, 3, grams_z, {"TM"}
        else:
            e = np.asarray(bt.interpolate(lm.coeffs if cutoff else lm.et))
            prod, slot, G_all = ip, 2, grams
            want = {"TE", "TEM"} if cutoff else {"TE", "TM", "TEM"}
        ee = prod(e, e)
        share = {}
        for k, (gr, G) in enumerate(zip(groups, G_all)):
            pos = [q for q, i in enumerate(gr) if empty[i][0] in want]
            if not pos:
                continue
            members = [gr[q] for q in pos]
            c = np.array([prod(e, empty[i][slot]) for i in members])
            v = float(c @ np.linalg.solve(G[np.ix_(pos, pos)], c)) / ee
            key = group_name(members) or f"?{k}"
            share[key] = share.get(key, 0.0) + v
        ranked = sorted(share.items(), key=lambda kv: -kv[1]) or [("?", 0.0)]
        top = ranked[0]
        if not top[0].startswith("?") and top[1] >= PARENT_SHARE:
            out.append((top[0], top[1]))
        elif (len(ranked) > 1 and not ranked[1][0].startswith("?") and not top[0].startswith("?")
              and top[1] + ranked[1][1] >= PARENT_SHARE):
            out.append((f"{top[0]}+{ranked[1][0]}", top[1] + ranked[1][1]))
        else:
            out.append((None, top[1] + (ranked[1][1] if len(ranked) > 1 else 0.0)))
    return out
