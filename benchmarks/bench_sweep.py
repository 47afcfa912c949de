"""Sweep speed (issue "Design studies", item 5), measured in one run: a 21-point gap sweep of the
bundled double-ridge feed guide (examples/double_ridge_feed.toml; 6 modes at accuracy 1e-6)
  a. as 21 independent femodes.solve calls (the baseline),
  b. as femodes.sweep on one worker (each point starts from its neighbour's element size),
  c. as femodes.sweep on two workers.
Prints the time per point and the ratios; the targets are b / a <= 0.5 and a speed-up c vs b of
at least 1.6 on two cores.  Not a test: the machine is shared and timings are noisy.
"""

import time

import numpy as np

import femodes as fm

BASE = {"width": 34e-3, "height": 16e-3, "ridge_width": 8e-3, "ridge_corner_radius": 0.2e-3, "base_radius": 0.5e-3}
GAPS = np.linspace(1e-3, 3e-3, 21)
KW = dict(modes=6, accuracy=1e-6)


def main():
    t0 = time.perf_counter()
    ref = [fm.solve(fm.double_ridge(gap=g, **BASE), **KW) for g in GAPS]
    t_ind = time.perf_counter() - t0
    t0 = time.perf_counter()
    one = fm.sweep(fm.double_ridge, BASE, {"gap": GAPS}, workers=1, progress=False, **KW).to_xarray()
    t_one = time.perf_counter() - t0
    t0 = time.perf_counter()
    two = fm.sweep(fm.double_ridge, BASE, {"gap": GAPS}, workers=2, progress=False, **KW).to_xarray()
    t_two = time.perf_counter() - t0
    n = len(GAPS)
    fc_ref = np.array([[m.fc for m in ms] for ms in ref])
    err = np.array([[m.fc_error for m in ms] for ms in ref])
    agree = all(np.all(np.abs(ds.fc.values - fc_ref) <= ds.fc_error.values + err) for ds in (one, two))
    print(f"21-point gap sweep, double ridge, {KW['modes']} modes at {KW['accuracy']:g}")
    print(f"  a. independent solves : {t_ind / n:.2f} s per point")
    print(f"  b. sweep, one worker  : {t_one / n:.2f} s per point  (b / a = {t_one / t_ind:.2f}; target <= 0.5)")
    print(f"  c. sweep, two workers : {t_two / n:.2f} s per point  (speed-up b / c = {t_one / t_two:.2f}; target >= 1.6)")
    print(f"  sweep and independent solves agree within their error bars: {bool(agree)}")


if __name__ == "__main__":
    main()
