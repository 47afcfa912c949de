"""Number formatting for people: as many digits as an error estimate justifies, engineering units
(GHz, mm, kW), fixed-width grids and wrapped notes.
"""

from __future__ import annotations

import math
import textwrap

import numpy as np


def _decimals(err, floor=0, cap=12):
    """Decimals that keep the first significant digit of ``err`` (same unit as the value)."""
    if not (err > 0 and math.isfinite(err)):
        return None
    return max(floor, min(cap, -math.floor(math.log10(err))))


def _fixed(value, decimals):
    return f"{value:.{decimals}f}"


def _significant(value, sig):
    """``value`` with ``sig`` significant digits in fixed notation."""
    if value == 0 or not math.isfinite(value):
        return "0" if value == 0 else "-"
    dec = max(0, sig - 1 - math.floor(math.log10(abs(value))))
    return f"{value:.{dec}f}"


def _sig_digits(value, err, default=7):
    """Significant digits of ``value`` justified by its error ``err`` (3 to 13)."""
    if not (value > 0 and err > 0 and math.isfinite(err)):
        return default
    return max(3, min(13, math.floor(math.log10(value)) - math.floor(math.log10(err)) + 1))


def format_ghz(f, err):
    """A frequency (Hz) in GHz, to the first significant digit of its error (Hz)."""
    if f == 0:
        return "0"
    dec = _decimals(err / 1e9)
    return _fixed(f / 1e9, 6 if dec is None else dec)


def _err_text(err_hz):
    if not (err_hz > 0 and math.isfinite(err_hz)):
        return "-"
    return f"{err_hz / 1e9:.0e}"


def _symmetry_text(sym):
    return ", ".join(f"{ax} {par}" for ax, par in sorted(sym.items())) if sym else "-"


def _section_info(result):
    """kind, params (SI), description and placement of the section of a ModeSet or a Study."""
    sec = result.section
    if sec is None or not hasattr(sec, "describe"):
        mesh = sec if sec is not None else result.mesh
        return {"kind": "mesh", "params": {},
                "description": f"triangle mesh ({mesh.n_triangles} triangles, {mesh.n_vertices} vertices)"}
    info = {"kind": sec.kind, "params": {k: float(v) for k, v in sec.params.items()
                                         if isinstance(v, (int, float)) and not isinstance(v, bool)},
            "description": sec.describe()}
    x0, y0, ang = getattr(sec, "frame", (0.0, 0.0, 0.0))  # a mesh file is where it was drawn
    if x0 or y0 or ang:
        info["frame"] = {"x0": float(x0), "y0": float(y0), "angle": float(ang)}
    return info


def _band(modeset):
    """(f_low, f_high, ratio or None): from the lowest cutoff (0 Hz with a TEM mode) to the next
    cutoff that is not a degenerate partner of it; None without such a second cutoff.

    Same meaning as ModeSet.single_mode_band(), but the partners are taken from each mode's
    ``degenerate_with`` (the solver's error-aware grouping), so that a pair like a circle's TE11,
    whose two computed cutoffs differ in the last digits, is not reported as a band of zero width.
    """
    modes = sorted(modeset, key=lambda m: m.fc)
    if not modes:
        return None
    first = modes[0]
    if first.family == "TEM" or first.kc == 0:
        group = {m.index for m in modes if m.family == "TEM" or m.kc == 0}
    else:
        group = {first.index, *first.degenerate_with}
    rest = [m for m in modes if m.index not in group]
    if not rest:
        return None
    f1, f2 = float(first.fc), float(rest[0].fc)
    return f1, f2, (f2 / f1 if f1 > 0 else None), first, rest[0]


def _degenerate_text(m):
    """'#2 #3', plus how many partners lie beyond the modes listed ('+1 not listed')."""
    text = " ".join(f"#{i + 1}" for i in m.degenerate_with)
    extra = m.multiplicity - 1 - len(m.degenerate_with)
    if extra > 0:
        text = (text + " " if text else "") + f"+{extra} not listed"
    kind = getattr(m, "degeneracy", "")
    if text and kind:
        text += f" ({kind})"
    return text or "-"


def _finite(x):
    """A float for JSON: None for None, NaN and infinity."""
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def _clean(obj):
    """Replace any non-finite float left anywhere by None (JSON has no NaN or infinity)."""
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, dict):
        return {k: _clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_clean(v) for v in obj]
    return obj


def power_text(watts):
    """A power in W, kW, MW or GW, 4 significant digits: 32.45 kW."""
    w = float(watts)
    if not math.isfinite(w):
        return "-"
    for unit, scale in (("GW", 1e9), ("MW", 1e6), ("kW", 1e3)):
        if abs(w) >= scale:
            return f"{w / scale:.4g} {unit}"
    return f"{w:.4g} W"


def _g(x, sig=5):
    """A number with ``sig`` significant digits, plain notation where sensible."""
    x = float(x)
    if not math.isfinite(x):
        return "-"
    if x == 0:
        return "0"
    if 1e-4 <= abs(x) < 1e7:
        return _significant(x, sig)
    return f"{x:.{sig - 1}e}"


def _mm(x):
    """A coordinate (m) in mm to the micrometre: -3.884, 0.768, 0."""
    v = round(float(x) * 1e3, 3)
    return f"{v + 0.0:g}"


def _f_ghz(f):
    return f"{f / 1e9:.6g}"


def _grid(head, rows, right):
    widths = [max(len(r[j]) for r in rows + [head]) for j in range(len(head))]

    def fmt(r):
        return "  ".join(c.rjust(w) if j in right else c.ljust(w) for j, (c, w) in enumerate(zip(r, widths))).rstrip()

    return [fmt(head), "  ".join("-" * w for w in widths)] + [fmt(r) for r in rows]


def _wrap(text, first, rest, width=100):
    return textwrap.wrap(text, width=width, initial_indent=first, subsequent_indent=rest) or [first.rstrip()]


def _num_list(a):
    """Nested lists of finite floats (None for NaN / infinity) of an array of any dimension."""
    def clean(x):
        return [clean(v) for v in x] if isinstance(x, list) else _finite(x)
    return clean(np.asarray(a, dtype=float).tolist())


def _share(x):
    """A longitudinal energy share: '0' below 1e-12 (rounding noise of a pure TE / TM mode)."""
    return "0" if abs(x) < 1e-12 else _g(x, 3)
