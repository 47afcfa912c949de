"""Reports of a solve: a fixed-width text table, a JSON-ready document, a CSV file, figures.

The text table is for people and uses engineering units (GHz, mm) with as many digits as each
mode's error estimate justifies.  The JSON document and the CSV file are for programs and use SI
units throughout (Hz, m, rad/m), stated in the document's "units" entry and the CSV header.
Values that do not exist (the cutoff wavelength of a TEM mode, the ratio of a band starting at
0 Hz) are null in JSON and empty in CSV, never NaN or infinity.
"""

from __future__ import annotations

import csv
import math
import os

from .errors import FemodesError

__all__ = ["modes_table", "modes_document", "write_csv", "write_json", "write_figures", "check_figures", "DOCUMENT_UNITS"]

#: units of the numbers in :func:`modes_document` and :func:`write_csv`
DOCUMENT_UNITS = {"length": "m", "angle": "rad", "kc": "rad/m", "kc_error": "rad/m", "fc": "Hz",
         "fc_error": "Hz", "cutoff_wavelength": "m", "f_low": "Hz", "f_high": "Hz", "accuracy": "1 (relative, on kc)"}

_ANGLE_PARAMS = {"angle"}


# ----------------------------------------------------------------------------- number formatting

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


# ----------------------------------------------------------------------------- shared pieces

def _section_info(modeset):
    sec = modeset.section
    if sec is None:
        mesh = modeset.mesh
        return {"kind": "mesh", "params": {},
                "description": f"triangle mesh ({mesh.n_triangles} triangles, {mesh.n_vertices} vertices)"}
    info = {"kind": sec.kind, "params": {k: float(v) for k, v in sec.params.items()
                                         if isinstance(v, (int, float)) and not isinstance(v, bool)},
            "description": sec.describe()}
    x0, y0, ang = sec.frame
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


# ----------------------------------------------------------------------------- text table

def modes_table(modeset, title=None, family=None) -> str:
    """The modes as a fixed-width text table in GHz and mm, with header lines and the single-mode
    band.  ``family`` ('TE' or 'TM') notes that only one family was solved for."""
    from . import __version__

    lines = [f"femodes {__version__}" + (f" -- {title}" if title else "")]
    sec = _section_info(modeset)
    lines.append(f"section: {sec['description']}")
    if "frame" in sec:
        fr = sec["frame"]
        lines.append(f"placed: own origin at ({fr['x0'] * 1e3:.6g}, {fr['y0'] * 1e3:.6g}) mm, "
                     f"own x axis at {math.degrees(fr['angle']):.6g} deg")
    lines.append(f"fill: eps_r = {modeset.eps_r:g}, mu_r = {modeset.mu_r:g}")
    lines.append(f"accuracy asked: {modeset.accuracy:.1e} (relative, on kc); unknowns: {modeset.n_dofs} "
                 f"(element order {modeset.order})" + (f"; {family} modes only" if family else ""))
    lines.append("")

    head = ["#", "label", "family", "fc [GHz]", "± [GHz]", "cutoff wl [mm]", "kc [rad/m]",
            "degenerate with", "symmetry", "nodal regions"]
    right = {0, 3, 4, 5, 6, 9}
    rows = []
    for m in modeset:
        sig = _sig_digits(m.fc, m.fc_error)
        wl = m.cutoff_wavelength
        rows.append([
            str(m.index + 1), m.label, m.family, format_ghz(m.fc, m.fc_error), _err_text(m.fc_error),
            _significant(wl * 1e3, sig) if math.isfinite(wl) else "-",
            _significant(m.kc, sig) if m.kc > 0 else "0",
            _degenerate_text(m),
            _symmetry_text(m.symmetry),
            "-" if m.nodal_domains is None else str(m.nodal_domains),
        ])
    widths = [max(len(r[j]) for r in rows + [head]) for j in range(len(head))]

    def fmt(r):
        cells = [c.rjust(w) if j in right else c.ljust(w) for j, (c, w) in enumerate(zip(r, widths))]
        return "  ".join(cells).rstrip()

    lines.append(fmt(head))
    lines.append("  ".join("-" * w for w in widths))
    lines.extend(fmt(r) for r in rows)
    lines.append("")
    band = _band(modeset)
    only = f" (among {family} modes only)" if family else ""
    if band is None:
        lines.append("single-mode band: needs at least two distinct cutoffs; solve for more modes")
    else:
        f1, f2, ratio, m1, m2 = band
        text = f"{format_ghz(f1, m1.fc_error)} - {format_ghz(f2, m2.fc_error)} GHz"
        if ratio is None:
            lines.append(f"single-mode band{only}: {text} (TEM only below the first higher-order cutoff)")
        else:
            who = (f"only the degenerate {m1.label} pair" if (m1.degenerate_with or m1.multiplicity > 1)
                   else f"{m1.label} alone")
            lines.append(f"single-mode band{only}: {text} (ratio {ratio:.3f}:1, {who})")
    return "\n".join(lines) + "\n"


def _degenerate_text(m):
    """'#2 #3', plus how many partners lie beyond the modes listed ('+1 not listed')."""
    text = " ".join(f"#{i + 1}" for i in m.degenerate_with)
    extra = m.multiplicity - 1 - len(m.degenerate_with)
    if extra > 0:
        text = (text + " " if text else "") + f"+{extra} not listed"
    return text or "-"


# ----------------------------------------------------------------------------- JSON

def _finite(x):
    x = float(x)
    return x if math.isfinite(x) else None


def modes_document(modeset, title=None) -> dict:
    """A JSON-ready dict of the solve, SI units (see the "units" entry); no NaN or infinity."""
    from . import __version__

    band = _band(modeset)
    doc = {
        "femodes_version": __version__,
        "title": title,
        "units": dict(DOCUMENT_UNITS),
        "section": _section_info(modeset),
        "fill": {"eps_r": float(modeset.eps_r), "mu_r": float(modeset.mu_r)},
        "accuracy": float(modeset.accuracy),
        "discretisation": {"unknowns": int(modeset.n_dofs), "element_order": int(modeset.order),
                           "triangles": int(modeset.mesh.n_triangles)},
        "single_mode_band": None if band is None else
        {"f_low": band[0], "f_high": band[1], "ratio": None if band[2] is None else _finite(band[2])},
        "modes": [{
            "index": m.index,
            "label": m.label,
            "family": m.family,
            "kc": _finite(m.kc),
            "kc_error": _finite(m.kc_error),
            "fc": _finite(m.fc),
            "fc_error": _finite(m.fc_error),
            "cutoff_wavelength": _finite(m.cutoff_wavelength),
            "degenerate_with": [int(i) for i in m.degenerate_with],
            "multiplicity": int(m.multiplicity),
            "symmetry": dict(m.symmetry),
            "nodal_domains": None if m.nodal_domains is None else int(m.nodal_domains),
            "indices": None if m.indices is None else [int(i) for i in m.indices],
        } for m in modeset],
    }
    return _clean(doc)


def _clean(obj):
    """Replace any non-finite float left anywhere by None (JSON has no NaN or infinity)."""
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, dict):
        return {k: _clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_clean(v) for v in obj]
    return obj


def write_json(document, path):
    """Write a document from :func:`modes_document` to ``path`` (strict JSON)."""
    import json

    text = json.dumps(document, indent=2, allow_nan=False)
    _write_text(path, text + "\n", "JSON")


# ----------------------------------------------------------------------------- CSV

CSV_COLUMNS = ("index", "label", "family", "fc_Hz", "fc_error_Hz", "kc_rad_per_m", "kc_error_rad_per_m",
               "cutoff_wavelength_m", "degenerate_with", "symmetry", "nodal_domains")


def write_csv(modeset, path):
    """One row per mode, SI units named in the header; ``index`` and ``degenerate_with`` are
    0-based positions (space-separated), ``symmetry`` like ``x=odd;y=even``."""
    def num(x):
        return "" if not math.isfinite(x) else repr(float(x))

    rows = [CSV_COLUMNS]
    for m in modeset:
        rows.append((m.index, m.label, m.family, num(m.fc), num(m.fc_error), num(m.kc), num(m.kc_error),
                     num(m.cutoff_wavelength), " ".join(str(i) for i in m.degenerate_with),
                     ";".join(f"{k}={v}" for k, v in sorted(m.symmetry.items())),
                     "" if m.nodal_domains is None else m.nodal_domains))
    try:
        with open(path, "w", newline="", encoding="utf-8") as fh:
            csv.writer(fh).writerows(rows)
    except OSError as exc:
        raise FemodesError(f"cannot write CSV file {path}: {exc.strerror or exc}") from None
    return str(path)


def _write_text(path, text, what):
    try:
        with open(path, "w", encoding="utf-8") as fh:
            fh.write(text)
    except OSError as exc:
        raise FemodesError(f"cannot write {what} file {path}: {exc.strerror or exc}") from None


# ----------------------------------------------------------------------------- figures

def _figures_module(output):
    try:
        from . import figures
    except ModuleNotFoundError as exc:
        if exc.name not in ("femodes.figures", "matplotlib"):
            raise
        raise FemodesError(f"figures were asked for ({', '.join(output.figures)}) but {exc.name} is not "
                           "available in this installation; leave out --figures and [output] figures, "
                           "or pass --no-figures") from None
    return figures


def check_figures(output):
    """Raise FemodesError now (before a long solve) if ``output`` asks for figures that cannot
    be written: no figure support installed."""
    if output.figures:
        _figures_module(output)


def write_figures(modeset, output):
    """Write the figures asked for in ``output`` (a :class:`femodes.case.OutputSettings`);
    returns the paths written.  Raises FemodesError if figure support is not installed."""
    if not output.figures:
        return []
    figures = _figures_module(output)
    directory = output.directory
    try:
        os.makedirs(directory, exist_ok=True)
    except OSError as exc:
        raise FemodesError(f"cannot create the figure directory {directory}: {exc.strerror or exc}") from None
    paths = []
    if "fields" in output.figures:
        count = None if output.field_count is None else min(output.field_count, len(modeset))
        paths += [str(p) for p in figures.field_patterns(modeset, directory, fmt=output.format, count=count)]
    if "chart" in output.figures:
        path = os.path.join(directory, f"mode_chart.{output.format}")
        got = figures.mode_chart(modeset, path)
        paths.append(str(got) if isinstance(got, (str, os.PathLike)) else path)
    return paths
