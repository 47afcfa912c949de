"""A solver that knows when to stop (issue 11 item 3): the round-off plateau, the memory budget
before a large solve, and progress lines on a terminal only."""

import io
import math
import warnings

import pytest

import femodes
from femodes.reference.guides import rectangle_modes
from femodes.solvers import backends, budget, scalar

A, B = 22.86e-3, 10.16e-3  # WR-90 (common practice: EIA standard inner dimensions)


def test_roundoff_plateau_stops_with_one_warning_and_honest_error_bars():
    # accuracy 1e-11 with 20 modes is below the double-precision floor (~N eps) of the meshes it
    # would need: before the plateau stop the loop went on to 427k unknowns (> 5 min); now it stops
    # at the best step.  Truth: kc = sqrt((m pi/a)^2 + (n pi/b)^2) (Pozar, Microwave Engineering,
    # 4th ed., sec. 3.3).
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        ms = femodes.solve(femodes.rectangle(A, B), modes=20, accuracy=1e-11)
    mine = [w for w in caught if "femodes" in str(w.message)]
    assert len(mine) == 1, [str(w.message) for w in mine]
    text = str(mine[0].message)
    assert "round-off" in text and "estimated" in text and "ask for accuracy" in text
    assert ms.n_dofs < 100_000
    ref = sorted(r.kc for r in rectangle_modes(A, B, len(ms) + 4))
    for m, kc in zip(sorted(ms, key=lambda m: m.kc), ref):
        assert abs(m.kc - kc) <= m.kc_error, (m.label, m.kc, kc, m.kc_error)
        assert m.rel_error < 1e-9


def test_huge_request_refused_at_once_with_what_to_change(monkeypatch):
    # a machine with 200 MB free cannot hold 1e-11 on 300 modes (millions of unknowns at about
    # 5 kB each, measured): refused before any mesh is made
    monkeypatch.setattr(scalar, "available_memory", lambda: 200e6)
    with pytest.raises(femodes.FemodesError) as exc:
        femodes.solve(femodes.rectangle(A, B), modes=300, accuracy=1e-11)
    text = str(exc.value)
    assert "unknowns" in text and "GB" in text and "available" in text
    assert "looser accuracy" in text and "fewer modes" in text


def test_budget_model_is_conservative_for_a_small_solve():
    # the prediction the refusal uses, against a mesh actually made: unknowns of the order-4 mesh
    # of WR-90 at h = a / 12 within a factor 1.5 of the model (measured 21.6 per area / h^2)
    h = A / 12
    ms = femodes.solve(femodes.rectangle(A, B), modes=3, mesh_size=h)
    pred = scalar._predicted_dofs(A * B, h, 4)
    assert pred / 1.5 < ms.n_dofs < 1.5 * pred
    assert budget.predicted_memory(1e5) > 1e8  # a few kB per unknown


def test_budget_uses_the_backends_measured_costs():
    # the refusal's memory is the top of the measured band of the backend that would factorise:
    # SuperLU's fill is larger than the sparse Cholesky's (benchmarks/bench_backend.py)
    with backends.use("superlu"):
        lu = budget.predicted_memory(1e6)
        assert lu == backends.predicted_cost(1e6, "superlu")[1][1]
        n = budget.fitting_unknowns(lu)
        assert 0.99e6 < n <= 1e6 * 1.001 and budget.predicted_memory(n) <= lu
    if "cholespy" in backends.available():
        with backends.use("cholespy"):
            assert budget.predicted_memory(1e6) < lu


class _Terminal(io.StringIO):
    def isatty(self):
        return True


def test_progress_on_a_terminal_only(monkeypatch):
    monkeypatch.setattr(budget.sys, "stderr", io.StringIO())  # a pipe: nothing extra
    p = budget.Progress(after=0.0)
    p.step(2, 12345, 3.1e-7, 1e-8)
    p.next_mesh(50000)
    assert budget.sys.stderr.getvalue() == ""
    tty = _Terminal()
    monkeypatch.setattr(budget.sys, "stderr", tty)
    p.step(2, 12345, 3.1e-7, 1e-8)
    out = tty.getvalue()
    assert "step 2" in out and "12345 unknowns" in out and "3.1e-07" in out and " s" in out


def test_solve_writes_nothing_to_a_pipe(monkeypatch, capsys):
    ms = femodes.solve(femodes.rectangle(A, B), modes=4, accuracy=1e-8)
    assert capsys.readouterr().err == ""
    assert math.isfinite(ms[0].kc)
