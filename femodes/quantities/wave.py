"""Wave quantities of a mode at a frequency (beta, guide wavelength, phase and group velocity,
wave impedance), the operating band of a mode set, and the field phasors of a mode carrying a
given power.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from femodes.constants import C0
from femodes.errors import FemodesError
from femodes.modes.loaded import LoadedMode
from femodes.quantities.common import (
    _beta,
    _field,
    _freq,
    _k,
    _material,
    _out,
    _positive,
    _require_propagating,
    _z_wave,
)
from femodes.solvers.fields import _transverse

#: Rule of thumb for the recommended operating band of a guide (common practice, close to the EIA
#: rectangular-guide bands, e.g. WR-90 8.2 - 12.4 GHz): from 1.25 x the dominant cutoff (away from
#: the steep dispersion and loss near cutoff) to 0.95 x the next cutoff (the next mode stays
#: well below cutoff, so it is not excited and carried).
RECOMMENDED_LOW = 1.25


RECOMMENDED_HIGH = 0.95


@dataclass(frozen=True)
class WaveQuantities:
    """Propagation quantities of one mode at the frequencies ``f`` (scalars or arrays like ``f``).

    beta             : phase constant (rad/m), 0 at and below cutoff
    alpha            : attenuation of the evanescent (below-cutoff) mode, sqrt(kc^2 - k^2) (Np/m),
                       0 above cutoff; wall and dielectric losses are in :func:`losses`
    guide_wavelength : 2 pi / beta (m), inf at and below cutoff
    phase_velocity   : omega / beta (m/s), inf at and below cutoff
    group_velocity   : d omega / d beta = v^2 beta / omega (m/s), v = c0 / sqrt(eps_r mu_r); 0 below
    wave_impedance   : E_t / H_t (ohm), purely imaginary below cutoff (reactive)
    group_delay      : 1 / v_g (s/m), inf at and below cutoff
    propagates       : True above cutoff
    beta_error       : estimated error of beta (rad/m; of alpha below cutoff): for a homogeneous
                       mode from its kc error, |d beta| = kc |d kc| / beta (so it grows without
                       bound at cutoff, where beta -> 0); for a loaded mode its solve's estimate
    """

    f: object
    beta: object
    alpha: object
    guide_wavelength: object
    phase_velocity: object
    group_velocity: object
    wave_impedance: object
    group_delay: object
    propagates: object
    beta_error: object = math.nan


def wave_quantities(mode, f):
    """Propagation quantities of ``mode`` at frequency ``f`` (Hz; scalar or array).

    Homogeneous fill: k = omega sqrt(mu eps), beta = sqrt(k^2 - kc^2); below cutoff the field
    decays as exp(-alpha z) with alpha = sqrt(kc^2 - k^2).  v_p v_g = c0^2 / (eps_r mu_r).
    A loaded-guide mode (:class:`~femodes.modes.LoadedMode`) gives its own solve's values at
    the one frequency it was solved at (v_g by perturbation of its pencil).
    """
    if isinstance(mode, LoadedMode):
        return _loaded_wave_quantities(mode, f)
    fa = _freq(f)
    k = _k(mode, fa)
    d = k * k - mode.kc ** 2
    prop = d > 0 if mode.family != "TEM" else np.ones_like(d, dtype=bool)
    beta = np.where(prop, np.sqrt(np.abs(d)), 0.0)
    alpha = np.where(prop, 0.0, np.sqrt(np.abs(d)))
    mu, eps = _material(mode)
    w = 2 * np.pi * fa
    v = C0 / math.sqrt(mode.eps_r * mode.mu_r)
    safe = np.where(beta > 0, beta, 1.0)
    lam_g = np.where(beta > 0, 2 * np.pi / safe, np.inf)
    vp = np.where(beta > 0, w / safe, np.inf)
    vg = v * v * beta / w
    with np.errstate(divide="ignore"):
        tau = np.where(vg > 0, 1.0 / np.where(vg > 0, vg, 1.0), np.inf)
    gamma_b = np.where(prop, beta + 0j, -1j * alpha)  # beta, or -j alpha below cutoff
    if mode.family == "TEM":
        zw = math.sqrt(mu / eps) + 0j * w
    elif mode.family == "TE":
        zw = np.where(np.abs(gamma_b) > 0, w * mu / np.where(np.abs(gamma_b) > 0, gamma_b, 1.0), np.inf)
    else:
        zw = gamma_b / (w * eps)
    if np.all(prop):
        zw = zw.real
    gap = np.where(prop, beta, alpha)
    with np.errstate(divide="ignore", invalid="ignore"):
        berr = np.where(gap > 0, mode.kc * mode.kc_error / np.where(gap > 0, gap, 1.0), np.inf)
    if mode.family == "TEM":
        berr = 0.0 * fa  # beta = k exactly: no cutoff to err on
    return WaveQuantities(f=_out(fa), beta=_out(beta), alpha=_out(alpha), guide_wavelength=_out(lam_g),
                          phase_velocity=_out(vp), group_velocity=_out(vg), wave_impedance=_out(zw),
                          group_delay=_out(tau), propagates=bool(prop) if prop.ndim == 0 else prop,
                          beta_error=_out(berr))


def _loaded_wave_quantities(mode, f):
    """WaveQuantities of a LoadedMode at its own frequency (any other frequency is refused by
    LoadedMode.beta)."""
    b = mode.beta(float(_freq(f)))
    prop = mode.propagates()
    vg = mode.group_velocity() if prop else 0.0
    return WaveQuantities(f=mode.frequency, beta=float(b) if prop else 0.0,
                          alpha=0.0 if prop else float(abs(b)), guide_wavelength=mode.guide_wavelength(),
                          phase_velocity=mode.phase_velocity(), group_velocity=vg,
                          wave_impedance=mode.wave_impedance(),
                          group_delay=1.0 / vg if prop and vg > 0 else math.inf, propagates=prop,
                          beta_error=float(mode.beta_error))


@dataclass(frozen=True)
class Band:
    """Single-mode band of a guide and the recommended operating band (rule of thumb).

    low, high   : the dominant cutoff fc1 and the next cutoff fc2 (Hz); low = 0 with a TEM mode
    ratio       : high / low (inf with a TEM mode)
    recommended_low, recommended_high : 1.25 fc1 and 0.95 fc2 (Hz): a rule of thumb (common
                  practice), not a standard; None when the band is too narrow for it (fc2/fc1 < 1.316)
    dominant, next : labels of the dominant mode and of the mode that sets ``high``
    """

    low: float
    high: float
    ratio: float
    recommended_low: float | None
    recommended_high: float | None
    dominant: str
    next: str

    @property
    def single_mode(self):
        return (self.low, self.high)

    @property
    def recommended(self):
        """(1.25 fc1, 0.95 fc2) or None if that interval is empty (rule of thumb)."""
        if self.recommended_low is None:
            return None
        return (self.recommended_low, self.recommended_high)


def band(modeset):
    """The single-mode band [fc1, fc2] of a solved guide, its ratio, and the recommended operating
    band 1.25 fc1 .. 0.95 fc2.

    The recommended band is a rule of thumb (common practice; it reproduces the usual rectangular
    guide bands such as WR-90, 8.2 - 12.4 GHz): above 1.25 fc1 the dispersion and wall loss of the
    dominant mode are moderate, below 0.95 fc2 the next mode is well below cutoff.  For a guide
    with a TEM mode fc1 = 0 and the lower limit does not apply (it comes out as 0 Hz).
    """
    lo, hi = modeset.single_mode_band()
    first = modeset[0]
    same = set(first.degenerate_with) | {first.index}
    nxt = next(m for m in modeset if m.index not in same)
    r_lo, r_hi = RECOMMENDED_LOW * lo, RECOMMENDED_HIGH * hi
    if r_lo >= r_hi:
        r_lo = r_hi = None
    ratio = hi / lo if lo > 0 else math.inf
    return Band(low=lo, high=hi, ratio=ratio, recommended_low=r_lo, recommended_high=r_hi,
                dominant=first.label, next=nxt.label)


def propagating(modeset, f, strict=True):
    """The modes of ``modeset`` above cutoff at frequency ``f`` (Hz), a tuple in ascending cutoff.

    With ``strict`` (default) a frequency at or above the highest cutoff in the set is refused:
    modes that were not computed could propagate there too (solve for more modes).
    """
    fa = _freq(f)
    if fa.ndim != 0:
        raise FemodesError(f"propagating() takes one frequency (Hz), got an array of shape {fa.shape}")
    f = float(fa)
    if not len(modeset):
        raise FemodesError("the mode set is empty: solve for at least one mode")
    top = max(m.fc for m in modeset)
    if strict and f >= top:
        raise FemodesError(f"{f / 1e9:.6g} GHz is at or above the highest cutoff computed ({top / 1e9:.6g} GHz): "
                           "modes not computed may propagate too; solve for more modes, or pass strict=False")
    return tuple(m for m in modeset if m.family == "TEM" or m.fc < f)


def longitudinal_factor(mode, f):
    """The factor c with H_z = c psi (TE) or E_z = c psi (TM) for a mode of amplitude V = 1 V.

    TE.  E_t = V e_t = (V / kc) z x grad psi = (V / kc) (-d psi/dy, d psi/dx).  Faraday,
    curl E = -j omega mu H, z component:  dE_y/dx - dE_x/dy = (V / kc) laplace_t psi = -V kc psi
    (since laplace_t psi = -kc^2 psi), so -j omega mu H_z = -V kc psi and

        H_z = V kc psi / (j omega mu) = -j (kc / beta) (V / Z_TE) psi,     Z_TE = omega mu / beta.

    Check: the transverse field that follows from this H_z, H_t = -(j beta / kc^2) grad H_z, is
    -(V / Z_TE) grad psi / kc = (V / Z_TE) h_t, as it must be.  |H_z| / |H_t| ~ kc / beta: H_z
    dominates near cutoff, which is why it must be kept in the wall loss.

    TM.  H_t = (V / Z_TM) h_t with h_t = z x e_t = -(1 / kc) z x grad psi.  Ampere,
    curl H = j omega eps E, z component:  (V / Z_TM) (dh_y/dx - dh_x/dy) = (V / Z_TM) kc psi, so

        E_z = (V / Z_TM) kc psi / (j omega eps) = -j (kc / beta) V psi,     Z_TM = beta / (omega eps).

    TEM: no longitudinal field (c = 0).  Returns c (complex; array like f), for f above cutoff.
    """
    fa = _freq(f)
    _require_propagating(mode, fa, "the longitudinal field")
    if mode.family == "TEM":
        return _out(0j * fa)
    b = _beta(mode, fa)
    c = -1j * mode.kc / b
    if mode.family == "TE":
        c = c / _z_wave(mode, fa)
    return _out(c)


@dataclass(frozen=True)
class FieldPhasors:
    """Complex field phasors (V/m, A/m) at points (2, n) for a mode carrying ``power`` watts.

    E = (ex, ey, ez), H = (hx, hy, hz); the voltage amplitude V = sqrt(2 Z_w P) is real, so the
    transverse fields are real and the longitudinal one is in quadrature with them.
    """

    ex: np.ndarray
    ey: np.ndarray
    ez: np.ndarray
    hx: np.ndarray
    hy: np.ndarray
    hz: np.ndarray
    voltage: float
    power: float


def field_phasors(mode, f, points, power=1.0):
    """E and H phasors of ``mode`` at frequency ``f`` (Hz, above cutoff) at ``points`` (2, n) for a
    travelling wave carrying ``power`` watts: E_t = V e_t, H_t = (V / Z_w) h_t, V = sqrt(2 Z_w P),
    and H_z (TE) or E_z (TM) from :func:`longitudinal_factor`.  NaN outside the cross-section.

    A loaded-guide mode: its full-vector fields (femodes.solvers.vector.VectorMode.fields)
    scaled by sqrt(P / P_mode), P_mode = 1/2 Re int E_t x H_t* . z dA of the fields as solved;
    E_t real, E_z and H_z in quadrature with it (``voltage`` is NaN: a hybrid mode has no
    single voltage)."""
    if isinstance(mode, LoadedMode):
        P = _positive("power", power, "W")
        mode.beta(float(_freq(f)))
        if not mode.propagates():
            raise FemodesError(f"{mode.label} does not propagate at {mode.frequency / 1e9:.6g} GHz: "
                               "field_phasors() needs a propagating mode")
        s = math.sqrt(P / mode.vector.power())
        ex, ey, ez, hx, hy, hz = (s * np.asarray(c) for c in mode.fields(np.asarray(points, dtype=float)))
        return FieldPhasors(ex, ey, ez, hx, hy, hz, math.nan, P)
    fa = _freq(f)
    if fa.ndim != 0:
        raise FemodesError("field_phasors() takes one frequency (Hz)")
    P = _positive("power", power, "W")
    _require_propagating(mode, fa, "field_phasors()")
    fld = _field(mode)
    zw = float(_z_wave(mode, fa))
    V = math.sqrt(2 * zw * P)
    val, gx, gy = fld.evaluate(points)
    ex, ey, hx, hy = _transverse(mode.family, mode.kc, fld, gx, gy)
    c = complex(longitudinal_factor(mode, float(fa)))
    zero = np.zeros_like(val) + 0j
    ez = c * V * val if mode.family == "TM" else zero
    hz = c * V * val if mode.family == "TE" else zero
    return FieldPhasors(V * ex + 0j, V * ey + 0j, ez, V / zw * hx + 0j, V / zw * hy + 0j, hz, V, P)
