"""Labels that do not depend on the mesh (issue 11 item 4): nodal regions and degeneracy kinds."""

import math
import warnings

import pytest
from scipy import special

import femodes
from femodes.report.text import _degenerate_text

A, B = 22.86e-3, 10.16e-3  # WR-90 (common practice: EIA standard inner dimensions)


def _regions(family, m, n):
    # closed form (common practice, e.g. Pozar, Microwave Engineering, sec. 3.3): TE H_z ~
    # cos(m pi x/a) cos(n pi y/b) has (m + 1)(n + 1) sign regions, TM E_z ~ sin sin has m n
    return (m + 1) * (n + 1) if family == "TE" else m * n


@pytest.mark.parametrize("accuracy", [1e-4, 1e-6, 1e-8])
def test_wr90_nodal_regions_do_not_change_with_accuracy(accuracy):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        ms = femodes.solve(femodes.rectangle(A, B), modes=8, accuracy=accuracy)
    te21 = ms.by_label("TE21")[0]
    assert te21.nodal_domains == 6
    for m in ms:
        assert m.nodal_domains == _regions(m.family, *m.indices), m.label


def test_rounded_rectangle_te11_has_four_regions():
    # a 2 mm corner radius keeps the sign pattern of cos(pi x/a) cos(pi y/b) (from memory: the
    # rounding perturbs kc by well under 1 %, not the pattern)
    ms = femodes.solve(femodes.rectangle(A, B, 2e-3), modes=6, accuracy=1e-6)
    assert ms.by_label("TE11")[0].nodal_domains == 4
    assert ms.by_label("TE10")[0].nodal_domains == 2


def _solve(section, modes, accuracy=1e-6):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return femodes.solve(section, modes=modes, accuracy=accuracy)


def test_rectangle_te_tm_identity():
    # TE_mn and TM_mn share kc = sqrt((m pi/a)^2 + (n pi/b)^2) (Pozar, sec. 3.3)
    ms = _solve(femodes.rectangle(A, B), 5)
    te, tm = ms.by_label("TE11")[0], ms.by_label("TM11")[0]
    kc = math.hypot(math.pi / A, math.pi / B)
    for m in (te, tm):
        assert abs(m.kc - kc) <= m.kc_error
        assert m.degeneracy == "TE/TM identity"
    assert ms.by_label("TE10")[0].degeneracy == ""
    assert ms.modes_asked == 5 and len(ms) == 5


def test_square_symmetry_pair_and_accidental_pair():
    # square: TE10 / TE01 forced by the 90-degree rotation (kc = pi / a, common practice)
    sq = _solve(femodes.rectangle(10e-3, 10e-3), 2)
    assert [m.degeneracy for m in sq] == ["symmetry", "symmetry"]
    for m in sq:
        assert abs(m.kc - math.pi / 10e-3) <= m.kc_error
    # 2:1 rectangle: TE20 and TE01 share kc = 2 pi / a = pi / b by accident of the aspect ratio,
    # no symmetry forces it: 'within error bar', and a count that cuts it is not completed
    ms = _solve(femodes.rectangle(20e-3, 10e-3), 3)
    pair = [m for m in ms if m.label in ("TE20", "TE01")]
    assert pair and all(m.degeneracy == "within error bar" for m in pair)
    assert len(ms) == 3
    for m in pair:
        assert abs(m.kc - math.pi / 10e-3) <= m.kc_error


def test_circle_pairs_and_te01_tm11_group_completed():
    # circle of radius R: TE11 kc = j'_11 / R (pair), TM01 j_01 / R, TE21 pair j'_21 / R, and
    # TE01 / TM11 pair at j'_01 = j_11 = 3.8317 / R (scipy.special; J_0' = -J_1).  Asking for 6
    # modes cuts that group of three: all three come back
    R = 5e-3
    ms = _solve(femodes.circle(R), 6)
    assert ms.modes_asked == 6 and len(ms) == 8
    assert ms[0].degeneracy == ms[1].degeneracy == "symmetry"
    top = ms[5:]
    assert sorted(m.label for m in top) == ["TE01", "TM11", "TM11"]
    kc = special.jn_zeros(1, 1)[0] / R
    for m in top:
        assert abs(m.kc - kc) <= m.kc_error
        assert "TE/TM identity" in m.degeneracy
    assert ms.by_label("TM01")[0].degeneracy == ""


def test_coax_te01_comes_with_tm11_and_reports_say_why():
    # centred coax 5 / 1.5 mm: the 9th mode is TE01, whose cutoff equation is that of TM11
    # (J_0' = -J_1, common practice): asked for 9, the set holds 11
    ms = _solve(femodes.coaxial(5e-3, 1.5e-3), 9)
    assert ms.modes_asked == 9 and len(ms) == 11
    assert sorted(m.label for m in ms[8:]) == ["TE01", "TM11", "TM11"]
    assert all("TE/TM identity" in m.degeneracy for m in ms[8:])
    text = "\n".join(_degenerate_text(m) for m in ms)
    assert "(TE/TM identity)" in text and "(symmetry)" in text

