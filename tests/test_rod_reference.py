"""Circular metal guide with a concentric dielectric rod: the reference
(femodes.reference.rod_in_circular_guide_betas) against closed-form limits and
the textbook characteristic equations written out here independently, then
femodes' full-vector solver against the reference.

Each numeric check names its source in a comment.
"""

import math

import numpy as np
import pytest
from scipy import optimize, special

import femodes
from femodes import reference as ref

B = 10e-3  # guide radius (m), a scenario of our own
A = 4e-3  # rod radius (m)
EPS = 4.0  # rod permittivity
F_FE = 14e9  # Hz: HE11 (a pair), TM01, TE01 propagate, the next (n = 1) mode at beta ~ 105 rad/m


def k0_of(f):
    return 2 * math.pi * f / ref.C0


# ---------------------------------------------------------------------------
# independent forms of the characteristic equations (raw J/Y, I/K; with poles)
# ---------------------------------------------------------------------------
def outer_raw(n, k2sq, a, b):
    """F(a), dF/dr(a), G(a), dG/dr(a) of the vacuum shell a < r < b with F(b) = 0 (E_z) and
    dG/dr(b) = 0 (H_z): J/Y cross products where k2^2 > 0, I/K where k2^2 < 0 (common practice)."""
    if k2sq > 0:
        k = math.sqrt(k2sq)
        j, y, jp, yp = special.jv, special.yv, special.jvp, special.yvp
    else:
        k = math.sqrt(-k2sq)
        j, y, jp, yp = special.iv, special.kv, special.ivp, special.kvp
    fa = j(n, k * a) * y(n, k * b) - j(n, k * b) * y(n, k * a)
    dfa = k * (jp(n, k * a) * y(n, k * b) - j(n, k * b) * yp(n, k * a))
    ga = j(n, k * a) * yp(n, k * b) - jp(n, k * b) * y(n, k * a)
    dga = k * (jp(n, k * a) * yp(n, k * b) - jp(n, k * b) * yp(n, k * a))
    return fa, dfa, ga, dga


def classic_residual(beta, n, a, b, eps_r, f, part="hybrid"):
    """The rod-loaded circular guide's characteristic equation in its textbook ratio form
    (Harrington, Time-Harmonic Electromagnetic Fields, 1961, partially filled circular guide;
    Collin, Field Theory of Guided Waves, inhomogeneously filled guides; from memory):

        (beta n / a)^2 (1/k1^2 - 1/k2^2)^2 = k0^2 (P - G'/(k2^2 G)) (eps_r P - F'/(k2^2 F)),
        P = J_n'(k1 a) / (k1 J_n(k1 a)),

    k1^2 = k0^2 eps_r - beta^2, k2^2 = k0^2 - beta^2.  For n = 0 the sides factor: TM0m is
    eps_r P = F'/(k2^2 F) (E_z and H_phi continuous), TE0m is P = G'/(k2^2 G)."""
    k0 = k0_of(f)
    k1sq, k2sq = k0 * k0 * eps_r - beta * beta, k0 * k0 - beta * beta
    k1 = math.sqrt(k1sq)
    p = special.jvp(n, k1 * a) / (k1 * special.jv(n, k1 * a))
    fa, dfa, ga, dga = outer_raw(n, k2sq, a, b)
    te = p - dga / (k2sq * ga)
    tm = eps_r * p - dfa / (k2sq * fa)
    if part == "TE":
        return te
    if part == "TM":
        return tm
    return (beta * n / a) ** 2 * (1 / k1sq - 1 / k2sq) ** 2 - k0 * k0 * te * tm


def assert_is_root(func, beta):
    """func changes sign across beta (1 -+ 1e-10) and is small there against beta (1 -+ 1e-4)."""
    lo, hi = func(beta * (1 - 1e-10)), func(beta * (1 + 1e-10))
    assert lo * hi < 0, (beta, lo, hi)
    far = max(abs(func(beta * (1 - 1e-4))), abs(func(beta * (1 + 1e-4))))
    assert abs(func(beta)) < 1e-4 * far


# ---------------------------------------------------------------------------
# the reference against limits and the textbook equations
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("rho", [0.4, 0.7])
@pytest.mark.parametrize("order", [0, 1, 2])
def test_vacuum_rod_gives_the_empty_circular_guide(order, rho):
    # empty circular guide: beta^2 = k0^2 - (x'_nm / b)^2 (TE), k0^2 - (x_nm / b)^2 (TM)
    # (Pozar, Microwave Engineering, sec. 3.4; from memory), zeros from scipy.special
    f = 40e9
    k0 = k0_of(f)
    zeros = list(special.jnp_zeros(order, 12)) + list(special.jn_zeros(order, 12))
    want = sorted((math.sqrt(k0 * k0 - (x / B) ** 2) for x in zeros if x / B < k0), reverse=True)
    got = ref.rod_in_circular_guide_betas(rho * B, B, 1.0, f, order, 50)
    assert len(want) >= 3
    assert len(got) == len(want)  # nothing missed, nothing invented
    np.testing.assert_allclose(got, want, rtol=1e-12)
    assert ref.rod_in_circular_guide_betas(rho * B, B, 1.0, f, order, 2) == got[:2]


@pytest.mark.parametrize("gap", [1e-6, 1e-9])
@pytest.mark.parametrize("order", [0, 1, 2, 3])
def test_rod_filling_the_guide_gives_the_filled_guide(order, gap):
    # guide filled with eps_r: beta^2 = k0^2 eps_r - (x / b)^2, x the zeros of J_n' (TE) and
    # J_n (TM) (Pozar, sec. 3.4, with k -> k0 sqrt(eps_r); from memory); a vacuum gap of relative
    # width `gap` moves beta^2 at first order in the gap (common practice: perturbation theory)
    f = 25e9
    k0 = k0_of(f)
    zeros = list(special.jnp_zeros(order, 12)) + list(special.jn_zeros(order, 12))
    want = sorted((math.sqrt(EPS * k0 * k0 - (x / B) ** 2) for x in zeros if x / B < k0 * math.sqrt(EPS)),
                  reverse=True)
    got = ref.rod_in_circular_guide_betas(B * (1 - gap), B, EPS, f, order, 50)
    assert len(want) >= 4 and min(want) < k0 < max(want)  # modes on both sides of beta = k0
    assert len(got) == len(want)  # no spurious root at beta = k0 or at beta = k0 sqrt(eps_r)
    np.testing.assert_allclose(got, want, rtol=10 * gap)


@pytest.mark.parametrize("f", [14e9, 25e9])
def test_te0_and_tm0_roots_satisfy_their_separate_conditions(f):
    # TE0m / TM0m conditions in their textbook ratio form (classic_residual, from memory)
    k0 = k0_of(f)
    both = ref.rod_in_circular_guide_betas(A, B, EPS, f, 0, 20)
    sides = set()
    found = []
    for fam in ("TE", "TM"):
        betas = ref.rod_in_circular_guide_betas(A, B, EPS, f, 0, 20, family=fam)
        assert betas
        for beta in betas:
            assert_is_root(lambda x: classic_residual(x, 0, A, B, EPS, f, fam), beta)
            sides.add(beta > k0)
        found += betas
    assert sorted(found, reverse=True) == both
    if f == 25e9:
        assert sides == {True, False}  # both outer regimes (J/Y and I/K) were checked


@pytest.mark.parametrize("order", [1, 2, 3])
def test_hybrid_roots_satisfy_the_classic_characteristic_equation(order):
    # hybrid modes (n >= 1): the textbook ratio form (classic_residual, from memory)
    f = 40e9
    k0 = k0_of(f)
    betas = ref.rod_in_circular_guide_betas(A, B, EPS, f, order, 20)
    assert len(betas) >= 3
    for beta in betas:
        assert_is_root(lambda x: classic_residual(x, order, A, B, EPS, f), beta)
    assert betas[0] > k0 > betas[-1]  # both outer regimes


def test_a_four_times_finer_scan_finds_the_same_roots():
    # no pair of close roots slips between grid points (common practice: rescan finer)
    for order in (0, 1, 2):
        coarse = ref.rod_in_circular_guide_betas(A, B, EPS, 25e9, order, 50)
        fine = ref.rod_in_circular_guide_betas(A, B, EPS, 25e9, order, 50, points_per_pi=800)
        np.testing.assert_allclose(coarse, fine, rtol=1e-13)


def test_hybrid_mode_passes_smoothly_through_the_vacuum_light_line():
    # beta(f) of a guided mode is analytic in f (common practice): HE11 crossing beta = k0,
    # where the outer radial functions change from J/Y to I/K, must lie on a smooth curve.
    def he11(f):
        return ref.rod_in_circular_guide_betas(A, B, EPS, f, 1, 1)[0]

    f_star = optimize.brentq(lambda f: he11(f) - k0_of(f), 10e9, 12e9, xtol=1e-3)
    assert he11(f_star) == pytest.approx(k0_of(f_star), rel=1e-12)  # a root found at k2 ~ 0 itself
    x = np.linspace(-1, 1, 11)
    beta = np.array([he11(f_star * (1 + 2e-3 * t)) for t in x])
    fit = np.polynomial.polynomial.Polynomial.fit(x, beta, 5)
    assert np.max(np.abs(fit(x) - beta)) < 1e-9 * beta.max()
    assert np.all(np.diff(beta) > 0)


def test_bad_arguments_are_refused():
    with pytest.raises(ValueError):
        ref.rod_in_circular_guide_betas(B, B, EPS, F_FE, 1, 2)  # a = b
    with pytest.raises(ValueError):
        ref.rod_in_circular_guide_betas(A, B, 0.5, F_FE, 1, 2)  # eps_r < 1
    with pytest.raises(ValueError):
        ref.rod_in_circular_guide_betas(A, B, EPS, F_FE, 1, 2, family="TE")  # n >= 1 is hybrid
    with pytest.raises(ValueError):
        ref.rod_in_circular_guide_betas(A, B, EPS, F_FE, -1, 2)


# ---------------------------------------------------------------------------
# femodes' vector solver against the reference
# ---------------------------------------------------------------------------
def azimuthal_order(mode, radius):
    """Dominant harmonic n of (E_z, eta0 H_z) sampled on a ring (the fields vary as cos / sin n phi)."""
    phi = np.linspace(0, 2 * np.pi, 32, endpoint=False)
    _, _, ez, _, _, hz = mode.fields(np.vstack([radius * np.cos(phi), radius * np.sin(phi)]))
    power = np.abs(np.fft.fft(ez)) ** 2 + np.abs(np.fft.fft(ref.ETA0 * hz)) ** 2
    per_order = np.array([power[0]] + [power[n] + power[32 - n] for n in range(1, 16)] + [power[16]])
    return int(np.argmax(per_order)), float(per_order.max() / power.sum())


@pytest.fixture(scope="module")
def rod_modes():
    sec = femodes.circle(B).with_material(femodes.circle(A), eps_r=EPS)
    return femodes.solve(sec, modes=4, frequency=F_FE, accuracy=1e-6)  # ~8-13 s on 2 cores


def test_rod_loaded_circle_betas_match_the_reference(rod_modes):
    # reference: the characteristic equations above, checked against the limits in this file
    ref_by_order = {(0, "TE"): ref.rod_in_circular_guide_betas(A, B, EPS, F_FE, 0, 4, family="TE"),
                    (0, "TM"): ref.rod_in_circular_guide_betas(A, B, EPS, F_FE, 0, 4, family="TM")}
    for n in (1, 2, 3):
        ref_by_order[(n, "hybrid")] = ref.rod_in_circular_guide_betas(A, B, EPS, F_FE, n, 4)
    # the 4 largest betas, a hybrid pair counted twice (cos / sin n phi)
    pool = sorted(((beta, key) for key, betas in ref_by_order.items() for beta in betas
                   for _ in range(2 if key[0] else 1)), reverse=True)
    assert len(rod_modes) == 4
    got_keys = []
    for mode in rod_modes:
        n, share = azimuthal_order(mode, 0.5 * A)
        assert share > 0.99
        key = (n, mode.family if n == 0 else "hybrid")
        got_keys.append(key)
        beta_ref = min(ref_by_order[key], key=lambda x: abs(x - mode.beta()))
        assert abs(mode.beta() - beta_ref) <= mode.beta_error, (key, mode.beta(), beta_ref, mode.beta_error)
        assert abs(mode.beta() - beta_ref) <= 1e-5 * beta_ref
    assert sorted(got_keys) == sorted(key for _, key in pool[:4])  # the same modes, none missed
    betas = [m.beta() for m in rod_modes]
    assert betas == sorted(betas, reverse=True)
