"""Tests of the femodes command-line program (femodes.cli.main) and its reports (femodes.export).

Reference numbers: WR-90 inner 22.86 x 10.16 mm (EIA standard WR-90); TE_m0 cutoff
fc = m c / (2 a) with c = 299 792 458 m/s (Pozar, Microwave Engineering, 4th ed., sec. 3.3):
TE10 6.557140 GHz, TE20 13.114281 GHz.
"""

import csv
import importlib.util
import json
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
    assert [r[1] for r in rows] == ["TE10", "TE20", "TE01", "TE11"]
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
    assert doc["fill"] == {"eps_r": 1.0, "mu_r": 1.0}
    assert doc["accuracy"] == 1e-5
    assert doc["discretisation"]["unknowns"] > 0 and doc["discretisation"]["element_order"] in (1, 2, 3, 4)
    modes = doc["modes"]
    assert len(modes) == 4
    for m in modes:
        for key in ("index", "label", "family", "kc", "kc_error", "fc", "fc_error", "cutoff_wavelength",
                    "degenerate_with", "symmetry", "nodal_domains"):
            assert key in m
        assert m["family"] == "TE"
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
    assert doc["files"] == {"csv": None, "figures": []}


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
    # the shape function's own message, passed through (femodes.section.ridged)
    assert "gap (12 mm) must be smaller than the guide height (10 mm)" in proc.stderr
    assert "Traceback" not in proc.stderr


# ----------------------------------------------------------------------------- figures

@pytest.mark.skipif(importlib.util.find_spec("femodes.figures") is None,
                    reason="femodes.figures is not written yet")
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
    for opt in ("--json", "--figures", "--format", "--modes", "--accuracy", "--csv"):
        assert opt in out
