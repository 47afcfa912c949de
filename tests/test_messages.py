"""Messages in the user's own terms (issue 13 item 1; common practice: an error names what was
done, in the words and units it was done in, and what to fix).  Each row is a mistake made in a
case file or on the command line, and the words its one-line error (or warning) must hold: the
key and its table, the file's `units` / `frequency_units`, the case file's name -- and none of
the Python-side words (metres typed into a call, argument names, Hz where GHz was typed)."""

import re

import pytest

from femodes.api import MAX_MODES
from femodes.case.schema import _ANALYSIS_KEYS, _FILL_KEYS, _OUTPUT_KEYS, _SOLVE_KEYS, DEFAULT_POINTS, MAX_POINTS
from femodes.case.studies import _TOLERANCE_KEYS
from femodes.case.sweep import SWEEP_KEYS
from femodes.case.values import ACCURACY_RANGE
from femodes.cli import main
from femodes.errors import CONDUCTIVITY_RANGE, MATERIAL_RANGE
from femodes.quantities.convergence import DEFAULT_QUANTITY_ACCURACY

INCH = '[guide]\nshape = "rectangle"\nunits = "in"\nwidth = 0.9\nheight = 0.4\n[solve]\nmodes = 2\naccuracy = 1e-3\n'
CIRCLE = '[guide]\nshape = "circle"\nradius = 5\n[solve]\nmodes = 2\naccuracy = 1e-3\n'

#: (case text, command and options, words the message holds, words it must not hold)
CASES = [
    # [guide]: the shape functions' own checks, with the lengths back in the file's units
    ('[guide]\nshape = "rectangle"\nunits = "in"\nwidth = 0.9\nheight = 1.0\ncorner_radius = 0.6\n', ["solve"],
     ["[guide] rectangle", "corner_radius 0.6 in", "0.45 in"], ["mm", "metres"]),
    ('[guide]\nshape = "coaxial"\nunits = "in"\nouter_radius = 0.2\ninner_radius = 0.1\ninner_offset = [0.15, 0]\n',
     ["solve"], ["inner_offset 0.15 in", "below 0.1 in"], ["mm", " offset 0"]),
    ('[guide]\nshape = "double_ridge"\nunits = "cm"\nwidth = 3.4\nheight = 1.6\nridge_width = 0.8\ngap = 2\n', ["solve"],
     ["gap (2 cm)", "height (1.6 cm)"], ["mm"]),
    ('[guide]\nshape = "single_ridge"\nunits = "in"\nwidth = 1\nheight = 0.5\nridge_width = 0.3\ngap = 0.1\n'
     'base_radius = 0.4\n', ["solve"], ["base_radius (0.4 in)", "at most 0.35 in"], ["mm"]),
    ('[guide]\nshape = "l_shape"\nunits = "cm"\nwidth = 2\nheight = 2\nnotch_width = 3\nnotch_height = 1\n', ["solve"],
     ["(3 x 1 cm)", "(2 x 2 cm)"], ["mm"]),
    ('[guide]\nshape = "sector"\nradius = 5\nangle_deg = 400\n', ["solve"],
     ["angle_deg in [guide]", "between 0 and 360", "400"], ["rad", "pi"]),
    ('[guide]\nshape = "sector"\nunits = "in"\nradius = 1\nangle_deg = 90\ninner_radius = 2\n', ["solve"],
     ["inner_radius (2 in)", "radius (1 in)"], ["mm"]),
    ('[guide]\nshape = "polygon"\nunits = "in"\nvertices = [[0, 0], [1, 0], [1, 1], [0, 0]]\n', ["solve"],
     ["vertices 4 and 1", "(0, 0) in"], ["mm", "(0.0, 0.0)"]),
    ('[guide]\nshape = "ellipse"\nunits = "in"\na = 0\nb = 1\n', ["solve"],
     ["a in [guide]", "must be positive", "0 (in)"], ["semi-axis", " m,"]),
    ('[guide]\nshape = "standard"\ndesignation = "WR-90"\nunits = "in"\ncorner_radius = 0.3\n', ["solve"],
     ["corner_radius 0.3 in", "0.2 in"], ["mm"]),
    ('[guide]\nshape = "rectangular_coax"\nunits = "in"\nwidth = 1\nheight = 1\ninner_width = 2\ninner_height = 0.2\n',
     ["solve"], ["(2 x 0.2 in at inner_offset (0, 0) in)", "1 x 1 in outer wall"], ["mm"]),
    ('[guide]\nshape = "circle"\nunits = "mil"\nradius = 1e9\n', ["solve"], ["2e+09 mil across"], ["metres", " m "]),
    ('[guide]\nshape = "rectangle"\nwidth = 22.86\nheight = 10\nrotate_deg = "30"\n', ["solve"],
     ["rotate_deg in [guide]", "degrees", "without quotes"], ["`units`"]),
    ('[guide]\nshape = "circle"\nradius = 5\ntitle = "x"\n', ["solve"], ["title", "top of the file"], []),
    # [solve], [fill], [[region]], [analysis]: one statement of each range
    (CIRCLE.replace("accuracy = 1e-3", 'accuracy = "1e-6"'), ["solve"], ["accuracy in [solve]", "without quotes"],
     ["`units`"]),
    ('[guide]\nshape = "circle"\nradius = 5\n[fill]\neps_r = 0.5\n', ["solve"], ["eps_r in [fill]", "from 1 to 10000"], []),
    ('[guide]\nshape = "circle"\nradius = 5\n[fill]\nmu_r = 2e4\n', ["solve"], ["mu_r in [fill]", "from 1 to 10000"], []),
    ('[guide]\nshape = "circle"\nradius = 5\n[[region]]\nshape = "circle"\nradius = 1\neps_r = 0.5\n', ["solve"],
     ["eps_r in [[region]] 1", "from 1 to 10000"], []),
    ('[guide]\nshape = "circle"\nunits = "in"\nradius = 0.2\n[[region]]\nshape = "rectangle"\nwidth = 0.1\n'
     'height = 0.1\ncorner_radius = 0.2\neps_r = 2\n', ["solve"], ["[[region]] 1 rectangle", "0.2 in"], ["mm"]),
    (CIRCLE.replace("[solve]", '[solve]\nfamily = "TEM"'), ["solve"], ["family in [solve]", "leave family out"],
     ["did you mean 'TM'"]),
    (CIRCLE + '[analysis]\nfrequency = 1\nfrequency_units = "THz"\n', ["solve"], ["1 THz = 1000 GHz"],
     ["did you mean 'Hz'"]),
    (CIRCLE + '[analysis]\nfrequency = 20\nconductor = 10\n', ["solve"],
     ["conductor in [analysis]", "from 10000 to 1e+09", "got 10"], []),
    (CIRCLE + '[analysis]\nfrequency = 1e8\nfrequency_units = "MHz"\n', ["solve"],
     ["frequency in [analysis] is 1e+08 MHz", "above the 1e+07 MHz (10 THz)"], ["1e+14 Hz", "1e+13"]),
    (CIRCLE + '[analysis]\nband = ["8", "12"]\n', ["solve"], ["band in [analysis]", "without quotes"], []),
    (CIRCLE + '[analysis]\nfrequency = 200000\nfrequency_units = "MHz"\n', ["solve"],
     ["frequency in [analysis] reaches 200000 MHz", "MHz, TE11", "modes in [solve]"], ["GHz"]),
    (CIRCLE + '[analysis]\nband = [10, 200]\n', ["solve"], ["band in [analysis] reaches 200 GHz"], []),
    (CIRCLE, ["solve", "--frequency", "2000"], ["--frequency reaches 2000 GHz"], ["[analysis]"]),
    (CIRCLE, ["solve", "--fields", "modes.txt"], ["--fields modes.txt", ".vtu"], ["part"]),
    (CIRCLE, ["solve", "--band", "12", "8"], ["--band must be F1 F2", "got 12 8"], ["[12.0, 8.0]"]),
    (CIRCLE, ["solve", "--conductor", "10", "--frequency", "10"], ["--conductor", "from 10000 to 1e+09"], []),
    # [sweep], [seek], [tolerance] and their verbs
    (INCH + '[sweep]\nwidth = [0.8, -0.9]\n', ["sweep"], ["width in [sweep]", "length", "(in)"], []),
    (INCH + '[sweep]\nwidth = [0.8, 0.9]\neps_r = [0.5, 1]\n', ["sweep"], ["eps_r in [sweep]", "from 1 to 10000"], []),
    (INCH + '[sweep]\nwidth = [0.8, 0.9]\ntarget = "x"\n', ["sweep"], ["target in [sweep]", "GHz"], ["`units`"]),
    (INCH + '[sweep]\nwidth = { from = 0.8, to = 0.8, points = 3 }\n', ["sweep"],
     ["width in [sweep]", "from = 0.8, to = 0.8"], ["a table"]),
    (INCH, ["sweep"], ["no [sweep] table"], []),
    (INCH + '[sweep]\nwidth = [0.8, 0.9]\n', ["sweep", "--store", "/nonexistent-femodes-dir/x.db"],
     ["cannot create store", "does not exist"], ["not a femodes sweep store"]),
    (INCH + '[seek]\nwidth = [1.5, 0.5]\nfc1 = 6.5\n', ["seek"], ["width in [seek]", "low < high", "(in)"],
     ["0.0381"]),
    (INCH + '[seek]\nwidth = [-1, 1.5]\nfc1 = 6.5\n', ["seek"], ["width in [seek]", "positive", "(in)"], ["-0.0254"]),
    (INCH + '[seek]\nwidth = [0.5, 1.5]\nfc1 = -6.5\n', ["seek"], ["fc1 in [seek]", "GHz", "-6.5"], ["e+09"]),
    (INCH + '[seek]\nwidth = [0.5, 1.5]\nheight = [0.2, 0.6]\nfc1 = 6\n', ["seek"], ["[seek] gives 2", "width, height"],
     []),
    (INCH + '[seek]\nwidth = [0.5, 1.5]\nfc1 = 100\n', ["seek"], ["fc1 = 100 GHz", "width in [0.5 in, 1.5 in]"],
     ["0.0127"]),
    (INCH + '[seek]\nwidth = [0.5, 1.5]\nfc7 = 6\n', ["seek"], ["fc7", "modes in [solve]"], ["modes="]),
    (INCH + '[tolerance]\nwidth = 1.0\n', ["tolerance"], ["width in [tolerance]", "+- 1 in", "(0.9 in)"], []),
    (INCH + '[tolerance]\nwidth = 0.01\nsamples = 10\n', ["tolerance"], ["samples in [tolerance]", ">= 100"], []),
    ('[guide]\nshape = "polygon"\nvertices = [[0, 0], [10, 0], [0, 10]]\n', ["sensitivity"],
     ["shape 'polygon' has none"], ["SI units", "parameters"]),
]


@pytest.mark.parametrize("text, argv, words, absent", CASES)
def test_each_mistake_is_told_in_the_case_files_terms(tmp_path, capsys, text, argv, words, absent):
    path = tmp_path / "bad.toml"
    path.write_text(text, encoding="utf-8")
    extra = ["--no-figures"] if argv[0] == "solve" else []
    assert main([argv[0], str(path)] + argv[1:] + extra) == 2
    err = capsys.readouterr().err
    line = [x for x in err.splitlines() if x.startswith("femodes: error:")][-1]
    if not line.startswith("femodes: error: --"):  # (a bad option is told by its option name)
        assert f"{path}:" in line, line  # the file is named
    for w in words:
        assert w in line, (w, line)
    for w in absent:
        assert w not in line, (w, line)


def test_an_implausible_size_names_units_in_guide_not_metres(tmp_path, capsys):
    path = tmp_path / "big.toml"
    path.write_text('[guide]\nshape = "circle"\nunits = "m"\nradius = 5\n[solve]\nmodes = 1\naccuracy = 1e-2\n',
                    encoding="utf-8")
    assert main(["solve", str(path), "--no-figures"]) == 0
    err = capsys.readouterr().err
    assert "10 m across" in err and "units in [guide]" in err
    assert "femodes takes metres" not in err and "22.86e-3" not in err  # the Python advice, not for a case file


def test_a_sweep_of_an_inch_case_prints_its_lengths_in_inches(tmp_path, capsys):
    # TE10 of a 0.9 x 0.4 in guide: fc = c / (2 a) (common practice), a = 0.9 in and 1.0 in
    path = tmp_path / "sweep.toml"
    path.write_text(INCH + "[sweep]\nwidth = [0.9, 1.0]\n", encoding="utf-8")
    assert main(["sweep", str(path)]) == 0
    out = capsys.readouterr().out
    assert "width [in]" in out and "height = 0.4 in" in out and "[mm]" not in out
    rows = {w[0]: float(w[1]) for w in map(str.split, out.splitlines()) if w[:1] in (["0.9"], ["1"])}
    for a, fc in rows.items():
        assert fc == pytest.approx(299792458.0 / (2 * float(a) * 0.0254) / 1e9, rel=1e-3)
    assert len(rows) == 2


def test_design_studies_take_rounded_and_offset_guides(tmp_path, capsys):
    # a rounded rectangle and an offset coax were refused ('need a built-in shape') or leaked offset_x
    for text in ('[guide]\nshape = "rectangle"\nwidth = 22.86\nheight = 10.16\ncorner_radius = 1\n',
                 '[guide]\nshape = "standard"\ndesignation = "WR-90"\n',
                 '[guide]\nshape = "coaxial"\nouter_radius = 5\ninner_radius = 1\ninner_offset = [1, 0]\n'):
        path = tmp_path / "g.toml"
        path.write_text(text + '[solve]\nmodes = 2\naccuracy = 1e-3\n', encoding="utf-8")
        assert main(["sensitivity", str(path)]) == 0, capsys.readouterr().err
        capsys.readouterr()


def _readme_keys_block():
    from pathlib import Path

    text = (Path(__file__).resolve().parent.parent / "README.md").read_text(encoding="utf-8")
    start = text.index("All keys, with defaults")
    return text[start:text.index("```\n", text.index("```toml", start) + 7)]


def test_the_readme_key_list_agrees_with_the_code():
    block = _readme_keys_block()
    keys = set(re.findall(r"^([a-z_]+) *=", block, flags=re.M))
    for k in _SOLVE_KEYS + _ANALYSIS_KEYS + _OUTPUT_KEYS + _FILL_KEYS + SWEEP_KEYS + _TOLERANCE_KEYS:
        assert k in keys, k
    lo, hi = ACCURACY_RANGE
    assert f"default 1e-6; {lo:g} to {hi:g}" in block
    assert f"default 6 (1 to {MAX_MODES})" in block
    qa = re.search(r"^quantity_accuracy = \S+ *#.*\(default (\S+);", block, flags=re.M)
    assert float(qa.group(1)) == DEFAULT_QUANTITY_ACCURACY
    assert f"2 .. {MAX_POINTS} (default {DEFAULT_POINTS}" in block
    assert f"{MATERIAL_RANGE[0]:g} to {MATERIAL_RANGE[1]:g}" in block
    assert f"S/m from {CONDUCTIVITY_RANGE[0]:.0e}".replace("e+0", "e") in block


def test_a_mesh_files_own_checks_speak_its_units(tmp_path, capsys):
    # a hanging node: the vertex (1, 0) of one triangle lies inside the edge (0, 0)-(2, 0) of another
    import meshio
    import numpy as np

    pts = np.array([[0, 0, 0], [2, 0, 0], [0, 2, 0], [1, 0, 0], [0, -1, 0], [3, -1, 0]], float)
    meshio.write(str(tmp_path / "nc.msh"), meshio.Mesh(pts, [("triangle", np.array([[0, 1, 2], [3, 4, 5]]))]),
                 file_format="gmsh22")
    path = tmp_path / "nc.toml"
    path.write_text('[guide]\nshape = "mesh"\nfile = "nc.msh"\nunits = "in"\n', encoding="utf-8")
    assert main(["solve", str(path), "--no-figures"]) == 2
    err = capsys.readouterr().err
    assert "not conforming" in err and "the vertex at (1, 0) in" in err and "(2, 0) in" in err and " mm" not in err
