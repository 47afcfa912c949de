"""Engineering quantities (femodes.quantities) against closed forms.

Sources of the expected numbers (each named again beside its check):
* Pozar, Microwave Engineering, 4th ed.: sec. 3.1 (TE/TM propagation, evanescent modes, wave
  impedances, dielectric loss alpha_d = k^2 tan_delta / (2 beta)), sec. 3.3 (rectangular guide:
  TE10 fields, power P = |E0|^2 a b / (4 Z_TE), conductor loss eq. 3.96), sec. 3.4 (circular guide:
  TE_nm loss R_s (kc^2 + k^2 n^2 / (p'^2 - n^2)) / (a k eta beta), TM_nm loss R_s k / (a eta beta)),
  sec. 2.2 / 2.7 (coaxial line: Z0 = eta ln(b/a) / (2 pi), alpha_c = R_s (1/a + 1/b) / (2 eta ln(b/a))),
  sec. 1.7 (skin depth, surface resistance).  Equation numbers from memory.
* Marcuvitz, Waveguide Handbook, sec. 2.2 (rectangular guide impedance definitions) for the
  power-voltage, power-current and voltage-current impedances of TE10, here derived again in
  the test comments from Pozar's TE10 fields.
* Hammerstad & Jensen 1980 (roughness factor), common practice (1.25 fc1 .. 0.95 fc2 band rule,
  EIA WR-90 band 8.2 - 12.4 GHz, 3 MV/m for dry air), from memory where stated.
"""

import math

import numpy as np
import pytest

import femodes as fm
from femodes import FemodesError
from femodes import quantities as Q

C0 = 299792458.0  # m/s, exact (SI definition)
MU0 = fm.MU0
EPS0 = fm.EPS0
ETA0 = math.sqrt(MU0 / EPS0)
A, B = 22.86e-3, 10.16e-3  # EIA WR-90 inner dimensions (m)
SIGMA_CU = 5.8e7


def rs(f, sigma=SIGMA_CU):
    # R_s = sqrt(omega mu0 / (2 sigma)): Pozar sec. 1.7
    return np.sqrt(2 * np.pi * np.asarray(f) * MU0 / (2 * sigma))


@pytest.fixture(scope="module")
def wr90():
    return fm.solve(fm.rectangle(A, B), modes=5, accuracy=1e-6)


@pytest.fixture(scope="module")
def te10(wr90):
    return wr90.by_label("TE10")[0]


@pytest.fixture(scope="module")
def circ():
    # TE11 x2, TM01, TE21 x2, TE01, TM11 x2
    return fm.solve(fm.circle(10e-3), modes=8, accuracy=1e-6)


COAX_A, COAX_B, COAX_EPS = 1.52e-3, 3.5e-3, 2.1


@pytest.fixture(scope="module")
def coax():
    return fm.solve(fm.coaxial(COAX_B, COAX_A), modes=1, accuracy=1e-6, eps_r=COAX_EPS)[0]


# ----------------------------------------------------------------------------- propagation

def test_wave_quantities_above_and_below_cutoff(te10):
    f = np.array([0.5 * te10.fc, 10e9])
    wq = Q.wave_quantities(te10, f)
    k = 2 * np.pi * f / C0
    kc = math.pi / A
    # beta = sqrt(k^2 - kc^2) above cutoff, alpha = sqrt(kc^2 - k^2) below: Pozar sec. 3.1
    assert wq.propagates.tolist() == [False, True]
    assert wq.alpha[0] == pytest.approx(math.sqrt(kc ** 2 - k[0] ** 2), rel=1e-6)
    assert wq.beta[1] == pytest.approx(math.sqrt(k[1] ** 2 - kc ** 2), rel=1e-6)
    assert wq.guide_wavelength[1] == pytest.approx(2 * math.pi / math.sqrt(k[1] ** 2 - kc ** 2), rel=1e-6)
    # Z_TE = k eta / beta above cutoff, j omega mu / alpha (inductive) below: Pozar sec. 3.1
    assert wq.wave_impedance[1].real == pytest.approx(k[1] * ETA0 / math.sqrt(k[1] ** 2 - kc ** 2), rel=1e-6)
    assert wq.wave_impedance[0].imag == pytest.approx(k[0] * ETA0 / math.sqrt(kc ** 2 - k[0] ** 2), rel=1e-6)
    # group delay per metre = 1 / v_g, infinite below cutoff (definition)
    assert wq.group_delay[1] == pytest.approx(1 / wq.group_velocity[1], rel=1e-12)
    assert math.isinf(wq.group_delay[0])


def test_phase_times_group_velocity_is_c2_over_eps_mu():
    # v_p v_g = c^2 / (eps_r mu_r) for a homogeneously filled guide: Pozar sec. 3.1 (group velocity)
    m = fm.solve(fm.rectangle(A, B), modes=1, accuracy=1e-4, eps_r=2.25, mu_r=1.5)[0]
    f = np.linspace(1.05, 3.0, 5) * m.fc
    wq = Q.wave_quantities(m, f)
    np.testing.assert_allclose(wq.phase_velocity * wq.group_velocity, C0 ** 2 / (2.25 * 1.5), rtol=1e-12)


def test_band_and_recommended_rule(wr90):
    b = Q.band(wr90)
    fc10, fc20 = C0 / (2 * A), C0 / A  # TE10, TE20 of WR-90 (a > 2b): Pozar sec. 3.3
    assert b.low == pytest.approx(fc10, rel=1e-6)
    assert b.high == pytest.approx(fc20, rel=1e-6)
    assert b.ratio == pytest.approx(2.0, rel=1e-6)
    # 1.25 fc1 .. 0.95 fc2: the rule of thumb (common practice)
    assert b.recommended == pytest.approx((1.25 * fc10, 0.95 * fc20), rel=1e-6)
    # it reproduces the EIA WR-90 band 8.2 - 12.4 GHz within 1 % (common practice, from memory)
    assert b.recommended[0] == pytest.approx(8.2e9, rel=0.01)
    assert b.recommended[1] == pytest.approx(12.4e9, rel=0.01)
    assert (b.dominant, b.next) == ("TE10", "TE20")


def test_propagating_modes(wr90):
    # WR-90 cutoffs TE10 6.557, TE20 13.114, TE01 14.76 GHz: Pozar sec. 3.3 closed form
    assert [m.label for m in Q.propagating(wr90, 10e9)] == ["TE10"]
    assert [m.label for m in Q.propagating(wr90, 14e9)] == ["TE10", "TE20"]
    with pytest.raises(FemodesError, match="solve for more modes"):
        Q.propagating(wr90, 30e9)  # above every computed cutoff: unknown modes could propagate
    assert len(Q.propagating(wr90, 30e9, strict=False)) == len(wr90)


# ----------------------------------------------------------------------------- longitudinal fields

def test_te10_hz_against_pozar_fields(te10):
    # TE10: H_z = A cos(pi x'/a), H_x = (j beta a / pi) A sin(pi x'/a) (x' from the left wall):
    # Pozar sec. 3.3, so at x' = a/4 |H_x| / |H_z| = beta a / pi, with H_z in quadrature with H_x
    f = 10e9
    beta = math.sqrt((2 * math.pi * f / C0) ** 2 - (math.pi / A) ** 2)
    pts = np.array([[-A / 4, 0.0], [0.0, 0.0]])
    fp = Q.field_phasors(te10, f, pts, power=1.0)
    ratio = abs(fp.hx[0]) / abs(fp.hz[0])
    assert ratio == pytest.approx(beta * A / math.pi, rel=1e-5)
    assert abs(fp.hz[0].real) < 1e-9 * abs(fp.hz[0])
    assert abs(fp.hx[0].imag) == 0
    # P = |E0|^2 a b / (4 Z_TE), E_y = E0 sin(pi x'/a): Pozar sec. 3.3
    z = te10.wave_impedance(f)
    assert abs(fp.ey[0]) == pytest.approx(math.sqrt(4 * z / (A * B)) * math.sin(math.pi / 4), rel=1e-5)


def test_tm11_ez_against_pozar_fields(wr90):
    # TM_mn: E_z = B sin(m pi x'/a) sin(n pi y'/b), E_x = -(j beta m pi / (a kc^2)) B cos(..) sin(..):
    # Pozar sec. 3.3; so at (x', y') = (a/4, b/2) |E_x| / |E_z| = beta (pi / a) / kc^2
    tm = wr90.by_label("TM11")[0]
    f = 20e9
    kc2 = (math.pi / A) ** 2 + (math.pi / B) ** 2
    beta = math.sqrt((2 * math.pi * f / C0) ** 2 - kc2)
    fp = Q.field_phasors(tm, f, np.array([[-A / 4], [0.0]]))
    # (a pointwise gradient of the finite-element field: agrees to about 4e-4 at accuracy 1e-6)
    assert abs(fp.ex[0]) / abs(fp.ez[0]) == pytest.approx(beta * (math.pi / A) / kc2, rel=1e-3)
    assert np.all(fp.hz == 0)


# ----------------------------------------------------------------------------- losses

def test_wr90_te10_copper_loss(te10):
    f = np.array([8.2e9, 10e9, 12.4e9])
    k = 2 * np.pi * f / C0
    beta = np.sqrt(k ** 2 - (math.pi / A) ** 2)
    # alpha_c = R_s (2 b pi^2 + a^3 k^2) / (a^3 b beta k eta): Pozar, 4th ed., eq. 3.96
    ref = rs(f) * (2 * B * math.pi ** 2 + A ** 3 * k ** 2) / (A ** 3 * B * beta * k * ETA0)
    got = fm.attenuation(te10, f, conductivity=SIGMA_CU)
    np.testing.assert_allclose(got, ref, rtol=1e-4)
    # about 0.11 dB/m at 10 GHz for copper WR-90 (from memory)
    assert 0.10 < Q.to_db(got[1]) < 0.12
    assert Q.NP_TO_DB == pytest.approx(8.686, rel=1e-4)  # 20 / ln 10 dB per neper (definition)


@pytest.mark.parametrize("label,n,family", [("TE11", 1, "TE"), ("TM01", 0, "TM"), ("TE01", 0, "TE")])
def test_circular_guide_losses(circ, label, n, family):
    R = 10e-3
    f = np.array([20e9, 30e9, 60e9])
    k = 2 * np.pi * f / C0
    for m in circ.by_label(label):
        kc = m.kc
        beta = np.sqrt(k ** 2 - kc ** 2)
        p = kc * R
        if family == "TE":
            # TE_nm: alpha = R_s (kc^2 + k^2 n^2 / (p'_nm^2 - n^2)) / (a k eta beta): Pozar sec. 3.4
            # (TE11 eq. 3.133) / Marcuvitz, Waveguide Handbook, sec. 2.3
            ref = rs(f) * (kc ** 2 + k ** 2 * n ** 2 / (p ** 2 - n ** 2)) / (R * k * ETA0 * beta)
        else:
            # TM_nm: alpha = R_s k / (a eta beta): Pozar sec. 3.4 / Marcuvitz sec. 2.3
            ref = rs(f) * k / (R * ETA0 * beta)
        got = np.asarray(fm.attenuation(m, f))
        np.testing.assert_allclose(got, ref, rtol=1e-4)
        if label == "TE01":
            # TE01 loss falls monotonically with frequency: Pozar sec. 3.4
            assert np.all(np.diff(got) < 0)


def test_coax_tem_impedance_and_loss(coax):
    a, b, er = COAX_A, COAX_B, COAX_EPS
    assert coax.family == "TEM"
    z = fm.impedance(coax, 1e9)
    # Z0 = eta0 ln(b/a) / (2 pi sqrt(eps_r)) ~ 60 ln(b/a) / sqrt(eps_r): Pozar sec. 2.2
    assert z == pytest.approx(ETA0 / (2 * math.pi) * math.log(b / a) / math.sqrt(er), rel=1e-5)
    assert z == pytest.approx(60 * math.log(b / a) / math.sqrt(er), rel=1e-3)  # the rounded 60 ohm form
    # the same from V = int E . dl from inner to outer conductor (Pozar sec. 2.2: V = int E . dl)
    assert fm.impedance(coax, 1e9, "PV", path=[(0.0, a), (0.0, b)]) == pytest.approx(z, rel=1e-4)
    f = np.array([1e9, 5e9])
    eta = ETA0 / math.sqrt(er)
    # alpha_c = R_s (1/a + 1/b) / (2 eta ln(b/a)): Pozar sec. 2.7 (coaxial line loss)
    np.testing.assert_allclose(fm.attenuation(coax, f), rs(f) * (1 / a + 1 / b) / (2 * eta * math.log(b / a)),
                               rtol=1e-4)
    # H_phi ~ 1 / rho on both conductors (Pozar sec. 2.2): inner/outer share of oint |H|^2 = b / a
    w = Q.wall_integrals(coax)
    (t_out, _, l_out), (t_in, _, l_in) = w.per_conductor
    assert t_in / t_out == pytest.approx(b / a, rel=1e-4)
    assert (l_out, l_in) == pytest.approx((2 * math.pi * b, 2 * math.pi * a), rel=1e-6)


def test_dielectric_loss(coax, te10):
    td = 1e-4
    f = 10e9
    # exact: gamma = sqrt(kc^2 - omega^2 mu eps0 eps_r (1 - j tan_delta)); alpha_d = Re gamma;
    # the first-order form k^2 tan_delta / (2 beta) agrees to O(tan_delta^2): Pozar sec. 3.1
    m = fm.solve(fm.rectangle(A, B), modes=1, accuracy=1e-6, eps_r=2.2)[0]
    w = 2 * math.pi * f
    gamma = np.sqrt(m.kc ** 2 - w ** 2 * MU0 * EPS0 * 2.2 * (1 - 1j * td) + 0j)
    assert Q.dielectric_attenuation(m, f, td) == pytest.approx(gamma.real, rel=1e-6)
    # TEM: alpha_d = k tan_delta / 2: Pozar sec. 3.1
    k = w * math.sqrt(COAX_EPS) / C0
    assert Q.dielectric_attenuation(coax, f, td) == pytest.approx(k * td / 2, rel=1e-12)
    # the total is conductor + dielectric (definition of Mode.attenuation)
    total = fm.attenuation(m, f, tan_delta=td)
    assert total == pytest.approx(Q.conductor_attenuation(m, f) + Q.dielectric_attenuation(m, f, td), rel=1e-12)
    assert fm.attenuation(te10, f, tan_delta=0.0) == pytest.approx(Q.conductor_attenuation(te10, f), rel=1e-12)


def test_hammerstad_jensen_limits(te10):
    f = 10e9
    d = Q.skin_depth(f, SIGMA_CU)
    # skin depth sqrt(2 / (omega mu0 sigma)) and R_s = 1 / (sigma delta_s): Pozar sec. 1.7
    assert d == pytest.approx(math.sqrt(2 / (2 * math.pi * f * MU0 * SIGMA_CU)), rel=1e-12)
    assert Q.surface_resistance(f, SIGMA_CU) == pytest.approx(1 / (SIGMA_CU * d), rel=1e-12)
    # K = 1 + (2/pi) arctan(1.4 (Delta/delta_s)^2): 1 for smooth, -> 2 for very rough
    # (Hammerstad & Jensen 1980)
    assert Q.roughness_factor(f, SIGMA_CU, 0.0) == 1.0
    assert Q.roughness_factor(f, SIGMA_CU, 100 * d) == pytest.approx(2.0, abs=1e-4)
    assert Q.roughness_factor(f, SIGMA_CU, d) == pytest.approx(1 + 2 / math.pi * math.atan(1.4), rel=1e-12)
    smooth = fm.attenuation(te10, f)
    rough = fm.attenuation(te10, f, roughness=d)
    assert rough / smooth == pytest.approx(1 + 2 / math.pi * math.atan(1.4), rel=1e-12)


def test_metal_table_and_errors(te10):
    # IACS annealed copper 5.8e7 S/m (from memory); the other values are textbook round figures
    assert Q.conductivity_of("copper") == 5.8e7
    assert Q.conductivity_of("Aluminum") == Q.METALS["aluminium"]
    assert set(Q.METALS) >= {"copper", "silver", "gold", "aluminium", "brass", "stainless steel"}
    # silver > copper > gold > aluminium > brass > stainless steel (from memory)
    order = ["silver", "copper", "gold", "aluminium", "brass", "stainless steel"]
    assert [Q.METALS[k] for k in order] == sorted(Q.METALS.values(), reverse=True)
    # a worse conductor loses more: alpha ~ R_s ~ 1 / sqrt(sigma) (Pozar sec. 1.7)
    assert fm.attenuation(te10, 10e9, "brass") / fm.attenuation(te10, 10e9, "copper") == pytest.approx(
        math.sqrt(5.8e7 / Q.METALS["brass"]), rel=1e-12)
    with pytest.raises(FemodesError, match="unknown metal 'unobtainium'.*copper"):
        Q.conductivity_of("unobtainium")
    with pytest.raises(FemodesError, match="below cutoff.*6.55"):
        fm.attenuation(te10, 5e9)
    with pytest.raises(FemodesError, match="roughness must be zero or a positive"):
        fm.attenuation(te10, 10e9, roughness=-1e-6)
    with pytest.raises(FemodesError, match="'PV', 'PI' or 'VI'.*'ZZ'"):
        fm.impedance(te10, 10e9, kind="ZZ")


# ----------------------------------------------------------------------------- impedance

def test_rectangular_te10_impedances(te10):
    f = np.array([8.2e9, 10e9, 12.4e9])
    z = te10.wave_impedance(f)
    # E_y = E0 sin(pi x'/a): V = E0 b on the centre line, P = E0^2 a b / (4 Z_TE) (Pozar sec. 3.3);
    # top-wall current I = int |H_x| dx = (E0 / Z_TE) 2a / pi.  Hence (Marcuvitz sec. 2.2 definitions)
    # Z_PV = V^2 / 2P = 2 (b/a) Z_TE,  Z_PI = 2P / I^2 = (pi^2 b / 8a) Z_TE,  Z_VI = V / I = (pi b / 2a) Z_TE
    np.testing.assert_allclose(fm.impedance(te10, f, "PV"), 2 * B / A * z, rtol=1e-4)
    np.testing.assert_allclose(fm.impedance(te10, f, "PI"), math.pi ** 2 * B / (8 * A) * z, rtol=1e-4)
    np.testing.assert_allclose(fm.impedance(te10, f, "VI"), math.pi * B / (2 * A) * z, rtol=1e-4)
    # the default path: centre line, wall to wall
    (x0, y0), (x1, y1) = Q.voltage_path(te10)
    assert (x0, x1) == pytest.approx((0.0, 0.0), abs=1e-12)
    assert sorted((y0, y1)) == pytest.approx([-B / 2, B / 2], rel=1e-6)


def test_ridge_voltage_path_crosses_gap():
    # the default path of a ridge guide runs across the gap between the ridges (definition)
    g = fm.double_ridge(34e-3, 16e-3, ridge_width=8e-3, gap=1.5e-3, ridge_corner_radius=0.2e-3)
    m = fm.solve(g, modes=1, accuracy=1e-4)[0]
    (x0, y0), (x1, y1) = Q.voltage_path(m, g)
    assert abs(y1 - y0) == pytest.approx(1.5e-3, rel=1e-6)
    assert x0 == pytest.approx(0.0, abs=1e-12)


# ----------------------------------------------------------------------------- power handling

def test_te10_peak_field_per_watt(te10):
    f = 10e9
    ph = fm.power_handling(te10, f)
    z = te10.wave_impedance(f)
    # P = |E0|^2 a b / (4 Z_TE) (Pozar sec. 3.3): peak |E| for 1 W = sqrt(4 Z_TE / (a b)),
    # on the centre line x = 0
    assert ph.peak_field_per_sqrt_watt == pytest.approx(math.sqrt(4 * z / (A * B)), rel=1e-4)
    assert abs(ph.peak_location[0]) < 0.01 * A
    # power at 3 MV/m (dry air at sea level: common practice): E^2 a b / (4 Z_TE), halved by the
    # default safety factor 2 (a choice)
    assert ph.breakdown_field == 3e6
    assert ph.breakdown_power == pytest.approx(3e6 ** 2 * A * B / (4 * z), rel=2e-4)
    assert ph.rated_power == pytest.approx(ph.breakdown_power / 2, rel=1e-12)
    assert ph.corners == () and ph.warnings == ()


def test_power_handling_cautions_and_corner_warning():
    ph_words = ("pressure", "humidity", "pulse length", "surface finish", "contamination", "multipaction",
                "hazardous", "local codes, standards and licensed practice")
    g = fm.double_ridge(34e-3, 16e-3, ridge_width=8e-3, gap=1.5e-3)  # sharp ridge corners
    m = fm.solve(g, modes=1, accuracy=1e-4)[0]
    ph = Q.power_handling(m, 4e9, section=g)
    text = " ".join(ph.cautions)
    for w in ph_words:  # the cautions the brief asks for, present in every result
        assert w in text
    assert all(c in ph.lines()[-len(ph.cautions):][i] for i, c in enumerate(ph.cautions))
    assert len(ph.corners) == 4  # the four ridge-tip corners (270 degrees) of the section
    assert "re-entrant" in ph.warnings[0] and "rounded" in ph.warnings[0]
    # the field is singular at a 270-degree corner (~ r^(-1/3), Meixner edge condition; from memory):
    # a smaller exclusion disc gives a larger peak
    small = Q.power_handling(m, 4e9, section=g, corner_exclusion=1e-5)
    assert small.peak_field_per_sqrt_watt > 1.5 * ph.peak_field_per_sqrt_watt
    # without the section the corners are found on the mesh
    np.testing.assert_allclose(fm.power_handling(m, 4e9).corners, ph.corners, atol=1e-12)


def test_reentrant_corners_found_on_a_mesh_file(tmp_path):
    # an L-shaped guide read from a mesh file has one 270-degree corner, at (1, 1) for
    # femodes.l_shape(2, 2, 1, 1) (geometry of the section, exact)
    mesh = fm.mesh_section(fm.l_shape(2.0, 2.0, 1.0, 1.0), 0.5, order=2)
    path = tmp_path / "l.msh"
    fm.write_mesh(mesh, path)
    ms = fm.solve(fm.read_mesh(str(path)), modes=1, accuracy=1e-4)
    ph = fm.power_handling(ms[0], 1.5 * ms[0].fc)
    assert len(ph.corners) == 1
    assert np.allclose(ph.corners[0], (1.0, 1.0), atol=1e-9)
