"""The elliptical guide: Mathieu functions computed here from their Fourier coefficients, and an
independent polynomial Ritz method as a cross-check.
"""

import math
from typing import Callable, List, Tuple

import numpy as np
from scipy import linalg, optimize, special

from femodes.reference.common import RefMode, _check_count, _check_length, _collect_first, _weyl_k, mode_label
from femodes.reference.guides import circle_modes

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
