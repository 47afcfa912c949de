"""The L-shaped guide: published eigenvalues of the L-shaped region and an independent
method-of-particular-solutions evaluation.
"""

import math
from typing import Tuple

import numpy as np
from scipy import special

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
