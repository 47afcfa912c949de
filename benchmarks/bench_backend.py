"""Benchmark: linear-algebra backends (SuperLU, cholespy, and MKL PARDISO when installed) and the assembly.

Three parts, each backend in its own runs (one BLAS thread everywhere):

1. ``spd``: WR-90 (22.86 x 10.16 mm) on uniform meshes, P4 Lagrange elements, the 10 lowest TE modes
   (Neumann pencil K x = kc^2 M x), from a few thousand to about 1e6 unknowns:
   - assembly: femodes' vectorised assembly against scikit-fem's quadrature path (the previous code,
     kept as ``discretise_skfem``), time and peak memory;
   - eigen: factorisation of K - sigma M plus shift-invert Lanczos, every installed backend in one
     process, interleaved (round after round; best of 3 below 5e4 unknowns), ratio to SuperLU;
     then each backend again in its own process for its peak memory.
2. ``whole``: the whole solve at about 1e6 unknowns, 10 TE modes: meshing (gmsh), assembly, eigen,
   each backend in its own process: time per stage and the process's peak memory.
3. ``loaded``: the full-vector problem of WR-90 with a dielectric slab (eps_r 2.25) on its bottom
   half, order 3, the 4 modes of largest beta at 13 GHz and the 4 lowest cutoffs, from a few
   thousand to about 1e5 unknowns: every backend (and "auto") in one process, interleaved, ratio to SuperLU;
   beta^2 against the LSE / LSM transverse-resonance values (femodes.reference.slab_on_wall_modes).

Peak resident memory is VmHWM from /proc/self/status (C allocations included, which tracemalloc
misses).  Speed figures are ratios measured in the same run; nothing here is a timed test.

    python benchmarks/bench_backend.py                    # all parts (about half an hour)
    python benchmarks/bench_backend.py spd --largest 3e5  # part 1 up to 3e5 unknowns
    python benchmarks/bench_backend.py loaded whole
"""

from __future__ import annotations

import argparse
import json
import math
import os
import subprocess
import sys
import tempfile
import time

SIZES = (2e3, 5e3, 1e4, 2e4, 5e4, 1e5, 3e5, 1e6)
LOADED_SIZES = (3e3, 1e4, 3e4, 1e5)
A, B = 22.86e-3, 10.16e-3

CHILD = r"""
import json, sys, time
import numpy as np
from skfem import MeshTri1
mesh_file, names, repeat = sys.argv[1], sys.argv[2].split(","), int(sys.argv[3])
import femodes.solvers.eigen as E
from femodes.solvers import backends
from femodes.solvers.discretise import discretise, discretise_skfem
z = np.load(mesh_file)
skm = MeshTri1(z["p"], z["t"])
out = {}
with E.single_thread():
    if names == ["skfem"]:
        t = time.perf_counter(); K, M, _ = discretise_skfem(skm, 4); out["assembly"] = time.perf_counter() - t
    else:
        t = time.perf_counter(); d = discretise(skm, 4); out["assembly"] = time.perf_counter() - t
        K, M = d.K, d.M
        sigma = -0.1 * 3.1416 * 2.4048 ** 2 / (22.86e-3 * 10.16e-3)   # femodes' TE shift
        out.update(n=int(K.shape[0]), nnz=int(K.nnz))
        for _ in range(repeat):
            for name in names:   # interleaved: each round runs every backend once
                r = out.setdefault(name, {})
                with backends.use(name):
                    t = time.perf_counter(); lam, X, res = E.lowest_eigenpairs(K, M, 11, sigma); dt = time.perf_counter() - t
                    t = time.perf_counter(); f = backends.factorize(K - sigma * M, spd=True); tf = time.perf_counter() - t
                r.update(eigen=min(dt, r.get("eigen", dt)), factor=min(tf, r.get("factor", tf)), backend=f.backend,
                         nnz_factor=f.nnz, kc_TE10=float(np.sqrt(lam[1])))
                f.release(); del f
for line in open("/proc/self/status"):
    if line.startswith("VmHWM"):
        out["peak_MB"] = int(line.split()[1]) / 1024
print(json.dumps(out))
"""

WHOLE = r"""
import json, math, sys, time
import numpy as np
import femodes
from femodes.geometry.mesh import mesh_section
import femodes.solvers.eigen as E
from femodes.solvers import backends
from femodes.solvers.discretise import discretise
h, name = float(sys.argv[1]), sys.argv[2]
a, b = 22.86e-3, 10.16e-3
out = {}
with E.single_thread():
    t0 = time.perf_counter()
    mesh = mesh_section(femodes.rectangle(a, b), h, order=4, graded=False)
    skm = mesh.to_skfem(order=4)
    t1 = time.perf_counter()
    d = discretise(skm, 4)
    t2 = time.perf_counter()
    sigma = -0.1 * math.pi * 2.4048 ** 2 / (a * b)   # femodes' TE shift
    with backends.use(name):
        lam, X, res = E.lowest_eigenpairs(d.K, d.M, 11, sigma)
    t3 = time.perf_counter()
kc = np.sqrt(np.maximum(lam[1:], 0))
want = np.sort([math.hypot(m * math.pi / a, n * math.pi / b) for m in range(12) for n in range(6) if m or n])[:10]
out.update(n=int(d.K.shape[0]), mesh=t1 - t0, assembly=t2 - t1, eigen=t3 - t2, total=t3 - t0,
           kc_err=float(np.max(np.abs(kc - want) / want)))
for line in open("/proc/self/status"):
    if line.startswith("VmHWM"):
        out["peak_MB"] = int(line.split()[1]) / 1024
print(json.dumps(out))
"""

LOADED = r"""
import json, math, sys, time, warnings
import numpy as np
warnings.simplefilter("ignore", DeprecationWarning)
from femodes import reference as ref
from femodes.solvers import backends
from femodes.solvers.vector import VectorProblem, layered_rectangle_mesh
h, names, repeat = float(sys.argv[1]), sys.argv[2].split(","), int(sys.argv[3])
a, b, eps_r, f = 22.86e-3, 10.16e-3, 2.25, 13e9
t = time.perf_counter()
mesh, region = layered_rectangle_mesh(a, b, [b / 2], h=h)
vp = VectorProblem(mesh, eps_r=np.where(region == 0, eps_r, 1.0), order=3)
out = {"n": int(vp.n_dofs), "setup": time.perf_counter() - t}
want = np.array([r.beta2 for r in ref.slab_on_wall_modes(a, b, b / 2, eps_r, f, 4)])
k2 = (2 * math.pi * f / 299792458.0) ** 2 * eps_r
for _ in range(repeat):
    for name in names:   # interleaved
        r = out.setdefault(name, {})
        with backends.use(name):
            t = time.perf_counter(); ms = vp.solve(f, modes=4); ts = time.perf_counter() - t
            t = time.perf_counter(); cs = vp.cutoffs(4); tc = time.perf_counter() - t
        r.update(solve=min(ts, r.get("solve", ts)), cutoffs=min(tc, r.get("cutoffs", tc)),
                 err=float(np.max(np.abs(np.array([m.beta2 for m in ms]) - want)) / k2))
print(json.dumps(out))
"""


def _run(code, *args, timeout=3600):
    env = dict(os.environ, OMP_NUM_THREADS="1", OPENBLAS_NUM_THREADS="1", MKL_NUM_THREADS="1")
    r = subprocess.run([sys.executable, "-c", code, *map(str, args)], capture_output=True, text=True, env=env,
                       timeout=timeout)
    if r.returncode != 0:
        return {"error": (r.stderr.strip().splitlines() or ["?"])[-1]}
    return json.loads(r.stdout.strip().splitlines()[-1])


def spd(names, largest=1e6):
    import numpy as np

    import femodes
    from femodes.geometry.mesh import mesh_section

    print("\n== 1. SPD pencils: WR-90, P4, 10 TE modes; factor+eigen in s (all backends in one process, "
          "interleaved, best of 3 below 5e4 unknowns); peak = VmHWM of a process running that backend alone, "
          "whose time is printed as 'alone'")
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
            base = _run(CHILD, f, "skfem", 1)
            both = _run(CHILD, f, ",".join(names), rep)
            if "error" in both:
                print(f"~{target:.0e}: failed: {both['error']}")
                break
            alone = {name: _run(CHILD, f, name, 1) for name in names}
            ref = both["superlu"]
            exact = math.pi / A
            print(f"\n{both['n']} unknowns (nnz(K) {both['nnz']}), mesh {t_mesh:.2f} s; TE10 kc error "
                  f"{abs(ref['kc_TE10'] - exact) / exact:.1e}")
            print(f"  assembly  scikit-fem path {base['assembly']:6.2f} s {base['peak_MB']:7.0f} MB peak | "
                  f"femodes {both['assembly']:6.2f} s  ({base['assembly'] / both['assembly']:.2f}x faster)")
            for name in names:
                r = both[name]
                peak = alone.get(name, {}).get("peak_MB")
                mem = f"  peak {peak:7.0f} MB ({peak / alone['superlu']['peak_MB']:.2f}x)" if peak else ""
                if peak:
                    solo = alone[name].get(name, {}).get("eigen")
                    mem += f"  alone {solo:.2f} s" if solo else ""
                nnzf = f", factor {r['nnz_factor'] / 1e6:.1f}M entries" if r.get("nnz_factor") else ""
                print(f"  {name:9s} factor {r['factor']:7.3f} s  factor+eigen {r['eigen']:7.3f} s "
                      f"({ref['eigen'] / r['eigen']:.2f}x SuperLU){mem}{nnzf}")
            sys.stdout.flush()


def whole(names, target=1e6):
    print(f"\n== 2. the whole solve, WR-90 at about {target:.0e} unknowns, P4, 10 TE modes: mesh + assembly + "
          "eigen, each backend in its own process (peak = VmHWM)")
    h = math.sqrt(A * B * 8.2 / target / 0.433)
    rows = {}
    for name in names:
        r = rows[name] = _run(WHOLE, h, name)
        if "error" in r:
            print(f"  {name:9s} failed: {r['error']}")
            continue
        ref = rows.get("superlu", r)
        ratio = f"({ref['total'] / r['total']:.2f}x SuperLU's total)" if "total" in ref else ""
        print(f"  {name:9s} {r['n']} unknowns: mesh {r['mesh']:5.1f} s  assembly {r['assembly']:5.1f} s  "
              f"eigen {r['eigen']:6.1f} s  total {r['total']:6.1f} s {ratio}  peak {r['peak_MB'] / 1024:.2f} GB; "
              f"worst kc error {r['kc_err']:.1e}")
        sys.stdout.flush()


def loaded(names, largest=1e5):
    print("\n== 3. loaded guide (WR-90, slab eps_r 2.25 on the bottom half), order 3: 4 modes at 13 GHz and the "
          "4 lowest cutoffs; all backends in one process, interleaved, best of 2 (3 below 2e4 unknowns)")
    # its matrices are indefinite: cholespy would be SuperLU; "auto" is what a user gets (the cutoffs'
    # saddle point stays with SuperLU)
    names = [n for n in names if n != "cholespy"] + (["auto"] if "pardiso" in names else [])
    for target in [s for s in LOADED_SIZES if s <= largest]:
        h = B / 8 * math.sqrt(5485 / target)   # 5485 unknowns at h = b / 8
        r = _run(LOADED, h, ",".join(names), 3 if target < 2e4 else 2)
        if "error" in r:
            print(f"  ~{target:.0e}: failed: {r['error']}")
            break
        ref = r["superlu"]
        print(f"  {r['n']} unknowns (mesh + assembly {r['setup']:.1f} s):")
        for name in names:
            x = r[name]
            print(f"    {name:9s} solve {x['solve']:7.3f} s ({ref['solve'] / x['solve']:.2f}x SuperLU)  cutoffs "
                  f"{x['cutoffs']:7.3f} s ({ref['cutoffs'] / x['cutoffs']:.2f}x)  worst beta^2 error "
                  f"{x['err']:.1e} of k0^2 eps_max")
        sys.stdout.flush()


def main(argv=None):
    from femodes.solvers import backends

    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("parts", nargs="*", default=["spd", "whole", "loaded"], choices=["spd", "whole", "loaded"])
    ap.add_argument("--largest", type=float, default=None, help="largest size of parts 1 and 3 (unknowns)")
    ap.add_argument("--whole-size", type=float, default=1e6, help="unknowns of part 2")
    ap.add_argument("--backends", default=None, help="comma-separated subset of the installed backends")
    args = ap.parse_args(argv)
    names = list(backends.available())
    if args.backends:
        names = [n for n in names if n in args.backends.split(",")]
    print(f"installed backends: {', '.join(names)}; auto: SPD -> pardiso from {backends.PARDISO_SPD_MIN}, cholespy "
          f"from {backends.CHOLESPY_MIN} unknowns; indefinite -> pardiso from {backends.PARDISO_INDEFINITE_MIN}")
    for part in args.parts:
        if part == "spd":
            spd(names, args.largest or 1e6)
        elif part == "whole":
            whole(names, args.whole_size)
        else:
            loaded(names, args.largest or 1e5)


if __name__ == "__main__":
    main()
