"""Number formatting for people: as many digits as an error estimate justifies (those helpers live in
:mod:`femodes.modes.display`, which the modes' own notebook display needs too), engineering units
(GHz, mm, kW), fixed-width grids and wrapped notes.
"""

from __future__ import annotations

import math
import textwrap

import numpy as np

from femodes.errors import FemodesError
from femodes.geometry.symmetry import symmetry_group
from femodes.modes.display import (  # noqa: F401  (moved below the mode model; the report's names kept)
    _band,
    _decimals,
    _degenerate_text,
    _err_text,
    _fixed,
    _g,
    _share,
    _sig_digits,
    _significant,
    _symmetry_text,
    format_ghz,
)


def _group_info(obj):
    """The section's symmetry group (femodes.geometry.symmetry): its name and one line of words."""
    try:
        g = symmetry_group(obj)
    except FemodesError:
        return {}
    return {"symmetry_group": g.name, "symmetry": g.describe(),
            "symmetry_centre": [float(g.centre[0]), float(g.centre[1])],
            "symmetry_mirrors_deg": [round(math.degrees(a), 9) for a in g.mirrors]}


def _class_column_needed(sec):
    """True when the mode classes say more than the x / y parity column: a group with a mirror
    line other than the own x and y axes, or turns without mirrors (C2, C3, ...), or D3 and up."""
    name = sec.get("symmetry_group")
    if name in (None, "C1", "circular"):
        return False
    return not (name in ("D1", "D2") and all(min(d % 180, 180 - d % 180) < 1e-6 or abs(d % 180 - 90) < 1e-6
                                             for d in sec.get("symmetry_mirrors_deg", ())))


def _section_info(result):
    """kind, params (SI), description and placement of the section of a ModeSet or a Study."""
    sec = result.section
    if sec is None or not hasattr(sec, "describe"):
        mesh = sec if sec is not None else result.mesh
        return {"kind": "mesh", "params": {},
                "description": f"triangle mesh ({mesh.n_triangles} triangles, {mesh.n_vertices} vertices)",
                **_group_info(mesh)}
    info = {"kind": sec.kind, "params": {k: float(v) for k, v in sec.params.items()
                                         if isinstance(v, (int, float)) and not isinstance(v, bool)},
            "description": sec.describe(), **_group_info(sec)}
    x0, y0, ang = getattr(sec, "frame", (0.0, 0.0, 0.0))  # a mesh file is where it was drawn
    if x0 or y0 or ang:
        info["frame"] = {"x0": float(x0), "y0": float(y0), "angle": float(ang)}
    return info


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

