"""Walls a user marks magnetic (Section.with_walls, femodes.geometry.walls).

A rectangle a x b with one side marked magnetic (PMC) is the half of a rectangle 2a x b that
holds the modes even in E_z / odd in H_z about the middle plane (image theory, common practice):
fc = (c / 2) sqrt((m / 2a)^2 + (n / b)^2) with m odd, TE n >= 0, TM n >= 1 (the empty
rectangle's cutoffs, common practice).  Two adjacent sides marked: the quarter of 2a x 2b, m and n
odd.  The wall loss of the half equals the whole guide's (both the loss and the power halve):
the TE10 attenuation of Pozar, "Microwave Engineering", 4th ed., eq. (3.96) (from memory).  Where
a magnetic side meets an electric one the corner is mixed, exponents (k - 1/2) pi / alpha
(Grisvard, "Elliptic problems in nonsmooth domains", 1985, section 5.2, from memory): r^(1/2) at
a straight joint.
"""

import math

import pytest

import femodes as fm
from femodes.constants import C0, ETA0, MU0
from femodes.geometry.mirror import mirror_planes
from femodes.quantities.losses import conductor_attenuation

A, B = 20e-3, 10e-3


def _closed_form(a, b, n_modes, m_odd=True, n_odd=False):
    """(fc, family) of the empty rectangle a x b, restricted to m (and n) odd, ascending."""
    out = []
    for m in range(0, 12):
        for n in range(0, 12):
            if (m_odd and m % 2 == 0) or (n_odd and n % 2 == 0):
                continue
            fc = C0 / 2 * math.hypot(m / a, n / b)
            if m + n > 0:
                out.append((fc, "TE"))
            if m > 0 and n > 0:
                out.append((fc, "TM"))
    return sorted(out)[:n_modes]


def _check(ms, ref):
    got = sorted((m.fc, m.family, m.fc_error) for m in ms)
    assert len(got) == len(ref)
    for (fc, fam, err), (f0, fam0) in zip(got, ref):
        assert abs(fc - f0) <= max(err, 1e-9 * f0), (fam, fc, f0, err)
    # families of each distinct cutoff agree (TE / TM pairs share their cutoff)
    key = lambda rows: sorted((round(r[0] / 1e3), r[1]) for r in rows)
    assert key([(g[0], g[1]) for g in got]) == key(ref)


def test_half_rectangle_with_one_magnetic_side_is_the_even_half_of_twice_the_width():
    half = fm.rectangle(A, B).with_walls(magnetic=[(A / 2, 0.0)])
    ms = fm.solve(half, modes=8, accuracy=1e-8)
    _check(ms, _closed_form(2 * A, B, len(ms)))
    # named by ordinal and parity (H_z even about y = 0), not by the rectangle's indices
    assert [m.label for m in ms][:2] == ["TE1 (y even)", "TE2 (y even)"]


def test_quarter_with_two_magnetic_sides_moved_and_rotated():
    # marks are coordinates of the section: they follow its moves
    q = fm.rectangle(A, B).with_walls(magnetic=[(A / 2, 0.0), (0.0, B / 2)])
    moved = q.rotated(0.7).translated(0.05, -0.02)
    ms = fm.solve(moved, modes=6, accuracy=1e-8)
    _check(ms, _closed_form(2 * A, 2 * B, len(ms), n_odd=True))
    assert ms[0].degeneracy  # TE11 / TM11 of the 2a x 2b guide share the cutoff


def test_wall_loss_of_the_half_guide_is_the_whole_guides():
    a, b, f, sigma = 22.86e-3, 10.16e-3, 10e9, 5.8e7  # WR-90 (common practice), copper
    half = fm.rectangle(a / 2, b).with_walls(magnetic=[(a / 4, 0.0)])
    te10 = fm.solve(half, modes=1, accuracy=1e-8)[0]
    k = 2 * math.pi * f / C0
    beta = math.sqrt(k * k - (math.pi / a) ** 2)
    rs = math.sqrt(2 * math.pi * f * MU0 / (2 * sigma))
    pozar = rs * (2 * b * math.pi ** 2 + a ** 3 * k * k) / (a ** 3 * b * beta * k * ETA0)
    assert conductor_attenuation(te10, f, sigma) == pytest.approx(pozar, rel=1e-5)


def test_corners_where_magnetic_meets_electric_are_mixed():
    half = fm.rectangle(A, B).with_walls(magnetic=[(A / 2, 0.0)])
    mixed = sorted(c.point for c in half.corners() if c.mixed)
    assert mixed == [(A / 2, -B / 2), (A / 2, B / 2)]
    # 90 degrees, mixed: exponents (k - 1/2) pi / (pi / 2) = 1, 3, ... whole: smooth
    assert all(math.isinf(c.singular_exponent) for c in half.corners())
    # a straight joint: the bottom side in two pieces, the right piece magnetic
    p = fm.polygon([(0, 0), (A / 2, 0), (A, 0), (A, B), (0, B)]).with_walls(magnetic=[(0.75 * A, 0.0)])
    joint = [c for c in p.corners() if c.mixed and abs(c.angle - math.pi) < 1e-12]
    assert [c.point for c in joint] == [(A / 2, 0.0)]
    assert joint[0].singular_exponent == pytest.approx(0.5)
    assert joint[0].limits_rate(4)


def test_marked_sections_are_not_reduced_and_keep_only_their_symmetry():
    half = fm.rectangle(A, B).with_walls(magnetic=[(A / 2, 0.0)])
    assert mirror_planes(half) == ()
    assert not half.is_symmetric("x") and half.is_symmetric("y")
    assert fm.symmetry_group(half).name == "D1"
    both = fm.rectangle(A, B).with_walls(magnetic=[(A / 2, 0.0), (-A / 2, 0.0)])
    assert both.is_symmetric("x")


def test_electric_marks_take_a_side_back():
    s = fm.rectangle(A, B).with_walls(magnetic=[(A / 2, 0.0), (0.0, B / 2)])
    back = s.with_walls(electric=[(A / 2, 1e-3)])
    assert back.magnetic == ((0.0, B / 2),)
    assert back.with_walls(electric=[(0.0, B / 2 - 0.0)]).magnetic == ()
    assert "1 magnetic wall" in back.describe()


@pytest.mark.parametrize("make, words", [
    (lambda: fm.rectangle(A, B).with_walls(magnetic=[(A / 2 + 1e-3, 0.0)]), "not on the outer wall"),
    (lambda: fm.rectangle(A, B).with_walls(magnetic=[(A / 2, B / 2)]), "at a corner"),
    (lambda: fm.circle(A).with_walls(magnetic=[(A, 0.0)]), "curved side"),
    (lambda: fm.coaxial(A, A / 4).with_walls(magnetic=[(A / 4, 0.0)]), "inner conductor"),
    (lambda: fm.rectangle(A, B).with_walls(magnetic=[(A / 2, 0), (-A / 2, 0), (0, B / 2), (0, -B / 2)]),
     "at least one wall must stay electric"),
    (lambda: fm.rectangle(A, B).with_walls(magnetic="left"), "list of points"),
    (lambda: fm.rectangle(A, B).with_walls(magnetic=[(1, 2, 3)]), "two numbers"),
    (lambda: fm.rectangle(A, B).with_walls(magnetic=[(math.nan, 0)]), "finite"),
    (lambda: fm.rectangle(A, B).with_walls(), "with_walls needs"),
    (lambda: fm.rectangle(A, B).with_walls(magnetic=[(A / 2, 0)], electric=[(A / 2, 1e-3)]), "both"),
    (lambda: fm.rectangle(A, B).with_walls(magnetic=[(A / 2, 0)]).with_material(fm.rectangle(A / 4, B)), "homogeneously"),
    (lambda: fm.rectangle(A, B).with_material(fm.rectangle(A / 4, B)).with_walls(magnetic=[(A / 2, 0)]), "homogeneously"),
])
def test_bad_marks_say_what_to_fix(make, words):
    with pytest.raises(fm.FemodesError, match=words):
        make()


def test_case_file_key_marks_where_the_guide_lies():
    from femodes.case import parse_case

    text = ('[guide]\nshape = "rectangle"\nwidth = 20\nheight = 10\noffset = [5, 0]\n'
            'magnetic_walls = [[15, 0]]\n[solve]\nmodes = 2\n')
    case = parse_case(text)
    assert case.section.magnetic == (pytest.approx((15e-3, 0.0)),)
    assert not case.section.is_symmetric("x")
    with pytest.raises(fm.FemodesError, match="not on the outer wall"):
        parse_case(text.replace("[[15, 0]]", "[[16, 0]]"))


# ----------------------------------------------------------------------------- design studies
# The half guide a x b (one side magnetic) has the cutoffs of the 2a x b guide with m odd
# (image theory, common practice): TE1 at c / (4 a), so d fc / d a = -fc / a, and for (m, n)
# d fc / d a = -(c / 2)^2 (m / 2a)^2 / (a fc), d fc / d b = -(c / 2)^2 (n / b)^2 / (b fc).

def half_guide(width, height):
    """The rectangle with its right side magnetic (module level: the sweep's workers find it)."""
    return fm.rectangle(width, height).with_walls(magnetic=[(width / 2, 0.0)])


def test_sensitivity_of_a_guide_with_a_magnetic_wall_against_the_closed_form():
    s = fm.sensitivity(half_guide, {"width": A, "height": B}, modes=3, accuracy=1e-6)
    ref = _closed_form(2 * A, B, 3)
    for k, m in enumerate(s.modes):
        fc = ref[k][0]
        mm, n = (1, 0) if k == 0 else (1, 1) if abs(fc - C0 / 2 * math.hypot(1 / (2 * A), 1 / B)) < 1e3 else (3, 0)
        da = -(C0 / 2) ** 2 * (mm / (2 * A)) ** 2 / (A * fc)
        db = -(C0 / 2) ** 2 * (n / B) ** 2 / (B * fc)
        assert abs(s.dfc["width"][k] - da) <= s.dfc_error["width"][k] + 1e-9 * abs(da), (m.label, s.dfc["width"][k], da)
        assert abs(s.dfc["height"][k] - db) <= s.dfc_error["height"][k] + 1e-9 * fc / B, (m.label, s.dfc["height"][k], db)


def test_sweep_and_seek_of_a_guide_with_a_magnetic_wall_python_and_case_file():
    from femodes.case import parse_case
    from femodes.case.studies import run_seek
    from femodes.case.sweep import run_sweep

    r = fm.sweep(half_guide, {"height": B}, {"width": [A, 1.2 * A]}, modes=2, accuracy=1e-7, workers=1)
    for a in (A, 1.2 * A):
        p = r.points[(a,)]
        for fc, err, (want, _) in zip(p["fc"], p["fc_error"], _closed_form(2 * a, B, 2)):
            assert abs(fc - want) <= max(err, 1e-9 * want)
    # the case file: the marked side (right) stays marked when the width changes, the guide placed
    text = ('[guide]\nshape = "rectangle"\nwidth = 20\nheight = 10\noffset = [5, 0]\n'
            'magnetic_walls = [[15, 0]]\n[solve]\nmodes = 2\naccuracy = 1e-7\n'
            '[sweep]\nwidth = [20, 24]\nworkers = 1\n[seek]\nwidth = [15, 30]\nfc1 = 3.0\n')
    case = parse_case(text)
    sw = run_sweep(case)
    for a in (A, 1.2 * A):
        assert sw.points[(a,)]["fc"][0] == pytest.approx(C0 / (4 * a), rel=1e-7)
    sk = run_seek(case)
    want = C0 / (4 * 3.0e9)  # TE1 of the half guide at c / (4 a)
    assert abs(sk.values["width"] - want) <= sk.errors["width"] <= 1e-6 * want
