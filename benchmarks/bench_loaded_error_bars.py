"""Survey: are the error bars of loaded-guide cutoffs honest?  (issue 11, "every number with an
honest error bar")

Guides: WR-90-like rectangles (a = 22.86 mm, b = 10.16 mm) layered along one axis, PEC walls: a
slab on the bottom wall (half, quarter and a thin tenth of the height), a slab on the side wall
(a quarter of the width, full height) and a centred full-height slab; eps_r from 1.5 to 10.
Truth: the LSE / LSM transverse-resonance cutoffs of femodes.reference.layered_guide_cutoffs
(Collin, Field Theory of Guided Waves, ch. 6; Pozar, Microwave Engineering, sec. 3.6 for the
partially filled guide), computed without finite elements.

Prints, for every case and mode, the true relative error of fc, the reported one, and their ratio;
then the distribution (median, 90 %, max) of true / reported, the count above the error bar and
above the asked accuracy, and the total solve time (wall and CPU: the machine may be shared).  Nothing here is a timed test.

    python benchmarks/bench_loaded_error_bars.py            # the full grid, a few minutes
    python benchmarks/bench_loaded_error_bars.py --quick    # a smaller grid
"""

from __future__ import annotations

import argparse
import time
import warnings

import numpy as np

import femodes as fm
from femodes import reference as ref

A, B = 22.86e-3, 10.16e-3


def cases(quick=False):
    """(name, section builder(eps), layers(eps), axis) of the layered guides."""
    def bottom(t):
        return (lambda e: fm.rectangle(A, B).with_material(fm.rectangle(A, t).translated(0, -B / 2 + t / 2), eps_r=e),
                lambda e: [(t, e, 1.0), (B - t, 1.0, 1.0)], "y")

    def side(w):
        return (lambda e: fm.rectangle(A, B).with_material(fm.rectangle(w, B).translated(-A / 2 + w / 2, 0), eps_r=e),
                lambda e: [(w, e, 1.0), (A - w, 1.0, 1.0)], "x")

    def centred(w):
        return (lambda e: fm.rectangle(A, B).with_material(fm.rectangle(w, B), eps_r=e),
                lambda e: ref.centred_slab_layers(A, w, e), "x")

    out = {"bottom half": bottom(B / 2), "bottom quarter": bottom(B / 4), "bottom thin": bottom(B / 10),
           "side quarter": side(A / 4), "centred third": centred(A / 3)}
    if quick:
        out = {k: out[k] for k in ("bottom half", "side quarter", "bottom thin")}
    return out


def run(quick=False, modes=4, eps_list=None, accuracies=None, verbose=True):
    eps_list = eps_list or ([1.5, 3.0, 6.0] if quick else [1.5, 2.2, 2.9, 3.0, 4.0, 6.0, 10.0])
    accuracies = accuracies or ([1e-4, 1e-6] if quick else [1e-4, 1e-5, 1e-6, 1e-7])
    ratios, rows, total, cpu = [], [], 0.0, 0.0
    for name, (make, layers, axis) in cases(quick).items():
        for e in eps_list:
            want = np.array([c.frequency for c in ref.layered_guide_cutoffs(A, B, layers(e), modes, axis=axis)])
            for acc in accuracies:
                t0, c0 = time.perf_counter(), time.process_time()
                with warnings.catch_warnings():
                    warnings.simplefilter("ignore")
                    got = fm.solve(make(e), modes=modes, accuracy=acc)
                dt = time.perf_counter() - t0
                total += dt
                cpu += time.process_time() - c0
                fc = np.array([m.fc for m in got])
                err = np.array([m.fc_error for m in got])
                n = min(len(fc), len(want))
                true = np.abs(fc[:n] - want[:n]) / want[:n]
                rep = err[:n] / fc[:n]
                r = true / rep
                ratios.extend(r)
                rows.append((name, e, acc, dt, true, rep))
                if verbose:
                    flag = " <-- BAR" if np.any(r > 1) else ""
                    flag += " <-- ACC" if np.any(true > acc) else ""
                    print(f"{name:15s} eps {e:5.2f} acc {acc:.0e} {dt:6.2f} s  true/rep "
                          + " ".join(f"{x:6.3f}" for x in r) + flag, flush=True)
    ratios = np.array(ratios)
    over_bar = int(np.sum(ratios > 1))
    over_acc = sum(int(np.sum(t > a)) for _, _, a, _, t, _ in rows)
    print(f"{len(ratios)} modes: true / reported median {np.median(ratios):.3g}, 90 % "
          f"{np.quantile(ratios, 0.9):.3g}, max {ratios.max():.3g}; above the error bar {over_bar}, "
          f"above the asked accuracy {over_acc}; solves {total:.1f} s wall, {cpu:.1f} s CPU")
    return ratios, rows, total


if __name__ == "__main__":
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true")
    ap.add_argument("--modes", type=int, default=4)
    args = ap.parse_args()
    run(args.quick, args.modes)
