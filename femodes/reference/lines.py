"""Multi-conductor TEM lines: the eccentric coax, the open two-wire line, the thin-wire shielded
pair, and round wires in a round shield by a multipole series (capacitance and conductor loss).
"""

import math
from typing import Tuple

import numpy as np

from femodes.reference.common import EPS0, ETA0, _check_length


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
