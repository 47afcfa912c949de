"""MKL PARDISO through ctypes: factorise a sparse matrix once, solve with it many times.

The optional backend of :mod:`femodes.solvers.backends` (``pip install 'femodes[mkl]'``: Intel's
``mkl`` wheel, x86-64 only, about 1 GB).  Nothing here is imported by femodes unless that backend is
asked for or chosen; without the wheel :func:`load` returns None and femodes uses SuperLU / cholespy.

PARDISO keeps its factor in an opaque handle (64 pointers, ``pt``).  One :class:`PardisoFactor` owns
one handle: phase 12 (ordering, symbolic and numerical factorisation) runs once in the constructor,
every :meth:`PardisoFactor.solve` is a phase 33 (forward / backward substitution, and PARDISO's own
iterative refinement when pivots were perturbed) on the stored factor, without analysing or
hashing the matrix again, and phase -1 frees the handle's memory when the factor is released
(:meth:`PardisoFactor.release`, or when the object is garbage collected).

Matrix types used (PARDISO's ``mtype``): 2, real symmetric positive definite (Cholesky L L^T: the
shifted pencils K - sigma M of homogeneous guides); -2, real symmetric indefinite (L D L^T with
Bunch-Kaufman pivoting and pivot perturbation 1e-8: the loaded guide's operator and the saddle-point
matrix of its cutoffs); 11, real unsymmetric (LU).  Symmetric types receive the upper triangle, the
whole diagonal stored (zeros included, which PARDISO requires), column indices sorted, 0-based
(``iparm[34] = 1``).

Inertia: for mtype -2 PARDISO reports the numbers of positive and negative pivots of D
(``iparm[21]``, ``iparm[22]``), which by Sylvester's law of inertia are the numbers of positive and
negative eigenvalues of the matrix when no pivot was perturbed.  The caller that knows the inertia the
matrix must have (see femodes.solvers.vector.problem) passes it; a factorisation that disagrees is
not trusted (:class:`InertiaMismatch`).

Threads: femodes holds every library to one thread (DEVELOPERS.md, thread policy); MKL's sequential
threading layer is selected before its first call, so no OpenMP runtime is loaded beside OpenBLAS.
Indices are 32-bit (MKL's LP64 interface), which limits a matrix to 2^31 - 1 stored entries.
"""

from __future__ import annotations

import ctypes
import ctypes.util
import os
import sys
import weakref
from functools import lru_cache

import numpy as np
import scipy.sparse as sp

__all__ = ["InertiaMismatch", "PardisoError", "PardisoFactor", "load", "memory_in_use"]

_PT = np.ctypeslib.ndpointer(np.int64, ndim=1, shape=(64,), flags="C_CONTIGUOUS")
_IPARM = np.ctypeslib.ndpointer(np.int32, ndim=1, shape=(64,), flags="C_CONTIGUOUS")
_INT = ctypes.POINTER(ctypes.c_int32)

#: PARDISO's error codes (the ``error`` argument), as its reference manual lists them
_ERRORS = {-1: "input inconsistent", -2: "not enough memory", -3: "reordering problem",
           -4: "zero pivot, numerical factorisation or iterative refinement problem",
           -5: "unclassified (internal) error", -6: "reordering failed", -7: "diagonal matrix is singular",
           -8: "32-bit integer overflow problem", -9: "not enough memory for the out-of-core solver",
           -10: "error opening out-of-core files", -11: "read/write error with out-of-core files",
           -12: "pardiso_64 called from a 32-bit library", -13: "interrupted by the user's callback",
           -15: "the matrix has changed since its analysis"}


class PardisoError(RuntimeError):
    """PARDISO returned an error code (``code``); -4 on a matrix declared SPD means it is not."""

    def __init__(self, code, phase):
        self.code, self.phase = int(code), int(phase)
        super().__init__(f"PARDISO phase {phase}: error {code} ({_ERRORS.get(int(code), 'unknown')})")


class InertiaMismatch(RuntimeError):
    """The symmetric indefinite factorisation's inertia is not the one the caller expected."""


def _library_paths():
    """Candidate paths of MKL's single dynamic library: the installed ``mkl`` wheel's files first,
    then the system's search path."""
    out = []
    try:
        import importlib.metadata as md

        for f in md.files("mkl") or ():
            if os.path.basename(str(f)).startswith(("libmkl_rt.so", "mkl_rt", "libmkl_rt.")):
                out.append(str(f.locate().resolve()))
    except Exception:  # no mkl distribution (PackageNotFoundError) or an unreadable RECORD
        pass
    found = ctypes.util.find_library("mkl_rt")
    if found:
        out.append(found)
    return out


@lru_cache(maxsize=1)
def load():
    """MKL's runtime library with the PARDISO entry point declared, or None when it cannot be
    loaded (not installed, another platform, or an ILP64 interface already fixed in this process).

    The one cached object of this module: a process loads a shared library once.  Before any other
    MKL call it selects the LP64 interface (32-bit indices) and the sequential threading layer.
    """
    for path in _library_paths():
        try:
            lib = ctypes.CDLL(path)
            getattr(lib, "pardiso")  # the entry point must exist
        except (OSError, AttributeError):
            continue
        if lib.MKL_Set_Interface_Layer(0) != 0:  # MKL_INTERFACE_LP64
            return None
        lib.MKL_Set_Threading_Layer(1)  # MKL_THREADING_SEQUENTIAL (returns the layer in effect)
        lib.pardiso.restype = None
        lib.pardiso.argtypes = [_PT, _INT, _INT, _INT, _INT, _INT, ctypes.c_void_p, ctypes.c_void_p,
                                ctypes.c_void_p, ctypes.c_void_p, _INT, _IPARM, _INT, ctypes.c_void_p,
                                ctypes.c_void_p, _INT]
        lib.mkl_mem_stat.restype = ctypes.c_int64
        lib.mkl_mem_stat.argtypes = [_INT]
        lib.MKL_Set_Num_Threads_Local.restype = ctypes.c_int
        lib.MKL_Set_Num_Threads_Local.argtypes = [ctypes.c_int]
        return lib
    return None


def memory_in_use():
    """Bytes held by MKL's memory manager now (PARDISO's factors included); 0 without MKL."""
    lib = load()
    if lib is None:
        return 0
    count = ctypes.c_int32(0)
    return int(lib.mkl_mem_stat(ctypes.byref(count)))


def _int(v):
    return ctypes.byref(ctypes.c_int32(int(v)))


def call(lib, pt, mtype, phase, n, a, ia, ja, iparm, nrhs=1, b=None, x=None):
    """One call of ``pardiso(pt, maxfct=1, mnum=1, mtype, phase, n, a, ia, ja, perm, nrhs, iparm,
    msglvl=0, b, x, error)``; raises PardisoError on a nonzero error code.  (A module-level function
    so that a test can count the phases.)"""
    err = ctypes.c_int32(0)
    ptr = lambda arr: None if arr is None else arr.ctypes.data
    before = lib.MKL_Set_Num_Threads_Local(1)
    try:
        lib.pardiso(pt, _int(1), _int(1), _int(mtype), _int(phase), _int(n), ptr(a), ptr(ia), ptr(ja), None,
                    _int(nrhs), iparm, _int(0), ptr(b), ptr(x), ctypes.byref(err))
    finally:
        lib.MKL_Set_Num_Threads_Local(before)
    if err.value != 0:
        raise PardisoError(err.value, phase)


def _free(lib, pt, mtype, n, iparm):
    """Phase -1: release all memory of the handle (a finaliser: holds no reference to the factor)."""
    if np.any(pt):
        try:
            call(lib, pt, mtype, -1, n, None, None, None, iparm)
        finally:
            pt[:] = 0


def _debug(msg):
    if os.environ.get("FEMODES_DEBUG"):
        print("femodes:", msg, file=sys.stderr)


#: fill-reducing ordering per matrix type (PARDISO's iparm[1]: 0 minimum degree, 2 METIS nested
#: dissection).  SPD pencils of WR-90, P4, factorisation + 10 TE modes, best of 2, one thread
#: (2026-12-05): minimum degree 0.15 / 1.29 / 4.49 / 20.7 s against METIS 0.21 / 1.47 / 5.21 / 21.8 s
#: at 2.3e4 / 1.1e5 / 3.4e5 / 1.1e6 unknowns (METIS's factor is 10 % smaller, its ordering slower)
ORDERING = {2: 0, -2: 2, 11: 2}


def _upper(A):
    """The upper triangle of the square sparse A as CSR with sorted column indices, one entry per
    position and every diagonal entry stored (explicit zeros too), as PARDISO's symmetric types
    want it.  A CSR matrix whose diagonal is all stored is cut directly (0.1 s at 1.1e6 P4
    unknowns, against 0.5 s through COO)."""
    n = A.shape[0]
    if sp.isspmatrix_csr(A) or isinstance(A, sp.csr_array):
        A = A.copy() if not A.has_canonical_format else A
        A.sum_duplicates()
        row = np.repeat(np.arange(n, dtype=A.indices.dtype), np.diff(A.indptr))
        keep = A.indices >= row
        on_diag = np.count_nonzero(A.indices[keep] == row[keep])
        if on_diag == n:
            ptr = np.zeros(n + 1, dtype=np.int64)
            np.cumsum(np.bincount(row[keep], minlength=n), out=ptr[1:])
            return sp.csr_matrix((A.data[keep], A.indices[keep], ptr), shape=(n, n))
    U = sp.triu(A, format="coo")
    d = np.arange(n)
    U = sp.coo_matrix((np.concatenate([U.data, np.zeros(n)]), (np.concatenate([U.row, d]),
                       np.concatenate([U.col, d]))), shape=(n, n)).tocsr()
    U.sum_duplicates()
    return U


class PardisoFactor:
    """PARDISO's factorisation of the square sparse matrix A (phase 12, once).

    PardisoFactor(A, mtype, inertia=None, matching=None, refinement=0): ``mtype`` 2 (SPD), -2
    (symmetric indefinite) or 11 (unsymmetric); ``inertia`` (positive, negative) eigenvalue counts A
    must have, checked for mtype -2 (InertiaMismatch if they differ, the handle freed);
    ``matching`` scaling + weighted matching (None: for the indefinite types); ``refinement`` steps
    of iterative refinement per solve (0: PARDISO's default).  Attributes: ``nnz`` (entries of
    the factor, PARDISO's count), ``inertia`` (PARDISO's (positive, negative) for mtype -2, else
    None), ``perturbed`` (pivots PARDISO perturbed), ``memory`` (bytes PARDISO reported for the
    analysis peak and the factor).  PardisoError if PARDISO fails (code -4 for an mtype-2 matrix
    that is not positive definite).
    """

    def __init__(self, A, mtype, inertia=None, matching=None, refinement=0):
        lib = load()
        if lib is None:
            raise RuntimeError("MKL's runtime library (libmkl_rt) cannot be loaded")
        n = A.shape[0]
        if A.shape != (n, n):
            raise ValueError(f"a square matrix is needed, got shape {A.shape}")
        mtype = int(mtype)
        if mtype in (2, -2):
            U = _upper(A)
        else:
            U = sp.csr_matrix(A)
            U.sum_duplicates()  # sorted column indices, one entry per position
        if U.nnz >= 2 ** 31 - 1:
            raise ValueError(f"{U.nnz} stored entries exceed PARDISO's 32-bit indices")
        self._a = np.ascontiguousarray(U.data, dtype=np.float64)
        self._ia = np.ascontiguousarray(U.indptr, dtype=np.int32)
        self._ja = np.ascontiguousarray(U.indices, dtype=np.int32)
        self.n, self.mtype, self.backend = n, mtype, "pardiso"
        self._lib = lib
        self._pt = np.zeros(64, dtype=np.int64)
        iparm = np.zeros(64, dtype=np.int32)
        iparm[0] = 1    # iparm set here, not PARDISO's defaults
        iparm[1] = ORDERING.get(mtype, 2)
        iparm[7] = refinement  # iterative refinement steps (0: PARDISO's default, 2 when pivots were perturbed)
        iparm[9] = 13 if mtype == 11 else 8   # pivot perturbation 1e-13 (LU) / 1e-8 (symmetric)
        # scaling and weighted matching for the indefinite types.  Without them 19886 of 89707 pivots
        # of the loaded cutoffs' saddle point were perturbed (each solve then paid 2 refinement steps,
        # 3x), and on the loaded operator of a graded L-shaped mesh (no pivot perturbed) the modes'
        # discrete Gauss law held to 1e-7 instead of 1.7e-9 (SuperLU 1.5e-9): the solves lose digits
        if matching is None:
            matching = mtype in (11, -2)
        iparm[10] = iparm[12] = 1 if matching else 0
        iparm[17] = -1  # report the factor's entries
        iparm[34] = 1   # 0-based indices
        self._iparm = iparm
        self._finalizer = weakref.finalize(self, _free, lib, self._pt, mtype, n, iparm)
        call(lib, self._pt, mtype, 12, n, self._a, self._ia, self._ja, iparm)
        self.nnz = int(iparm[17])
        self.perturbed = int(iparm[13])
        self.memory = 1024 * int(max(iparm[14], iparm[15] + iparm[16]))
        self.inertia = (int(iparm[21]), int(iparm[22])) if mtype == -2 else None
        if self.inertia is not None:
            _debug(f"PARDISO L D L^T of {n} unknowns: inertia {self.inertia[0]} positive, {self.inertia[1]} "
                   f"negative (expected {tuple(inertia) if inertia is not None else 'not known'}), "
                   f"{self.perturbed} perturbed pivots")
        if inertia is not None and self.inertia is not None and self.inertia != tuple(int(v) for v in inertia):
            self.release()
            raise InertiaMismatch(f"PARDISO's inertia {self.inertia} differs from the expected {tuple(inertia)} "
                                  f"({self.perturbed} perturbed pivots)")

    def solve(self, b):
        """A^-1 b for a vector or an (n, m) block of columns (phase 33 on the stored factor)."""
        if not self._finalizer.alive:
            raise RuntimeError("this PARDISO factor has been released")
        b = np.asarray(b, dtype=np.float64)
        if b.shape[0] != self.n or b.ndim > 2:
            raise ValueError(f"right-hand side of shape {b.shape} for a matrix of order {self.n}")
        nrhs = 1 if b.ndim == 1 else b.shape[1]
        rhs = np.array(b, order="F", copy=True)  # column after column, as PARDISO reads them; a copy,
        # so that the caller's array (ARPACK's workspace) is never PARDISO's
        x = np.empty_like(rhs, order="F")
        if nrhs:
            call(self._lib, self._pt, self.mtype, 33, self.n, self._a, self._ia, self._ja, self._iparm,
                 nrhs, rhs, x)
        return x

    __call__ = solve

    def _phase(self, phase, b):
        if not self._finalizer.alive:
            raise RuntimeError("this PARDISO factor has been released")
        if self.mtype != 2:
            raise ValueError("forward / backward halves exist for the SPD type (mtype 2) only")
        b = np.asarray(b, dtype=np.float64)
        if b.shape[0] != self.n or b.ndim > 2:
            raise ValueError(f"right-hand side of shape {b.shape} for a matrix of order {self.n}")
        rhs = np.array(b, order="F", copy=True)
        x = np.empty_like(rhs, order="F")
        call(self._lib, self._pt, self.mtype, phase, self.n, self._a, self._ia, self._ja, self._iparm,
             1 if b.ndim == 1 else b.shape[1], rhs, x)
        return x

    def forward(self, b):
        """F b, the forward half of the SPD solve (phase 331): with the permuted Cholesky factor,
        F A F^T = I and A^-1 = F^T F, so that A^-1 b = backward(forward(b))."""
        return self._phase(331, b)

    def backward(self, b):
        """F^T b, the backward half of the SPD solve (phase 333); the transpose of :meth:`forward`."""
        return self._phase(333, b)

    def release(self):
        """Free PARDISO's memory for this factor now (phase -1); solving afterwards is an error."""
        self._finalizer()

    @property
    def released(self):
        return not self._finalizer.alive
