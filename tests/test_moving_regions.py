"""Regions that move with the guide's parameters in the design studies (a callable region shape
in Python, expressions of the [guide] keys in a case file), and the fill's eps_r free in seek.

Outside references: a rectangle a x b with a slab of thickness d on its floor (full width) has
LSE / LSM modes whose cutoffs solve the transverse-resonance equations (Collin, "Field Theory of
Guided Waves", 2nd ed., ch. 6; Pozar, "Microwave Engineering", 4th ed., sec. 3.6 for LSE), found
by root finding in femodes.reference.layered without the finite elements; here d = 0.3 b follows
the height b.  A rectangle filled with eps_r has its TE10 cutoff at c / (2 a sqrt(eps_r))
(common practice).
"""

import math

import pytest

import femodes as fm
from femodes import FemodesError
from femodes import reference as ref
from femodes.case import parse_case
from femodes.case.studies import run_seek, run_tolerance
from femodes.case.sweep import run_sweep
from femodes.constants import C0

A90, B90 = 22.86e-3, 10.16e-3  # WR-90 inner size (EIA)
SHARE, EPS = 0.3, 2.25          # the slab: 0.3 of the height, eps_r 2.25


def slab(width, height, **_):
    """The slab on the floor, full width, SHARE of the height thick (module level: picklable)."""
    return fm.rectangle(width, SHARE * height).translated(0, -(1 - SHARE) * height / 2)


def _cutoffs(b, n=2, a=A90):
    """LSE / LSM cutoffs (Hz) of the a x b guide with the slab 0.3 b thick (Collin ch. 6)."""
    d = SHARE * b
    return [c.frequency for c in ref.layered_guide_cutoffs(a, b, [(d, EPS, 1.0), (b - d, 1.0, 1.0)], n)]


def _regions():
    return [{"name": "slab", "shape": slab, "eps_r": EPS}]


def test_sweep_with_a_slab_that_follows_the_height():
    heights = [8e-3, B90]
    r = fm.sweep(fm.rectangle, {"width": A90}, {"height": heights}, modes=2, accuracy=1e-5, workers=1,
                 regions=_regions())
    for b in heights:
        p = r.points[(b,)]
        assert p["status"] == "ok"
        for fc, err, want in zip(p["fc"], p["fc_error"], _cutoffs(b)):
            assert abs(fc - want) <= err, (b, fc, want, err)
    # a fixed slab (the same at the nominal height) is not the same guide at 8 mm: it is thicker there
    fixed = fm.sweep(fm.rectangle, {"width": A90}, {"height": [8e-3]}, modes=1, accuracy=1e-5, workers=1,
                     regions=[{"name": "slab", "shape": slab(A90, B90), "eps_r": EPS}])
    assert abs(fixed.points[(8e-3,)]["fc"][0] - _cutoffs(8e-3)[0]) > 1e-3 * _cutoffs(8e-3)[0]


def test_seek_and_sensitivity_with_a_slab_that_follows_the_height():
    # seek: the height at which fc1 is the reference fc1 at b = 9 mm
    want = _cutoffs(9e-3, 1)[0]
    s = fm.seek(fm.rectangle, {"width": A90}, {"height": (8e-3, 10e-3)}, {"fc1": want}, modes=2, accuracy=1e-6,
                regions=_regions())
    assert abs(s.values["height"] - 9e-3) <= s.errors["height"] <= 1e-6
    # sensitivity: d fc / d height against central differences of the reference roots (step 1e-5
    # relative; the roots are found to about 1e-14); no kink: the slab moves with the floor's height
    sens = fm.sensitivity(fm.rectangle, {"width": A90, "height": B90}, modes=2, accuracy=1e-5, only=["height"],
                          regions=_regions())
    h = 1e-5 * B90
    d_ref = [(p - m) / (2 * h) for p, m in zip(_cutoffs(B90 + h), _cutoffs(B90 - h))]
    for k in range(2):
        assert abs(sens.dfc["height"][k] - d_ref[k]) <= sens.dfc_error["height"][k], (k, sens.dfc["height"][k], d_ref[k])
    assert "kink" not in sens.method["height"]
    assert sens.method["height"].startswith("shape derivative") and "interfaces moved" in sens.method["height"]
    # the width: the slab's sides ride on the side walls; d fc / d a against the reference's difference
    sens = fm.sensitivity(fm.rectangle, {"width": A90, "height": B90}, modes=2, accuracy=1e-5, only=["width"],
                          regions=_regions())
    h = 1e-5 * A90
    d_ref = [(p - m) / (2 * h) for p, m in zip(_cutoffs(B90, a=A90 + h), _cutoffs(B90, a=A90 - h))]
    for k in range(2):
        assert abs(sens.dfc["width"][k] - d_ref[k]) <= sens.dfc_error["width"][k], (k, sens.dfc["width"][k], d_ref[k])
    assert sens.method["width"].startswith("shape derivative")


def test_region_callables_are_checked():
    with pytest.raises(FemodesError, match="placed Section"):
        fm.sweep(fm.rectangle, {"width": A90}, {"height": [9e-3]}, modes=1, workers=1,
                 regions=[{"name": "s", "shape": lambda width, height: 3.0, "eps_r": 2.0}])
    with pytest.raises(FemodesError, match="module level"):
        fm.sweep(fm.rectangle, {"width": A90}, {"height": [9e-3, 10e-3]}, modes=1, workers=2,
                 regions=[{"name": "s", "shape": lambda width, height: slab(width, height), "eps_r": 2.0}])
    with pytest.raises(FemodesError, match="must be a placed Section or a function"):
        fm.sweep(fm.rectangle, {"width": A90}, {"height": [9e-3]}, modes=1, workers=1,
                 regions=[{"name": "s", "shape": "slab", "eps_r": 2.0}])


CASE = """
[guide]
shape = "rectangle"
width = 22.86
height = 10.16

[[region]]
name = "slab"
shape = "rectangle"
width = "width"
height = "0.3 * height"
offset = [0, "-(1 - 0.3) * height / 2"]
eps_r = 2.25

[solve]
modes = 2
accuracy = 1e-5
"""


def test_case_file_region_expressions_follow_the_guide():
    case = parse_case(CASE + "[sweep]\nheight = [8.0, 10.16]\nworkers = 1\n")
    r = run_sweep(case)
    for b in (8e-3, B90):
        p = r.points[(b,)]
        for fc, err, want in zip(p["fc"], p["fc_error"], _cutoffs(b)):
            assert abs(fc - want) <= err, (b, fc, want, err)
    # a [tolerance] on the height rebuilds the slab with it (its sensitivity by differences):
    # worst case of fc1 = (|d fc1 / d b| + its error) t, with d fc1 / d b from the reference roots
    t = run_tolerance(parse_case(CASE + "[tolerance]\nheight = 0.05\n"))
    h = 1e-5 * B90
    d_ref = (_cutoffs(B90 + h, 1)[0] - _cutoffs(B90 - h, 1)[0]) / (2 * h)
    sens = t.sensitivity
    assert abs(sens.dfc["height"][0] - d_ref) <= sens.dfc_error["height"][0]
    nominal, worst, _ = t.of("fc1")
    assert abs(d_ref) * 0.05e-3 <= worst <= (abs(d_ref) + 2 * sens.dfc_error["height"][0]) * 0.05e-3


@pytest.mark.parametrize("value, words", [
    ('"0.3 * hieght"', "'hieght', which is not a [guide] key here: use height, width"),
    ('"0.3 *"', "not an arithmetic expression"),
    ('"__import__(\'os\').getcwd()"', "only numbers, [guide] keys"),
    ('"height / 0"', "divides by zero"),
    ('"-height"', "must be positive"),
])
def test_bad_region_expressions_say_what_to_fix(value, words):
    with pytest.raises(FemodesError, match=words.replace("[", r"\[").replace("]", r"\]").replace("(", r"\(")
                       .replace(")", r"\)").replace("*", r"\*")):
        parse_case(CASE.replace('"0.3 * height"', value))


def test_seek_the_fill_permittivity_of_a_case_for_a_target_cutoff():
    # TE10 of a filled rectangle: fc = c / (2 a sqrt(eps_r)) (common practice)
    text = ('[guide]\nshape = "rectangle"\nwidth = 22.86\nheight = 10.16\n[fill]\neps_r = 2.0\n'
            '[solve]\nmodes = 2\naccuracy = 1e-8\n[seek]\neps_r = [1.2, 3.0]\nfc1 = 5.0\n')
    r = run_seek(parse_case(text))
    want = (C0 / (2 * A90 * 5e9)) ** 2
    assert abs(r.values["eps_r"] - want) <= r.errors["eps_r"] <= 1e-6 * want
    # and in Python, without regions
    s = fm.seek(fm.rectangle, {"width": A90, "height": B90}, {"eps_r": (1.2, 3.0)}, {"fc1": 5e9}, accuracy=1e-8)
    assert abs(s.values["eps_r"] - want) <= s.errors["eps_r"]
    for bad, words in (("eps_r = [0, 3.0]", "0 < low < high"), ("eps_r = 2.0", r"\[low, high\]")):
        with pytest.raises(FemodesError, match=words):
            parse_case(text.replace("eps_r = [1.2, 3.0]", bad))
    with pytest.raises(FemodesError, match="must be positive"):
        fm.seek(fm.rectangle, {"width": A90, "height": B90}, {"eps_r": (-1.0, 3.0)}, {"fc1": 5e9})
    assert math.isfinite(r.achieved["fc1"])


def rod(radius, **_):
    """A concentric rod of 0.4 of the guide's radius (module level: picklable)."""
    return fm.circle(0.4 * radius)


def test_a_curved_region_that_scales_with_the_guide():
    """A circular guide of radius R with a concentric eps_r = 4 rod of radius 0.4 R: the whole
    section scales with R, so every cutoff goes as 1 / R and d fc / d R = -fc / R exactly (Maxwell's
    equations are scale invariant with fixed materials: common practice).  The rod's arc outline
    moves with R (curved interface, shape derivative)."""
    R = 10e-3
    s = fm.sensitivity(fm.circle, {"radius": R}, modes=3, accuracy=1e-6, only=["radius"],
                       regions=[{"name": "rod", "shape": rod, "eps_r": 4.0}])
    assert s.method["radius"].startswith("shape derivative") and "interfaces moved" in s.method["radius"]
    for k in range(3):
        want = -s.fc[k] / R
        bar = s.dfc_error["radius"][k] + s.fc_error[k] / R
        assert abs(s.dfc["radius"][k] - want) <= bar, (k, s.dfc["radius"][k], want, bar)
