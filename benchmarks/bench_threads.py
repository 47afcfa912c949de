"""Benchmark: the thread policy.  femodes holds BLAS to one thread while it solves; is that right?

Runs the bundled double-ridge example's solve (8 modes at 1e-6, labels included) and a 40-mode
solve of the same guide, each with BLAS held to one thread (the policy) and with BLAS free to
use every core (the policy switched off for the run), interleaved so that a busy spell of the
shared machine hits both, and prints the median times and their ratio.  Run it on an idle
machine and on a busy one (e.g. while the test suite runs): the policy should win, or tie, on
both.

Speed targets are ratios measured in the same run; nothing here is a timed test.

    python benchmarks/bench_threads.py
"""

from __future__ import annotations

import contextlib
import os
import statistics
import time

import threadpoolctl

import femodes
import femodes.solvers.eigen as E


@contextlib.contextmanager
def policy(on):
    """BLAS at one thread inside femodes' solves (on), or at every core throughout (off)."""
    if on:
        yield
        return
    keep = E.threadpool_limits
    E.threadpool_limits = lambda limits: contextlib.nullcontext()
    try:
        with threadpoolctl.threadpool_limits(limits=os.cpu_count()):
            yield
    finally:
        E.threadpool_limits = keep


def run():
    sec = femodes.double_ridge(width=34e-3, height=16e-3, ridge_width=8e-3, gap=1.5e-3,
                               ridge_corner_radius=0.2e-3, base_radius=0.5e-3)
    cases = [("example, 8 modes at 1e-6", dict(modes=8, accuracy=1e-6)),
             ("40 modes at 1e-6", dict(modes=40, accuracy=1e-6))]
    femodes.solve(sec, modes=2, accuracy=1e-3)  # warm-up: imports, gmsh start
    blas = sorted({i["internal_api"] for i in threadpoolctl.threadpool_info()})
    print(f"cores: {os.cpu_count()}; thread pools loaded: {', '.join(blas)}")
    for name, kw in cases:
        times = {True: [], False: []}
        for _ in range(3):
            for on in (True, False):
                with policy(on):
                    t0 = time.perf_counter()
                    femodes.solve(sec, **kw)
                    times[on].append(time.perf_counter() - t0)
        one, free = statistics.median(times[True]), statistics.median(times[False])
        print(f"{name:28s} one BLAS thread {one:6.2f} s   every core {free:6.2f} s   "
              f"ratio (every core / one) {free / one:4.2f}")


if __name__ == "__main__":
    run()
