"""Reports of a sweep (the result of femodes.sweep): a text table for people (mm, GHz) and a
JSON-ready document for programs (SI), with how many points came from the store."""

from __future__ import annotations

import math

from femodes.constants import __version__
from femodes.report.text import _finite, _grid, format_ghz

__all__ = ["sweep_table", "sweep_document"]


def _param_text(name, value):
    return f"{math.degrees(value):.6g}" if name == "angle" else f"{value * 1e3:.6g}"


def sweep_table(result, title=None, labels=None, seconds=None) -> str:
    """One row per point: the varied parameters (mm, degrees for an angle), every cutoff (GHz,
    as many digits as its error allows), the single-mode band and its ratio; an invalid point
    says why.  ``labels`` maps a parameter to the name shown (the case file's key)."""
    labels = labels or {}
    lines = [f"femodes {__version__}" + (f" -- {title}" if title else ""),
             f"sweep of {result.shape}: " + ", ".join(
                 f"{labels.get(n, n)} ({len(v)} values)" for n, v in zip(result.names, result.values))
             + "; fixed: " + (", ".join(f"{k} = {_param_text(k, v)}" + ("" if k == "angle" else " mm")
                                        for k, v in result.parameters.items() if isinstance(v, float)) or "-"),
             f"accuracy asked: {result.accuracy:.1e} (relative, on each cutoff); modes per point: {result.modes}", ""]
    unit = {n: "deg" if n == "angle" else "mm" for n in result.names}
    head = [f"{labels.get(n, n)} [{unit[n]}]" for n in result.names]
    head += [f"fc{k + 1} [GHz]" for k in range(result.modes)] + ["single-mode band [GHz]", "ratio"]
    rows, notes = [], []
    for key, r in result.points.items():
        row = [_param_text(n, v) for n, v in zip(result.names, key)]
        if r["status"] != "ok":
            row += ["-"] * result.modes + ["invalid", "-"]
            notes.append(f"  {', '.join(row[:len(result.names)])}: {r['message']}")
        else:
            fcs = [format_ghz(f, e) for f, e in zip(r["fc"], r["fc_error"])]
            row += fcs + ["-"] * (result.modes - len(fcs))
            band = r["band"]
            if band is None:
                row += ["-", "-"]
            else:
                row += [f"{band[0] / 1e9:.5g} - {band[1] / 1e9:.5g}",
                        f"{band[1] / band[0]:.4f}" if band[0] > 0 else "TEM"]
        rows.append(row)
    order = sorted(range(len(rows)), key=lambda i: list(result.points)[i])
    lines += _grid(head, [rows[i] for i in order], set(range(len(head) - 2)) | {len(head) - 1})
    if notes:
        lines += ["", "invalid points (the shape refused the parameters):"] + notes
    total = result.reused + result.computed
    lines += ["", f"{total} points: {result.reused} from the store, {result.computed} computed"
              + (f" in {seconds:.1f} s" if seconds is not None else "")]
    return "\n".join(lines) + "\n"


def sweep_document(result, title=None, labels=None) -> dict:
    """A JSON-ready dict of a sweep (SI units; null where a value does not exist): the varied
    parameters and their values, the fixed ones, and per point the cutoffs with their errors,
    labels and families, the single-mode band and the status."""
    labels = labels or {}
    points = []
    for key, r in sorted(result.points.items()):
        band = r["band"]
        points.append({"parameters": dict(zip(result.names, key)), "status": r["status"],
                       "message": r["message"] or None,
                       "modes": [{"mode": k + 1, "label": r["label"][k], "family": r["family"][k],
                                  "fc": _finite(r["fc"][k]), "fc_error": _finite(r["fc_error"][k])}
                                 for k in range(len(r["fc"]))],
                       "single_mode_band": None if band is None else {
                           "f_low": _finite(band[0]), "f_high": _finite(band[1]),
                           "ratio": _finite(band[1] / band[0]) if band[0] > 0 else None}})
    return {"femodes_version": __version__, "title": title, "shape": result.shape,
            "units": {"parameters": "m (rad for an angle)", "fc": "Hz", "fc_error": "Hz", "f_low": "Hz",
                      "f_high": "Hz"},
            "varied": [{"name": n, "case_key": labels.get(n, n), "values": [float(v) for v in vals]}
                       for n, vals in zip(result.names, result.values)],
            "fixed": {k: v for k, v in result.parameters.items()}, "modes": result.modes,
            "accuracy": result.accuracy, "reused": result.reused, "computed": result.computed, "points": points}
