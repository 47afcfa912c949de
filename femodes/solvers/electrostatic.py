"""Electrostatics of multi-conductor TEM lines: conductor potentials, the per-unit-length
capacitance and inductance matrices, and the modal set of the TEM modes.

Physics (homogeneous fill eps = eps0 eps_r, mu = mu0 mu_r; common practice, e.g. C. R. Paul,
Analysis of Multiconductor Transmission Lines, ch. 3 and 5 (from memory)).  A guide with N inner
conductors and a grounded outer wall carries N TEM modes, all with beta = k = omega sqrt(mu eps).
Their transverse fields are e_t = -grad phi, phi harmonic between the conductors and constant on
each.  Let phi_i solve

    laplace phi_i = 0,   phi_i = 1 on inner conductor i, 0 on every other conductor

(the finite-element potentials of this module, order p Lagrange elements, one factorisation).
The Maxwell capacitance matrix (F/m) is the energy product

    C_ij = eps int grad phi_i . grad phi_j dA      (C_ii > 0, C_ij < 0 for i != j),

i.e. Q = C V for the conductor charges Q and voltages V against the outer wall (Green's first
identity turns the flux integral into the energy product; with the potentials' Dirichlet data
exact on straight meshes the diagonal is an upper bound, the Dirichlet principle).  For a
homogeneous fill the inductance matrix is exactly

    L = mu eps C^-1      (H/m),   so  L C = mu eps I  and  v = 1 / sqrt(mu eps) for every mode.

Modal set.  Any orthogonal basis of the N-dimensional TEM space propagates at the same speed; the
eigenvectors of C are the natural one: C T = T Lambda with T orthogonal (columns t_k, unit
length), so the modes are uncoupled both in C and in L (T^T L T = mu eps Lambda^-1).  Mode k has
the conductor voltages t_k, the potential psi_k = sum_i t_ki phi_i, and its fields are orthogonal
to the other modes' (int e_k . e_l dA = t_k^T C t_l / eps = 0).  Its modal characteristic
impedance (voltage and current both carried by T, Paul ch. 5/7) is Z_k = 1 / (v Lambda_k)
= v t_k^T L t_k.  The modes are ordered by ascending modal impedance (descending Lambda_k).
A symmetric pair (C_11 = C_22 within the error estimate) has t = (1, 1)/sqrt 2 ('TEM even') and
(1, -1)/sqrt 2 ('TEM odd'): the sign pattern of t_k names them.  Each t_k is signed so that its
first component (in conductor order) that is not zero is positive.

Conductor order.  Inner conductors are numbered in the order of the section's holes (each mesh
boundary piece is matched to the nearest hole outline); for a mesh file, by the centroid of their
boundary (x, then y).  The outer wall (the boundary piece of largest extent) is the ground.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from femodes.constants import C0, EPS0, MU0
from femodes.errors import FemodesError
from femodes.solvers.backends import factorize

__all__ = ["Electrostatics", "LineParameters", "conductor_potentials", "line_parameters", "modal_basis",
           "conductor_groups"]


@dataclass(frozen=True, eq=False)
class Electrostatics:
    """The conductor potentials of one discretisation, before the fill is known.

    potentials : (n_dofs, N) coefficients of phi_i (1 V on inner conductor i, 0 on the others)
    gram       : (N, N) int grad phi_i . grad phi_j dA (dimensionless; C = eps gram)
    gram_error : (N, N) estimated absolute error of ``gram`` (same units), >= 0
    centroids  : (N, 2) centroid of each inner conductor's boundary (m)
    """

    potentials: np.ndarray
    gram: np.ndarray
    gram_error: np.ndarray
    centroids: np.ndarray


@dataclass(frozen=True, eq=False)
class LineParameters:
    """Per-unit-length parameters of a homogeneously filled multi-conductor TEM line (SI).

    N inner conductors, voltages against the outer wall (see the module docstring).

    capacitance       : (N, N) Maxwell capacitance matrix C (F/m): C_ij = eps int grad phi_i .
                        grad phi_j dA; Q = C V
    capacitance_error : (N, N) estimated absolute error of each entry of C (F/m)
    inductance        : (N, N) inductance matrix L = mu eps C^-1 (H/m), exact for a homogeneous fill
    inductance_error  : (N, N) estimated absolute error of each entry of L (H/m), first order:
                        |C^-1| |dC| |C^-1| mu eps (entrywise absolute values)
    eps_r, mu_r       : the fill
    centroids         : (N, 2) centroid (x, y) of each inner conductor's boundary (m), the
                        conductor order of the matrices
    modal_voltages    : (N, N) orthogonal matrix T, column k the conductor voltages of TEM mode k
                        (unit length, eigenvectors of C), ordered by ascending modal impedance
    modal_capacitance : (N,) eigenvalues Lambda_k of C (F/m), descending
    modal_capacitance_error : (N,) bound on the error of each Lambda_k (F/m): the Frobenius norm of
                        the entrywise error of C (Weyl's inequality for symmetric matrices)
    modal_labels      : names of the TEM modes in the ModeSet, in modal order: ('TEM',) for one
                        conductor, ('TEM odd', 'TEM even') (or the reverse) for a symmetric pair,
                        else ('TEM1', 'TEM2', ...)
    symmetric_pair    : True for two conductors with C_11 = C_22 within their errors
    """

    capacitance: np.ndarray
    capacitance_error: np.ndarray
    inductance: np.ndarray
    inductance_error: np.ndarray
    eps_r: float
    mu_r: float
    centroids: np.ndarray
    modal_voltages: np.ndarray
    modal_capacitance: np.ndarray
    modal_capacitance_error: np.ndarray
    modal_labels: tuple
    symmetric_pair: bool

    @property
    def n_conductors(self):
        """Number of inner conductors N (the outer wall is the ground)."""
        return int(self.capacitance.shape[0])

    @property
    def velocity(self):
        """Speed of every TEM mode, v = c0 / sqrt(eps_r mu_r) (m/s)."""
        return C0 / math.sqrt(self.eps_r * self.mu_r)


def conductor_groups(mesh, section=None):
    """Boundary facets grouped by conductor: [outer wall, inner 1, ..., inner N] and the (N, 2)
    centroids of the inner ones (see the module docstring for the order)."""
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components

    bf = mesh.boundary_facets()
    fv = mesh.facets[:, bf]
    nv = mesh.t.max() + 1
    g = coo_matrix((np.ones(fv.shape[1]), (fv[0], fv[1])), shape=(nv, nv))
    _, lab = connected_components(g, directed=False)
    comp = lab[fv[0]]
    groups = [bf[comp == c] for c in np.unique(comp)]
    pts = mesh.doflocs
    ext = [np.ptp(pts[:, mesh.facets[:, gr].ravel()], axis=1).max() for gr in groups]
    order = np.argsort(ext, kind="stable")[::-1]
    outer, inner = groups[order[0]], [groups[i] for i in order[1:]]

    def centroid(gr):
        a, b = pts[:, mesh.facets[0, gr]], pts[:, mesh.facets[1, gr]]
        w = np.hypot(*(b - a))
        return (0.5 * (a + b)) @ w / np.sum(w)

    cen = [centroid(gr) for gr in inner]
    if section is not None and len(section.holes) == len(inner):
        outlines = [h.polyline(64) for h in section.holes]
        key = []
        for gr in inner:
            v = pts[:, mesh.facets[0, gr][:: max(1, len(gr) // 16)]]
            d = [np.mean(np.min(np.hypot(v[0][:, None] - o[0][None, :], v[1][:, None] - o[1][None, :]), axis=1))
                 for o in outlines]
            key.append(int(np.argmin(d)))
        if sorted(key) != list(range(len(inner))):
            raise RuntimeError("could not match the mesh's conductors to the section's holes")
    else:
        size = float(np.max(np.ptp(pts, axis=1)))
        key = [(round(float(c[0]) / size, 6), round(float(c[1]) / size, 6)) for c in cen]
    perm = sorted(range(len(inner)), key=lambda i: key[i])
    return [outer] + [inner[i] for i in perm], np.array([cen[i] for i in perm]).reshape(-1, 2)


def conductor_potentials(disc, section=None):
    """(potentials (n_dofs, N), gram (N, N), centroids (N, 2)) on one discretisation: phi_i = 1 on
    inner conductor i, 0 on the other conductors, harmonic between (one sparse factorisation of
    the interior stiffness matrix for all N, by the backend the eigen step uses: the Dirichlet
    stiffness matrix is SPD), and gram_ij = int grad phi_i . grad phi_j dA."""
    basis = disc.basis
    groups, centroids = conductor_groups(basis.mesh, section)
    n = len(groups) - 1
    interior = disc.interior()
    K = disc.K.tocsr()
    Phi = np.zeros((disc.n_dofs, n))
    for i in range(n):
        Phi[np.unique(basis.get_dofs(facets=groups[i + 1]).flatten()), i] = 1.0
    if n:
        boundary = disc.boundary
        lu = factorize(K[interior][:, interior].tocsr(), spd=True)
        Phi[interior] = np.asarray(lu.solve(-(K[interior][:, boundary] @ Phi[boundary]))).reshape(-1, n)
        lu.release()
    G = Phi.T @ (K @ Phi)
    return Phi, 0.5 * (G + G.T), centroids


def gram_error(g_fine, g_coarse, divisor, safety, n_dofs):
    """Estimated error of the fine gram matrix from a coarser one: safety |g_c - g_f| / divisor
    (divisor s^rate - 1 for Richardson between two meshes, 1 for order p - 1 on the same mesh),
    at least a round-off floor 2 N_dofs 2.2e-16 |g|, and for every entry at least the largest
    relative error of a diagonal entry times sqrt(g_ii g_jj) (an off-diagonal difference can
    vanish by chance when the two meshes' errors cross)."""
    d = np.sqrt(np.abs(np.diag(g_fine)))
    err = safety * np.abs(g_coarse - g_fine) / divisor
    err = np.maximum(err, 2 * n_dofs * 2.2e-16 * np.abs(g_fine))
    worst = float(np.max(np.diag(err) / d ** 2)) if d.size else 0.0
    return np.maximum(err, worst * np.outer(d, d))


def relative_error(statics):
    """The largest entry of |error of gram_ij| / sqrt(gram_ii gram_jj): the relative accuracy of
    the capacitance matrix that the accuracy loop compares with the asked accuracy."""
    if statics is None or statics.gram.size == 0:
        return 0.0
    d = np.sqrt(np.abs(np.diag(statics.gram)))
    return float(np.max(statics.gram_error / np.outer(d, d)))


def modal_basis(C):
    """(Lambda descending, T) with C T = T diag(Lambda), T orthogonal, each column signed so that
    its first component not zero (|t| > 1e-9) is positive."""
    lam, T = np.linalg.eigh(0.5 * (C + C.T))
    idx = np.argsort(lam)[::-1]
    lam, T = lam[idx], T[:, idx]
    for k in range(T.shape[1]):
        first = np.flatnonzero(np.abs(T[:, k]) > 1e-9)
        if first.size and T[first[0], k] < 0:
            T[:, k] = -T[:, k]
    return lam, T


def line_parameters(statics, eps_r, mu_r):
    """:class:`LineParameters` from the conductor potentials of a solve and the fill."""
    if statics is None or statics.gram.size == 0:
        return None
    eps, mu = EPS0 * float(eps_r), MU0 * float(mu_r)
    C = eps * statics.gram
    dC = eps * statics.gram_error
    try:
        Cinv = np.linalg.inv(C)
    except np.linalg.LinAlgError:
        raise FemodesError("the capacitance matrix is singular: an inner conductor may touch the outer wall") from None
    L = mu * eps * Cinv
    L = 0.5 * (L + L.T)
    A = np.abs(Cinv)
    dL = mu * eps * (A @ dC @ A)
    lam, T = modal_basis(C)
    dlam = np.full(lam.shape, float(np.linalg.norm(dC)))
    n = C.shape[0]
    symmetric = n == 2 and abs(C[0, 0] - C[1, 1]) <= dC[0, 0] + dC[1, 1]
    if n == 1:
        labels = ("TEM",)
    elif symmetric:
        labels = tuple("TEM even" if T[0, k] * T[1, k] > 0 else "TEM odd" for k in range(2))
    else:
        labels = tuple(f"TEM{k + 1}" for k in range(n))
    arrays = [np.array(a, dtype=float) for a in (C, dC, L, dL, statics.centroids, T, lam, dlam)]
    for a in arrays:
        a.setflags(write=False)
    C, dC, L, dL, cen, T, lam, dlam = arrays
    return LineParameters(C, dC, L, dL, float(eps_r), float(mu_r), cen, T, lam, dlam, labels, bool(symmetric))
