"""Meshing: grading, curved edges, determinism (facts are geometric, no published numbers)."""

import math

import numpy as np
import pytest

import femodes as fm
from femodes.geometry.mesh import mesh_section


def _sizes(p):
    """sqrt(2 x area) of each triangle, p of shape (2, 3, n)."""
    a, b = p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]
    return np.sqrt(np.abs(a[0] * b[1] - a[1] * b[0]))


def test_meshing_is_deterministic():
    s = fm.double_ridge(40e-3, 20e-3, 10e-3, 4e-3, ridge_corner_radius=0.5e-3)
    a = mesh_section(s, 4e-3, order=4)
    b = mesh_section(s, 4e-3, order=4)
    assert np.array_equal(a.points, b.points) and np.array_equal(a.triangles, b.triangles)
    assert np.array_equal(a.curved_midpoints, b.curved_midpoints)


def test_grading_refines_toward_the_reentrant_corner():
    m = mesh_section(fm.l_shape(2.0, 2.0, 1.0, 1.0), 0.4, order=4)
    p = m.points[:, m.triangles]
    centre = p.mean(axis=1)
    size = _sizes(p)
    r = np.hypot(centre[0] - 1.0, centre[1] - 1.0)  # the 270-degree corner sits at (1, 1)
    assert size[r < 0.01].max() < 0.05 * size[r > 0.5].max()
    assert size.min() < 1e-4


def test_uniform_mesh_when_not_graded():
    m = mesh_section(fm.l_shape(2.0, 2.0, 1.0, 1.0), 0.2, order=1, curved=False, graded=False)
    size = _sizes(m.points[:, m.triangles])
    assert size.max() / size.min() < 4


def test_curved_nodes_lie_on_the_circle():
    m = mesh_section(fm.circle(2.0), 0.5, order=4)
    assert m.is_curved
    r = np.hypot(*m.curved_midpoints)
    assert np.allclose(r, 2.0, rtol=1e-12)
    sk = m.to_skfem(order=4)  # quartic geometry: every boundary node on the true circle
    bd = sk.dofs.get_facet_dofs(sk.boundary_facets()).flatten()
    assert np.allclose(np.hypot(*sk.doflocs[:, bd]), 2.0, rtol=1e-12)
    # the quartic boundary encloses the disk's area to high order
    from skfem import Basis, ElementTriP4, Functional
    one = Functional(lambda w: 1.0 + 0 * w.x[0])
    area = one.assemble(Basis(sk, ElementTriP4(), intorder=8))
    assert area == pytest.approx(math.pi * 4.0, rel=1e-7)


def test_mesh_file_written_and_read(tmp_path):
    m = mesh_section(fm.coaxial(2.0, 0.7, offset=(0.3, 0.0)), 0.4, order=2)
    fm.write_mesh(m, tmp_path / "c.msh")
    back = fm.read_mesh(str(tmp_path / "c.msh"))
    assert back.n_triangles == m.n_triangles and back.is_curved
    with pytest.raises(fm.FemodesError, match="no triangles"):
        import meshio
        meshio.write(str(tmp_path / "l.vtu"), meshio.Mesh(np.zeros((2, 3)), [("line", np.array([[0, 1]]))]))
        fm.read_mesh(str(tmp_path / "l.vtu"))


def test_mesh_conforms_to_material_interfaces():
    g = fm.rectangle(22.86e-3, 10.16e-3)
    s = g.with_material(fm.rectangle(22.86e-3, 3e-3).translated(0, -3.58e-3), eps_r=2.25)
    m = mesh_section(s, 2e-3, order=3)
    p = m.points[:, m.triangles]
    y_face = -5.08e-3 + 3e-3
    # every triangle lies on one side of the slab face (the face is made of mesh edges)
    assert np.all(p[1][:, m.regions == 1] <= y_face + 1e-12)
    assert np.all(p[1][:, m.regions == 0] >= y_face - 1e-12)
    assert abs(np.sum(_sizes(p)[m.regions == 1] ** 2) / 2 - 22.86e-3 * 3e-3) < 1e-12


def test_curved_material_interface_nodes_on_the_arc():
    s = fm.rectangle(20e-3, 10e-3).with_material(fm.circle(2e-3).translated(3e-3, 0), eps_r=6.0)
    m = mesh_section(s, 2e-3, order=4)
    on = np.abs(np.hypot(m.curved_midpoints[0] - 3e-3, m.curved_midpoints[1]) - 2e-3) < 1e-12
    assert on.sum() >= 8 and np.all(m.edge_curve[on] >= 0)
    c = m.points[:, m.triangles].mean(axis=1)
    inside = np.hypot(c[0] - 3e-3, c[1]) < 2e-3
    assert np.array_equal(inside, m.regions == 1)


@pytest.mark.parametrize("region, r_in, r_out", [
    (fm.circle(4e-3), 2e-3, 4e-3),         # a dielectric disc that also covers the inner conductor
    (fm.coaxial(5e-3, 3e-3), 3e-3, 5e-3),  # a dielectric ring with a hole of its own
])
def test_material_rings_in_a_coaxial_guide_are_meshed_exactly(region, r_in, r_out):
    # the area of an annulus, pi (r_out^2 - r_in^2) (common practice), measured with the
    # isoparametric (cubic) elements, to their geometry error; before the holes were cut as faces of their own, the
    # disc case gave a mesh that ignored the disc's boundary
    from skfem import Basis, ElementTriP0

    s = fm.coaxial(7e-3, 2e-3).with_material(region, eps_r=2.25)
    m = mesh_section(s, 1e-3, order=3, graded=False)
    assert np.sum(np.abs(np.hypot(*m.points) - r_out) < 1e-12) >= 8  # vertices on the interface
    dx = Basis(m.to_skfem(3), ElementTriP0()).dx.sum(axis=1)
    assert dx[m.regions == 1].sum() == pytest.approx(math.pi * (r_out ** 2 - r_in ** 2), rel=1e-5)
    assert dx.sum() == pytest.approx(math.pi * (7e-3 ** 2 - 2e-3 ** 2), rel=1e-5)
