"""Complex modes (complex-conjugate pairs of beta^2 below cutoff) of guides loaded with dielectric.

Outside reference: the characteristic determinant of the circular guide with a concentric
dielectric rod (hybrid HE / EH modes, azimuthal order n >= 1), solved in the complex beta^2 plane
by femodes.reference (grid of |det| + secant method + argument principle; no FE code).  The FE
guide is the half of it cut by a PEC plane through the axis (a sector of 180 degrees): it keeps
one member of every degenerate cos / sin n phi pair (E_z ~ sin n phi), so the pairs are simple.
"""

import cmath
import math
import warnings

import numpy as np
import pytest

import femodes as fm
from femodes.reference import (
    C0,
    rod_in_circular_guide_betas,
    rod_in_circular_guide_complex_beta2,
    rod_in_circular_guide_determinant,
)
from femodes.solvers.loaded import solve_loaded

B, A, EPS = 10e-3, 6e-3, 10.0     # guide radius, rod radius (m), rod permittivity
F = 5e9                           # k0 b = 1.048: inside the complex-mode range of this guide


def _half_rod_guide():
    return fm.sector(B, math.pi).with_material(fm.circle(A), eps_r=EPS)


# ------------------------------------------------------------------ the reference itself
def test_determinant_vanishes_at_the_real_modes_of_the_rod_reference():
    # the complex-plane determinant and the real-axis characteristic function of
    # rod_in_circular_guide_betas are two independent writings of the same matching conditions
    # (Harrington 1961 / Collin, from memory): their real roots must agree
    a, b, eps, f = A, B, EPS, 12e9
    for n in (1, 2):
        betas = rod_in_circular_guide_betas(a, b, eps, f, n, 6)
        assert betas
        for beta in betas:
            x = beta * beta
            lo, hi = rod_in_circular_guide_determinant(np.array([x * (1 - 1e-7), x * (1 + 1e-7)]),
                                                       a, b, eps, f, n).real
            assert lo * hi < 0, (n, beta)


def test_reference_finds_one_simple_complex_pair_and_none_without_the_rod():
    k0 = 2 * math.pi * F / C0
    roots = rod_in_circular_guide_complex_beta2(A, B, EPS, F, 1)
    assert len(roots) == 1
    r = roots[0]
    assert r.imag > 0 and r.real < k0 * k0  # in the box searched: Re beta^2 below k0^2
    # the conjugate is a root too (the determinant is real on the real axis)
    d = rod_in_circular_guide_determinant(np.array([r, r.conjugate(), r + 0.1 * abs(r)]), A, B, EPS, F, 1)
    assert abs(d[0]) < 1e-9 * abs(d[2]) and abs(d[1]) < 1e-9 * abs(d[2])
    # eps_r = 1: the empty circular guide, whose TE and TM problems are self-adjoint in beta^2
    # (common practice): no complex root may be found
    assert rod_in_circular_guide_complex_beta2(A, B, 1.0, F, 1) == []


# ------------------------------------------------------------------ FE against the reference
def test_complex_pair_of_the_rod_loaded_guide_matches_the_reference_within_its_error():
    accuracy = 1e-5
    sec = _half_rod_guide()
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # neither a dropped pair nor an artefact warning
        modes = fm.solve(sec, modes=4, frequency=F, evanescent=True, accuracy=accuracy)
    pair = [m for m in modes if m.family == "complex"]
    assert [m.label for m in pair] == ["complex pair 1 (+)", "complex pair 1 (-)"]
    ref = rod_in_circular_guide_complex_beta2(A, B, EPS, F, 1)[0]
    k0 = 2 * math.pi * F / C0
    for m in pair:
        b2 = m.vector.beta2
        r = ref if b2.imag > 0 else ref.conjugate()
        beta = m.beta()
        assert beta == pytest.approx(cmath.sqrt(b2)) and beta.real >= 0   # the stated branch
        assert not m.propagating and math.isinf(m.guide_wavelength())
        true_beta = abs(beta - cmath.sqrt(r))
        assert true_beta <= m.beta_error                       # true error within the reported
        assert abs(b2 - r) <= 2 * abs(beta) * m.beta_error     # ... also on beta^2
        assert abs(b2 - r) / (k0 * k0 * EPS) <= accuracy       # ... and within the asked accuracy
    assert pair[0].vector.beta2 == pytest.approx(pair[1].vector.beta2.conjugate(), rel=1e-12)
    # propagating modes only: the pair is below cutoff and not returned
    assert all(m.family != "complex" for m in fm.solve(sec, modes=4, frequency=F, accuracy=1e-3))


def test_second_order_pair_matches_the_reference_within_its_error():
    # at 6 GHz the n = 2 family has a complex pair deep below cutoff (Re beta^2 b^2 = -10.5)
    accuracy, f = 1e-4, 6e9
    modes = fm.solve(_half_rod_guide(), modes=8, frequency=f, evanescent=True, accuracy=accuracy)
    pair = [m for m in modes if m.family == "complex"]
    assert len(pair) == 2
    ref = rod_in_circular_guide_complex_beta2(A, B, EPS, f, 2)
    assert len(ref) == 1 and rod_in_circular_guide_complex_beta2(A, B, EPS, f, 1) == []
    k0 = 2 * math.pi * f / C0
    for m in pair:
        b2 = m.vector.beta2
        r = ref[0] if b2.imag > 0 else ref[0].conjugate()
        assert abs(m.beta() - cmath.sqrt(r)) <= m.beta_error
        assert abs(b2 - r) / (k0 * k0 * EPS) <= accuracy


def test_a_complex_mode_carries_no_net_power():
    # a single complex mode carries no net (real) power: from the complex Poynting theorem of a
    # lossless guide with Im beta != 0 (common practice; Omar & Schuenemann, from memory)
    sol = solve_loaded(_half_rod_guide(), 4, F, accuracy=1e-3, evanescent=True)
    pair = [sol.objects[i] for i in sol.keep if sol.objects[i].family == "complex"]
    assert len(pair) == 2
    scale = 1.0 / (2 * 376.730313668)  # 1/2 int |E_t|^2 / eta0 with int |E|^2 = 1 (normalisation)
    for vm in pair:
        assert vm.residual < 1e-10 and vm.divergence < 1e-8
        assert abs(vm.power()) < 1e-8 * scale
        assert math.isnan(vm.group_velocity)


# ------------------------------------------------------------------ artefacts
def test_complex_pairs_of_a_layered_guide_are_reported_as_artefacts():
    # A rectangular guide layered along one axis (the slab-loaded WR-90) has LSE and LSM modes,
    # each a self-adjoint Sturm-Liouville problem in beta^2: all beta^2 real, no complex mode
    # (common practice).  Its very coarse meshes still give complex pairs deep in the evanescent
    # spectrum (near-equal eigenvalues merged): they must not come out as modes, and a warning
    # must say what they are.
    slab = fm.rectangle(22.86e-3, 10.16e-3).with_material(fm.rectangle(4e-3, 10.16e-3), eps_r=10)
    with pytest.warns(RuntimeWarning, match="numerical artefact, not a complex mode"):
        # (accuracy loose enough that these first meshes are the answer: the error model of
        # femodes.solvers.loaded puts them at 0.13)
        sol = solve_loaded(slab, 20, 12e9, accuracy=0.3, order=3, evanescent=True, mesh_size=6e-3,
                           max_iterations=1)
    assert any(o.family == "complex" for o in sol.objects)            # present on the mesh ...
    assert all(sol.objects[i].family != "complex" for i in sol.keep)  # ... but not reported
    # at the accuracy loop's own meshes none appear at all
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        modes = fm.solve(slab, modes=20, frequency=12e9, evanescent=True, accuracy=1e-4, order=3)
    assert len(modes) >= 12 and all(m.family != "complex" for m in modes)


# ------------------------------------------------------------------ along frequency
def test_dispersion_follows_the_pair_from_its_birth_and_the_chart_draws_it(tmp_path):
    accuracy = 1e-3
    sec = _half_rod_guide()
    fs = np.array([3.3e9, 3.6e9, 3.9e9, 4.5e9, 5.1e9])
    disp = fm.dispersion(sec, fs, modes=2, accuracy=accuracy)
    assert np.iscomplexobj(disp.beta2)
    for i, f in enumerate(fs):
        ref = rod_in_circular_guide_complex_beta2(A, B, EPS, f, 1)
        b2 = disp.beta2[i]
        if not ref:  # below the birth of the pair (k0 b ~ 0.78): two real evanescent curves
            assert np.all(b2.imag == 0) and np.all(b2.real < 0)
            continue
        k0 = 2 * math.pi * f / C0
        assert list(disp.family[i]) == ["complex", "complex"]
        assert b2[1] == pytest.approx(b2[0].conjugate(), rel=1e-9)
        r = ref[0] if b2[0].imag > 0 else ref[0].conjugate()
        assert abs(b2[0] - r) / (k0 * k0 * EPS) <= accuracy
        assert disp.beta[i, 0] == pytest.approx(cmath.sqrt(b2[0]))
    assert any(disp.family[0, k] != "complex" for k in range(2))
    fig = fm.report.figures.dispersion_chart(disp, tmp_path / "d.png", section=sec)
    gids = [ln.get_gid() for ln in fig.axes[0].lines]
    assert gids.count("complex-re") == 1 and gids.count("complex-im") == 1  # once per pair
    assert (tmp_path / "d.png").stat().st_size > 0
