"""Corner exponents, grading toward every rate-limiting corner, and honest error bars there.

At a wall corner of interior angle alpha the Dirichlet (TM: E_z) and Neumann (TE: H_z) solutions
expand in r^(k pi / alpha) (Grisvard, "Elliptic problems in nonsmooth domains", 1985, sections
4.4 and 5.1, from memory); a term is singular unless k pi / alpha is whole, and then caps the
eigenvalue convergence of order-p elements at h^(2 pi / alpha) (Strang & Fix, "An analysis of the
finite element method", 1973, ch. 8, from memory).  The references below never come from the
finite-element code: fractional-order Bessel zeros (femodes.reference.sector_modes, scipy.special
+ brentq) and Lamé's closed forms for the triangles (femodes.reference).
"""

import math

import numpy as np
import pytest

import femodes as fm
from femodes import reference as ref
from femodes.geometry.loops import Corner
from femodes.geometry.mesh import mesh_section
from femodes.solvers.scalar import _observed_rate

ACCURACIES = (1e-4, 1e-6, 1e-8)


def _equilateral(side):
    return fm.polygon([(0.0, 0.0), (side, 0.0), (0.5 * side, 0.5 * math.sqrt(3.0) * side)])


def _right_isosceles(leg):
    return fm.polygon([(0.0, 0.0), (leg, 0.0), (0.0, leg)])


def _check_family(section, refs, family, n, accuracy):
    """Solve one family; every mode's true error within its reported error and within the asked
    accuracy.  Returns (unknowns, true / reported errors)."""
    modes = fm.solve(section, modes=n, family=family, accuracy=accuracy)
    kc = np.array([m.kc for m in modes])
    truth = np.array([r.kc for r in refs if r.family == family][: len(modes)])
    assert len(truth) == len(modes)
    err = np.abs(kc - truth) / truth
    est = np.array([m.rel_error for m in modes])
    assert np.all(err <= est), f"{family} at {accuracy:.0e}: true {err} above reported {est}"
    assert np.all(err <= accuracy), f"{family} at {accuracy:.0e}: true {err} above asked accuracy"
    return modes.info["n_dofs"], err / est


# ---------------------------------------------------------------- the exponents themselves

@pytest.mark.parametrize("degrees, first, limits", [
    # pi / alpha: 4/3 at 135, 3/2 at 120, 6/5 at 150, 2/3 at 270 degrees; whole at 90, 60, 45
    (135, 4 / 3, True), (120, 1.5, True), (150, 1.2, True), (270, 2 / 3, True),
    (90, math.inf, False), (60, math.inf, False), (45, math.inf, False),
    # 50 degrees: 3.6 < 4 limits order 4, not order 3
    (50, 3.6, True),
])
def test_corner_exponents(degrees, first, limits):
    # lambda_k = k pi / alpha for both problems (Grisvard, sections 4.4 and 5.1, from memory)
    c = Corner((0.0, 0.0), math.radians(degrees))
    assert c.exponents(10.0) == pytest.approx([k * 180.0 / degrees for k in range(1, int(10 * degrees / 180) + 1)])
    assert c.singular_exponent == pytest.approx(first) if math.isfinite(first) else c.singular_exponent == math.inf
    assert c.limits_rate(4) is limits
    assert c.limits_rate(3) is (first < 3)


def test_which_corners_of_a_section_limit_the_rate():
    # a regular octagon: eight 135-degree corners (pi / alpha = 4/3); the triangles: 60, 90,
    # 45 degrees (whole); a 135-degree sector: the apex only (the arc meets the radii at 90)
    octagon = fm.polygon([(math.cos(t), math.sin(t)) for t in np.arange(8) * math.pi / 4])
    assert len(octagon.rate_limiting_corners(4)) == 8
    assert all(c.singular_exponent == pytest.approx(4 / 3) for c in octagon.rate_limiting_corners(4))
    assert octagon.rate_limiting_corners(1) == []  # 4/3 > 1: no limit for linear elements
    assert _equilateral(1.0).rate_limiting_corners(4) == []
    assert _right_isosceles(1.0).rate_limiting_corners(4) == []
    apex = fm.sector(1.0, 0.75 * math.pi).rate_limiting_corners(4)
    assert [c.point for c in apex] == [pytest.approx((0.0, 0.0), abs=1e-12)]


def test_mesh_is_graded_toward_a_convex_135_degree_corner():
    # the smallest element at the apex shrinks by the grading law h = h_max (r / L)^(1 - lambda / (p + 1))
    s = fm.sector(1.0, 0.75 * math.pi)

    def smallest_at_apex(all_corners):
        m = mesh_section(s, 0.2, order=4, all_corners=all_corners)
        p = m.points[:, m.triangles[:3]]
        at = np.any(np.hypot(p[0], p[1]) < 1e-12, axis=0)
        edge = np.hypot(p[0] - np.roll(p[0], 1, axis=0), p[1] - np.roll(p[1], 1, axis=0)).max(axis=0)
        return edge[at].max()

    assert smallest_at_apex(True) < 0.2 * smallest_at_apex(False)


def test_observed_rate_from_three_meshes():
    # lam(N) = lam* + C N^(-q/2) exactly: the rate comes back (Richardson, common practice)
    dofs = (1000.0, 1800.0, 4000.0)
    for q in (2.0, 8 / 3, 5.0):
        vals = [1.0 + 3.0 * n ** (-q / 2) for n in dofs]
        assert _observed_rate(dofs, vals, 8.0, 0.0) == pytest.approx(q, rel=1e-6)
        # never faster than the model
        assert _observed_rate(dofs, vals, 0.9 * q, 0.0) == pytest.approx(0.9 * q)
    # not monotone, or below the noise: the model's rate
    assert _observed_rate(dofs, (1.0, 0.9, 0.95), 8.0, 0.0) == 8.0
    assert _observed_rate(dofs, (1.0, 1.0 - 1e-14, 1.0 - 1.5e-14), 8.0, 1e-12) == 8.0


# ---------------------------------------------------------------- against outside references

@pytest.mark.parametrize("degrees", [135, 120, 150, 270])
def test_sector_error_bars_hold_at_every_accuracy(degrees):
    # J_nu(kc R) = 0 (TM) and J_nu'(kc R) = 0 (TE), nu = k pi / alpha, fractional orders
    # (femodes.reference.sector_modes: scipy.special.jv / jvp + brentq)
    angle = math.radians(degrees)
    s = fm.sector(1.0, angle)
    refs = ref.sector_modes(1.0, angle, 30)
    for family in ("TM", "TE"):
        dofs = [_check_family(s, refs, family, 4, acc)[0] for acc in ACCURACIES]
        # a finer asked accuracy never stops on a coarser mesh
        assert dofs == sorted(dofs), f"{family}: unknowns {dofs} for accuracies {ACCURACIES}"


@pytest.mark.parametrize("accuracy", [1e-5, 1e-7])
def test_sector_135_both_families_together(accuracy):
    # the default solve (TE and TM mixed); the 135-degree chamfer angle, pi / alpha = 4/3
    angle = 0.75 * math.pi
    modes = fm.solve(fm.sector(2e-2, angle), modes=6, accuracy=accuracy)
    refs = ref.sector_modes(2e-2, angle, 6)
    kc = np.array([m.kc for m in modes])
    truth = np.array([r.kc for r in refs])
    assert [m.family for m in modes] == [r.family for r in refs]
    err = np.abs(kc - truth) / truth
    est = np.array([m.rel_error for m in modes])
    assert np.all(err <= est) and np.all(err <= accuracy), (err, est)


@pytest.mark.parametrize("make, refs", [
    # Lamé / Pinsky (SIAM J. Math. Anal. 1980): kc^2 = 16 pi^2 (m^2 + mn + n^2) / (9 s^2)
    (lambda: _equilateral(1.0), lambda: ref.equilateral_triangle_modes(1.0, 30)),
    # the square's modes odd / even about the diagonal: kc^2 = pi^2 (m^2 + n^2) / s^2
    (lambda: _right_isosceles(1.0), lambda: ref.right_isosceles_triangle_modes(1.0, 30)),
], ids=["equilateral", "right-isosceles"])
def test_triangles_keep_their_fast_rate(make, refs):
    s, r = make(), refs()
    for family in ("TM", "TE"):
        dofs = [_check_family(s, r, family, 5, acc)[0] for acc in ACCURACIES]
        # corners of 60, 90, 45 degrees are regular: no grading, the full rate h^(2p); at 1e-8
        # the order-4 solve needs a few thousand unknowns (a corner wrongly taken as singular
        # would grade the mesh and lower the assumed rate: several times more)
        assert dofs[-1] < 12000, f"{family}: {dofs} unknowns"
