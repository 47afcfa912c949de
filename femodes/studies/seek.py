"""Goal seeking: the parameter value(s) at which a guide meets its targets.

``seek(femodes.double_ridge, {...}, {"ridge_width": (4e-3, 12e-3)}, {"fc1": 2.0e9})`` finds the
ridge width, within the bounds given, at which the dominant cutoff is 2.0 GHz.  Targets:
``"fcN"`` the N-th cutoff (cutoff order), ``"f_high"`` the upper edge of the single-mode band,
``"ratio"`` the single-mode ratio f_high / f_low; values in Hz (the ratio: a number).  At an
analysis frequency (``frequency=``, Hz): ``"z_pv"`` the power-voltage impedance of the dominant
mode (ohm) and ``"alpha"`` its attenuation, conductor plus dielectric (Np/m; ``conductivity``,
``roughness``, ``tan_delta`` as for :func:`femodes.sweep`), computed as a sweep point computes
them (:mod:`femodes.studies.pointwise`, with their errors).

One free parameter: bracketed root finding (scipy.optimize.brentq) of quantity - target, which
needs the target between the values at the two bounds (else one clear message saying how close
the bounds come).  The solve accuracy is the caller's; the parameter tolerance is derived from
it: iterations stop when a step moves the quantity by less than its own error bar.  Two free
parameters for two targets: a bounded least-squares solve (scipy.optimize.least_squares) of the
two residuals scaled by their targets.

The answer's uncertainty: (the error of the quantity at the solution + its residual |reached -
target|) divided by its slope (a secant to the nearest evaluation whose quantity differs by more
than ten times both error bars, else the smallest secant), i.e. how far the
parameter may be off because the quantity itself is only known to within its error bar and the
iteration stopped short of the exact root; for two parameters, the same through the inverse
Jacobian.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import optimize

from femodes import quantities as Q
from femodes.api import _check_count, _loaded_modes, solve
from femodes.errors import FemodesError, material_number
from femodes.studies.loaded_sensitivity import RegionCallError, _build, _raw_cutoffs
from femodes.studies.pointwise import homogeneous_partner, quantities_at
from femodes.studies.sweeps import SWEEP_OPTIONS, _number, _regions, _shape_function, _split

__all__ = ["seek", "SeekResult"]


@dataclass(frozen=True)
class SeekResult:
    """values: parameter -> value found (SI); errors: parameter -> its uncertainty (SI);
    achieved: target -> value reached (Hz, or the ratio); achieved_error: target -> its error;
    solves: how many solves it took."""

    values: dict
    errors: dict
    achieved: dict
    achieved_error: dict
    solves: int


#: targets computed at an analysis frequency (need ``frequency=``)
FREQUENCY_TARGETS = ("z_pv", "alpha")


def _target_names(targets):
    if not isinstance(targets, dict) or not targets:
        raise FemodesError("targets must be a dict such as {'fc1': 2.0e9} (fcN the N-th cutoff in Hz, 'f_high' "
                           "the top of the single-mode band, 'ratio' the single-mode ratio)")
    out = {}
    for name, value in targets.items():
        ok = name in ("f_high", "ratio") + FREQUENCY_TARGETS or (isinstance(name, str) and name.startswith("fc") and name[2:].isdigit()
                                             and int(name[2:]) >= 1)
        if not ok:
            raise FemodesError(f"unknown target {name!r}: use fcN (the N-th cutoff, e.g. fc1), f_high, ratio, or at a "
                               "frequency z_pv (ohm) or alpha (Np/m)")
        v = _number(f"target {name}", value)
        if v <= 0:
            raise FemodesError(f"target {name} must be positive, got {value!r}")
        out[name] = v
    return out


def _quantities(ms, names, at=None):
    """{target name: (value, error)} of a solved mode set (``at``: a function giving the
    quantities of :func:`femodes.studies.pointwise.quantities_at` of its dominant mode)."""
    out = {}
    if any(n in FREQUENCY_TARGETS for n in names):
        q = at(ms)
        for name in names:
            if name == "z_pv":
                out[name] = (q["z_pv"][0], q["z_pv_error"][0])
            elif name == "alpha":
                out[name] = (q["alpha_c"][0] + q["alpha_d"][0], q["alpha_c_error"][0] + q["alpha_d_error"][0])
            else:
                continue
            if not math.isfinite(out[name][0]):
                raise FemodesError(f"target {name} is not defined for the dominant mode at the analysis frequency "
                                   "(below its cutoff there, or its voltage cancels): change the frequency or the "
                                   "bounds")
        names = [n for n in names if n not in FREQUENCY_TARGETS]
    fcs = [(m.fc, m.fc_error) for m in ms]
    band = None
    for name in names:
        if name.startswith("fc"):
            n = int(name[2:])
            if n > len(fcs):
                raise FemodesError(f"target {name} needs at least {n} modes: raise modes=")
            out[name] = fcs[n - 1]
            continue
        if band is None:
            first = ms[0]
            same = set(first.degenerate_with) | {first.index}
            rest = [m for m in ms if m.index not in same]
            if not rest:
                raise FemodesError(f"target {name} needs the second distinct cutoff: raise modes=")
            band = (first, rest[0])
        f1, f2 = band
        if name == "f_high":
            out[name] = (f2.fc, f2.fc_error)
        else:
            r = f2.fc / f1.fc
            out[name] = (r, r * (f2.fc_error / f2.fc + f1.fc_error / f1.fc))
    return out


def seek(shape, parameters, vary, targets, *, modes=None, accuracy=1e-6, frequency=None, conductivity=5.8e7,
         roughness=0.0, tan_delta=0.0, regions=None, **options):
    """The values of the parameters in ``vary`` (name -> (low, high) bounds, SI) at which the
    ``targets`` are met (see the module docstring); the other parameters fixed at
    ``parameters``.  As many free parameters as targets (one or two).  ``modes`` defaults to
    what the targets need plus two; ``options`` go to :func:`femodes.solve` (eps_r, mu_r,
    family, order).  Besides the shape's parameters the fill's ``eps_r`` or ``mu_r`` may be
    free (then not an option): a homogeneous fill scales every cutoff by 1 / sqrt(eps_r mu_r).
    A shape whose section has walls marked magnetic (``Section.with_walls``) is sought like
    any other: the shape function returns the marked section at every evaluation.

    ``regions``: dielectric regions put into the guide at every evaluation, as for
    :func:`femodes.sweep` (a list of dicts {"name", "shape" (a Section, placed), "eps_r", "mu_r",
    "tan_delta"}); the guide is then solved full-vector, and a free parameter may also be a
    region's material, ``region.NAME.eps_r`` or ``region.NAME.mu_r`` (``region.NAME.tan_delta``
    with the target alpha), or the fill's ``eps_r`` / ``mu_r``.  A region given as a placed
    Section stays where it is when a shape parameter changes (a region reaching outside the
    guide is cut at the wall); one given as a function of the shape's keyword arguments
    (returning the placed Section) is rebuilt at every evaluation, so it follows them.
    The targets are those of a homogeneous guide: fcN the N-th cutoff of the loaded guide,
    f_high and ratio from its first two cutoffs (a loaded guide's cutoffs are not degenerate in
    general), z_pv and alpha of the mode of largest beta at ``frequency``.
    Returns a :class:`SeekResult`."""
    regions = _regions(regions)
    if regions is not None:
        return _seek_loaded(shape, parameters, vary, targets, regions, modes=modes, accuracy=accuracy,
                            frequency=frequency, conductivity=conductivity, roughness=roughness,
                            tan_delta=tan_delta, **options)
    allowed = _shape_function(shape)
    goals = _target_names(targets)
    if not isinstance(vary, dict) or not vary:
        raise FemodesError("vary must map each free parameter to its (low, high) bounds")
    if len(vary) != len(goals) or len(vary) > 2:
        raise FemodesError(f"give as many free parameters as targets (one or two): {len(vary)} parameter(s) for "
                           f"{len(goals)} target(s)")
    unknown = sorted(set(options) - set(SWEEP_OPTIONS))
    if unknown:
        raise FemodesError(f"unknown option(s) {', '.join(unknown)}; seek passes on {', '.join(SWEEP_OPTIONS)}")
    bounds = _bounds(vary, goals, list(allowed) + list(_FILL), parameters, shape.__name__,
                     "; also the fill's eps_r, mu_r")
    for name, (lo, hi) in bounds.items():
        if name in _FILL:
            if name in options:
                raise FemodesError(f"{name} is both an option and free (vary): give it in one only")
            if lo <= 0:
                raise FemodesError(f"the bounds of {name} must be positive (a relative {name[:-2]}), got "
                                   f"({lo:.6g}, {hi:.6g})")
    at = None
    if any(k in FREQUENCY_TARGETS for k in goals):
        if frequency is None:
            raise FemodesError("targets z_pv and alpha are values at a frequency: give frequency= (Hz)")
        f = _number("frequency", frequency)
        kw = dict(conductivity=Q.conductivity_of(conductivity), roughness=_number("roughness", roughness),
                  tan_delta=_number("tan_delta", tan_delta))

        def at(ms):
            return quantities_at(ms[:1], f, partner=homogeneous_partner(ms, solve), **kw)
    need = max([int(k[2:]) for k in goals if k.startswith("fc")] + [2])
    n_modes = need + 2 if modes is None else modes
    count = [0]
    last = {}  # the element size that met the accuracy at the previous point: the next starts there

    def evaluate(point):
        params = dict(parameters, **{k: v for k, v in point.items() if k not in _FILL})
        fill = {k: v for k, v in point.items() if k in _FILL}
        try:
            section = shape(**params)
        except FemodesError as exc:
            raise FemodesError(f"the shape refuses {', '.join(f'{k} = {v:.6g}' for k, v in point.items())} inside "
                               f"the bounds: {exc}; narrow the bounds") from None
        count[0] += 1
        ms = solve(section, modes=n_modes, accuracy=accuracy, start_size=last.get("h"), **options, **fill)
        if getattr(ms, "mesh_size", None):
            last["h"] = ms.mesh_size
        return _quantities(ms, goals, at)

    names = list(bounds)
    if len(names) == 1:
        return _seek_one(names[0], bounds[names[0]], goals, evaluate, count)
    return _seek_two(names, bounds, goals, evaluate, count)


#: the fill's material, free in a seek of any guide (``eps_r``, ``mu_r``: options of femodes.solve)
_FILL = ("eps_r", "mu_r")


def _bounds(vary, goals, allowed, parameters, shape_name, extra_note=""):
    """{name: (low, high)} of ``vary`` checked (as many as the targets, names among ``allowed``)."""
    if not isinstance(vary, dict) or not vary:
        raise FemodesError("vary must map each free parameter to its (low, high) bounds")
    if len(vary) != len(goals) or len(vary) > 2:
        raise FemodesError(f"give as many free parameters as targets (one or two): {len(vary)} parameter(s) for "
                           f"{len(goals)} target(s)")
    bounds = {}
    for name, b in vary.items():
        if name not in allowed:
            raise FemodesError(f"{shape_name} has no parameter {name!r}; its parameters: {', '.join(allowed)}"
                               + extra_note)
        if name in parameters:
            raise FemodesError(f"{name} is both fixed (parameters) and free (vary): give it in one only")
        try:
            lo, hi = (_number(f"a bound of {name!r}", v) for v in b)
        except (TypeError, ValueError):
            raise FemodesError(f"the bounds of {name!r} must be a pair (low, high), got {b!r}") from None
        if not lo < hi:
            raise FemodesError(f"the bounds of {name!r} must be (low, high) with low < high, got {b!r}")
        bounds[name] = (lo, hi)
    return bounds


#: what a loaded guide's seek may vary besides the shape's parameters (per region: region.NAME.*)
_LOADED_MATERIALS = ("eps_r", "mu_r", "tan_delta")


def _seek_loaded(shape, parameters, vary, targets, regions, *, modes, accuracy, frequency, conductivity, roughness,
                 tan_delta, **options):
    """:func:`seek` of a guide with dielectric ``regions`` (checked by sweeps._regions): each
    evaluation solves the cutoffs (:func:`femodes.solvers.loaded.solve_loaded`) and, for z_pv or
    alpha, the mode of largest beta at the frequency, with the values and errors of a loaded
    sweep point (:mod:`femodes.studies.pointwise`) but without naming the modes (about a third
    of the time)."""
    allowed = _shape_function(shape)
    goals = _target_names(targets)
    unknown = sorted(set(options) - set(SWEEP_OPTIONS))
    if unknown:
        raise FemodesError(f"unknown option(s) {', '.join(unknown)}; seek passes on {', '.join(SWEEP_OPTIONS)}")
    if "family" in options:
        raise FemodesError("family= does not apply to a guide with regions: its modes are hybrid (leave family out)")
    materials = ["eps_r", "mu_r"] + [f"region.{r['name']}.{k}" for r in regions for k in _LOADED_MATERIALS]
    bounds = _bounds(vary, goals, list(allowed) + materials, parameters, shape.__name__,
                     "; with regions also " + ", ".join(materials))
    for name, (lo, hi) in bounds.items():
        if name in options:
            raise FemodesError(f"{name} is both an option and free (vary): give it in one only")
        prop = name.split(".")[-1]
        if name in materials and prop in ("eps_r", "mu_r") and lo <= 0:
            raise FemodesError(f"the bounds of {name} must be positive (a relative {prop[:-2]}), got ({lo:.6g}, {hi:.6g})")
        if prop == "tan_delta" and name in materials:
            if "alpha" not in goals:
                raise FemodesError(f"{name} changes no cutoff and no impedance: vary it only for the target alpha")
            if lo < 0:
                raise FemodesError(f"the bounds of {name} must be >= 0, got ({lo:.6g}, {hi:.6g})")
    for k in parameters:
        if k not in allowed:
            raise FemodesError(f"{shape.__name__} has no parameter {k!r}; its parameters: {', '.join(allowed)}")
    opts = dict(options, regions=regions)
    if any(k in FREQUENCY_TARGETS for k in goals):
        if frequency is None:
            raise FemodesError("targets z_pv and alpha are values at a frequency: give frequency= (Hz)")
        opts["analysis"] = {"frequency": _number("frequency", frequency),
                            "conductivity": Q.conductivity_of(conductivity),
                            "roughness": _number("roughness", roughness), "tan_delta": _number("tan_delta", tan_delta)}
    need = max([int(k[2:]) for k in goals if k.startswith("fc")] + [2])
    n_modes = need + 2 if modes is None else _check_count(modes)
    accuracy = _number("accuracy", accuracy)
    if not 1e-11 <= accuracy < 0.1:
        raise FemodesError(f"accuracy must lie between 1e-11 and 0.1 (relative error on each cutoff), got {accuracy!r}")
    for k in ("eps_r", "mu_r"):
        if k in options:
            material_number(k, options[k])
    if options.get("order") not in (None, 1, 2, 3) or isinstance(options.get("order"), bool):
        raise FemodesError(f"order of a loaded guide's edge elements must be 1, 2 or 3, got {options['order']!r}")
    count = [0]
    fixed = dict(parameters)

    at_frequency = any(k in FREQUENCY_TARGETS for k in goals)
    cutoffs = any(k not in FREQUENCY_TARGETS for k in goals)

    def evaluate(point):
        count[0] += 1
        shape_kw, solve_opts, regs, f, analysis = _split(point, opts)
        try:
            section = _build(shape, dict(fixed, **shape_kw), regs)
        except RegionCallError:
            raise
        except FemodesError as exc:
            r = {"status": "invalid", "message": str(exc)}
        else:
            r = {"status": "ok", "fc": [], "fc_error": []}
            if cutoffs:  # the solver's values and errors, without naming the modes
                cuts = _raw_cutoffs(section, n_modes, accuracy, solve_opts)
                r.update(fc=[c.frequency for c in cuts], fc_error=[c.error for c in cuts])
            if at_frequency:  # the mode of largest beta at f, unnamed, and its quantities
                ms, _ = _loaded_modes(section, 1, f, solve_opts.get("eps_r", 1.0), solve_opts.get("mu_r", 1.0),
                                      accuracy, order=solve_opts.get("order"),
                                      tan_delta=analysis.get("tan_delta", 0.0), parents=False)
                r["at_frequency"] = quantities_at(list(ms), f, section=section, **analysis)
        if r["status"] != "ok":
            raise FemodesError(f"the guide refuses {', '.join(f'{k} = {v:.6g}' for k, v in point.items())} inside "
                               f"the bounds: {r['message']}; narrow the bounds")
        return _loaded_quantities(r, goals)

    names = list(bounds)
    if len(names) == 1:
        return _seek_one(names[0], bounds[names[0]], goals, evaluate, count)
    return _seek_two(names, bounds, goals, evaluate, count)


def _loaded_quantities(r, names):
    """{target: (value, error)} of one loaded sweep point's result dict (fcN the N-th cutoff;
    f_high and ratio from the first two cutoffs; z_pv and alpha of the mode of largest beta at
    the analysis frequency)."""
    out = {}
    fc, err = r["fc"], r["fc_error"]
    for name in names:
        if name in FREQUENCY_TARGETS:
            q = r.get("at_frequency") or {}
            if name == "z_pv":
                v, e = (q.get("z_pv") or [math.nan])[0], (q.get("z_pv_error") or [math.nan])[0]
            else:
                v = (q.get("alpha_c") or [math.nan])[0] + (q.get("alpha_d") or [math.nan])[0]
                e = (q.get("alpha_c_error") or [math.nan])[0] + (q.get("alpha_d_error") or [0.0])[0]
            if not math.isfinite(v):
                raise FemodesError(f"target {name} is not defined for the dominant mode at the analysis frequency "
                                   "(no mode propagates there, or its voltage cancels): change the frequency or the "
                                   "bounds")
            out[name] = (float(v), float(e) if math.isfinite(e) else math.inf)
        elif name.startswith("fc"):
            n = int(name[2:])
            if n > len(fc):
                raise FemodesError(f"target {name} needs at least {n} modes: raise modes=")
            out[name] = (fc[n - 1], err[n - 1])
        else:
            if len(fc) < 2:
                raise FemodesError(f"target {name} needs the second cutoff: raise modes=")
            if name == "f_high":
                out[name] = (fc[1], err[1])
            else:
                ratio = fc[1] / fc[0]
                out[name] = (ratio, ratio * (err[1] / fc[1] + err[0] / fc[0]))
    return out


def _seek_one(name, bound, goals, evaluate, count):
    (goal, want), = goals.items()
    lo, hi = bound
    cache = {lo: evaluate({name: lo})[goal], hi: evaluate({name: hi})[goal]}  # brentq starts from these
    q_lo, q_hi = cache[lo][0], cache[hi][0]
    if not min(q_lo, q_hi) <= want <= max(q_lo, q_hi):
        unit, scale = {"ratio": ("", 1.0), "z_pv": (" ohm", 1.0), "alpha": (" Np/m", 1.0)}.get(goal, (" GHz", 1e-9))
        raise FemodesError(f"target {goal} = {want * scale:.6g}{unit} cannot be met for {name} in [{lo:.6g}, {hi:.6g}]: "
                           f"{goal} runs from {q_lo * scale:.6g} to {q_hi * scale:.6g}{unit} there; widen the bounds")

    def f(x):
        if x not in cache:
            cache[x] = evaluate({name: x})[goal]
        return cache[x][0] - want

    # stop when the parameter step moves the quantity by less than about its own error bar
    slope = abs(q_hi - q_lo) / (hi - lo)
    mid = 0.5 * (lo + hi)
    cache[mid] = evaluate({name: mid})[goal]
    err0 = cache[mid][1]
    xtol = max(err0 / slope if slope > 0 else 0.0, 1e-12 * abs(hi))
    x = optimize.brentq(f, lo, hi, xtol=xtol, rtol=4 * np.finfo(float).eps)
    value, error = (cache[x] if x in cache else evaluate({name: x})[goal])
    # the local slope: a secant from the answer to the nearest evaluation whose quantity differs
    # by well over both error bars (brentq's last steps are within the error bars, and a secant
    # over them is mostly noise); failing that the smallest secant (a larger uncertainty)
    secants = [(abs(k - x), abs(q - value) / abs(k - x), abs(q - value) >= 10 * (e + error))
               for k, (q, e) in cache.items() if k != x]
    clear = sorted(t for t in secants if t[2])
    if clear:
        slope = clear[0][1]
    elif secants:
        slope = min(t[1] for t in secants)
    spread = error + abs(value - want)
    return SeekResult({name: float(x)}, {name: float(spread / slope) if slope > 0 else math.inf},
                      {goal: float(value)}, {goal: float(error)}, count[0])


def _seek_two(names, bounds, goals, evaluate, count):
    keys = list(goals)
    want = np.array([goals[k] for k in keys])
    lo = np.array([bounds[n][0] for n in names])
    hi = np.array([bounds[n][1] for n in names])
    span = hi - lo
    last = {}

    def residual(u):
        x = lo + u * span
        got = evaluate(dict(zip(names, x)))
        last["x"], last["q"] = x, got
        return np.array([got[k][0] for k in keys]) / want - 1.0

    sol = optimize.least_squares(residual, 0.5 * np.ones(2), bounds=(0.0, 1.0), diff_step=1e-4, xtol=1e-12,
                                 ftol=1e-14, gtol=1e-14)
    x = lo + sol.x * span
    got = evaluate(dict(zip(names, x)))
    values = np.array([got[k][0] for k in keys])
    errors = np.array([got[k][1] for k in keys])
    if np.any(np.abs(values - want) > np.maximum(3 * errors, 1e-6 * want)):
        raise FemodesError("the targets " + ", ".join(f"{k} = {w:.6g}" for k, w in zip(keys, want))
                           + " cannot both be met within the bounds; closest: "
                           + ", ".join(f"{k} = {v:.6g}" for k, v in zip(keys, values)))
    J = sol.jac * want[:, None] / span[None, :]   # d quantity / d parameter
    try:
        dx = np.abs(np.linalg.solve(J, np.diag(errors + np.abs(values - want))))
        perr = np.sqrt(np.sum(dx ** 2, axis=1))
    except np.linalg.LinAlgError:
        perr = np.full(2, np.inf)
    return SeekResult(dict(zip(names, (float(v) for v in x))), dict(zip(names, (float(e) for e in perr))),
                      dict(zip(keys, (float(v) for v in values))), dict(zip(keys, (float(e) for e in errors))),
                      count[0])
