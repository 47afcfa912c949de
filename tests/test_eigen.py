"""The thread policy of the eigen stage: BLAS held to one thread during every solve.

threadpoolctl limits only the libraries loaded when the limit is set; scipy's own OpenBLAS used
to be loaded first inside the limited block (lazy import), so the first solve of every process ran
on all cores.  Checked in a fresh interpreter, where nothing is loaded yet.
"""

import json
import subprocess
import sys

PROBE = r"""
import json
import threadpoolctl
import femodes
import femodes.solvers.eigen as E

seen = []
import scipy.sparse.linalg as SL; real = SL.eigsh

def spy(*a, **k):
    seen.append([(i["internal_api"], i["num_threads"]) for i in threadpoolctl.threadpool_info()])
    return real(*a, **k)

SL.eigsh = spy
if hasattr(E, "eigsh"):
    E.eigsh = spy
femodes.solve(femodes.rectangle(22.86e-3, 10.16e-3), modes=2, accuracy=1e-4)
print(json.dumps(seen))
"""


def test_every_blas_is_single_threaded_during_the_first_solve_of_a_process():
    env = {"PATH": "/usr/bin:/bin", "HOME": "/tmp"}  # no *_NUM_THREADS variables
    out = subprocess.run([sys.executable, "-c", PROBE], capture_output=True, text=True, env=env, timeout=300)
    assert out.returncode == 0, out.stderr
    seen = json.loads(out.stdout.strip().splitlines()[-1])
    assert seen, "no eigensolve was observed"
    for pools in seen:
        blas = [n for api, n in pools if api in ("openblas", "mkl", "blis")]
        assert blas, f"no BLAS library seen during the solve: {pools}"
        assert all(n == 1 for n in blas), pools


# ---------------------------------------------------------------------------- recovery
import math  # noqa: E402

import numpy as np  # noqa: E402
import scipy.sparse as sp  # noqa: E402

import femodes  # noqa: E402
from femodes.constants import C0  # noqa: E402
from femodes.solvers.eigen import lowest_eigenpairs  # noqa: E402


def test_a_cluster_far_above_the_shift_is_recovered_exactly():
    # a diagonal pencil: its eigenvalues are its diagonal (exact, no reference needed beyond that);
    # 1e6 + 0, 1, 2, ... seen from sigma = -1 are equal to 1e-6: plain shift-invert stalls
    d = 1e6 + np.arange(400.0)
    K, M = sp.diags(d).tocsr(), sp.identity(400, format="csr")
    lam, X, res = lowest_eigenpairs(K, M, 4, -1.0, residual_limit=1e-8)
    assert np.allclose(lam, d[:4], rtol=1e-12)
    assert np.all(res < 1e-8)


def test_a_1000_to_1_slab_solves_at_default_settings():
    # TE_m0 of an a x b rectangle: fc = m c / (2 a) (Pozar, Microwave Engineering, 4th ed., 3.3)
    a, b = 1.0, 1e-3
    modes = femodes.solve(femodes.rectangle(a, b), modes=3)
    assert [m.label for m in modes] == ["TE10", "TE20", "TE30"]
    for m, k in zip(modes, (1, 2, 3)):
        exact = k * C0 / (2 * a)
        # within the asked accuracy (default 1e-6) and within its error bar: TE10 came out 4.7e-10
        # below the exact cutoff (a conforming Rayleigh-Ritz value cannot be: round-off in x^T K x
        # on these 16:1 elements), which the floor eps |x|^T |K| |x| of the estimate covers
        assert abs(m.fc - exact) / exact < 1e-6
        assert abs(m.fc - exact) <= m.fc_error, (m.label, abs(m.fc - exact) / m.fc_error)


def test_a_rectangular_coax_with_a_thin_gap_solves_at_default_settings():
    # a 1 um gap all round the inner conductor: the TE modes are those of a narrow ring channel,
    # kc = 2 pi n / L with L the channel's mid-line perimeter, up to terms of order gap / L
    # (transmission-line resonance of a closed ring; common practice)
    w, h, g = 20e-3, 10e-3, 1e-6
    modes = femodes.solve(femodes.rectangular_coax(w, h, w - 2 * g, h - 2 * g), modes=3)
    assert modes[0].family == "TEM"
    L = 2 * ((w - g) + (h - g))
    for m, n in zip(modes[1:], (1, 1)):
        kc = 2 * math.pi * n / L
        assert m.family == "TE"
        assert abs(m.kc - kc) / kc < 1e-3
