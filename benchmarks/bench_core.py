"""Benchmark: femodes defaults against a plain baseline, measured in one run on this machine.

Prints time and relative error of
  * the L-shaped region of three unit squares, TM1 and TE1 (reference values: Fox, Henrici &
    Moler 1967 / Trefethen & Betcke 2006 for the Dirichlet one; Dauge's Maxwell eigenvalue benchmark
    for the Neumann one),
  * the first 10 cutoffs of WR-90 (closed form, femodes.reference.rectangle_modes),
  * a double-ridge guide (no closed form: reference = femodes at accuracy 1e-10, a self-convergence
    check, marked as such),
for femodes (``solve(..., accuracy=...)``) and for a plain baseline: a uniform mesh, first-order
elements, the same shift-invert eigensolver, no error control.  Then the ratio of times at equal
accuracy: the baseline is run on finer and finer meshes until a 10 s budget is used; femodes is
asked for the best accuracy the baseline reached.

Speed targets are ratios measured in the same process (shared machines are noisy); nothing here
is a timed test.

    python benchmarks/bench_core.py            # about a minute
    python benchmarks/bench_core.py --big      # also a ~1 million unknown solve and its peak memory
"""

from __future__ import annotations

import argparse
import math
import resource
import sys
import time
import warnings

import numpy as np

import femodes as fm
from femodes import reference as ref
from femodes.geometry.mesh import mesh_section
from femodes.solvers.discretise import discretise
from femodes.solvers.eigen import lowest_eigenpairs, restrict, single_thread

L_VERTS = [(-1, -1), (0, -1), (0, 0), (1, 0), (1, 1), (-1, 1)]
L_TM1 = 9.6397238440219
L_TE1 = 1.47562182408


def baseline(section, h, family_counts):
    """Uniform mesh, P1 elements, shift-invert Lanczos: the plain way. Returns (kc^2 per family, N)."""
    mesh = mesh_section(section, h, order=1, curved=False, graded=False)
    d = discretise(mesh.to_skfem(), 1)
    out = {}
    A = section.area
    with single_thread():
        for fam, k in family_counts.items():
            if fam == "TM":
                I = d.interior()
                lam, _, _ = lowest_eigenpairs(restrict(d.K, I), restrict(d.M, I), k, 0.9 * math.pi * 2.4048 ** 2 / A)
            else:
                lam, _, _ = lowest_eigenpairs(d.K, d.M, k + 1, -0.1 * math.pi * 2.4048 ** 2 / A)
                lam = np.sort(lam)[1:]
            out[fam] = lam
    return out, d.n_dofs


def timed(fn, *a, **k):
    t = time.perf_counter()
    r = fn(*a, **k)
    return r, time.perf_counter() - t


def best(values, n):
    return np.sort(np.concatenate(list(values)))[:n]


def row(name, t, err, extra=""):
    print(f"  {name:34s} {t:8.3f} s   rel. error {err:9.2e}  {extra}")


def run_baseline_budget(section, exact, counts, n, budget=10.0, h0=None):
    """Refine a uniform P1 mesh until one solve takes longer than ``budget``; best error and its time."""
    h = h0 or section.size / 8
    best_err, best_t, best_n = math.inf, 0.0, 0
    while True:
        (lam, N), t = timed(baseline, section, h, counts)
        kc = np.sqrt(best(lam.values(), n))
        err = float(np.max(np.abs(kc - exact) / exact))
        if t > budget:
            break
        best_err, best_t, best_n = err, t, N
        h /= math.sqrt(2)
    return best_err, best_t, best_n


def femodes_case(section, exact, n, accuracy, family=None):
    ms, t = timed(fm.solve, section, modes=n, accuracy=accuracy, family=family)
    kc = np.array([m.kc for m in ms])
    err = float(np.max(np.abs(kc - exact) / exact))
    est = max(m.rel_error for m in ms)
    return t, err, est, ms.n_dofs


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--budget", type=float, default=10.0, help="baseline time budget per case (s)")
    p.add_argument("--big", action="store_true", help="also solve about a million unknowns")
    args = p.parse_args(argv)
    warnings.simplefilter("ignore")
    fm.solve(fm.rectangle(1, 1), modes=1)  # warm-up: imports and first-call costs

    L = fm.polygon(L_VERTS)
    wr90 = fm.rectangle(22.86e-3, 10.16e-3)
    ridge = fm.double_ridge(40e-3, 20e-3, 10e-3, 4e-3)
    wr_exact = np.array([r.kc for r in ref.rectangle_modes(22.86e-3, 10.16e-3, 10)])
    print("femodes", fm.__version__, "core benchmark (times include meshing; one BLAS thread)")
    print()
    print("1. femodes at accuracy=1e-9 (targets: L-shape TM1, TE1 and WR-90 x10 each <= 1e-9 within 0.5 s)")
    cases = [
        ("L-shape TM1", L, np.array([math.sqrt(L_TM1)]), 1, "TM"),
        ("L-shape TE1", L, np.array([math.sqrt(L_TE1)]), 1, "TE"),
        ("WR-90 first 10 cutoffs", wr90, wr_exact, 10, None),
    ]
    for name, sec, exact, n, fam in cases:
        t, err, est, N = femodes_case(sec, exact, n, 1e-9, fam)
        row(name, t, err, f"estimate {est:.1e}, {N} unknowns")
    ridge_ref = np.array([m.kc for m in fm.solve(ridge, modes=6, accuracy=1e-10)])
    t, err, est, N = femodes_case(ridge, ridge_ref, 6, 1e-9)
    row("double ridge, first 6 (self-ref.)", t, err, f"estimate {est:.1e}, {N} unknowns")

    print()
    print(f"2. plain baseline (uniform mesh, P1, same eigensolver) within a {args.budget:g} s budget,")
    print("   then femodes asked for the accuracy the baseline reached (target: >= 100x faster)")
    budget_cases = [
        ("L-shape TM1", L, np.array([math.sqrt(L_TM1)]), {"TM": 1}, 1, "TM"),
        ("L-shape TE1", L, np.array([math.sqrt(L_TE1)]), {"TE": 1}, 1, "TE"),
        ("WR-90 first 10", wr90, wr_exact, {"TE": 10, "TM": 10}, 10, None),
        ("double ridge first 6", ridge, ridge_ref, {"TE": 6, "TM": 6}, 6, None),
    ]
    for name, sec, exact, counts, n, fam in budget_cases:
        b_err, b_t, b_n = run_baseline_budget(sec, exact, counts, n, args.budget)
        acc = max(b_err, 1e-11)
        t, err, est, N = femodes_case(sec, exact, n, acc, fam)
        row(name + " baseline", b_t, b_err, f"{b_n} unknowns")
        row(name + " femodes", t, err, f"{N} unknowns;  time ratio {b_t / t:7.1f}x")

    print()
    print("3. element order: time to the same accuracy (why order 4 is the default)")
    for name, sec, exact, n, fam, acc in (("WR-90 first 10", wr90, wr_exact, 10, None, 1e-7),
                                          ("L-shape TM1", L, np.array([math.sqrt(L_TM1)]), 1, "TM", 1e-7)):
        for order in (2, 3, 4):
            ms, t = timed(fm.solve, sec, modes=n, accuracy=acc, family=fam, order=order)
            kc = np.array([m.kc for m in ms])
            err = float(np.max(np.abs(kc - exact) / exact))
            row(f"{name}, P{order}, accuracy {acc:g}", t, err, f"{ms.n_dofs} unknowns")

    if args.big:
        print()
        print("4. about a million unknowns (target: within 24 GB)")
        (ms, t) = timed(fm.solve, wr90, modes=10, mesh_size=6.5e-5, order=4)
        rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024 ** 2  # kB -> GB on Linux
        print(f"  WR-90, {ms.n_dofs} unknowns (fine mesh): {t:.1f} s, peak resident memory {rss:.2f} GB")
    return 0


if __name__ == "__main__":
    sys.exit(main())
