"""Cross-section construction and validation (geometry facts are exact or common practice)."""

import math

import numpy as np
import pytest

import femodes as fm
from femodes import FemodesError


def test_rectangle_area_and_corners():
    s = fm.rectangle(22.86e-3, 10.16e-3)
    assert s.area == pytest.approx(22.86e-3 * 10.16e-3, rel=1e-12)  # exact: width x height
    assert len(s.corners()) == 4 and not s.reentrant_corners()
    assert s.is_symmetric("x") and s.is_symmetric("y")


def test_rounded_rectangle_area():
    a, b, r = 20e-3, 10e-3, 2e-3
    s = fm.rectangle(a, b, corner_radius=r)
    # exact: each rounded corner removes r^2 (1 - pi/4)
    assert s.area == pytest.approx(a * b - 4 * r * r * (1 - math.pi / 4), rel=1e-6)
    assert not s.corners()  # tangent-continuous outline: no corners left


def test_circle_and_ellipse_area():
    assert fm.circle(3e-3).area == pytest.approx(math.pi * 9e-6, rel=1e-6)
    assert fm.ellipse(4e-3, 2e-3).area == pytest.approx(math.pi * 8e-6, rel=1e-6)


def test_l_shape_reentrant_corner():
    s = fm.l_shape(2.0, 2.0, 1.0, 1.0)
    re = s.reentrant_corners()
    assert len(re) == 1
    assert re[0].angle == pytest.approx(1.5 * math.pi)  # 270 degrees
    assert re[0].exponent == pytest.approx(2 / 3)  # pi / (3 pi / 2)
    assert re[0].point == pytest.approx((1.0, 1.0))


def test_double_ridge_has_four_reentrant_corners():
    s = fm.double_ridge(40e-3, 20e-3, 10e-3, 4e-3)
    assert len(s.reentrant_corners()) == 4
    assert s.is_symmetric("x") and s.is_symmetric("y")
    one = fm.single_ridge(40e-3, 20e-3, 10e-3, 4e-3)
    assert len(one.reentrant_corners()) == 2
    assert one.is_symmetric("x") and not one.is_symmetric("y")


def test_coax_is_multiply_connected():
    s = fm.coaxial(5e-3, 2e-3)
    assert s.n_conductors == 2
    assert s.area == pytest.approx(math.pi * (25e-6 - 4e-6), rel=1e-6)
    off = fm.coaxial(5e-3, 2e-3, offset=(1e-3, 0))
    assert not off.is_symmetric("x") and off.is_symmetric("y")


def test_sector_apex_corner():
    s = fm.sector(1.0, 1.5 * math.pi)
    apex = [c for c in s.corners() if c.point == pytest.approx((0.0, 0.0), abs=1e-12)]
    assert apex and apex[0].angle == pytest.approx(1.5 * math.pi)
    assert s.area == pytest.approx(0.5 * 1.5 * math.pi, rel=1e-6)  # r^2 angle / 2


def test_rigid_motions_keep_area_and_flip_symmetry():
    s = fm.polygon([(0, 0), (3, 0), (3, 1), (1, 1), (1, 2), (0, 2)])
    for t in (s.translated(0.3, -0.2), s.rotated(0.7), s.mirrored("x"), s.mirrored("y")):
        assert t.area == pytest.approx(s.area, rel=1e-9)
        assert len(t.reentrant_corners()) == 1
    assert s.scaled(2.0).area == pytest.approx(4 * s.area, rel=1e-9)


@pytest.mark.parametrize("make, words", [
    (lambda: fm.rectangle(-1, 1), "width"),
    (lambda: fm.rectangle(1, 1, corner_radius=0.6), "corner_radius"),
    (lambda: fm.circle(0), "radius"),
    (lambda: fm.coaxial(1, 2), "smaller"),
    (lambda: fm.coaxial(2, 1, offset=(1.5, 0)), "touches"),
    (lambda: fm.double_ridge(10, 5, 12, 1), "ridge_width"),
    (lambda: fm.double_ridge(10, 5, 3, 6), "gap"),
    (lambda: fm.sector(1, 7.0), "angle"),
    (lambda: fm.polygon([(0, 0), (1, 1), (2, 2)]), "zero area"),
    (lambda: fm.polygon([(0, 0), (1, 1), (1, 0), (0, 1)]), "crosses itself"),
    (lambda: fm.polygon([(0, 0), (1, 0)]), "at least 3"),
    (lambda: fm.polygon([(0, 0), (2, 0), (2, 2), (0, 2)], holes=[[(1, 1), (3, 1), (3, 1.5)]]), "hole"),
    (lambda: fm.polygon([(0, 0), (2, 0), (2, 2), (0, 2)],
                        holes=[[(0.2, 0.2), (1.2, 0.2), (1.2, 1.2)], [(0.5, 0.3), (1.5, 0.3), (1.5, 1.5)]]), "overlap"),
    (lambda: fm.rectangle("wide", 1), "number"),
])
def test_bad_geometry_is_refused_with_a_message(make, words):
    with pytest.raises(FemodesError) as exc:
        make()
    assert words in str(exc.value)


def test_polygon_with_circular_hole():
    hole = fm.circle(0.2).translated(0.5, 0.5)
    s = fm.polygon([(0, 0), (1, 0), (1, 1), (0, 1)], holes=[hole])
    assert s.n_conductors == 2
    assert s.area == pytest.approx(1 - math.pi * 0.04, rel=1e-6)
    loops = np.hstack([l.polyline(8) for l in s.loops])
    assert np.all(np.isfinite(loops))


def test_material_regions_later_wins_and_moves_with_the_section():
    g = fm.rectangle(22.86e-3, 10.16e-3)
    slab = fm.rectangle(22.86e-3, 5.08e-3).translated(0, -2.54e-3)
    s = g.with_material(slab, eps_r=2.25).with_material(fm.circle(1e-3).translated(0, -2e-3), eps_r=9.8)
    eps, mu = s.material_at([0.0, 5e-3, 0.0], [-2e-3, -4e-3, 4e-3])
    assert list(eps) == [9.8, 2.25, 1.0] and list(mu) == [1.0, 1.0, 1.0]
    assert s.is_symmetric("x") and not s.is_symmetric("y")  # the slab breaks the y mirror
    moved = s.translated(1e-3, 0)
    assert moved.material_at([1e-3], [-2e-3])[0][0] == 9.8
    assert s.scaled(2).material_at([0.0], [-4e-3])[0][0] == 9.8
    assert "eps_r = 2.25" in s.describe()


@pytest.mark.parametrize("kwargs, words", [
    ({"eps_r": -1}, "eps_r"), ({"eps_r": "glass"}, "eps_r"), ({"mu_r": 0}, "mu_r"),
])
def test_bad_materials_are_refused(kwargs, words):
    with pytest.raises(FemodesError, match=words):
        fm.rectangle(1, 1).with_material(fm.circle(0.1), **kwargs)


def test_material_region_outside_the_guide_is_refused():
    with pytest.raises(FemodesError, match="outside the guide"):
        fm.rectangle(1, 1).with_material(fm.circle(0.1).translated(3, 3), eps_r=4)
