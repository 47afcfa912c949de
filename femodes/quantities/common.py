"""Shared helpers of the quantity functions: frequency checks, the mode's fill, k, beta and the
wave impedance at a frequency (SI).
"""

from __future__ import annotations

import math

import numpy as np

from femodes.constants import C0, EPS0, MU0
from femodes.errors import FemodesError, nonnegative_number, positive_number


def _freq(f, name="frequency"):
    try:
        a = np.asarray(f, dtype=float)
    except (TypeError, ValueError):
        raise FemodesError(f"{name} must be a number or an array of numbers in Hz, got {f!r}") from None
    if a.size == 0 or not np.all(np.isfinite(a)) or np.any(a <= 0):
        raise FemodesError(f"{name} must be positive and finite (Hz), got {f!r}")
    return a


def _field(mode):
    if getattr(mode, "potential", None) is None:
        raise FemodesError(f"mode {mode.label or mode.family!r} carries no field data; use a mode returned by "
                           "femodes.solve()")
    return mode.potential


def _material(mode):
    return MU0 * mode.mu_r, EPS0 * mode.eps_r


def _k(mode, f):
    return 2 * np.pi * f * math.sqrt(mode.eps_r * mode.mu_r) / C0


def _require_propagating(mode, f, what):
    if mode.family == "TEM":
        return
    bad = _k(mode, f) <= mode.kc
    if np.any(bad):
        fb = float(np.atleast_1d(f)[np.atleast_1d(bad)][0])
        raise FemodesError(f"{what} needs a propagating mode: {mode.label or mode.family} is at or below cutoff at "
                           f"{fb / 1e9:.6g} GHz (cutoff {mode.fc / 1e9:.6g} GHz); give frequencies above cutoff")


def _beta(mode, f):
    """Real beta (rad/m) for f above cutoff (checked by the caller)."""
    k = _k(mode, f)
    return np.sqrt(np.maximum(k * k - mode.kc ** 2, 0.0))


def _z_wave(mode, f):
    """Real wave impedance above cutoff (ohm), array like f."""
    mu, eps = _material(mode)
    if mode.family == "TEM":
        return math.sqrt(mu / eps) + 0 * f
    w = 2 * np.pi * f
    b = _beta(mode, f)
    return w * mu / b if mode.family == "TE" else b / (w * eps)


def _out(a):
    """0-d arrays back to Python floats (scalars in, scalars out)."""
    a = np.asarray(a)
    return float(a) if a.ndim == 0 and np.isrealobj(a) else (complex(a) if a.ndim == 0 else a)


_positive = positive_number
_nonnegative = nonnegative_number
