"""The circular guide with a concentric dielectric rod: hybrid HE / EH and TE_0m / TM_0m modes from
the characteristic equations, real roots by scanning and complex beta^2 pairs (complex modes) by
the 4x4 matching determinant in the complex plane.
"""

import math
from typing import List

import numpy as np
from scipy import optimize, special

from femodes.reference.common import C0, _check_count, _check_length

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
