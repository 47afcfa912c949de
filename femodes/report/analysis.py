"""Engineering quantities of a case file's [analysis] table, computed once from a solved mode set
(:mod:`femodes.quantities`, SI units) into an :class:`Analysis`, with the power-handling cautions
of :data:`femodes.quantities.CAUTIONS`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from femodes import quantities as Q
from femodes.api import Study
from femodes.errors import FemodesError
from femodes.geometry.section import Section
from femodes.modes import ModeSet
from femodes.quantities.convergence import derived_quantities, wave_errors
from femodes.quantities.loaded_convergence import loaded_derived_quantities

#: units of the numbers in the "analysis" object of :func:`analysis_document`
ANALYSIS_UNITS = {
    "frequency": "Hz", "beta": "rad/m", "alpha": "Np/m (decay below cutoff; 0 above)", "guide_wavelength": "m",
    "phase_velocity": "m/s", "group_velocity": "m/s", "wave_impedance": "ohm", "impedances": "ohm",
    "attenuation_np_per_m": "Np/m", "attenuation_db_per_m": "dB/m", "conductivity": "S/m", "roughness": "m (rms)",
    "surface_resistance": "ohm", "skin_depth": "m", "peak_field_per_sqrt_watt": "V/m per sqrt(W)",
    "peak_location": "m", "breakdown_field": "V/m", "breakdown_power": "W", "rated_power": "W",
    "corner_exclusion": "m", "beta_error": "rad/m", "effective_permittivity": "1 ((beta / k0)^2)",
    "e_share": "1 (E_z share of the electric energy)", "h_share": "1 (H_z share of the magnetic energy)",
}


#: a propagating mode whose loss is not small against its phase constant (alpha / beta above this)
#: is too close to cutoff for the power-loss (perturbation) method, which assumes alpha << beta
PERTURBATION_LIMIT = 0.01


def reliable_attenuation(mode, f, conductivity, roughness=0.0, tan_delta=0.0):
    """Attenuation (Np/m, array like ``f``) of ``mode`` at the frequencies ``f`` (Hz) where the
    power-loss method holds: NaN below cutoff and where alpha / beta > :data:`PERTURBATION_LIMIT`
    (just above cutoff, where beta -> 0 and the method is not valid)."""

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
    impedance_errors  their estimated errors (ohm) where computed, else None
    power      :class:`~femodes.quantities.PowerHandling` (propagating modes only, else None)
    notes      what limits the numbers of this mode
    errors     error bars (SI) of the other quantities where estimated: 'beta', 'guide_wavelength',
               'phase_velocity', 'group_velocity', 'wave_impedance' (homogeneous guides: from the
               cutoff's error; loaded: from beta's, v_g from the re-solves), 'conductor',
               'dielectric' (loaded), 'total' (Np/m), 'peak', 'breakdown_power', 'rated_power'
               (from the re-solves of :func:`femodes.quantities.derived_quantities` or
               :func:`femodes.quantities.loaded_derived_quantities`)
    """

    mode: object
    waves: object
    losses: object = None
    impedances: dict | None = None
    voltage_path: tuple | None = None
    power: object = None
    notes: tuple = ()
    impedance_errors: dict | None = None
    errors: dict | None = None

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
    names: dict | None = None  # key -> (number, label) of each curve; None: the keys are mode indices


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
    loaded: bool = False
    derived: object = None  # femodes.quantities.DerivedErrors (either kind of guide), or None

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


def _check_below_top(what, f, modeset, settings=None):
    """Refuse a table frequency or band top at or above the highest cutoff computed.  The message
    names the value as the settings say it was given (``frequency_from`` / ``band_from``, e.g.
    'frequency in [analysis]' or '--frequency') in their ``frequency_units`` (default GHz)."""
    top = max(m.fc for m in modeset)
    if f >= top:
        units = getattr(settings, "frequency_units", "GHz")
        scale = getattr(settings, "frequency_scale", 1e9)
        name = getattr(settings, f"{what}_from", None) or f"the analysis {what}"
        more = getattr(settings, "modes_from", None) or "modes in [solve] or --modes"
        raise FemodesError(f"{name} reaches {f / scale:.6g} {units}, at or above the highest cutoff computed "
                           f"({top / scale:.6g} {units}, {modeset[-1].label}): modes that were not computed could "
                           f"propagate there; solve for more modes ({more}) or lower the frequency")
    return top


def _voltage_cancels(mode, path, rel=1e-6):
    """True if int e_t . dl along ``path`` is zero by cancellation: below ``rel`` times the
    integral of |e_t . dl| (sampled on 400 points)."""

    (x0, y0), (x1, y1) = path
    t = np.linspace(0.0, 1.0, 401)
    s = 0.5 * (t[1:] + t[:-1])
    pts = np.array([x0 + (x1 - x0) * s, y0 + (y1 - y0) * s])
    ex, ey, _, _ = mode.fields(pts)
    along = np.abs(ex * (x1 - x0) + ey * (y1 - y0)) / (t.size - 1)
    total = float(np.nansum(along))
    return total > 0 and abs(Q.path_voltage(mode, path)) < rel * total


def as_study(result):
    """A :class:`femodes.api.Study` of ``result``: a Study as it is, a ModeSet (what
    :func:`femodes.solve` returns for a homogeneous guide) wrapped as one."""
    if isinstance(result, Study):
        return result
    if isinstance(result, ModeSet):
        section = result.section if result.section is not None else result.mesh
        return Study(section, float(result.eps_r), float(result.mu_r), 0.0, float(result.accuracy), int(result.order),
                     result, int(result.n_dofs), at_frequency=tuple(result), n_dofs_at_f=int(result.n_dofs),
                     family=result.family)
    raise FemodesError(f"expected the result of femodes.solve() or femodes.study(), got {type(result).__name__}")


def analyse(result, settings, family=None) -> Analysis:
    """The engineering quantities of a solve asked for by ``settings`` (a
    :class:`femodes.case.AnalysisSettings`): wave quantities of every mode, losses and power handling
    of the propagating ones and the characteristic impedances of the dominant (and any TEM) mode at
    the table frequency, the single-mode and recommended bands, and (homogeneous guides) the
    attenuation over the band.  ``result``: a ModeSet or a :class:`femodes.api.Study` of either
    kind of guide; a loaded guide's Study must have been solved at the table frequency.

    Power handling is computed at the table frequency only (it searches the field for its peak);
    over the band, the rated power of TE and TEM modes follows from it exactly, since their electric
    field is purely transverse and its peak per sqrt(W) scales as sqrt(Z_w):
    P(f) = P(f0) Z_w(f0) / Z_w(f).
    """
    study = as_study(result)
    if study.loaded:
        return _analyse_loaded(study, settings)
    modeset = study.modes
    family = family if family is not None else study.family
    if not len(modeset):
        raise FemodesError("the mode set is empty: nothing to analyse")
    f = float(settings.table_frequency)
    if settings.band is not None:  # the band first: the table frequency may be its centre
        _check_below_top("band", settings.band[1], modeset, settings)
    top = _check_below_top("frequency", f, modeset, settings)
    sigma, rough, td = settings.conductivity, settings.roughness, settings.tan_delta
    derived = None
    qa = getattr(settings, "quantity_accuracy", 0.0)
    if qa and isinstance(modeset.section, Section) and any(m.family == "TEM" or m.fc < f for m in modeset):
        # error bars of the field-derived quantities: re-solves on a ladder of meshes, refined
        # until they meet quantity_accuracy; the values reported are those of the finest mesh
        derived = derived_quantities(modeset, f, sigma, rough, td, settings.breakdown_field, accuracy=qa)
        modeset = derived.modes
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
                    z[kind] = float(Q.impedance(m, f, kind))
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
        ph = Q.power_handling(m, f, settings.breakdown_field, settings.safety_factor)
        z_err, errs = None, None
        if derived is not None:
            ls, z_err, ph, errs = _with_errors(derived, m, f, ls, z, ph)
        rows.append(ModeQuantities(m, wq, ls, z, path, ph, tuple(notes), z_err, errs))
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
                    top_cutoff=top, cautions=tuple(Q.CAUTIONS), derived=derived)


def _with_errors(derived, m, f, ls, z, ph):
    """(losses, impedance errors, power handling, errors) of mode ``m`` with the error bars of
    ``derived`` (:func:`derived_quantities`) and those of the wave quantities from the cutoff's
    error.  The dielectric loss k^2 tan_delta / (2 beta) carries beta's relative error; the
    breakdown and rated power (E_bd / peak)^2 twice the peak's."""
    qs = derived.quantities.get(m.index, {})
    errs = wave_errors(m, f)

    def err(name):
        q = qs.get(name)
        return None if q is None or not math.isfinite(q.error) else float(q.error)

    ce = err("conductor")
    beta = float(Q.wave_quantities(m, f).beta)
    de = float(ls.dielectric) * (errs["beta"] / beta if beta > 0 else 0.0)
    if ce is not None:
        ls = replace(ls, conductor_error=ce)
        errs["conductor"] = ce
        errs["total"] = ce + de
    z_err = None
    if z is not None:
        z_err = {k: (err("Z_" + k) if z.get(k) is not None else None) for k in ("PV", "PI", "VI")}
    pe = err("peak")
    if pe is not None and ph is not None:
        rel = 2 * pe / ph.peak_field_per_sqrt_watt
        ph = replace(ph, peak_error=pe, breakdown_power_error=rel * ph.breakdown_power,
                     rated_power_error=rel * ph.rated_power)
        errs.update(peak=pe, breakdown_power=ph.breakdown_power_error, rated_power=ph.rated_power_error)
    return ls, z_err, ph, errs


def _analyse_loaded(study, settings):
    """:func:`analyse` for a loaded guide: the quantities of the modes solved at the frequency."""
    f = float(settings.table_frequency)
    if study.frequency is None or not math.isclose(study.frequency, f, rel_tol=1e-12):
        raise FemodesError(f"the loaded guide was not solved at the analysis frequency {f / 1e9:.6g} GHz: "
                           "pass the same frequency to femodes.study()")
    sigma, rough = settings.conductivity, settings.roughness
    section = study.section if isinstance(study.section, Section) else None  # a mesh file: found on the mesh
    derived, fine = None, {}
    qa = getattr(settings, "quantity_accuracy", 0.0)
    if qa and section is not None and any(m.family != "complex" and m.propagating for m in study.at_frequency):
        # error bars of the field-derived quantities: re-solves at the frequency on a ladder of
        # meshes, refined until they meet quantity_accuracy; the values reported are those of the
        # finest mesh (a mesh file keeps the estimate of order p against p - 1 on its one mesh)
        derived = loaded_derived_quantities(study, sigma, rough, settings.breakdown_field, accuracy=qa)
        fine = {m.index: m for m in derived.modes}
    rows = []
    for m in study.at_frequency:
        m = fine.get(m.index, m)
        wq = Q.wave_quantities(m, f)
        if not wq.propagates:
            rows.append(ModeQuantities(m, wq))
            continue
        notes = []
        ls = Q.losses(m, f, sigma, rough)
        beta = float(wq.beta)
        if beta > 0 and float(ls.total) / beta > PERTURBATION_LIMIT:
            notes.append(f"loss is not small against beta (alpha / beta = {float(ls.total) / beta:.2g}): too close to "
                         "cutoff for the power-loss method; the loss figure is not reliable")
        z, z_err, path = None, None, None
        if m.index == study.at_frequency[0].index or m.family == "TEM":
            try:
                li = Q.loaded_impedances(m, f, section=section)
            except FemodesError as exc:
                notes.append(f"impedances not available: {exc}")
            else:
                z = {k: _or_none(li.value(k)) for k in ("PV", "PI", "VI")}
                z_err = {k: _or_none(li.error(k)) for k in ("PV", "PI", "VI")}
                path = tuple(tuple(p) for p in li.path) if li.path is not None and len(li.path) == 2 else None
                notes.append(f"impedances: V along the path given, I on {li.wall}")
        ph = Q.power_handling(m, f, settings.breakdown_field, settings.safety_factor, section=section)
        errs = None
        if derived is not None and m.index in derived.quantities:
            ls, z_err, ph, errs = _with_loaded_errors(derived, m, wq, ls, z, ph)
            if z is not None and not any(k.startswith("Z_") for k in derived.quantities[m.index]):
                notes.append("one member of a degenerate group: its impedances depend on the orientation the solver "
                             "gave it (not estimated)")
        rows.append(ModeQuantities(m, wq, ls, z, path, ph, tuple(notes), z_err, errs))
    sweep = None
    disp = study.dispersion
    if settings.band is not None and disp is not None and disp.solved is not None:
        fs = np.asarray(disp.frequencies, dtype=float)
        att, names = {}, {}
        for k in range(disp.beta.shape[1]):
            a = np.full(fs.shape, np.nan)
            for i in range(fs.size):
                vm = disp.solved.modes[i][k]
                ac, ad = Q.vector_mode_attenuation(vm, sigma, rough)
                total = ac + ad
                if math.isfinite(total) and total <= PERTURBATION_LIMIT * abs(complex(vm.beta)):
                    a[i] = total
            if np.any(np.isfinite(a)):
                att[k] = a
                names[k] = (k + 1, disp.labels[k] or f"mode {k + 1}")
        sweep = Sweep(fs, att, {}, names)
    band = None
    cuts = study.modes
    if len(cuts) >= 2:
        f1, f2 = cuts[0].fc, cuts[1].fc
        lo, hi = Q.RECOMMENDED_LOW * f1, Q.RECOMMENDED_HIGH * f2
        band = Q.Band(f1, f2, f2 / f1, lo if lo < hi else None, hi if lo < hi else None, cuts[0].label, cuts[1].label)
    return Analysis(settings=settings, frequency=f, modes=tuple(rows), band=band, sweep=sweep, family=None,
                    top_cutoff=math.nan, cautions=tuple(Q.CAUTIONS), loaded=True, derived=derived)


def _with_loaded_errors(derived, m, wq, ls, z, ph):
    """(losses, impedance errors, power handling, errors) of the loaded mode ``m`` (the finest
    mesh's of :func:`loaded_derived_quantities`) with the ladder's error bars: wall and dielectric
    loss, group velocity, impedances, the peak in the gas and in each region.  beta's bar is the
    mode's own (``beta_error``); guide wavelength 2 pi / beta and phase velocity omega / beta carry
    its relative error, and so does the wave impedance omega mu / beta of a TE mode.  Breakdown and
    rated power (E_bd / peak)^2: (1 / (1 - e))^2 - 1 relative, e the peak's relative error."""
    qs = derived.quantities.get(m.index, {})

    def err(name):
        q = qs.get(name)
        return None if q is None or not math.isfinite(q.error) else float(q.error)

    beta = float(wq.beta)
    rel = float(m.beta_error) / beta if beta > 0 else math.nan
    errs = {"beta": float(m.beta_error), "guide_wavelength": rel * float(wq.guide_wavelength),
            "phase_velocity": rel * float(wq.phase_velocity)}
    zw = float(np.real(wq.wave_impedance))
    if math.isfinite(zw):
        errs["wave_impedance"] = rel * zw
    if err("group_velocity") is not None:
        errs["group_velocity"] = err("group_velocity")
    ce, de = err("conductor"), err("dielectric")
    if de is None and not float(ls.dielectric) > 0:
        de = 0.0  # lossless fill and regions: exactly 0
    if ce is not None:
        ls = replace(ls, conductor_error=ce)
        errs["conductor"] = ce
    if de is not None:
        errs["dielectric"] = de
    if ce is not None and de is not None:
        errs["total"] = ce + de
    z_err = None
    if z is not None:
        z_err = {k: (err("Z_" + k) if z.get(k) is not None else None) for k in ("PV", "PI", "VI")}
    if ph is not None:
        regions = tuple(replace(r, peak_error=err("peak:" + r.name)) if err("peak:" + r.name) is not None else r
                        for r in ph.regions)
        ph = replace(ph, regions=regions)
        pe = err("peak")
        if pe is not None and math.isfinite(ph.peak_field_per_sqrt_watt):
            # (E_bd / (peak - e))^2 - (E_bd / peak)^2: the larger side of the power's interval
            x = pe / ph.peak_field_per_sqrt_watt
            rel_p = (1.0 / (1.0 - x)) ** 2 - 1.0 if x < 1 else math.inf
            ph = replace(ph, peak_error=pe, breakdown_power_error=rel_p * ph.breakdown_power,
                         rated_power_error=rel_p * ph.rated_power)
            errs.update(peak=pe, breakdown_power=ph.breakdown_power_error, rated_power=ph.rated_power_error)
    return ls, z_err, ph, errs


def _or_none(x):
    x = float(x)
    return x if math.isfinite(x) else None


def _mode_of(an, index):
    return next(q.mode for q in an.modes if q.mode.index == index)


def sweep_name(an, key):
    """(number shown, label) of a curve of the band sweep: the mode's (homogeneous guides) or the
    tracked dispersion curve's (loaded guides)."""
    if an.sweep.names is not None:
        return an.sweep.names[key]
    m = _mode_of(an, key)
    return m.index + 1, m.label
