"""Discretisation: mesh -> sparse matrices (scalar Helmholtz, homogeneous fill).

For a guide filled with one material, the longitudinal field psi (E_z for TM, H_z for TE) obeys

    -laplace_t psi = kc^2 psi   on the cross-section,
    psi = 0 on PEC walls (TM, Dirichlet),   d psi / dn = 0 on PEC walls (TE, Neumann).

The weak form  a(psi, v) = int grad psi . grad v dA = kc^2 int psi v dA  is discretised with
Lagrange elements of order 1 to 4 (scikit-fem ElementTriP1..P4) on straight or curved
(quadratic-geometry) triangles, giving the symmetric pencil K x = kc^2 M x.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from femodes.errors import FemodesError

__all__ = ["Discretisation", "discretise", "ELEMENT_ORDERS"]

ELEMENT_ORDERS = (1, 2, 3, 4)


@dataclass(frozen=True, eq=False)
class Discretisation:
    """Assembled matrices of one mesh and one element order.

    K, M      : stiffness and mass matrices over all dofs (CSR)
    boundary  : indices of all dofs on the boundary (vertex, edge and face dofs of wall facets)
    basis     : the scikit-fem CellBasis (for field evaluation)
    order     : element order
    """

    K: object
    M: object
    boundary: np.ndarray
    basis: object
    order: int

    @property
    def n_dofs(self):
        return self.K.shape[0]

    def interior(self):
        """Dof indices that are not on the boundary (the TM unknowns)."""
        mask = np.ones(self.n_dofs, dtype=bool)
        mask[self.boundary] = False
        return np.flatnonzero(mask)


def _element(order):
    import skfem

    try:
        return {1: skfem.ElementTriP1, 2: skfem.ElementTriP2, 3: skfem.ElementTriP3,
                4: skfem.ElementTriP4}[int(order)]()
    except (KeyError, ValueError, TypeError):
        raise FemodesError(f"element order must be one of {ELEMENT_ORDERS}, got {order!r}") from None


def discretise(skmesh, order: int) -> Discretisation:
    """Assemble K and M for Lagrange elements of ``order`` on a scikit-fem triangle mesh.

        K_ij = int grad phi_i . grad phi_j dA,    M_ij = int phi_i phi_j dA

    The basis values and gradients at the quadrature points come from scikit-fem's CellBasis;
    both matrices are then summed in one pass (a tensor contraction over the element blocks, far
    cheaper than one form evaluation per pair of local basis functions).  The quadrature is exact
    for the integrands on straight triangles (degree 2 order) and two degrees higher on curved
    ones (the Jacobian of the isoparametric map varies).
    """
    from scipy.sparse import coo_matrix
    from skfem import Basis

    elem = _element(order)
    curved = not type(skmesh).__name__ == "MeshTri1"
    intorder = 2 * int(order) + (2 if curved else 0)
    basis = Basis(skmesh, elem, intorder=intorder)
    phi = np.array([np.asarray(b[0]) for b in basis.basis])       # (n_local, n_elements, n_qp)
    dphi = np.array([b[0].grad for b in basis.basis])       # (n_local, 2, n_elements, n_qp)
    dx = basis.dx                                           # (n_elements, n_qp) weights x |J|
    Ke = np.einsum("ikeq,jkeq,eq->ije", dphi, dphi, dx, optimize=True)
    Me = np.einsum("ieq,jeq,eq->ije", phi, phi, dx, optimize=True)
    dofs = basis.element_dofs                               # (n_local, n_elements)
    nl = dofs.shape[0]
    rows = np.broadcast_to(dofs[:, None, :], (nl, nl, dofs.shape[1])).ravel()
    cols = np.broadcast_to(dofs[None, :, :], (nl, nl, dofs.shape[1])).ravel()
    shape = (basis.N, basis.N)
    K = coo_matrix((Ke.ravel(), (rows, cols)), shape=shape).tocsr()
    M = coo_matrix((Me.ravel(), (rows, cols)), shape=shape).tocsr()
    boundary = basis.get_dofs().flatten()
    return Discretisation(K, M, np.unique(boundary), basis, int(order))
