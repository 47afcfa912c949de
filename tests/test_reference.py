"""Tests of femodes.reference against independent values.

Each numeric check names its source in a comment. Independent computations
written here (Chebyshev collocation of the radial Sturm-Liouville problem,
direct ODE integration of the radial Mathieu equation) share no code with the
module's root finders.
"""

import dataclasses
import math

import numpy as np
import pytest
from scipy import constants, integrate, optimize, special

from femodes import reference as ref


# ---------------------------------------------------------------------------
# independent helpers
# ---------------------------------------------------------------------------
def cheb(n):
    """Chebyshev points and differentiation matrix on [-1, 1]
    (Trefethen, Spectral Methods in MATLAB, 2000, program cheb.m; from memory)."""
    x = np.cos(np.pi * np.arange(n + 1) / n)
    c = np.hstack([2.0, np.ones(n - 1), 2.0]) * (-1.0) ** np.arange(n + 1)
    dx = x[:, None] - x[None, :]
    d = np.outer(c, 1.0 / c) / (dx + np.eye(n + 1))
    d -= np.diag(d.sum(axis=1))
    return x, d


def radial_sl_eigs(order, a, b, neumann, n=64):
    """k of -u'' - u'/r + nu^2 u / r^2 = k^2 u on [a, b], u = 0 or u' = 0 at
    both ends, by Chebyshev collocation (independent of Bessel functions)."""
    x, d = cheb(n)
    r = a + (b - a) * (x + 1) / 2
    d = d * 2 / (b - a)
    op = -(d @ d) - np.diag(1 / r) @ d + np.diag(order**2 / r**2)
    inner = slice(1, n)
    if not neumann:
        mat = op[inner, inner]
    else:
        ends = [0, n]
        solve = -np.linalg.solve(d[np.ix_(ends, ends)], d[ends, inner])
        mat = op[inner, inner] + op[inner][:, ends] @ solve
    lam = np.sort(np.linalg.eigvals(mat).real)
    lam = lam[lam > 1e-6]  # drop the Neumann constant (nu = 0), k = 0
    return np.sqrt(lam)


def radial_mathieu_ode(cls, j, k, a, b):
    """(R, R') at the wall of the radial Mathieu ODE R'' = (A - 2 q cosh 2 xi) R
    integrated from xi = 0 with R(0)=1, R'(0)=0 (ce) or R(0)=0, R'(0)=1 (se),
    A = characteristic value from scipy.special.mathieu_a / mathieu_b."""
    h = math.sqrt(a * a - b * b)
    xi0 = math.acosh(a / h)
    q = (k * h / 2) ** 2
    m = {"ce_even": 2 * j, "ce_odd": 2 * j + 1, "se_odd": 2 * j + 1, "se_even": 2 * j + 2}[cls]
    big_a = special.mathieu_a(m, q) if cls.startswith("ce") else special.mathieu_b(m, q)
    y0 = [1.0, 0.0] if cls.startswith("ce") else [0.0, 1.0]
    sol = integrate.solve_ivp(lambda t, y: [y[1], (big_a - 2 * q * math.cosh(2 * t)) * y[0]],
                              (0.0, xi0), y0, method="DOP853", rtol=1e-13, atol=1e-15)
    return sol.y[0, -1], sol.y[1, -1]


# ---------------------------------------------------------------------------
# constants and RefMode
# ---------------------------------------------------------------------------
def test_constants():
    assert ref.C0 == 299792458.0  # exact by SI definition (BIPM SI brochure; common practice)
    assert ref.MU0 == pytest.approx(1.25663706212e-6, rel=1e-12)  # CODATA 2018 (from memory)
    assert ref.EPS0 == pytest.approx(8.8541878128e-12, rel=1e-12)  # CODATA 2018 (from memory)
    assert ref.MU0 * ref.EPS0 * ref.C0**2 == pytest.approx(1.0, rel=1e-9)  # c^2 = 1/(mu0 eps0), Maxwell
    assert ref.MU0 == pytest.approx(constants.mu_0, rel=2e-9)  # scipy.constants (CODATA 2018 or 2022)
    assert ref.EPS0 == pytest.approx(constants.epsilon_0, rel=2e-9)  # scipy.constants
    assert ref.ETA0 == pytest.approx(376.730313668, rel=1e-10)  # CODATA 2018 Z0 (from memory)


def test_refmode_frequencies():
    m = ref.RefMode("TE", math.pi / 0.02286, "TE10", (1, 0))
    assert m.fc == pytest.approx(ref.C0 / (2 * 0.02286), rel=1e-15)  # fc = c/(2a), Pozar 4th ed. sec. 3.3
    assert m.fc_in(eps_r=2.25) == pytest.approx(m.fc / 1.5, rel=1e-15)  # fc = c kc/(2 pi sqrt(eps mu)), Pozar sec. 3.3
    assert m.fc_in(eps_r=2.0, mu_r=2.0) == pytest.approx(m.fc / 2.0, rel=1e-15)  # same formula
    assert m.cutoff_wavelength == pytest.approx(2 * 0.02286, rel=1e-15)  # lambda_c = 2a for TE10, Pozar sec. 3.3
    with pytest.raises(dataclasses.FrozenInstanceError):
        m.kc = 1.0
    with pytest.raises(ValueError):
        m.fc_in(eps_r=0.0)


# ---------------------------------------------------------------------------
# rectangle
# ---------------------------------------------------------------------------
def test_wr90():
    assert ref.wr90.a == 22.86e-3 and ref.wr90.b == 10.16e-3  # EIA WR-90: 0.900 in x 0.400 in (common practice)
    te10 = ref.wr90.modes(1)[0]
    assert te10.label == "TE10"
    assert round(te10.fc / 1e9, 3) == 6.557  # WR-90 TE10 cutoff 6.557 GHz (Pozar 4th ed., sec. 3.3 / Table; from memory)
    assert ref.wr90.te10_fc == pytest.approx(te10.fc, rel=1e-15)  # fc = c/(2a), Pozar sec. 3.3


def test_rectangle_wr90_order():
    modes = ref.rectangle_modes(ref.WR90_A, ref.WR90_B, 8)
    # order follows from kc = sqrt((m pi/a)^2 + (n pi/b)^2) (Pozar sec. 3.3) with a = 2.25 b;
    # TE before TM at equal kc (the module's stated tie rule)
    assert [m.label for m in modes] == ["TE10", "TE20", "TE01", "TE11", "TM11", "TE30", "TE21", "TM21"]
    assert modes[2].fc == pytest.approx(ref.C0 / (2 * ref.WR90_B), rel=1e-14)  # TE01: fc = c/(2b), Pozar sec. 3.3
    assert modes[3].kc == modes[4].kc  # TE11/TM11 degenerate, Pozar sec. 3.3


def test_rectangle_against_brute_force():
    a, b = 0.03, 0.017
    modes = ref.rectangle_modes(a, b, 60)
    # independent enumeration of the closed form (Pozar 4th ed. sec. 3.3)
    m, n = np.meshgrid(np.arange(40), np.arange(40), indexing="ij")
    kc = np.hypot(m * np.pi / a, n * np.pi / b)
    te = kc[(m + n) > 0]
    tm = kc[(m > 0) & (n > 0)]
    expect = np.sort(np.concatenate([te, tm]))[:60]
    assert np.allclose([x.kc for x in modes], expect, rtol=1e-14, atol=0)
    keys = [(x.family,) + x.indices for x in modes]
    assert len(set(keys)) == len(keys)  # each (family, m, n) once
    assert all(x.indices[0] >= 1 and x.indices[1] >= 1 for x in modes if x.family == "TM")


def test_rectangle_ties_and_labels():
    sq = ref.rectangle_modes(1.0, 1.0, 4)
    # square: TE01 = TE10 = pi/a, TE11 = TM11 = sqrt(2) pi/a (Pozar sec. 3.3); ties by (m, n), TE first
    assert [m.label for m in sq] == ["TE01", "TE10", "TE11", "TM11"]
    assert sq[0].kc == pytest.approx(math.pi, rel=1e-15)  # kc = pi/a, Pozar sec. 3.3
    assert sq[2].kc == pytest.approx(math.sqrt(2) * math.pi, rel=1e-15)  # kc = sqrt(2) pi/a, Pozar sec. 3.3
    wide = ref.rectangle_modes(11.0, 1.0, 12)
    # TE_m0 with kc = m pi/11 for m = 1..10, then TE01 and TE11,0 tie at kc = pi (closed form, Pozar sec. 3.3)
    assert [m.label for m in wide][9:] == ["TE10,0", "TE01", "TE11,0"]
    assert ref.mode_label("TE", 10, 1) == "TE10,1"
    assert ref.mode_label("TM", 1, 1) == "TM11"


@pytest.mark.parametrize("args", [(0.0, 1.0, 3), (1.0, -1.0, 3), (float("nan"), 1.0, 3),
                                  (1.0, 1.0, -1), (1.0, 1.0, 2.5), ("x", 1.0, 2)])
def test_rectangle_bad_args(args):
    with pytest.raises(ValueError):
        ref.rectangle_modes(*args)


# ---------------------------------------------------------------------------
# circle
# ---------------------------------------------------------------------------
def test_circle_first_modes():
    modes = ref.circle_modes(1.0, 18)
    labels = [m.label for m in modes]
    assert labels == ["TE11", "TE11", "TM01", "TE21", "TE21", "TE01", "TM11", "TM11", "TE31", "TE31",
                      "TM21", "TM21", "TE41", "TE41", "TE12", "TE12", "TM02", "TM31"]  # order of A&S table 9.5 zeros
    kc = {m.label: m.kc for m in modes}
    assert kc["TE11"] == pytest.approx(1.841183781, abs=1e-9)  # j'_{1,1}, Abramowitz & Stegun table 9.5
    assert kc["TM01"] == pytest.approx(2.404825558, abs=1e-9)  # j_{0,1}, A&S table 9.5
    assert kc["TE21"] == pytest.approx(3.054236928, abs=1e-9)  # j'_{2,1}, A&S table 9.5
    assert kc["TE01"] == pytest.approx(3.831705970, abs=1e-9)  # j'_{0,1} = j_{1,1}, A&S table 9.5
    assert kc["TM11"] == pytest.approx(3.831705970, abs=1e-9)  # j_{1,1}, A&S table 9.5
    assert kc["TE31"] == pytest.approx(4.201188941, abs=1e-9)  # j'_{3,1}, A&S table 9.5
    assert kc["TM21"] == pytest.approx(5.135622302, abs=1e-9)  # j_{2,1}, A&S table 9.5
    assert kc["TE41"] == pytest.approx(5.317553126, abs=1e-9)  # j'_{4,1}, A&S table 9.5
    assert kc["TE12"] == pytest.approx(5.331442774, abs=1e-9)  # j'_{1,2}, A&S table 9.5
    assert kc["TM02"] == pytest.approx(5.520078110, abs=1e-9)  # j_{0,2}, A&S table 9.5
    assert modes[0].indices == (1, 1, "cos") and modes[1].indices == (1, 1, "sin")
    assert modes[2].indices == (0, 1)
    assert modes[5].family == "TE" and modes[6].family == "TM"  # exact TE01/TM11 tie (J0' = -J1), TE first


def test_circle_scaling_and_bessel_scan():
    r = 0.0123
    small = ref.circle_modes(r, 30)
    unit = ref.circle_modes(1.0, 30)
    assert np.allclose([m.kc * r for m in small], [m.kc for m in unit], rtol=1e-14)  # kc R depends on shape only
    # the module's generic scan + brentq against scipy.special.jn_zeros / jnp_zeros
    for order in range(0, 8):
        got = ref.bessel_roots(order, 1.0, 30.0)
        assert np.allclose(got, special.jn_zeros(order, len(got)), rtol=1e-13)  # scipy.special
        assert got[-1] <= 30.0 < special.jn_zeros(order, len(got) + 1)[-1]  # none missed (scipy.special)
        gotp = ref.bessel_roots(order, 1.0, 30.0, derivative=True)
        assert np.allclose(gotp, special.jnp_zeros(order, len(gotp)), rtol=1e-13)  # scipy.special
        assert 30.0 < special.jnp_zeros(order, len(gotp) + 1)[-1]  # scipy.special


def test_circle_bad_args():
    with pytest.raises(ValueError):
        ref.circle_modes(0.0, 3)
    assert ref.circle_modes(1.0, 0) == []


# ---------------------------------------------------------------------------
# coax
# ---------------------------------------------------------------------------
def test_coax_first_modes():
    modes = ref.coax_modes(1.0, 2.0, 6)
    assert modes[0].family == "TEM" and modes[0].kc == 0.0 and modes[0].label == "TEM"
    assert [m.label for m in modes[1:]] == ["TE11", "TE11", "TE21", "TE21", "TE31"]
    # TE11 is the first higher-order mode, kc ~ 2/(a+b) (Pozar 4th ed. sec. 3.5; Marcuvitz sec. 2.4)
    assert modes[1].kc == pytest.approx(2.0 / 3.0, rel=0.03)


@pytest.mark.parametrize("ratio", [1.01, 1.1, 1.5, 2.0, 2.3, 3.0, 4.0, 5.0, 8.0, 10.0])
def test_coax_te11_rule_of_thumb(ratio):
    te11 = ref.coax_modes(1.0, ratio, 2)[1]
    est = ref.coax_te11_estimate(1.0, ratio)
    assert est == 2.0 / (1.0 + ratio)  # the rule kc = 2/(a+b) itself (Pozar sec. 3.5)
    # "accurate to a few percent" (Pozar sec. 3.5, Marcuvitz sec. 2.4; recalled): here <= 3 %
    assert abs(est - te11.kc) / te11.kc < 0.03


def test_coax_thin_gap_limits():
    a, b = 1.0, 1.001
    d = b - a
    modes = ref.coax_modes(a, b, 12)
    te = [m for m in modes if m.family == "TE"]
    # thin gap: TE_n1 -> n / r_mean = 2n/(a+b) with O((d/a)^2) error (Pozar sec. 3.5 rule, exact in the limit)
    for m in te:
        assert m.kc == pytest.approx(2 * m.indices[0] / (a + b), rel=(d / a) ** 2)
    # TM_0m -> m pi / (b - a): parallel-plate limit (Pozar 4th ed. sec. 3.1), O((d/a)^2)
    tm0 = ref.annulus_roots(0, a, b, 3.5 * math.pi / d, points_per_pi=4)  # roots pi/d apart: coarse scan
    assert len(tm0) == 3
    for m, k in enumerate(tm0, start=1):
        assert k == pytest.approx(m * math.pi / d, rel=(d / a) ** 2)
    # TM_nm -> sqrt((m pi/d)^2 + (2n/(a+b))^2) (separable thin-gap limit, from memory)
    k21 = ref.annulus_roots(2, a, b, 1.2 * math.pi / d, points_per_pi=4)[0]
    assert k21 == pytest.approx(math.hypot(math.pi / d, 4 / (a + b)), rel=(d / a) ** 2)


@pytest.mark.parametrize("ratio", [1.05, 2.0, 5.0, 20.0])
def test_coax_roots_against_collocation(ratio):
    # independent Chebyshev collocation of the radial Sturm-Liouville problem (Trefethen 2000)
    for order in range(0, 4):
        for deriv in (False, True):
            want = radial_sl_eigs(order, 1.0, ratio, neumann=deriv, n=72)
            got = ref.annulus_roots(order, 1.0, ratio, want[5] * 0.999, derivative=deriv)
            assert len(got) == 5
            assert np.allclose(got, want[:5], rtol=1e-9)


@pytest.mark.parametrize("ratio", [1.05, 2.0, 20.0, 300.0])
def test_coax_roots_finer_scan_and_residual(ratio):
    a, b = 1.0, ratio
    kmax = 30.0 / b + 1.5 * math.pi / (b - a)
    for order in (0, 1, 4, 9):
        for deriv in (False, True):
            got = ref.annulus_roots(order, a, b, kmax, derivative=deriv)
            fine = ref.annulus_roots(order, a, b, kmax, derivative=deriv, points_per_pi=96)
            assert len(got) == len(fine) and np.allclose(got, fine, rtol=1e-13)  # no missed/spurious roots
            jf, yf = (special.jvp, special.yvp) if deriv else (special.jv, special.yv)

            def cross(k):  # the defining equation, evaluated with scipy.special
                return jf(order, k * a) * yf(order, k * b) - jf(order, k * b) * yf(order, k * a)

            for k in got:
                dk = 1e-6 * k
                slope = (cross(k + dk) - cross(k - dk)) / (2 * dk)
                assert abs(cross(k) / slope) <= 1e-12 * k  # implied root error below 1e-12 relative


def test_coax_degeneracy_te0_tm1():
    modes = ref.coax_modes(1.0, 3.0, 40)
    kc = {(m.family,) + m.indices[:2]: m.kc for m in modes}
    # J0' = -J1 and Y0' = -Y1 (A&S 9.1.28), so TE_0m and TM_1m coincide
    assert kc[("TE", 0, 1)] == pytest.approx(kc[("TM", 1, 1)], rel=1e-15)


def test_coax_impedance():
    # APC-7 air line: 3.04 mm / 7.00 mm is the 50-ohm standard (common practice, from memory)
    assert ref.coax_tem_impedance(1.52e-3, 3.5e-3) == pytest.approx(50.0, abs=0.05)
    # Z0 = 60 ln(b/a)/sqrt(eps_r) (Pozar 4th ed. sec. 2.2/3.5), eta0/(2 pi) = 59.96 ohm
    assert ref.coax_tem_impedance(1.0, math.e) == pytest.approx(60.0, rel=1e-3)
    # Z0 = sqrt(L/C), L = mu ln(b/a)/(2 pi), C = 2 pi eps/ln(b/a) (Pozar sec. 2.2, Table 2.1)
    a, b, er = 0.5e-3, 1.75e-3, 2.1
    lo = ref.MU0 * math.log(b / a) / (2 * math.pi)
    ca = 2 * math.pi * ref.EPS0 * er / math.log(b / a)
    assert ref.coax_tem_impedance(a, b, eps_r=er) == pytest.approx(math.sqrt(lo / ca), rel=1e-14)


@pytest.mark.parametrize("args", [(1.0, 1.0, 3), (2.0, 1.0, 3), (0.0, 1.0, 3), (1.0, 2.0, -2)])
def test_coax_bad_args(args):
    with pytest.raises(ValueError):
        ref.coax_modes(*args)
    with pytest.raises(ValueError):
        ref.coax_te11_estimate(2.0, 1.0)
    with pytest.raises(ValueError):
        ref.coax_tem_impedance(1.0, 2.0, eps_r=-1)


# ---------------------------------------------------------------------------
# sectors
# ---------------------------------------------------------------------------
def _expected_sector(orders_tm, orders_te, kmax):
    """Integer-order sector cutoffs from scipy.special.jn_zeros / jnp_zeros."""
    out = []
    for p, nu in orders_tm:
        out += [("TM", p, m, z) for m, z in enumerate(special.jn_zeros(nu, 20), 1) if z <= kmax]
    for p, nu in orders_te:
        out += [("TE", p, m, z) for m, z in enumerate(special.jnp_zeros(nu, 20), 1) if z <= kmax]
    return sorted(out, key=lambda t: t[3])


def test_half_disc():
    modes = ref.sector_modes(1.0, math.pi, 25)
    kmax = modes[-1].kc
    # angle = pi: nu = p, TM zeros of J_p (p >= 1), TE zeros of J_p' (p >= 0) (scipy.special)
    want = _expected_sector([(p, p) for p in range(1, 30)], [(p, p) for p in range(0, 30)], kmax)
    assert len(want) == 25
    assert np.allclose([m.kc for m in modes], [w[3] for w in want], rtol=1e-13)
    assert all(len(m.indices) == 2 for m in modes)  # no degenerate pairs in a sector
    assert modes[0].label == "TE11" and modes[0].kc == pytest.approx(1.841183781, abs=1e-9)  # A&S table 9.5


def test_quarter_disc():
    modes = ref.sector_modes(2.0, math.pi / 2, 20)
    kmax = modes[-1].kc * 2.0
    # angle = pi/2: nu = 2p (scipy.special.jn_zeros / jnp_zeros)
    want = _expected_sector([(p, 2 * p) for p in range(1, 20)], [(p, 2 * p) for p in range(0, 20)], kmax)
    assert [(m.family, m.indices) for m in modes] == [(w[0], (w[1], w[2])) for w in want[:20]]
    assert np.allclose([m.kc * 2.0 for m in modes], [w[3] for w in want[:20]], rtol=1e-13)


def test_slit_disc_half_integer_orders():
    modes = ref.sector_modes(1.0, 2 * math.pi, 12)
    tm1 = [m.kc for m in modes if m.family == "TM" and m.indices[0] == 1]
    # nu = 1/2: J_{1/2}(x) = sqrt(2/(pi x)) sin x (A&S 10.1.11 with 10.1.1), zeros m pi
    assert tm1 and np.allclose(tm1, np.pi * np.arange(1, len(tm1) + 1), rtol=1e-14)
    te11 = [m.kc for m in modes if m.label == "TE11"][0]
    # J_{1/2}'(x) = 0  <=>  tan x = 2x (same closed form), root by brentq
    assert te11 == pytest.approx(optimize.brentq(lambda x: math.tan(x) - 2 * x, 1.0, 1.5, xtol=1e-15), rel=1e-13)
    assert te11 == pytest.approx(1.165561185, abs=1e-9)  # root of tan x = 2x (from memory)
    # nu = 1 (p = 2) is the circle's TE11 (scipy.special.jnp_zeros)
    assert [m.kc for m in modes if m.label == "TE21"][0] == pytest.approx(special.jnp_zeros(1, 1)[0], rel=1e-13)


def test_sector_three_halves():
    modes = ref.sector_modes(1.0, 2 * math.pi / 3, 10)
    tm11 = [m.kc for m in modes if m.label == "TM11"][0]
    # nu = 3/2: J_{3/2} zeros solve tan x = x (A&S 10.1.11; first zero 4.493409458, A&S table 10.6, from memory)
    assert tm11 == pytest.approx(4.493409457909064, rel=1e-13)
    assert tm11 == pytest.approx(optimize.brentq(lambda x: math.tan(x) - x, 4.0, 4.6, xtol=1e-15), rel=1e-13)


def test_annular_sector_against_collocation():
    a, b, angle = 0.4, 1.0, 0.8 * math.pi  # nu = p / 0.8 = 1.25 p, fractional
    modes = ref.sector_modes(b, angle, 30, inner_radius=a)
    for fam, deriv in (("TM", False), ("TE", True)):
        for p in range(0 if deriv else 1, 4):
            got = [m.kc for m in modes if m.family == fam and m.indices[0] == p]
            if not got:
                continue
            # Chebyshev collocation of the radial problem (Trefethen 2000), independent of Bessel functions
            want = radial_sl_eigs(p * math.pi / angle, a, b, neumann=deriv, n=72)
            assert np.allclose(got, want[: len(got)], rtol=1e-9)
    assert [m.kc for m in modes] == sorted(m.kc for m in modes)


def test_annular_sector_small_inner_limit():
    nu = 1.5
    got = ref.annulus_roots(nu, 1e-4, 1.0, 20.0)
    full = ref.bessel_roots(nu, 1.0, 20.0)
    # inner radius -> 0: the cross product tends to J_nu(k R) (A&S 9.1.7 small-argument Y_nu);
    # the shift is O((a/R)^(2 nu)) = O(1e-12)
    assert len(got) == len(full)
    assert np.allclose(got, full, rtol=1e-10)
    # and for the slit-free circle (angle 2 pi) the odd p are half-integer orders: nu = 1/2 -> m pi
    sec = ref.sector_modes(1.0, 2 * math.pi, 8, inner_radius=1e-9)
    tm1 = [m.kc for m in sec if m.family == "TM" and m.indices[0] == 1]
    assert np.allclose(tm1, np.pi * np.arange(1, len(tm1) + 1), rtol=1e-8)  # A&S 10.1.11, a/R correction O(a/R)


@pytest.mark.parametrize("kw", [dict(radius=1.0, angle=0.0, n=3), dict(radius=1.0, angle=7.0, n=3),
                                dict(radius=1.0, angle=-1.0, n=3), dict(radius=-1.0, angle=1.0, n=3),
                                dict(radius=1.0, angle=1.0, n=3, inner_radius=1.0),
                                dict(radius=1.0, angle=1.0, n=3, inner_radius=-0.1)])
def test_sector_bad_args(kw):
    with pytest.raises(ValueError):
        ref.sector_modes(**kw)


# ---------------------------------------------------------------------------
# L-shape
# ---------------------------------------------------------------------------
def test_l_shape_exact_square_modes():
    # boundary of (-1,1)^2 minus [0,1]x[-1,0]: every side lies on x or y in {-1, 0, 1}
    t = np.linspace(-1, 1, 9)
    sides_x = [(-1.0, t), (1.0, t[t >= 0]), (0.0, t[t <= 0])]
    sides_y = [(1.0, t), (-1.0, t[t <= 0]), (0.0, t[t >= 0])]
    for x0, ys in sides_x:
        assert np.allclose(np.sin(np.pi * x0) * np.sin(np.pi * ys), 0, atol=1e-15)  # Dirichlet: sin(pi x) sin(pi y)
        assert np.allclose(np.pi * np.sin(np.pi * x0) + 0 * ys, 0, atol=1e-15)  # Neumann: d/dx cos(pi x) = 0
    for y0, xs in sides_y:
        assert np.allclose(np.sin(np.pi * xs) * np.sin(np.pi * y0), 0, atol=1e-15)
    # so 2 pi^2 (Dirichlet) and pi^2, pi^2 (Neumann) are exact eigenvalues (separation of variables)
    assert ref.L_SHAPE_DIRICHLET[2] == 2 * math.pi**2
    assert ref.L_SHAPE_NEUMANN[2] == ref.L_SHAPE_NEUMANN[3] == math.pi**2


def test_l_shape_mps_reproduces_literature():
    # first Dirichlet eigenvalue 9.6397238440219 (Fox, Henrici & Moler 1967; Trefethen & Betcke 2006)
    lam = ref.l_shape_eigenvalue_mps(9.6397238440219 * (1 + 3e-4), "dirichlet", terms=44)
    assert lam == pytest.approx(9.6397238440219, rel=1e-12)
    assert ref.L_SHAPE_DIRICHLET[0] == 9.6397238440219


@pytest.mark.parametrize("index, rtol", [(1, 1e-10), (3, 3e-9), (4, 3e-9)])
def test_l_shape_dirichlet_recalled(index, rtol):
    # recalled values (from memory), checked by the method of particular solutions;
    # rtol = half a unit of the last digit kept plus the MPS error (~1e-11)
    val = ref.L_SHAPE_DIRICHLET[index]
    assert ref.l_shape_eigenvalue_mps(val * (1 + 2e-4), "dirichlet", terms=36) == pytest.approx(val, rel=rtol)


@pytest.mark.parametrize("index, terms, rtol", [(0, 44, 5e-10), (1, 36, 3e-10), (4, 36, 3e-10)])
def test_l_shape_neumann_recalled(index, terms, rtol):
    # Dauge's benchmark values (from memory), checked by the method of particular solutions;
    # rtol = MPS error at this number of terms (the r^(2/3) singularity of the first mode is slowest)
    val = ref.L_SHAPE_NEUMANN[index]
    assert ref.l_shape_eigenvalue_mps(val * (1 - 2e-4), "neumann", terms=terms) == pytest.approx(val, rel=rtol)


# ---------------------------------------------------------------------------
# ellipse
# ---------------------------------------------------------------------------
def test_mathieu_characteristic_values():
    # Abramowitz & Stegun table 20.1, q = 5 (from memory)
    assert ref.mathieu_characteristic("ce_even", 5.0, 2) == pytest.approx([-5.80004602, 7.44910974], abs=1e-8)
    assert ref.mathieu_characteristic("ce_odd", 5.0, 1)[0] == pytest.approx(1.85818754, abs=1e-8)
    assert ref.mathieu_characteristic("se_odd", 5.0, 1)[0] == pytest.approx(-5.79008060, abs=1e-8)
    assert ref.mathieu_characteristic("se_even", 5.0, 1)[0] == pytest.approx(2.09946045, abs=1e-8)
    for q in (0.3, 7.0, 40.0, 150.0):
        for cls, fn, m0 in (("ce_even", special.mathieu_a, 0), ("ce_odd", special.mathieu_a, 1),
                            ("se_odd", special.mathieu_b, 1), ("se_even", special.mathieu_b, 2)):
            want = [fn(m0 + 2 * j, q) for j in range(5)]  # scipy.special.mathieu_a / mathieu_b
            assert np.allclose(ref.mathieu_characteristic(cls, q, 5), want, rtol=1e-11, atol=1e-11)


@pytest.mark.parametrize("ab", [(1.0, 0.6), (1.0, 0.15)])
def test_mathieu_radial_series_against_ode(ab):
    a, b = ab
    h = math.sqrt(a * a - b * b)
    for cls in ("ce_even", "ce_odd", "se_odd", "se_even"):
        for k in (2.5, 9.0):
            val, der = ref._radial_conditions(cls, k, a, b, h, 3)
            for j in range(3):
                r, rp = radial_mathieu_ode(cls, j, k, a, b)  # direct integration (scipy.integrate)
                assert val[j] == pytest.approx(r, rel=1e-9, abs=1e-9 * max(1.0, abs(rp)))
                assert der[j] == pytest.approx(rp, rel=1e-9, abs=1e-9 * max(1.0, abs(r)))


def test_ellipse_circle_limit_and_orientation():
    circ = ref.circle_modes(1.0, 10)
    same = ref.ellipse_modes(1.0, 1.0, 10)
    assert [m.kc for m in same] == [m.kc for m in circ]  # a == b is the circle (A&S table 9.5 zeros)
    assert same[0].label == "TEc11" and same[1].label == "TEs11"
    near = ref.ellipse_modes(1.0, 1.0 - 1e-9, 10)
    # eccentricity -> 0: cutoffs -> circle values (A&S table 9.5), shifts O(a - b)
    assert np.allclose([m.kc for m in near], [m.kc for m in circ], rtol=2e-9)
    assert [m.label for m in near][:3] == ["TEc11", "TEs11", "TMc01"]
    wide = ref.ellipse_modes(2.0, 1.0, 6)
    tall = ref.ellipse_modes(1.0, 2.0, 6)
    assert [m.kc for m in wide] == [m.kc for m in tall]  # labels refer to the major axis
    assert wide[0].label == "TEc11" and wide[0].family == "TE"  # dominant mode (Kretzschmar 1970; from memory)


def test_ellipse_first_order_perturbation():
    # a = R(1+d), b = R(1-d): boundary r = R(1 + d cos 2 phi) + O(d^2). Hadamard's formula
    # (Courant & Hilbert; from memory) gives dk/k = -+ d/2 for TMc11/TMs11 and
    # -+ d (x^2+1)/(2(x^2-1)), x = j'_11, for TEc11/TEs11; no first-order shift for other orders.
    j11, x11, j01 = special.jn_zeros(1, 1)[0], special.jnp_zeros(1, 1)[0], special.jn_zeros(0, 1)[0]
    c = (x11**2 + 1) / (2 * (x11**2 - 1))
    res = {}
    for d in (1e-3, 1e-4):
        kc = {m.label: m.kc for m in ref.ellipse_modes(1 + d, 1 - d, 10)}
        res[d] = np.array([kc["TMc11"] / j11 - (1 - d / 2), kc["TMs11"] / j11 - (1 + d / 2),
                           kc["TEc11"] / x11 - (1 - c * d), kc["TEs11"] / x11 - (1 + c * d),
                           kc["TMc01"] / j01 - 1, kc["TEc21"] / special.jnp_zeros(2, 1)[0] - 1])
        assert np.all(np.abs(res[d]) < 5 * d**2)
    ratio = res[1e-3] / res[1e-4]
    assert np.allclose(ratio, 100, rtol=0.02)  # the remainder is second order


_CLASSES = [("cos", 0, 1, 1), ("cos", 1, -1, 1), ("sin", 1, 1, -1), ("sin", 0, -1, -1)]


@pytest.mark.parametrize("ab", [(1.0, 0.5), (0.02, 0.017)])
def test_ellipse_against_ritz(ab):
    a, b = ab
    modes = ref.ellipse_modes(a, b, 24)
    top = modes[-1].kc
    for fam in ("TE", "TM"):
        for par, m_mod, px, py in _CLASSES:
            mine = np.array(sorted(m.kc for m in modes if m.family == fam and m.indices[2] == par
                                   and m.indices[0] % 2 == m_mod))
            # independent polynomial Ritz solve on the ellipse (Rayleigh-Ritz, upper bounds)
            ritz = ref.ellipse_ritz_kc(a, b, fam, px, py, degree=30)
            if len(mine) == 0:
                assert ritz[0] > top * (1 - 1e-9)
                continue
            assert np.allclose(mine, ritz[: len(mine)], rtol=1e-9)
            assert np.all(mine <= ritz[: len(mine)] * (1 + 1e-10))  # min-max: Ritz values are upper bounds
            # completeness: the next Ritz value of the class lies above the last returned mode overall
            assert ritz[len(mine)] >= top * (1 - 1e-9)


def test_ellipse_mode_where_scipy_mathieu_fails():
    # b/a = 0.7, TMc32: scipy.special.mathieu_modcem1(3, q, xi0) has no zero near this cutoff
    # (scipy 1.17), so the module does not use it; the independent Ritz solve confirms the value.
    a, b = 1.0, 0.7
    roots = [r for r in ref._ellipse_class_roots("ce_odd", a, b, 11.2) if r[0] == "TM"]
    tm32 = [r[3] for r in roots if r[1:3] == (3, 2)][0]
    ritz = ref.ellipse_ritz_kc(a, b, "TM", -1, 1, degree=30)  # polynomial Ritz, ce_odd class
    assert np.min(np.abs(ritz - tm32)) < 1e-10 * tm32
    assert len(roots) == int(np.sum(ritz <= 11.2))  # same count below 11.2 (completeness)


def test_ellipse_scan_resolution_and_scipy():
    a, b = 1.0, 0.6
    h = math.sqrt(a * a - b * b)
    xi0 = math.acosh(a / h)
    for cls in ("ce_even", "ce_odd", "se_odd", "se_even"):
        coarse = ref._ellipse_class_roots(cls, a, b, 7.5)
        fine = ref._ellipse_class_roots(cls, a, b, 7.5, points_per_pi=40)
        assert [r[:3] for r in coarse] == [r[:3] for r in fine]  # no missed or spurious roots
        assert np.allclose([r[3] for r in coarse], [r[3] for r in fine], rtol=1e-13)
    # scipy.special.mathieu_modcem1 / modsem1 roots at this moderate eccentricity (reference library)
    for mode in ref.ellipse_modes(a, b, 12):
        m, _, par = mode.indices
        fn = special.mathieu_modcem1 if par == "cos" else special.mathieu_modsem1
        idx = 0 if mode.family == "TM" else 1
        root = optimize.brentq(lambda k: fn(m, (k * h / 2) ** 2, xi0)[idx], mode.kc * 0.99, mode.kc * 1.01,
                               xtol=1e-14)
        assert root == pytest.approx(mode.kc, rel=1e-11)


def test_ellipse_eccentric_against_ode_root():
    a, b = 1.0, 0.1
    # the lowest ce_even TM root is TMc01; only that class is scanned, to keep the test fast
    tm = [r for r in ref._ellipse_class_roots("ce_even", a, b, 17.0) if r[0] == "TM"][0]
    assert tm[1:3] == (0, 1) and tm[3] == pytest.approx(16.2257, rel=1e-5)  # Ritz check below
    assert tm[3] == pytest.approx(ref.ellipse_ritz_kc(a, b, "TM", 1, 1, degree=30)[0], rel=1e-9)  # Ritz
    tm = ref.RefMode("TM", tm[3], "TMc01", (0, 1, "cos"))
    # root of the directly integrated radial ODE (scipy.integrate + scipy.special.mathieu_a)
    root = optimize.brentq(lambda k: radial_mathieu_ode("ce_even", 0, k, a, b)[0], tm.kc * 0.999,
                           tm.kc * 1.001, xtol=1e-14)
    assert root == pytest.approx(tm.kc, rel=1e-11)


@pytest.mark.parametrize("b", [0.3, 0.9])
def test_ellipse_dominant_mode_bounds(b):
    a = 1.0
    modes = ref.ellipse_modes(a, b, 16)
    te = modes[0]
    tm = [m for m in modes if m.family == "TM"][0]
    assert te.label == "TEc11" and tm.label == "TMc01"
    # Payne-Weinberger (1960), convex domain of diameter 2a: first Neumann kc >= pi/(2a) (from memory)
    assert te.kc >= math.pi / (2 * a)
    # Szego-Weinberger: first Neumann kc <= that of the disc of equal area, j'_11/sqrt(ab) (from memory)
    assert te.kc <= special.jnp_zeros(1, 1)[0] / math.sqrt(a * b)
    # Faber-Krahn: first Dirichlet kc >= j_01/sqrt(ab) (disc of equal area); domain monotonicity:
    # between the circumscribed (radius a) and inscribed (radius b) discs (from memory)
    j01 = special.jn_zeros(0, 1)[0]
    assert j01 / math.sqrt(a * b) <= tm.kc <= j01 / b


def test_ellipse_bad_args():
    with pytest.raises(ValueError):
        ref.ellipse_modes(0.0, 1.0, 3)
    with pytest.raises(ValueError):
        ref.ellipse_ritz_kc(1.0, 0.5, "TX", 1, 1)


def test_side_slab_peak_and_voltage_reduce_to_pozars_te10_and_carry_one_watt():
    # Without the slab (eps_r = 1) the TE_m0 field is Pozar's TE10 (Microwave Engineering, sec. 3.3):
    # P = a b E0^2 / (4 Z_TE), so at 1 W the peak is sqrt(4 Z_TE / (a b)) at x = a/2, and
    # Z_PV = 2 (b/a) Z_TE, Z_PI = (pi^2 b / 8a) Z_TE, Z_VI = (pi b / 2a) Z_TE (common practice)
    a, b, t, f = 22.86e-3, 10.16e-3, 4e-3, 9e9
    k0 = 2 * math.pi * f / ref.C0
    beta2 = k0 ** 2 - (math.pi / a) ** 2
    zte = k0 * ref.ETA0 / math.sqrt(beta2)
    r = ref.side_slab_te_m0_peak_and_voltage(a, b, t, 1.0, f, beta2, a / 2)
    assert r.peak_air == pytest.approx(math.sqrt(4 * zte / (a * b)), rel=1e-12)
    assert r.x_peak_air == pytest.approx(a / 2, rel=1e-9)
    assert r.z_pv == pytest.approx(2 * b / a * zte, rel=1e-12)
    assert r.z_pi == pytest.approx(math.pi ** 2 * b / (8 * a) * zte, rel=1e-12)
    assert r.z_vi == pytest.approx(math.pi * b / (2 * a) * zte, rel=1e-12)
    # with a slab: the field scaled to 1 W carries 1 W, P = beta b int E_y^2 dx / (2 omega mu0),
    # integrated here on a plain grid from the peaks' field shape (E_y continuous at x = t, its slope
    # too: H_z ~ dE_y/dx is tangential), and the slab's peak is at its face for this thin slab
    eps = 2.56
    beta2 = ref.layered_guide_modes(a, b, [(t, eps, 1.0), (a - t, 1.0, 1.0)], f, count=1, axis="x")[0].beta2
    s = ref.side_slab_te_m0_peak_and_voltage(a, b, t, eps, f, beta2, t)
    kd, ka = math.sqrt(eps * k0 ** 2 - beta2), math.sqrt(k0 ** 2 - beta2)
    amp = math.sin(kd * t) / kd / (math.sin(ka * (a - t)) / ka)
    x = np.linspace(0, a, 200001)
    e = np.where(x <= t, np.sin(kd * x) / kd, amp * np.sin(ka * (a - x)) / ka)
    scale = s.peak_air / np.abs(e).max()
    p = math.sqrt(beta2) * b * integrate.trapezoid((scale * e) ** 2, x) / (2 * 2 * math.pi * f * ref.MU0)
    assert p == pytest.approx(1.0, rel=1e-8)
    assert s.x_peak_slab == pytest.approx(t, rel=1e-12) and s.voltage == pytest.approx(s.peak_slab * b, rel=1e-12)
