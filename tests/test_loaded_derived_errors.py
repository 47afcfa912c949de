"""Error bars of the field-derived quantities of loaded guides (femodes.quantities.loaded_convergence:
re-solves at the frequency on a ladder of meshes) against outside references: every true error
must lie inside its reported error bar, and the asked quantity accuracy must be met (or one
warning say it was not).

Sources of the expected numbers:
* Pozar, Microwave Engineering, 4th ed., sec. 3.3 (equation numbers from memory): the TE10 mode of
  a rectangular guide filled with eps_r: beta^2 = k^2 - (pi/a)^2, k = k0 sqrt(eps_r),
  eta = eta0 / sqrt(eps_r), Z_TE = k eta / beta; eq. 3.96, alpha_c = R_s (2 b pi^2 + a^3 k^2) /
  (a^3 b beta k eta); sec. 3.1, alpha_d = k^2 tan_delta / (2 beta); the group velocity of a
  filled guide d omega / d beta = (c0 / sqrt(eps_r)) beta / k; the peak field at 1 W,
  E0 = sqrt(4 Z_TE / (a b)) (P = a b E0^2 / (4 Z_TE)); sec. 1.7, R_s = sqrt(omega mu0 / (2 sigma)).
  Z_PV = 2 (b/a) Z_TE, Z_PI = (pi^2 b / 8a) Z_TE, Z_VI = (pi b / 2a) Z_TE from those fields with
  the power-voltage, power-current and voltage-current definitions (common practice).
* The TE_m0 mode of a full-height side slab (Pozar sec. 3.3; Collin, Field Theory of Guided Waves,
  ch. 6): femodes.reference (transverse-resonance roots, exact piecewise-sine fields: wall loss,
  peaks in the gas and the slab, Z_PV / Z_PI / Z_VI), no finite-element code.  Its group
  velocity 2 pi df / d beta and its dielectric loss eps_r tan_delta d beta / d eps_r (first-order
  perturbation of eps_r -> eps_r (1 - j tan_delta) in the slab, the same first order the solver
  uses) are central differences of the reference's beta (step 1e-5 relative: their own error
  ~1e-10, far below the bars).
"""

import math
import warnings

import numpy as np
import pytest

import femodes as fm
from femodes import reference as ref
from femodes import report as R
from femodes.case import AnalysisSettings
from femodes.constants import C0, ETA0, MU0
from femodes.quantities import loaded_derived_quantities
from femodes.quantities.loaded_convergence import loaded_rate_cap

A, B = 22.86e-3, 10.16e-3  # EIA WR-90 inner size (m)
SIGMA = 5.8e7  # copper (IACS), from memory
ACC = 1e-3  # the default quantity accuracy


def rs(f):
    # Pozar sec. 1.7
    return math.sqrt(2 * math.pi * f * MU0 / (2 * SIGMA))


def _check(q, truth, accuracy=ACC):
    """true error inside the bar and the bar inside the asked accuracy; returns true / reported."""
    err = abs(q.value - truth)
    assert err <= q.error, (q.value, truth, err, q.error)
    assert q.relative <= accuracy, (q.relative, accuracy)
    return err / q.error


# ----------------------------------------------------------------------------- filled WR-90
FILL_F, FILL_EPS, FILL_TD = 7e9, 2.2, 1e-3


@pytest.fixture(scope="module")
def filled():
    # WR-90 filled with eps_r 2.2, tan_delta 1e-3 through the loaded path (a region covering the
    # whole section); the study's own beta at its default accuracy
    g = fm.rectangle(A, B).with_material(fm.rectangle(A, B), eps_r=FILL_EPS, tan_delta=FILL_TD)
    st = fm.study(g, modes=2, frequency=FILL_F)
    return st, loaded_derived_quantities(st, SIGMA)


def _filled_te10():
    k = 2 * math.pi * FILL_F / C0 * math.sqrt(FILL_EPS)
    beta = math.sqrt(k * k - (math.pi / A) ** 2)
    eta = ETA0 / math.sqrt(FILL_EPS)
    return k, beta, eta, k * eta / beta


def test_filled_wr90_quantities_against_pozar(filled):
    st, d = filled
    k, beta, eta, zte = _filled_te10()
    assert d.met and not d.warnings and len(d.unknowns) >= 3
    assert d.cap == 3.0  # no singular corner: the element order
    qs = d.quantities[0]
    e0 = math.sqrt(4 * zte / (A * B))  # the peak of TE10 at 1 W, in the filling (no gas)
    truth = {"conductor": rs(FILL_F) * (2 * B * math.pi ** 2 + A ** 3 * k ** 2) / (A ** 3 * B * beta * k * eta),
             "dielectric": k * k * FILL_TD / (2 * beta), "group_velocity": C0 / math.sqrt(FILL_EPS) * beta / k,
             "Z_PV": 2 * B / A * zte, "Z_PI": math.pi ** 2 * B / (8 * A) * zte, "Z_VI": math.pi * B / (2 * A) * zte,
             "peak:region 1": e0}
    assert set(truth) <= set(qs) and "peak" not in qs  # no gas region: no breakdown figure
    # measured: true / reported 0.37 (alpha_c), 0.013 (alpha_d, v_g), 0.001-0.06 (Z), 0.03 (peak)
    for name, want in truth.items():
        _check(qs[name], want)
    # the finest mesh's mode carries the study's name and a beta bar that still holds
    m = d.modes[0]
    assert m.label == st.at_frequency[0].label and m.index == 0 and m.lower is None
    assert abs(float(m.beta_value) - beta) <= m.beta_error


def test_the_unmet_accuracy_is_said_once(filled):
    st, _ = filled
    with pytest.warns(UserWarning, match=r"above the quantity accuracy asked \(quantity_accuracy = 1e-09\) after 3 meshes") as rec:
        d = loaded_derived_quantities(st, SIGMA, accuracy=1e-9, max_refinements=0)
    assert len([w for w in rec if "quantity accuracy" in str(w.message)]) == 1
    assert not d.met and len(d.unknowns) == 3
    # the bars still bound the truth where the accuracy was not met
    k, beta, eta, zte = _filled_te10()
    _check(d.quantities[0]["dielectric"], k * k * FILL_TD / (2 * beta), accuracy=1.0)
    with pytest.raises(fm.FemodesError, match="must lie from 1e-09 up to 0.5"):
        loaded_derived_quantities(st, SIGMA, accuracy=2.0)


def test_square_filled_degenerate_pair_wall_loss_against_pozar():
    # a 16 mm square filled with eps_r 2.1 at 9 GHz: TE10 / TE01 are a degenerate pair (the solver
    # may turn its members anyhow: any combination has the same wall loss, the cross terms of the
    # two fields integrate to zero on every wall); both are followed by beta and carry Pozar's
    # alpha_c of TE10 with a = b (eq. 3.96) and the filled guide's group velocity
    a, f, eps = 16e-3, 9e9, 2.1
    g = fm.rectangle(a, a).with_material(fm.rectangle(a, a), eps_r=eps)
    st = fm.study(g, modes=2, frequency=f, accuracy=1e-4)
    d = loaded_derived_quantities(st, SIGMA)
    k = 2 * math.pi * f / C0 * math.sqrt(eps)
    beta = math.sqrt(k * k - (math.pi / a) ** 2)
    eta = ETA0 / math.sqrt(eps)
    want = rs(f) * (2 * a * math.pi ** 2 + a ** 3 * k ** 2) / (a ** 3 * a * beta * k * eta)
    assert len(d.quantities) == 2 and d.met
    for i in (0, 1):
        assert not any(name.startswith("Z_") for name in d.quantities[i])  # orientation-dependent
        _check(d.quantities[i]["conductor"], want)
        _check(d.quantities[i]["group_velocity"], C0 / math.sqrt(eps) * beta / k)


# ----------------------------------------------------------------------------- side slab
SLAB_F, SLAB_T, SLAB_EPS, SLAB_TD = 9e9, 4e-3, 2.56, 2e-3


@pytest.fixture(scope="module")
def slab():
    # full-height slab of eps_r 2.56, tan_delta 2e-3, 4 mm wide, against the side wall x = -a/2
    # of WR-90 (our own scenario)
    g = fm.rectangle(A, B).with_material(fm.rectangle(SLAB_T, B).translated(-A / 2 + SLAB_T / 2, 0),
                                         eps_r=SLAB_EPS, tan_delta=SLAB_TD, name="slab")
    st = fm.study(g, modes=2, frequency=SLAB_F)
    # through the report's analysis (default copper walls, default quantity accuracy 1e-3), which
    # calls loaded_derived_quantities; it must meet the accuracy without a warning
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        an = R.analyse(st, AnalysisSettings(frequency=SLAB_F))
    return st, an.derived, an


def _slab_beta(f=SLAB_F, eps=SLAB_EPS):
    return math.sqrt(ref.layered_guide_modes(A, B, [(SLAB_T, eps, 1.0), (A - SLAB_T, 1.0, 1.0)], f, count=1,
                                             axis="x")[0].beta2)


def _slab_truth():
    beta = _slab_beta()
    exact = ref.side_slab_te_m0_peak_and_voltage(A, B, SLAB_T, SLAB_EPS, SLAB_F, beta ** 2, A / 2)
    df, de = 1e-5 * SLAB_F, 1e-5 * SLAB_EPS
    return {"conductor": ref.side_slab_te_m0_wall_loss(A, B, SLAB_T, SLAB_EPS, SLAB_F, beta ** 2, rs(SLAB_F)),
            "dielectric": SLAB_EPS * SLAB_TD * (_slab_beta(eps=SLAB_EPS + de) - _slab_beta(eps=SLAB_EPS - de)) / (2 * de),
            "group_velocity": 2 * math.pi * 2 * df / (_slab_beta(SLAB_F + df) - _slab_beta(SLAB_F - df)),
            "Z_PV": exact.z_pv, "Z_PI": exact.z_pi, "Z_VI": exact.z_vi,
            "peak": exact.peak_air, "peak:fill": exact.peak_air, "peak:slab": exact.peak_slab}


def test_side_slab_quantities_against_the_exact_fields(slab):
    st, d, _ = slab
    assert d.met and not d.warnings
    assert d.cap == 3.0  # right-angled slab corners on a straight wall are regular
    qs = d.quantities[0]
    truth = _slab_truth()
    assert set(truth) <= set(qs)
    # measured: true / reported 0.08 (alpha_c), 0.006 (alpha_d), 0.03 (v_g), 0.002-0.05 (Z),
    # 0.005 (gas peak), 0.18 (slab peak, at the dielectric face)
    ratios = {name: _check(qs[name], want) for name, want in truth.items()}
    assert max(ratios.values()) <= 1.0


def test_side_slab_report_shows_the_bars(slab, tmp_path):
    # through the report: the analysis rows carry the ladder's values and bars (table, JSON, CSV)
    st, d, an = slab
    assert d is not None and d.met and d.modes[0].index == 0
    truth = _slab_truth()
    doc = R.report_document(st, an)["analysis"]
    first = doc["modes"][0]
    e = first["errors"]
    loss = first["attenuation_np_per_m"]
    assert abs(loss["conductor"] - truth["conductor"]) <= loss["conductor_error"] == e["conductor"]
    assert abs(loss["dielectric"] - truth["dielectric"]) <= e["dielectric"]
    assert abs(loss["total"] - truth["conductor"] - truth["dielectric"]) <= e["total"]
    assert abs(first["group_velocity"] - truth["group_velocity"]) <= e["group_velocity"]
    for k in ("PV", "PI", "VI"):
        assert abs(first["impedances"][k] - truth["Z_" + k]) <= first["impedance_errors"][k] <= ACC * truth["Z_PV"], k
    ph = first["power_handling"]
    assert abs(ph["peak_field_per_sqrt_watt"] - truth["peak"]) <= ph["peak_error"] <= ACC * truth["peak"]
    p_bd = (ph["breakdown_field"] / truth["peak"]) ** 2  # the breakdown power of the exact peak
    assert abs(ph["breakdown_power"] - p_bd) <= ph["breakdown_power_error"]
    assert abs(ph["rated_power"] - p_bd / ph["safety_factor"]) <= ph["rated_power_error"]
    sl = next(r for r in ph["regions"] if r["name"] == "slab")
    assert abs(sl["peak_field_per_sqrt_watt"] - truth["peak:slab"]) <= sl["peak_error"]
    # the wave quantities: beta's own bar, and the wave impedance of this TE mode (omega mu0 / beta)
    beta = _slab_beta()
    assert abs(first["beta"] - beta) <= first["beta_error"]
    zw = 2 * math.pi * SLAB_F * MU0 / beta
    assert abs(first["wave_impedance"]["real"] - zw) <= e["wave_impedance"]
    qa = doc["quantity_accuracy"]
    assert qa["met"] and qa["asked"] == ACC and len(qa["unknowns"]) >= 3 and "overlap" in qa["method"]
    text = R.report_table(st, an)
    assert "± v_g/c" in text and "re-solves at 9 GHz" in text
    paths = R.write_csv(st, tmp_path / "m.csv", an)
    import csv
    row = next(csv.DictReader(open(paths[1], encoding="utf-8")))
    assert abs(float(row["alpha_dielectric_Np_per_m"]) - truth["dielectric"]) <= float(
        row["alpha_dielectric_error_Np_per_m"])
    assert abs(float(row["group_velocity_m_per_s"]) - truth["group_velocity"]) <= float(
        row["group_velocity_error_m_per_s"])


def test_rate_cap_of_material_corners():
    # a free-standing bar has four material corners, taken like 270-degree wall corners
    # (lambda = 2/3, femodes.geometry.mesh.singular_corners): the cap is 4/3
    bar = fm.rectangle(A, B).with_material(fm.rectangle(6e-3, 4e-3), eps_r=6.0)
    assert loaded_rate_cap(bar, 3) == pytest.approx(4.0 / 3.0)
    wall_slab = fm.rectangle(A, B).with_material(fm.rectangle(SLAB_T, B).translated(-A / 2 + SLAB_T / 2, 0),
                                                 eps_r=2.0)
    assert loaded_rate_cap(wall_slab, 3) == 3.0
    assert np.isfinite(loaded_rate_cap(bar, 2))
