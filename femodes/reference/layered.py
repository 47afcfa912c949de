"""Rectangular guides layered with dielectric along one axis: LSE / LSM modes and cutoffs by the
transverse-resonance equations, slab configurations, the side slab's TE_m0 equation with its exact
wall loss, peak field, voltage and current, and the filled guide.
"""

import math
from dataclasses import dataclass
from typing import List, Tuple

import numpy as np
from scipy import optimize

from femodes.reference.common import C0, MU0, _check_count, _check_length, mode_label
from femodes.reference.guides import rectangle_modes


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
