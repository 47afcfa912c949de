"""The self-check's table and JSON document (the result of :func:`femodes.selfcheck`, a
:class:`femodes.studies.verify.SelfCheck`; read by its attributes, not imported: the report and
the studies sit side by side).

Every error here is relative, in the measure the solver's accuracy is asked in (kc, Z0; beta^2
relative to k0^2 eps_max mu_max for a loaded guide); a value passes when its true error (against
the reference, less the reference's own uncertainty) lies within femodes' reported error and
within the asked accuracy.
"""

from __future__ import annotations

import math

__all__ = ["selfcheck_table", "selfcheck_document", "SELFCHECK_UNITS"]

SELFCHECK_UNITS = {"kc": "rad/m", "beta": "rad/m", "Z0": "ohm", "errors": "relative (see 'measure')"}


def _e(x):
    return "-" if not math.isfinite(x) else f"{x:.1e}"


def _ratio(x):
    return "inf" if not math.isfinite(x) else f"{x:.3f}" if x < 10 else f"{x:.1f}"


def _grid(header, rows):
    widths = [max(len(str(r[i])) for r in [header] + rows) for i in range(len(header))]
    out = []
    for r in [header] + rows:
        out.append("  ".join(str(c).ljust(w) if i == 0 else str(c).rjust(w)
                             for i, (c, w) in enumerate(zip(r, widths))).rstrip())
    return out


def selfcheck_table(result, details=False):
    """Fixed-width text: one line per case (its worst value: true error, femodes' error bar,
    their ratio, the asked accuracy), with ``details`` every value and each case's source; then
    one line saying whether everything passed."""
    rows = result.rows
    kind = "thorough set" if result.thorough else "fast set; 'femodes selfcheck --thorough' for more"
    lines = [f"femodes self-check: {len(result.cases)} runs, {len(rows)} values, {result.seconds:.1f} s ({kind})",
             "true error = |femodes - reference| (relative); error bar = femodes' own estimate; "
             "a value passes when true error <= error bar and <= accuracy", ""]
    table = []
    for c in result.cases:
        worst = max(c.rows, key=lambda r: r.ratio) if c.rows else None
        if worst is None:
            continue
        table.append([c.name, f"{c.accuracy:.0e}", len(c.rows), _e(max(r.true_error for r in c.rows)),
                      _e(worst.true_error), _e(worst.reported_error), _ratio(worst.ratio), f"{c.seconds:.1f}",
                      "pass" if c.passed else "FAIL"])
    lines += _grid(["case", "accuracy", "values", "max true error", "worst: true", "error bar", "true/bar",
                    "s", "result"], table)
    if details:
        for c in result.cases:
            lines += ["", f"{c.name} (accuracy {c.accuracy:.0e}): {c.title}", f"  reference: {c.source}"]
            detail = [[r.quantity, f"{r.value:.12g}", f"{r.reference:.12g}", _e(r.true_error), _e(r.reported_error),
                       _e(r.reference_uncertainty), _ratio(r.ratio), "pass" if r.passed else "FAIL"] for r in c.rows]
            lines += ["  " + s for s in _grid(["value", "femodes", "reference", "true error", "error bar",
                                               "ref. unc.", "true/bar", "result"], detail)]
            for w in c.warnings:
                lines.append(f"  warning: {w}")
    elif any(c.warnings for c in result.cases):
        lines += [""] + [f"warning ({c.name}, accuracy {c.accuracy:.0e}): {w}" for c in result.cases for w in c.warnings]
    lines.append("")
    fails = [(c, r) for c in result.cases for r in c.rows if not r.passed]
    if not fails:
        lines.append(f"PASS: all {len(rows)} values within their error bars and the asked accuracy "
                     f"(largest true / error bar {_ratio(result.max_ratio)})")
    else:
        names = ", ".join(f"{c.name} {r.quantity} at {c.accuracy:.0e}" for c, r in fails[:6])
        more = f" and {len(fails) - 6} more" if len(fails) > 6 else ""
        lines.append(f"FAIL: {len(fails)} of {len(rows)} values outside their error bar or the asked accuracy: "
                     f"{names}{more} (see --details)")
    return "\n".join(lines) + "\n"


def _num(x):
    return float(x) if math.isfinite(x) else None


def selfcheck_document(result):
    """A JSON-ready dict of the self-check: every case with its source and every value (SI
    values, relative errors, ratio null where the error bar is zero)."""
    return {
        "kind": "selfcheck",
        "thorough": bool(result.thorough),
        "passed": bool(result.passed),
        "seconds": float(result.seconds),
        "values": len(result.rows),
        "max_ratio": _num(result.max_ratio),
        "units": SELFCHECK_UNITS,
        "measure": "relative error of kc or Z0; for a loaded guide of beta^2 relative to k0^2 eps_max mu_max",
        "cases": [{
            "name": c.name, "title": c.title, "source": c.source, "accuracy": float(c.accuracy),
            "seconds": float(c.seconds), "passed": bool(c.passed), "warnings": list(c.warnings),
            "rows": [{"quantity": r.quantity, "value": float(r.value), "reference": float(r.reference),
                      "true_error": float(r.true_error), "reported_error": float(r.reported_error),
                      "reference_uncertainty": float(r.reference_uncertainty), "accuracy": float(r.accuracy),
                      "ratio": _num(r.ratio), "passed": bool(r.passed)} for r in c.rows],
        } for c in result.cases],
    }
