"""Labels that do not depend on the mesh (issue 11 item 4): nodal regions and degeneracy kinds."""

import warnings

import pytest

import femodes

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
