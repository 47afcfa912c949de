"""Benchmark: the symmetry reduction (issue 12 item 2).

The bundled double-ridge example guide (examples/double_ridge_feed.toml: two mirror planes, so
four symmetry classes per family, each solved on the quarter section) is solved for 100 modes at
accuracy 1e-6 with the reduction (the default, ``symmetry=True``) and without it
(``symmetry=False``), interleaved in the same run, and the script prints the median times, their
ratio (target: at least 3x), the unknowns of each final mesh, and the largest cutoff difference
between the two runs measured in their combined error bars (it must stay below 1), with the
number of modes whose labels differ (exactly degenerate partners may come in either order: the
labels are compared within each degenerate group).

A loaded case follows: WR-90 with a centred slab of eps_r 2.5, 4 mm wide, standing wall to wall
(two mirror planes, materials included), 4 and 10 modes of largest beta at 24 GHz and 4 and 10
cutoffs, at accuracy 1e-8 (the loaded default reduces such a guide from 1e-8:
femodes.api.loaded_reduction_pays), solved with the four classes on the quarter in one accuracy
loop (``symmetry='always'``) and whole (``symmetry=False``), interleaved; printed per case: median
times, their ratio (target: at least 1.3x), the largest beta (or cutoff) difference in the
combined error bars (must stay below 1) and differing labels.

Speed targets are ratios measured in the same run; nothing here is a timed test.

    python benchmarks/bench_symmetry.py [modes] [accuracy] [repeats]
    python benchmarks/bench_symmetry.py loaded [modes,modes,...] [accuracy] [repeats]
"""

from __future__ import annotations

import statistics
import sys
import time
from pathlib import Path

import femodes
from femodes.case.build import load_case

EXAMPLE = Path(__file__).resolve().parent.parent / "examples" / "double_ridge_feed.toml"


def groups(ms):
    """Each mode's degenerate group as a sorted tuple of (label, symmetry) strings."""
    out = []
    for m in ms:
        members = sorted((m.index,) + tuple(m.degenerate_with))
        out.append(tuple(sorted(f"{ms[i].label} {sorted(ms[i].symmetry.items())}" for i in members
                                if i < len(ms))))
    return out


def loaded(counts=(4, 10), accuracy=1e-8, repeats=2, frequency=24e9, cutoffs=True, sym="always"):
    """The loaded case of the module docstring, for each mode count of ``counts`` at the
    frequency (and as cutoffs when ``cutoffs``)."""
    a, b = 22.86e-3, 10.16e-3
    section = femodes.rectangle(a, b).with_material(femodes.rectangle(4e-3, b), eps_r=2.5)
    print(f"slab-loaded WR-90 (centred slab eps_r 2.5, 4 mm, two mirror planes), accuracy {accuracy:g}, "
          f"{repeats} run(s) each, interleaved; whole (symmetry=False) vs reduced (symmetry={sym!r}: four "
          "classes on the quarter, one accuracy loop); the default symmetry=True reduces here: "
          f"{femodes.api.loaded_reduction_pays(section, max(counts), accuracy)}")
    cases = [(n, frequency) for n in counts] + ([(n, None) for n in counts] if cutoffs else [])
    for modes, f in cases:
        times = {sym: [], False: []}
        result = {}
        for _ in range(repeats):
            for s in (False, sym):
                t = time.perf_counter()
                result[s] = femodes.solve(section, modes, frequency=f, accuracy=accuracy, symmetry=s)
                times[s].append(time.perf_counter() - t)
        red, whole = result[sym], result[False]
        if f is not None:
            worst = max(abs(x.beta_value - y.beta_value) / (x.beta_error + y.beta_error) for x, y in zip(red, whole))
        else:
            worst = max(abs(x.fc - y.fc) / (x.fc_error + y.fc_error) for x, y in zip(red, whole))
        differ = sum(x.label != y.label for x, y in zip(red, whole))
        tr, tw = statistics.median(times[sym]), statistics.median(times[False])
        what = f"{modes:3d} modes at {f / 1e9:g} GHz" if f is not None else f"{modes:3d} cutoffs        "
        print(f"  {what}: whole {tw:6.2f} s, reduced {tr:6.2f} s, speed-up {tw / tr:.2f}x (target >= 1.3x); "
              f"max difference / (sum of the error bars) {worst:.3f} (must be <= 1); labels that differ: "
              f"{differ} of {len(red)}")


def main():
    if len(sys.argv) > 1 and sys.argv[1] == "loaded":
        args = sys.argv[2:]
        loaded(tuple(int(n) for n in args[0].split(",")) if args else (4, 10),
               float(args[1]) if len(args) > 1 else 1e-8, int(args[2]) if len(args) > 2 else 2)
        return
    modes = int(sys.argv[1]) if len(sys.argv) > 1 else 100
    accuracy = float(sys.argv[2]) if len(sys.argv) > 2 else 1e-6
    repeats = int(sys.argv[3]) if len(sys.argv) > 3 else 1
    section = load_case(EXAMPLE).section
    times = {True: [], False: []}
    result = {}
    for _ in range(repeats):
        for sym in (False, True):
            t = time.perf_counter()
            result[sym] = femodes.solve(section, modes, accuracy=accuracy, symmetry=sym)
            times[sym].append(time.perf_counter() - t)
    red, whole = result[True], result[False]
    worst = max(abs(a.fc - b.fc) / (a.fc_error + b.fc_error) for a, b in zip(red, whole))
    worst_rel = max(abs(a.fc - b.fc) / b.fc for a, b in zip(red, whole))
    ga, gb = groups(red), groups(whole)
    differ = sum(a != b for a, b in zip(ga, gb))
    tr, tw = statistics.median(times[True]), statistics.median(times[False])
    print(f"double ridge (examples/double_ridge_feed.toml), {modes} modes at accuracy {accuracy:g}, "
          f"{repeats} run(s) each, interleaved")
    print(f"  symmetry=False: {tw:7.2f} s, {whole.n_dofs} unknowns")
    print(f"  symmetry=True : {tr:7.2f} s, {red.n_dofs} unknowns on the unfolded mesh "
          f"({red.n_dofs / 4:.0f} per quarter)")
    print(f"  speed-up {tw / tr:.2f}x (target >= 3x)")
    print(f"  max |fc difference| / (sum of the two error bars): {worst:.3f} (must be <= 1); "
          f"max relative difference {worst_rel:.2e}")
    print(f"  modes whose degenerate group's labels differ: {differ} of {len(red)}")
    loaded()


if __name__ == "__main__":
    main()
