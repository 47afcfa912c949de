"""Sweeps: cutoffs over a grid of parameters against the rectangle's closed form (Pozar, Microwave
Engineering, 4th ed., sec. 3.3: fc_mn = (c / 2) sqrt((m / a)^2 + (n / b)^2)); a resumed or
interrupted sweep equals an uninterrupted one; local processes and a dask cluster give the same
numbers as one process; bad input gets one clear message."""

import json
import math
import subprocess
import sys

import numpy as np
import pytest

import femodes as fm
import femodes.studies.sweeps as S
from femodes import FemodesError

C0 = 299792458.0
WIDTHS = [20e-3, 22.86e-3, 25e-3]
HEIGHTS = [9e-3, 10.16e-3]


def _rect_fc(a, b, count):
    fcs = sorted(C0 / 2 * math.hypot(m / a, n / b) for m in range(6) for n in range(6) if m + n > 0)
    return np.array(fcs[:count])


def _agree(ds, other):
    """Two runs of the same points agree within their error bars (a point may start its
    accuracy loop from a different neighbour's mesh, so the last digits may differ), and the
    points both computed from the same start are equal."""
    diff = np.abs(ds.fc.values - other.fc.values)
    assert np.all(diff <= ds.fc_error.values + other.fc_error.values)
    assert list(ds.label.values.ravel()) == list(other.label.values.ravel())


def test_grid_sweep_against_the_closed_form():
    r = fm.sweep(fm.rectangle, {}, {"width": WIDTHS, "height": HEIGHTS}, modes=3, accuracy=1e-6, workers=1)
    ds = r.to_xarray()
    assert ds.fc.dims == ("width", "height", "mode") and list(ds["mode"].values) == [1, 2, 3]
    assert ds.attrs["computed"] == 6 and ds.attrs["reused"] == 0
    for i, a in enumerate(WIDTHS):
        for j, b in enumerate(HEIGHTS):
            want = _rect_fc(a, b, 3)
            got, err = ds.fc.values[i, j], ds.fc_error.values[i, j]
            assert np.all(np.abs(got - want) <= err) and np.all(err <= 1e-6 * want)
            # the single-mode band: TE10 to the next cutoff (Pozar sec. 3.3)
            assert ds.f_low.values[i, j] == pytest.approx(want[0], rel=1e-6)
            assert ds.f_high.values[i, j] == pytest.approx(want[1], rel=1e-6)
    assert ds.label.values[1, 1, 0] == "TE10" and set(ds.status.values.ravel()) == {"ok"}


def test_resumed_sweep_equals_an_uninterrupted_one(tmp_path):
    store = tmp_path / "sweep.db"
    whole = fm.sweep(fm.rectangle, {"height": 10.16e-3}, {"width": WIDTHS}, modes=2, accuracy=1e-5, workers=1)
    first = fm.sweep(fm.rectangle, {"height": 10.16e-3}, {"width": WIDTHS[:2]}, modes=2, accuracy=1e-5,
                     store=store, workers=1)
    assert (first.reused, first.computed) == (0, 2)
    again = fm.sweep(fm.rectangle, {"height": 10.16e-3}, {"width": WIDTHS}, modes=2, accuracy=1e-5,
                     store=store, workers=1)
    assert (again.reused, again.computed) == (2, 1)
    _agree(again.to_xarray(), whole.to_xarray())


def test_interrupted_sweep_keeps_the_finished_points(tmp_path, monkeypatch):
    store = tmp_path / "sweep.db"
    real = S.solve_point
    calls = []

    def interrupted(*args, **kw):
        if len(calls) == 2:
            raise KeyboardInterrupt  # Ctrl-C while the third point is solved
        calls.append(args)
        return real(*args, **kw)

    monkeypatch.setattr(S, "solve_point", interrupted)
    with pytest.raises(KeyboardInterrupt):
        fm.sweep(fm.rectangle, {"height": 10.16e-3}, {"width": WIDTHS}, modes=2, accuracy=1e-5, store=store,
                 workers=1)
    monkeypatch.setattr(S, "solve_point", real)
    resumed = fm.sweep(fm.rectangle, {"height": 10.16e-3}, {"width": WIDTHS}, modes=2, accuracy=1e-5, store=store,
                       workers=1)
    assert (resumed.reused, resumed.computed) == (2, 1)
    for a, got in zip(WIDTHS, resumed.to_xarray().fc.values):
        assert np.all(np.abs(got - _rect_fc(a, 10.16e-3, 2)) <= 1e-5 * got)


def test_store_with_other_settings_or_not_a_store_is_refused(tmp_path):
    store = tmp_path / "sweep.db"
    fm.sweep(fm.rectangle, {"height": 10.16e-3}, {"width": WIDTHS[:1]}, modes=2, accuracy=1e-5, store=store,
             workers=1)
    with pytest.raises(FemodesError, match="other settings.*accuracy"):
        fm.sweep(fm.rectangle, {"height": 10.16e-3}, {"width": WIDTHS[:1]}, modes=2, accuracy=1e-4, store=store,
                 workers=1)
    junk = tmp_path / "notes.txt"
    junk.write_text("not a database\n" * 100)
    with pytest.raises(FemodesError, match="not a femodes sweep store"):
        fm.sweep(fm.rectangle, {"height": 10.16e-3}, {"width": WIDTHS[:1]}, modes=2, store=junk, workers=1)


def test_invalid_point_is_recorded_and_the_sweep_goes_on():
    # a ridge gap larger than the height is refused by the shape: that point is recorded invalid
    r = fm.sweep(fm.double_ridge, {"width": 34e-3, "height": 16e-3, "ridge_width": 8e-3},
                 {"gap": [2e-3, 20e-3]}, modes=2, accuracy=1e-4, workers=1)
    ds = r.to_xarray()
    assert list(ds.status.values) == ["ok", "invalid"]
    assert "gap" in ds.message.values[1] and np.all(np.isnan(ds.fc.values[1]))
    assert np.all(np.isfinite(ds.fc.values[0]))


def test_local_processes_and_a_dask_cluster_give_the_same_numbers():
    distributed = pytest.importorskip("distributed")
    kw = dict(modes=2, accuracy=1e-5)
    one = fm.sweep(fm.rectangle, {"height": 10.16e-3}, {"width": WIDTHS}, workers=1, **kw).to_xarray()
    two = fm.sweep(fm.rectangle, {"height": 10.16e-3}, {"width": WIDTHS}, workers=2, **kw).to_xarray()
    _agree(two, one)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None) as cl:
        with distributed.Client(cl) as client:
            far = fm.sweep(fm.rectangle, {"height": 10.16e-3}, {"width": WIDTHS}, scheduler=client, **kw).to_xarray()
    _agree(far, one)
    assert list(far.label.values[:, 0]) == ["TE10"] * 3


def test_a_script_without_a_main_guard_is_told_what_to_fix(tmp_path):
    """Worker processes are spawned and import the calling script (Python's multiprocessing,
    common practice): a script that sweeps on two workers at its top level gets one message saying
    to guard it or give workers=1, not a broken-pool traceback."""
    script = tmp_path / "unguarded.py"
    script.write_text("import femodes as fm\n"
                      "fm.sweep(fm.rectangle, {'height': 10e-3}, {'width': [20e-3, 21e-3, 22e-3]}, modes=1,\n"
                      "         accuracy=1e-4, workers=2, progress=False)\n")
    run = subprocess.run([sys.executable, str(script)], capture_output=True, text=True, timeout=120)
    assert run.returncode != 0
    last = run.stderr.strip().splitlines()[-1]
    assert last.startswith("femodes.errors.FemodesError") and 'if __name__ == "__main__":' in last
    assert "workers=1" in last


@pytest.mark.parametrize("args, words", [
    (({}, {"wdth": [1e-2]}), ["no parameter 'wdth'", "width"]),
    (({"height": 1e-2}, {"width": []}), ["empty"]),
    (({"width": 2e-2}, {"width": [1e-2]}), ["both fixed", "varied"]),
    (({"height": 1e-2}, {"width": [1e-2, "x"]}), ["number"]),
    (({"height": 1e-2}, {}), ["at least one parameter"]),
])
def test_bad_input_says_what_to_fix(args, words):
    with pytest.raises(FemodesError) as exc:
        fm.sweep(fm.rectangle, *args, modes=2, workers=1)
    for w in words:
        assert w in str(exc.value), (w, str(exc.value))


def test_a_shape_made_on_the_fly_is_refused():
    with pytest.raises(FemodesError, match="module level"):
        fm.sweep(lambda width, height: fm.rectangle(width, height), {"height": 1e-2}, {"width": [2e-2]}, workers=1)
    assert json.loads(fm.sweep(fm.rectangle, {"height": 1e-2}, {"width": [2e-2]}, modes=1, accuracy=1e-4,
                               workers=1).to_xarray().attrs["parameters"]) == {"height": 1e-2}


def test_sweep_files_round_trip(tmp_path):
    import csv

    import xarray as xr

    r = fm.sweep(fm.rectangle, {"height": 10.16e-3}, {"width": WIDTHS[:2]}, modes=2, accuracy=1e-5, workers=1)
    ds = r.to_xarray()
    back = xr.open_dataset(r.to_netcdf(tmp_path / "s.nc"), engine="scipy")
    np.testing.assert_array_equal(back.fc.values, ds.fc.values)
    assert list(back.label.values[:, 0]) == ["TE10", "TE10"]
    back.close()
    rows = list(csv.DictReader(open(r.to_csv(tmp_path / "s.csv"), encoding="utf-8")))
    assert len(rows) == 4 and rows[0]["label"] == "TE10" and rows[0]["mode"] == "1"
    assert float(rows[0]["fc_Hz"]) == ds.fc.values[0, 0] and float(rows[0]["width"]) == WIDTHS[0]
    assert not list(tmp_path.glob(".*.part-*"))  # written whole, then moved into place


def test_design_figures_are_written(tmp_path):
    from femodes.report import figures as F

    one = fm.sweep(fm.rectangle, {"height": 10.16e-3}, {"width": WIDTHS}, modes=2, accuracy=1e-4, workers=1)
    path = tmp_path / "curves.png"
    F.design_curves(one, path, spec_band=(8e9, 12e9), target=7e9)
    assert path.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    two = fm.sweep(fm.rectangle, {}, {"width": WIDTHS[:2], "height": HEIGHTS}, modes=2, accuracy=1e-4, workers=1)
    F.design_map(two, tmp_path / "map.svg", quantity="ratio")
    assert (tmp_path / "map.svg").read_text().lstrip().startswith("<?xml")
    with pytest.raises(FemodesError, match="two-parameter"):
        F.design_map(one)
    with pytest.raises(FemodesError, match="one-parameter"):
        F.design_curves(two)


# ----------------------------------------------------------------------------- the command line

SWEEP_CASE = """title = "WR-90-like width sweep"
[guide]
shape = "rectangle"
width = 22.86
height = 10.16
[solve]
modes = 2
accuracy = 1e-5
[sweep]
width = [20.0, 22.86, 25.0]
workers = 1
"""


def _run(capsys, *argv):
    from femodes.cli import main

    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def test_sweep_command_against_the_closed_form(tmp_path, capsys):
    case = tmp_path / "w.toml"
    case.write_text(SWEEP_CASE, encoding="utf-8")
    code, out, err = _run(capsys, "sweep", str(case), "--json", "--store", str(tmp_path / "w.db"),
                          "--csv", str(tmp_path / "w.csv"))
    assert code == 0, err
    doc = json.loads(out)
    assert doc["computed"] == 3 and doc["varied"][0]["case_key"] == "width"
    for p in doc["points"]:
        a = p["parameters"]["width"]
        want = _rect_fc(a, 10.16e-3, 2)  # Pozar sec. 3.3
        got = np.array([m["fc"] for m in p["modes"]])
        assert np.all(np.abs(got - want) <= np.array([m["fc_error"] for m in p["modes"]]) + 0 * got)
        assert p["single_mode_band"]["f_low"] == pytest.approx(want[0], rel=1e-5)
    code, out, err = _run(capsys, "sweep", str(case), "--store", str(tmp_path / "w.db"))
    assert code == 0 and "3 points: 3 from the store, 0 computed" in out and "fc1 [GHz]" in out


@pytest.mark.parametrize("table, words", [
    ("[sweep]\nwidht = [20.0]\n", ["unknown key 'widht'", "width"]),
    ("[sweep]\nwidth = []\n", ["non-empty list"]),
    ("[sweep]\nwidth = { from = 20, to = 20, points = 3 }\n", ["must differ"]),
    ("[sweep]\nworkers = 2\n", ["names no parameter"]),
])
def test_bad_sweep_table_says_what_to_fix(tmp_path, capsys, table, words):
    case = tmp_path / "w.toml"
    case.write_text(SWEEP_CASE.split("[sweep]")[0] + table, encoding="utf-8")
    code, out, err = _run(capsys, "sweep", str(case))
    assert code == 2 and len(err.strip().splitlines()) == 1
    for w in words:
        assert w in err, (w, err)


def test_sweep_command_without_a_sweep_table(tmp_path, capsys):
    case = tmp_path / "w.toml"
    case.write_text(SWEEP_CASE.split("[sweep]")[0], encoding="utf-8")
    code, out, err = _run(capsys, "sweep", str(case))
    assert code == 2 and "no [sweep] table" in err


def _rect_te_tm(a, b, count):
    """TE_mn (m + n > 0) and TM_mn (m, n >= 1) cutoffs of an a x b rectangle, both families
    (Pozar sec. 3.3)."""
    fcs = [C0 / 2 * math.hypot(m / a, n / b) * k for m in range(6) for n in range(6)
           for k in ((1, 1) if m and n else (1,) if m + n else ())]
    return np.array(sorted(fcs)[:count])


def _circle_fc(r, count):
    """Cutoffs of a circular guide of radius r: TE_nm at j'_nm c / (2 pi r), TM_nm at
    j_nm c / (2 pi r), each n >= 1 twice (cos / sin) (Pozar sec. 3.4; zeros from scipy.special)."""
    from scipy.special import jn_zeros, jnp_zeros

    fcs = []
    for n in range(8):
        for x in list(jnp_zeros(n, 4)) + list(jn_zeros(n, 4)):
            fcs += [C0 * x / (2 * math.pi * r)] * (1 if n == 0 else 2)
    return np.array(sorted(fcs)[:count])


@pytest.mark.parametrize("shape, fixed, name, values, exact", [
    # rectangle width (Pozar sec. 3.3), straight meshes: the rate is certain
    (fm.rectangle, {"height": 10e-3}, "width", [21e-3, 21.5e-3, 22e-3, 22.5e-3, 23e-3],
     lambda a, k: _rect_te_tm(a, 10e-3, k)),
    # circle radius (Pozar sec. 3.4), curved meshes: the error estimate uses the observed rates
    (fm.circle, {}, "radius", [5e-3, 5.2e-3, 5.4e-3, 5.6e-3], lambda r, k: _circle_fc(r, k)),
])
def test_every_sweep_point_bounds_its_error(shape, fixed, name, values, exact):
    """Sweep points start from the size their neighbour suggests (studies.sweeps.next_size):
    every point's fc_error must still bound the true error and meet the asked accuracy, and a
    sweep point agree with an independent solve of the same guide within the two error bars."""
    acc = 1e-6
    r = fm.sweep(shape, fixed, {name: values}, modes=6, accuracy=acc, workers=1, progress=False)
    ds = r.to_xarray()
    for i, v in enumerate(values):
        # a point returns more than the count where that completes a degenerate group
        got, err = ds.fc.values[i], ds.fc_error.values[i]
        got, err = got[np.isfinite(got)], err[np.isfinite(got)]
        assert len(got) >= 6
        want = exact(v, len(got))
        assert np.all(np.abs(got - want) <= err), (v, np.abs(got - want) / err)
        assert np.all(err <= acc * want) and np.all(np.abs(got - want) <= acc * want)
    # the last point started from its neighbour's suggestion: against an independent solve
    ms = fm.solve(shape(**fixed, **{name: values[-1]}), modes=6, accuracy=acc)
    ind, ind_err = np.array([m.fc for m in ms]), np.array([m.fc_error for m in ms])
    k = min(len(ind), np.count_nonzero(np.isfinite(ds.fc.values[-1])))
    assert np.all(np.abs(ds.fc.values[-1][:k] - ind[:k]) <= ds.fc_error.values[-1][:k] + ind_err[:k])
