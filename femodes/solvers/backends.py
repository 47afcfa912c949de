"""Sparse direct solvers behind the eigen stage: factorise (A - sigma B) once, solve many times.

Shift-invert Lanczos / Arnoldi spends its time in one sparse factorisation and then two triangular
solves per iteration.  Which library does that fastest depends on the matrix:

``superlu``  scipy's SuperLU (LU, MMD_AT_PLUS_A ordering, symmetric mode).  Always installed; works
             for every nonsingular matrix, definite or not.  The default.
``cholespy`` sparse Cholesky (CHOLMOD inside the cholespy wheel).  Only for symmetric positive-definite
             matrices, which both shifts of the homogeneous guide give: K - sigma M with K positive
             semi-definite, M positive definite and sigma < 0.  A Cholesky factor L L^T holds about
             half the entries of an LU factor of the same matrix, and the supernodal factorisation
             is faster where it has dense blocks to work on.
``pardiso``  MKL PARDISO through ctypes (:mod:`femodes.solvers.pardiso`), optional: ``pip install
             'femodes[mkl]'`` (x86-64; the ``mkl`` wheel, about 1 GB).  Cholesky for SPD matrices,
             L D L^T with Bunch-Kaufman pivots for symmetric indefinite ones (the loaded guide's
             operator, whose inertia is then checked against the one the caller derived), LU for
             unsymmetric ones.  Factorised once, solved many times on the stored factor; its memory
             is freed (PARDISO's phase -1) when the factor is released or collected.

Choice (``backend="auto"``, the default): SPD matrices go to pardiso from ``PARDISO_SPD_MIN``
unknowns when it is installed, else to cholespy from ``CHOLESPY_MIN``, else SuperLU; indefinite
ones to pardiso from ``PARDISO_INDEFINITE_MIN`` unknowns when installed (saddle points, with zeros on
the diagonal, excepted), else SuperLU.  The
crossovers are measured (``benchmarks/bench_backend.py`` and WR-90 / rectangle pencils, P3-P4, 10
modes, one thread): cholespy was 1.1-1.35x faster than SuperLU from 500 to 2e4 unknowns and 2x at
1e5; at 190 unknowns the two tied (about 20 ms, ARPACK's own work), so below CHOLESPY_MIN SuperLU
keeps the small problems.  PARDISO's crossovers: see the constants.  A Cholesky factorisation that
finds the matrix is not positive definite, or a PARDISO factorisation that fails or shows the wrong
inertia, falls back to SuperLU (it never silently returns a wrong solve).

Overrides, strongest first: :func:`use` (a context manager, e.g. ``with use("superlu"): solve(...)``),
then the environment variable ``FEMODES_BACKEND`` (``auto``, ``superlu``, ``cholespy`` or
``pardiso``).  An unknown name, or a backend that is not installed, raises FemodesError naming the
valid ones.
"""

from __future__ import annotations

import math
import os
import sys
from contextlib import contextmanager
from contextvars import ContextVar

import numpy as np
from scipy.sparse.linalg import splu

from femodes.errors import FemodesError
from femodes.solvers import pardiso as _pardiso

__all__ = ["BACKENDS", "CHOLESPY_MIN", "PARDISO_INDEFINITE_MIN", "PARDISO_SPD_MIN", "Factor", "available", "choose",
           "factorize", "predicted_cost", "use"]

#: every backend name femodes knows ("auto" picks among the installed ones)
BACKENDS = ("superlu", "cholespy", "pardiso")

#: how to install each optional backend
_INSTALL = {"cholespy": "pip install cholespy", "pardiso": "pip install 'femodes[mkl]', x86-64 only"}

#: unknowns from which an SPD matrix goes to cholespy under "auto" (measured crossover, see module doc)
CHOLESPY_MIN = 500
#: unknowns from which an SPD matrix goes to PARDISO under "auto", when installed.  Measured
#: (benchmarks/bench_backend.py, WR-90 P4, 10 modes, one thread, interleaved runs on a busy 2-core
#: machine), factor + eigensolve, cholespy / PARDISO: 2.3e4 0.75 / 0.74 s, 4.5e4 1.22 / 1.26 s,
#: 7.9e4 3.27 / 3.17 s, 1.7e5 9.0 / 8.9 s (ties within the noise), 3.4e5 32.0 / 29.3 s (1.09x),
#: 1.12e6 176 / 110 s (1.6x); peak memory the same within 2 % at every size.
PARDISO_SPD_MIN = 150_000
#: unknowns from which a symmetric indefinite or unsymmetric matrix goes to PARDISO under "auto".
#: Measured on the loaded guide's operator (WR-90, slab eps_r 2.25, order 3, 4 modes at 13 GHz),
#: time with SuperLU / time with PARDISO, best of 5 interleaved: 949 unknowns 1.04x, 3.3e3 0.97x,
#: 5.5e3 1.10x, 9.6e3 1.32x, 1.9e4 1.42x; best of 2: 2.9e4 2.2x, 9.4e4 2.4x and 2.6x (two runs;
#: 9.58 vs 3.97 s, 8.94 vs 3.47 s).
#: Saddle-point matrices (zeros on the diagonal: the loaded guide's cutoff problem) stay with
#: SuperLU: there PARDISO needs weighted matching, whose factorisation took 2.6 s against SuperLU's
#: 1.4-2.3 s at 9e4 unknowns (cutoffs 0.7-1.0x; 0.9-1.1x at 3e3-3e4).
PARDISO_INDEFINITE_MIN = 5_000

_ENV = "FEMODES_BACKEND"
_override: ContextVar[str | None] = ContextVar("femodes_backend", default=None)


def _has_cholespy():
    try:
        import cholespy  # noqa: F401
    except ImportError:
        return False
    return True


def _has_pardiso():
    return _pardiso.load() is not None


def _installed(name):
    return name == "superlu" or (name == "cholespy" and _has_cholespy()) or (name == "pardiso" and _has_pardiso())


def available():
    """The installed backends, in order of preference."""
    return tuple(b for b in BACKENDS if _installed(b))


def _check(name, where):
    name = str(name).strip().lower()
    if name == "auto":
        return name
    if name not in BACKENDS:
        raise FemodesError(f"unknown linear-algebra backend {name!r} ({where}); valid names: "
                           f"{', '.join(('auto',) + BACKENDS)}")
    if not _installed(name):
        raise FemodesError(f"the linear-algebra backend {name!r} ({where}) is not installed; "
                           f"installed: {', '.join(available())}; valid names: {', '.join(('auto',) + BACKENDS)} "
                           f"({_INSTALL[name]}, or choose an installed one)")
    return name


def requested():
    """The backend asked for: the :func:`use` override, else FEMODES_BACKEND, else "auto"."""
    name = _override.get()
    if name is not None:
        return name
    env = os.environ.get(_ENV, "").strip()
    return _check(env, f"environment variable {_ENV}") if env else "auto"


@contextmanager
def use(name):
    """Use backend ``name`` ("auto", "superlu", "cholespy", "pardiso") for every factorisation in the block."""
    token = _override.set(_check(name, "femodes.solvers.backends.use"))
    try:
        yield
    finally:
        _override.reset(token)


def choose(n, spd, backend=None, saddle=False):
    """The backend that factorises an n x n matrix (``spd``: known symmetric positive definite;
    ``saddle``: indefinite with zeros on the diagonal, which "auto" leaves to SuperLU)."""
    name = _check(backend, "backend argument") if backend is not None else requested()
    if name == "auto":
        if not saddle and n >= (PARDISO_SPD_MIN if spd else PARDISO_INDEFINITE_MIN) and _has_pardiso():
            return "pardiso"
        return "cholespy" if spd and n >= CHOLESPY_MIN and _has_cholespy() else "superlu"
    if name == "cholespy" and not spd:
        return "superlu"  # Cholesky cannot factorise an indefinite matrix: LU is the only choice
    return name


class Factor:
    """A factorised matrix: ``solve(b)`` returns A^-1 b for a vector or an (n, m) block of columns.

    backend : the library that factorised it;  nnz : entries of the stored factor (None if the
    library does not say);  inertia : (positive, negative) eigenvalue counts of a symmetric
    indefinite matrix when the library reports them (PARDISO), else None;  halves : for an SPD
    factor that can apply its halves separately (PARDISO), the pair (forward, backward) of
    functions b -> F b and b -> F^T b with F A F^T = I (so A^-1 = F^T F), else None.  :meth:`release` frees
    the factor's memory now (PARDISO); otherwise it goes with the object.
    """

    def __init__(self, backend, solve, nnz=None, release=None, inertia=None, halves=None):
        self.backend = backend
        self.halves = halves
        self._solve = solve
        self._release = release
        self.nnz = nnz
        self.inertia = inertia

    def solve(self, b):
        return self._solve(b)

    __call__ = solve

    def release(self):
        if self._release is not None:
            self._release()


def _superlu(A):
    lu = splu(A.tocsc(), permc_spec="MMD_AT_PLUS_A", options={"SymmetricMode": True})
    return Factor("superlu", lu.solve, int(lu.L.nnz + lu.U.nnz))


def _cholespy(A):
    import cholespy

    A = A.tocsr()
    A.sum_duplicates()
    n = A.shape[0]
    chol = cholespy.CholeskySolverD(n, A.indptr.astype(np.int32), A.indices.astype(np.int32),
                                    np.ascontiguousarray(A.data, dtype=np.float64), cholespy.MatrixType.CSR)

    def solve(b):
        b = np.ascontiguousarray(b, dtype=np.float64)
        x = np.empty_like(b)
        chol.solve(b, x)
        return x

    return Factor("cholespy", solve)


def _pardiso_factor(A, spd, symmetric, inertia):
    if spd:
        mtype = 2
    else:
        if symmetric is None:
            d = abs(A - A.T)
            symmetric = d.nnz == 0 or d.max() <= 1e-14 * abs(A).max()
        mtype = -2 if symmetric else 11
    f = _pardiso.PardisoFactor(A, mtype, inertia=inertia if mtype == -2 else None)
    return Factor("pardiso", f.solve, f.nnz, release=f.release, inertia=f.inertia,
                  halves=(f.forward, f.backward) if mtype == 2 else None)


def factorize(A, spd=False, backend=None, symmetric=None, inertia=None):
    """Factorise the square sparse matrix A; returns a :class:`Factor`.

    ``spd`` says A is symmetric positive definite (allows Cholesky); ``backend`` overrides the
    choice for this call (else :func:`use`, FEMODES_BACKEND, "auto").  ``symmetric`` says an
    indefinite A is symmetric (None: PARDISO checks A - A^T itself); ``inertia`` the (positive,
    negative) eigenvalue counts a symmetric A must have, which PARDISO's L D L^T is checked against.
    If Cholesky finds A is not positive definite after all, or PARDISO fails or shows another
    inertia, SuperLU factorises it instead (a line on stderr when FEMODES_DEBUG is set).
    """
    n = A.shape[0]
    saddle = not spd and bool(np.any(A.diagonal() == 0))
    name = choose(n, spd, backend, saddle)
    if name == "cholespy":
        try:
            return _cholespy(A)
        except ValueError:  # "Matrix is not positive definite!"
            pass
    if name == "pardiso":
        try:
            return _pardiso_factor(A, spd, symmetric, inertia)
        except (_pardiso.PardisoError, _pardiso.InertiaMismatch, ValueError) as exc:
            if os.environ.get("FEMODES_DEBUG"):
                print(f"femodes: {exc}; SuperLU factorises this matrix instead", file=sys.stderr)
    return _superlu(A)


# -- cost model ---------------------------------------------------------------------------------
#: Measured by benchmarks/bench_backend.py (2026-12-05, 2-core machine shared with other jobs, one
#: BLAS thread): WR-90, P4 Lagrange elements (about 23.5 matrix entries per unknown), the 10 lowest TE
#: modes.  Per backend: (unknowns, seconds of factorisation + eigensolve, peak resident MB of the whole
#: process: Python, matrices, factor and Lanczos vectors).
MEASURED_COSTS = {
    "superlu": ((2493, 0.025, 99), (11421, 0.123, 145), (22717, 0.41, 195), (112681, 11.8, 454),
                (335445, 29.0, 1305), (1120685, 114.5, 4329)),
    "cholespy": ((2493, 0.021, 96), (11421, 0.092, 126), (22717, 0.23, 160), (112681, 5.45, 395),
                 (335445, 19.9, 950), (1120685, 85.9, 2836)),
    # 2026-12-05, the same script on a busier machine (load 2-9): the 1.12e6 row is the whole solve's
    # process (meshing and assembly included, as peak memory an upper bound; SuperLU and cholespy took
    # 185 and 176 s in the same runs), the small sizes' peaks carry MKL's libraries (+14 MB)
    "pardiso": ((2493, 0.068, 113), (11421, 0.305, 136), (22717, 0.865, 164), (112681, 7.31, 397),
                (335445, 29.3, 974), (1120685, 109.8, 2950)),
}
#: spread of the same case between runs on the shared machine (0.41 s and 1.30 s at 2.3e4 unknowns;
#: SuperLU at 1.1e6: 114 s in this table, on a load of 4.5 on 2 cores, and 30-45 s on a quieter
#: machine the day before): time bands are x/ 4.
TIME_SPREAD = 4.0
#: peak memory repeated within 10 % between runs; the band is x/ 1.5 to cover other element orders'
#: denser or sparser matrices (P2: about 13 entries per unknown) and interpolation between sizes.
MEMORY_SPREAD = 1.5


def predicted_cost(n, backend=None, modes=10):
    """Predicted (seconds, bytes) of the eigen stage for an SPD pencil of ``n`` unknowns, each a
    (low, high) band from :data:`MEASURED_COSTS`.

    Log-log interpolation between the measured sizes, the last measured slope beyond them (fill of
    a 2-D nested-dissection-like ordering grows as n log n, so the slope does not fall with size).
    The Lanczos part scales with the number of modes (the basis is about 2 modes + 2 vectors); the
    table is for 10 modes, so more modes widen the high end by modes / 10.  ``backend`` as for
    :func:`choose` (SPD); indefinite (loaded-guide) pencils cost more per unknown and are not covered.
    """
    n = float(n)
    if not n > 0:
        raise FemodesError(f"the number of unknowns must be positive, got {n!r}")
    name = choose(int(n), True, backend)
    pts = np.array(MEASURED_COSTS[name], dtype=float)
    ln, lt, lm = np.log(pts[:, 0]), np.log(pts[:, 1]), np.log(pts[:, 2])

    def interp(y):
        x = math.log(n)
        if x <= ln[0]:
            return math.exp(y[0])
        if x >= ln[-1]:
            slope = (y[-1] - y[-2]) / (ln[-1] - ln[-2])
            return math.exp(y[-1] + slope * (x - ln[-1]))
        return math.exp(np.interp(x, ln, y))

    t, m = interp(lt), interp(lm) * 2 ** 20
    scale = max(1.0, modes / 10)
    return (t / TIME_SPREAD, t * TIME_SPREAD * scale), (m / MEMORY_SPREAD, m * MEMORY_SPREAD * scale)
