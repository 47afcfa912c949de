"""What the reference solutions share: SI constants, the RefMode record, labels and sorting,
argument checks, and the Bessel root machinery (zeros of J_nu, J'_nu and the cross products of the
annulus, by a sign-change scan plus Brent's method).
"""

import math
from dataclasses import dataclass
from typing import Callable, List

import numpy as np
from scipy import optimize, special

# ---------------------------------------------------------------------------
# Constants (CODATA 2018 values, written out so they do not change with scipy)
# ---------------------------------------------------------------------------
C0 = 299792458.0  #: speed of light in vacuum, m/s (exact)


MU0 = 1.25663706212e-6  #: vacuum permeability, N/A^2 (CODATA 2018)


EPS0 = 8.8541878128e-12  #: vacuum permittivity, F/m (CODATA 2018)


ETA0 = math.sqrt(MU0 / EPS0)  #: impedance of free space, ohm (~376.730)


_FAMILY_RANK = {"TEM": 0, "TE": 1, "TM": 2}


_PARITY_RANK = {None: 0, "cos": 0, "sin": 1}


_TIE_RTOL = 1e-12  # cutoffs this close are treated as degenerate when sorting


# ---------------------------------------------------------------------------
# Mode record
# ---------------------------------------------------------------------------
@dataclass(frozen=True)
class RefMode:
    """One reference mode.

    family  : "TE", "TM" or "TEM".
    kc      : cutoff wavenumber in rad/m.
    label   : conventional name, e.g. "TE10", "TM01", "TEc11".
    indices : the integer indices of the mode (meaning depends on the
              geometry, see the function that produced it), possibly followed
              by 'cos' / 'sin' for one member of a degenerate pair.
    """

    family: str
    kc: float
    label: str
    indices: tuple

    @property
    def fc(self) -> float:
        """Cutoff frequency in Hz of the empty (vacuum-filled) guide."""
        return C0 * self.kc / (2.0 * math.pi)

    def fc_in(self, eps_r: float = 1.0, mu_r: float = 1.0) -> float:
        """Cutoff frequency in Hz for a homogeneous filling (eps_r, mu_r)."""
        if not (eps_r > 0 and mu_r > 0):
            raise ValueError("eps_r and mu_r must be positive")
        return self.fc / math.sqrt(eps_r * mu_r)

    @property
    def cutoff_wavelength(self) -> float:
        """Free-space cutoff wavelength 2 pi / kc in metres (inf for TEM)."""
        return math.inf if self.kc == 0 else 2.0 * math.pi / self.kc


# ---------------------------------------------------------------------------
# Argument checks and small helpers
# ---------------------------------------------------------------------------
def _check_length(name: str, value) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a number, got {value!r}") from None
    if not math.isfinite(v) or v <= 0:
        raise ValueError(f"{name} must be a positive finite length in metres, got {value!r}")
    return v


def _check_count(n) -> int:
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)):
        raise ValueError(f"number of modes must be a non-negative integer, got {n!r}")
    if n < 0:
        raise ValueError(f"number of modes must be non-negative, got {n}")
    return int(n)


def mode_label(family: str, first: int, second: int, infix: str = "") -> str:
    """Conventional label: "TE10", "TM11", "TEc11"; comma when an index > 9."""
    sep = "," if (first > 9 or second > 9) else ""
    return f"{family}{infix}{first}{sep}{second}"


def _sort_modes(modes: List[RefMode]) -> List[RefMode]:
    """Sort by kc; near-equal kc (relative 1e-12) ordered TE, TM, then indices."""

    def tie_key(m: RefMode):
        ints = tuple(i for i in m.indices if isinstance(i, (int, np.integer)))
        par = [i for i in m.indices if isinstance(i, str)]
        return (_FAMILY_RANK[m.family], ints, _PARITY_RANK[par[0] if par else None])

    modes = sorted(modes, key=lambda m: m.kc)
    out: List[RefMode] = []
    i = 0
    while i < len(modes):
        j = i + 1
        while j < len(modes) and modes[j].kc - modes[i].kc <= _TIE_RTOL * max(modes[i].kc, 1e-300):
            j += 1
        out.extend(sorted(modes[i:j], key=tie_key))
        i = j
    return out


def _collect_first(n: int, k_start: float, modes_below: Callable[[float], List[RefMode]]) -> List[RefMode]:
    """Grow the search limit until at least n modes lie below it; keep the first n.

    ``modes_below(kmax)`` must return *all* modes with kc <= kmax.
    """
    if n == 0:
        return []
    kmax = k_start
    while True:
        found = _sort_modes(modes_below(kmax))
        # keep a margin so that a degenerate partner just above kmax is not lost
        if len(found) >= n and found[n - 1].kc <= kmax * (1.0 - 1e-9):
            return found[:n]
        kmax *= 1.6


def _weyl_k(area: float, n: int) -> float:
    """kc below which roughly n Dirichlet+Neumann eigenvalues lie (Weyl's law:
    N(k) ~ area k^2 / (4 pi) for each boundary condition)."""
    return math.sqrt(4.0 * math.pi * (n + 4) / (2.0 * area))


def _pair(family: str, kc: float, order: int, m: int, infix: str = "") -> List[RefMode]:
    label = mode_label(family, order, m, infix)
    if order == 0:
        return [RefMode(family, float(kc), label, (0, m))]
    return [RefMode(family, float(kc), label, (order, m, "cos")),
            RefMode(family, float(kc), label, (order, m, "sin"))]


# ---------------------------------------------------------------------------
# Root finding for Bessel equations of real order
# ---------------------------------------------------------------------------
_SCAN_POINTS_PER_PI = 24  # grid points per pi/R in k; roots are >~ 0.96 pi/R apart


def _scan_roots(func: Callable[[np.ndarray], np.ndarray], k_lo: float, k_hi: float,
                step: float) -> List[float]:
    """All sign changes of func on (k_lo, k_hi], refined by brentq.

    func must accept arrays. An exact zero on a grid node is kept as a root.
    """
    if k_hi <= k_lo:
        return []
    num = int(math.ceil((k_hi - k_lo) / step)) + 1
    grid = np.linspace(k_lo, k_hi, num + 1)
    with np.errstate(all="ignore"):
        vals = np.asarray(func(grid), dtype=float)
    if not np.all(np.isfinite(vals)):
        bad = grid[~np.isfinite(vals)]
        raise ArithmeticError(f"non-finite function value in root scan at k = {bad[:3]}")
    roots = []
    scalar = lambda k: float(func(np.array([k]))[0])  # noqa: E731
    for i in range(num):
        v0, v1 = vals[i], vals[i + 1]
        if v0 == 0.0 and i > 0:
            roots.append(float(grid[i]))
        elif v0 * v1 < 0:
            r = optimize.brentq(scalar, grid[i], grid[i + 1], xtol=1e-300,
                                rtol=4 * np.finfo(float).eps, maxiter=200)
            roots.append(float(r))
    if vals[-1] == 0.0:
        roots.append(float(grid[-1]))
    return roots


def bessel_roots(order: float, radius: float, kmax: float, derivative: bool = False,
                 points_per_pi: int = _SCAN_POINTS_PER_PI) -> List[float]:
    """Positive k <= kmax with J_nu(k R) = 0 (or J_nu'(k R) = 0), nu >= 0 real.

    The zero k = 0 of J_nu' (nu = 0) and of J_nu (nu > 0) is never reported.
    All zeros of J_nu and J_nu' lie above nu / R for nu > 0, so the scan starts
    there. Uses scipy.special.jv / jvp.
    """
    if order < 0:
        raise ValueError("Bessel order must be >= 0")
    if derivative and order == 0:
        # J_0' = -J_1: same zeros, and identical numbers for the TE0m/TM1m tie
        return bessel_roots(1.0, radius, kmax, False, points_per_pi)
    fn = special.jvp if derivative else special.jv
    k_lo = order / radius if order > 0 else 0.5 * math.pi / radius / points_per_pi
    func = lambda k: fn(order, k * radius)  # noqa: E731
    return _scan_roots(func, k_lo, kmax, math.pi / radius / points_per_pi)


def _cross(order: float, a: float, b: float, derivative: bool) -> Callable[[np.ndarray], np.ndarray]:
    """Scaled cross product for the annulus a < r < b:

    TM (Dirichlet): J_nu(k a) Y_nu(k b) - J_nu(k b) Y_nu(k a)
    TE (Neumann):   J_nu'(k a) Y_nu'(k b) - J_nu'(k b) Y_nu'(k a)

    divided by max(1, |Y(k a)|) (a positive continuous factor, so the zeros are
    unchanged) to avoid overflow where k a << nu.
    """
    jf, yf = (special.jvp, special.yvp) if derivative else (special.jv, special.yv)
    # sign of Y_nu (negative) or Y_nu' (positive) where it overflows (k a << nu)
    overflow_sign = 1.0 if derivative else -1.0

    def func(k):
        k = np.asarray(k, dtype=float)
        with np.errstate(all="ignore"):
            ja, jb = jf(order, k * a), jf(order, k * b)
            ya, yb = yf(order, k * a), yf(order, k * b)
            big = ~np.isfinite(ya)
            scale = np.where(big, 1.0, np.maximum(1.0, np.abs(ya)))
            ya_s = np.where(big, overflow_sign, ya / scale)
            ja_s = np.where(big, 0.0, ja / scale)
            return ja_s * yb - jb * ya_s

    return func


def annulus_roots(order: float, inner_radius: float, outer_radius: float, kmax: float,
                  derivative: bool = False, points_per_pi: int = _SCAN_POINTS_PER_PI) -> List[float]:
    """Positive k <= kmax solving the annulus cross-product equation of order nu.

    derivative=False: J_nu(k a) Y_nu(k b) - J_nu(k b) Y_nu(k a) = 0 (Dirichlet
    on r = a and r = b); derivative=True: the same with J', Y' (Neumann).
    These are the eigenvalues of the radial Sturm-Liouville problem
    -(r u')' + nu^2 u / r = k^2 r u on [a, b]; by the Rayleigh quotient all lie
    above nu / b, so the scan starts there. Consecutive roots are never
    closer than about 0.96 pi / b (WKB; checked numerically for b/a from 1.01
    to 1000 and orders 0..40), so the default step pi / (24 b) leaves more
    than 20 grid steps between roots; the scaled cross product is smooth (no
    poles), so no root is missed or invented (tests rescan 4x finer).
    """
    a, b = inner_radius, outer_radius
    if not 0 < a < b:
        raise ValueError("need 0 < inner_radius < outer_radius")
    if order < 0:
        raise ValueError("Bessel order must be >= 0")
    if derivative and order == 0:
        # J_0' = -J_1, Y_0' = -Y_1: the TE0m equation is the TM1m equation
        return annulus_roots(1.0, a, b, kmax, False, points_per_pi)
    step = math.pi / b / points_per_pi
    k_lo = order / b if order > 0 else 0.5 * step
    return _scan_roots(_cross(order, a, b, derivative), k_lo, kmax, step)
