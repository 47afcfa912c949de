"""Eigen: sparse symmetric pencils -> lowest eigenpairs.

The one place that knows about linear-algebra backends.  Shift-invert Lanczos (ARPACK through
scipy.sparse.linalg.eigsh) with the factorisation of (K - sigma M) done here once (SuperLU, sparse
Cholesky or the optional MKL PARDISO, chosen in :mod:`femodes.solvers.backends`) and handed to
ARPACK as a LinearOperator.  BLAS is held to one thread while it runs: on a small shared machine threading made the solve slower, not faster.

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
from scipy.sparse.linalg import ArpackNoConvergence, LinearOperator, eigsh, splu
from threadpoolctl import threadpool_limits

from femodes.errors import FemodesError
from femodes.solvers.backends import factorize

__all__ = ["lowest_eigenpairs", "single_thread"]


@contextmanager
def single_thread():
    """Hold every loaded BLAS / OpenMP pool to one thread inside the block."""
    with threadpool_limits(limits=1):
        yield


#: restarts of the first attempt before the recovery takes over (the 1000:1 slab's first attempt ran
#: 5491 restarts, 7.5 s, without converging; the retry from a better shift took 0.1 s)
_FIRST_RESTARTS = 40


#: ARPACK's stopping tolerance on each Ritz pair's residual, relative: the eigenvalues then carry an
#: error of order TOL^2 (far below round-off) and the vectors TOL / gap; machine epsilon (ARPACK's
#: 0) cost 55 instead of 47 Lanczos steps for WR-90's 10 TE modes at 1.1e6 unknowns
TOL = 1e-12


def lowest_eigenpairs(K, M, k, sigma, tol=TOL, residual_limit=None):
    """The ``k`` eigenpairs of K x = lam M x with lam nearest to and above ``sigma``.

    ``sigma`` must lie below the lowest wanted eigenvalue (for a positive semi-definite K, any
    negative number works; a shift of the order of the lowest eigenvalue is fastest).
    Returns (lam ascending, X with M-orthonormal columns, residuals ||K x - lam M x|| / ||K x||).

    Recovery: shift-invert Lanczos converges at the rate of the gaps between the values
    1 / (lam - sigma).  A shift far below a cluster of eigenvalues makes them nearly equal (a
    1000:1 slab: TE cutoffs pi^2 n^2 under a shift a hundred times larger; its TM cutoffs differ
    by 1e-6 relative) and ARPACK stops without converging.  Then the solve is repeated with more
    Lanczos vectors and iterations from a shift moved up to just below the lowest eigenvalue
    (estimated by a loose solve), which spreads the cluster.  Residuals above ``residual_limit``
    (eigenvalues near zero, a Neumann null mode, excepted) are treated the same way and, if a
    re-solve leaves them, the pairs are polished by Rayleigh-Ritz on their subspace and one
    block inverse iteration (a pivoting factorisation: the diagonal pivots of the symmetric mode
    lose digits on the very graded meshes of thin gaps).  FemodesError if all this fails.
    """
    n = K.shape[0]
    k = int(min(k, n - 2))
    if k < 1:
        raise ValueError("problem too small for the number of eigenpairs asked")
    try:  # a well-separated spectrum converges in a few dozen restarts; a cluster may never
        lam, X, res = _shift_invert(K, M, k, sigma, tol, maxiter=_FIRST_RESTARTS)
        if _good(K, M, lam, X, res, residual_limit):
            return lam, X, res
        estimate = lam
    except ArpackNoConvergence:
        estimate = None
    # 1. an estimate of the lowest eigenvalues, loosely converged, with a larger Lanczos basis
    if estimate is None:
        try:
            estimate, _, _ = _shift_invert(K, M, k, sigma, 1e-4, ncv=min(n - 1, max(4 * k, k + 40)),
                                           maxiter=50 * n)
        except ArpackNoConvergence as exc:
            estimate = np.sort(np.asarray(exc.eigenvalues).real) if len(exc.eigenvalues) else None
    # 2. the shift moved up to just below them, more vectors and iterations, a pivoting LU
    last = None
    if estimate is not None and len(estimate):
        lo, hi = float(estimate[0]), float(estimate[-1])
        margin = max(0.5 * (hi - lo), 1e-3 * (lo - sigma), 1e-6 * abs(lo))
        shift = max(sigma, lo - margin)
        try:
            lam, X, res = _shift_invert(K, M, k, shift, tol, ncv=min(n - 1, max(3 * k, k + 20)),
                                        maxiter=50 * n, pivoting=True)
            if _good(K, M, lam, X, res, residual_limit):
                return lam, X, res
            last = (lam, X, shift)
        except ArpackNoConvergence:
            pass
    # 3. polish what the last attempt found
    if last is not None:
        lam, X, res = _polish(K, M, *last)
        if _good(K, M, lam, X, res, residual_limit):
            return lam, X, res
    raise FemodesError(f"the eigen-solver did not converge on this geometry ({n} unknowns, {k} eigenpairs, "
                       "after retries with more Lanczos vectors and a better shift): nearly equal cutoffs or "
                       "a very thin gap; ask for fewer modes, a looser accuracy, or widen the narrowest gap")


def _good(K, M, lam, X, res, limit):
    """Residuals within ``limit`` or within 100x their round-off floor (a pair as exact as double
    precision can tell); eigenvalues near zero (a Neumann constant, ||K x|| round-off) excepted."""
    if limit is None:
        return True
    big = np.max(np.abs(lam)) if len(lam) else 0.0
    ok = (res <= limit) | (np.abs(lam) <= 1e-6 * big)
    if np.all(ok):
        return True
    return bool(np.all(ok | (res <= 100 * _round_off(K, M, lam, X))))


def _shift_invert(K, M, k, sigma, tol, ncv=None, maxiter=None, pivoting=False):
    n = K.shape[0]
    A = K - sigma * M  # CSR; each backend converts what it needs (the symmetric A's CSR is its CSC)
    if pivoting:
        A = A.tocsc()  # the retry on a badly conditioned pencil: partial pivoting and refinement below
        lu = splu(A)
    else:
        # K - sigma M is SPD for the positive semi-definite K and definite M of this module's callers
        # when sigma lies below the lowest eigenvalue; a factor that finds otherwise falls back to LU
        lu = factorize(A, spd=True)
    rng = np.random.default_rng(12345)  # deterministic start vector
    v0 = rng.standard_normal(n)
    ncv = ncv or min(n - 1, max(2 * k + 2, k + 8))
    halves = None if pivoting else getattr(lu, "halves", None)
    if halves is not None:
        # the standard form: with F (K - sigma M) F^T = I, K x = lam M x is C y = nu y for the
        # symmetric C = F M F^T, nu = 1 / (lam - sigma), x = F^T y.  Lanczos on C needs one M
        # product per step; the generalized mode needs three (the M-norms of its re-orthogonalisation),
        # which at 1.1e6 P4 unknowns were 7 s of 16 (each product reads the whole M from memory)
        fwd, bwd = halves
        op = LinearOperator((n, n), matvec=lambda y: fwd(M @ bwd(y)), dtype=float)
        nu, Y = eigsh(op, k=k, which="LM", tol=tol, v0=v0, ncv=ncv,
                      maxiter=maxiter)
        lam, X = sigma + 1.0 / nu, np.asarray(bwd(Y))
        order = np.argsort(lam)
        return _normalised(K, M, lam[order], X[:, order])
    op = LinearOperator((n, n), matvec=_refined(A, lu) if pivoting else lu.solve, dtype=float)
    lam, X = eigsh(K, k=k, M=M, sigma=sigma, which="LM", OPinv=op, tol=tol, v0=v0,
                   ncv=ncv, maxiter=maxiter)
    order = np.argsort(lam)
    return _normalised(K, M, lam[order], X[:, order])


def _refined(A, lu):
    """x = A^-1 b by the factorisation and two steps of iterative refinement: a solve accurate to
    round-off in the residual even when A is badly conditioned (elements of very different sizes
    in one mesh: a thin gap in a large guide)."""
    def solve(b):
        x = lu.solve(b)
        for _ in range(2):
            x = x + lu.solve(b - A @ x)
        return x
    return solve


def _normalised(K, M, lam, X):
    """M-normalise the columns of X; residuals ||K x - lam M x|| / ||K x||."""
    MX = M @ X
    nrm = np.sqrt(np.abs(np.einsum("ij,ij->j", X, MX)))
    X = X / nrm
    MX = MX / nrm
    KX = K @ X
    res = np.linalg.norm(KX - MX * lam, axis=0) / np.maximum(np.linalg.norm(KX, axis=0), 1e-300)
    return lam, X, res


def _round_off(K, M, lam, X):
    """The round-off floor of the residuals of :func:`_normalised`: eps ||(|K| |x| + |lam| |M| |x|)||
    / ||K x||, what computing K x - lam M x in double precision leaves even for an exact pair
    (large where the entries of K x cancel: elements of very different sizes in one mesh)."""
    A = abs(X)
    bound = abs(K) @ A + (abs(M) @ A) * abs(lam)
    KX = K @ X
    return np.finfo(float).eps * np.linalg.norm(bound, axis=0) / np.maximum(np.linalg.norm(KX, axis=0), 1e-300)


def _polish(K, M, lam, X, shift):
    """One block inverse iteration from X with a pivoting factorisation of K - shift M, then
    Rayleigh-Ritz on the span of X and the iterate (the k lowest Ritz pairs)."""
    k = X.shape[1]
    A = (K - shift * M).tocsc()
    Y = _refined(A, splu(A))(np.asarray(M @ X))
    V, _ = np.linalg.qr(np.hstack([X, Y]))
    Kr, Mr = V.T @ (K @ V), V.T @ (M @ V)
    w, Z = scipy.linalg.eigh(0.5 * (Kr + Kr.T), 0.5 * (Mr + Mr.T))
    return _normalised(K, M, w[:k], V @ Z[:, :k])


def restrict(A, idx):
    """Sub-matrix A[idx][:, idx] of a sparse matrix (CSR)."""
    return A[idx][:, idx].tocsr()
