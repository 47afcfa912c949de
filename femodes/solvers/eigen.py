"""Eigen: sparse symmetric pencils -> lowest eigenpairs.

The one place that knows about linear-algebra backends.  Shift-invert Lanczos (ARPACK through
scipy.sparse.linalg.eigsh) with the factorisation of (K - sigma M) done here once (SuperLU or sparse
Cholesky, chosen in :mod:`femodes.solvers.backends`) and handed to ARPACK as a LinearOperator.  BLAS is held to one thread while it runs: on a small
shared machine threading made the solve slower, not faster.

threadpoolctl limits only the libraries already loaded when the limit is set.  scipy loads its own
BLAS (OpenBLAS) with ``scipy.linalg`` / ``scipy.sparse.linalg``: were those imported lazily inside
the limited block, the first solve of every process would run on every core (measured: 2.9x
slower for the example on a busy 2-core machine).  So they are imported here, at module level,
before any limit is set; ``tests/test_eigen.py`` checks the limit reaches every BLAS in use.
"""

from __future__ import annotations

from contextlib import contextmanager

import numpy as np
import scipy.linalg  # noqa: F401  (loads scipy's BLAS now, so that single_thread reaches it)
from scipy.sparse.linalg import LinearOperator, eigsh
from threadpoolctl import threadpool_limits

from femodes.solvers.backends import factorize

__all__ = ["lowest_eigenpairs", "single_thread"]


@contextmanager
def single_thread():
    """Hold every loaded BLAS / OpenMP pool to one thread inside the block."""
    with threadpool_limits(limits=1):
        yield


def lowest_eigenpairs(K, M, k, sigma, tol=0.0):
    """The ``k`` eigenpairs of K x = lam M x with lam nearest to and above ``sigma``.

    ``sigma`` must lie below the lowest wanted eigenvalue (for a positive semi-definite K, any
    negative number works; a shift of the order of the lowest eigenvalue is fastest).
    Returns (lam ascending, X with M-orthonormal columns, residuals ||K x - lam M x|| / ||K x||).
    """
    n = K.shape[0]
    k = int(min(k, n - 2))
    if k < 1:
        raise ValueError("problem too small for the number of eigenpairs asked")
    # K - sigma M is SPD for the positive semi-definite K and definite M of this module's callers
    # when sigma lies below the lowest eigenvalue; a factor that finds otherwise falls back to LU
    lu = factorize(K - sigma * M, spd=True)
    op = LinearOperator((n, n), matvec=lu.solve, dtype=float)
    rng = np.random.default_rng(12345)  # deterministic start vector
    v0 = rng.standard_normal(n)
    lam, X = eigsh(K, k=k, M=M, sigma=sigma, which="LM", OPinv=op, tol=tol, v0=v0,
                   ncv=min(n - 1, max(2 * k + 2, k + 8)))
    order = np.argsort(lam)
    lam, X = lam[order], X[:, order]
    # M-normalise (eigsh already does; do it again cheaply for safety) and compute residuals
    MX = M @ X
    nrm = np.sqrt(np.einsum("ij,ij->j", X, MX))
    X = X / nrm
    MX = MX / nrm
    KX = K @ X
    res = np.linalg.norm(KX - MX * lam, axis=0) / np.maximum(np.linalg.norm(KX, axis=0), 1e-300)
    return lam, X, res


def restrict(A, idx):
    """Sub-matrix A[idx][:, idx] of a sparse matrix (CSR)."""
    return A[idx][:, idx].tocsr()
