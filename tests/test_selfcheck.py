"""The self-check (femodes.selfcheck, ``femodes selfcheck``): the fast set run once, every value
within femodes' error bar and the asked accuracy, and the command's output and exit status.

The references the self-check compares with are its own (femodes.reference: closed forms,
scipy.special roots, published L-shape eigenvalues); here a few of them are also checked against
numbers from outside: the TE10 cutoff of WR-90 c / (2a) = 6.557140 GHz (Pozar, Microwave
Engineering, sec. 3.3, from memory), the 50.80 ohm of an air line of diameters 3 and 7 mm
(60 ln(7/3) ohm, common practice), and the L-shape's first Dirichlet eigenvalue 9.6397238440219
(Fox, Henrici & Moler 1967; Trefethen & Betcke 2006).
"""

import json
import math

import pytest
from scipy import optimize, special

import femodes
from femodes.cli import main
from femodes.errors import FemodesError
from femodes.report import selfcheck_document, selfcheck_table
from femodes.studies.verify import CheckCase, CheckRow, SelfCheck, case_names

C0 = 299792458.0


@pytest.fixture(scope="module")
def fast():
    return femodes.selfcheck()


def test_fast_set_passes_with_error_bars_that_bound_the_truth(fast):
    rows = fast.rows
    assert len(rows) >= 35
    assert {c.name for c in fast.cases} == set(case_names())
    for c in fast.cases:
        assert c.source and c.rows, c.name
        for r in c.rows:
            assert r.passed, (c.name, r)
            assert r.true_error <= r.reported_error + r.reference_uncertainty
            assert r.true_error <= r.accuracy + r.reference_uncertainty
    assert fast.passed and not fast.failures
    assert fast.max_ratio < 1.0


def test_fast_set_compares_with_the_outside_numbers(fast):
    by_case = {c.name: c for c in fast.cases}
    te10 = by_case["rectangle"].rows[0]
    assert te10.quantity == "kc TE10"
    assert C0 * te10.reference / (2 * math.pi) == pytest.approx(6.557140e9, rel=1e-6)  # Pozar sec. 3.3
    z0 = by_case["coax"].rows[0]
    assert z0.quantity == "Z0 TEM"
    assert z0.reference == pytest.approx(60 * math.log(7 / 3), rel=1e-3)  # 60 ln(b/a), common practice
    tm1 = next(r for r in by_case["l-shape"].rows if r.quantity == "kc TM1")
    assert (tm1.reference * 5e-3) ** 2 == pytest.approx(9.6397238440219, rel=1e-13)  # Trefethen & Betcke
    # the sector's angle is not pi / k: its first TE mode is the zero of J'_nu, nu = 4/3 (scipy.special)
    nu = 4.0 / 3.0
    x = optimize.brentq(lambda x: special.jvp(nu, x), 1.0, 3.0)
    assert by_case["sector-135"].rows[0].reference * 10e-3 == pytest.approx(x, rel=1e-12)


def test_table_and_json_of_the_fast_set(fast):
    text = selfcheck_table(fast)
    for name in case_names():
        assert name in text
    assert text.rstrip().splitlines()[-1].startswith(f"PASS: all {len(fast.rows)} values")
    details = selfcheck_table(fast, details=True)
    assert "reference: Z0 = eta0 ln(b/a)" in details and "kc TM1" in details
    doc = json.loads(json.dumps(selfcheck_document(fast), allow_nan=False))
    assert doc["passed"] is True and doc["values"] == len(fast.rows)
    assert all(r["true_error"] <= r["reported_error"] for c in doc["cases"] for r in c["rows"])


def test_command_filters_cases_and_exits_0(capsys):
    assert main(["selfcheck", "--case", "triangle"]) == 0
    out = capsys.readouterr().out
    assert "triangle" in out and "rectangle" not in out and "PASS" in out
    assert main(["selfcheck", "--case", "rectangle", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert [c["name"] for c in doc["cases"]] == ["rectangle"]


def test_command_exits_1_when_a_value_fails(capsys, monkeypatch):
    bad = CheckRow("kc TE10", 1.0, 1.1, 0.1, 1e-6, 0.0, 1e-6)  # true error far above its error bar
    good = CheckRow("kc TE20", 2.0, 2.0, 0.0, 1e-6, 0.0, 1e-6)
    fake = SelfCheck((CheckCase("rectangle", "t", "s", 1e-6, (good, bad), 0.1),), False, 0.1)
    monkeypatch.setattr("femodes.cli.selfcheck", lambda thorough=False, cases=None: fake)
    assert main(["selfcheck"]) == 1
    out = capsys.readouterr().out
    assert "FAIL: 1 of 2 values" in out and "rectangle kc TE10" in out
    assert fake.failures == (("rectangle", bad),) and not fake.passed


def test_unknown_case_is_one_line_and_exit_2(capsys):
    assert main(["selfcheck", "--case", "hexagon"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "no self-check case named 'hexagon'" in err[0] and "rectangle" in err[0]
    with pytest.raises(FemodesError, match="--thorough"):
        femodes.selfcheck(cases="sector-270")  # in the thorough set only
