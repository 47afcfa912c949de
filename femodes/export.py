"""Reports of a solve: a fixed-width text table, a JSON-ready document, a CSV file, figures.

The text table is for people and uses engineering units (GHz, mm) with as many digits as each
mode's error estimate justifies.  The JSON document and the CSV file are for programs and use SI
units throughout (Hz, m, rad/m), stated in the document's "units" entry and the CSV header.
Values that do not exist (the cutoff wavelength of a TEM mode, the ratio of a band starting at
0 Hz) are null in JSON and empty in CSV, never NaN or infinity.

Engineering quantities (the [analysis] table of a case file): :func:`analyse` computes them once
from a solved mode set (:mod:`femodes.quantities`, SI units) into an :class:`Analysis`;
:func:`analysis_table` prints it (GHz, mm, dB/m, ohm, kW / MW) and :func:`analysis_document`
makes its JSON form (SI).  Both carry the power-handling cautions of
:data:`femodes.quantities.CAUTIONS` with the numbers.
"""

from __future__ import annotations

import csv
import math
import os
import textwrap
from dataclasses import dataclass

import numpy as np

from .errors import FemodesError

__all__ = ["modes_table", "modes_document", "write_csv", "write_json", "write_figures", "check_figures",
           "DOCUMENT_UNITS", "ANALYSIS_UNITS", "Analysis", "ModeQuantities", "Sweep", "analyse",
           "analysis_table", "analysis_document", "power_text", "reliable_attenuation", "PERTURBATION_LIMIT",
           "loaded_table", "loaded_document", "write_loaded_csv", "write_loaded_figures", "LOADED_UNITS"]

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


def modes_document(modeset, title=None, analysis=None) -> dict:
    """A JSON-ready dict of the solve, SI units (see the "units" entry); no NaN or infinity.
    With an :class:`Analysis` it has an "analysis" object too (:func:`analysis_document`)."""
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
    if analysis is not None:
        doc["analysis"] = analysis_document(analysis)
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


def write_fields(modeset, path):
    """Write the mesh with each mode's fields as point data through meshio (format from the file
    name: .vtu for ParaView, .xdmf, .msh, ...).  Per mode, at the mesh vertices (SI units,
    normalisation of :mod:`femodes.modes`: int psi^2 dA = 1, int |e_t|^2 dA = 1):
    ``NN_label_psi`` (E_z for TM, H_z for TE, potential for TEM), ``NN_label_E`` (the vector e_t,
    z component 0) and ``NN_label_absE``.  Returns the path."""
    import meshio

    from .figures import safe_name

    mesh = modeset.mesh
    pts = mesh.points
    data = {}
    for m in modeset:
        if m.potential is None:
            continue
        key = f"{m.index + 1:02d}_{safe_name(m.label)}"
        psi = m.longitudinal(pts)
        ex, ey, _, _ = m.fields(pts)
        data[key + "_psi"] = np.nan_to_num(psi)
        data[key + "_E"] = np.nan_to_num(np.column_stack([ex, ey, np.zeros_like(ex)]))
        data[key + "_absE"] = np.nan_to_num(np.hypot(ex, ey))
    xyz = np.column_stack([pts[0], pts[1], np.zeros(pts.shape[1])])
    try:
        meshio.write(str(path), meshio.Mesh(xyz, [("triangle", mesh.triangles.T)], point_data=data))
    except Exception as exc:  # meshio raises its own types for unknown formats
        raise FemodesError(f"cannot write field file {path}: {exc}; use a name ending in .vtu, .xdmf or .msh") from None
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


def write_figures(modeset, output, analysis=None):
    """Write the figures asked for in ``output`` (a :class:`femodes.case.OutputSettings`);
    returns the paths written.  Raises FemodesError if figure support is not installed.

    ``analysis`` (an :class:`Analysis`) feeds the "attenuation" figure (its band, conductor,
    roughness and fill loss; needed for that figure) and marks its band and frequency on the
    "band" figure."""
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
    st = analysis.settings if analysis is not None else None
    if "attenuation" in output.figures:
        if st is None or st.band is None or analysis.sweep is None:
            raise FemodesError("the figure 'attenuation' needs an analysis band: add band = [f1, f2] to [analysis] "
                               "or give --band F1 F2")
        path = os.path.join(directory, f"attenuation.{output.format}")
        figures.attenuation_chart(modeset, analysis.sweep.frequencies, conductivity=st.conductivity,
                                  roughness=st.roughness, tan_delta=st.tan_delta, conductor=st.conductor, path=path)
        paths.append(path)
    if "band" in output.figures:
        path = os.path.join(directory, f"band_chart.{output.format}")
        figures.band_chart(modeset, path, band=None if st is None else st.band,
                           frequency=None if st is None else analysis.frequency)
        paths.append(path)
    return paths


# ----------------------------------------------------------------------------- engineering quantities

#: units of the numbers in the "analysis" object of :func:`analysis_document`
ANALYSIS_UNITS = {
    "frequency": "Hz", "beta": "rad/m", "alpha": "Np/m (decay below cutoff; 0 above)", "guide_wavelength": "m",
    "phase_velocity": "m/s", "group_velocity": "m/s", "wave_impedance": "ohm", "impedances": "ohm",
    "attenuation_np_per_m": "Np/m", "attenuation_db_per_m": "dB/m", "conductivity": "S/m", "roughness": "m (rms)",
    "surface_resistance": "ohm", "skin_depth": "m", "peak_field_per_sqrt_watt": "V/m per sqrt(W)",
    "peak_location": "m", "breakdown_field": "V/m", "breakdown_power": "W", "rated_power": "W",
    "corner_exclusion": "m",
}

#: a propagating mode whose loss is not small against its phase constant (alpha / beta above this)
#: is too close to cutoff for the power-loss (perturbation) method, which assumes alpha << beta
PERTURBATION_LIMIT = 0.01


def reliable_attenuation(mode, f, conductivity, roughness=0.0, tan_delta=0.0):
    """Attenuation (Np/m, array like ``f``) of ``mode`` at the frequencies ``f`` (Hz) where the
    power-loss method holds: NaN below cutoff and where alpha / beta > :data:`PERTURBATION_LIMIT`
    (just above cutoff, where beta -> 0 and the method is not valid)."""
    from . import quantities as Q

    fs = np.atleast_1d(np.asarray(f, dtype=float))
    on = np.ones(fs.shape, dtype=bool) if mode.family == "TEM" else np.asarray(mode.propagates(fs))
    a = np.full(fs.shape, np.nan)
    if np.any(on):
        a[on] = np.asarray(Q.attenuation(mode, fs[on], conductivity, roughness, tan_delta), dtype=float)
        beta = np.asarray(Q.wave_quantities(mode, fs[on]).beta, dtype=float)
        bad = np.zeros(fs.shape, dtype=bool)
        bad[on] = a[on] > PERTURBATION_LIMIT * beta
        a[bad] = np.nan
    return a


@dataclass(frozen=True)
class ModeQuantities:
    """The quantities of one mode at the analysis frequency (SI; see :mod:`femodes.quantities`).

    waves      :class:`~femodes.quantities.WaveQuantities` (every mode)
    losses     :class:`~femodes.quantities.Losses` (propagating modes only, else None)
    impedances {'PV': ohm, 'PI': ohm, 'VI': ohm} for the dominant mode and TEM modes, else None
    power      :class:`~femodes.quantities.PowerHandling` (propagating modes only, else None)
    notes      what limits the numbers of this mode
    """

    mode: object
    waves: object
    losses: object = None
    impedances: dict | None = None
    voltage_path: tuple | None = None
    power: object = None
    notes: tuple = ()

    @property
    def propagates(self):
        return bool(self.waves.propagates)


@dataclass(frozen=True)
class Sweep:
    """Attenuation over the analysis band: ``frequencies`` (Hz, array) and, per mode index that
    propagates somewhere in the band, ``attenuation`` (Np/m; NaN below cutoff and just above it,
    where alpha / beta > PERTURBATION_LIMIT and the power-loss method does not hold) and, for TE
    and TEM modes with a power-handling result, ``rated_power`` (W, NaN where the attenuation is)."""

    frequencies: np.ndarray
    attenuation: dict
    rated_power: dict


@dataclass(frozen=True)
class Analysis:
    """Everything :func:`analysis_table` and :func:`analysis_document` report (SI units)."""

    settings: object
    frequency: float
    modes: tuple
    band: object
    sweep: Sweep | None
    family: str | None
    top_cutoff: float
    cautions: tuple

    @property
    def propagating(self):
        return tuple(q for q in self.modes if q.propagates)

    @property
    def evanescent(self):
        return tuple(q for q in self.modes if not q.propagates)

    @property
    def warnings(self):
        """The power-handling warnings of every mode, each once."""
        out = []
        for q in self.modes:
            for w in (q.power.warnings if q.power is not None else ()):
                if w not in out:
                    out.append(w)
        return tuple(out)


def _check_below_top(what, f, modeset):
    top = max(m.fc for m in modeset)
    if f >= top:
        raise FemodesError(f"the analysis {what} reaches {f / 1e9:.6g} GHz, at or above the highest cutoff computed "
                           f"({top / 1e9:.6g} GHz, {modeset[-1].label}): modes that were not computed could "
                           "propagate there; solve for more modes (modes in [solve] or --modes) or lower the frequency")
    return top


def _voltage_cancels(mode, path, rel=1e-6):
    """True if int e_t . dl along ``path`` is zero by cancellation: below ``rel`` times the
    integral of |e_t . dl| (sampled on 400 points)."""
    from . import quantities as Q

    (x0, y0), (x1, y1) = path
    t = np.linspace(0.0, 1.0, 401)
    s = 0.5 * (t[1:] + t[:-1])
    pts = np.array([x0 + (x1 - x0) * s, y0 + (y1 - y0) * s])
    ex, ey, _, _ = mode.fields(pts)
    along = np.abs(ex * (x1 - x0) + ey * (y1 - y0)) / (t.size - 1)
    total = float(np.nansum(along))
    return total > 0 and abs(Q.path_voltage(mode, path)) < rel * total


def analyse(modeset, settings, family=None) -> Analysis:
    """The engineering quantities of ``modeset`` asked for by ``settings`` (a
    :class:`femodes.case.AnalysisSettings`): wave quantities of every mode, losses and power handling
    of the propagating ones and the characteristic impedances of the dominant (and any TEM) mode at
    the table frequency, the single-mode and recommended bands, and the attenuation over the band.

    Power handling is computed at the table frequency only (it searches the field for its peak);
    over the band, the rated power of TE and TEM modes follows from it exactly, since their electric
    field is purely transverse and its peak per sqrt(W) scales as sqrt(Z_w):
    P(f) = P(f0) Z_w(f0) / Z_w(f).
    """
    from . import quantities as Q

    if not len(modeset):
        raise FemodesError("the mode set is empty: nothing to analyse")
    f = float(settings.table_frequency)
    top = _check_below_top("frequency", f, modeset)
    if settings.band is not None:
        _check_below_top("band", settings.band[1], modeset)
    sigma, rough, td = settings.conductivity, settings.roughness, settings.tan_delta
    first = modeset[0]
    rows = []
    for m in modeset:
        wq = Q.wave_quantities(m, f)
        if not wq.propagates:
            rows.append(ModeQuantities(m, wq))
            continue
        notes = []
        ls = Q.losses(m, f, sigma, rough, td)
        beta = float(wq.beta)
        if beta > 0 and float(ls.total) / beta > PERTURBATION_LIMIT:
            notes.append(f"loss is not small against beta (alpha / beta = {float(ls.total) / beta:.2g}): too close to "
                         "cutoff for the power-loss method; the loss figure is not reliable")
        z, path = None, None
        if m.family == "TEM" or m.index == first.index:
            z = {}
            for kind in ("PV", "PI", "VI"):
                try:
                    z[kind] = float(m.impedance(f, kind))
                except FemodesError as exc:
                    z[kind] = None
                    notes.append(f"Z_{kind} not available: {exc}")
            if m.family != "TEM":
                try:
                    path = tuple(Q.voltage_path(m))
                except FemodesError:
                    path = None
                if path is not None and _voltage_cancels(m, path):
                    z["PV"] = z["VI"] = None
                    notes.append("the voltage along the default path (through the centre, wall to wall) cancels for "
                                 "this mode (a field null, e.g. by symmetry): Z_PV and Z_VI are not defined for it")
                if m.degenerate_with:
                    notes.append("one member of a degenerate pair: its impedances depend on the orientation the "
                                 "solver gave it")
        ph = m.power_handling(f, settings.breakdown_field, settings.safety_factor)
        rows.append(ModeQuantities(m, wq, ls, z, path, ph, tuple(notes)))
    try:
        band = Q.band(modeset)
    except (FemodesError, StopIteration):
        band = None
    sweep = None
    if settings.band is not None:
        fs = np.linspace(settings.band[0], settings.band[1], int(settings.points))
        att, rated = {}, {}
        for q in rows:
            m = q.mode
            a = reliable_attenuation(m, fs, sigma, rough, td)
            if not np.any(np.isfinite(a)):
                continue
            on = np.isfinite(a)
            att[m.index] = a
            if q.power is not None and m.family in ("TE", "TEM"):
                p = np.full(fs.shape, np.nan)
                z0 = float(Q.wave_quantities(m, f).wave_impedance)
                p[on] = q.power.rated_power * z0 / np.asarray(Q.wave_quantities(m, fs[on]).wave_impedance, dtype=float)
                rated[m.index] = p
        sweep = Sweep(fs, att, rated)
    return Analysis(settings=settings, frequency=f, modes=tuple(rows), band=band, sweep=sweep, family=family,
                    top_cutoff=top, cautions=tuple(Q.CAUTIONS))


# -- text

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


def _walls_text(an):
    s = an.settings
    rough = "smooth" if s.roughness == 0 else f"rms roughness {s.roughness * 1e6:.4g} um (Hammerstad-Jensen)"
    fill = "lossless" if s.tan_delta == 0 else f"tan_delta = {s.tan_delta:.3g}"
    return f"walls: {s.conductor_text}, {rough}; fill: {fill}"


def analysis_table(an) -> str:
    """The quantities of an :class:`Analysis` as text (GHz, mm, dB/m, ohm, kW/MW), ending with
    the band lines and the power-handling cautions."""
    from .modes import C0
    from .quantities import NP_TO_DB

    s = an.settings
    f = an.frequency
    fg = _f_ghz(f)
    where = (f"centre of the analysis band {_f_ghz(s.band[0])} - {_f_ghz(s.band[1])} GHz"
             if s.frequency is None else "as asked")
    lines = [f"at f = {fg} GHz ({where})", _walls_text(an)]
    if an.family:
        lines.append(f"({an.family} modes only: the other family was not solved for)")
    lines.append("")

    prop = an.propagating
    if prop:
        lines.append(f"propagating at {fg} GHz:")
        rows = []
        for q in prop:
            w, ls = q.waves, q.losses
            rows.append([str(q.mode.index + 1), q.mode.label, _g(w.beta), _g(w.guide_wavelength * 1e3),
                         f"{w.phase_velocity / C0:.4f}", f"{w.group_velocity / C0:.4f}",
                         _g(float(np.real(w.wave_impedance))),
                         _g(ls.conductor_db, 4), _g(ls.dielectric_db, 4), _g(ls.total_db, 4)])
        lines += _grid(["#", "label", "beta [rad/m]", "guide wl [mm]", "v_p/c", "v_g/c", "Z_wave [ohm]",
                        "walls [dB/m]", "fill [dB/m]", "loss [dB/m]"], rows, {0, 2, 3, 4, 5, 6, 7, 8, 9})
        lines.append("")
        for q in prop:
            if q.impedances is None:
                continue
            z = q.impedances
            if q.mode.family == "TEM":
                val = z.get("PV")
                lines.append(f"line impedance of {q.mode.label} (#{q.mode.index + 1}): Z0 = {_g(val, 5)} ohm "
                             "(from the electrostatic capacitance; the same for PV, PI and VI)")
                continue
            order = [s.impedance] + [k for k in ("PV", "PI", "VI") if k != s.impedance]
            parts = [f"Z_{k} = {_g(z[k], 5)} ohm" if z[k] is not None else f"Z_{k} = n/a" for k in order]
            lines.append(f"impedance of {q.mode.label} (#{q.mode.index + 1}): {parts[0]}  (also {parts[1]}, {parts[2]})")
            if q.voltage_path is not None:
                (x0, y0), (x1, y1) = q.voltage_path
                lines += _wrap(f"V along ({_mm(x0)}, {_mm(y0)}) -> ({_mm(x1)}, {_mm(y1)}) mm "
                               "(through the centre, wall to wall); I: the longitudinal wall current on the half "
                               "of the walls above the centre", "  ", "  ", width=110)
        lines.append("")
        ref = prop[0].power
        lines += _wrap(f"power handling at {fg} GHz (matched travelling wave; breakdown taken at a peak field of "
                       f"{ref.breakdown_field / 1e6:.4g} MV/m; rated = that power / safety factor "
                       f"{ref.safety_factor:g}):", "", "  ", width=110)
        rows = []
        for q in prop:
            p = q.power
            x, y = p.peak_location
            rows.append([str(q.mode.index + 1), q.mode.label, _g(p.peak_field_per_sqrt_watt, 4),
                         f"({_mm(x)}, {_mm(y)})", power_text(p.breakdown_power), power_text(p.rated_power)])
        lines += _grid(["#", "label", "peak |E| at 1 W [V/m]", "peak at (x, y) [mm]", "power at breakdown",
                        "rated power"],
                       rows, {0, 2, 4, 5})
        lines.append("")
    else:
        lines += [f"no mode propagates at {fg} GHz (below the lowest cutoff)", ""]

    ev = an.evanescent
    if ev:
        lines.append(f"below cutoff at {fg} GHz (evanescent: the field decays along the guide, no power is carried):")
        rows = [[str(q.mode.index + 1), q.mode.label, f"{q.mode.fc / 1e9:.6g}", _g(q.waves.alpha * NP_TO_DB, 5)]
                for q in ev]
        lines += _grid(["#", "label", "fc [GHz]", "decay [dB/m]"], rows, {0, 2, 3})
        lines.append("")

    notes = [(q.mode, n) for q in an.modes for n in q.notes]
    for m, n in notes:
        lines += _wrap(f"#{m.index + 1} {m.label}: {n}", "note: ", "      ")
    lines += _wrap("loss by the power-loss (perturbation) method on the lossless mode; wall loss from the "
                   "surface resistance of the conductor", "note: ", "      ")
    lines.append("")

    b = an.band
    if b is None:
        lines.append("recommended band: needs at least two distinct cutoffs; solve for more modes")
    else:
        n_tem = sum(1 for q in an.modes if q.mode.family == "TEM")
        lo = "0 (TEM)" if b.low == 0 else f"{b.low / 1e9:.5g}"
        ratio = "unbounded, TEM" if not math.isfinite(b.ratio) else f"{b.ratio:.3f}:1"
        what = "single-mode band" if n_tem <= 1 else f"band of the {n_tem} TEM modes only"
        lines.append(f"{what}: {lo} - {b.high / 1e9:.5g} GHz (ratio {ratio}); next mode {b.next}")
        if b.recommended is None:
            lines.append("recommended operating band: none (the single-mode band is narrower than 1.25 fc1 .. "
                         "0.95 fc2)")
        else:
            r1, r2 = b.recommended
            lines.append(f"recommended operating band: {r1 / 1e9:.5g} - {r2 / 1e9:.5g} GHz (rule of thumb 1.25 fc1 .. "
                         "0.95 fc2, common practice; not a standard)")
    if an.sweep is not None:
        fs = an.sweep.frequencies
        lines.append(f"analysis band: {_f_ghz(fs[0])} - {_f_ghz(fs[-1])} GHz, {fs.size} points")
        if b is not None and b.low > 0 and fs[0] < b.low:
            lines.append(f"  (it starts below the dominant cutoff {_f_ghz(b.low)} GHz: nothing propagates there)")
        if b is not None and fs[-1] > b.high:
            lines.append(f"  (it runs above the next cutoff {_f_ghz(b.high)} GHz: more than one mode can propagate)")
        for idx, a in an.sweep.attenuation.items():
            m = _mode_of(an, idx)
            ok = np.isfinite(a)
            db = a * NP_TO_DB
            i_min, i_max = int(np.nanargmin(db)), int(np.nanargmax(db))
            text = (f"#{m.index + 1} {m.label}: loss {_g(db[i_min], 4)} dB/m (at {_f_ghz(fs[i_min])} GHz) to "
                    f"{_g(db[i_max], 4)} dB/m (at {_f_ghz(fs[i_max])} GHz)")
            if not np.all(ok):
                text += (f" over the {int(ok.sum())} of {ok.size} points where it propagates and the loss method "
                         f"holds (alpha / beta <= {PERTURBATION_LIMIT:g})")
            p = an.sweep.rated_power.get(idx)
            if p is not None:
                j = int(np.nanargmin(p))
                text += (f"; rated power down to {power_text(p[j])} (at {_f_ghz(fs[j])} GHz; scaled from {fg} GHz "
                         "as 1 / Z_w)")
            lines += _wrap(text, "  ", "    ")
    lines.append("")

    if prop:
        for w in an.warnings:
            lines += _wrap(w, "warning: ", "         ")
        lines.append("cautions (power handling):")
        for c in an.cautions:
            lines += _wrap(c, "  - ", "    ")
    return "\n".join(lines).rstrip("\n") + "\n"


def _mode_of(an, index):
    return next(q.mode for q in an.modes if q.mode.index == index)


# -- JSON

def _num_list(a):
    return [_finite(v) for v in np.asarray(a, dtype=float).tolist()]


def analysis_document(an) -> dict:
    """The "analysis" object of the JSON document: SI units (see its "units"), no NaN or infinity."""
    from . import quantities as Q

    s = an.settings
    f = an.frequency
    modes = []
    for q in an.modes:
        m, w = q.mode, q.waves
        zw = complex(w.wave_impedance)
        d = {"index": m.index, "label": m.label, "family": m.family, "propagates": q.propagates,
             "beta": _finite(w.beta), "alpha": _finite(w.alpha), "guide_wavelength": _finite(w.guide_wavelength),
             "phase_velocity": _finite(w.phase_velocity), "group_velocity": _finite(w.group_velocity),
             "wave_impedance": {"real": _finite(zw.real + 0.0), "imag": _finite(zw.imag + 0.0)},
             "impedances": None if q.impedances is None else {k: (None if v is None else _finite(v))
                                                             for k, v in q.impedances.items()},
             "voltage_path": None if q.voltage_path is None else [list(p) for p in q.voltage_path],
             "attenuation_np_per_m": None, "attenuation_db_per_m": None, "power_handling": None,
             "notes": list(q.notes)}
        if q.losses is not None:
            ls = q.losses
            d["attenuation_np_per_m"] = {"conductor": _finite(ls.conductor), "dielectric": _finite(ls.dielectric),
                                         "total": _finite(ls.total)}
            d["attenuation_db_per_m"] = {"conductor": _finite(ls.conductor_db), "dielectric": _finite(ls.dielectric_db),
                                         "total": _finite(ls.total_db)}
        if q.power is not None:
            p = q.power
            d["power_handling"] = {
                "frequency": _finite(p.frequency),
                "peak_field_per_sqrt_watt": _finite(p.peak_field_per_sqrt_watt),
                "peak_location": [_finite(v) for v in p.peak_location],
                "breakdown_field": _finite(p.breakdown_field), "breakdown_power": _finite(p.breakdown_power),
                "safety_factor": _finite(p.safety_factor), "rated_power": _finite(p.rated_power),
                "corners": [[_finite(v) for v in c] for c in p.corners],
                "corner_exclusion": _finite(p.corner_exclusion), "warnings": list(p.warnings)}
        modes.append(d)
    b = an.band
    band = {"single_mode": None, "recommended": None, "sweep": None}
    if b is not None:
        band["single_mode"] = {"f_low": _finite(b.low), "f_high": _finite(b.high), "ratio": _finite(b.ratio),
                               "dominant": b.dominant, "next": b.next}
        if b.recommended is not None:
            band["recommended"] = {"f_low": _finite(b.recommended[0]), "f_high": _finite(b.recommended[1]),
                                   "rule": "1.25 fc1 .. 0.95 fc2 (rule of thumb, common practice; not a standard)"}
    if an.sweep is not None:
        fs = an.sweep.frequencies
        per = []
        for idx, a in an.sweep.attenuation.items():
            m = _mode_of(an, idx)
            db = a * Q.NP_TO_DB
            entry = {"index": idx, "label": m.label, "attenuation_np_per_m": _num_list(a),
                     "attenuation_db_per_m": _num_list(db),
                     "min_db_per_m": _finite(np.nanmin(db)), "min_at": _finite(fs[int(np.nanargmin(db))]),
                     "max_db_per_m": _finite(np.nanmax(db)), "max_at": _finite(fs[int(np.nanargmax(db))]),
                     "rated_power": None, "rated_power_min": None, "rated_power_min_at": None}
            p = an.sweep.rated_power.get(idx)
            if p is not None:
                entry["rated_power"] = _num_list(p)
                entry["rated_power_min"] = _finite(np.nanmin(p))
                entry["rated_power_min_at"] = _finite(fs[int(np.nanargmin(p))])
            per.append(entry)
        band["sweep"] = {"f_low": _finite(fs[0]), "f_high": _finite(fs[-1]), "points": int(fs.size),
                         "frequencies": _num_list(fs), "modes": per,
                         "rated_power_note": "TE and TEM modes: scaled from the table frequency as 1 / Z_w "
                                             "(their peak field per sqrt(W) goes as sqrt(Z_w)); null otherwise"}
    first = next((q for q in an.modes if q.impedances is not None), None)
    doc = {
        "units": dict(ANALYSIS_UNITS),
        "frequency": _finite(f),
        "frequency_role": s.frequency_role,
        "walls": {"conductor": s.conductor, "conductivity": _finite(s.conductivity), "roughness": _finite(s.roughness),
                  "surface_resistance": _finite(Q.surface_resistance(f, s.conductivity)),
                  "skin_depth": _finite(Q.skin_depth(f, s.conductivity)),
                  "roughness_factor": _finite(Q.roughness_factor(f, s.conductivity, s.roughness))},
        "fill": {"tan_delta": _finite(s.tan_delta)},
        "breakdown_field": _finite(s.breakdown_field),
        "safety_factor": _finite(s.safety_factor),
        "impedance_first": s.impedance,
        "family_only": an.family,
        "modes": modes,
        "dominant_impedance": None if first is None else {"index": first.mode.index, "label": first.mode.label,
                                                          "shown_first": s.impedance, **first.impedances},
        "band": band,
        "methods": {"losses": "power-loss (perturbation) method on the lossless mode; Hammerstad-Jensen roughness",
                    "power_handling": "at the table frequency only; peak instantaneous |E| over the cross-section "
                                      "for a matched travelling wave"},
        "warnings": list(an.warnings),
        "cautions": list(an.cautions),
    }
    return _clean(doc)


# ----------------------------------------------------------------------------- loaded guides

#: units of the numbers in :func:`loaded_document` (SI)
LOADED_UNITS = {"length": "m", "fc": "Hz", "fc_error": "Hz", "frequency": "Hz", "beta": "rad/m",
                "beta_error": "rad/m", "guide_wavelength": "m", "alpha_dielectric": "Np/m",
                "alpha_conductor": "Np/m", "alpha_conductor_error": "Np/m", "conductivity": "S/m", "roughness": "m",
                "phase_velocity": "1 (v_p / c0)", "group_velocity": "1 (v_g / c0)",
                "effective_permittivity": "1 ((beta / k0)^2)",
                "accuracy": "1 (relative: on beta^2 / (k0^2 eps_max mu_max) at a frequency, on fc for cutoffs)"}


def _regions_text(study):
    bits = []
    for i, m in enumerate(study.section.materials, start=1):
        name = f' "{m.name}"' if m.name else ""
        extra = (f", mu_r = {m.mu_r:g}" if m.mu_r != 1 else "") + (f", tan_delta = {m.tan_delta:.3g}"
                                                                   if m.tan_delta else "")
        bits.append(f"{i}{name}: eps_r = {m.eps_r:g}{extra}")
    return "; ".join(bits)


def _share(x):
    """A longitudinal energy share: '0' below 1e-12 (rounding noise of a pure TE / TM mode)."""
    return "0" if abs(x) < 1e-12 else _g(x, 3)


def _loaded_mode_row(m, study):
    from .quantities import NP_TO_DB

    b = m.beta()
    prop = m.propagating
    sig = _sig_digits(abs(b), m.beta_error) if prop else 5
    ad = m.dielectric_attenuation() if prop else math.nan
    ac, ac_err = _loaded_wall_loss(m, study)
    return [str(m.index + 1), m.label, m.family,
            _significant(b, sig) if prop else f"-j{_g(abs(b))}",
            f"{m.beta_error:.0e}" if m.beta_error > 0 else "-",
            _g(m.guide_wavelength() * 1e3) if prop else "-",
            f"{m.effective_permittivity:.5f}" if prop else "-",
            f"{m.phase_velocity():.4f}" if prop else "-",
            f"{m.group_velocity():.4f}" if prop else "-",
            _share(m.e_share), _share(m.h_share),
            (_g(ad * NP_TO_DB, 4) if ad > 0 else "0") if prop else "-",
            _g(ac * NP_TO_DB, 4) if prop else "-",
            (f"{ac_err * NP_TO_DB:.0e}" if math.isfinite(ac_err) else "?") if prop else "-"]


def _loaded_wall_loss(m, study):
    """(alpha_c, its estimated error) Np/m of a loaded mode with the study's wall metal."""
    if not m.propagating:
        return math.nan, math.nan
    kw = dict(conductivity=study.conductivity, roughness=study.roughness)
    return m.conductor_attenuation(**kw), m.conductor_attenuation_error(**kw)


def loaded_table(study, title=None) -> str:
    """A :class:`femodes.loaded.LoadedStudy` as text (GHz, mm, rad/m, dB/m): cutoffs, the
    single-mode band, the modes at the frequency, and a few rows of the dispersion."""
    from . import __version__

    sec = study.section
    lines = [f"femodes {__version__}" + (f" -- {title}" if title else ""),
             f"section: {sec.describe()}",
             f"fill: eps_r = {study.eps_r:g}, mu_r = {study.mu_r:g}"
             + (f", tan_delta = {study.tan_delta:.3g}" if study.tan_delta else "")
             + f"; regions: {_regions_text(study)}",
             f"full-vector solve (edge elements of order {study.order}); accuracy asked: {study.accuracy:.1e}; "
             f"unknowns: {study.n_dofs}",
             "", "cutoffs (beta = 0) of the loaded guide:"]
    rows = [[str(c.index + 1), c.label, format_ghz(c.fc, c.fc_error), _err_text(c.fc_error),
             _significant(299792458.0 / c.fc * 1e3, _sig_digits(c.fc, c.fc_error))] for c in study.cutoffs]
    lines += _grid(["#", "type at cutoff", "fc [GHz]", "± [GHz]", "cutoff wl [mm]"], rows, {0, 2, 3, 4})
    lines.append("  (TE-type: only transverse E at cutoff; TM-type: only E_z; 'from': the empty-guide mode "
                 "whose field at cutoff it mostly has.  Above cutoff the modes are hybrid in general.)")
    band = study.single_mode_band
    if band is not None:
        c1, c2 = study.cutoffs[0], study.cutoffs[1]
        lines.append(f"single-mode band: {format_ghz(band[0], c1.fc_error)} - {format_ghz(band[1], c2.fc_error)} GHz "
                     f"(ratio {band[1] / band[0]:.3f}:1, between the two lowest cutoffs)")
    if study.frequency is not None:
        lines += ["", f"at f = {_f_ghz(study.frequency)} GHz: the modes of largest beta "
                  f"(unknowns: {study.n_dofs_at_f})"]
        prop = [m for m in study.modes if m.propagating]
        if not prop:
            lines.append("  no mode propagates at this frequency")
        else:
            head = ["#", "label", "family", "beta [rad/m]", "± [rad/m]", "guide wl [mm]", "eps_eff", "v_p/c",
                    "v_g/c", "Ez share", "Hz share", "dielectric [dB/m]", "walls [dB/m]", "± [dB/m]"]
            lines += _grid(head, [_loaded_mode_row(m, study) for m in prop], set(range(3, 14)) | {0})
            lines.append("  (label: the empty-guide mode it grows from, where its transverse E is mostly that "
                         "mode's; Ez / Hz share: the longitudinal share of the electric / magnetic energy, 0 "
                         "for TE / TM; eps_eff = (beta/k0)^2)")
            if study.more_propagate:
                lines.append(f"  every one of the {len(study.modes)} modes asked for propagates: more may; "
                             "ask for more modes ([solve] modes or --modes) to see them all")
        rough = f", rms roughness {study.roughness * 1e6:g} um" if study.roughness else ""
        lines.append(f"  walls: {study.conductor}{rough}; wall loss by the power-loss method (not valid close "
                     "to cutoff).  Impedance and power handling are not computed for loaded guides yet.")
    disp = study.dispersion
    if disp is not None:
        fs = disp.frequencies
        picks = np.unique(np.round(np.linspace(0, fs.size - 1, min(fs.size, 7))).astype(int))
        names = [(disp.labels[k] if k < len(disp.labels) and disp.labels[k] else f"mode {k + 1}")
                 for k in range(disp.beta2.shape[1])]
        lines += ["", f"dispersion: beta [rad/m] of the tracked modes, {fs.size} frequencies "
                  f"{_f_ghz(fs[0])} - {_f_ghz(fs[-1])} GHz (tracked by field overlap; '-' evanescent):"]
        head = ["f [GHz]"] + [f"{k + 1}: {n}" for k, n in enumerate(names)]
        rows = [[_f_ghz(fs[i])] + [(_g(math.sqrt(b2), 6) if b2 > 0 else "-") for b2 in disp.beta2[i]]
                for i in picks]
        lines += _grid(head, rows, set(range(len(head))))
        low = float(np.min(disp.overlap))
        if low < 0.9:
            lines.append(f"  lowest overlap between neighbouring frequencies {low:.2f}: take more points to be "
                         "sure of the tracking")
    return "\n".join(lines) + "\n"


def loaded_document(study, title=None) -> dict:
    """A JSON-ready dict of a :class:`femodes.loaded.LoadedStudy` (SI units, no NaN)."""
    from . import __version__

    sec = study.section
    doc = {
        "femodes_version": __version__, "title": title, "units": dict(LOADED_UNITS),
        "section": {"kind": sec.kind, "description": sec.describe(),
                    "params": {k: float(v) for k, v in sec.params.items()
                               if isinstance(v, (int, float)) and not isinstance(v, bool)}},
        "fill": {"eps_r": study.eps_r, "mu_r": study.mu_r, "tan_delta": study.tan_delta},
        "regions": [{"name": m.name or None, "eps_r": m.eps_r, "mu_r": m.mu_r, "tan_delta": m.tan_delta}
                    for m in sec.materials],
        "accuracy": study.accuracy,
        "discretisation": {"unknowns": int(study.n_dofs), "element_order": int(study.order),
                           "elements": "Nedelec (transverse E) and Lagrange (E_z)"},
        "walls": {"conductor": study.conductor, "conductivity": _finite(study.conductivity),
                  "roughness": _finite(study.roughness)},
        "cutoffs": [{"index": c.index, "label": c.label, "field": c.field, "fc": c.fc, "fc_error": c.fc_error,
                     "parent": c.parent, "parent_share": _finite(c.parent_share)} for c in study.cutoffs],
        "single_mode_band": None if study.single_mode_band is None else
        {"f_low": study.single_mode_band[0], "f_high": study.single_mode_band[1]},
    }
    if study.frequency is not None:
        doc["at_frequency"] = {"frequency": study.frequency, "unknowns": int(study.n_dofs_at_f),
                               "more_may_propagate": bool(study.more_propagate), "modes": [{
                                   "index": m.index, "label": m.label, "family": m.family, "parent": m.parent,
                                   "parent_share": _finite(m.parent_share),
                                   "beta": _finite(m.beta().real) if m.propagating else None,
                                   "alpha": None if m.propagating else _finite(abs(m.beta())),
                                   "beta_error": _finite(m.beta_error),
                                   "guide_wavelength": _finite(m.guide_wavelength()),
                                   "effective_permittivity": _finite(m.effective_permittivity),
                                   "phase_velocity": _finite(m.phase_velocity()),
                                   "group_velocity": _finite(m.group_velocity()),
                                   "alpha_dielectric": _finite(m.dielectric_attenuation()),
                                   "alpha_conductor": _finite(ac), "alpha_conductor_error": _finite(ac_err),
                                   "e_share": _finite(m.e_share), "h_share": _finite(m.h_share)}
                                   for m in study.modes for ac, ac_err in (_loaded_wall_loss(m, study),)]}
    d = study.dispersion
    if d is not None:
        b2 = np.asarray(d.beta2, dtype=float)
        doc["dispersion"] = {"frequencies": [float(f) for f in d.frequencies],
                             "labels": [l or None for l in d.labels] or None,
                             "beta": [[_finite(math.sqrt(v)) if v > 0 else None for v in row] for row in b2],
                             "beta_squared": [[float(v) for v in row] for row in b2],
                             "family": [[str(f) for f in row] for row in d.family],
                             "overlap": [[float(v) for v in row] for row in d.overlap]}
    return _clean(doc)


def write_loaded_csv(study, path):
    """The modes at the frequency (or, without one, the cutoffs) of a loaded study as CSV (SI)."""
    import io

    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    if study.frequency is not None:
        w.writerow(["index", "label", "family", "frequency_Hz", "beta_rad_per_m", "beta_error_rad_per_m",
                    "guide_wavelength_m", "effective_permittivity", "vp_over_c", "vg_over_c", "e_share",
                    "h_share", "alpha_dielectric_Np_per_m", "alpha_conductor_Np_per_m",
                    "alpha_conductor_error_Np_per_m"])
        for m in study.modes:
            if not m.propagating:
                continue
            w.writerow([m.index, m.label, m.family, repr(study.frequency), repr(float(m.beta())),
                        repr(m.beta_error), repr(m.guide_wavelength()), repr(m.effective_permittivity),
                        repr(m.phase_velocity()), repr(m.group_velocity()), repr(m.e_share), repr(m.h_share),
                        repr(m.dielectric_attenuation())] + [repr(v) for v in _loaded_wall_loss(m, study)])
    else:
        w.writerow(["index", "label", "field_at_cutoff", "fc_Hz", "fc_error_Hz"])
        for c in study.cutoffs:
            w.writerow([c.index, c.label, c.field, repr(c.fc), repr(c.fc_error)])
    _write_text(path, buf.getvalue(), "CSV")
    return str(path)


def write_loaded_fields(study, path, subdivisions=2):
    """The modes at the frequency of a loaded study as a field file through meshio (format from
    the file name: .vtu for ParaView, .xdmf, ...).  The mesh is written element by element, each
    element cut into ``subdivisions``^2 triangles with points of its own, so that the jump of the
    normal E across material interfaces is kept (vertices on an interface appear once per side).

    Point data per propagating mode ``NN_label`` (SI, the normalisation of
    femodes.vector.VectorMode: int (|E_t|^2 + |E_z|^2) dA = 1, units 1/m for E, A/(V m) x 1/m for
    H): ``_Et`` and ``_Ht`` the transverse fields (z component 0), ``_Ez`` and ``_Hz`` the
    longitudinal ones (which are in quadrature with the transverse: their imaginary part is
    written, the real part is zero), ``_absE`` = |E|.  Cell data: ``region`` (0 the fill, i the
    i-th region) and ``eps_r``.  Returns the path."""
    import meshio

    from .figures import safe_name
    from .mesh import triangle_regions

    if study.frequency is None or not any(m.propagating for m in study.modes):
        raise FemodesError("--fields writes the modes at a frequency: give [analysis] frequency (at which "
                           "at least one mode propagates) in the case file")
    modes = [m for m in study.modes if m.propagating]
    prob = modes[0].vector.problem
    data, tri, xy = {}, None, None
    for m in modes:
        x, y, t, F = prob.sample(m.vector, subdivisions)
        tri, xy = t, (x, y)
        key = f"{m.index + 1:02d}_{safe_name(m.label)}"
        zero = np.zeros_like(x)
        data[key + "_Et"] = np.column_stack([F[0].real, F[1].real, zero])
        data[key + "_Ez"] = F[2].imag
        data[key + "_Ht"] = np.column_stack([F[3].real, F[4].real, zero])
        data[key + "_Hz"] = F[5].imag
        data[key + "_absE"] = np.sqrt(np.abs(F[0]) ** 2 + np.abs(F[1]) ** 2 + np.abs(F[2]) ** 2)
    per_element = tri.shape[0] // prob.mesh.t.shape[1]
    regions = np.repeat(triangle_regions(study.section, prob.mesh.p, prob.mesh.t[:3]), per_element)
    eps = np.repeat(prob.eps_r, per_element)
    xyz = np.column_stack([xy[0], xy[1], np.zeros_like(xy[0])])
    try:
        meshio.write(str(path), meshio.Mesh(xyz, [("triangle", tri)], point_data=data,
                                            cell_data={"region": [regions], "eps_r": [eps]}))
    except Exception as exc:  # meshio raises its own types for unknown formats
        raise FemodesError(f"cannot write field file {path}: {exc}; use a name ending in .vtu or .xdmf") from None
    return str(path)


def write_loaded_figures(study, output):
    """The figures of [output] for a loaded study: field patterns of the modes at the frequency
    ("fields") and the dispersion chart ("dispersion").  Returns the written paths."""
    if not output.figures:
        return []
    figs = _figures_module(output)
    from pathlib import Path

    d = Path(output.directory)
    d.mkdir(parents=True, exist_ok=True)
    out = []
    if "fields" in output.figures and study.frequency is not None:
        prop = [m for m in study.modes if m.propagating]
        n = len(prop) if output.field_count is None else min(output.field_count, len(prop))
        for m in prop[:n]:
            p = d / f"mode{m.index + 1:02d}_{figs.safe_name(m.label)}.{output.format}"
            figs.loaded_field_pattern(m, p, section=study.section)
            out.append(str(p))
    if "dispersion" in output.figures and study.dispersion is not None:
        p = d / f"dispersion.{output.format}"
        figs.dispersion_chart(study.dispersion, p, section=study.section, eps_r=study.eps_r, mu_r=study.mu_r,
                              empty=study.empty_modes)
        out.append(str(p))
    import matplotlib.pyplot as plt

    plt.close("all")
    return out
