"""Independent reference cutoffs for hollow metal (PEC) waveguides.

This module is the yardstick for the finite-element solver, so it must never
depend on it: it imports only numpy, scipy, math, dataclasses and typing.
Everything is in SI units (metres, rad/m, Hz).

Besides the cutoffs of hollow guides it gives the propagation constants of a few guides
loaded with dielectric at a frequency: layered rectangular guides (LSE / LSM,
:func:`layered_guide_modes`) and the circular guide with a concentric dielectric rod (hybrid
HE / EH modes, :func:`rod_in_circular_guide_betas`).

Physics
-------
For a uniform guide along z with a perfectly conducting wall, the fields of a
mode vary as exp(j(w t - beta z)) with beta**2 = k**2 - kc**2, where the
cutoff wavenumber kc depends only on the cross-section:

* TM modes (Hz = 0): Ez solves the Helmholtz equation
  ``lap_t Ez + kc**2 Ez = 0`` with the Dirichlet condition ``Ez = 0`` on the
  wall, so kc**2 are the eigenvalues of the Dirichlet Laplacian.
* TE modes (Ez = 0): Hz solves the same equation with the Neumann condition
  ``dHz/dn = 0`` on the wall; kc**2 are the *nonzero* Neumann eigenvalues (the
  constant Hz with kc = 0 is not a mode).
* TEM modes (kc = 0) exist only when the cross-section has more than one
  conductor, e.g. the coaxial line.

The cutoff frequency of a mode in a guide filled with a medium of relative
permittivity eps_r and permeability mu_r is
``fc = C0 * kc / (2 pi sqrt(eps_r mu_r))``.

Every mode is returned as a :class:`RefMode`; lists are sorted by kc.

Closed forms are used where they exist (rectangle, circle); Bessel
cross-product equations are solved by a sign-change scan plus Brent's method
(coax, sectors); the ellipse uses Mathieu functions computed here from their
Fourier coefficients (not scipy's Mathieu routines, see :func:`ellipse_modes`)
and is cross-checked by an independent polynomial Ritz method
(:func:`ellipse_ritz_kc`).
"""

import math
from dataclasses import dataclass
from typing import Callable, List, Tuple

import numpy as np
from scipy import linalg, optimize, special

__all__ = [
    "C0", "MU0", "EPS0", "ETA0", "RefMode", "mode_label",
    "rectangle_kc", "rectangle_modes", "RectangularGuide", "WR90_A", "WR90_B", "wr90",
    "circle_modes", "bessel_roots", "annulus_roots",
    "coax_modes", "coax_te11_estimate", "coax_tem_impedance",
    "sector_modes", "equilateral_triangle_modes", "right_isosceles_triangle_modes",
    "L_SHAPE_DIRICHLET", "L_SHAPE_NEUMANN", "l_shape_eigenvalue_mps",
    "mathieu_tridiagonal", "mathieu_characteristic", "ellipse_modes", "ellipse_ritz_kc",
    "rod_in_circular_guide_betas", "side_slab_te_m0_wall_loss",
    "SlabPeakAndVoltage", "side_slab_te_m0_peak_and_voltage",
    "eccentric_coax_capacitance", "two_wire_impedance", "shielded_pair_thin_wire", "wires_in_shield_capacitance",
    "wires_in_shield_conductor_attenuation",
    "rod_in_circular_guide_determinant", "rod_in_circular_guide_complex_beta2",
]

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


# ---------------------------------------------------------------------------
# Rectangle
# ---------------------------------------------------------------------------
def rectangle_kc(a: float, b: float, m: int, n: int) -> float:
    """kc = sqrt((m pi / a)^2 + (n pi / b)^2) of the TE_mn / TM_mn mode."""
    return math.hypot(m * math.pi / a, n * math.pi / b)


def rectangle_modes(a: float, b: float, n: int) -> List[RefMode]:
    """First n modes of an a (along x) by b (along y) rectangular metal guide.

    TM_mn: Ez = sin(m pi x / a) sin(n pi y / b), m, n >= 1 (Dirichlet).
    TE_mn: Hz = cos(m pi x / a) cos(n pi y / b), m, n >= 0 not both 0 (Neumann).
    Both have kc = sqrt((m pi/a)^2 + (n pi/b)^2). Sorted by kc, ties broken
    TE before TM, then by (m, n). indices = (m, n).
    """
    a = _check_length("a", a)
    b = _check_length("b", b)
    n = _check_count(n)

    def below(kmax: float) -> List[RefMode]:
        out = []
        for m in range(int(kmax * a / math.pi) + 1):
            for p in range(int(kmax * b / math.pi) + 1):
                kc = rectangle_kc(a, b, m, p)
                if kc > kmax or (m == 0 and p == 0):
                    continue
                out.append(RefMode("TE", kc, mode_label("TE", m, p), (m, p)))
                if m >= 1 and p >= 1:
                    out.append(RefMode("TM", kc, mode_label("TM", m, p), (m, p)))
        return out

    return _collect_first(n, max(_weyl_k(a * b, n), 1.01 * math.pi / max(a, b)), below)


@dataclass(frozen=True)
class RectangularGuide:
    """A named standard rectangular guide; a, b are the inner dimensions in m."""

    name: str
    a: float
    b: float

    def modes(self, n: int) -> List[RefMode]:
        """First n modes, see :func:`rectangle_modes`."""
        return rectangle_modes(self.a, self.b, n)

    @property
    def te10_fc(self) -> float:
        """TE10 cutoff frequency C0 / (2 a) in Hz."""
        return C0 / (2.0 * self.a)


#: WR-90 (X band, EIA standard): inner 0.900 in x 0.400 in = 22.86 mm x 10.16 mm.
#: TE10 cutoff C0/(2a) = 6.557 GHz.
WR90_A = 22.86e-3
WR90_B = 10.16e-3
wr90 = RectangularGuide("WR-90", WR90_A, WR90_B)


# ---------------------------------------------------------------------------
# Circle
# ---------------------------------------------------------------------------
def circle_modes(radius: float, n: int) -> List[RefMode]:
    """First n mode objects of a circular metal guide of the given radius.

    TM_nm: Ez = J_n(kc r) cos/sin(n phi), J_n(kc R) = 0, kc R = j_{n,m}.
    TE_nm: Hz = J_n(kc r) cos/sin(n phi), J_n'(kc R) = 0, kc R = j'_{n,m}
    (m-th positive zero; for n = 0 the zero at the origin is excluded).
    Zeros from scipy.special.jn_zeros / jnp_zeros. Each n >= 1 mode is a
    degenerate pair, returned as two entries with indices (n, m, 'cos') and
    (n, m, 'sin') and the same label; n = 0 modes appear once with (0, m).
    Since J_0' = -J_1, TE_0m and TM_1m are exactly degenerate; TE is listed
    first. The last pair may be cut in two if n falls between its members.
    """
    radius = _check_length("radius", radius)
    n = _check_count(n)

    def below(kmax: float) -> List[RefMode]:
        xmax = kmax * radius
        count = int(xmax / math.pi) + 3  # zeros of J_n, J_n' below x are fewer
        out = []
        order = 0
        while order <= xmax:  # j_{n,1}, j'_{n,1} > n (n > 0)
            for family, zeros in (("TE", special.jnp_zeros(order, count)),
                                  ("TM", special.jn_zeros(order, count))):
                for m, z in enumerate(zeros, start=1):
                    if z > xmax:
                        break
                    out.extend(_pair(family, z / radius, order, m))
            order += 1
        return out

    return _collect_first(n, max(_weyl_k(math.pi * radius**2, n), 2.5 / radius), below)


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


# ---------------------------------------------------------------------------
# Coaxial line
# ---------------------------------------------------------------------------
def coax_modes(inner_radius: float, outer_radius: float, n: int) -> List[RefMode]:
    """First n mode objects of a coaxial line (metal at r = a and r = b, a < b).

    TEM (kc = 0) first, label "TEM", indices ().
    TM_nm: Ez = [J_n(kc r) Y_n(kc a) - Y_n(kc r) J_n(kc a)] cos/sin(n phi),
           kc from J_n(k a) Y_n(k b) - J_n(k b) Y_n(k a) = 0 (Dirichlet).
    TE_nm: Hz analogous, kc from J_n'(k a) Y_n'(k b) - J_n'(k b) Y_n'(k a) = 0
           (Neumann). m counts the roots from 1; TE_11 is the lowest
           higher-order mode, kc ~ 2 / (a + b).
    Degenerate pairs for n >= 1 as in :func:`circle_modes`. TE_0m and TM_1m
    are exactly degenerate (J_0' = -J_1, Y_0' = -Y_1).
    """
    a = _check_length("inner_radius", inner_radius)
    b = _check_length("outer_radius", outer_radius)
    if a >= b:
        raise ValueError(f"inner_radius ({a}) must be smaller than outer_radius ({b})")
    n = _check_count(n)
    if n == 0:
        return []
    tem = RefMode("TEM", 0.0, "TEM", ())

    def below(kmax: float) -> List[RefMode]:
        out = [tem]
        order = 0
        while order <= kmax * b:  # all roots of order n exceed n / b
            for family, deriv in (("TE", True), ("TM", False)):
                for m, k in enumerate(annulus_roots(order, a, b, kmax, deriv), start=1):
                    out.extend(_pair(family, k, order, m))
            order += 1
        return out

    # Weyl's estimate overshoots badly for thin gaps, where the low modes are
    # the TE_n1 at ~ 2n/(a+b); start from the smaller of the two.
    k0 = min(_weyl_k(math.pi * (b * b - a * a), n), (n // 2 + 2) * coax_te11_estimate(a, b))
    return _collect_first(n, k0, below)


def coax_te11_estimate(a: float, b: float) -> float:
    """Rule-of-thumb TE11 cutoff of a coax: kc ~ 2 / (a + b) (a inner, b outer radius).

    It is exact in the limit b/a -> 1 (the mean circumference equals one
    wavelength, error O(((b-a)/(b+a))^2)); compared with the exact root it is
    low by at most 2.8 % for 1 < b/a <= 8 (worst near b/a = 4) and within
    1 % at b/a = 10 (see the tests).
    """
    a = _check_length("a (inner radius)", a)
    b = _check_length("b (outer radius)", b)
    if a >= b:
        raise ValueError("inner radius a must be smaller than outer radius b")
    return 2.0 / (a + b)


def coax_tem_impedance(a: float, b: float, eps_r: float = 1.0) -> float:
    """Characteristic impedance of the TEM mode in ohms:

    Z0 = sqrt(L/C) = eta0 / (2 pi) * ln(b / a) / sqrt(eps_r) ~ 60 ln(b/a) / sqrt(eps_r),
    with L = mu0 ln(b/a) / (2 pi), C = 2 pi eps0 eps_r / ln(b/a) per metre.
    """
    a = _check_length("a (inner radius)", a)
    b = _check_length("b (outer radius)", b)
    if a >= b:
        raise ValueError("inner radius a must be smaller than outer radius b")
    if not eps_r > 0:
        raise ValueError("eps_r must be positive")
    return ETA0 / (2.0 * math.pi) * math.log(b / a) / math.sqrt(eps_r)


# ---------------------------------------------------------------------------
# Circular and annular sectors
# ---------------------------------------------------------------------------
def sector_modes(radius: float, angle: float, n: int, inner_radius: float = 0.0) -> List[RefMode]:
    """First n modes of a circular (or annular) sector guide with metal walls.

    The cross-section is 0 < phi < angle, inner_radius < r < radius, metal on
    both straight edges and on the arc(s). With nu = p pi / angle:

    TM_pm: Ez = Z_nu(kc r) sin(nu phi), p >= 1 (Dirichlet);
           inner_radius = 0: J_nu(kc R) = 0;
           inner_radius = a > 0: J_nu(k a) Y_nu(k R) - J_nu(k R) Y_nu(k a) = 0.
    TE_pm: Hz = Z_nu(kc r) cos(nu phi), p >= 0 (Neumann), the same with J', Y'
           (the constant, k = 0, for p = 0 is excluded).
    m counts the roots from 1. Orders are fractional in general
    (scipy.special.jv/yv/jvp/yvp + brentq). angle = 2 pi is a disc with a
    radial slit (nu = p / 2). No degenerate pairs: one entry per (family, p, m),
    indices (p, m), label e.g. "TM11", "TE10,1".
    """
    radius = _check_length("radius", radius)
    try:
        angle = float(angle)
    except (TypeError, ValueError):
        raise ValueError(f"angle must be a number, got {angle!r}") from None
    if not (0 < angle <= 2 * math.pi * (1 + 1e-14)):
        raise ValueError(f"sector angle must satisfy 0 < angle <= 2 pi, got {angle}")
    try:
        inner = float(inner_radius)
    except (TypeError, ValueError):
        raise ValueError(f"inner_radius must be a number, got {inner_radius!r}") from None
    if not (math.isfinite(inner) and 0 <= inner < radius):
        raise ValueError(f"need 0 <= inner_radius < radius, got {inner_radius} and {radius}")
    n = _check_count(n)

    def roots(order: float, kmax: float, deriv: bool) -> List[float]:
        if inner > 0:
            return annulus_roots(order, inner, radius, kmax, deriv)
        return bessel_roots(order, radius, kmax, deriv)

    def below(kmax: float) -> List[RefMode]:
        out = []
        p = 0
        while p * math.pi / angle <= kmax * radius:
            order = p * math.pi / angle
            for family, deriv in (("TE", True), ("TM", False)):
                if family == "TM" and p == 0:
                    continue
                for m, k in enumerate(roots(order, kmax, deriv), start=1):
                    out.append(RefMode(family, float(k), mode_label(family, p, m), (p, m)))
            p += 1
        return out

    area = 0.5 * angle * (radius**2 - inner**2)
    return _collect_first(n, max(_weyl_k(area, n), 2.0 / radius), below)


# ---------------------------------------------------------------------------
# L-shaped region (three unit squares: (-1,1)^2 minus [0,1] x [-1,0])
# ---------------------------------------------------------------------------
#: Lowest five Dirichlet Laplacian eigenvalues (kc^2, in units of 1/side^2) of
#: the L-shape (-1,1)^2 minus [0,1]x[-1,0] (three unit squares).
#: [0] Fox, Henrici & Moler (1967); Trefethen & Betcke (2006).
#: [1], [3], [4] recalled from memory, kept only to the digits that
#: :func:`l_shape_eigenvalue_mps` confirms (it gives 15.19725192645...,
#: 29.521481114..., 31.912635957...; the recalled 15.19725192586 was wrong in
#: the 11th digit and is truncated here).
#: [2] = 2 pi^2 exactly (Ez = sin(pi x) sin(pi y) vanishes on every side).
L_SHAPE_DIRICHLET = (9.6397238440219, 15.197251926, 2.0 * math.pi**2, 29.5214811, 31.9126360)

#: Lowest five nonzero Neumann Laplacian eigenvalues of the same L-shape
#: (= the 2D Maxwell eigenvalues of M. Dauge's benchmark collection; recalled
#: from memory). [2] = [3] = pi^2 exactly (Hz = cos(pi x), cos(pi y)); the
#: others agree with :func:`l_shape_eigenvalue_mps` to ~1e-10 relative.
L_SHAPE_NEUMANN = (1.47562182408, 3.53403136678, math.pi**2, math.pi**2, 11.3894793979)


def _l_shape_boundary(points_per_unit: int) -> Tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Points on the four sides away from the re-entrant corner, with normals."""
    t = (np.arange(points_per_unit) + 0.5) / points_per_unit
    t2 = (np.arange(2 * points_per_unit) + 0.5) / points_per_unit - 1.0
    segs = [
        (np.full_like(t, 1.0), t, (1.0, 0.0)),        # x = 1, 0 < y < 1
        (t2, np.full_like(t2, 1.0), (0.0, 1.0)),      # y = 1, -1 < x < 1
        (np.full_like(t2, -1.0), t2, (-1.0, 0.0)),    # x = -1, -1 < y < 1
        (t - 1.0, np.full_like(t, -1.0), (0.0, -1.0)),  # y = -1, -1 < x < 0
    ]
    x = np.concatenate([s[0] for s in segs])
    y = np.concatenate([s[1] for s in segs])
    nrm = np.concatenate([np.tile(s[2], (len(s[0]), 1)) for s in segs])
    return x, y, nrm


def _l_shape_sigma(lam: float, boundary: str, terms: int, xb, yb, nb, xi, yi) -> float:
    """Smallest singular value of the boundary block of the orthonormalised
    particular-solution basis (Betcke & Trefethen, SIAM Review 2005)."""
    k = math.sqrt(lam)
    nu = 2.0 * (np.arange(1, terms + 1) if boundary == "dirichlet" else np.arange(terms)) / 3.0

    def polar(x, y):
        r = np.hypot(x, y)
        th = np.mod(np.arctan2(y, x), 2 * np.pi)  # interior: 0 < th < 3 pi / 2
        return r, th

    rb, tb = polar(xb, yb)
    ri, ti = polar(xi, yi)
    if boundary == "dirichlet":
        ab = special.jv(nu, k * rb[:, None]) * np.sin(nu * tb[:, None])
    else:
        j = special.jv(nu, k * rb[:, None])
        # J_nu' = J_{nu-1} - (nu / x) J_nu (A&S 9.1.27)
        jr = k * (special.jv(nu - 1.0, k * rb[:, None]) - nu / (k * rb[:, None]) * j)
        c, s = np.cos(nu * tb[:, None]), np.sin(nu * tb[:, None])
        dr, dth = jr * c, -nu * j * s / rb[:, None]  # d/dr and (1/r) d/dtheta
        ct, st = np.cos(tb)[:, None], np.sin(tb)[:, None]
        dx = ct * dr - st * dth
        dy = st * dr + ct * dth
        ab = nb[:, :1] * dx + nb[:, 1:] * dy
    trig = np.sin if boundary == "dirichlet" else np.cos
    ai = special.jv(nu, k * ri[:, None]) * trig(nu * ti[:, None])
    q, _ = np.linalg.qr(np.vstack([ab, ai]))
    return float(np.linalg.svd(q[: len(xb)], compute_uv=False)[-1])


def l_shape_eigenvalue_mps(guess: float, boundary: str = "dirichlet", terms: int = 30,
                           window: float = 1e-3) -> float:
    """Refine an L-shape Laplacian eigenvalue near ``guess`` by the method of
    particular solutions (Fox, Henrici & Moler 1967; Betcke & Trefethen 2005).

    Domain (-1,1)^2 minus [0,1] x [-1,0]. Basis: J_nu(k r) sin(nu theta)
    (Dirichlet, nu = 2j/3, j >= 1) or J_nu(k r) cos(nu theta) (Neumann,
    nu = 2j/3, j >= 0) about the re-entrant corner; each satisfies the
    Helmholtz equation and the boundary condition on the two edges meeting
    there. sigma(lambda), the smallest singular value of the boundary block of
    the orthonormalised basis, vanishes (to a floor of ~1e-15 for terms ~ 30)
    at an eigenvalue and grows linearly away from it, so sigma^2 is locally a
    parabola: the minimiser is located on a grid over guess*(1 +- window) and
    then by two parabolic fits of sigma^2 with shrinking spacing (the second,
    at spacing 1e-7 guess, has a bias of order 1e-14 relative).
    """
    if boundary not in ("dirichlet", "neumann"):
        raise ValueError("boundary must be 'dirichlet' or 'neumann'")
    if not guess > 0:
        raise ValueError("guess must be positive")
    if not 0 < window < 0.5:
        raise ValueError("window must be in (0, 0.5)")
    xb, yb, nb = _l_shape_boundary(terms)
    rng = np.random.default_rng(12345)
    pts = rng.uniform(-1, 1, size=(2 * terms, 2))
    pts = pts[~((pts[:, 0] > 0) & (pts[:, 1] < 0))]
    args = (boundary, terms, xb, yb, nb, pts[:, 0], pts[:, 1])
    sig2 = lambda lam: _l_shape_sigma(lam, *args) ** 2  # noqa: E731
    grid = guess * (1.0 + np.linspace(-window, window, 5))
    x = float(grid[int(np.argmin([sig2(g) for g in grid]))])
    for d in (0.25 * window * guess, 1e-7 * guess):
        sm, s0, sp = sig2(x - d), sig2(x), sig2(x + d)
        curv = sp - 2.0 * s0 + sm
        if curv <= 0:
            break
        x -= d * (sp - sm) / (2.0 * curv)
    return x


# ---------------------------------------------------------------------------
# Ellipse (Mathieu functions, computed here)
# ---------------------------------------------------------------------------
# Elliptic coordinates: x = h cosh(xi) cos(eta), y = h sinh(xi) sin(eta),
# h = sqrt(a^2 - b^2), wall at xi0 with cosh(xi0) = a/h, sinh(xi0) = b/h.
# Separation of  lap u + k^2 u = 0  with q = (k h / 2)^2 gives
#   angular  Theta'' + (A - 2 q cos 2 eta) Theta = 0  -> ce_m, se_m,
#   radial   R''     - (A - 2 q cosh 2 xi) R     = 0  -> Mc_m^(1), Ms_m^(1).
# Four symmetry classes; for each, the Fourier coefficients are an
# eigenvector of a symmetric tridiagonal matrix (characteristic value A):
#   "ce_even": ce_{2j}   = sum_r A_{2r}   cos(2r eta)
#   "ce_odd" : ce_{2j+1} = sum_r A_{2r+1} cos((2r+1) eta)
#   "se_odd" : se_{2j+1} = sum_r B_{2r+1} sin((2r+1) eta)
#   "se_even": se_{2j+2} = sum_r B_{2r+2} sin((2r+2) eta)
# The radial functions of the first kind follow from the plane-wave integral
# u = int Theta(t) exp(i k (x cos t + y sin t)) dt, which separates as
# c Theta(eta) R(xi). Writing k (x cos t + y sin t) =
# sqrt(q) [e^xi cos(t - eta) + e^-xi cos(t + eta)], expanding both
# exponentials by Jacobi-Anger and taking the e^{i s eta} Fourier component
# gives (u1 = sqrt(q) e^xi, u2 = sqrt(q) e^-xi, r = 2 rho (+1), s = 2 sigma (+1))
#   Mc ~ sum (-1)^rho c_r [J_{rho-sigma}(u1) J_{rho+sigma+e}(u2) + (u1 <-> u2)]
#   Ms ~ sum (-1)^rho c_r [J_{rho-sigma}(u1) J_{rho+sigma+e}(u2) - (u1 <-> u2)]
# with e = 0 for even, 1 for odd orders, any pivot sigma with c_s != 0 (the
# classical Bessel-product series). The q-dependent factors are removed by
# normalising to R(0) = 1 (Mc) or R'(0) = 1 (Ms); these never vanish, since a
# solution with R(0) = R'(0) = 0 is identically zero. (Verified in the tests
# against direct integration of the radial ODE.)
_MATHIEU_CLASSES = ("ce_even", "ce_odd", "se_odd", "se_even")


def _class_orders(cls: str, count: int) -> np.ndarray:
    """Mathieu order m of the j-th characteristic value of a class."""
    j = np.arange(count)
    return {"ce_even": 2 * j, "ce_odd": 2 * j + 1, "se_odd": 2 * j + 1, "se_even": 2 * j + 2}[cls]


def _bessel_orders(cls: str, size: int) -> np.ndarray:
    """Fourier (and Bessel) orders 2r, 2r+1, ... used by a class."""
    return _class_orders(cls, size)


def mathieu_tridiagonal(cls: str, q: float, size: int) -> Tuple[np.ndarray, np.ndarray]:
    """Diagonal and off-diagonal of the symmetric Mathieu recurrence matrix.

    Substituting the Fourier series into Theta'' + (A - 2q cos 2 eta) Theta = 0
    gives (A - s_r^2) c_r = q (c_{r-1} + c_{r+1}) with the first row modified:
    ce_even: A c_0 = q c_2 (symmetrised with c_0 -> sqrt(2) c_0),
    ce_odd: (A - 1 - q) c_1 = q c_3, se_odd: (A - 1 + q) c_1 = q c_3,
    se_even: (A - 4) c_2 = q c_4. Eigenvalues are the characteristic values
    a_m(q) (ce) or b_m(q) (se), in increasing m.
    """
    s = _bessel_orders(cls, size).astype(float)
    diag = s * s
    off = np.full(size - 1, float(q))
    if cls == "ce_even":
        off[0] *= math.sqrt(2.0)
    elif cls == "ce_odd":
        diag[0] += q
    elif cls == "se_odd":
        diag[0] -= q
    return diag, off


def mathieu_characteristic(cls: str, q: float, count: int, size: int = 0) -> np.ndarray:
    """First ``count`` characteristic values of a class (a_m or b_m), increasing m."""
    size = max(size, _matrix_size(count, q))
    d, e = mathieu_tridiagonal(cls, q, size)
    return linalg.eigh_tridiagonal(d, e, eigvals_only=True, select="i", select_range=(0, count - 1))


def _matrix_size(count: int, q: float) -> int:
    return count + 30 + int(2.0 * math.sqrt(abs(q)))


def _mathieu_coefficients(cls: str, q: float, count: int, size: int = 0) -> np.ndarray:
    """Fourier coefficients (columns, unnormalised sign) of the first ``count``
    angular functions of a class; row r multiplies cos/sin(s_r eta)."""
    size = max(size, _matrix_size(count, q))
    d, e = mathieu_tridiagonal(cls, q, size)
    _, vec = linalg.eigh_tridiagonal(d, e)  # full solve is faster than a subset here
    vec = vec[:, :count]
    if cls == "ce_even":
        vec[0] /= math.sqrt(2.0)
    return vec


def _radial_conditions(cls: str, k: float, a: float, b: float, h: float,
                       count: int, size: int = 0) -> Tuple[np.ndarray, np.ndarray]:
    """Wall value (TM) and wall slope (TE) of the radial Mathieu functions of
    the first kind for the first ``count`` orders of a class, normalised to
    unit value (Mc) or unit slope (Ms) at xi = 0, i.e. the solution of the
    radial ODE with R(0) = 1, R'(0) = 0 (Mc) or R(0) = 0, R'(0) = 1 (Ms).

    Bessel-product series (see the module comments), with u1 = sqrt(q) e^xi,
    u2 = sqrt(q) e^-xi; at the wall u1 = k (a + b) / 2, u2 = k (a - b) / 2,
    and on the focal line u1 = u2 = k h / 2. The pivot s is the row of the
    largest Fourier coefficient, which keeps the series well conditioned.
    Returns (dirichlet, neumann); their zeros in k are the TM and TE cutoffs.
    """
    q = (0.5 * k * h) ** 2
    coef = _mathieu_coefficients(cls, q, count, size)
    nrow = coef.shape[0]
    rho = np.arange(nrow) + (1 if cls == "se_even" else 0)
    sigma = rho[np.argmax(np.abs(coef), axis=0)]
    alpha = rho[:, None] - sigma[None, :]
    beta = rho[:, None] + sigma[None, :] + (1 if cls in ("ce_odd", "se_odd") else 0)
    sign = 1.0 if cls.startswith("ce") else -1.0
    w = np.where(rho % 2 == 0, 1.0, -1.0)[:, None] * coef

    lo, hi = int(alpha.min()) - 1, int(beta.max()) + 1
    orders = np.arange(lo, hi + 1)

    def table(u: float) -> Tuple[Callable, Callable]:
        """J_n(u) and J_n'(u) = (J_{n-1} - J_{n+1}) / 2 for integer n, by lookup."""
        jn = special.jv(orders, u)
        jd = np.zeros_like(jn)
        jd[1:-1] = 0.5 * (jn[:-2] - jn[2:])
        return (lambda n: jn[n - lo]), (lambda n: jd[n - lo])

    def series(u1: float, u2: float) -> Tuple[np.ndarray, np.ndarray]:
        (j1, d1), (j2, d2) = table(u1), table(u2)
        ja1, jb1, ja2, jb2 = j1(alpha), j1(beta), j2(alpha), j2(beta)
        da1, db1, da2, db2 = d1(alpha), d1(beta), d2(alpha), d2(beta)
        val = ja1 * jb2 + sign * jb1 * ja2
        # d/dxi: du1/dxi = u1, du2/dxi = -u2
        der = (u1 * da1 * jb2 - u2 * ja1 * db2) + sign * (u1 * db1 * ja2 - u2 * jb1 * da2)
        return np.sum(w * val, axis=0), np.sum(w * der, axis=0)

    val_wall, der_wall = series(0.5 * k * (a + b), 0.5 * k * (a - b))
    val_axis, der_axis = series(0.5 * k * h, 0.5 * k * h)
    norm = val_axis if cls.startswith("ce") else der_axis
    return val_wall / norm, der_wall / norm


def _ellipse_class_roots(cls: str, a: float, b: float, kmax: float,
                         points_per_pi: int = 16) -> List[Tuple[str, int, int, float]]:
    """(family, m, n, kc) of all modes of one Mathieu class with kc <= kmax."""
    h = math.sqrt((a - b) * (a + b))
    # a_m(q) >= m^2 - 2q and a mode needs a_m <= 2q cosh(2 xi0), so m <= k a.
    m_max = int(kmax * a) + 1
    orders_all = _class_orders(cls, m_max + 1)
    count = int(np.sum(orders_all <= m_max))
    if count == 0:
        return []
    orders = orders_all[:count]
    size = _matrix_size(count, (0.5 * kmax * h) ** 2)
    step = math.pi / a / points_per_pi
    # For fixed (class, m) consecutive roots are >= ~0.99 pi / a apart (checked
    # numerically for b/a from 0.15 to 0.999), so pi / (16 a) resolves them.
    # Payne-Weinberger: nonzero Neumann eigenvalues >= pi^2 / diam^2 = (pi/2a)^2
    k_lo = 0.5 * math.pi / (2.0 * a)
    grid = np.linspace(k_lo, kmax, int(math.ceil((kmax - k_lo) / step)) + 2)
    vals = np.array([np.concatenate(_radial_conditions(cls, k, a, b, h, count, size)) for k in grid])
    out = []
    for col in range(2 * count):
        family = "TM" if col < count else "TE"
        j = col % count

        def f(k, j=j, family=family):
            d, nn = _radial_conditions(cls, k, a, b, h, j + 1, size)
            return (d if family == "TM" else nn)[j]

        v = vals[:, col]
        roots = []
        for i in range(len(grid) - 1):
            if v[i] == 0.0:
                roots.append(float(grid[i]))
            elif v[i] * v[i + 1] < 0:
                roots.append(optimize.brentq(f, grid[i], grid[i + 1], xtol=1e-300,
                                             rtol=4 * np.finfo(float).eps, maxiter=200))
        for nrad, k in enumerate(roots, start=1):
            out.append((family, int(orders[j]), nrad, float(k)))
    return out


def ellipse_modes(a: float, b: float, n: int) -> List[RefMode]:
    """First n modes of an elliptic metal guide with semi-axes a and b.

    Equation: Helmholtz in elliptic coordinates (see module comments), TM =
    Dirichlet (Mc_m^(1)(xi0, q) = 0 or Ms_m^(1)(xi0, q) = 0), TE = Neumann
    (their xi-derivatives vanish), with h = sqrt(a^2 - b^2), cosh(xi0) = a/h,
    q = (kc h / 2)^2. Labels "TEc11", "TMs12", ...: c = even Mathieu function
    ce_m (symmetric about the major axis), s = odd se_m, then the angular
    order m and the radial root number n (comma if either exceeds 9).
    indices = (m, n, 'cos') or (m, n, 'sin'). If b > a the axes are swapped,
    so labels always refer to the major axis; for the guide elongated along
    x the dominant mode is TEc11 (Hz odd in x, E mostly along the minor axis).
    a == b is the circle (circle_modes relabelled, TE_nm -> TEc/TEs_nm).

    The Mathieu functions are computed in this module (Fourier coefficients
    from a symmetric tridiagonal eigenproblem, radial functions of the first
    kind from their Bessel series), not with scipy.special.mathieu_*; results
    agree with the independent Ritz solver :func:`ellipse_ritz_kc` to about
    1e-11 relative and with direct integration of the radial ODE (tests).
    """
    a = _check_length("a", a)
    b = _check_length("b", b)
    n = _check_count(n)
    a, b = max(a, b), min(a, b)
    if a == b:
        out = []
        for m in circle_modes(a, n):
            order, rad = m.indices[0], m.indices[1]
            even = len(m.indices) == 2 or m.indices[2] == "cos"
            infix = "c" if even else "s"
            out.append(RefMode(m.family, m.kc, mode_label(m.family, order, rad, infix),
                               (order, rad, "cos" if even else "sin")))
        return out

    def below(kmax: float) -> List[RefMode]:
        modes = []
        for cls in _MATHIEU_CLASSES:
            parity = "cos" if cls.startswith("ce") else "sin"
            infix = parity[0]
            for family, m, nrad, kc in _ellipse_class_roots(cls, a, b, kmax):
                modes.append(RefMode(family, kc, mode_label(family, m, nrad, infix), (m, nrad, parity)))
        return modes

    return _collect_first(n, max(_weyl_k(math.pi * a * b, n), 2.0 / a), below)


# ---------------------------------------------------------------------------
# Ellipse: independent polynomial Ritz (Rayleigh-Ritz) check
# ---------------------------------------------------------------------------
def _chebyshev_table(x: np.ndarray, count: int) -> Tuple[np.ndarray, np.ndarray]:
    """T_n(x) and T_n'(x), n < count, by the three-term recurrences
    T_{n+1} = 2x T_n - T_{n-1},  T'_{n+1} = 2 T_n + 2x T'_n - T'_{n-1}."""
    t = np.zeros((max(count, 2), x.size))
    d = np.zeros_like(t)
    t[0], t[1], d[1] = 1.0, x, 1.0
    for k in range(1, count - 1):
        t[k + 1] = 2 * x * t[k] - t[k - 1]
        d[k + 1] = 2 * t[k] + 2 * x * d[k] - d[k - 1]
    return t[:count], d[:count]


def ellipse_ritz_kc(a: float, b: float, family: str, x_parity: int, y_parity: int,
                    degree: int = 30) -> np.ndarray:
    """Cutoffs kc of one symmetry class of an ellipse by a Ritz method.

    Independent of the Mathieu machinery: the ellipse is mapped to the unit
    disc (x = a X, y = b Y) and the Rayleigh quotient
    int |grad u|^2 / int u^2 is minimised over polynomials of total degree
    <= degree with the given parities in x and y (+1 even, -1 odd), built from
    Chebyshev products T_i(X) T_j(Y); TM (Dirichlet) multiplies them by the
    bubble 1 - X^2 - Y^2, TE (Neumann) uses them as they are (natural
    condition) and the kc = 0 constant is dropped from the result. Integrals
    use Gauss-Legendre in the radius and the trapezoid rule in angle, both
    exact for these polynomials. Agreement with :func:`ellipse_modes` is
    ~1e-11 relative for b/a >= 0.3 and ~1e-10 at b/a = 0.1 (round-off in the
    mass matrix limits it, not the degree).
    Eigenfunctions are entire, so the error falls faster than exponentially
    with the degree; the values are upper bounds (min-max). Returns kc sorted;
    only the lower part of the list (say the first degree/4) is accurate.

    Mathieu correspondence for a >= b: ce_{even m}: (+,+), ce_{odd m}: (-,+),
    se_{odd m}: (+,-), se_{even m}: (-,-) as (x_parity, y_parity).
    """
    a = _check_length("a", a)
    b = _check_length("b", b)
    if family not in ("TE", "TM"):
        raise ValueError("family must be 'TE' or 'TM'")
    if x_parity not in (1, -1) or y_parity not in (1, -1):
        raise ValueError("parities must be +1 or -1")
    if degree < 2:
        raise ValueError("degree must be >= 2")
    px, py = (0 if x_parity == 1 else 1), (0 if y_parity == 1 else 1)
    pairs = [(i, j) for i in range(px, degree + 1, 2) for j in range(py, degree + 1 - i, 2)]
    # Integrands are even in x and in y (products of same-parity functions), so
    # the trapezoid rule on nt shifted angles (nt divisible by 4, symmetric
    # under both reflections) is evaluated on the first quadrant only, times 4.
    nr = degree + 6
    nt = 4 * ((2 * degree + 12) // 4 + 1)
    rho, wr = np.polynomial.legendre.leggauss(nr)
    rho, wr = 0.5 * (rho + 1.0), 0.5 * wr
    th = 2 * np.pi * (np.arange(nt // 4) + 0.5) / nt
    R, TH = np.meshgrid(rho, th, indexing="ij")
    X, Y = (R * np.cos(TH)).ravel(), (R * np.sin(TH)).ravel()
    w = (wr[:, None] * rho[:, None] * np.full((1, nt // 4), 4 * 2 * np.pi / nt)).ravel()
    tx, dtx = _chebyshev_table(X, max(i for i, _ in pairs) + 1)
    ty, dty = _chebyshev_table(Y, max(j for _, j in pairs) + 1)
    ii = np.array([p[0] for p in pairs])
    jj = np.array([p[1] for p in pairs])
    phi = tx[ii] * ty[jj]
    phx = dtx[ii] * ty[jj]
    phy = tx[ii] * dty[jj]
    if family == "TM":
        bub = 1.0 - X * X - Y * Y
        phx = bub * phx - 2 * X * phi
        phy = bub * phy - 2 * Y * phi
        phi = bub * phi
    mass = (phi * w) @ phi.T
    stiff = (phx * w) @ phx.T / a**2 + (phy * w) @ phy.T / b**2
    # orthonormalise w.r.t. the mass matrix, dropping numerically dependent directions
    ev, U = np.linalg.eigh(mass)
    keep = ev > ev.max() * 1e-13
    T = U[:, keep] / np.sqrt(ev[keep])
    lam = np.linalg.eigvalsh(T.T @ stiff @ T)
    if family == "TE" and px == 0 and py == 0:
        lam = lam[1:]  # the constant (kc = 0) is not a mode
    return np.sqrt(np.clip(lam, 0.0, None))


# ===========================================================================
# Dielectric-loaded rectangular guides: LSE / LSM (longitudinal-section) modes
# ===========================================================================
# Independent references for the full-vector solver (femodes.vector); like the
# rest of this module they use only numpy, scipy and math.
#
# Geometry: PEC rectangle 0 <= x <= a, 0 <= y <= b, filled with homogeneous
# layers stacked along one axis (the "layered axis", y for a slab on the bottom
# wall, x for full-height slabs), uniform along the other.  Fields vary as
# exp(j(w t - beta z)).  In layer i the potentials solve the Helmholtz equation
# with   k_i^2 = eps_i mu_i k0^2 - k_u^2 - beta^2,
# k_u = p pi / (extent along the uniform axis) the uniform-direction
# wavenumber (Collin, Field Theory of Guided Waves, ch. 6; Harrington,
# Time-Harmonic Electromagnetic Fields, sec. 4.x: partially filled guides).
#
# LSE (TE to the layered axis s, E_s = 0): electric vector potential F = s psi,
#   E = -curl(F) / eps.  phi = psi / eps is continuous, phi' / mu continuous
#   (tangential E and H), phi = 0 on the walls normal to s (Dirichlet);
#   psi ~ cos(k_u u), p >= 0.
# LSM (TM to s, H_s = 0): magnetic vector potential A = s psi, H = curl(A) / mu.
#   phi = psi / mu continuous, phi' / eps continuous, phi' = 0 on the walls
#   normal to s (Neumann); psi ~ sin(k_u u), p >= 1.
#
# Both are Sturm-Liouville problems  -(phi'/w)' - (k_i^2 / w) phi = 0 with the
# weight w = mu (LSE) or eps (LSM); beta^2 enters as the eigenvalue with the
# positive weight 1/w, so the roots are real, simple, and the n-th one
# (descending beta^2) is counted exactly by the Pruefer angle.  For two layers
# (thicknesses d and h = b - d from the wall at s = 0) the transfer-matrix
# characteristic functions below reduce to the transverse-resonance equations
#   LSE:  (k1 / mu1) cot(k1 d) + (k2 / mu2) cot(k2 h) = 0,
#   LSM:  (k1 / eps1) tan(k1 d) + (k2 / eps2) tan(k2 h) = 0,
# written here without poles as functions of k_i^2 (entire, so evanescent
# layers with k_i^2 < 0 need no special case):
#   LSE:  mu2 h S(k2 h) cos(k1 d) + mu1 d S(k1 d) cos(k2 h) = 0,
#   LSM:  (k1^2 / eps1) d S(k1 d) cos(k2 h) + (k2^2 / eps2) h S(k2 h) cos(k1 d) = 0,
# S(x) = sin(x) / x.  Roots are bracketed by the exact Pruefer count (no root
# can be missed or doubled), then refined by Brent's method on the equation.
#
# Mode names: indices (i_x, i_y) are always along x then y.  Along the layered
# axis the index is the root number: LSE roots count from 1, LSM roots from 0
# (so that with eps = mu = 1 everywhere LSE_mn / LSM_mn have
# kc = sqrt((m pi/a)^2 + (n pi/b)^2): the empty guide's TE_mn/TM_mn pairs).
# At cutoff (beta = 0) an LSE mode with p >= 1 has only E_z ("TM-type"
# cutoff); LSM modes and LSE modes with p = 0 have only transverse E
# ("TE-type" cutoff).

__all__ += [
    "LayeredMode", "LayeredCutoff", "layered_guide_modes", "layered_guide_cutoffs",
    "slab_on_wall_modes", "centred_slab_layers", "side_slab_te_m0_equation", "filled_guide_modes",
]


@dataclass(frozen=True)
class LayeredMode:
    """One LSE / LSM mode of a layered rectangular guide at one frequency.

    family    : "LSE" or "LSM" (with respect to ``axis``, the layered axis)
    axis      : "y" (layers stacked in y) or "x"
    indices   : (i_x, i_y), see the section comment above
    beta2     : beta^2 in rad^2/m^2 (negative: evanescent)
    frequency : Hz
    """

    family: str
    axis: str
    indices: tuple
    beta2: float
    frequency: float

    @property
    def label(self) -> str:
        return mode_label(self.family, self.indices[0], self.indices[1]) + f"({self.axis})"

    @property
    def beta(self):
        """beta (rad/m) if propagating, else -1j * alpha (alpha in Np/m)."""
        if self.beta2 >= 0:
            return math.sqrt(self.beta2)
        return -1j * math.sqrt(-self.beta2)

    @property
    def propagating(self) -> bool:
        return self.beta2 > 0


@dataclass(frozen=True)
class LayeredCutoff:
    """Cutoff (beta = 0) of one LSE / LSM mode.

    field : "TM" where the field at cutoff is E_z only, "TE" where it is
            transverse E only (with H_z), see the section comment.
    """

    family: str
    axis: str
    indices: tuple
    k0: float
    field: str

    @property
    def frequency(self) -> float:
        return C0 * self.k0 / (2.0 * math.pi)

    @property
    def label(self) -> str:
        return mode_label(self.family, self.indices[0], self.indices[1]) + f"({self.axis})"


def _cos_sinc(k2: float, t: float) -> Tuple[float, float]:
    """cos(k t) and sin(k t)/(k t) as entire functions of k^2 (cosh, sinh for k^2 < 0)."""
    x2 = k2 * t * t
    if x2 > 1e-8:
        x = math.sqrt(x2)
        return math.cos(x), math.sin(x) / x
    if x2 < -1e-8:
        x = math.sqrt(-x2)
        return math.cosh(x), math.sinh(x) / x
    return 1.0 - x2 / 2.0 + x2 * x2 / 24.0, 1.0 - x2 / 6.0 + x2 * x2 / 120.0


def _check_layers(layers) -> List[Tuple[float, float, float]]:
    out = []
    try:
        items = list(layers)
    except TypeError:
        raise ValueError(f"layers must be a list of (thickness, eps_r, mu_r), got {layers!r}") from None
    if not items:
        raise ValueError("layers must hold at least one (thickness, eps_r, mu_r)")
    for i, lay in enumerate(items):
        try:
            t, e, m = (float(v) for v in lay)
        except (TypeError, ValueError):
            raise ValueError(f"layer {i} must be (thickness, eps_r, mu_r), got {lay!r}") from None
        if not (math.isfinite(t) and t > 0):
            raise ValueError(f"layer {i}: thickness must be a positive length in metres, got {t!r}")
        if not (math.isfinite(e) and e > 0 and math.isfinite(m) and m > 0):
            raise ValueError(f"layer {i}: eps_r and mu_r must be positive, got {e!r}, {m!r}")
        out.append((t, e, m))
    return out


class _LayeredLine:
    """One family (LSE or LSM) at one uniform wavenumber k_u and one k0: the 1-D problem along s."""

    def __init__(self, layers, family: str, k0: float, ku: float):
        self.layers = layers
        self.family = family
        self.k0 = k0
        self.ku = ku
        self.start = (0.0, 1.0) if family == "LSE" else (1.0, 0.0)  # (phi, phi'/w) at s = 0
        # all roots lie below max(eps mu) k0^2 - ku^2 (Rayleigh quotient bound)
        self.upper = max(e * m for _, e, m in layers) * k0 * k0 - ku * ku

    def _k2w(self, u):
        for t, e, m in self.layers:
            w = m if self.family == "LSE" else e
            yield t, e * m * self.k0 ** 2 - self.ku ** 2 - u, w

    def characteristic(self, u: float) -> float:
        """The end condition at s = b after transfer through all layers: phi(b) for LSE
        (Dirichlet), phi'(b)/w for LSM (Neumann), up to a positive factor.  Zero iff beta^2 = u
        is a mode."""
        phi, q = self.start
        for t, k2, w in self._k2w(u):
            c, s = _cos_sinc(k2, t)
            phi, q = phi * c + q * w * t * s, -phi * k2 * t * s / w + q * c
            r = math.hypot(phi, q)
            phi, q = phi / r, q / r  # positive rescaling: keeps sign and zeros
        return phi if self.family == "LSE" else q

    def angle(self, u: float) -> float:
        """Pruefer angle theta = atan2(phi, phi'/w) at s = b, continuous and decreasing in u."""
        phi, q = self.start
        theta = math.atan2(phi, q)
        for t, k2, w in self._k2w(u):
            # sub-steps keep cosh/sinh finite on strongly evanescent layers
            pieces = max(1, int(math.ceil(math.sqrt(abs(k2)) * t / 20.0)))
            dt = t / pieces
            for _ in range(pieces):
                c, s = _cos_sinc(k2, dt)
                nphi, nq = phi * c + q * w * dt * s, -phi * k2 * dt * s / w + q * c
                r = math.hypot(nphi, nq)
                nphi, nq = nphi / r, nq / r
                raw = math.atan2(nphi, nq)
                if k2 > 0:
                    # scaled angle alpha (tan alpha = k phi / (w q)) advances by exactly k dt and
                    # lies in the quadrant of theta
                    k = math.sqrt(k2)
                    a0 = math.atan2(k * phi, w * q)
                    a0 += 2 * math.pi * round((theta - a0) / (2 * math.pi))
                    a1 = a0 + k * dt
                    theta = raw + 2 * math.pi * round((a1 - raw) / (2 * math.pi))
                else:
                    # evanescent: theta crosses n pi only upwards and pi/2 + n pi only downwards,
                    # so it moves by less than pi: the nearest branch is the right one
                    theta = raw + 2 * math.pi * round((theta - raw) / (2 * math.pi))
                phi, q = nphi, nq
        return theta

    def count_above(self, u: float) -> int:
        """Number of modes with beta^2 > u (exact, from the Pruefer angle)."""
        th = self.angle(u)
        if self.family == "LSE":  # Dirichlet ends: roots at theta(b) = n pi, n >= 1
            return max(0, int(math.ceil(th / math.pi - 1e-12)) - 1)
        # Neumann ends: roots at theta(b) = pi/2 + n pi, n >= 0
        return max(0, int(math.ceil((th - math.pi / 2) / math.pi - 1e-12)))

    def roots(self, u_min: float) -> List[float]:
        """All roots beta^2 in (u_min, upper], descending."""
        scale = abs(self.upper) + self.k0 ** 2 + self.ku ** 2
        hi = self.upper + 1e-7 * scale  # a homogeneous guide has a root at upper exactly
        if u_min >= hi:
            return []
        n_hi = self.count_above(hi)
        if n_hi != 0:  # pragma: no cover - the bound is a theorem; guard anyway
            raise RuntimeError("a root above the Rayleigh bound: check the layer data")
        out: List[float] = []
        self._isolate(u_min, hi, self.count_above(u_min), 0, out, scale)
        return sorted(out, reverse=True)

    def _isolate(self, lo, hi, n_lo, n_hi, out, scale, depth=0):
        count = n_lo - n_hi
        if count <= 0:
            return
        if count == 1 or depth > 200:
            out.append(self._refine(lo, hi, scale))
            return
        mid = 0.5 * (lo + hi)
        n_mid = self.count_above(mid)
        self._isolate(lo, mid, n_lo, n_mid, out, scale, depth + 1)
        self._isolate(mid, hi, n_mid, n_hi, out, scale, depth + 1)

    def _refine(self, lo, hi, scale):
        f_lo, f_hi = self.characteristic(lo), self.characteristic(hi)
        tol = 4e-16 * scale
        if f_lo == 0.0:
            return lo
        if f_hi == 0.0:
            return hi
        if f_lo * f_hi < 0:
            return optimize.brentq(self.characteristic, lo, hi, xtol=tol, rtol=4 * np.finfo(float).eps,
                                   maxiter=500)
        # the equation lost the sign change in round-off: use the (monotone) Pruefer angle
        n = self.count_above(lo)
        target = n * math.pi if self.family == "LSE" else math.pi / 2 + (n - 1) * math.pi
        return optimize.brentq(lambda u: self.angle(u) - target, lo, hi, xtol=tol, maxiter=500)


def _layered_setup(a, b, layers, axis):
    a = _check_length("a", a)
    b = _check_length("b", b)
    if axis not in ("x", "y"):
        raise ValueError(f"axis must be 'x' or 'y' (the direction the layers are stacked in), got {axis!r}")
    layers = _check_layers(layers)
    total = sum(t for t, _, _ in layers)
    extent = b if axis == "y" else a
    if abs(total - extent) > 1e-9 * extent:
        raise ValueError(f"layer thicknesses add up to {total!r} m but the guide is {extent!r} m "
                         f"along {axis}; they must fill it exactly")
    # uniform extent: along x for axis y, along y for axis x
    return layers, (a if axis == "y" else b)


def _indices(axis, family, p, root):
    """(i_x, i_y) from the uniform index p and the 0-based root number."""
    n = root + (1 if family == "LSE" else 0)
    return (p, n) if axis == "y" else (n, p)


def layered_guide_modes(a: float, b: float, layers, frequency: float, count=None,
                        beta2_min=None, axis: str = "y") -> List[LayeredMode]:
    """LSE and LSM modes of a PEC a (x) by b (y) guide filled with layers stacked along ``axis``.

    layers    : [(thickness, eps_r, mu_r), ...] from the wall at 0 (y = 0 or x = 0) outwards;
                the thicknesses must add up to b (axis "y") or a (axis "x")
    frequency : Hz
    count     : return the first ``count`` modes in descending beta^2 (propagating first, then
                the least attenuated evanescent ones), or
    beta2_min : return every mode with beta^2 > beta2_min (rad^2/m^2).
    Exactly one of count, beta2_min must be given.
    """
    layers, width = _layered_setup(a, b, layers, axis)
    f = float(frequency)
    if not (math.isfinite(f) and f > 0):
        raise ValueError(f"frequency must be a positive number of Hz, got {frequency!r}")
    if (count is None) == (beta2_min is None):
        raise ValueError("give exactly one of count (number of modes) or beta2_min (rad^2/m^2)")
    k0 = 2 * math.pi * f / C0
    top = max(e * m for _, e, m in layers) * k0 * k0

    def collect(u_min):
        out = []
        for family, p0 in (("LSE", 0), ("LSM", 1)):
            p = p0
            while True:
                ku = p * math.pi / width
                if top - ku * ku <= u_min:
                    break
                line = _LayeredLine(layers, family, k0, ku)
                for r, u in enumerate(line.roots(u_min)):
                    out.append(LayeredMode(family, axis, _indices(axis, family, p, r), u, f))
                p += 1
        return sorted(out, key=lambda m: (-m.beta2, m.family, m.indices))

    if beta2_min is not None:
        return collect(float(beta2_min))
    n = _check_count(count)
    if n == 0:
        return []
    span = top + (math.pi / min(a, b)) ** 2
    u_min = top - span
    while True:
        found = collect(u_min)
        if len(found) >= n:
            return found[:n]
        u_min -= span
        span *= 2.0


def layered_guide_cutoffs(a: float, b: float, layers, count: int, axis: str = "y") -> List[LayeredCutoff]:
    """The ``count`` lowest cutoff frequencies (beta = 0) of the LSE / LSM modes of a layered
    guide (see :func:`layered_guide_modes`), ascending.

    For each family and uniform index, beta^2 of the n-th root increases with k0
    (d beta^2 / d k0^2 = int eps mu phi^2 / w / int phi^2 / w > 0), so the n-th cutoff is where
    the count of modes with beta^2 > 0 steps to n; that is bracketed exactly and refined by
    Brent's method on the characteristic equation at beta = 0.
    """
    layers, width = _layered_setup(a, b, layers, axis)
    n = _check_count(count)
    if n == 0:
        return []
    emu_min = min(e * m for _, e, m in layers)
    k_hi = math.pi / min(a, b) / math.sqrt(emu_min)

    def cutoffs_below(kmax):
        out = []
        for family, p0 in (("LSE", 0), ("LSM", 1)):
            p = p0
            while True:
                ku = p * math.pi / width
                kc_min = ku / math.sqrt(max(e * m for _, e, m in layers))
                if kc_min >= kmax:
                    break
                m_hi = _LayeredLine(layers, family, kmax, ku).count_above(0.0)
                ks = []
                _isolate_k0(layers, family, ku, kc_min, kmax, 0, m_hi, ks)
                for r, k in enumerate(sorted(ks)):
                    kind = "TM" if (family == "LSE" and p >= 1) else "TE"
                    out.append(LayeredCutoff(family, axis, _indices(axis, family, p, r), k, kind))
                p += 1
        return sorted(out, key=lambda c: (c.k0, c.family, c.indices))

    while True:
        found = cutoffs_below(k_hi)
        if len(found) >= n and found[n - 1].k0 < k_hi * (1 - 1e-9):
            return found[:n]
        k_hi *= 1.5


def _isolate_k0(layers, family, ku, lo, hi, n_lo, n_hi, out, depth=0):
    """Cutoffs k0 in (lo, hi] of one family and uniform wavenumber, by bisection on the count of
    modes with beta^2 > 0 (n_lo at k0 = lo, n_hi at k0 = hi) and Brent's method."""
    count = n_hi - n_lo
    if count <= 0:
        return
    if count == 1 or depth > 200:
        g = lambda k: _LayeredLine(layers, family, k, ku).characteristic(0.0)
        g_lo, g_hi = g(lo), g(hi)
        if g_lo * g_hi < 0:
            out.append(optimize.brentq(g, lo, hi, xtol=1e-15 * hi, rtol=4 * np.finfo(float).eps))
        else:
            nn = n_hi - 1
            target = (nn + 1) * math.pi if family == "LSE" else math.pi / 2 + nn * math.pi
            out.append(optimize.brentq(lambda k: _LayeredLine(layers, family, k, ku).angle(0.0) - target,
                                       lo, hi, xtol=1e-15 * hi))
        return
    mid = 0.5 * (lo + hi)
    n_mid = _LayeredLine(layers, family, mid, ku).count_above(0.0)
    _isolate_k0(layers, family, ku, lo, mid, n_lo, n_mid, out, depth + 1)
    _isolate_k0(layers, family, ku, mid, hi, n_mid, n_hi, out, depth + 1)


def slab_on_wall_modes(a: float, b: float, d: float, eps_r: float, frequency: float, count: int,
                       mu_r: float = 1.0) -> List[LayeredMode]:
    """First ``count`` modes (descending beta^2) of an a by b guide with a slab (eps_r, mu_r) of
    thickness d on the bottom wall (0 <= y <= d, full width) and vacuum above: LSE_y / LSM_y."""
    d = _check_length("d", d)
    if not d < b:
        raise ValueError(f"slab thickness d must be below the height b = {b!r} m, got {d!r}")
    return layered_guide_modes(a, b, [(d, eps_r, mu_r), (b - d, 1.0, 1.0)], frequency, count=count)


def centred_slab_layers(a: float, w: float, eps_r: float, mu_r: float = 1.0):
    """Layers along x of a full-height slab of width w centred in a guide of width a."""
    a = _check_length("a", a)
    w = _check_length("w", w)
    if not w < a:
        raise ValueError(f"slab width w must be below the guide width a = {a!r} m, got {w!r}")
    g = 0.5 * (a - w)
    return [(g, 1.0, 1.0), (w, eps_r, mu_r), (a - g - w, 1.0, 1.0)]


def side_slab_te_m0_equation(beta2: float, a: float, t: float, eps_r: float, k0: float) -> float:
    """Textbook form of the TE_m0 (E_y only) equation of a full-height slab eps_r of width t
    against the side wall x = 0 (vacuum for t < x < a):

        k_d cot(k_d t) + k_a cot(k_a l) = 0,   l = a - t,
        k_d^2 = eps_r k0^2 - beta^2,   k_a^2 = k0^2 - beta^2

    (Pozar, Microwave Engineering, sec. 3.3, TE_m0 modes of a partially loaded guide; from
    memory), multiplied by sin(k_d t) sin(k_a l) / (k_d k_a) to remove the poles:

        cos(k_d t) sin(k_a l) / k_a + cos(k_a l) sin(k_d t) / k_d = 0,

    with cos -> cosh, sin(k x)/k -> sinh(kappa x)/kappa where k^2 = -kappa^2 < 0.  Written out
    separately from the transfer matrices of :func:`layered_guide_modes` (axis "x"), to check them.
    """
    l = a - t
    cd, sd = _cos_and_sin_over_k(eps_r * k0 * k0 - beta2, t)
    ca, sa = _cos_and_sin_over_k(k0 * k0 - beta2, l)
    return cd * sa + ca * sd


def _cos_and_sin_over_k(k2: float, x: float) -> Tuple[float, float]:
    """(cos(k x), sin(k x) / k) for k^2 = k2 > 0; (cosh, sinh(kappa x) / kappa) for k2 = -kappa^2
    < 0; (1, x) at k2 = 0: the transverse standing waves of a layer, continuous in k2."""
    if k2 > 0:
        k = math.sqrt(k2)
        return math.cos(k * x), math.sin(k * x) / k
    if k2 < 0:
        k = math.sqrt(-k2)
        return math.cosh(k * x), math.sinh(k * x) / k
    return 1.0, x


def _side_slab_profile(a, t, eps_r, k0, beta2):
    """E_y(x) and dE_y/dx of the TE_m0 mode of a guide of width a with a full-height slab eps_r of
    width t against the wall x = 0 (unnormalised): sin(k_d x)/k_d in the slab, A sin(k_a (a - x))/k_a
    in the air, A from the continuity of E_y at x = t (k_d^2 = eps_r k0^2 - beta^2, k_a^2 = k0^2 -
    beta^2; sin(k x)/k -> sinh(kappa x)/kappa for k^2 < 0)."""
    cs = _cos_and_sin_over_k
    kd2, ka2 = eps_r * k0 * k0 - beta2, k0 * k0 - beta2
    amp = cs(kd2, t)[1] / cs(ka2, a - t)[1]

    def e(x):
        return cs(kd2, x)[1] if x <= t else amp * cs(ka2, a - x)[1]

    def de(x):
        return cs(kd2, x)[0] if x <= t else -amp * cs(ka2, a - x)[0]

    return e, de


def side_slab_te_m0_wall_loss(a: float, b: float, t: float, eps_r: float, frequency: float,
                              beta2: float, surface_resistance: float) -> float:
    """Wall-loss attenuation alpha_c (Np/m) of a TE_m0 mode (E_y(x) only) of the guide a x b
    with a full-height slab eps_r of width t against the side wall x = 0, by the power-loss method
    (Pozar, Microwave Engineering, sec. 3.3 and 3.1, from memory), from the exact fields:

        E_y = sin(k_d x) / k_d (x < t),   A sin(k_a (a - x)) / k_a (x > t),   A from E_y at x = t,
        H_x = -beta E_y / (omega mu0),    H_z = (j / (omega mu0)) dE_y/dx,
        P = beta b int E_y^2 dx / (2 omega mu0),
        oint |H_tan|^2 dl = [2 int (beta^2 E_y^2 + E_y'^2) dx + b (E_y'(0)^2 + E_y'(a)^2)] / (omega mu0)^2
        alpha_c = R_s oint |H_tan|^2 dl / (4 P)

    (top and bottom walls carry H_x and H_z, the side walls H_z; sin(k x)/k -> sinh(kappa x)/kappa
    for k^2 < 0).  ``beta2`` from :func:`layered_guide_modes` (axis "x") or the TE_m0 equation."""
    from scipy.integrate import quad

    k0 = 2 * math.pi * float(frequency) / C0
    e, de = _side_slab_profile(a, t, eps_r, k0, beta2)

    opts = dict(points=[t], epsabs=0.0, epsrel=1e-12, limit=200)
    e2 = quad(lambda x: e(x) ** 2, 0.0, a, **opts)[0]
    de2 = quad(lambda x: de(x) ** 2, 0.0, a, **opts)[0]
    wall = 2.0 * (beta2 * e2 + de2) + b * (de(0.0) ** 2 + de(a) ** 2)
    omega_mu = 2 * math.pi * float(frequency) * MU0
    return float(surface_resistance) * wall / (2.0 * omega_mu * math.sqrt(beta2) * b * e2)


def filled_guide_modes(a: float, b: float, eps_r: float, mu_r: float, frequency: float,
                       count: int) -> List[Tuple[str, float]]:
    """(label, beta^2) of the first ``count`` modes of an a by b guide filled with one medium:
    beta^2 = eps_r mu_r k0^2 - kc^2, kc of the empty guide (Pozar, Microwave Engineering,
    sec. 3.3), descending beta^2."""
    if not (eps_r > 0 and mu_r > 0):
        raise ValueError(f"eps_r and mu_r must be positive, got {eps_r!r}, {mu_r!r}")
    k0 = 2 * math.pi * float(frequency) / C0
    return [(m.label, eps_r * mu_r * k0 * k0 - m.kc ** 2) for m in rectangle_modes(a, b, count)]


# ---------------------------------------------------------------------------
# Circular guide with a concentric dielectric rod
# ---------------------------------------------------------------------------
_SMALL_OUTER_K = 1e-7  # |k2 b| below which the outer radial functions take their k2 -> 0 limit
_QUAD_NODES, _QUAD_WEIGHTS = np.polynomial.legendre.leggauss(48)


def _rod_inner(n: int, kap1, s):
    """Regular radial function of the rod, p(s) = n! (2 / kap1)^n J_n(kap1 s) (s = r / b,
    kap1 = k1 b > 0), and dp/ds; the factor makes p -> s^n as kap1 -> 0, an entire function of
    kap1^2.  Also dp/ds / kap1^2 (= -J_1(kap1 s) / kap1 for n = 0, finite at kap1 -> 0)."""
    x = kap1 * s
    if n == 0:
        j1 = special.jv(1, x)
        return special.jv(0, x), -kap1 * j1, -j1 / kap1
    scale = np.exp(special.gammaln(n + 1) + n * np.log(2.0 / kap1))
    p, dp = scale * special.jv(n, x), scale * kap1 * special.jvp(n, x)
    return p, dp, dp / (kap1 * kap1)


def _rod_outer(n: int, kap2sq, s, rho: float):
    """Outer (vacuum, rho <= s <= 1) radial functions, normalised at the wall s = 1:

        f: f(1) = 0, f'(1) = 1     (E_z, Dirichlet on the wall)
        g: g(1) = 1, g'(1) = 0     (H_z, Neumann on the wall)

    Initial data fixed at s = 1 make f, g entire functions of kap2^2 = (k0^2 - beta^2) b^2: no
    pole and no change of sign at beta = k0 (the raw J/Y and I/K cross products would differ
    there by -pi/2 and by their Wronskians).  J/Y for kap2^2 > 0 (Wronskian J Y' - J' Y =
    2 / (pi x)), I/K for kap2^2 < 0 (I K' - I' K = -1 / x; Abramowitz and Stegun 9.1.16 and
    9.6.15, from memory), s^n, s^-n (ln s, 1 for n = 0) in the limit.  I/K come exponentially
    scaled (scipy ive / kve) and all four functions are multiplied by exp(-q (1 - rho)), a
    positive factor common to every s, so nothing overflows.  Returns f, f', g, g', g'/kap2^2
    (the last finite for n = 0 only)."""
    kap2sq, s = np.broadcast_arrays(np.asarray(kap2sq, dtype=float), np.asarray(s, dtype=float))
    out = [np.full(kap2sq.shape, np.nan) for _ in range(5)]
    f, df, g, dg, dg_k = out
    osc = kap2sq >= _SMALL_OUTER_K ** 2
    eva = kap2sq <= -_SMALL_OUTER_K ** 2
    lim = ~(osc | eva)
    if np.any(osc):
        k, x = np.sqrt(kap2sq[osc]), s[osc]
        ja, jb, ya, yb = special.jv(n, k * x), special.jv(n, k), special.yv(n, k * x), special.yv(n, k)
        dja, djb = special.jvp(n, k * x), special.jvp(n, k)
        dya, dyb = special.yvp(n, k * x), special.yvp(n, k)
        f[osc] = -0.5 * math.pi * (ja * yb - jb * ya)
        df[osc] = -0.5 * math.pi * k * (dja * yb - jb * dya)
        g[osc] = 0.5 * math.pi * k * (ja * dyb - djb * ya)
        cross = dja * dyb - djb * dya
        dg[osc] = 0.5 * math.pi * k * k * cross
        dg_k[osc] = 0.5 * math.pi * cross
    if np.any(eva):
        q, x = np.sqrt(-kap2sq[eva]), s[eva]
        e1, e2 = np.exp(-q * (2.0 - x - rho)), np.exp(-q * (x - rho))

        def iv(m, z):
            return special.ive(abs(m), z)

        def kv(m, z):
            return special.kve(abs(m), z)

        def div(z):
            return 0.5 * (iv(n - 1, z) + iv(n + 1, z))

        def dkv(z):
            return -0.5 * (kv(n - 1, z) + kv(n + 1, z))

        ia, ib, ka, kb = iv(n, q * x), iv(n, q), kv(n, q * x), kv(n, q)
        dia, dib, dka, dkb = div(q * x), div(q), dkv(q * x), dkv(q)
        f[eva] = ia * kb * e1 - ib * ka * e2
        df[eva] = q * (dia * kb * e1 - ib * dka * e2)
        g[eva] = -q * (ia * dkb * e1 - dib * ka * e2)
        cross = dia * dkb * e1 - dib * dka * e2
        dg[eva] = -q * q * cross
        dg_k[eva] = cross
    if np.any(lim):  # k2 -> 0: Laplace's equation (error O(kap2^2) < 1e-14)
        x = s[lim]
        if n == 0:
            f[lim], df[lim], g[lim], dg[lim] = np.log(x), 1.0 / x, 1.0, 0.0
            dg_k[lim] = 0.5 * (1.0 / x - x)
        else:
            up, dn = x ** n, x ** -float(n)
            f[lim] = (up - dn) / (2 * n)
            df[lim] = 0.5 * (up + dn) / x
            g[lim] = 0.5 * (up + dn)
            dg[lim] = 0.5 * n * (up - dn) / x
    if n != 0:
        dg_k[...] = np.nan
    return f, df, g, dg, dg_k


def _rod_inner_e(n: int, kap1: np.ndarray, rho: float) -> np.ndarray:
    """(n^2 p^2 / rho^2 - p'^2) / kap1^2 at s = rho, finite as kap1 -> 0.

    With e(s) = n^2 p^2 / s^2 - p'^2, Bessel's equation gives d(s^2 e)/ds = kap1^2 s^2 (p^2)'
    (differentiate and use p'' = -p'/s + (n^2/s^2 - kap1^2) p), and s^2 e -> 0 at s = 0, so
    e / kap1^2 = p(rho)^2 - (2 / rho^2) int_0^rho t p^2 dt.  Direct where kap1 rho > 1, by
    Gauss-Legendre quadrature below (where the direct form loses digits)."""
    p, dp, _ = _rod_inner(n, kap1, rho)
    out = (n * n * p * p / rho ** 2 - dp * dp) / (kap1 * kap1)
    small = kap1 * rho <= 1.0
    if np.any(small):
        k = kap1[small][:, None]
        t = 0.5 * rho * (_QUAD_NODES + 1.0)
        pt = _rod_inner(n, k, t[None, :])[0]
        integral = 0.5 * rho * np.sum(_QUAD_WEIGHTS * t * pt * pt, axis=1)
        out[small] = p[small] ** 2 - 2.0 / rho ** 2 * integral
    return out


def _rod_outer_e(n: int, kap2sq: np.ndarray, rho: float) -> np.ndarray:
    """(n^2 f g / rho^2 - f' g') / kap2^2 at s = rho, finite as kap2 -> 0 (same scaling as
    :func:`_rod_outer`).  As in :func:`_rod_inner_e`, with e = 0 at the wall s = 1:
    e / kap2^2 = f g (rho) + (2 / rho^2) int_rho^1 t f g dt, by Gauss-Legendre quadrature in
    ln t where |kap2| <= 1, direct above."""
    f, df, g, dg, _ = _rod_outer(n, kap2sq, rho, rho)
    with np.errstate(all="ignore"):
        out = (n * n * f * g / rho ** 2 - df * dg) / kap2sq
    small = np.abs(kap2sq) <= 1.0
    if np.any(small):
        u = 0.5 * math.log(rho) * (1.0 - _QUAD_NODES)  # ln t from ln rho to 0
        t = np.exp(u)[None, :]
        ft, _, gt, _, _ = _rod_outer(n, kap2sq[small][:, None], t, rho)
        integral = -0.5 * math.log(rho) * np.sum(_QUAD_WEIGHTS * t * t * ft * gt, axis=1)
        out[small] = f[small] * g[small] + 2.0 / rho ** 2 * integral
    return out


def _rod_characteristic(n: int, rho: float, eps_r: float, k0b: float, family: str):
    """Characteristic function of the rod-loaded circular guide, of kap1 = k1 b (arrays).

    Fields ~ exp(j(w t - beta z)), s = r / b, k1^2 = k0^2 eps_r - beta^2 in the rod, k2^2 =
    k0^2 - beta^2 outside (all wavenumbers b-scaled below; K = k0 b, c = k1^2 - k2^2 =
    K^2 (eps_r - 1)).  Rod: E_z = A p(s) cos(n phi), eta0 H_z = B p(s) sin(n phi); outside:
    E_z = C f(s) cos(n phi), eta0 H_z = D g(s) sin(n phi) (p, f, g of :func:`_rod_inner`,
    :func:`_rod_outer`: E_z = 0 and dH_z/dr = 0 on the wall).  With the transverse fields

        E_phi = -j / kt^2 (beta/r dE_z/dphi - w mu0 dH_z/dr)
        H_phi = -j / kt^2 (beta/r dH_z/dphi + w eps dE_z/dr),   kt^2 = k0^2 eps - beta^2,

    continuity of E_z, H_z, E_phi, H_phi at s = rho (the last two multiplied by k1^2 k2^2) is,
    with N = beta b n / rho (Harrington, Time-Harmonic Electromagnetic Fields, 1961, and Collin,
    Field Theory of Guided Waves, on inhomogeneously filled guides; this exact form from memory):

        | p            0           -f           0          |   |A|
        | 0            p            0          -g          |   |B|
        | k2^2 N p     k2^2 K p'   -k1^2 N f   -k1^2 K g'  | . |C| = 0
        | k2^2 K eps p'  k2^2 N p  -k1^2 K f'  -k1^2 N g   |   |D|

    Its determinant is c^2 N^2 p^2 f g - K^2 (k2^2 p' g - k1^2 p g') (k2^2 eps p' f - k1^2 p f')
    (eliminate A, B with the first two rows).  That vanishes identically at k2 = 0 (beta = k0)
    and at k1 = 0, roots of the scaling, not modes; written with e_i = (n^2 p^2/rho^2 - p'^2) /
    k1^2 and e_o = (n^2 f g/rho^2 - f' g') / k2^2 (:func:`_rod_inner_e`, :func:`_rod_outer_e`,
    both finite) and N^2 = (K^2 - k2^2) n^2 / rho^2, K^2 = c / (eps - 1), it is K^2 k1^2 k2^2 H:

        H = -(1 + eps) n^2/rho^2 p^2 f g + eps k2^2 e_i f g + k1^2 e_o p^2 + p p' (g f' + eps f g')

    an entire function of beta^2 without those two factors; H is returned for n >= 1 (for
    eps = 1 it reduces to -(p f' - p' f)(p g' - p' g): TM and TE of the empty guide).  For
    n = 0 the system splits into TM (A, C) and TE (B, D), with the factors k1^2, k2^2 removed:

        TM:  -p f' + k2^2 eps (p' / k1^2) f,      TE:  g (p' / k1^2) - p (g' / k2^2).
    """

    def func(kap1):
        kap1 = np.asarray(kap1, dtype=float)
        k1sq = kap1 * kap1
        k2sq = k1sq - k0b * k0b * (eps_r - 1.0)
        p, dp, dp_k = _rod_inner(n, kap1, rho)
        f, df, g, dg, dg_k = _rod_outer(n, k2sq, rho, rho)
        if n == 0:
            if family == "TM":
                return -p * df + k2sq * eps_r * dp_k * f
            return g * dp_k - p * dg_k
        return (-(1.0 + eps_r) * n * n / rho ** 2 * p * p * f * g
                + eps_r * k2sq * _rod_inner_e(n, kap1, rho) * f * g
                + k1sq * _rod_outer_e(n, k2sq, rho) * p * p
                + p * dp * (g * df + eps_r * f * dg))

    return func


def _rod_geometry(a, b, eps_r):
    """(a, b, eps_r) of a rod-loaded circular guide, checked: 0 < a < b, eps_r >= 1 finite."""
    a = _check_length("a", a)
    b = _check_length("b", b)
    if not a < b:
        raise ValueError(f"rod radius a must be below the guide radius b = {b!r} m, got {a!r}")
    eps_r = float(eps_r)
    if not (math.isfinite(eps_r) and eps_r >= 1.0):
        raise ValueError(f"eps_r must be a finite number >= 1 (vacuum outside the rod), got {eps_r!r}")
    return a, b, eps_r


def rod_in_circular_guide_betas(a: float, b: float, eps_r: float, frequency: float,
                                azimuthal_order: int, count: int, family=None,
                                points_per_pi: int = 200) -> List[float]:
    """beta (rad/m, descending) of the ``count`` propagating modes of largest beta, of azimuthal
    order n = ``azimuthal_order``, of a circular PEC guide of radius b with a concentric
    dielectric rod of radius a < b (relative permittivity eps_r >= 1, mu_r = 1; vacuum outside).

    Fewer are returned when fewer propagate.  For n >= 1 the modes are hybrid (HE/EH); each beta
    is a degenerate pair (cos / sin n phi), listed once.  For n = 0 the TE_0m and TM_0m families
    separate: ``family`` 'TE' or 'TM' gives one of them, None both (merged); for n >= 1 family
    must be None.  The equations are in :func:`_rod_characteristic`.

    Every propagating mode has 0 < beta < k0 sqrt(eps_r) (the Rayleigh bound, common practice),
    i.e. 0 < k1 b < k0 b sqrt(eps_r) with k1^2 = k0^2 eps_r - beta^2.  The characteristic
    function, which has no poles, is scanned on ``points_per_pi`` points per pi in k1 b and
    every sign change refined by Brent's method; a refined root whose value is not small against
    the bracket ends (a jump, not a zero) raises RuntimeError.
    """
    a, b, eps_r = _rod_geometry(a, b, eps_r)
    f = float(frequency)
    if not (math.isfinite(f) and f > 0):
        raise ValueError(f"frequency must be a positive number of Hz, got {frequency!r}")
    if isinstance(azimuthal_order, bool) or not isinstance(azimuthal_order, (int, np.integer)) \
            or azimuthal_order < 0:
        raise ValueError(f"azimuthal_order must be a non-negative integer, got {azimuthal_order!r}")
    n = int(azimuthal_order)
    count = _check_count(count)
    if n == 0:
        if family not in (None, "TE", "TM"):
            raise ValueError(f"family must be None, 'TE' or 'TM' for n = 0, got {family!r}")
        families = ("TE", "TM") if family is None else (family,)
    else:
        if family is not None:
            raise ValueError(f"modes of azimuthal order {n} >= 1 are hybrid: family must be None, got {family!r}")
        families = ("hybrid",)
    rho = a / b
    k0b = 2 * math.pi * f / C0 * b
    top = k0b * math.sqrt(eps_r)  # k1 b at beta = 0
    num = max(8, int(math.ceil(top / math.pi * points_per_pi)))
    grid = np.linspace(0.0, top, num + 1)
    grid[0] = 1e-6 * grid[1]  # k1 = 0 (beta = k0 sqrt(eps_r)) itself is excluded
    roots = []
    for fam in families:
        func = _rod_characteristic(n, rho, eps_r, k0b, fam)
        with np.errstate(all="ignore"):
            vals = func(grid)
        if not np.all(np.isfinite(vals)):
            raise ArithmeticError(f"non-finite characteristic value at k1 b = {grid[~np.isfinite(vals)][:3]}")

        def scalar(x):
            return float(func(np.array([x]))[0])

        for i in range(num):
            v0, v1 = vals[i], vals[i + 1]
            if v0 == 0.0:
                roots.append(float(grid[i]))
            elif v0 * v1 < 0:
                r = optimize.brentq(scalar, grid[i], grid[i + 1], xtol=1e-15 * top,
                                    rtol=4 * np.finfo(float).eps, maxiter=200)
                if abs(scalar(r)) > 1e-6 * max(abs(v0), abs(v1)):
                    raise RuntimeError(f"sign change without a zero near k1 b = {r!r} (a jump): "
                                       "the characteristic function should have no poles")
                roots.append(float(r))
    betas = [math.sqrt(k0b * k0b * eps_r - x * x) / b for x in roots if x < top]
    return sorted(betas, reverse=True)[:count]


@dataclass(frozen=True)
class SlabPeakAndVoltage:
    """Peak field, voltage and wall current of a side-slab TE_m0 mode carrying 1 W (exact fields,
    :func:`side_slab_te_m0_peak_and_voltage`).  Lengths in m from the side wall x = 0 that holds the
    slab; fields in V/m, voltage in V, current in A, impedances in ohm, all at P = 1 W."""

    peak_slab: float      #: largest |E| inside the slab (0 <= x <= t)
    x_peak_slab: float
    peak_air: float       #: largest |E| in the empty part (t <= x <= a)
    x_peak_air: float
    voltage: float        #: |int E_y dy| from wall to wall along the vertical line x = x_path
    x_path: float
    current: float        #: |int J_z dx| over the top wall (y = b)
    z_pv: float           #: voltage^2 / (2 P)
    z_pi: float           #: 2 P / current^2
    z_vi: float           #: voltage / current


def side_slab_te_m0_peak_and_voltage(a: float, b: float, t: float, eps_r: float, frequency: float,
                                     beta2: float, x_path: float) -> SlabPeakAndVoltage:
    """Peak |E|, voltage and wall current at 1 W of a TE_m0 mode (E_y(x) only) of the guide a x b
    with a full-height slab eps_r of width t against the side wall x = 0, from the exact
    piecewise-sine field of the transverse-resonance solution (as in
    :func:`side_slab_te_m0_wall_loss`; Pozar, Microwave Engineering, sec. 3.3, from memory):

        E_y = sin(k_d x) / k_d (x < t),   A sin(k_a (a - x)) / k_a (x > t),   A from E_y at x = t,
        H_x = -beta E_y / (omega mu0),    P = beta b int_0^a E_y^2 dx / (2 omega mu0),

    scaled to P = 1 W.  E has no other component and E_y does not depend on y, so the voltage
    along the vertical line x = ``x_path`` (wall to wall) is b |E_y(x_path)|, and the current on
    the top wall (J_z = n x H with n = -y: J_z = H_x) is beta |int_0^a E_y dx| / (omega mu0); the
    side walls carry no J_z (H_y = 0).  Z_PV = V^2 / (2P), Z_PI = 2P / I^2, Z_VI = V / I (the
    power-voltage, power-current and voltage-current definitions, common practice).  The peaks
    are searched on a fine grid of each part and polished with a bounded scalar search
    (sin(k x)/k -> sinh(kappa x)/kappa for k^2 < 0).  ``beta2`` from :func:`layered_guide_modes`
    (axis "x") or the TE_m0 equation."""
    from scipy.integrate import quad

    k0 = 2 * math.pi * float(frequency) / C0
    if not 0.0 <= x_path <= a:
        raise ValueError(f"x_path must lie in [0, a = {a!r}] m, got {x_path!r}")
    e, _ = _side_slab_profile(a, t, eps_r, k0, beta2)

    opts = dict(points=[t], epsabs=0.0, epsrel=1e-12, limit=200)
    e2 = quad(lambda x: e(x) ** 2, 0.0, a, **opts)[0]
    e1 = quad(e, 0.0, a, **opts)[0]
    omega_mu = 2 * math.pi * float(frequency) * MU0
    beta = math.sqrt(beta2)
    scale = 1.0 / math.sqrt(beta * b * e2 / (2.0 * omega_mu))  # field factor for P = 1 W

    def peak(lo, hi):
        xs = np.linspace(lo, hi, 2001)
        v = np.array([abs(e(x)) for x in xs])
        j = int(np.argmax(v))
        best_x, best_v = float(xs[j]), float(v[j])
        x0, x1 = xs[max(j - 1, 0)], xs[min(j + 1, xs.size - 1)]
        if x1 > x0:
            r = optimize.minimize_scalar(lambda x: -abs(e(x)), bounds=(x0, x1), method="bounded",
                                         options={"xatol": 1e-14 * a})
            if -r.fun > best_v:
                best_x, best_v = float(r.x), float(-r.fun)
        return scale * best_v, best_x

    ps, xs_ = peak(0.0, t)
    pa, xa = peak(t, a)
    v = scale * b * abs(e(float(x_path)))
    i = scale * beta * abs(e1) / omega_mu
    return SlabPeakAndVoltage(ps, xs_, pa, xa, v, float(x_path), i, v * v / 2.0, 2.0 / (i * i), v / i)
# ---------------------------------------------------------------------------
# Multi-conductor TEM lines: capacitance matrices and line impedances
# ---------------------------------------------------------------------------
def eccentric_coax_capacitance(a: float, b: float, offset: float, eps_r: float = 1.0) -> float:
    """Capacitance per unit length (F/m) of a round inner conductor of radius ``a`` whose centre
    lies ``offset`` from the centre of a round outer conductor of inner radius ``b``:

        C = 2 pi eps / acosh((a^2 + b^2 - d^2) / (2 a b))

    (exact, by the bipolar-coordinate (image) solution of two non-concentric circles; common
    practice, e.g. Smythe, Static and Dynamic Electricity, sec. 4.13; from memory).  For d = 0
    it is the coax's 2 pi eps / ln(b / a).
    """
    a = _check_length("a (inner radius)", a)
    b = _check_length("b (outer radius)", b)
    d = abs(float(offset))
    if not a + d < b:
        raise ValueError(f"the inner conductor (radius {a!r}, offset {d!r}) must lie inside the outer one (radius {b!r})")
    return 2.0 * math.pi * EPS0 * eps_r / math.acosh((a * a + b * b - d * d) / (2.0 * a * b))


def two_wire_impedance(spacing: float, radius: float, eps_r: float = 1.0, mu_r: float = 1.0) -> float:
    """Characteristic impedance (ohm) of the open two-wire line (wires of ``radius``, centres
    ``spacing`` apart, in an unbounded homogeneous medium):

        Z0 = (eta / pi) acosh(D / (2 a)),   eta = eta0 sqrt(mu_r / eps_r)

    (exact for round wires, proximity effect included; common practice, any transmission-line
    handbook, e.g. Ramo, Whinnery & Van Duzer, Fields and Waves, table of lines).
    """
    D = _check_length("spacing", spacing)
    a = _check_length("radius", radius)
    if not D > 2 * a:
        raise ValueError(f"the wires overlap: spacing {D!r} must exceed twice the radius {a!r}")
    return ETA0 * math.sqrt(mu_r / eps_r) / math.pi * math.acosh(D / (2.0 * a))


def shielded_pair_thin_wire(spacing: float, radius: float, shield_radius: float,
                            eps_r: float = 1.0, mu_r: float = 1.0) -> Tuple[float, float]:
    """(Z_even, Z_odd) in ohm of two thin round wires (radius a, centres +-s = +-D/2 from the
    centre) inside a round shield of inner radius R, by line charges and their images in the
    shield (thin-wire limit: the charge on each wire is taken as a line charge at its centre):

        Z_odd  = (eta / 2 pi) ln[ (D / a) (1 - sigma^2) / (1 + sigma^2) ],   sigma = s / R
        Z_even = (eta / 2 pi) ln[ (R^4 - s^4) / (2 a s R^2) ]

    Z_diff = 2 Z_odd is the "shielded balanced pair" formula of the handbooks (Reference Data
    for Radio Engineers, ch. on transmission lines: Z0 = 120 ln[2 v (1 - sigma^2)/(1 + sigma^2)]
    with v = s'/d; from memory); Z_even is derived here the same way (the two like charges with
    their images, plus the constant that grounds the shield).  The neglected terms are of order
    (a / D)^2 and (a / (R^2 / s - s))^2 in the logarithms: for the open line the exact
    acosh(D / 2a) differs from ln(D / a) by about -(a / D)^2.
    """
    D = _check_length("spacing", spacing)
    a = _check_length("radius", radius)
    R = _check_length("shield_radius", shield_radius)
    s = D / 2.0
    if not (D > 2 * a and s + a < R):
        raise ValueError("the wires must be apart and inside the shield")
    eta = ETA0 * math.sqrt(mu_r / eps_r)
    sigma = s / R
    z_odd = eta / (2 * math.pi) * math.log(D / a * (1 - sigma ** 2) / (1 + sigma ** 2))
    z_even = eta / (2 * math.pi) * math.log((R ** 4 - s ** 4) / (2 * a * s * R * R))
    return z_even, z_odd


def _check_wires(shield_radius, wires):
    R = _check_length("shield_radius", shield_radius)
    try:
        W = np.array([[float(w[0]), float(w[1]), float(w[2])] for w in wires])
    except (TypeError, IndexError, ValueError):
        raise ValueError(f"wires must be a sequence of (x, y, radius), got {wires!r}") from None
    if W.ndim != 2 or W.shape[0] < 1 or np.any(W[:, 2] <= 0):
        raise ValueError("give at least one wire with a positive radius")
    c = W[:, 0] + 1j * W[:, 1]
    if np.any(np.abs(c) + W[:, 2] >= R):
        raise ValueError("every wire must lie inside the shield")
    for i in range(len(c)):
        for j in range(i):
            if abs(c[i] - c[j]) <= W[i, 2] + W[j, 2]:
                raise ValueError(f"wires {j + 1} and {i + 1} touch or overlap")
    return R, c, W[:, 2]


class _WiresFit:
    """The multipole fit of :func:`wires_in_shield_capacitance`: one column of coefficients per
    wire excited at 1 V (the others and the shield at 0 V)."""

    def __init__(self, R, c, rad, terms, points):
        self.R, self.c, self.rad, self.M = R, c, rad, int(terms)
        self.P = int(points) or 4 * self.M + 8
        zs = self.circles(self.P, 0.0)
        A = self.design(zs)
        scale = np.linalg.norm(A, axis=0)
        coef, *_ = np.linalg.lstsq(A / scale, self.rhs(zs), rcond=None)
        self.coef = coef / scale[:, None]
        mid = self.circles(self.P, 0.5)
        self.misfit = float(np.max(np.abs(self.design(mid) @ self.coef - self.rhs(mid))))

    def circles(self, n, shift):
        e = np.exp(2j * np.pi * (np.arange(n) + shift) / n)
        return [self.R * e] + [ck + rk * e for ck, rk in zip(self.c, self.rad)]

    def design(self, zs, derivative=False):
        """Columns of the real basis at the points zs; with ``derivative`` the complex
        derivative dW/dz of each (phi = Re W, so |grad phi| = |dW/dz|)."""
        z = np.concatenate(zs)
        cols = [np.zeros(z.size, complex) if derivative else np.ones(z.size)]
        for ck in self.c:
            cols.append(1.0 / (z - ck) if derivative else np.log(np.abs(z - ck)))
        for ck, rk in zip(self.c, self.rad):
            u = rk / (z - ck)
            un = np.ones_like(u)
            for n in range(1, self.M + 1):
                un = un * u
                if derivative:
                    d = -n * un / (z - ck)  # d/dz of u^n
                    cols.extend([d, 1j * d])  # W = (Ar + j Ai) u^n: dW/dAr = u^n, dW/dAi = j u^n
                else:
                    cols.extend([un.real, -un.imag])
        u = z / self.R
        un = np.ones_like(u)
        for n in range(1, self.M + 1):
            if derivative:
                d = n * un / self.R
                cols.extend([d, 1j * d])
            un = un * u
            if not derivative:
                cols.extend([un.real, -un.imag])
        return np.column_stack(cols)

    def rhs(self, zs):
        b = np.zeros((sum(z.size for z in zs), len(self.c)))
        off = zs[0].size
        for k in range(len(self.c)):
            b[off:off + zs[k + 1].size, k] = 1.0
            off += zs[k + 1].size
        return b


def wires_in_shield_capacitance(shield_radius: float, wires, eps_r: float = 1.0, terms: int = 40,
                                points: int = 0) -> Tuple[np.ndarray, float]:
    """Maxwell capacitance matrix (F/m, N x N) of N round wires inside a round grounded shield,
    by the multipole (cylindrical-harmonic) method, and an estimate of its relative accuracy.

    ``wires``: sequence of (x, y, radius) in metres, the shield centred at the origin.  The
    potential between the conductors is written as (complex z = x + j y, wire k at c_k, radius a_k)

        phi = Re W(z),  W = b_0 + sum_k q_k log(z - c_k) + sum_k sum_n A_kn (a_k / (z - c_k))^n
                            + sum_n B_n (z / R)^n,       n = 1 .. terms,

    harmonic in the region and singular only inside the wires; the coefficients are fitted in the
    least-squares sense to phi = V_k on wire k and 0 on the shield at ``points`` points on each
    circle (the series converges geometrically, as fast as the wires are apart from each other and
    from the shield).  The charge on wire k is Q_k = -2 pi eps q_k (Gauss's law: only the
    logarithm has a flux), and C_kj = Q_k for V = e_j (common practice: the Maxwell matrix, C_kk
    > 0, C_kj < 0).  The returned accuracy is the largest boundary-condition misfit (in volts for
    1 V) at points half-way between the fitting points, times 10; the tests also check the result
    against the exact eccentric coax (:func:`eccentric_coax_capacitance`) and the thin-wire
    images (:func:`shielded_pair_thin_wire`).
    """
    R, c, rad = _check_wires(shield_radius, wires)
    fit = _WiresFit(R, c, rad, terms, points)
    C = -2 * np.pi * EPS0 * eps_r * fit.coef[1:1 + len(c), :]
    return 0.5 * (C + C.T), 10.0 * fit.misfit


def wires_in_shield_conductor_attenuation(shield_radius: float, wires, voltages, surface_resistance: float,
                                          eps_r: float = 1.0, mu_r: float = 1.0, terms: int = 40) -> float:
    """Conductor attenuation alpha_c (Np/m) of the TEM wave with conductor voltages ``voltages``
    on the wires of :func:`wires_in_shield_capacitance` (shield grounded), by the power-loss method
    with the surface resistance R_s on every conductor (common practice, Pozar sec. 2.7):

        alpha_c = P_loss / (2 P) = R_s oint |E_n|^2 dl / (2 eta int |E|^2 dA),

    since |H_t| = |E_n| / eta on the walls of a TEM wave and P = int |E|^2 dA / (2 eta), with
    int |E|^2 dA = V^T C V / eps (the energy product).  E_n = |dW/dz| of the multipole fit on every
    conductor (wires and shield), integrated by the trapezoidal rule (spectrally accurate on a
    circle).  Only valid for voltages whose mode is one TEM mode of the line (any V: every
    combination is a TEM wave of a homogeneous line).
    """
    R, c, rad = _check_wires(shield_radius, wires)
    V = np.asarray(voltages, dtype=float).reshape(-1)
    if V.size != len(c):
        raise ValueError(f"give one voltage per wire ({len(c)}), got {V.size}")
    fit = _WiresFit(R, c, rad, terms, 0)
    a = fit.coef @ V
    n = 8 * fit.M + 64
    radii = [R] + list(rad)
    line_integral = 0.0
    for zs, r in zip(fit.circles(n, 0.0), radii):
        g = fit.design([zs], derivative=True) @ a
        line_integral += float(np.sum(np.abs(g) ** 2)) * 2 * np.pi * r / n
    C = -2 * np.pi * EPS0 * eps_r * fit.coef[1:1 + len(c), :]
    energy = float(V @ (0.5 * (C + C.T)) @ V) / (EPS0 * eps_r)
    eta = ETA0 * math.sqrt(mu_r / eps_r)
    return float(surface_resistance) * line_integral / (2 * eta * energy)
# ---------------------------------------------------------------------------
# Complex modes of the rod-loaded circular guide (complex beta^2)
# ---------------------------------------------------------------------------
#
# Why this guide and not a layered rectangle: in a rectangular guide whose layers vary along one
# axis only (y, say), the LSE^y modes obey psi'' + (k0^2 eps(y) - kx^2) psi = beta^2 psi and the
# LSM^y modes eps (psi' / eps)' + (k0^2 eps(y) - kx^2) psi = beta^2 psi, each a self-adjoint
# Sturm-Liouville problem in beta^2 (weights 1 and 1 / eps, real positive): every beta^2 is real
# and no complex mode can occur (common practice; the transverse-resonance equations of
# :func:`layered_guide_modes` have real roots only).  Complex modes need the two polarisations
# coupled by a dielectric that spans the guide in no direction; the rod in a circular guide
# (n >= 1: hybrid HE / EH; n = 0 splits into TE_0m and TM_0m, each again self-adjoint in beta^2)
# is the classic case (Clarricoats & Slinn, Electronics Letters 1966, and Omar & Schuenemann,
# IEEE Trans. MTT, on complex and backward-wave modes, from memory: complex pairs of the
# HE_1m family below the turning point of a backward-wave branch for eps_r of order 10).

def rod_in_circular_guide_determinant(beta2, a: float, b: float, eps_r: float, frequency: float,
                                      azimuthal_order: int):
    """The characteristic determinant of the rod-loaded circular guide at complex beta^2 (arrays).

    Same guide and fields as :func:`_rod_characteristic` (radius b, concentric rod of radius a and
    relative permittivity eps_r, vacuum outside, PEC wall, exp(j(w t - beta z)), azimuthal
    cos / sin n phi), written here for complex beta^2 without the real-axis special cases.
    Lengths in units of b: s = r / b, rho = a / b, K = k0 b, X = beta^2 b^2, s1 = K^2 eps_r - X,
    s2 = K^2 - X (k1^2 b^2, k2^2 b^2).  Radial functions, each an entire function of s1 or s2:

        rod     : p(s) = J_n(k1 s) / k1^n             (E_z and H_z, regular on the axis)
        outside : f(s) = -pi/2 (J_n(k2 s) Y_n(k2) - J_n(k2) Y_n(k2 s))      f(1) = 0, f'(1) = 1
                  g(s) = pi/2 k2 (J_n(k2 s) Y_n'(k2) - J_n'(k2) Y_n(k2 s))   g(1) = 1, g'(1) = 0

    (even in k1 and in k2, so the branch of the square roots does not matter; the Wronskian
    J Y' - J' Y = 2 / (pi x), Abramowitz and Stegun 9.1.16).  Rod: E_z = A p cos n phi,
    eta0 H_z = beta B p sin n phi; outside: C f cos, beta D g sin.  Continuity at s = rho of E_z,
    H_z, E_phi = -j / kt^2 (beta / r dE_z/dphi - w mu0 dH_z/dr) and H_phi = -j / kt^2 (beta / r
    dH_z/dphi + w eps dE_z/dr) (Pozar, Microwave Engineering, sec. 3.1, in polar form), the last
    two divided by -j beta resp. -j / eta0 and multiplied by s1 s2, gives M (A, B, C, D) = 0 with

        | p              0              -f             0              |
        | 0              p               0            -g              |
        | -s2 n p/rho   -s2 K p'         s1 n f/rho    s1 K g'        |
        | s2 K eps p'    s2 X n p/rho   -s1 K f'      -s1 X n g/rho   |

    and det M, a function of beta^2 only, is returned.  Besides the modes it vanishes at
    s1 = 0 and s2 = 0 (beta^2 = k0^2 eps_r, k0^2: real, from the factor s1 s2, not modes).  For
    real beta^2 its zeros are those of :func:`rod_in_circular_guide_betas` (tested)."""
    from scipy import special as sp

    n = int(azimuthal_order)
    rho = float(a) / float(b)
    K = 2 * math.pi * float(frequency) / C0 * float(b)
    X = np.asarray(beta2, dtype=complex) * float(b) ** 2
    s1, s2 = K * K * float(eps_r) - X, K * K - X
    k1, k2 = np.sqrt(s1), np.sqrt(s2)
    def pair(fn, x):  # C_n(x) and C_n'(x) = C_{n-1}(x) - n C_n(x) / x (A&S 9.1.27)
        c = fn(n, x)
        return c, fn(n - 1, x) - n * c / x

    with np.errstate(all="ignore"):
        j1, dj1 = pair(sp.jv, k1 * rho)
        p, dp = j1 / k1 ** n, k1 * dj1 / k1 ** n
        (ja, dja), (jb, djb) = pair(sp.jv, k2 * rho), pair(sp.jv, k2)
        (ya, dya), (yb, dyb) = pair(sp.yv, k2 * rho), pair(sp.yv, k2)
    f = -0.5 * math.pi * (ja * yb - jb * ya)
    df = -0.5 * math.pi * k2 * (dja * yb - jb * dya)
    g = 0.5 * math.pi * k2 * (ja * dyb - djb * ya)
    dg = 0.5 * math.pi * k2 * k2 * (dja * dyb - djb * dya)
    z = np.zeros_like(X)
    eps = float(eps_r)
    M = np.array([[p, z, -f, z],
                  [z, p, z, -g],
                  [-s2 * n * p / rho, -s2 * K * dp, s1 * n * f / rho, s1 * K * dg],
                  [s2 * K * eps * dp, s2 * X * n * p / rho, -s1 * K * df, -s1 * X * n * g / rho]])
    return np.linalg.det(np.moveaxis(M, (0, 1), (-2, -1)))


def _winding(func, centre: complex, radius: float, points: int = 1024) -> float:
    """(1 / 2 pi) times the change of arg func along the circle |z - centre| = radius: the number
    of zeros minus poles inside (argument principle; func here has no poles)."""
    t = np.linspace(0.0, 2 * math.pi, points + 1)
    with np.errstate(all="ignore"):
        v = func(centre + radius * np.exp(1j * t))
    phase = np.unwrap(np.angle(v))
    return float((phase[-1] - phase[0]) / (2 * math.pi))


def rod_in_circular_guide_complex_beta2(a: float, b: float, eps_r: float, frequency: float,
                                        azimuthal_order: int, re_range=None, im_max=None,
                                        grid: int = 160) -> List[complex]:
    """Complex beta^2 (rad^2/m^2, Im > 0; each comes with its conjugate) of the rod-loaded circular
    guide (:func:`rod_in_circular_guide_determinant`) of azimuthal order n >= 1 in the box
    re_range[0] <= Re beta^2 <= re_range[1], 0 < Im beta^2 <= im_max (defaults: Re from
    -(k0^2 eps_r + (3 / b)^2) to k0^2, Im up to k0^2 eps_r + (3 / b)^2), sorted by descending real part.

    Root finding in the complex plane: |det| on a grid of ``grid`` x ``grid`` / 2 points, every
    local minimum polished by the secant method (scipy.optimize.newton with a complex start),
    then each root kept only if the argument principle counts exactly one zero in a small circle
    around it (a minimum that is not a zero counts none).  Roots within 1e-6 (relative) of the
    real axis are left out (they are the real modes)."""
    a, b, eps_r = _rod_geometry(a, b, eps_r)
    if isinstance(azimuthal_order, bool) or not isinstance(azimuthal_order, (int, np.integer)) \
            or azimuthal_order < 1:
        raise ValueError(f"azimuthal_order must be an integer >= 1 (n = 0 has real beta^2 only), "
                         f"got {azimuthal_order!r}")
    k0 = 2 * math.pi * float(frequency) / C0
    big = k0 * k0 * eps_r + (3.0 / b) ** 2
    lo, hi = re_range if re_range is not None else (-big, k0 * k0)
    top = float(im_max) if im_max is not None else big
    scale = max(abs(lo), abs(hi), top)

    def det(x):
        return rod_in_circular_guide_determinant(x, a, b, eps_r, frequency, azimuthal_order)

    xs = np.linspace(float(lo), float(hi), int(grid))
    ys = np.linspace(top / grid, top, max(int(grid) // 2, 8))
    Z = xs[None, :] + 1j * ys[:, None]
    D = np.abs(det(Z))
    found: List[complex] = []
    for i in range(1, D.shape[0] - 1):
        for j in range(1, D.shape[1] - 1):
            if not D[i, j] <= D[i - 1:i + 2, j - 1:j + 2].min():
                continue
            try:
                r = complex(optimize.newton(lambda x: complex(det(np.array([x]))[0]), Z[i, j],
                                            tol=1e-14 * scale, maxiter=200))
            except (RuntimeError, OverflowError, ZeroDivisionError):
                continue
            if not (r.imag > 1e-6 * scale and lo <= r.real <= hi and r.imag <= top):
                continue
            if any(abs(r - o) < 1e-8 * scale for o in found):
                continue
            rad = 0.25 * min(r.imag, min((abs(r - o) for o in found), default=r.imag))
            if abs(_winding(det, r, rad) - 1.0) < 0.1:
                found.append(r)
    return sorted(found, key=lambda x: -x.real)


# ---------------------------------------------------------------------------
# Triangles with closed-form spectra (corners of 60, 90 and 45 degrees)
# ---------------------------------------------------------------------------
def equilateral_triangle_modes(side: float, n: int) -> List[RefMode]:
    """First n modes of a guide whose section is an equilateral triangle of ``side``.

    Lamé's closed form (G. Lamé, 1833; M. A. Pinsky, "The eigenvalues of an equilateral
    triangle", SIAM J. Math. Anal. 11, 1980; B. J. McCartin, "Eigenstructure of the equilateral
    triangle", SIAM Review 45, 2003; recalled from memory):

        kc^2 = (16 pi^2 / (9 side^2)) (m^2 + m n + n^2)

    TM (Dirichlet): m, n >= 1; TE (Neumann): m, n >= 0, not both 0.  Each ordered pair (m, n) is
    one eigenfunction: for m != n the pair (m, n), (n, m) is a degenerate pair (a symmetric and
    an antisymmetric mode about an altitude), for m = n a single mode.  Indices (m, n) with
    m >= n for the first of a pair; the corners (60 degrees, pi / angle = 3) are regular.
    """
    side = _check_length("side", side)
    n = _check_count(n)
    unit = 16.0 * math.pi**2 / (9.0 * side**2)

    def below(kmax: float) -> List[RefMode]:
        out = []
        top = int(kmax * side) + 2
        for family, low in (("TE", 0), ("TM", 1)):
            for m in range(low, top):
                for k in range(low, top):
                    if m == 0 and k == 0:
                        continue
                    kc = math.sqrt(unit * (m * m + m * k + k * k))
                    if kc <= kmax:
                        out.append(RefMode(family, kc, mode_label(family, max(m, k), min(m, k)), (m, k)))
        return out

    area = math.sqrt(3.0) / 4.0 * side**2
    return _collect_first(n, max(_weyl_k(area, n), 2.0 / side), below)


def right_isosceles_triangle_modes(leg: float, n: int) -> List[RefMode]:
    """First n modes of a guide whose section is a right isosceles triangle with legs ``leg``.

    The triangle is half of the square of side ``leg`` cut along a diagonal: its Dirichlet
    eigenfunctions are the square's modes antisymmetric about the diagonal,
    sin(m pi x / a) sin(n pi y / a) - sin(n pi x / a) sin(m pi y / a), its Neumann ones the
    symmetric cos cos + cos cos (common practice: the square's modes of one parity about its
    diagonal, from the rectangle's closed form):

        kc^2 = pi^2 (m^2 + n^2) / leg^2,  TM: m > n >= 1;  TE: m >= n >= 0, m >= 1.

    Corners of 90 and 45 degrees: pi / angle = 2 and 4, every corner term is smooth.
    """
    leg = _check_length("leg", leg)
    n = _check_count(n)

    def below(kmax: float) -> List[RefMode]:
        out = []
        top = int(kmax * leg / math.pi) + 2
        for m in range(1, top):
            for k in range(0, m + 1):
                kc = math.pi * math.sqrt(m * m + k * k) / leg
                if kc > kmax:
                    continue
                out.append(RefMode("TE", kc, mode_label("TE", m, k), (m, k)))
                if m > k >= 1:
                    out.append(RefMode("TM", kc, mode_label("TM", m, k), (m, k)))
        return out

    return _collect_first(n, max(_weyl_k(0.5 * leg**2, n), 2.0 / leg), below)


# ---------------------------------------------------------------------------
# Sensitivities of the rectangle's cutoffs
# ---------------------------------------------------------------------------
def rectangle_fc_derivatives(a: float, b: float, m: int, n: int) -> Tuple[float, float]:
    """(d fc / d a, d fc / d b) in Hz/m of the TE_mn / TM_mn mode of an a x b rectangular guide
    (vacuum filling), from fc = (C0 / 2) sqrt((m / a)^2 + (n / b)^2) (Pozar, "Microwave
    Engineering", sec. 3.3):  d fc / d a = -(C0 / 2) (m^2 / a^3) / sqrt((m / a)^2 + (n / b)^2),
    and the same with n, b for d fc / d b.  TE10: d fc / d a = -C0 / (2 a^2), d fc / d b = 0."""
    a = _check_length("a", a)
    b = _check_length("b", b)
    root = math.hypot(m / a, n / b)
    if root == 0:
        raise ValueError("m and n must not both be zero")
    return -0.5 * C0 * m * m / a ** 3 / root, -0.5 * C0 * n * n / b ** 3 / root
