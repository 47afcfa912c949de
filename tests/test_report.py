"""One report for every guide: the same JSON schema, CSV tables and field files for a homogeneous
guide and a guide solved through the loaded (full-vector) path, checked against closed forms.

The check guide: WR-90 (a = 22.86 mm, b = 10.16 mm; EIA WR-90) filled with eps_r = 2.2, once as a
homogeneous fill and once as a dielectric region covering the whole section.  Its TE10 mode
(Pozar, Microwave Engineering, 4th ed., sec. 3.3) has beta = sqrt(k0^2 eps_r - (pi / a)^2), wave
impedance Z_TE = k eta / beta with k = k0 sqrt(eps_r), eta = eta0 / sqrt(eps_r), carries
P = a b |E0|^2 / (4 Z_TE) for a peak transverse field E0, and has the wall loss (Pozar eq. 3.96)

    alpha_c = R_s (2 b pi^2 + a^3 k^2) / (a^3 b beta k eta).
"""

import csv
import math
from pathlib import Path

import meshio
import numpy as np
import pytest

import femodes as fm
from femodes import report as R
from femodes.case import AnalysisSettings
from femodes.quantities import surface_resistance

A, B, EPS = 22.86e-3, 10.16e-3, 2.2
F, BAND = 7e9, (5e9, 8e9)
C0 = 299792458.0
ETA0 = 376.730313668  # ohm, from memory (mu0 c0)


def _te10(f):
    k = 2 * math.pi * f / C0 * math.sqrt(EPS)
    beta = math.sqrt(k * k - (math.pi / A) ** 2)
    eta = ETA0 / math.sqrt(EPS)
    rs = float(surface_resistance(f, 5.8e7))
    alpha_c = rs * (2 * B * math.pi ** 2 + A ** 3 * k * k) / (A ** 3 * B * beta * k * eta)
    return beta, k * eta / beta, alpha_c


@pytest.fixture(scope="module")
def pair():
    """(homogeneous Study, loaded Study, analysis settings) of the filled WR-90."""
    g = fm.rectangle(A, B)
    kw = dict(modes=3, frequency=F, band=BAND, points=5)
    homogeneous = fm.study(g, eps_r=EPS, accuracy=1e-7, **kw)
    loaded = fm.study(g.with_material(g, eps_r=EPS), accuracy=1e-7, **kw)
    return homogeneous, loaded, AnalysisSettings(frequency=F)


def _keys(doc):
    """The key structure of a document: top-level keys, and the keys of every list entry."""
    out = {"top": set(doc)}
    out["modes"] = {frozenset(m) for m in doc["modes"]}
    out["analysis"] = set(doc["analysis"])
    out["analysis.modes"] = {frozenset(m) for m in doc["analysis"]["modes"]}
    out["dispersion"] = set(doc["dispersion"])
    out["dispersion.modes"] = {frozenset(m) for m in doc["dispersion"]["modes"]}
    return out


def test_one_json_schema_for_both_kinds_of_guide(pair):
    homogeneous, loaded, settings = pair
    docs = [R.report_document(s, R.analyse(s, settings), title="filled WR-90") for s in (homogeneous, loaded)]
    assert _keys(docs[0]) == _keys(docs[1])
    assert [d["guide"] for d in docs] == ["homogeneous", "loaded"]
    beta, z_te, alpha_c = _te10(F)
    for d in docs:
        te10 = d["analysis"]["modes"][0]
        # beta within the reported error of the closed form, and the asked accuracy met
        assert abs(te10["beta"] - beta) <= te10["beta_error"] <= 1e-5 * beta
        # Pozar eq. 3.96 wall loss; the loaded path carries its own error estimate
        loss = te10["attenuation_np_per_m"]
        assert loss["conductor"] == pytest.approx(alpha_c, rel=1e-4)
        if d["guide"] == "loaded":
            assert abs(loss["conductor"] - alpha_c) <= loss["conductor_error"]
        assert te10["effective_permittivity"] == pytest.approx((beta / (2 * math.pi * F / C0)) ** 2, rel=1e-5)
        assert te10["e_share"] == pytest.approx(0.0, abs=1e-6)
        # H_z share of a TE mode: kc^2 / k^2 (module docstring)
        k = 2 * math.pi * F / C0 * math.sqrt(EPS)
        assert te10["h_share"] == pytest.approx((math.pi / A / k) ** 2, rel=1e-4)
        # the group velocity of a filled guide: v^2 beta / omega (Pozar sec. 3.3)
        vg = (C0 ** 2 / EPS) * beta / (2 * math.pi * F)
        assert te10["group_velocity"] == pytest.approx(vg, rel=1e-5)
    # the homogeneous wave impedance is Z_TE; the loaded TE mode has the same (uniform mu)
    for d in docs:
        assert d["analysis"]["modes"][0]["wave_impedance"]["real"] == pytest.approx(z_te, rel=1e-5)


def test_dispersion_tables_follow_the_closed_form(pair, tmp_path):
    for study in pair[:2]:
        disp = study.dispersion
        k = 2 * math.pi * disp.frequencies * math.sqrt(EPS) / C0
        want = np.sqrt(k * k - (math.pi / A) ** 2)  # TE10, Pozar sec. 3.3; above cutoff over 5-8 GHz
        got = disp.beta[:, 0].real
        scale = k if study.loaded else want
        assert np.all(np.abs(got - want) <= 1e-6 * scale * scale / want + 1e-12)
        if disp.beta_error is not None:
            assert np.all(np.abs(got - want) <= disp.beta_error[:, 0])
        paths = R.write_csv(study, tmp_path / f"{study.loaded}.csv", R.analyse(study, pair[2]))
        assert [Path(p).name for p in paths] == [f"{study.loaded}.csv", f"{study.loaded}.at_frequency.csv",
                                                 f"{study.loaded}.dispersion.csv"]
        rows = list(csv.DictReader(open(paths[2], encoding="utf-8")))
        first = [r for r in rows if r["mode"] == "1"]
        assert len(first) == disp.frequencies.size
        np.testing.assert_allclose([float(r["beta_rad_per_m"]) for r in first], got, rtol=1e-12)


def _power_and_peak(path, key):
    """1/2 Re int (E x H*) . z dA over the written triangles (vertex values, linear in each
    sub-triangle: the mean of the three vertex products times the area) and the peak |E_t|."""
    got = meshio.read(path)
    p = got.points[:, :2]
    tri = got.cells_dict["triangle"]
    et, ht = got.point_data[key + "_Et"], got.point_data[key + "_Ht"]
    sz = et[:, 0] * ht[:, 1] - et[:, 1] * ht[:, 0]
    v = p[tri]
    area = 0.5 * np.abs((v[:, 1, 0] - v[:, 0, 0]) * (v[:, 2, 1] - v[:, 0, 1])
                        - (v[:, 2, 0] - v[:, 0, 0]) * (v[:, 1, 1] - v[:, 0, 1]))
    power = 0.5 * float(np.sum(area * sz[tri].mean(axis=1)))
    return power, float(np.max(np.hypot(et[:, 0], et[:, 1]))), got


def test_field_files_hold_the_fields_of_one_watt(pair, tmp_path):
    beta, z_te, _ = _te10(F)
    e0 = math.sqrt(4 * z_te * 1.0 / (A * B))  # Pozar sec. 3.3: P = a b E0^2 / (4 Z_TE)
    for study in pair[:2]:
        path = R.write_fields(study, tmp_path / f"f{study.loaded}.vtu")
        key = "01_" + ("TE10" if not study.loaded else "TE-from-TE10")
        power, peak, got = _power_and_peak(path, key)
        # the vertex-product rule on sub-triangles of size h / p is second order: 1e-3 is ample
        assert power == pytest.approx(1.0, rel=2e-3)
        assert peak == pytest.approx(e0, rel=2e-3)
        assert set(np.unique(got.cell_data["eps_r"][0])) == {EPS} or study.loaded
        # E_t of TE10 is along y only (Pozar sec. 3.3)
        assert np.max(np.abs(got.point_data[key + "_Et"][:, 0])) < 1e-3 * peak


def test_field_file_points_are_the_element_nodes():
    # subdivisions = element order: the written points of each element are its Lagrange nodes
    # (i/p, j/p in reference coordinates), so an order-4 field is sampled where it is defined
    ms = fm.solve(fm.rectangle(A, B), modes=1, accuracy=1e-4)
    x, y, tri, psi, gx, gy = ms[0].potential.sample(ms.order)
    per = (ms.order + 1) * (ms.order + 2) // 2
    assert x.size == per * ms.mesh.n_triangles and tri.shape[0] == ms.order ** 2 * ms.mesh.n_triangles


def test_loaded_report_has_impedances_and_power_handling_with_errors(pair):
    # the dominant mode's PV / PI / VI impedances of TE10 (Pozar sec. 3.3 fields; common practice
    # definitions, as tests/test_quantities.py checks for the empty guide) and its peak field at
    # 1 W, E0 = sqrt(4 Z_TE / (a b)), through the report of the loaded path, within their errors
    _, loaded, settings = pair
    an = R.analyse(loaded, settings)
    doc = R.report_document(loaded, an)["analysis"]["modes"][0]
    _, z_te, _ = _te10(F)
    want = {"PV": 2 * B / A * z_te, "PI": math.pi ** 2 * B / (8 * A) * z_te, "VI": math.pi * B / (2 * A) * z_te}
    for k, z in want.items():
        assert abs(doc["impedances"][k] - z) <= doc["impedance_errors"][k] < 0.05 * z, k
    ph = doc["power_handling"]
    filled = [r for r in ph["regions"] if not r["gas"]]
    assert len(filled) == 1 and ph["peak_field_per_sqrt_watt"] is None  # no gas in a filled guide
    e0 = math.sqrt(4 * z_te / (A * B))
    assert abs(filled[0]["peak_field_per_sqrt_watt"] - e0) <= filled[0]["peak_error"]
    text = " ".join(R.report_table(loaded, an).split())  # wrapped lines joined
    assert "Z_PV" in text and "±" in text and "check it against the dielectric strength" in text
    assert "High RF power is hazardous" in text  # the cautions come with the numbers


def test_loaded_band_sweep_follows_the_closed_form_loss(pair):
    # the attenuation of the loaded path over the band, from the dispersion curve's own fields
    # at each frequency, against Pozar eq. 3.96 for the filled TE10 (no loss tangent here); no
    # per-point error estimate exists, so the bound is the field-level accuracy seen at the
    # analysis frequency (test above: 1e-4), with margin
    _, loaded, _ = pair
    settings = AnalysisSettings(frequency=F, band=BAND, points=5)
    an = R.analyse(loaded, settings)
    (key, a), = an.sweep.attenuation.items()
    assert R.analysis.sweep_name(an, key) == (1, "TE from TE10")
    want = np.array([_te10(f)[2] for f in an.sweep.frequencies])
    np.testing.assert_allclose(a, want, rtol=1e-3)
    doc = R.report_document(loaded, an)["analysis"]["band"]["sweep"]
    assert doc["modes"][0]["label"] == "TE from TE10" and len(doc["modes"][0]["attenuation_np_per_m"]) == 5
