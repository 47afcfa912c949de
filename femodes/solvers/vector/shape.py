"""The derivative of the loaded guide's discrete cutoff eigenvalues when the mesh nodes move.

At cutoff the full-vector problem splits in two symmetric pencils (:meth:`VectorProblem.cutoffs`):
TE-type S_tt x = k0^2 T_eps x (Nedelec N_p, x = E_t) and TM-type S_zz x = k0^2 T_zz x (Lagrange
P_p, x = E_z), with S = int (1 / mu_r) |curl E_t|^2 (|grad E_z|^2) and T = int eps_r |E|^2.  Move
every geometry node of the mesh by t V (V a field in the space of the mesh's geometry: P1 on
straight meshes, the isoparametric order on curved ones); the matrices become S(t), T(t) and,
for a simple eigenvalue lam = k0^2 with eigenvector x (Hellmann-Feynman for a symmetric pencil),

    d lam / dt = x^T (S' - lam T') x / x^T T x.

For the TE-type pencil the nonzero eigenvalues are those of the unconstrained S x = lam T x (its
eigenvectors are T-orthogonal to the kernel, the gradients of the nodal space, which is the
discrete Gauss law the constraint of ``cutoffs`` imposes), and the kernel stays exactly the
gradients on the moved mesh (the discrete de Rham sequence holds on any mesh), so the formula
holds there too.  Covariant (Nedelec) elements: a dof is a tangential moment of an edge of the
topology, and scikit-fem maps the reference functions to the moved triangles by the covariant
Piola map (DF^-T phi, curl phi / det DF), so the same coefficient vector on the moved mesh is the
moved field the discrete problem sees.

S' and T' are not assembled: only the forms x_i^T S' x_j and x_i^T T' x_j are needed, and they
come in closed form from pulling each integral back to the moving triangles (the geometry map
F_t = F + t V, so d DF = DV DF at every quadrature point, DV the gradient of the isoparametric
V, and d (dx) = div V dx):

    TE-type (E = DF^-T E^, curl E = curl^ E^ / det DF):
        x^T S' x = - int (1 / mu_r) div V (curl E)^2 dA
        x^T T' x =   int eps_r [div V |E|^2 - E . (DV + DV^T) E] dA
    TM-type (grad u = DF^-T grad^ u^):
        x^T S' x =   int (1 / mu_r) [div V |grad u|^2 - grad u . (DV + DV^T) grad u] dA
        x^T T' x =   int eps_r div V u^2 dA

(the volume form of Hadamard's derivative, as for the homogeneous guide's scalar problem), with
the quadrature of the assembly: exactly the derivative of the assembled quadratic forms.  A
check: ``exact=False`` takes the central difference (t = +-delta) of the forms assembled on the
moved meshes instead (delta moves no node by more than STEP of the smallest edge); on a curved
P3 mesh with a random V the two agreed to 1e-9 (the difference's own error).  A dilation V = x
gives d (k0^2) = -2 k0^2 for every mode.  Degenerate groups: the matrix of the form over the
group's span (T-orthonormal basis), whose eigenvalues are the branch derivatives.
"""

from __future__ import annotations

import numpy as np

from femodes.solvers.vector.common import _elements

__all__ = ["cutoff_shape_derivatives", "STEP"]

#: the nodes move by at most STEP x the smallest element's edge in the central difference (the check)
STEP = 1e-5


def _moved(skm, V, t):
    """The scikit-fem mesh with every geometry node moved by t V (V (2, N) at the geometry dofs)."""
    return type(skm)(np.ascontiguousarray(skm.doflocs + t * V), skm.t)


def _basis(problem, mesh, field):
    """The TE-type (Nedelec) or TM-type (Lagrange) basis of ``problem``'s order on ``mesh``, with
    the quadrature of VectorProblem's assembly."""
    from skfem import Basis

    elem_t, elem_z, p = _elements(problem.order)
    q = 2 * p + (2 if type(mesh).__name__ != "MeshTri1" else 0)
    return Basis(mesh, elem_t if field == "TE" else elem_z, intorder=q)


def _fields_at_quadrature(b, field, X):
    """(values, stiffness parts) of the columns of X at the quadrature points of basis ``b``:
    (m, 2, ne, nq) E_t and (m, 1, ne, nq) curl E_t for 'TE'; (m, 1, ne, nq) E_z and
    (m, 2, ne, nq) grad E_z for 'TM'."""
    vals, stiff = [], []
    for j in range(X.shape[1]):
        f = b.interpolate(X[:, j])
        if field == "TE":
            vals.append(np.asarray(f.value))
            stiff.append(np.asarray(f.curl)[None])
        else:
            vals.append(np.asarray(f.value)[None])
            stiff.append(np.asarray(f.grad))
    return np.array(vals), np.array(stiff)


def _forms(problem, b, field, X):
    """(Q_S, Q_T): the matrices X^T S X and X^T T X of the cutoff pencil of ``field`` ('TE' or
    'TM') assembled with basis ``b`` (the problem's materials per triangle), X full-size columns."""
    eps, mu = problem.eps_r[:, None], problem.mu_r[:, None]
    vals, stiff = _fields_at_quadrature(b, field, X)
    QT = np.einsum("ikeq,jkeq,eq->ij", vals, vals, b.dx * eps, optimize=True)
    QS = np.einsum("ikeq,jkeq,eq->ij", stiff, stiff, b.dx / mu, optimize=True)
    return 0.5 * (QS + QS.T), 0.5 * (QT + QT.T)


def _min_edge(skm):
    p = skm.p
    return float(np.min(np.linalg.norm(p[:, skm.facets[0]] - p[:, skm.facets[1]], axis=0)))


def _velocity_gradient(problem, V):
    """DV[i, j] = d V_i / d x_j (2, 2, ne, nq) at the quadrature points of the problem's bases,
    V in the space of the mesh's geometry (isoparametric)."""
    from skfem import Basis

    b = problem.basis_t
    geo = Basis(problem.mesh, problem.mesh.elem(), quadrature=b.quadrature)
    fx, fy = geo.interpolate(V[0]), geo.interpolate(V[1])
    return np.array([[fx.grad[0], fx.grad[1]], [fy.grad[0], fy.grad[1]]])


def _derivative_forms(problem, field, X, DV):
    """(d Q_S, d Q_T, Q_T): the exact derivatives of X^T S X and X^T T X under the node motion,
    and X^T T X (module docstring: the pull-back of each form to the moving triangles)."""
    b = problem.basis_t if field == "TE" else problem.basis_z
    eps, mu = problem.eps_r[:, None], problem.mu_r[:, None]
    div = DV[0, 0] + DV[1, 1]
    vals, stiff = _fields_at_quadrature(b, field, X)
    ein = lambda sub, *a: np.einsum(sub, *a, optimize=True)
    QT = ein("ikeq,jkeq,eq->ij", vals, vals, b.dx * eps)
    sym = DV + DV.transpose(1, 0, 2, 3)
    if field == "TE":
        # E = DF^-T E^ moves as dE = -DV^T E, dx as div V dx; curl E = curl^ E^ / det DF
        dQS = -ein("ikeq,jkeq,eq->ij", stiff, stiff, div * b.dx / mu)
        dQT = ein("ikeq,jkeq,eq->ij", vals, vals, div * b.dx * eps) - ein("ikeq,kleq,jleq,eq->ij", vals, sym,
                                                                             vals, b.dx * eps)
    else:
        # grad u moves as -DV^T grad u, u itself stays
        dQS = ein("ikeq,jkeq,eq->ij", stiff, stiff, div * b.dx / mu) - ein("ikeq,kleq,jleq,eq->ij", stiff, sym,
                                                                              stiff, b.dx / mu)
        dQT = ein("ikeq,jkeq,eq->ij", vals, vals, div * b.dx * eps)
    sy = lambda A: 0.5 * (A + A.T)
    return sy(dQS), sy(dQT), sy(QT)


def cutoff_shape_derivatives(problem, cuts, groups, velocity, exact=True):
    """Derivatives of the discrete cutoff eigenvalues k0^2 of ``problem`` (a VectorProblem) when
    its mesh's geometry nodes move with ``velocity`` ((2, N) at the dofs of the mesh's geometry
    element, in its order: ``problem.mesh.doflocs``).

    ``cuts``: VectorCutoffs of ``problem`` (``problem.cutoffs()``); ``groups``: lists of indices
    into ``cuts``, one field type each (a degenerate group, or one cutoff).  Returns, per group,
    (mu, branch): the ascending branch derivatives d(k0^2) (rad^2 / m^2 per unit of the motion's
    parameter) and, for each member, the branch whose eigenvector overlaps its own field most
    (a singleton: mu = [d(k0^2)], branch [0]).  ``exact``: the derivatives of the forms in
    closed form (default); False: by the central difference of the assembly (a check).  See the
    module docstring."""
    skm = problem.mesh
    V = np.asarray(velocity, dtype=float)
    if V.shape != skm.doflocs.shape:
        raise ValueError(f"velocity must have the shape of the mesh's doflocs {skm.doflocs.shape}, got {V.shape}")
    vmax = float(np.max(np.linalg.norm(V, axis=0))) if V.size else 0.0
    out = []
    if vmax == 0.0:
        return [(np.zeros(len(g)), np.arange(len(g))) for g in groups]
    if exact:
        DV = _velocity_gradient(problem, V)
    else:
        delta = STEP * _min_edge(skm) / vmax
        plus, minus = _moved(skm, V, delta), _moved(skm, V, -delta)
    bases = {}
    for g in groups:
        field = cuts[g[0]].field
        if any(cuts[i].field != field for i in g):
            raise ValueError("a group must hold cutoffs of one field type")
        X = np.array([cuts[i].coeffs for i in g]).T
        lam = float(np.mean([cuts[i].k0 ** 2 for i in g]))
        if exact:
            dS, dT, T0 = _derivative_forms(problem, field, X, DV)
            D = dS - lam * dT
        else:
            if field not in bases:  # the nominal basis is the problem's own
                bases[field] = ((problem.basis_t if field == "TE" else problem.basis_z),
                                _basis(problem, plus, field), _basis(problem, minus, field))
            b0, bp, bm = bases[field]
            S0, T0 = _forms(problem, b0, field, X)
            Sp, Tp = _forms(problem, bp, field, X)
            Sm, Tm = _forms(problem, bm, field, X)
            D = ((Sp - Sm) - lam * (Tp - Tm)) / (2 * delta)
        # the group's own pencil S0 - lam T0 is ~0 (an eigen-space): the branches are the
        # eigenvalues of D relative to T0
        w, U = np.linalg.eigh(T0)
        C = U / np.sqrt(w)                    # T0-orthonormal combinations of the members
        mu, Y = np.linalg.eigh(C.T @ D @ C)
        over = np.abs(T0 @ (C @ Y))           # member k against branch b, in the T inner product
        branch = np.zeros(len(g), dtype=np.int64)
        for _ in range(len(g)):
            k, b = np.unravel_index(np.argmax(over), over.shape)
            branch[k] = b
            over[k, :], over[:, b] = -1.0, -1.0
        out.append((mu, branch))
    return out
