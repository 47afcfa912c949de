"""Closed-form and Bessel-root cutoffs of hollow guides: rectangle (and WR-90), circle, coaxial line,
circular and annular sectors of any angle (fractional-order Bessel functions), the equilateral and
right isosceles triangles, and the rectangle's cutoff derivatives.
"""

import math
from dataclasses import dataclass
from typing import List, Tuple

from scipy import special

from femodes.reference.common import C0, ETA0, RefMode, _check_count, _check_length, _collect_first, _pair, _weyl_k, annulus_roots, bessel_roots, mode_label


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
