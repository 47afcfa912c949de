"""The vectorised assembly (femodes.solvers.discretise) against scikit-fem's own quadrature.

On a straight triangle the reference-element matrices mapped by the element's affine Jacobian are
exact (K_e = |det J| J^-1 J^-T : S_ref, M_e = |det J| M_ref: the change of variables of the
integrals, common practice); curved triangles keep scikit-fem's isoparametric quadrature.  The two
assemblies must agree to round-off on straight and on curved meshes, for every element order.
"""

import math

import numpy as np
import pytest

import femodes
from femodes.geometry.mesh import mesh_section
from femodes.solvers.discretise import _affine, discretise, discretise_skfem
from femodes.solvers.eigen import lowest_eigenpairs, restrict

SECTIONS = {
    "rectangle (straight)": (femodes.rectangle(22.86e-3, 10.16e-3), 2e-3),
    "circle (curved)": (femodes.circle(10e-3), 2e-3),
    "coaxial (curved, two walls)": (femodes.coaxial(10e-3, 4e-3), 1.5e-3),
}


def _rel(A, B):
    return abs(A - B).max() / abs(B).max()


@pytest.mark.parametrize("name", list(SECTIONS))
@pytest.mark.parametrize("order", [1, 2, 3, 4])
def test_assembly_equals_scikit_fem(name, order):
    sec, h = SECTIONS[name]
    skm = mesh_section(sec, h, order=order, graded=False).to_skfem(order=max(2, order))
    straight = _affine(skm)[1]
    if "curved" in name:
        assert 0 < straight.sum() < straight.size  # both paths are exercised
    else:
        assert straight.all()
    d = discretise(skm, order)
    K, M, boundary = discretise_skfem(skm, order)
    assert _rel(d.K, K) < 1e-12 and _rel(d.M, M) < 1e-12
    np.testing.assert_array_equal(d.boundary, boundary)
    assert d.basis.N == d.n_dofs and np.array_equal(d.basis.element_dofs, d.make_basis().element_dofs)


def test_assembled_pencil_gives_the_circle_tm01_cutoff():
    # TM01 of a circular guide: kc a = j01 = 2.404825557695773 (Pozar sec. 3.4; scipy.special.jn_zeros)
    a = 10e-3
    skm = mesh_section(femodes.circle(a), 1.5e-3, order=4).to_skfem(order=4)
    d = discretise(skm, 4)
    idx = d.interior()
    lam, _, _ = lowest_eigenpairs(restrict(d.K, idx), restrict(d.M, idx), 1, -1.0 / a ** 2)
    assert abs(math.sqrt(lam[0]) * a - 2.404825557695773) < 1e-8
