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

Choice (``backend="auto"``, the default): cholespy for SPD matrices of at least ``CHOLESPY_MIN``
unknowns when it is installed, SuperLU otherwise.  The crossover is measured
(``benchmarks/bench_backend.py`` and WR-90 / rectangle pencils, P3-P4, 10 modes, one thread): cholespy
was 1.1-1.35x faster from 500 to 2e4 unknowns and 2x at 1e5; at 190 unknowns the two tied (about
20 ms, ARPACK's own work), so below CHOLESPY_MIN SuperLU keeps the small problems.  A Cholesky factorisation that finds
the matrix is not positive definite falls back to SuperLU (it never silently returns a wrong solve).

Overrides, strongest first: :func:`use` (a context manager, e.g. ``with use("superlu"): solve(...)``),
then the environment variable ``FEMODES_BACKEND`` (``auto``, ``superlu`` or ``cholespy``).  An unknown
name, or a backend that is not installed, raises FemodesError naming the valid ones.
"""

from __future__ import annotations

import os
from contextlib import contextmanager
from contextvars import ContextVar

import numpy as np
from scipy.sparse.linalg import splu

from femodes.errors import FemodesError

__all__ = ["BACKENDS", "CHOLESPY_MIN", "Factor", "available", "choose", "factorize", "use"]

#: every backend name femodes knows ("auto" picks among the installed ones)
BACKENDS = ("superlu", "cholespy")

#: unknowns from which an SPD matrix goes to cholespy under "auto" (measured crossover, see module doc)
CHOLESPY_MIN = 500

_ENV = "FEMODES_BACKEND"
_override: ContextVar[str | None] = ContextVar("femodes_backend", default=None)


def _has_cholespy():
    try:
        import cholespy  # noqa: F401
    except ImportError:
        return False
    return True


def available():
    """The installed backends, in order of preference."""
    return tuple(b for b in BACKENDS if b == "superlu" or (b == "cholespy" and _has_cholespy()))


def _check(name, where):
    name = str(name).strip().lower()
    if name == "auto":
        return name
    if name not in BACKENDS:
        raise FemodesError(f"unknown linear-algebra backend {name!r} ({where}); valid names: "
                           f"{', '.join(('auto',) + BACKENDS)}")
    if name not in available():
        raise FemodesError(f"the linear-algebra backend {name!r} ({where}) is not installed; "
                           f"installed: {', '.join(available())} (pip install {name}, or choose another)")
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
    """Use backend ``name`` ("auto", "superlu", "cholespy") for every factorisation in the block."""
    token = _override.set(_check(name, "femodes.solvers.backends.use"))
    try:
        yield
    finally:
        _override.reset(token)


def choose(n, spd, backend=None):
    """The backend that factorises an n x n matrix (``spd``: known symmetric positive definite)."""
    name = _check(backend, "backend argument") if backend is not None else requested()
    if name == "auto":
        return "cholespy" if spd and n >= CHOLESPY_MIN and "cholespy" in available() else "superlu"
    if name == "cholespy" and not spd:
        return "superlu"  # Cholesky cannot factorise an indefinite matrix: LU is the only choice
    return name


class Factor:
    """A factorised matrix: ``solve(b)`` returns A^-1 b for a vector or an (n, m) block of columns.

    backend : the library that factorised it;  nnz : entries of the stored factor (None if the
    library does not say).
    """

    def __init__(self, backend, solve, nnz=None):
        self.backend = backend
        self._solve = solve
        self.nnz = nnz

    def solve(self, b):
        return self._solve(b)

    __call__ = solve


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


def factorize(A, spd=False, backend=None):
    """Factorise the square sparse matrix A; returns a :class:`Factor`.

    ``spd`` says A is symmetric positive definite (allows Cholesky); ``backend`` overrides the
    choice for this call (else :func:`use`, FEMODES_BACKEND, "auto").  If Cholesky finds A is not
    positive definite after all, SuperLU factorises it instead.
    """
    n = A.shape[0]
    name = choose(n, spd, backend)
    if name == "cholespy":
        try:
            return _cholespy(A)
        except ValueError:  # "Matrix is not positive definite!"
            pass
    return _superlu(A)
