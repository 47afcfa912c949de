"""The engineering quantities of every mode of one sweep point at an analysis frequency, with
their errors, as the single-guide report computes them (:mod:`femodes.quantities`).

Per mode (lists over the modes of the point, NaN where a quantity does not exist, e.g. below
cutoff): ``beta`` (rad/m), ``guide_wavelength`` (m), ``wave_impedance`` (ohm, real above
cutoff), ``z_pv`` (the power-voltage impedance |V|^2 / 2P, ohm; the dominant mode and TEM modes
only, as in the report, and NaN where the voltage along the default path cancels by symmetry),
``alpha_c`` and ``alpha_d`` (conductor and dielectric attenuation, Np/m) and
``breakdown_power`` (W, the power at which the peak field reaches the breakdown field; see
:data:`femodes.quantities.CAUTIONS`), each with ``*_error``.

Errors.  Homogeneous guides: beta from the cutoff's error, |d beta| = kc |d kc| / beta, and
what follows from beta alone (guide wavelength, wave impedance, alpha_d) to first order in it;
the field-based quantities (Z_PV, alpha_c, breakdown power) converge more slowly than the
cutoff the accuracy loop controls (a field or its gradient against an eigenvalue), so they are
taken from a second solve of the point on half the final element size (same element order):
the value reported is the finer one, its error |q(h) - q(h / 2)| (the coarse one's error, larger
than the finer one's on a converging sequence) plus the part carried by beta.  (One element
order lower on the same mesh was tried first and is not safe: on a coarse mesh of the rectangle
order 3 happened to give Z_PV closer to the truth than order 4, and the difference was below the
order-4 error.)  Loaded guides: the modes solved at the frequency carry
their own estimates (beta from the solve; Z_PV, alpha_c, alpha_d and the peak field from the
same mode one element order lower on the same mesh, :mod:`femodes.quantities`).
"""

from __future__ import annotations

import math

import numpy as np

from femodes import quantities as Q
from femodes.errors import FemodesError
from femodes.modes import LoadedMode

__all__ = ["POINT_QUANTITIES", "quantities_at", "homogeneous_partner"]

#: the per-mode quantities of a sweep point at its analysis frequency (each also with ``_error``)
POINT_QUANTITIES = ("beta", "guide_wavelength", "wave_impedance", "z_pv", "alpha_c", "alpha_d", "breakdown_power")

#: units of the quantities
UNITS = {"beta": "rad/m", "guide_wavelength": "m", "wave_impedance": "ohm", "z_pv": "ohm", "alpha_c": "Np/m",
         "alpha_d": "Np/m", "breakdown_power": "W"}


def _nan_row(n):
    out = {}
    for q in POINT_QUANTITIES:
        out[q] = [math.nan] * n
        out[q + "_error"] = [math.nan] * n
    return out


def homogeneous_partner(ms, solve):
    """The same point solved once more on half the final element size (``solve`` the front
    door, ``ms`` its ModeSet), for the field-based quantities and their errors; None for a mesh
    file (no element size to halve)."""
    if ms.section is None or not getattr(ms, "mesh_size", None):
        return None
    return solve(ms.section, modes=len(ms), eps_r=ms.eps_r, mu_r=ms.mu_r, order=ms.order,
                 mesh_size=0.5 * ms.mesh_size, family=ms.family)


def _partner_of(m, partner):
    """The mode of the lower-order solve that is ``m``: same family and label, nearest cutoff."""
    if partner is None:
        return None
    cands = [p for p in partner if p.family == m.family and p.label == m.label] or \
        [p for p in partner if p.family == m.family]
    if not cands:
        return None
    return min(cands, key=lambda p: abs(p.fc - m.fc))


def _z_pv(m, f, section=None):
    """Z_PV of a homogeneous mode, NaN where its voltage along the default path cancels."""
    try:
        if m.family != "TEM":
            path = Q.voltage_path(m)
            (x0, y0), (x1, y1) = path
            t = np.linspace(0.0, 1.0, 401)
            s = 0.5 * (t[1:] + t[:-1])
            ex, ey, _, _ = m.fields(np.array([x0 + (x1 - x0) * s, y0 + (y1 - y0) * s]))
            total = float(np.nansum(np.abs(ex * (x1 - x0) + ey * (y1 - y0)))) / (t.size - 1)
            if total == 0 or abs(Q.path_voltage(m, path)) < 1e-6 * total:
                return math.nan
        return float(Q.impedance(m, f, "PV"))
    except FemodesError:
        return math.nan


def _fields(m, f, sigma, rough, td, bd, sf, impedance):
    """(z_pv, alpha_c, breakdown_power) of a propagating homogeneous mode."""
    z = _z_pv(m, f) if impedance else math.nan
    ac = float(Q.conductor_attenuation(m, f, sigma, rough))
    pw = float(Q.power_handling(m, f, bd, sf).breakdown_power)
    return z, ac, pw


def quantities_at(modes, f, *, partner=None, conductivity=5.8e7, roughness=0.0, tan_delta=0.0,
                  breakdown_field=Q.DRY_AIR_BREAKDOWN, safety_factor=2.0, section=None):
    """{quantity: [value per mode], quantity_error: [...]} of ``modes`` at ``f`` (Hz) (see the
    module docstring); ``partner`` the lower-order solve of a homogeneous guide
    (:func:`homogeneous_partner`, on half the element size), ``modes`` a ModeSet or the LoadedModes solved at ``f``."""
    modes = list(modes)
    out = _nan_row(len(modes))
    if not modes:
        return out
    loaded = isinstance(modes[0], LoadedMode)
    first = modes[0]
    for i, m in enumerate(modes):
        wq = Q.wave_quantities(m, f)
        if not bool(wq.propagates):
            continue
        beta, berr = float(wq.beta), float(wq.beta_error)
        rb = berr / beta if beta > 0 else math.inf
        zw = complex(wq.wave_impedance).real
        lam = float(wq.guide_wavelength)
        out["beta"][i], out["beta_error"][i] = beta, berr
        out["guide_wavelength"][i], out["guide_wavelength_error"][i] = lam, lam * rb
        out["wave_impedance"][i] = zw
        out["wave_impedance_error"][i] = 0.0 if m.family == "TEM" else abs(zw) * rb
        impedance = m is first or m.family == "TEM"
        if loaded:
            ls = Q.losses(m, f, conductivity, roughness)
            out["alpha_c"][i], out["alpha_c_error"][i] = float(ls.conductor), float(ls.conductor_error)
            ad = float(ls.dielectric)
            low = Q.lower_order_partner(m)
            out["alpha_d"][i] = ad
            if low is not None:  # the same convention as the other field-based errors of a loaded mode
                out["alpha_d_error"][i] = abs(ad - float(low.dielectric_attenuation)) + ad * rb
            if impedance:
                try:
                    li = Q.loaded_impedances(m, f, section=section)
                    out["z_pv"][i], out["z_pv_error"][i] = float(li.value("PV")), float(li.error("PV"))
                except FemodesError:
                    pass
            ph = Q.power_handling(m, f, breakdown_field, safety_factor, section=section)
            out["breakdown_power"][i] = float(ph.breakdown_power)
            out["breakdown_power_error"][i] = float(ph.breakdown_power_error)
            continue
        ad = float(Q.dielectric_attenuation(m, f, tan_delta))
        out["alpha_d"][i], out["alpha_d_error"][i] = ad, (0.0 if m.family == "TEM" else ad * rb)
        z, ac, pw = _fields(m, f, conductivity, roughness, tan_delta, breakdown_field, safety_factor, impedance)
        p = _partner_of(m, partner)
        fine = (math.nan,) * 3
        if p is not None and bool(Q.wave_quantities(p, f).propagates):
            fine = _fields(p, f, conductivity, roughness, tan_delta, breakdown_field, safety_factor, impedance)
        # Z_PV and alpha_c carry beta through Z_w (first order: relative error rb); the breakdown
        # power carries it through Z_w as well (P = (E_bd / peak)^2, peak^2 proportional to Z_w).
        # Without a finer solve (a mesh file) the value has no error estimate (NaN).
        for name, val, fv in (("z_pv", z, fine[0]), ("alpha_c", ac, fine[1]), ("breakdown_power", pw, fine[2])):
            if math.isfinite(fv):
                out[name][i] = fv
                out[name + "_error"][i] = abs(val - fv) + abs(fv) * rb
            else:
                out[name][i] = val
    return out
