"""Fixed-width text tables of a solve for people (engineering units: GHz, mm, dB/m, ohm, kW / MW).
"""

from __future__ import annotations

import math

import numpy as np

from femodes.constants import C0, __version__
from femodes.geometry.standards import find_standard, standard_size
from femodes.modes.display import band_text, cutoff_columns
from femodes.quantities import NP_TO_DB, modal_impedances, pair_impedances
from femodes.report.analysis import PERTURBATION_LIMIT, as_study, sweep_name
from femodes.report.text import (
    _class_column_needed,
    _f_ghz,
    _g,
    _grid,
    _mm,
    _section_info,
    _share,
    _sig_digits,
    _significant,
    _wrap,
    power_text,
)


def modes_table(result, title=None, family=None) -> str:
    """The lowest cutoffs as a fixed-width text table in GHz and mm, with header lines and the
    single-mode band, for a ModeSet or a :class:`femodes.api.Study` of either kind of guide.
    ``family`` ('TE' or 'TM') notes that only one family was solved for."""

    study = as_study(result)
    family = family if family is not None else study.family
    lines = [f"femodes {__version__}" + (f" -- {title}" if title else "")]
    sec = _section_info(study)
    lines.append(f"section: {sec['description']}")
    if "symmetry" in sec:
        lines.append(f"symmetry: {sec['symmetry']}")
    if "frame" in sec:
        fr = sec["frame"]
        lines.append(f"placed: own origin at ({fr['x0'] * 1e3:.6g}, {fr['y0'] * 1e3:.6g}) mm, "
                     f"own x axis at {math.degrees(fr['angle']):.6g} deg")
    fill = f"fill: eps_r = {study.eps_r:g}, mu_r = {study.mu_r:g}"
    if study.loaded:
        fill += (f", tan_delta = {study.tan_delta:.3g}" if study.tan_delta else "") + f"; regions: {_regions_text(study)}"
        lines += [fill, f"full-vector solve (edge elements of order {study.order}); accuracy asked: "
                  f"{study.accuracy:.1e} (relative, on fc); unknowns: {study.n_dofs}"]
    else:
        lines += [fill, f"accuracy asked: {study.accuracy:.1e} (relative, on kc); unknowns: {study.n_dofs} "
                  f"(element order {study.order})" + (f"; {family} modes only" if family else "")]
    lines.append("")

    modes = study.modes
    with_class = _class_column_needed(sec)  # D1 / D2 about the own axes: the parity column says it
    if study.loaded:
        lines.append("cutoffs (beta = 0) of the loaded guide:")
    lines += _grid(*cutoff_columns(modes, study.loaded, with_class))  # the same columns as the notebook's HTML
    if study.loaded:
        lines += _wrap("(label: TE-type has only transverse E at cutoff, TM-type only E_z; 'from': the "
                       "empty-guide mode whose field at cutoff it mostly has; cutoff wl: the free-space "
                       "wavelength at cutoff.  Above cutoff the modes are hybrid in general.)", "  ", "  ")
    lines.append("")
    lines.append(band_text(modes, family))
    line = getattr(modes, "line", None) if not study.loaded else None
    if line is not None and line.n_conductors > 1:
        lines += [""] + line_table(line)
    return "\n".join(lines) + "\n"


def line_table(line):
    """Text lines of a multi-conductor line: the capacitance and inductance matrices (pF/m, nH/m)
    with their errors, the modal impedances and, for a symmetric pair, the even, odd,
    differential and common-mode impedances (ohm)."""
    n = line.n_conductors
    out = [f"multi-conductor line: {n} inner conductors (voltages against the outer wall; conductor k at "
           + ", ".join(f"({_mm(x)}, {_mm(y)})" for x, y in line.centroids) + " mm)"]
    for name, M, dM, scale, unit in (("C", line.capacitance, line.capacitance_error, 1e12, "pF/m"),
                                     ("L", line.inductance, line.inductance_error, 1e9, "nH/m")):
        head = [f"{name} [{unit}]"] + [str(k + 1) for k in range(n)]
        rows = [[str(i + 1)] + [f"{_g(M[i, j] * scale, 6)} ± {dM[i, j] * scale:.1g}" for j in range(n)]
                for i in range(n)]
        out += _grid(head, rows, set(range(1, n + 1)))
    mi = modal_impedances(line)
    rows = [[lab, _g(z, 6), f"{e:.1g}", "(" + ", ".join(f"{v:+.3f}" for v in mi.voltages[:, k]) + ")"]
            for k, (lab, z, e) in enumerate(zip(mi.labels, mi.impedance, mi.error))]
    out += _grid(["mode", "Z [ohm]", "± [ohm]", "conductor voltages"], rows, {1, 2})
    if line.symmetric_pair:
        p = pair_impedances(line)
        out.append(f"symmetric pair: Z_even = {_g(p.even, 6)} ± {p.even_error:.1g} ohm, Z_odd = {_g(p.odd, 6)} ± "
                   f"{p.odd_error:.1g} ohm; differential 2 Z_odd = {_g(p.differential, 6)} ohm, common Z_even / 2 = "
                   f"{_g(p.common, 6)} ohm")
    return out


def report_table(result, analysis=None, title=None, family=None) -> str:
    """The whole text report of a solve, the same for every guide: the cutoffs
    (:func:`modes_table`), the quantities at the analysis frequency (:func:`analysis_table`) and
    the dispersion over the band (:func:`dispersion_table`) where they were asked for."""
    study = as_study(result)
    text = modes_table(study, title=title, family=family)
    if analysis is not None:
        text += "\n" + analysis_table(analysis, study)
    elif study.loaded and study.frequency is not None:
        text += "\n" + f"at f = {_f_ghz(study.frequency)} GHz: give an [analysis] table for the quantities\n"
    if study.dispersion is not None:
        text += "\n" + dispersion_table(study)
    return text


def dispersion_table(study) -> str:
    """A few rows of the dispersion over the band: beta (rad/m) of each followed mode."""
    disp = study.dispersion
    fs = disp.frequencies
    picks = np.unique(np.round(np.linspace(0, fs.size - 1, min(fs.size, 7))).astype(int))
    names = [(disp.labels[k] or f"mode {k + 1}") for k in range(disp.beta.shape[1])]
    how = ("tracked by field overlap" if disp.overlap is not None else
           "closed form beta = sqrt(k^2 - kc^2) from each cutoff")
    lines = [f"dispersion: beta [rad/m] of the modes that propagate in the band, {fs.size} frequencies "
             f"{_f_ghz(fs[0])} - {_f_ghz(fs[-1])} GHz ({how}; '-' evanescent; a+jb a member of a complex pair):"]
    head = ["f [GHz]"] + [f"{k + 1}: {n}" for k, n in enumerate(names)]
    def cell(b):
        if abs(b.imag) <= 1e-12 * abs(b):
            return _g(b.real, 6) if b.real > 0 else "-"
        return f"{_g(b.real, 4)}{'-' if b.imag < 0 else '+'}j{_g(abs(b.imag), 4)}" if b.real > 1e-12 * abs(b) else "-"

    rows = [[_f_ghz(fs[i])] + [cell(b) for b in disp.beta[i]] for i in picks]
    lines += _grid(head, rows, set(range(len(head))))
    if disp.overlap is not None:
        low = float(np.min(disp.overlap))
        if low < 0.9:
            lines.append(f"  lowest overlap between neighbouring frequencies {low:.2f}: take more points to be "
                         "sure of the tracking")
    return "\n".join(lines) + "\n"


def _walls_text(an):
    s = an.settings
    rough = "smooth" if s.roughness == 0 else f"rms roughness {s.roughness * 1e6:.4g} um (Hammerstad-Jensen)"
    if an.loaded:  # a loaded guide: the dielectric losses are solved with the modes
        return f"walls: {s.conductor_text}, {rough}; fill and regions: the loss tangents they were given"
    fill = "lossless" if s.tan_delta == 0 else f"tan_delta = {s.tan_delta:.3g}"
    return f"walls: {s.conductor_text}, {rough}; fill: {fill}"


def analysis_table(an, study=None) -> str:
    """The quantities of an :class:`Analysis` as text (GHz, mm, dB/m, ohm, kW/MW), ending with
    the band lines and the power-handling cautions.  The same writer for every guide: a loaded
    guide's modes add their beta error, eps_eff, longitudinal energy shares and wall-loss error
    (``study``, if given, adds its notes on the modes asked for)."""

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
    loaded = an.loaded
    if prop:
        lines.append(f"propagating at {fg} GHz:" + (" the modes of largest beta" if loaded else ""))
        rows = []
        for q in prop:
            w, ls, m = q.waves, q.losses, q.mode
            if loaded:
                sig = _sig_digits(float(w.beta), float(w.beta_error))
                e_sh, h_sh = m.longitudinal_shares()
                e = q.errors or {}
                ce = float(ls.conductor_error)
                te = e.get("total", math.nan)
                vg_e = e.get("group_velocity", math.nan)
                rows.append([str(m.index + 1), m.label, m.family, _significant(float(w.beta), sig),
                             f"{float(w.beta_error):.0e}" if w.beta_error > 0 else "-", _g(w.guide_wavelength * 1e3),
                             f"{m.effective_permittivity:.5f}", f"{w.phase_velocity / C0:.4f}",
                             f"{w.group_velocity / C0:.4f}", f"{vg_e / C0:.0e}" if math.isfinite(vg_e) else "?",
                             _share(e_sh), _share(h_sh),
                             _g(ls.conductor_db, 4), f"{ce * NP_TO_DB:.0e}" if math.isfinite(ce) else "?",
                             _g(ls.dielectric_db, 4) if ls.dielectric > 0 else "0", _g(ls.total_db, 4),
                             f"{te * NP_TO_DB:.0e}" if math.isfinite(te) else "?"])
            else:
                e = q.errors or {}
                ce = float(ls.conductor_error)
                vg_e = e.get("group_velocity")
                te = e.get("total", ce)
                rows.append([str(m.index + 1), m.label, _g(w.beta), _g(w.guide_wavelength * 1e3),
                             f"{w.phase_velocity / C0:.4f}", f"{w.group_velocity / C0:.4f}",
                             _g(float(np.real(w.wave_impedance))),
                             _g(ls.conductor_db, 4), _g(ls.dielectric_db, 4), _g(ls.total_db, 4),
                             f"{te * NP_TO_DB:.0e}" if math.isfinite(te) else "?",
                             ("0" if vg_e == 0 else f"{vg_e / C0:.0e}") if vg_e is not None and math.isfinite(vg_e) else "?"])
        if loaded:
            lines += _grid(["#", "label", "family", "beta [rad/m]", "± [rad/m]", "guide wl [mm]", "eps_eff", "v_p/c",
                            "v_g/c", "± v_g/c", "Ez share", "Hz share", "walls [dB/m]", "± [dB/m]", "fill [dB/m]",
                            "loss [dB/m]", "± [dB/m]"],
                           rows, set(range(3, 17)) | {0})
            lines += _wrap("(label: the empty-guide mode it grows from, where its transverse E is mostly that "
                           "mode's; Ez / Hz share: the longitudinal share of the electric / magnetic energy, 0 "
                           "for TE / TM; eps_eff = (beta/k0)^2; fill: the loss tangents of the fill and regions)",
                           "  ", "  ")
            if an.derived is not None:
                d = an.derived
                lines += _wrap(f"(±: error bars; walls, fill, v_g, impedances and peak fields from re-solves at "
                               f"{fg} GHz on {len(d.unknowns)} meshes ({d.unknowns[0]} .. {d.unknowns[-1]} unknowns) "
                               f"at quantity accuracy {d.accuracy:g}" + ("" if d.met else ": not met, see the warnings")
                               + "; '?': not estimated; the second ± [dB/m] is of the total loss; beta's from "
                               "its own solve; power ± from the peak's)", "  ", "  ")
            if study is not None and study.more_propagate:
                lines.append(f"  every one of the {len(study.at_frequency)} modes asked for propagates: more may; "
                             "ask for more modes ([solve] modes or --modes) to see them all")
        else:
            lines += _grid(["#", "label", "beta [rad/m]", "guide wl [mm]", "v_p/c", "v_g/c", "Z_wave [ohm]",
                            "walls [dB/m]", "fill [dB/m]", "loss [dB/m]", "± [dB/m]", "± v_g/c"], rows,
                           {0, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11})
            if an.derived is not None:
                d = an.derived
                lines += _wrap(f"(±: error bars; walls, impedances and peak field from re-solves on {len(d.unknowns)} "
                               f"meshes ({d.unknowns[0]} .. {d.unknowns[-1]} unknowns) at quantity accuracy "
                               f"{d.accuracy:g}" + ("" if d.met else ": not met, see the warnings") + "; '?': not "
                               "estimated; ± [dB/m] of the total loss; v_g and the other wave quantities from the "
                               "cutoff's error; power ± twice the peak's relative error)", "  ", "  ")
        lines.append("")
        for q in prop:
            if q.impedances is None:
                continue
            z = q.impedances
            if q.mode.family == "TEM":
                val = z.get("PV")
                ze = (q.impedance_errors or {}).get("PV")
                lines.append(f"line impedance of {q.mode.label} (#{q.mode.index + 1}): Z0 = {_g(val, 5)}"
                             + (f" ± {ze:.1g}" if ze is not None else "") + " ohm "
                             "(from the electrostatic capacitance; the same for PV, PI and VI)")
                continue
            order = [s.impedance] + [k for k in ("PV", "PI", "VI") if k != s.impedance]
            errs = q.impedance_errors or {}

            def ztext(k):
                if z[k] is None:
                    return f"Z_{k} = n/a"
                e = errs.get(k)
                return f"Z_{k} = {_g(z[k], 5)}" + (f" ± {e:.1g}" if e is not None else "") + " ohm"

            parts = [ztext(k) for k in order]
            lines.append(f"impedance of {q.mode.label} (#{q.mode.index + 1}): {parts[0]}  (also {parts[1]}, {parts[2]})")
            if q.voltage_path is not None and not loaded:
                (x0, y0), (x1, y1) = q.voltage_path
                lines += _wrap(f"V along ({_mm(x0)}, {_mm(y0)}) -> ({_mm(x1)}, {_mm(y1)}) mm "
                               "(through the centre, wall to wall); I: the longitudinal wall current on the half "
                               "of the walls above the centre", "  ", "  ", width=110)
        lines.append("")
    powered = [q for q in prop if q.power is not None]
    if powered:
        ref = powered[0].power
        lines += _wrap(f"power handling at {fg} GHz (matched travelling wave; breakdown taken at a peak field of "
                       f"{ref.breakdown_field / 1e6:.4g} MV/m; rated = that power / safety factor "
                       f"{ref.safety_factor:g}):", "", "  ", width=110)
        rows = []
        for q in powered:
            p = q.power
            where = "-" if p.peak_location is None else f"({_mm(p.peak_location[0])}, {_mm(p.peak_location[1])})"
            gas = math.isfinite(p.peak_field_per_sqrt_watt)
            err = getattr(p, "peak_error", None)
            pe = getattr(p, "breakdown_power_error", None)
            rows.append([str(q.mode.index + 1), q.mode.label,
                         (_g(p.peak_field_per_sqrt_watt, 4) + (f" ± {err:.1g}" if err is not None else "")) if gas else "-",
                         where, f"{100 * pe / p.breakdown_power:.1g}" if gas and pe is not None else "?",
                         power_text(p.breakdown_power) if gas else "-", power_text(p.rated_power) if gas else "-"])
        lines += _grid(["#", "label", "peak |E| at 1 W [V/m]", "peak at (x, y) [mm]", "power ± [%]",
                        "power at breakdown", "rated power"],
                       rows, {0, 2, 4, 5, 6})
        for q in powered:
            for r in getattr(q.power, "regions", ()):
                if not r.gas:
                    x, y = r.peak_location
                    lines += _wrap(f"#{q.mode.index + 1} in {r.name} (eps_r {r.eps_r:g}): peak |E| at 1 W "
                                   f"{_g(r.peak_field_per_sqrt_watt, 4)} ± {r.peak_error:.1g} V/m at ({_mm(x)}, {_mm(y)}) "
                                   "mm: check it against the dielectric strength of the material", "  ", "    ")
        if any(getattr(q.power, "regions", None) is not None for q in powered):
            lines += _wrap("(peaks in the gas (eps_r near 1) are compared with the breakdown field; sharp wall and "
                           "material corners are excluded by a small disc and reported in the warnings)", "  ", "  ")
        lines.append("")
    if not prop:
        lines += [f"no mode propagates at {fg} GHz (below the lowest cutoff)", ""]

    ev = an.evanescent
    if ev:
        lines.append(f"below cutoff at {fg} GHz (evanescent: the field decays along the guide, no power is carried):")
        rows = [[str(q.mode.index + 1), q.mode.label, f"{q.mode.fc / 1e9:.6g}" if math.isfinite(q.mode.fc) else "-",
                 _g(q.waves.alpha * NP_TO_DB, 5)] for q in ev]
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
        std = _standard_of(study) if study is not None else None
        if std is not None:
            name, (s1, s2) = std
            lines.append(f"{name} (EIA standard size): its recommended band {s1 / 1e9:.4g} - {s2 / 1e9:.4g} GHz "
                         "(the standard's table, from memory)")
    if an.sweep is not None:
        fs = an.sweep.frequencies
        lines.append(f"analysis band: {_f_ghz(fs[0])} - {_f_ghz(fs[-1])} GHz, {fs.size} points")
        if b is not None and b.low > 0 and fs[0] < b.low:
            lines.append(f"  (it starts below the dominant cutoff {_f_ghz(b.low)} GHz: nothing propagates there)")
        if b is not None and fs[-1] > b.high:
            lines.append(f"  (it runs above the next cutoff {_f_ghz(b.high)} GHz: more than one mode can propagate)")
        if an.loaded and an.sweep.attenuation:
            lines += _wrap("(loss of each dispersion curve, from its full-vector fields at each frequency; no "
                           "error estimate per point; rated power over the band not computed for loaded guides)",
                           "  ", "  ")
        for idx, a in an.sweep.attenuation.items():
            number, label = sweep_name(an, idx)
            ok = np.isfinite(a)
            db = a * NP_TO_DB
            i_min, i_max = int(np.nanargmin(db)), int(np.nanargmax(db))
            text = (f"{'curve ' if an.loaded else '#'}{number} {label}: loss {_g(db[i_min], 4)} dB/m (at {_f_ghz(fs[i_min])} GHz) to "
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


def _standard_of(study):
    """(designation, recommended band Hz) when the section is an empty rectangle of a standard size."""
    sec = study.section
    if study.loaded or getattr(sec, "kind", None) not in ("rectangle", "rounded_rectangle"):
        return None
    name = find_standard(sec.params["width"], sec.params["height"])
    return None if name is None else (name, standard_size(name)[2])


def _regions_text(study):
    bits = []
    for i, m in enumerate(study.section.materials, start=1):
        name = f' "{m.name}"' if m.name else ""
        extra = (f", mu_r = {m.mu_r:g}" if m.mu_r != 1 else "") + (f", tan_delta = {m.tan_delta:.3g}"
                                                                   if m.tan_delta else "")
        bits.append(f"{i}{name}: eps_r = {m.eps_r:g}{extra}")
    return "; ".join(bits)
