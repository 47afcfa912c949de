"""Tests of the engineering-quantity reports in femodes.export: analyse(), analysis_table(),
analysis_document() and power_text().

Sources of the expected numbers (each named again beside its check):
* Pozar, Microwave Engineering, 4th ed.: sec. 3.1 (beta = sqrt(k^2 - kc^2), evanescent decay
  alpha = sqrt(kc^2 - k^2), Z_TE = k eta / beta, dielectric loss alpha_d = k^2 tan_delta / (2 beta)),
  sec. 3.3 (rectangular guide TE10: power P = |E0|^2 a b / (4 Z_TE), conductor loss eq. 3.96),
  sec. 2.2 (coaxial line: Z0 = eta ln(b/a) / (2 pi), E_rho = V / (rho ln(b/a))), sec. 1.7 (R_s).
* The TE10 impedances 2 (b/a) Z_TE, (pi^2 b / 8a) Z_TE, (pi b / 2a) Z_TE: the power-voltage,
  power-current and voltage-current definitions (Marcuvitz, Waveguide Handbook, sec. 2.2) applied
  to Pozar's TE10 fields (derived in tests/test_quantities.py).
* Common practice: 3 MV/m for dry air; the 1.25 fc1 .. 0.95 fc2 band rule.
EIA WR-90 inner size 22.86 x 10.16 mm.
"""

import json
import math

import numpy as np
import pytest

import femodes as fm
from femodes import FemodesError
from femodes import quantities as Q
from femodes.case import AnalysisSettings
from femodes.report import analyse, analysis_document, analysis_table, modes_document, power_text

C0 = 299792458.0
ETA0 = math.sqrt(fm.MU0 / fm.EPS0)
A, B = 22.86e-3, 10.16e-3
SIGMA_CU = 5.8e7
NP_TO_DB = 20 / math.log(10)  # dB per neper (definition)


def rs(f, sigma=SIGMA_CU):
    # R_s = sqrt(omega mu0 / (2 sigma)): Pozar sec. 1.7
    return np.sqrt(2 * np.pi * np.asarray(f) * fm.MU0 / (2 * sigma))


def te10_loss(f, eps_r=1.0):
    # alpha_c = R_s (2 b pi^2 + a^3 k^2) / (a^3 b beta k eta): Pozar eq. 3.96 (air filled)
    k = 2 * np.pi * np.asarray(f) / C0
    beta = np.sqrt(k ** 2 - (math.pi / A) ** 2)
    return rs(f) * (2 * B * math.pi ** 2 + A ** 3 * k ** 2) / (A ** 3 * B * beta * k * ETA0)


@pytest.fixture(scope="module")
def wr90():
    return fm.solve(fm.rectangle(A, B), modes=3, accuracy=1e-5)


def strict(doc):
    return json.loads(json.dumps(doc, allow_nan=False))


# ----------------------------------------------------------------------------- power_text

@pytest.mark.parametrize("watts, text", [(12.5, "12.5 W"), (999.0, "999 W"), (32288.6, "32.29 kW"),
                                         (1.234e6, "1.234 MW"), (5.0e9, "5 GW")])
def test_power_text_engineering_units(watts, text):
    # SI prefixes: 1 kW = 1e3 W, 1 MW = 1e6 W, 1 GW = 1e9 W
    assert power_text(watts) == text


# ----------------------------------------------------------------------------- WR-90 at one frequency

def test_wr90_quantities_with_fill_loss(wr90):
    f, td = 10e9, 2e-4
    an = analyse(wr90, AnalysisSettings(frequency=f, tan_delta=td))
    k = 2 * math.pi * f / C0
    kc = math.pi / A
    beta = math.sqrt(k ** 2 - kc ** 2)
    z_te = k * ETA0 / beta                                   # Pozar sec. 3.1
    te10 = an.modes[0]
    assert te10.mode.label == "TE10" and te10.propagates
    assert te10.waves.beta == pytest.approx(beta, rel=1e-5)  # Pozar sec. 3.1
    assert te10.losses.conductor == pytest.approx(te10_loss(f), rel=1e-4)      # Pozar eq. 3.96
    assert te10.losses.dielectric == pytest.approx(k ** 2 * td / (2 * beta), rel=1e-5)  # Pozar sec. 3.1
    z = te10.impedances
    assert z["PV"] == pytest.approx(2 * B / A * z_te, rel=1e-4)
    assert z["PI"] == pytest.approx(math.pi ** 2 * B / (8 * A) * z_te, rel=1e-4)
    assert z["VI"] == pytest.approx(math.pi * B / (2 * A) * z_te, rel=1e-4)
    # TE20 (13.1 GHz) and TE01 (14.8 GHz) are below cutoff at 10 GHz: decay sqrt(kc^2 - k^2), Pozar sec. 3.1
    assert [q.mode.label for q in an.evanescent] == ["TE20", "TE01"]
    te20 = an.evanescent[0]
    assert te20.waves.alpha == pytest.approx(math.sqrt((2 * math.pi / A) ** 2 - k ** 2), rel=1e-5)
    assert te20.losses is None and te20.power is None and te20.impedances is None

    doc = strict(analysis_document(an))
    m0 = doc["modes"][0]
    assert m0["attenuation_np_per_m"]["dielectric"] == pytest.approx(k ** 2 * td / (2 * beta), rel=1e-5)
    total = te10_loss(f) + k ** 2 * td / (2 * beta)
    assert m0["attenuation_np_per_m"]["total"] == pytest.approx(total, rel=1e-4)
    assert m0["attenuation_db_per_m"]["total"] == pytest.approx(total * NP_TO_DB, rel=1e-4)
    assert m0["wave_impedance"] == {"real": pytest.approx(z_te, rel=1e-5), "imag": 0.0}
    assert doc["fill"] == {"tan_delta": td}
    assert doc["walls"]["surface_resistance"] == pytest.approx(float(rs(f)), rel=1e-12)
    ev = doc["modes"][1]
    assert ev["propagates"] is False and ev["guide_wavelength"] is None and ev["attenuation_db_per_m"] is None
    # below cutoff the TE wave impedance is j omega mu / alpha (inductive): Pozar sec. 3.1
    assert ev["wave_impedance"]["real"] == 0.0
    assert ev["wave_impedance"]["imag"] == pytest.approx(2 * math.pi * f * fm.MU0 / te20.waves.alpha, rel=1e-6)
    # the modes list of the document is unchanged by the analysis (same entries, one more key at top)
    plain = strict(modes_document(wr90))
    withan = strict(modes_document(wr90, analysis=an))
    assert withan["modes"] == plain["modes"] and set(withan) == set(plain)
    assert plain["analysis"] is None and withan["analysis"]["frequency"] == f


def test_wr90_band_sweep_and_rated_power_over_the_band(wr90):
    fs = np.linspace(8.2e9, 12.4e9, 5)
    an = analyse(wr90, AnalysisSettings(band=(8.2e9, 12.4e9), points=5, safety_factor=2.0))
    assert an.frequency == pytest.approx(10.3e9)            # band centre (8.2 + 12.4) / 2
    np.testing.assert_allclose(an.sweep.frequencies, fs)
    assert set(an.sweep.attenuation) == {0}                  # only TE10 propagates in 8.2 - 12.4 GHz
    np.testing.assert_allclose(an.sweep.attenuation[0], te10_loss(fs), rtol=1e-4)   # Pozar eq. 3.96
    # rated power: E_bd^2 a b / (4 Z_TE) / safety (Pozar sec. 3.3; 3 MV/m dry air, common practice)
    k = 2 * np.pi * fs / C0
    z_te = k * ETA0 / np.sqrt(k ** 2 - (math.pi / A) ** 2)
    np.testing.assert_allclose(an.sweep.rated_power[0], 3e6 ** 2 * A * B / (4 * z_te) / 2, rtol=1e-3)
    doc = strict(analysis_document(an))
    sw = doc["band"]["sweep"]
    assert sw["points"] == 5 and sw["frequencies"] == pytest.approx(fs.tolist())
    te10 = sw["modes"][0]
    # TE10 copper loss falls from 8.2 to 12.4 GHz in WR-90 (its minimum is above the band): eq. 3.96
    assert te10["max_at"] == pytest.approx(8.2e9) and te10["min_at"] == pytest.approx(12.4e9)
    assert te10["rated_power_min_at"] == pytest.approx(8.2e9)   # Z_TE largest at the lowest frequency
    rec = doc["band"]["recommended"]
    fc1, fc2 = C0 / (2 * A), C0 / A                         # TE10, TE20: Pozar sec. 3.3
    assert (rec["f_low"], rec["f_high"]) == pytest.approx((1.25 * fc1, 0.95 * fc2), rel=1e-5)
    assert "rule of thumb" in rec["rule"]


def test_analysis_refuses_frequencies_above_the_modes_computed(wr90):
    # the highest cutoff computed is TE01 at c / 2b = 14.75 GHz (Pozar sec. 3.3)
    with pytest.raises(FemodesError, match="solve for more modes"):
        analyse(wr90, AnalysisSettings(frequency=15e9))
    with pytest.raises(FemodesError, match="band reaches 16 GHz"):
        analyse(wr90, AnalysisSettings(frequency=10e9, band=(9e9, 16e9)))


def test_close_to_cutoff_the_loss_is_flagged(wr90):
    fc = wr90[0].fc
    an = analyse(wr90, AnalysisSettings(frequency=fc * (1 + 1e-7)))
    q = an.modes[0]
    # the power-loss method needs alpha << beta; here beta -> 0 (definition of the note)
    assert q.losses.total / q.waves.beta > 0.01
    assert any("too close to cutoff" in n for n in q.notes)
    assert "too close to cutoff" in analysis_table(an)
    far = analyse(wr90, AnalysisSettings(frequency=10e9))
    assert not any("cutoff" in n for n in far.modes[0].notes)


def test_table_layout_and_cautions_last(wr90):
    an = analyse(wr90, AnalysisSettings(frequency=10e9, impedance="VI"))
    text = analysis_table(an)
    lines = text.splitlines()
    # VI shown first when asked
    zline = next(line for line in lines if line.startswith("impedance of TE10"))
    first, also = zline.split("(also")
    assert "Z_VI =" in first and "Z_PV =" in also and "Z_PI =" in also
    i_power = next(i for i, line in enumerate(lines) if line.startswith("power handling at 10 GHz"))
    i_caut = lines.index("cautions (power handling):")
    assert i_caut > i_power
    body = " ".join(line.strip() for line in lines[i_caut + 1:])
    for c in Q.CAUTIONS:
        assert " ".join(c.split()) in body
    assert "recommended operating band: 8.1964 - 12.459 GHz" in text   # 1.25 x 6.557, 0.95 x 13.114 GHz


# ----------------------------------------------------------------------------- coax (TEM)

def test_coax_line_impedance_and_power_handling():
    a, b, er = 1.52e-3, 3.5e-3, 2.1
    ms = fm.solve(fm.coaxial(b, a), modes=3, accuracy=1e-6, eps_r=er)    # TEM and the TE11 pair
    an = analyse(ms, AnalysisSettings(band=(1e9, 5e9), points=3, conductor="silver", conductivity=Q.METALS["silver"]))
    eta = ETA0 / math.sqrt(er)
    z0 = eta * math.log(b / a) / (2 * math.pi)              # Pozar sec. 2.2
    q = an.modes[0]
    assert q.mode.family == "TEM"
    for kind in ("PV", "PI", "VI"):
        assert q.impedances[kind] == pytest.approx(z0, rel=1e-5)
    # peak field on the inner conductor, E = V / (a ln(b/a)), P = V^2 / (2 Z0) (Pozar sec. 2.2):
    # P_bd = (E_bd a ln(b/a))^2 / (2 Z0); the peak is a pointwise field at a curved wall (0.5 %)
    p_bd = (3e6 * a * math.log(b / a)) ** 2 / (2 * z0)
    assert q.power.breakdown_power == pytest.approx(p_bd, rel=5e-3)
    assert math.hypot(*q.power.peak_location) == pytest.approx(a, rel=1e-3)
    # a TEM mode's wave impedance does not depend on frequency, so neither does its rated power
    np.testing.assert_allclose(an.sweep.rated_power[0], q.power.rated_power, rtol=1e-12)
    text = analysis_table(an)
    assert "line impedance of TEM (#1): Z0 = " in text and "silver" in text
    doc = strict(analysis_document(an))
    # with a TEM mode the single-mode band starts at 0 Hz and its ratio is unbounded (null in JSON)
    assert doc["band"]["single_mode"]["f_low"] == 0.0 and doc["band"]["single_mode"]["ratio"] is None
    assert [m["label"] for m in doc["modes"]] == ["TEM", "TE11", "TE11"]


# ----------------------------------------------------------------------------- a guide from a mesh file

def test_mesh_guide_power_handling_without_a_section():
    mesh = fm.mesh_section(fm.rectangle(A, B), 2.5e-3, order=2)
    ms = fm.solve(mesh, modes=2, accuracy=1e-5)
    assert ms.section is None
    an = analyse(ms, AnalysisSettings(frequency=10e9))
    k = 2 * math.pi * 10e9 / C0
    z_te = k * ETA0 / math.sqrt(k ** 2 - (math.pi / A) ** 2)
    # P = E_bd^2 a b / (4 Z_TE) (Pozar sec. 3.3); a rectangle has no re-entrant corner
    assert an.modes[0].power.breakdown_power == pytest.approx(3e6 ** 2 * A * B / (4 * z_te), rel=1e-3)
    assert an.modes[0].power.corners == ()


def test_voltage_impedances_undefined_when_the_path_voltage_cancels():
    # TM11 of a rectangle: E_y ~ sin(pi x'/a) cos(pi y'/b) (Pozar sec. 3.3), whose integral over the
    # height on the centre line is zero, so Z_PV and Z_VI have no meaning there; Z_PI still does
    ms = fm.solve(fm.rectangle(A, B), modes=2, accuracy=1e-4, family="TM")
    an = analyse(ms, AnalysisSettings(frequency=17e9), family="TM")
    q = an.modes[0]
    assert q.mode.label == "TM11"
    assert q.impedances["PV"] is None and q.impedances["VI"] is None and q.impedances["PI"] > 0
    assert any("cancels" in n for n in q.notes)
    text = analysis_table(an)
    assert "Z_PV = n/a" in text and "(TM modes only" in text
    assert strict(analysis_document(an))["modes"][0]["impedances"]["PV"] is None


def test_field_file_round_trip(tmp_path):
    import meshio

    ms = fm.solve(fm.rectangle(A, B), modes=2, accuracy=1e-5)
    path = fm.report.write_fields(ms, tmp_path / "wr90.vtu")
    back = meshio.read(path)
    psi = back.point_data["01_TE10_psi"]
    absE = back.point_data["01_TE10_absE"]
    x = back.points[:, 0]
    assert np.all(np.isfinite(psi)) and np.all(np.isfinite(absE))
    # TE10: H_z ~ cos(pi (x + a/2) / a), |E_t| ~ sin(...) (Pozar sec. 3.3), normalised so that
    # int psi^2 dA = 1: psi = sqrt(2 / (a b)) cos(...)
    expect = np.sqrt(2 / (A * B)) * np.cos(np.pi * (x + A / 2) / A)
    sign = np.sign(np.sum(psi * expect))
    assert np.max(np.abs(sign * psi - expect)) < 1e-3 * np.max(np.abs(expect))
    assert back.point_data["01_TE10_E"].shape == (len(x), 3)


def test_field_file_bad_format(tmp_path):
    ms = fm.solve(fm.rectangle(A, B), modes=1, accuracy=1e-4)
    with pytest.raises(FemodesError, match="field file"):
        fm.report.write_fields(ms, tmp_path / "wr90.nosuchformat")
