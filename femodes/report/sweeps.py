"""Reports of the design studies: sweeps (a text table for people in mm and GHz, a JSON-ready
document for programs in SI, with how many points came from the store), goal seeking,
sensitivities and tolerances."""

from __future__ import annotations

import math

from femodes.constants import __version__
from femodes.modes.display import MM, _param_text, _param_unit, fixed_text, sweep_columns
from femodes.quantities import CAUTIONS, NP_TO_DB
from femodes.report.text import _finite, _grid

__all__ = ["sweep_table", "sweep_document", "seek_table", "sensitivity_table", "tolerance_table", "study_document"]


def sweep_table(result, title=None, labels=None, seconds=None, length=MM) -> str:
    """One row per point: the varied parameters (lengths in ``length``, (name, metres per unit),
    default mm; degrees for an angle), every cutoff (GHz, as many digits as its error allows), the
    single-mode band and its ratio; an invalid point says why.  ``labels`` maps a parameter to the
    name shown (the case file's key)."""
    labels = labels or {}
    lines = [f"femodes {__version__}" + (f" -- {title}" if title else ""),
             f"sweep of {result.shape}: " + ", ".join(
                 f"{labels.get(n, n)} ({len(v)} values)" for n, v in zip(result.names, result.values))
             + "; fixed: " + fixed_text(result, length),
             f"accuracy asked: {result.accuracy:.1e} (relative, on each cutoff); modes per point: {result.modes}", ""]
    head, rows, right, notes = sweep_columns(result, labels, length)  # the same columns as the notebook's HTML
    lines += _grid(head, rows, right)
    if notes:
        lines += ["", "invalid points (the shape refused the parameters):"] + [f"  {n}" for n in notes]
    lines += _quantity_lines(result, length)
    total = result.reused + result.computed
    lines += ["", f"{total} points: {result.reused} from the store, {result.computed} computed"
              + (f" in {seconds:.1f} s" if seconds is not None else "")]
    return "\n".join(lines) + "\n"


def _quantity_lines(result, length=MM):
    """The dominant mode's quantities at the analysis frequency, one row per point, with the
    power-handling cautions; nothing without an analysis frequency."""
    keys = [k for k, r in sorted(result.points.items()) if r.get("at_frequency")]
    if not keys:
        return []
    head = [f"{n} [{_param_unit(n, length)}]" for n in result.names]
    head += ["f [GHz]", "mode", "beta [rad/m]", "Z_w [ohm]", "Z_PV [ohm]", "alpha_c [dB/m]", "alpha_d [dB/m]",
             "breakdown [kW]"]
    rows = []
    for key in keys:
        q = result.points[key]["at_frequency"]
        row = [_param_text(n, v, length) for n, v in zip(result.names, key)]
        label = (q.get("at_label") or result.points[key]["label"])[:1] or ["-"]

        def num(name, scale=1.0, digits=6):
            v, e = q[name][0] if q[name] else math.nan, q[name + "_error"][0] if q[name] else math.nan
            if not math.isfinite(v):
                return "-"
            return f"{v * scale:.{digits}g}" + (f" ± {e * scale:.1g}" if math.isfinite(e) else "")

        row += [f"{q['frequency'] / 1e9:.6g}", label[0], num("beta"), num("wave_impedance"), num("z_pv"),
                num("alpha_c", NP_TO_DB), num("alpha_d", NP_TO_DB), num("breakdown_power", 1e-3, 4)]
        rows.append(row)
    lines = ["", "dominant mode at the analysis frequency:"]
    lines += _grid(head, rows, set(range(len(head))) - {len(result.names) + 1})
    lines += ["", "power handling, cautions:"] + [f"  - {c}" for c in CAUTIONS]
    return lines


#: the per-mode quantities at the analysis frequency in a sweep document (each also with _error)
SWEEP_QUANTITY_UNITS = {"beta": "rad/m", "guide_wavelength": "m", "wave_impedance": "ohm", "z_pv": "ohm",
                        "alpha_c": "Np/m", "alpha_d": "Np/m", "breakdown_power": "W"}


def sweep_document(result, title=None, labels=None) -> dict:
    """A JSON-ready dict of a sweep (SI units; null where a value does not exist).

    Top level: ``shape``, ``varied`` (name, case_key, values), ``fixed``, ``modes``,
    ``accuracy``, ``frequency`` (the analysis frequency, Hz, or null), ``reused`` / ``computed``
    (points from the store / solved), ``units``, ``cautions`` (with power-handling numbers), and
    ``points``: per point its ``parameters`` (name -> value), ``status`` ('ok' / 'invalid'),
    ``message``, ``single_mode_band`` {f_low, f_high, ratio} and ``modes``: per mode (cutoff
    order) ``mode`` (1..), ``label``, ``family``, ``fc``, ``fc_error``, ``curve`` (the followed
    mode identity along the first varied parameter, 1..) and ``ambiguous`` (that assignment not
    decided within the error bars); with an analysis frequency also ``at_frequency``: the
    quantities of the mode at it (``label`` of the mode they belong to -- a loaded guide's modes at
    a frequency are ordered by beta --, beta, guide_wavelength, wave_impedance, z_pv, alpha_c,
    alpha_d, breakdown_power, each with ``*_error``; null where not defined)."""
    labels = labels or {}
    ds = result.to_xarray()
    curve = ds.curve.values
    amb = ds.ambiguous.values
    index = {name: {float(v): i for i, v in enumerate(vals)} for name, vals in zip(result.names, result.values)}
    points, analysed = [], False
    for key, r in sorted(result.points.items()):
        idx = tuple(index[n][k] for n, k in zip(result.names, key))
        band = r["band"]
        q = r.get("at_frequency")
        modes = []
        for k in range(len(r["fc"])):
            d = {"mode": k + 1, "label": r["label"][k], "family": r["family"][k], "fc": _finite(r["fc"][k]),
                 "fc_error": _finite(r["fc_error"][k]), "curve": int(curve[idx][k]), "ambiguous": bool(amb[idx][k])}
            if q is not None and k < len(q["beta"]):
                analysed = True
                at = {"label": (q.get("at_label") or r["label"])[k]}
                for name in SWEEP_QUANTITY_UNITS:
                    at[name] = _finite(q[name][k])
                    at[name + "_error"] = _finite(q[name + "_error"][k])
                d["at_frequency"] = at
            modes.append(d)
        points.append({"parameters": dict(zip(result.names, key)), "status": r["status"],
                       "message": r["message"] or None,
                       "frequency": _finite(q["frequency"]) if q is not None else None,
                       "modes": modes,
                       "single_mode_band": None if band is None else {
                           "f_low": _finite(band[0]), "f_high": _finite(band[1]),
                           "ratio": _finite(band[1] / band[0]) if band[0] > 0 else None}})
    units = {"parameters": "m (rad for an angle, Hz for frequency, 1 for eps_r / mu_r / tan_delta)", "fc": "Hz",
             "fc_error": "Hz", "f_low": "Hz", "f_high": "Hz", "frequency": "Hz"}
    units.update(SWEEP_QUANTITY_UNITS)
    return {"femodes_version": __version__, "title": title, "shape": result.shape, "units": units,
            "varied": [{"name": n, "case_key": labels.get(n, n), "values": [float(v) for v in vals]}
                       for n, vals in zip(result.names, result.values)],
            "fixed": {k: v for k, v in result.parameters.items()}, "modes": result.modes,
            "accuracy": result.accuracy, "frequency": _finite(result.frequency) if result.frequency else None,
            "reused": result.reused, "computed": result.computed,
            "cautions": list(CAUTIONS) if analysed else [], "points": points}


def _unit(name):
    if name.split(".")[-1] in ("eps_r", "mu_r", "tan_delta"):
        return ("1", 1.0)  # a material property: no unit
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
        u = "" if unit == "1" else f" {unit}"
        lines.append(f"  {labels.get(name, name)} = {v * s:.9g}{u} ± {result.errors[name] * s:.1g}{u}")
    for name, v in result.achieved.items():
        lines.append(f"  reached {name} = {_q_text(name, v, result.achieved_error[name])}")
    lines.append(f"  ({result.solves} solves; the uncertainty of a value is the error bar of its target quantity "
                 "plus what it misses the target by, divided by the quantity's slope)")
    return "\n".join(lines) + "\n"


def sensitivity_table(sens, labels=None, title=None) -> str:
    """d fc / d p of every mode (MHz per mm, or per degree) with its error, one column a parameter."""
    labels = labels or {}
    names = list(sens.dfc)
    head = ["#", "label", "fc [GHz]"] + [f"d fc / d {labels.get(n, n)} [MHz" + ("" if _unit(n)[0] == "1" else f"/{_unit(n)[0]}")
                                         + "]" for n in names]
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
    for n, how in (getattr(sens, "method", {}) or {}).items():
        lines.append(f"  {labels.get(n, n)}: {how}")
    return "\n".join(lines) + "\n"


def tolerance_table(tol, labels=None, title=None) -> str:
    """Worst case and Monte Carlo spread of each quantity, and the dimension contributing most."""
    labels = labels or {}
    lines = [f"femodes {__version__}" + (f" -- {title}" if title else ""),
             "tolerances: " + ", ".join(f"{labels.get(n, n)} ± {v * _unit(n)[1]:.4g}"
                                        + ("" if _unit(n)[0] == "1" else f" {_unit(n)[0]}")
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
                   units={"values": "m (rad for an angle, 1 for a material's eps_r / mu_r)",
                          "achieved": "Hz (ratio: 1, z_pv: ohm, alpha: Np/m)"})
    elif kind == "sensitivity":
        doc.update(labels=list(result.labels), fc=[_finite(v) for v in result.fc],
                   dfc={k: [_finite(x) for x in v] for k, v in result.dfc.items()},
                   dfc_error={k: [_finite(x) for x in v] for k, v in result.dfc_error.items()},
                   skipped=dict(result.skipped), method=dict(getattr(result, "method", {}) or {}),
                   units={"fc": "Hz", "dfc": "Hz per m (per rad for an angle, per 1 for eps_r / mu_r)"})
    else:
        doc.update(quantities=list(result.names), nominal=[_finite(v) for v in result.nominal],
                   worst=[_finite(v) for v in result.worst], std=[_finite(v) for v in result.std],
                   p01=[_finite(v) for v in result.p01], p99=[_finite(v) for v in result.p99],
                   contributions={q: [list(c) for c in v] for q, v in result.contributions.items()},
                   tolerances=result.tolerances, units={"frequencies": "Hz", "ratio": "1",
                                                        "tolerances": "m (rad for an angle, 1 for eps_r / mu_r)"})
    doc["case_keys"] = labels
    return doc
