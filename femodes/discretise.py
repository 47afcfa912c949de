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

from .errors import FemodesError

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

    The quadrature is exact for the integrands on straight triangles (degree 2 order) and one
    degree higher on curved ones (the Jacobian of the quadratic map varies).
    """
    from skfem import Basis, BilinearForm
    from skfem.helpers import dot, grad

    elem = _element(order)
    curved = not type(skmesh).__name__ == "MeshTri1"
    intorder = 2 * int(order) + (2 if curved else 0)
    basis = Basis(skmesh, elem, intorder=intorder)

    @BilinearForm
    def stiffness(u, v, w):
        return dot(grad(u), grad(v))

    @BilinearForm
    def mass(u, v, w):
        return u * v

    K = stiffness.assemble(basis).tocsr()
    M = mass.assemble(basis).tocsr()
    boundary = basis.get_dofs().flatten()
    return Discretisation(K, M, np.unique(boundary), basis, int(order))
