"""The scalar solver against closed forms, special-function roots and published benchmarks.

Every expected number comes from femodes.reference (which never imports the finite-element code)
or from the source named beside it.
"""

import math
from collections import Counter

import numpy as np
import pytest

import femodes as fm
from femodes import FemodesError
from femodes import reference as ref

C0 = 299792458.0  # m/s, exact (SI definition)


def _groups(values, rtol):
    """Indices grouped where consecutive sorted values agree within rtol."""
    out = []
    for i, v in enumerate(values):
        if out and abs(v - values[out[-1][-1]]) <= rtol * max(abs(v), 1e-300):
            out[-1].append(i)
        else:
            out.append([i])
    return out


def check_against(modes, refs, accuracy, labels=True):
    """Cutoffs within the asked accuracy, error estimates not below the true error, and labels
    equal as multisets within each group of equal reference cutoff."""
    kc = np.array([m.kc for m in modes])
    rk = np.array([r.kc for r in refs[: len(modes)]])
    err = np.abs(kc - rk) / np.where(rk > 0, rk, 1.0)
    est = np.array([m.rel_error for m in modes])
    assert np.all(err <= accuracy), f"errors {err} exceed {accuracy}"
    assert np.all(est >= err - 1e-15), f"estimates {est} below true errors {err}"
    if labels:
        for g in _groups(list(rk), 1e-9):
            if g[-1] == len(modes) - 1 and len(g) > 1:
                continue  # a degenerate group cut by the mode count
            assert Counter(modes[i].label for i in g) == Counter(refs[i].label for i in g)
    return err, est


# ---------------------------------------------------------------- rectangles

@pytest.fixture(scope="module")
def wr90():
    # EIA WR-90 inner dimensions 22.86 mm x 10.16 mm
    return fm.solve(fm.rectangle(22.86e-3, 10.16e-3), modes=10)


def test_wr90_first_ten_against_closed_form(wr90):
    # kc = sqrt((m pi / a)^2 + (n pi / b)^2): Pozar, Microwave Engineering, 4th ed., sec. 3.3
    check_against(wr90, ref.rectangle_modes(22.86e-3, 10.16e-3, 10), 1e-6)


def test_wr90_te10_cutoff_6557_MHz(wr90):
    # WR-90 TE10 cutoff 6.557 GHz (EIA standard guide, common practice figure)
    assert wr90[0].label == "TE10" and wr90[0].family == "TE"
    assert wr90[0].fc / 1e9 == pytest.approx(6.557, abs=5e-4)
    assert wr90[0].fc == pytest.approx(C0 / (2 * 22.86e-3), rel=1e-7)  # fc = c / 2a, Pozar sec. 3.3


def test_wr90_single_mode_band(wr90):
    f1, f2 = wr90.single_mode_band()
    # TE10 to TE20 (a > 2b): c/2a to c/a, Pozar sec. 3.3
    assert f1 == pytest.approx(C0 / (2 * 22.86e-3), rel=1e-6)
    assert f2 == pytest.approx(C0 / 22.86e-3, rel=1e-6)


def test_degeneracy_reported_as_groups(wr90):
    by = {m.label: m for m in wr90}
    # TE11 and TM11 share a cutoff in any rectangle (Pozar sec. 3.3)
    assert by["TM11"].index in by["TE11"].degenerate_with
    assert not by["TE10"].degenerate_with


def test_square_pair_comes_out_pure():
    modes = fm.solve(fm.rectangle(1.0, 1.0), modes=6, accuracy=1e-7)
    check_against(modes, ref.rectangle_modes(1.0, 1.0, 6), 1e-7)
    a, b = modes[0], modes[1]
    assert {a.label, b.label} == {"TE10", "TE01"}
    assert a.partner is b and b.partner is a
    # TE10: H_z ~ cos(pi x / a): odd under x -> -x about the centre, even under y -> -y
    te10 = a if a.label == "TE10" else b
    assert te10.symmetry == {"x": "odd", "y": "even"}


def test_milling_radius_moves_te10_slightly():
    # a small milling radius barely moves TE10 (common practice: <0.1% for r = a/40)
    sharp = fm.solve(fm.rectangle(22.86e-3, 10.16e-3), modes=1)[0]
    round_ = fm.solve(fm.rectangle(22.86e-3, 10.16e-3, corner_radius=0.5e-3), modes=1)[0]
    assert round_.label == sharp.label == "TE10"  # milled corners keep rectangle labels
    assert abs(round_.fc / sharp.fc - 1) < 1e-3
    assert round_.fc != pytest.approx(sharp.fc, rel=1e-8)


# ---------------------------------------------------------------- circles, coax, ellipse, sectors

@pytest.fixture(scope="module")
def disk():
    return fm.solve(fm.circle(1.0), modes=10)


def test_circle_against_bessel_zeros(disk):
    # TM_nm: J_n(kc R) = 0, TE_nm: J_n'(kc R) = 0 (scipy.special.jn_zeros / jnp_zeros)
    check_against(disk, ref.circle_modes(1.0, 10), 1e-6)


def test_circle_pairs_and_labels(disk):
    assert [m.label for m in disk[:3]] == ["TE11", "TE11", "TM01"]
    assert disk[0].partner is disk[1]
    assert disk[2].partner is None and not disk[2].degenerate_with
    # TE11 cutoff 1.841183781 / R (Abramowitz & Stegun table 9.5, first zero of J1')
    assert disk[0].kc == pytest.approx(1.8411837813406593, rel=1e-6)
    # the two TE11 members are the two orthogonal polarisations
    assert {tuple(sorted(m.symmetry.items())) for m in disk[:2]} == {
        (("x", "odd"), ("y", "even")), (("x", "even"), ("y", "odd"))}


def test_coax_tem_and_higher_modes():
    a, b = 1.0e-3, 2.3e-3
    modes = fm.solve(fm.coaxial(b, a), modes=7)
    assert modes[0].family == "TEM" and modes[0].kc == 0.0 and modes[0].label == "TEM"
    # roots of the Bessel cross-product equations (femodes.reference.coax_modes, scipy + brentq)
    check_against(modes, ref.coax_modes(a, b, 7), 1e-6)
    # rule of thumb kc(TE11) ~ 2 / (a + b) (Pozar, Microwave Engineering, sec. 3.5): within 3%
    assert modes[1].label == "TE11"
    assert modes[1].kc == pytest.approx(2 / (a + b), rel=0.03)


def test_ellipse_against_mathieu_reference():
    modes = fm.solve(fm.ellipse(1.0, 0.6), modes=6)
    check_against(modes, ref.ellipse_modes(1.0, 0.6, 6), 1e-6, labels=False)


def test_sector_270_degrees_with_singular_apex():
    angle = 1.5 * math.pi
    modes = fm.solve(fm.sector(1.0, angle), modes=6)
    # J_nu(kc R) = 0 / J_nu'(kc R) = 0 with nu = p pi / angle (femodes.reference.sector_modes)
    check_against(modes, ref.sector_modes(1.0, angle, 6), 1e-6, labels=False)


def test_annular_sector():
    modes = fm.solve(fm.sector(1.0, 0.5 * math.pi, inner_radius=0.4), modes=5)
    check_against(modes, ref.sector_modes(1.0, 0.5 * math.pi, 5, inner_radius=0.4), 1e-6, labels=False)


# ---------------------------------------------------------------- the L-shaped benchmark

L_SHAPE = [(-1, -1), (0, -1), (0, 0), (1, 0), (1, 1), (-1, 1)]  # (-1,1)^2 minus the lower-right square


@pytest.mark.parametrize("family, lam", [
    ("TM", 9.6397238440219),   # first Dirichlet eigenvalue: Fox, Henrici & Moler 1967; Trefethen & Betcke 2006
    ("TE", 1.47562182408),     # first non-zero Neumann eigenvalue: Dauge's Maxwell eigenvalue benchmark
])
def test_l_shape_first_eigenvalue_to_1e9(family, lam):
    m = fm.solve(fm.polygon(L_SHAPE), modes=1, family=family, accuracy=1e-9)[0]
    err = abs(m.kc - math.sqrt(lam)) / math.sqrt(lam)
    assert m.family == family
    assert err <= 1e-9
    assert m.rel_error >= err


def test_l_shape_neumann_sequence():
    # Dauge's benchmark: 1.47562182408, 3.53403136678, pi^2 (twice), 11.3894793979
    modes = fm.solve(fm.polygon(L_SHAPE), modes=5, family="TE", accuracy=1e-8)
    lam = np.array([m.kc ** 2 for m in modes])
    expect = np.array(ref.L_SHAPE_NEUMANN)
    assert np.all(np.abs(lam - expect) / expect < 2e-8)
    assert modes[3].index in modes[2].degenerate_with  # the pi^2 pair


# ---------------------------------------------------------------- element orders on a curved mesh

@pytest.mark.parametrize("order, tol", [(1, 3e-3), (2, 1e-5), (3, 1e-6), (4, 1e-7)])
def test_every_element_order_on_curved_disk(order, tol):
    # a guard against the vertex-order trap of curved meshes: TM01 and TE11 of the unit disk
    # against scipy.special.jn_zeros(0, 1) and jnp_zeros(1, 1)
    modes = fm.solve(fm.circle(1.0), modes=3, order=order, accuracy=tol)
    from scipy.special import jn_zeros, jnp_zeros
    assert modes[0].kc == pytest.approx(jnp_zeros(1, 1)[0], rel=tol)
    assert modes[2].kc == pytest.approx(jn_zeros(0, 1)[0], rel=tol)


# ---------------------------------------------------------------- properties

def test_cutoffs_scale_inversely_with_size():
    s = fm.double_ridge(40e-3, 20e-3, 10e-3, 4e-3)
    a = fm.solve(s, modes=3, accuracy=1e-8)
    b = fm.solve(s.scaled(2.5), modes=3, accuracy=1e-8)
    for x, y in zip(a, b):
        assert y.kc == pytest.approx(x.kc / 2.5, rel=3e-8)


@pytest.mark.parametrize("move", [
    lambda s: s.translated(0.37, -0.21), lambda s: s.rotated(0.61), lambda s: s.mirrored("x"),
    lambda s: s.mirrored("y"),
])
def test_cutoffs_invariant_under_rigid_motions(move):
    s = fm.polygon([(0, 0), (3, 0), (3, 1), (1.2, 1), (1.2, 2.1), (0, 2.1)])
    a = fm.solve(s, modes=4, accuracy=1e-8)
    b = fm.solve(move(s), modes=4, accuracy=1e-8)
    for x, y in zip(a, b):
        assert y.family == x.family
        assert y.kc == pytest.approx(x.kc, rel=3e-8)


def test_dirichlet_domain_monotonicity():
    # Dirichlet eigenvalues decrease when the domain grows (Courant & Hilbert, vol. 1, ch. VI)
    small = fm.solve(fm.polygon(L_SHAPE), modes=1, family="TM")[0]
    big = fm.solve(fm.rectangle(2.0, 2.0), modes=1, family="TM")[0]
    assert big.kc < small.kc
    assert big.kc == pytest.approx(math.pi / 2 * math.sqrt(2), rel=1e-6)  # TM11 of a 2 x 2 square


def test_ridges_lower_the_first_te_cutoff():
    # loading a rectangle with ridges lowers TE10-like cutoff (Hopfer 1955, ridge waveguide)
    plain = fm.solve(fm.rectangle(40e-3, 20e-3), modes=1)[0]
    one = fm.solve(fm.single_ridge(40e-3, 20e-3, 10e-3, 8e-3), modes=1)[0]
    two = fm.solve(fm.double_ridge(40e-3, 20e-3, 10e-3, 4e-3), modes=1)[0]
    assert two.fc < plain.fc and one.fc < plain.fc
    assert two.symmetry == {"x": "odd", "y": "even"}


def test_filling_scales_frequency_not_kc():
    a = fm.solve(fm.rectangle(22.86e-3, 10.16e-3), modes=2)
    b = fm.solve(fm.rectangle(22.86e-3, 10.16e-3), modes=2, eps_r=2.25, mu_r=1.0)
    for x, y in zip(a, b):
        assert y.kc == pytest.approx(x.kc, rel=1e-12)
        assert y.fc == pytest.approx(x.fc / 1.5, rel=1e-12)  # fc = c kc / (2 pi sqrt(eps_r mu_r))


def test_propagation_quantities_of_a_homogeneous_mode(wr90):
    m, f = wr90[0], 10e9
    k = 2 * math.pi * f / C0
    beta = math.sqrt(k * k - m.kc ** 2)
    assert m.beta(f) == pytest.approx(beta, rel=1e-12)
    assert m.guide_wavelength(f) == pytest.approx(2 * math.pi / beta, rel=1e-12)
    # v_p v_g = c^2 for an air-filled guide (Pozar sec. 3.1)
    assert m.phase_velocity(f) * m.group_velocity(f) == pytest.approx(C0 ** 2, rel=1e-12)
    ev = m.beta(5e9)
    assert isinstance(ev, complex) and ev.real == 0 and ev.imag < 0  # evanescent below cutoff


# ---------------------------------------------------------------- external meshes

def test_external_mesh_round_trip(tmp_path):
    sec = fm.rectangle(2.0, 1.0)
    mesh = fm.mesh_section(sec, 0.25, order=4)
    path = tmp_path / "guide.msh"
    fm.write_mesh(mesh, path)
    back = fm.read_mesh(str(path))
    assert back.n_triangles == mesh.n_triangles
    modes = fm.solve(back, modes=3, order=4)
    check_against(modes, ref.rectangle_modes(2.0, 1.0, 3), 1e-5, labels=False)  # no shape: ordinal labels


def test_external_mesh_of_a_coax_has_its_tem_mode(tmp_path):
    mesh = fm.mesh_section(fm.coaxial(2.0, 1.0), 0.3, order=3)
    path = tmp_path / "coax.msh"
    fm.write_mesh(mesh, path)
    modes = fm.solve(fm.read_mesh(str(path)), modes=3, order=3)
    assert modes[0].family == "TEM"
    assert modes[1].kc == pytest.approx(ref.coax_modes(1.0, 2.0, 2)[1].kc, rel=1e-4)


# ---------------------------------------------------------------- bad requests

@pytest.mark.parametrize("kwargs, words", [
    ({"modes": 0}, "modes"), ({"modes": 2.5}, "modes"), ({"accuracy": 1e-14}, "accuracy"),
    ({"accuracy": "high"}, "accuracy"), ({"family": "TEM"}, "family"), ({"order": 7}, "order"),
    ({"eps_r": -2}, "eps_r"), ({"mu_r": 0}, "mu_r"),
])
def test_bad_requests_say_what_to_fix(kwargs, words):
    with pytest.raises(FemodesError) as exc:
        fm.solve(fm.rectangle(1.0, 0.5), **kwargs)
    assert words in str(exc.value)


def test_read_mesh_missing_file():
    with pytest.raises(FemodesError, match="not found"):
        fm.read_mesh("/nonexistent/guide.msh")


def test_labels_take_a_comma_past_nine():
    # a 20 x 1 guide: TE_m0 for m = 1..10 lie below TE01 (kc = m pi / 20 < pi); Pozar sec. 3.3
    modes = fm.solve(fm.rectangle(20.0, 1.0), modes=10, accuracy=1e-5)
    assert [m.label for m in modes] == [f"TE{m}0" for m in range(1, 10)] + ["TE10,0"]
    assert modes[-1].indices == (10, 0)


def test_builtin_l_shape_matches_the_benchmark():
    # l_shape(2, 2, 1, 1) is the benchmark region of three unit squares (moved): same spectrum;
    # first Dirichlet eigenvalue 9.6397238440219 (Fox, Henrici & Moler 1967)
    m = fm.solve(fm.l_shape(2.0, 2.0, 1.0, 1.0), modes=1, family="TM", accuracy=1e-8)[0]
    assert m.kc ** 2 == pytest.approx(9.6397238440219, rel=2e-8)


def test_rectangular_coax_has_one_tem_mode_and_symmetry():
    modes = fm.solve(fm.rectangular_coax(20e-3, 10e-3, 6e-3, 2e-3), modes=3)
    assert [m.family for m in modes].count("TEM") == 1
    assert modes[0].label == "TEM" and modes[0].kc == 0.0
    assert modes[1].family == "TE" and set(modes[1].symmetry) == {"x", "y"}


def test_pair_cut_by_the_mode_count_still_knows_it_is_a_pair():
    modes = fm.solve(fm.circle(1.0), modes=1)
    assert modes[0].label == "TE11" and modes[0].multiplicity == 2
    assert modes[0].symmetry in ({"x": "odd", "y": "even"}, {"x": "even", "y": "odd"})


@pytest.mark.parametrize("make, refs, n", [
    # thin ellipse: tips of radius of curvature b^2/a = a/100 (Mathieu reference, femodes.reference)
    (lambda: fm.ellipse(1.0, 0.1), lambda n: ref.ellipse_modes(1.0, 0.1, n), 4),
    # thin and fat coax: Bessel cross-product roots (femodes.reference.coax_modes)
    (lambda: fm.coaxial(5e-3, 0.1e-3), lambda n: ref.coax_modes(0.1e-3, 5e-3, n), 4),
    (lambda: fm.coaxial(5e-3, 4.5e-3), lambda n: ref.coax_modes(4.5e-3, 5e-3, n), 4),
    # a 350-degree sector: strongly singular apex (fractional-order Bessel roots)
    (lambda: fm.sector(1.0, math.radians(350)), lambda n: ref.sector_modes(1.0, math.radians(350), n), 4),
])
def test_estimates_stay_honest_on_awkward_shapes(make, refs, n):
    modes = fm.solve(make(), modes=n)
    # a symmetry pair cut by the count is completed (the thin coax's TE21 pair: 4 asked, 5 returned)
    assert len(modes) >= n and modes.modes_asked == n
    check_against(modes, refs(len(modes)), 1e-6, labels=False)
