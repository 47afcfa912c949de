"""Goal seeking back to rectangles whose answers are closed-form (Pozar, Microwave Engineering,
4th ed., sec. 3.3: fc_10 = c / (2a), fc_01 = c / (2b), fc_20 = c / a): the value found within its
reported uncertainty of the exact one, and the targets reached within their error bars."""

import pytest

import femodes as fm
from femodes import FemodesError

C0 = 299792458.0


def test_one_parameter_for_the_dominant_cutoff():
    r = fm.seek(fm.rectangle, {"height": 10.16e-3}, {"width": (15e-3, 30e-3)}, {"fc1": 6.5e9}, accuracy=1e-7)
    exact = C0 / (2 * 6.5e9)
    assert abs(r.values["width"] - exact) <= r.errors["width"] <= 1e-6 * exact
    assert abs(r.achieved["fc1"] - 6.5e9) <= 3 * r.achieved_error["fc1"]
    assert r.solves < 20


def test_two_parameters_for_two_cutoffs():
    # fc1 = TE10 = c / (2a) and fc2 = TE01 = c / (2b) as long as c / (2b) < c / a
    r = fm.seek(fm.rectangle, {}, {"width": (20e-3, 26e-3), "height": (11e-3, 14e-3)}, {"fc1": 6.5e9, "fc2": 12e9},
                accuracy=1e-7)
    a, b = C0 / (2 * 6.5e9), C0 / (2 * 12e9)
    assert abs(r.values["width"] - a) <= r.errors["width"] <= 1e-5 * a
    assert abs(r.values["height"] - b) <= r.errors["height"] <= 1e-5 * b


def test_ratio_target_of_a_rectangle():
    # ratio = fc2 / fc1 = min(2, a / b) for TE20 / TE01 (Pozar sec. 3.3): a / b = 1.5 at b = a / 1.5
    r = fm.seek(fm.rectangle, {"width": 22.86e-3}, {"height": (12e-3, 20e-3)}, {"ratio": 1.5}, accuracy=1e-7)
    assert abs(r.values["height"] - 22.86e-3 / 1.5) <= r.errors["height"]


def test_a_target_out_of_reach_says_how_close_the_bounds_come():
    with pytest.raises(FemodesError, match="cannot be met.*runs from"):
        fm.seek(fm.rectangle, {"height": 10.16e-3}, {"width": (20e-3, 30e-3)}, {"fc1": 2e9}, accuracy=1e-4)
    with pytest.raises(FemodesError, match="as many free parameters as targets"):
        fm.seek(fm.rectangle, {}, {"width": (20e-3, 30e-3)}, {"fc1": 7e9, "fc2": 12e9})
    with pytest.raises(FemodesError, match="unknown target"):
        fm.seek(fm.rectangle, {"height": 1e-2}, {"width": (20e-3, 30e-3)}, {"cutoff": 7e9})


STUDY_CASE = """[guide]
shape = "rectangle"
width = 22.86
height = 10.16
[solve]
modes = 3
accuracy = 1e-7
[seek]
width = [15.0, 30.0]
fc1 = 6.5
[tolerance]
width = 0.05
height = 0.03
samples = 2000
"""


def _cli(capsys, *argv):
    import json

    from femodes.cli import main

    code = main(list(argv))
    out, err = capsys.readouterr()
    assert code == 0, err
    return json.loads(out) if "--json" in argv else out


def test_study_commands_against_the_rectangle(tmp_path, capsys):
    # Pozar sec. 3.3: fc_10 = c / (2a), d fc_10 / d a = -c / (2 a^2), d fc_01 / d b = -c / (2 b^2)
    case = tmp_path / "r.toml"
    case.write_text(STUDY_CASE, encoding="utf-8")
    doc = _cli(capsys, "seek", str(case), "--json")
    a = C0 / (2 * 6.5e9)
    assert abs(doc["values"]["width"] - a) <= doc["errors"]["width"]
    doc = _cli(capsys, "sensitivity", str(case), "--json")
    d, e = doc["dfc"]["width"][0], doc["dfc_error"]["width"][0]
    assert abs(d + C0 / (2 * 22.86e-3 ** 2)) <= e
    doc = _cli(capsys, "tolerance", str(case), "--json")
    j = doc["quantities"].index("fc1")
    assert doc["worst"][j] == pytest.approx(C0 / (2 * 22.86e-3 ** 2) * 50e-6, rel=1e-5)
    text = _cli(capsys, "tolerance", str(case))
    assert "worst case" in text and "width" in text
