"""Tests of the femodes command-line program (femodes.cli.main) and its reports (femodes.export).

Reference numbers: WR-90 inner 22.86 x 10.16 mm (EIA standard WR-90); TE_m0 cutoff
fc = m c / (2 a) with c = 299 792 458 m/s (Pozar, Microwave Engineering, 4th ed., sec. 3.3):
TE10 6.557140 GHz, TE20 13.114281 GHz.
"""

import csv
import json
import math
import os
import subprocess
import sys
from pathlib import Path

import pytest

import femodes
from femodes.case import SHAPES
from femodes.cli import main

C0 = 299792458.0  # m/s, exact (SI)
A_WR90 = 22.86e-3  # m, EIA WR-90 inner width
FC_TE10 = C0 / (2 * A_WR90)  # 6.557140 GHz, Pozar sec. 3.3
REPO = Path(__file__).resolve().parents[1]
EXAMPLE = REPO / "examples" / "double_ridge_feed.toml"

WR90 = '''title = "WR-90 X-band guide"
[guide]
shape = "rectangle"
units = "mm"
width = 22.86
height = 10.16
[solve]
modes = 4
accuracy = 1e-5
'''


@pytest.fixture
def wr90(tmp_path):
    path = tmp_path / "wr90.toml"
    path.write_text(WR90, encoding="utf-8")
    return str(path)


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def strict_json(text):
    def no_constants(name):
        raise AssertionError(f"JSON contains {name}")
    return json.loads(text, parse_constant=no_constants)


# ----------------------------------------------------------------------------- solve

def test_solve_prints_the_table(capsys, wr90):
    code, out, err = run(capsys, "solve", wr90)
    assert code == 0, err
    assert "WR-90 X-band guide" in out
    assert "rectangle(width=22.86 mm, height=10.16 mm)" in out
    rows = [line.split() for line in out.splitlines() if line[:1].isdigit()]
    # 4 modes asked: the 4th, TE11, shares its cutoff with TM11 (TE/TM identity of the rectangle,
    # Pozar sec. 3.3), so the group is completed and TM11 comes too (issue 11 item 4)
    assert [r[1] for r in rows[:3]] == ["TE10", "TE20", "TE01"]
    assert sorted(r[1] for r in rows[3:]) == ["TE11", "TM11"]
    assert "(TE/TM identity)" in out
    # TE10 at 6.557 GHz (Pozar sec. 3.3), printed with the digits its error estimate allows
    assert rows[0][3].startswith("6.557140")
    # cutoff wavelength of TE10 is 2a = 45.72 mm
    assert rows[0][5].startswith(("45.72", "45.719"))
    # single-mode band TE10..TE20: 6.557 - 13.114 GHz, ratio 2 (fc ~ m for TE_m0)
    band = [line for line in out.splitlines() if line.startswith("single-mode band")]
    assert len(band) == 1 and "6.557" in band[0] and "13.114" in band[0] and "ratio 2.000:1" in band[0]
    assert err == ""


def test_json_document(capsys, wr90):
    code, out, err = run(capsys, "solve", wr90, "--json")
    assert code == 0, err
    doc = strict_json(out)
    assert doc["femodes_version"] == femodes.__version__
    assert doc["title"] == "WR-90 X-band guide"
    assert doc["units"]["fc"] == "Hz" and doc["units"]["kc"] == "rad/m" and doc["units"]["length"] == "m"
    assert doc["section"]["kind"] == "rectangle"
    assert doc["section"]["params"] == pytest.approx({"width": 0.02286, "height": 0.01016}, rel=1e-12)
    assert doc["fill"] == {"eps_r": 1.0, "mu_r": 1.0, "tan_delta": 0.0}
    assert doc["accuracy"] == 1e-5
    assert doc["discretisation"]["unknowns"] > 0 and doc["discretisation"]["element_order"] in (1, 2, 3, 4)
    modes = doc["modes"]
    # 4 asked; the 4th (TE11) shares its cutoff with TM11 (the rectangle's TE/TM identity, Pozar
    # sec. 3.3): the group is completed, 5 returned (issue 11 item 4)
    assert len(modes) == 5 and doc["modes_asked"] == 4 and doc["modes_returned"] == 5
    for m in modes:
        for key in ("index", "label", "family", "kc", "kc_error", "fc", "fc_error", "cutoff_wavelength",
                    "degenerate_with", "symmetry", "nodal_domains", "degeneracy"):
            assert key in m
    assert [m["family"] for m in modes[:3]] == ["TE", "TE", "TE"]
    assert sorted(m["label"] for m in modes[3:]) == ["TE11", "TM11"]
    assert all(m["degeneracy"] == "TE/TM identity" for m in modes[3:])
    assert modes[0]["degeneracy"] is None
    for m in modes:
        # fc = c kc / (2 pi) in air
        assert m["fc"] == pytest.approx(C0 * m["kc"] / (2 * 3.141592653589793), rel=1e-12)
    te10 = modes[0]
    assert te10["label"] == "TE10" and te10["index"] == 0
    assert abs(te10["fc"] - FC_TE10) / FC_TE10 < 1e-6
    # the error estimate is honest: the true error is inside it
    assert abs(te10["fc"] - FC_TE10) <= te10["fc_error"]
    band = doc["single_mode_band"]
    # TE10..TE20: ratio 2 exactly in theory (Pozar sec. 3.3)
    assert band["f_low"] == pytest.approx(FC_TE10, rel=1e-6)
    assert band["ratio"] == pytest.approx(2.0, rel=1e-5)
    assert doc["files"] == {"csv": None, "fields": None, "figures": []}


def test_overrides_and_csv(capsys, wr90, tmp_path):
    out_csv = tmp_path / "modes.csv"
    code, out, err = run(capsys, "solve", wr90, "--json", "--modes", "2", "--accuracy", "1e-4",
                         "--csv", str(out_csv))
    assert code == 0, err
    doc = strict_json(out)
    assert len(doc["modes"]) == 2 and doc["accuracy"] == 1e-4
    with open(out_csv, newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    assert [r["label"] for r in rows] == ["TE10", "TE20"]
    # CSV in SI units: TE10 fc within the asked 1e-4 of c/(2a) (Pozar sec. 3.3)
    assert abs(float(rows[0]["fc_Hz"]) - FC_TE10) / FC_TE10 < 1e-4
    assert float(rows[0]["cutoff_wavelength_m"]) == pytest.approx(2 * A_WR90, rel=1e-4)
    assert rows[0]["symmetry"] == "x=odd;y=even"


def test_bundled_example_meets_its_goal(capsys):
    # the example's own goal: fundamental cutoff near 1.6-2 GHz and a single-mode band of >= 3:1
    code, out, err = run(capsys, "solve", str(EXAMPLE), "--json", "--no-figures", "--accuracy", "1e-4",
                         "--modes", "3")
    assert code == 0, err
    doc = strict_json(out)
    band = doc["single_mode_band"]
    assert 1.6e9 <= band["f_low"] <= 2.0e9
    assert band["ratio"] >= 3.0
    assert doc["section"]["kind"] == "double_ridge"
    # its [analysis]: 2 - 9 GHz, copper, quantities at the centre 5.5 GHz
    an = doc["analysis"]
    assert an["frequency"] == 5.5e9 and an["walls"]["conductor"] == "copper"
    te1 = an["modes"][0]
    assert te1["propagates"] and not any(m["propagates"] for m in an["modes"][1:])
    # a double-ridge guide with a narrow gap has a low impedance, tens of ohms (common practice, from
    # memory); the empty 34 x 16 mm rectangle's Z_PV = 2 (b/a) Z_TE would be about 490 ohm here
    assert 20 < te1["impedances"]["PV"] < 100
    a, b, f = 34e-3, 16e-3, 5.5e9
    k = 2 * math.pi * f / C0
    beta = math.sqrt(k ** 2 - (math.pi / a) ** 2)
    z_te = k * ETA0 / beta                                  # Pozar sec. 3.1
    rs = math.sqrt(2 * math.pi * f * MU0 / (2 * 5.8e7))    # R_s, Pozar sec. 1.7
    alpha_rect = rs * (2 * b * math.pi ** 2 + a ** 3 * k ** 2) / (a ** 3 * b * beta * k * ETA0)   # eq. 3.96
    p_rect = 3e6 ** 2 * a * b / (4 * z_te) / 2              # Pozar sec. 3.3, safety factor 2
    # the ridges concentrate the field in the gap: more loss, much less power than the empty rectangle
    assert te1["attenuation_np_per_m"]["total"] > 2 * alpha_rect
    assert te1["power_handling"]["rated_power"] < 0.1 * p_rect
    # the peak sits at the rounded edge of a ridge face: |y| within the gap / 2 + the 0.2 mm corner radius
    x, y = te1["power_handling"]["peak_location"]
    assert 3.5e-3 < abs(x) < 4.01e-3 and 0.7e-3 < abs(y) < 0.96e-3
    assert an["cautions"] and an["band"]["sweep"]["points"] == 36


def test_degenerate_fundamental_counts_once_in_the_band(capsys, tmp_path):
    # circle: TE11 is a degenerate pair, so the single-mode band runs TE11 -> TM01 and
    # f(TM01)/f(TE11) = j01 / j'11 = 2.404826 / 1.841184 = 1.306130 (Bessel zeros,
    # Abramowitz & Stegun, Handbook of Mathematical Functions, tables 9.5 and 9.6 (from memory))
    path = tmp_path / "circle.toml"
    path.write_text('[guide]\nshape = "circle"\nradius = 5\n[solve]\nmodes = 3\naccuracy = 1e-5\n')
    code, out, err = run(capsys, "solve", str(path), "--json")
    assert code == 0, err
    doc = strict_json(out)
    assert [m["label"] for m in doc["modes"]] == ["TE11", "TE11", "TM01"]
    assert doc["modes"][0]["degenerate_with"] == [1]
    assert doc["single_mode_band"]["ratio"] == pytest.approx(2.404825557695773 / 1.841183781340659, rel=1e-4)
    # TE11 cutoff of a 5 mm radius circle: fc = c j'11 / (2 pi r) = 17.56985 GHz (Pozar sec. 3.4)
    assert doc["single_mode_band"]["f_low"] == pytest.approx(C0 * 1.841183781340659 / (2 * 3.141592653589793 * 5e-3),
                                                             rel=1e-5)
    code, out, err = run(capsys, "solve", str(path))
    assert "ratio 1.306" in out


# ----------------------------------------------------------------------------- errors

def bad_case(tmp_path, text):
    p = tmp_path / "bad.toml"
    p.write_text(text, encoding="utf-8")
    return str(p)


@pytest.mark.parametrize("make_argv, expect", [
    (lambda t, w: ["solve", str(t / "missing.toml")], "case file not found"),
    (lambda t, w: ["solve", bad_case(t, WR90.replace("width", "widht"))], "did you mean 'width'?"),
    (lambda t, w: ["solve", bad_case(t, "[guide]\nshape = \n")], "line 2"),
    (lambda t, w: ["solve", bad_case(t, WR90 + "[fill]\neps_r = -1\n")], "eps_r in [fill]"),
    (lambda t, w: ["solve", w, "--modes", "0"], "--modes must be a whole number >= 1, got 0"),
    (lambda t, w: ["solve", w, "--modes", "lots"], "--modes must be a whole number >= 1, got 'lots'"),
    (lambda t, w: ["solve", w, "--accuracy", "high"], "--accuracy must be"),
    (lambda t, w: ["solve", w, "--format", "gif"], "invalid choice: 'gif'"),
    (lambda t, w: ["solve", w, "--figures", str(t), "--no-figures"], "contradict"),
    (lambda t, w: ["solve"], "CASE.toml"),
    (lambda t, w: ["frobnicate"], "invalid choice: 'frobnicate'"),
    (lambda t, w: [], "choose a command"),
    (lambda t, w: ["solve", w, "--conductor", "copper"], "--conductor needs a frequency"),
    (lambda t, w: ["solve", w, "--frequency", "0"], "--frequency must be a positive frequency in GHz"),
    (lambda t, w: ["solve", w, "--band", "12", "8"], "--band must be F1 F2 with 0 < F1 < F2"),
    (lambda t, w: ["solve", w, "--band", "8"], "expected 2 arguments"),
    (lambda t, w: ["solve", w, "--frequency", "10", "--conductor", "unobtainium"], "unknown metal 'unobtainium'"),
    # WR-90 with 4 modes: the highest computed cutoff is TE11 at 16.16 GHz (Pozar sec. 3.3)
    (lambda t, w: ["solve", w, "--frequency", "30"], "solve for more modes"),
    (lambda t, w: ["solve", bad_case(t, WR90 + "[analysis]\nfrequency = 10\nsafety_factor = 0\n")], "safety_factor"),
])
def test_errors_exit_2_with_one_line(capsys, tmp_path, wr90, make_argv, expect):
    code, out, err = run(capsys, *make_argv(tmp_path, wr90))
    assert code == 2
    lines = err.splitlines()
    assert len(lines) == 1, err
    assert lines[0].startswith("femodes: error: ")
    assert expect in lines[0]
    assert "Traceback" not in err and out == ""


def test_error_in_a_real_process_has_no_traceback(tmp_path):
    bad = bad_case(tmp_path, '[guide]\nshape = "double_ridge"\nwidth = 22\nheight = 10\nridge_width = 5\ngap = 12\n')
    proc = subprocess.run([sys.executable, "-m", "femodes", "solve", bad], capture_output=True, text=True,
                          cwd=REPO, env=dict(os.environ, PYTHONPATH=str(REPO)), timeout=120)
    assert proc.returncode == 2
    assert proc.stderr.startswith("femodes: error: ") and len(proc.stderr.splitlines()) == 1
    # the shape function's own message, passed through (femodes.geometry.section.ridged)
    assert "gap (12 mm) must be smaller than the guide height (10 mm)" in proc.stderr
    assert "Traceback" not in proc.stderr


# ----------------------------------------------------------------------------- figures

def test_figures_are_written_and_listed(capsys, wr90, tmp_path):
    figdir = tmp_path / "figs"
    code, out, err = run(capsys, "solve", wr90, "--figures", str(figdir), "--format", "svg", "--modes", "2",
                         "--accuracy", "1e-4")
    assert code == 0, err
    listed = [line[len("wrote "):] for line in out.splitlines() if line.startswith("wrote ")]
    # one field pattern per mode (2) and the mode chart
    assert len(listed) == 3
    for p in listed:
        assert Path(p).is_file() and Path(p).stat().st_size > 0
        assert p.endswith(".svg") and Path(p).parent == figdir
    assert any(Path(p).name == "mode_chart.svg" for p in listed)
    assert Path(listed[0]).read_text(encoding="utf-8").lstrip().startswith(("<?xml", "<svg"))


# ----------------------------------------------------------------------------- other commands

def test_version_in_a_real_process():
    proc = subprocess.run([sys.executable, "-m", "femodes", "--version"], capture_output=True, text=True,
                          cwd=REPO, env=dict(os.environ, PYTHONPATH=str(REPO)), timeout=120)
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.strip() == f"femodes {femodes.__version__}"


def test_shapes_lists_the_loader_table(capsys):
    code, out, err = run(capsys, "shapes")
    assert code == 0 and err == ""
    for name, spec in SHAPES.items():
        line = next(line for line in out.splitlines() if line.split()[:1] == [name])
        for key in spec.keys:
            assert key.name in line, (name, key.name)


def test_help(capsys):
    code, out, _ = run(capsys, "solve", "--help")
    assert code == 0
    for opt in ("--json", "--figures", "--format", "--modes", "--accuracy", "--csv", "--frequency", "--band",
                "--conductor"):
        assert opt in out


# ----------------------------------------------------------------------------- engineering quantities

MU0 = 1.25663706212e-6  # H/m (CODATA 2018)
ETA0 = MU0 * C0         # ohm, sqrt(mu0 / eps0) = mu0 c = 376.730 ohm
B_WR90 = 10.16e-3     # m, EIA WR-90 inner height
NP_TO_DB = 8.685889638065037  # 20 / ln 10 dB per neper (definition)
CAUTION_WORDS = ("pressure", "humidity", "pulse length", "surface finish", "contamination", "multipaction",
                 "hazardous to people", "local codes, standards and licensed practice")


def wr90_closed_forms(f, sigma=5.8e7):
    """TE10 of copper WR-90 at f (Hz): beta, Z_TE (Pozar sec. 3.1), alpha_c (Pozar eq. 3.96), and the
    power at a 3 MV/m peak field E_bd^2 a b / (4 Z_TE) (Pozar sec. 3.3; 3 MV/m dry air, common practice)."""
    a, b = A_WR90, B_WR90
    k = 2 * math.pi * f / C0
    beta = math.sqrt(k ** 2 - (math.pi / a) ** 2)
    z = k * ETA0 / beta
    rs = math.sqrt(2 * math.pi * f * MU0 / (2 * sigma))  # R_s, Pozar sec. 1.7
    alpha = rs * (2 * b * math.pi ** 2 + a ** 3 * k ** 2) / (a ** 3 * b * beta * k * ETA0)
    return beta, z, alpha, 3e6 ** 2 * a * b / (4 * z)


@pytest.fixture
def wr90_analysis(tmp_path):
    path = tmp_path / "wr90a.toml"
    path.write_text(WR90 + "[analysis]\nfrequency = 10\nconductor = \"copper\"\n", encoding="utf-8")
    return str(path)


def test_table_prints_the_quantities_and_the_cautions(capsys, wr90_analysis):
    code, out, err = run(capsys, "solve", wr90_analysis)
    assert code == 0, err
    lines = out.splitlines()
    beta, z, alpha, p_bd = wr90_closed_forms(10e9)
    assert "at f = 10 GHz (as asked)" in out and "walls: copper (5.8e+07 S/m), smooth; fill: lossless" in out
    i = lines.index("propagating at 10 GHz:")
    row = lines[i + 3].split()
    assert row[:2] == ["1", "TE10"]
    assert float(row[2]) == pytest.approx(beta, rel=1e-4)                       # beta [rad/m]
    assert float(row[3]) == pytest.approx(2e3 * math.pi / beta, rel=1e-4)  # guide wl [mm]
    assert float(row[6]) == pytest.approx(z, rel=1e-4)                          # Z_wave [ohm]
    assert float(row[9]) == pytest.approx(alpha * NP_TO_DB, rel=1e-3)           # loss [dB/m], 4 digits
    # Z_PV = 2 (b/a) Z_TE for TE10 (power-voltage definition on Pozar's fields, see test_quantities)
    zline = next(line for line in lines if line.startswith("impedance of TE10"))
    assert float(zline.split("Z_PV = ")[1].split()[0]) == pytest.approx(2 * B_WR90 / A_WR90 * z, rel=1e-4)
    j = next(k for k, line in enumerate(lines) if line.startswith("power handling at 10 GHz"))
    prow = next(line for line in lines[j:] if line.startswith("1  TE10")).split()
    assert prow[-1] == "kW" and float(prow[-2]) == pytest.approx(p_bd / 2 / 1e3, rel=1e-3)  # rated = / 2
    # TE20 is evanescent at 10 GHz: decay sqrt(kc^2 - k^2) with kc = 2 pi / a (Pozar sec. 3.1)
    decay = math.sqrt((2 * math.pi / A_WR90) ** 2 - (2 * math.pi * 10e9 / C0) ** 2) * NP_TO_DB
    erow = next(line for line in lines if line.startswith("2  TE20") and len(line.split()) == 4).split()
    assert float(erow[3]) == pytest.approx(decay, rel=1e-4)
    assert any(line.startswith("recommended operating band: 8.1964 - 12.459 GHz (rule of thumb") for line in lines)
    # the cautions: a block after the numbers, every point present
    c = lines.index("cautions (power handling):")
    assert c > j
    block = " ".join(line.strip() for line in lines[c:])
    for w in CAUTION_WORDS:
        assert w in block, w


def test_json_analysis_against_closed_forms(capsys, tmp_path):
    path = tmp_path / "wr90b.toml"
    path.write_text(WR90 + "[analysis]\nband = [8.2, 12.4]\npoints = 3\nfrequency = 10\n", encoding="utf-8")
    code, out, err = run(capsys, "solve", str(path), "--json")
    assert code == 0, err
    doc = strict_json(out)
    an = doc["analysis"]
    assert an["frequency"] == 10e9 and an["frequency_role"] == "given"
    beta, z, alpha, p_bd = wr90_closed_forms(10e9)
    te10 = an["modes"][0]
    assert te10["label"] == "TE10" and te10["propagates"] is True
    # WR-90 TE10 copper loss: Pozar eq. 3.96, to 1e-4
    assert te10["attenuation_np_per_m"]["conductor"] == pytest.approx(alpha, rel=1e-4)
    assert te10["attenuation_db_per_m"]["total"] == pytest.approx(alpha * NP_TO_DB, rel=1e-4)
    assert te10["beta"] == pytest.approx(beta, rel=1e-5)
    assert te10["wave_impedance"]["real"] == pytest.approx(z, rel=1e-5)
    assert set(te10["impedances"]) == {"PV", "PI", "VI"}
    ph = te10["power_handling"]
    # rated power = E_bd^2 a b / (4 Z_TE) / safety factor 2 (Pozar sec. 3.3)
    assert ph["rated_power"] == pytest.approx(p_bd / 2, rel=1e-3)
    assert ph["safety_factor"] == 2.0 and ph["breakdown_field"] == 3e6 and ph["warnings"] == []
    assert abs(ph["peak_location"][0]) < 0.01 * A_WR90          # on the centre line x = 0 (sin(pi x'/a))
    sweep = an["band"]["sweep"]
    assert sweep["frequencies"] == [8.2e9, 10.3e9, 12.4e9]
    att = sweep["modes"][0]["attenuation_np_per_m"]
    assert att == pytest.approx([wr90_closed_forms(f)[2] for f in (8.2e9, 10.3e9, 12.4e9)], rel=1e-4)
    assert sweep["modes"][0]["rated_power_min"] == pytest.approx(wr90_closed_forms(8.2e9)[3] / 2, rel=1e-3)
    assert an["band"]["single_mode"]["ratio"] == pytest.approx(2.0, rel=1e-5)   # TE20 / TE10 (Pozar sec. 3.3)
    text = " ".join(an["cautions"])
    for w in CAUTION_WORDS:
        assert w in text, w
    # evanescent modes: decay constant, no loss, no power
    te20 = an["modes"][1]
    assert te20["propagates"] is False and te20["alpha"] > 0 and te20["power_handling"] is None
    # the "modes" list keeps its keys (the analysis is an extra object)
    # (TM11 completes the TE11 / TM11 group cut by the count of 4, issue 11 item 4)
    assert sorted(m["label"] for m in doc["modes"]) == sorted(["TE10", "TE20", "TE01", "TE11", "TM11"])
    assert "attenuation_db_per_m" not in doc["modes"][0]


def test_command_line_overrides_the_analysis(capsys, wr90_analysis):
    code, out, err = run(capsys, "solve", wr90_analysis, "--json", "--band", "8", "12", "--conductor", "brass")
    assert code == 0, err
    an = strict_json(out)["analysis"]
    assert an["frequency"] == 10e9 and an["frequency_role"] == "band centre"    # (8 + 12) / 2
    assert an["band"]["sweep"]["f_low"] == 8e9 and an["band"]["sweep"]["points"] == 41
    assert an["walls"]["conductor"] == "brass"
    # alpha_c ~ R_s ~ 1 / sqrt(sigma) (Pozar sec. 1.7): brass loses sqrt(5.8e7 / 2.56e7) times more than copper
    alpha_cu = wr90_closed_forms(10e9)[2]
    got = an["modes"][0]["attenuation_np_per_m"]["conductor"]
    assert got == pytest.approx(alpha_cu * (5.8e7 / an["walls"]["conductivity"]) ** 0.5, rel=1e-4)
    code, out, err = run(capsys, "solve", wr90_analysis, "--json", "--frequency", "9", "--conductor", "4.1e7")
    an = strict_json(out)["analysis"]
    assert an["frequency"] == 9e9 and an["walls"]["conductor"] is None and an["walls"]["conductivity"] == 4.1e7


def test_analysis_figures_are_written(capsys, tmp_path):
    path = tmp_path / "wr90c.toml"
    path.write_text(WR90 + "[analysis]\nband = [8.2, 12.4]\npoints = 8\n", encoding="utf-8")
    figdir = tmp_path / "figs"
    code, out, err = run(capsys, "solve", str(path), "--figures", str(figdir), "--format", "svg", "--modes", "2",
                         "--accuracy", "1e-4")
    assert code == 0, err
    listed = [Path(line[len("wrote "):]) for line in out.splitlines() if line.startswith("wrote ")]
    # 2 field patterns, the mode chart, attenuation against frequency, the band chart
    assert [p.name for p in listed[2:]] == ["mode_chart.svg", "attenuation.svg", "band_chart.svg"]
    for p in listed:
        assert p.is_file() and p.read_text(encoding="utf-8").rstrip().endswith("</svg>")



def test_bundled_example_prints_band_impedance_loss_power_and_cautions(capsys):
    code, out, err = run(capsys, "solve", str(EXAMPLE), "--no-figures", "--accuracy", "1e-4", "--modes", "3")
    assert code == 0, err
    lines = out.splitlines()
    assert "at f = 5.5 GHz (centre of the analysis band 2 - 9 GHz)" in out
    assert any(line.startswith("impedance of TE1 (x odd, y even) (#1): Z_PV = ") for line in lines)
    assert any(line.startswith("1  TE1 (x odd, y even)") and line.endswith("kW") for line in lines)
    assert any(line.startswith("recommended operating band: ") and "rule of thumb" in line for line in lines)
    assert any(line.startswith("analysis band: 2 - 9 GHz, 36 points") for line in lines)
    assert any("loss" in line and "dB/m (at 2 GHz)" in line for line in lines)
    c = lines.index("cautions (power handling):")
    block = " ".join(line.strip() for line in lines[c:])
    for w in CAUTION_WORDS:
        assert w in block, w


# ----------------------------------------------------------------------------- loaded guides

SIDE_SLAB = '''title = "full-height slab against the side wall"
[guide]
shape = "rectangle"
width = 22.86
height = 10.16
[[region]]
shape = "rectangle"
width = 4
height = 10.16
offset = [-9.43, 0]
eps_r = 2.56
tan_delta = 5e-4
[solve]
modes = 3
accuracy = 1e-6
[analysis]
band = [7, 11]
points = 9
frequency = 9
[output]
figures = ["fields", "dispersion"]
'''


def test_loaded_case_json_against_the_slab_equation(tmp_path, capsys):
    # a full-height slab of width t = 4 mm against the side wall x = 0 of WR-90: the guide layered
    # along x, its modes from the transverse-resonance equations (Collin, Field Theory of Guided
    # Waves, ch. 6; the dominant one is Pozar's TE_m0 of sec. 3.3), femodes.reference, no FE
    from femodes import reference as ref

    path = tmp_path / "slab.toml"
    path.write_text(SIDE_SLAB, encoding="utf-8")
    code, out, err = run(capsys, "solve", str(path), "--json", "--figures", str(tmp_path / "figs"))
    assert code == 0, err
    doc = strict_json(out)
    a, t = 22.86e-3, 4e-3
    k0 = 2 * math.pi * 9e9 / C0
    assert doc["guide"] == "loaded" and doc["modes"][0]["label"] == "TE-type from TE10"
    at_f = doc["analysis"]
    first = at_f["modes"][0]
    layers = [(t, 2.56, 1.0), (a - t, 1.0, 1.0)]
    want = ref.layered_guide_modes(a, 10.16e-3, layers, 9e9, count=1, axis="x")[0].beta2
    assert abs(first["beta"] ** 2 - want) / (k0 ** 2 * 2.56) < 1e-6
    assert first["family"] == "TE" and first["label"] == "TE from TE10"
    assert doc["regions"] == [{"name": None, "eps_r": 2.56, "mu_r": 1.0, "tan_delta": 5e-4}]
    loss = first["attenuation_np_per_m"]
    assert 0 < loss["dielectric"] and 0 < first["group_velocity"] < C0
    # wall loss (default copper) against the power-loss integrals of the exact fields
    from femodes.quantities import surface_resistance

    wall = ref.side_slab_te_m0_wall_loss(a, 10.16e-3, t, 2.56, 9e9, want, float(surface_resistance(9e9, 5.8e7)))
    assert at_f["walls"]["conductivity"] == 5.8e7
    assert abs(loss["conductor"] - wall) <= loss["conductor_error"] < 1e-2 * wall
    disp = doc["dispersion"]
    assert len(disp["frequencies"]) == 9 and disp["modes"][0]["label"] == "TE from TE10"
    for f, b in zip(disp["frequencies"], disp["modes"][0]["beta"]):
        w = ref.layered_guide_modes(a, 10.16e-3, layers, f, count=1, axis="x")[0].beta2
        kk = (2 * math.pi * f / C0) ** 2 * 2.56
        assert abs(b ** 2 - w) / kk < 1e-6
    files = doc["files"]["figures"]
    assert any(p.endswith("dispersion.png") for p in files) and any("mode01" in p for p in files)
    for p in files:
        assert Path(p).read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_loaded_case_table(tmp_path, capsys):
    path = tmp_path / "slab.toml"
    path.write_text(SIDE_SLAB.replace("points = 9", "points = 3"), encoding="utf-8")
    code, out, err = run(capsys, "solve", str(path), "--no-figures", "--csv", str(tmp_path / "m.csv"))
    assert code == 0, err
    for words in ("cutoffs (beta = 0)", "TE-type from TE10", "single-mode band", "at f = 9 GHz", "TE from TE10",
                  "v_g/c", "fill [dB/m]", "walls [dB/m]", "dispersion:"):
        assert words in out, words
    rows = list(csv.DictReader(open(tmp_path / "m.csv", encoding="utf-8")))
    assert rows[0]["label"] == "TE-type from TE10" and rows[0]["family"] == "hybrid" and rows[0]["kc_rad_per_m"] == ""
    rows = list(csv.DictReader(open(tmp_path / "m.at_frequency.csv", encoding="utf-8")))
    assert rows[0]["label"] == "TE from TE10" and float(rows[0]["beta_rad_per_m"]) > 0
    rows = list(csv.DictReader(open(tmp_path / "m.dispersion.csv", encoding="utf-8")))
    assert len(rows) == 3 and all(float(r["beta_rad_per_m"]) > 0 for r in rows)


def test_loaded_case_fields_file_has_the_slab_mode_profile(tmp_path, capsys):
    # The TE10-like mode of WR-90 with a full-height slab (eps_r 2.56, width t) against the side
    # wall is TE_10 of the x-layered guide (Collin, Field Theory of Guided Waves, ch. 6; Pozar,
    # Microwave Engineering, sec. 3.3, from memory): E = y E_y(x), E_y = sin(kx1 x) in the slab
    # and C sin(kx2 (a - x)) in the air, kx1^2 = k0^2 eps_r - beta^2, kx2^2 = k0^2 - beta^2,
    # C from the continuity of E_y at x = t; beta from the transverse-resonance reference.
    import meshio
    import numpy as np

    from femodes import reference as ref

    path = tmp_path / "slab.toml"
    path.write_text(SIDE_SLAB.replace("points = 9", "points = 3"), encoding="utf-8")
    code, out, err = run(capsys, "solve", str(path), "--no-figures", "--fields", str(tmp_path / "f.vtu"))
    assert code == 0, err
    assert str(tmp_path / "f.vtu") in out
    got = meshio.read(str(tmp_path / "f.vtu"))
    a, t, f = 22.86e-3, 4e-3, 9e9
    k0 = 2 * math.pi * f / C0
    beta2 = ref.layered_guide_modes(a, 10.16e-3, [(t, 2.56, 1.0), (a - t, 1.0, 1.0)], f, count=1, axis="x")[0].beta2
    k1, k2 = math.sqrt(k0 ** 2 * 2.56 - beta2), math.sqrt(k0 ** 2 - beta2)
    x = got.points[:, 0] + a / 2
    shape = np.where(x <= t, np.sin(k1 * x), math.sin(k1 * t) / math.sin(k2 * (a - t)) * np.sin(k2 * (a - x)))
    et = got.point_data["01_TE-from-TE10_Et"]
    scale = float(et[:, 1] @ shape / (shape @ shape))
    peak = np.max(np.abs(et[:, 1]))
    # fields converge like the square root of the eigenvalue (common practice for Galerkin
    # eigenproblems): accuracy 1e-6 on beta^2 gives about 1e-3 on the field (measured 1.0e-3)
    assert np.max(np.abs(et[:, 1] - scale * shape)) < 4e-3 * peak
    assert np.max(np.abs(et[:, 0])) < 4e-3 * peak and np.max(np.abs(got.point_data["01_TE-from-TE10_Ez"])) < 4e-3 * peak
    eps = got.cell_data["eps_r"][0]
    assert set(np.unique(got.cell_data["region"][0])) == {0, 1} and set(np.unique(eps)) == {1.0, 2.56}


def test_loaded_case_fields_file_needs_a_frequency(tmp_path, capsys):
    path = tmp_path / "slab.toml"
    path.write_text(SIDE_SLAB.replace("[analysis]\n", "").replace("frequency = 9\n", "").replace("band = [7, 11]\n", "")
                    .replace("points = 9\n", "").replace('figures = ["fields", "dispersion"]', "figures = []"),
                    encoding="utf-8")
    code, out, err = run(capsys, "solve", str(path), "--no-figures", "--fields", str(tmp_path / "f.vtu"))
    assert code == 2 and "--fields" in err and "frequency" in err
