"""Benchmark: linear-algebra backends and the assembly, WR-90 from a few thousand to about 1e6 unknowns.

For each size, P4 Lagrange elements on a uniform WR-90 mesh (22.86 x 10.16 mm), the 10 lowest TE
modes (Neumann pencil K x = kc^2 M x):

- assembly: femodes' vectorised assembly against scikit-fem's quadrature path (the previous code,
  kept as ``discretise_skfem``), time and peak memory;
- eigen: factorisation of K - sigma M plus shift-invert Lanczos with each installed backend, time
  and peak memory, with the ratio to SuperLU.

Each case runs in its own subprocess (one BLAS thread) so that its peak resident memory (VmHWM from
/proc/self/status: C allocations included, which tracemalloc misses) is its own; the mesh is made
once per size and shared.  Speed figures are ratios measured in the same run; nothing here is a
timed test.

    python benchmarks/bench_backend.py            # up to about 1e6 unknowns (a few minutes)
    python benchmarks/bench_backend.py 3e5        # stop at 3e5
"""

from __future__ import annotations

import json
import math
import os
import subprocess
import sys
import tempfile
import time

SIZES = (2e3, 5e3, 1e4, 2e4, 1e5, 3e5, 1e6)
A, B = 22.86e-3, 10.16e-3

CHILD = r"""
import json, sys, time
import numpy as np
from skfem import MeshTri1
mesh_file, what, repeat = sys.argv[1], sys.argv[2], int(sys.argv[3])
import femodes.solvers.eigen as E
from femodes.solvers import backends
from femodes.solvers.discretise import discretise, discretise_skfem
z = np.load(mesh_file)
skm = MeshTri1(z["p"], z["t"])
out = {}
with E.single_thread():
    if what == "skfem":
        t = time.perf_counter(); K, M, _ = discretise_skfem(skm, 4); out["assembly"] = time.perf_counter() - t
    else:
        t = time.perf_counter(); d = discretise(skm, 4); out["assembly"] = time.perf_counter() - t
        K, M = d.K, d.M
        sigma = -0.1 * 3.1416 * 2.4048 ** 2 / (22.86e-3 * 10.16e-3)   # femodes' TE shift
        best = None
        for _ in range(repeat):
            with backends.use(what):
                t = time.perf_counter(); lam, X, res = E.lowest_eigenpairs(K, M, 11, sigma); dt = time.perf_counter() - t
                t = time.perf_counter(); f = backends.factorize(K - sigma * M, spd=True); tf = time.perf_counter() - t
            best = dt if best is None else min(best, dt)
        out.update(eigen=best, factor=tf, backend=f.backend, nnz_factor=f.nnz, kc_TE10=float(np.sqrt(lam[1])),
                   n=int(K.shape[0]), nnz=int(K.nnz))
for line in open("/proc/self/status"):
    if line.startswith("VmHWM"):
        out["peak_MB"] = int(line.split()[1]) / 1024
print(json.dumps(out))
"""


def _child(mesh_file, what, repeat=1):
    env = dict(os.environ, OMP_NUM_THREADS="1", OPENBLAS_NUM_THREADS="1", MKL_NUM_THREADS="1")
    r = subprocess.run([sys.executable, "-c", CHILD, mesh_file, what, str(repeat)], capture_output=True, text=True,
                       env=env, timeout=3600)
    if r.returncode != 0:
        return {"error": (r.stderr.strip().splitlines() or ["?"])[-1]}
    return json.loads(r.stdout.strip().splitlines()[-1])


def run(largest=1e6):
    import numpy as np

    import femodes
    from femodes.geometry.mesh import mesh_section
    from femodes.solvers import backends

    names = backends.available()
    print(f"installed backends: {', '.join(names)}; auto picks cholespy for SPD from {backends.CHOLESPY_MIN} unknowns")
    print("WR-90, P4, 10 TE modes; times in s (best of 3 below 5e4 unknowns), peak = VmHWM of the case's process")
    sec = femodes.rectangle(A, B)
    with tempfile.TemporaryDirectory() as tmp:
        for target in [s for s in SIZES if s <= largest]:
            h = math.sqrt(A * B * 8.2 / target / 0.433)  # P4: about 8 unknowns per triangle
            t = time.perf_counter()
            mesh = mesh_section(sec, h, order=4, graded=False)
            skm = mesh.to_skfem(order=4)
            t_mesh = time.perf_counter() - t
            f = os.path.join(tmp, "m.npz")
            np.savez(f, p=skm.p, t=skm.t)
            rep = 3 if target < 5e4 else 1
            base = _child(f, "skfem")
            rows = {name: _child(f, name, rep) for name in names}
            ref = rows["superlu"]
            if "error" in ref:
                print(f"~{target:.0e}: SuperLU failed: {ref['error']}")
                break
            exact = math.pi / A
            print(f"\n{ref['n']} unknowns (nnz(K) {ref['nnz']}), mesh {t_mesh:.2f} s; TE10 kc error "
                  f"{abs(ref['kc_TE10'] - exact) / exact:.1e}")
            print(f"  assembly  scikit-fem path {base['assembly']:6.2f} s {base['peak_MB']:7.0f} MB peak | "
                  f"femodes {ref['assembly']:6.2f} s  ({base['assembly'] / ref['assembly']:.2f}x faster)")
            for name, r in rows.items():
                if "error" in r:
                    print(f"  {name:9s} failed: {r['error']}")
                    continue
                nnzf = f", factor {r['nnz_factor'] / 1e6:.1f}M entries" if r.get("nnz_factor") else ""
                print(f"  {name:9s} factor {r['factor']:7.3f} s  factor+eigen {r['eigen']:7.3f} s "
                      f"({ref['eigen'] / r['eigen']:.2f}x SuperLU)  peak {r['peak_MB']:7.0f} MB "
                      f"({r['peak_MB'] / ref['peak_MB']:.2f}x){nnzf}; whole solve "
                      f"{t_mesh + r['assembly'] + r['eigen']:.1f} s")
            sys.stdout.flush()


if __name__ == "__main__":
    run(float(sys.argv[1]) if len(sys.argv) > 1 else 1e6)
