"""Reports of the design studies: sweeps (a text table for people in mm and GHz, a JSON-ready
document for programs in SI, with how many points came from the store), goal seeking,
sensitivities and tolerances."""

from __future__ import annotations

import math

from femodes.constants import __version__
from femodes.report.text import _finite, _grid, format_ghz

__all__ = ["sweep_table", "sweep_document", "seek_table", "sensitivity_table", "tolerance_table", "study_document"]


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


def _unit(name):
    return ("deg", 180.0 / math.pi) if name == "angle" else ("mm", 1e3)


def _q_text(name, value, err=None):
    """A target quantity in GHz (the ratio as is), with its error where given."""
    if name == "ratio":
        return f"{value:.6g}" + (f" ± {err:.1g}" if err is not None else "")
    if name in ("z_pv", "alpha"):
        unit = "ohm" if name == "z_pv" else "Np/m"
        return f"{value:.9g} {unit}" + (f" ± {err:.1g}" if err is not None else "")
    return f"{value / 1e9:.9g} GHz" + (f" ± {err / 1e9:.1g}" if err is not None else "")


def seek_table(result, labels=None, title=None) -> str:
    """The parameter values found and the targets reached, with their uncertainties."""
    labels = labels or {}
    lines = [f"femodes {__version__}" + (f" -- {title}" if title else ""), "goal seeking:"]
    for name, v in result.values.items():
        unit, s = _unit(name)
        lines.append(f"  {labels.get(name, name)} = {v * s:.9g} {unit} ± {result.errors[name] * s:.1g} {unit}")
    for name, v in result.achieved.items():
        lines.append(f"  reached {name} = {_q_text(name, v, result.achieved_error[name])}")
    lines.append(f"  ({result.solves} solves; the uncertainty of a value is the error bar of its target quantity "
                 "plus what it misses the target by, divided by the quantity's slope)")
    return "\n".join(lines) + "\n"


def sensitivity_table(sens, labels=None, title=None) -> str:
    """d fc / d p of every mode (MHz per mm, or per degree) with its error, one column a parameter."""
    labels = labels or {}
    names = list(sens.dfc)
    head = ["#", "label", "fc [GHz]"] + [f"d fc / d {labels.get(n, n)} [MHz/{_unit(n)[0]}]" for n in names]
    rows = []
    for i, lab in enumerate(sens.labels):
        row = [str(i + 1), lab, f"{sens.fc[i] / 1e9:.9g}"]
        for n in names:
            unit, s = _unit(n)
            row.append(f"{sens.dfc[n][i] / s / 1e6:.6g} ± {sens.dfc_error[n][i] / s / 1e6:.1g}")
        rows.append(row)
    lines = [f"femodes {__version__}" + (f" -- {title}" if title else ""), "sensitivities of the cutoffs:"]
    lines += _grid(head, rows, set(range(2, len(head))) | {0})
    for n, why in sens.skipped.items():
        lines.append(f"  {labels.get(n, n)}: no sensitivity ({why})")
    return "\n".join(lines) + "\n"


def tolerance_table(tol, labels=None, title=None) -> str:
    """Worst case and Monte Carlo spread of each quantity, and the dimension contributing most."""
    labels = labels or {}
    lines = [f"femodes {__version__}" + (f" -- {title}" if title else ""),
             "tolerances: " + ", ".join(f"{labels.get(n, n)} ± {v * _unit(n)[1]:.4g} {_unit(n)[0]}"
                                        for n, v in tol.tolerances.items())]
    head = ["quantity", "nominal", "worst case ±", "std", "1 % .. 99 %", "most from"]
    rows = []
    for j, q in enumerate(tol.names):
        if q == "ratio":
            f = lambda x: f"{x:.6g}"  # noqa: E731
            nom = f(tol.nominal[j])
        else:
            f = lambda x: f"{x / 1e6:.4g} MHz"  # noqa: E731
            nom = f"{tol.nominal[j] / 1e9:.6g} GHz"
        top = tol.contributions[q][0]
        rows.append([q, nom, f(tol.worst[j]), f(tol.std[j]), f"{f(tol.p01[j])} .. {f(tol.p99[j])}",
                     f"{labels.get(top[0], top[0])} ({100 * top[1]:.0f} %)"])
    lines += _grid(head, rows, {1, 2, 3})
    lines.append("  (first order in the tolerances; worst case linear, with the sensitivities' error bounds; Monte "
                 "Carlo linearised, the dimensions drawn independently)")
    return "\n".join(lines) + "\n"


def study_document(kind, result, labels=None, title=None) -> dict:
    """JSON-ready dict of a seek, sensitivity or tolerance result (SI units)."""
    labels = labels or {}
    doc = {"femodes_version": __version__, "title": title, "study": kind}
    if kind == "seek":
        doc.update(values=result.values, errors=result.errors, achieved=result.achieved,
                   achieved_error=result.achieved_error, solves=result.solves,
                   units={"values": "m (rad for an angle)",
                          "achieved": "Hz (ratio: 1, z_pv: ohm, alpha: Np/m)"})
    elif kind == "sensitivity":
        doc.update(labels=list(result.labels), fc=[_finite(v) for v in result.fc],
                   dfc={k: [_finite(x) for x in v] for k, v in result.dfc.items()},
                   dfc_error={k: [_finite(x) for x in v] for k, v in result.dfc_error.items()},
                   skipped=dict(result.skipped), units={"fc": "Hz", "dfc": "Hz per m (per rad for an angle)"})
    else:
        doc.update(quantities=list(result.names), nominal=[_finite(v) for v in result.nominal],
                   worst=[_finite(v) for v in result.worst], std=[_finite(v) for v in result.std],
                   p01=[_finite(v) for v in result.p01], p99=[_finite(v) for v in result.p99],
                   contributions={q: [list(c) for c in v] for q, v in result.contributions.items()},
                   tolerances=result.tolerances, units={"frequencies": "Hz", "ratio": "1", "tolerances": "m"})
    doc["case_keys"] = labels
    return doc
