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
