"""The [seek] and [tolerance] tables of a case file, and running them with the [guide] shape.

    [seek]                         # the free parameters and their bounds, in the [guide] units,
    ridge_width = [4.0, 14.0]      # and the targets in GHz (fcN the N-th cutoff, f_high the top of
    fc1 = 1.7                      # the single-mode band) or, for ratio, the single-mode ratio;
                                   # z_pv (ohm) and alpha (Np/m) of the dominant mode at the
                                   # [analysis] frequency, with its conductor / roughness / tan_delta

    [tolerance]                    # +- tolerance of each dimension, in the [guide] units
    gap = 0.02
    ridge_width = 0.02
    samples = 20000                # optional: Monte Carlo draws (default 20000)
    distribution = "uniform"       # optional: "uniform" (default) or "normal" (tolerance = 3 sigma)

A guide with [[region]] tables (a loaded guide) takes the same tables, and a region's material
by its name (an unnamed region by its number, region.1.eps_r), as in [sweep]:

    [seek]                         # the slab's eps_r that puts fc1 at 6 GHz
    region.slab.eps_r = [2.0, 3.0]
    fc1 = 6.0

    [tolerance]
    region.slab.eps_r = 0.05       # +- 0.05 (no unit)
    width = 0.02
    eps_r = 0.01                   # the fill's (the [solve] eps_r), for any guide

and ``femodes sensitivity`` gives d fc / d (each region's eps_r and mu_r, the fill's, each [guide]
dimension): the materials by first-order perturbation, the dimensions by differences of whole
solves (:mod:`femodes.studies.loaded_sensitivity`).  The regions stay where the case file puts
them when a [guide] dimension changes (a region reaching outside the guide is cut at the wall),
except those whose dimensions or offset are expressions of the [guide] keys, which follow them
(:mod:`femodes.case.regions`).  The fill's eps_r (mu_r) may be a free parameter of [seek], for
any guide:

    [seek]                         # the fill that puts the dominant cutoff at 5 GHz
    eps_r = [1.5, 3.0]
    fc1 = 5.0

A guide with ``magnetic_walls`` keeps the same sides of its outline marked in every study.

The fixed parameters are the [guide] table's; the guide's placement does not change a cutoff.
"""

from __future__ import annotations

import contextlib
import math
import re
from dataclasses import dataclass

from femodes.case.schema import ANGLE, LENGTH, SHAPES, UNITS
from femodes.case.sweep import _case_regions, study_shape
from femodes.case.values import (
    _NUM,
    _check_keys,
    _in_file_units,
    _is_number,
    _number,
    _show,
    _suggest,
    case_scale_warnings,
)
from femodes.errors import FemodesError
from femodes.studies import seek, sensitivity, tolerance
from femodes.studies.tolerance import MIN_SAMPLES

__all__ = ["SeekSettings", "ToleranceSettings", "build_seek", "build_tolerance", "run_seek", "run_sensitivity",
           "run_tolerance"]

_TOLERANCE_KEYS = ("samples", "distribution")


@dataclass(frozen=True)
class SeekSettings:
    """[seek], SI: ``bounds`` parameter -> (low, high) (m or rad); ``targets`` name -> Hz (the
    ratio as is); ``labels`` parameter -> its case-file key."""

    bounds: dict
    targets: dict
    labels: dict


@dataclass(frozen=True)
class ToleranceSettings:
    """[tolerance], SI: ``tolerances`` parameter -> +- value (m or rad); ``samples``,
    ``distribution``; ``labels`` parameter -> its case-file key."""

    tolerances: dict
    labels: dict
    samples: int = 20000
    distribution: str = "uniform"


def _shape_keys(guide, table):
    shape = guide.get("shape")
    if shape == "mesh" or shape not in SHAPES or SHAPES[shape].build is None:
        raise FemodesError(f"[{table}] works on the parameters of a built-in shape; a mesh file has none")
    return {k.name: k for k in SHAPES[shape].keys if k.kind in (LENGTH, ANGLE)}, UNITS[guide.get("units", "mm")]


def _factor(key, scale):
    return math.pi / 180.0 if key.kind == ANGLE else scale


#: what a region's material offers to [seek] and [tolerance]
_REGION_PROPS = ("eps_r", "mu_r")


def _region_entries(value, table, props=_REGION_PROPS):
    """(case key, femodes name, value) of ``region.NAME.PROP = ...`` in [seek] or [tolerance]."""
    if not isinstance(value, dict) or not value:
        raise FemodesError(f"region in [{table}] names a [[region]] and its property, e.g. region.slab.eps_r")
    for reg, entry in value.items():
        if not isinstance(entry, dict) or not entry:
            raise FemodesError(f"region.{reg} in [{table}] must name a property: region.{reg}.eps_r (or "
                               f"{', '.join('.' + p for p in props[1:])})")
        for prop, v in entry.items():
            if prop not in props:
                raise FemodesError(f"region.{reg}.{prop} in [{table}]: a region's {' or '.join(props)} can be used here"
                                   + _suggest(prop, props))
            yield f"region.{reg}.{prop}", f"region.{reg}.{prop}", v


def _is_target(name):
    return name in ("f_high", "ratio", "z_pv", "alpha") or (name.startswith("fc") and name[2:].isdigit())


_TARGET_UNITS = {"ratio": "", "z_pv": " ohm", "alpha": " Np/m"}  # fcN and f_high: GHz


def build_seek(table, guide):
    """SeekSettings from the [seek] table and the [guide] table."""
    keys, scale = _shape_keys(guide, "seek")
    units = guide.get("units", "mm")
    required = {k.name for k in SHAPES[guide["shape"]].required}
    bounds, targets, labels = {}, {}, {}
    for name, value in table.items():
        where = f"{name} in [seek]"
        if name == "region":
            for key, target, v in _region_entries(value, "seek", _REGION_PROPS + ("tan_delta",)):
                if not isinstance(v, list) or len(v) != 2:
                    raise FemodesError(f"{key} in [seek] must be its bounds [low, high], got {_show(v)}")
                bounds[target] = tuple(_number(f"{key} in [seek]", x) for x in v)
                labels[target] = key
            continue
        if name in _REGION_PROPS:  # the fill's material, no unit
            if not isinstance(value, list) or len(value) != 2:
                raise FemodesError(f"{where} is the fill's {name} free between bounds: give [low, high], got "
                                   f"{_show(value)}")
            lo, hi = (_number(where, v, "a bound (number)") for v in value)
            if not 0 < lo < hi:
                raise FemodesError(f"{where} must be its bounds [low, high] with 0 < low < high (a relative "
                                   f"{name[:-2]}), got {_show(value)}")
            bounds[name], labels[name] = (lo, hi), name
            continue
        if _is_target(name):
            unit = _TARGET_UNITS.get(name, " GHz")
            v = _number(where, value, f"a target value{' in' + unit if unit else ''} (number)")
            if v <= 0:
                raise FemodesError(f"{where} is a target{' in' + unit if unit else ''} and must be positive, "
                                   f"got {_show(value)}")
            targets[name] = v if name in ("ratio", "z_pv", "alpha") else v * 1e9
        elif name in keys:
            key = keys[name]
            unit = "degrees" if key.kind == ANGLE else units
            if not isinstance(value, list) or len(value) != 2:
                raise FemodesError(f"{where} must be its bounds [low, high] in {unit}, got {_show(value)}")
            lo, hi = (_number(where, v, f"a bound in {unit} (number)") for v in value)
            if not lo < hi:
                raise FemodesError(f"{where} must be its bounds [low, high] with low < high ({unit}), "
                                   f"got {_show(value)}")
            if key.kind == LENGTH and (lo < 0 or (lo == 0 and name in required)):
                raise FemodesError(f"{where}: {name} is a length, so its bounds must be "
                                   f"{'positive' if name in required else '>= 0'}, got {_show(value)} ({unit})")
            if key.kind == ANGLE and not (0 < lo and hi < 360):
                raise FemodesError(f"{where}: the bounds of an opening angle lie strictly between 0 and 360 degrees, "
                                   f"got {_show(value)}")
            bounds[key.target] = (lo * _factor(key, scale), hi * _factor(key, scale))
            labels[key.target] = name
        else:
            _check_keys({name: value}, tuple(keys) + ("fc1", "fc2", "f_high", "ratio", "z_pv", "alpha", "region")
                        + _REGION_PROPS, "[seek]")
    if not bounds or not targets:
        missing = "the free parameters with their bounds" if not bounds else "the targets"
        raise FemodesError(f"[seek] lacks {missing}: it needs free [guide] keys with their bounds in {units} "
                           "(e.g. ridge_width = [4, 14]) and as many targets (e.g. fc1 = 1.7, GHz)")
    if len(bounds) != len(targets) or len(bounds) > 2:
        raise FemodesError(f"[seek] gives {len(bounds)} free parameter(s) ({', '.join(labels.values())}) for "
                           f"{len(targets)} target(s) ({', '.join(targets)}): give as many targets as free "
                           "parameters, one or two")
    return SeekSettings(bounds, targets, labels)


def build_tolerance(table, guide):
    """ToleranceSettings from the [tolerance] table and the [guide] table."""
    keys, scale = _shape_keys(guide, "tolerance")
    _check_keys(table, tuple(keys) + _TOLERANCE_KEYS + ("region",) + _REGION_PROPS, "[tolerance]",
                shown=[f"{k} (a [guide] key)" for k in keys] + list(_TOLERANCE_KEYS)
                + ["eps_r / mu_r (the fill's)", "region.NAME.eps_r / .mu_r (a [[region]]'s)"])
    units = guide.get("units", "mm")
    tol, labels = {}, {}
    for name, value in table.items():
        if name in _TOLERANCE_KEYS:
            continue
        if name in _REGION_PROPS:  # the fill's material: no unit
            t = _number(f"{name} in [tolerance]", value)
            if t < 0:
                raise FemodesError(f"{name} in [tolerance] is a +- tolerance and must be >= 0, got {_show(value)}")
            tol[name], labels[name] = t, name
            continue
        if name == "region":
            for key, target, v in _region_entries(value, "tolerance"):
                t = _number(f"{key} in [tolerance]", v)
                if t < 0:
                    raise FemodesError(f"{key} in [tolerance] is a +- tolerance and must be >= 0, got {_show(v)}")
                tol[target], labels[target] = t, key
            continue
        unit = "degrees" if keys[name].kind == ANGLE else units
        v = _number(f"{name} in [tolerance]", value, f"a +- tolerance in {unit} (number)")
        if v < 0:
            raise FemodesError(f"{name} in [tolerance] is a +- tolerance and must be >= 0, got {_show(value)} ({unit})")
        if name not in guide:
            raise FemodesError(f"{name} in [tolerance]: [guide] gives no {name} to vary (it is left out there); "
                               f"give {name} in [guide] or leave it out of [tolerance]")
        nominal = guide[name]
        if _is_number(nominal) and v >= abs(nominal):
            raise FemodesError(f"{name} in [tolerance] (+- {v:g} {unit}) must be smaller than {name} in [guide] "
                               f"({nominal:g} {unit}): the tolerances are small changes of the dimensions")
        tol[keys[name].target] = v * _factor(keys[name], scale)
        labels[keys[name].target] = name
    if not tol:
        raise FemodesError(f"[tolerance] names no dimension: give [guide] keys with their +- tolerances in {units}, "
                           "e.g. gap = 0.02")
    samples = table.get("samples", 20000)
    if isinstance(samples, bool) or not isinstance(samples, int) or samples < MIN_SAMPLES:
        raise FemodesError(f"samples in [tolerance] is the number of Monte Carlo draws and must be a whole number "
                           f">= {MIN_SAMPLES} (default 20000), got {_show(samples)}")
    dist = table.get("distribution", "uniform")
    if dist not in ("uniform", "normal"):
        raise FemodesError(f"distribution in [tolerance] must be \"uniform\" or \"normal\", got {_show(dist)}")
    return ToleranceSettings(tol, labels, samples, dist)


def _shape_and_fixed(case, free=(), table=None):
    """(shape function, fixed arguments (SI) from the [guide] table itself -- a rounded rectangle or
    an offset coax keep their own keys --, extra keyword arguments: the regions of a loaded guide)."""
    shape = case.guide_shape
    if shape is None or case.guide_params is None or SHAPES[shape].build is None:
        raise FemodesError("design studies (seek, sensitivity, tolerance) vary the dimensions of a built-in shape "
                           "in [guide]; a mesh file has none")
    if not any(k.kind in (LENGTH, ANGLE) for k in SHAPES[shape].keys):
        raise FemodesError(f"design studies (seek, sensitivity, tolerance) vary the named dimensions of a shape "
                           f"(width, gap, radius, ...); shape {shape!r} has none (its vertices are a list): describe "
                           "the guide with a shape that has them")
    fixed = {k: v for k, v in case.guide_params.items() if k not in free}
    extra = {}
    if case.loaded:
        regions = _case_regions(case)
        extra["regions"] = regions
        names = {r["name"] for r in regions}
        for name in free:
            if name.startswith("region.") and name.split(".")[1] not in names:
                raise FemodesError(f"{name} in [{table}] names no [[region]] of this case; its regions: "
                                   + ", ".join(sorted(names)) + " (an unnamed region by its number)")
    else:
        bad = [n for n in free if n.startswith("region.")]
        if bad:
            raise FemodesError(f"{bad[0]} in [{table}]: this guide has no [[region]] tables; add one, or vary a "
                               "[guide] dimension")
    return study_shape(case), fixed, extra


def _study_text(text, case):
    """A message of the design studies (which speak Python: the shape function's argument names,
    metres, radians, modes=) in the case file's terms: its [guide] keys and units."""
    spec = SHAPES[case.guide_shape]
    units, scale = case.units, UNITS[case.units]
    for k in spec.keys:
        if k.kind == ANGLE:  # 'angle from 1.5707963267948966' -> 'angle_deg from 90'
            text = re.sub(rf"\b{k.target} (from|=) ({_NUM})",
                          lambda m: f"{k.name} {m.group(1)} {math.degrees(float(m.group(2))):.6g} degrees", text)
    lengths = [k for k in spec.keys if k.kind == LENGTH]
    for k in lengths:  # 'width = 0.0127' and 'width in [0.0127, 0.0381]' (metres)
        text = re.sub(rf"\b{k.target} = ({_NUM})(?![\d.eE+-]| ?(?:m|cm|mm|um|in|mil)\b)",
                      lambda m: f"{k.name} = {float(m.group(1)) / scale:.6g} {units}", text)
        text = re.sub(rf"\b{k.target} in \[({_NUM}), ({_NUM})\]",
                      lambda m: f"{k.name} in [{float(m.group(1)) / scale:.6g} {units}, "
                                f"{float(m.group(2)) / scale:.6g} {units}]", text)
    # cutoff targets in Hz ('fc1 = 6e+09') -> GHz, as [seek] gives them
    text = re.sub(rf"\b(fc\d+|f_high) = ({_NUM})(?![\d.eE+-]| ?[kMG]?Hz\b)",
                  lambda m: f"{m.group(1)} = {float(m.group(2)) / 1e9:.6g} GHz", text)
    text = _in_file_units(text, units, scale, {k.target: k.name for k in spec.keys if k.target != k.name})
    return text.replace("raise modes=", "raise modes in [solve] (or --modes)")


@contextlib.contextmanager
def _case_terms(case):
    with case_scale_warnings():
        try:
            yield
        except FemodesError as exc:
            if case.guide_shape is None or SHAPES[case.guide_shape].build is None:
                raise
            raise FemodesError(_study_text(str(exc), case)) from None


def _options(case):
    opts = {k: v for k, v in case.solve.items() if k in ("eps_r", "mu_r", "family", "order")}
    if "accuracy" in case.solve:
        opts["accuracy"] = case.solve["accuracy"]
    return opts


def run_seek(case):
    """:func:`femodes.seek` of the case's [seek] table."""
    if case.seek is None:
        raise FemodesError("the case file has no [seek] table: add one with the free parameters' bounds and the "
                           "targets")
    shape, fixed, extra = _shape_and_fixed(case, case.seek.bounds, "seek")
    kw = {k: v for k, v in dict(_options(case), **extra).items() if k not in case.seek.bounds}  # a free eps_r
    if "modes" in case.solve:
        kw["modes"] = case.solve["modes"]
    if any(k in ("z_pv", "alpha") for k in case.seek.targets):
        an = case.analysis
        if an is None:
            raise FemodesError("targets z_pv and alpha in [seek] are values at a frequency: add an [analysis] table "
                               "with frequency = F (and the conductor)")
        kw.update(frequency=an.table_frequency, conductivity=an.conductivity, roughness=an.roughness,
                  tan_delta=case.tan_delta or an.tan_delta)
    with _case_terms(case):
        return seek(shape, fixed, case.seek.bounds, case.seek.targets, **kw)


def run_sensitivity(case):
    """:func:`femodes.sensitivity` of the case's guide."""
    shape, fixed, extra = _shape_and_fixed(case)
    kw = dict(_options(case), **extra)
    kw["modes"] = case.solve.get("modes", 6)
    with _case_terms(case):
        return sensitivity(shape, fixed, **kw)


def run_tolerance(case):
    """:func:`femodes.tolerance` of the case's [tolerance] table."""
    if case.tolerance is None:
        raise FemodesError("the case file has no [tolerance] table: add one with the +- tolerance of each dimension")
    shape, fixed, extra = _shape_and_fixed(case, tuple(case.tolerance.tolerances), "tolerance")
    fixed = dict(case.guide_params)  # every dimension at its nominal value
    kw = dict(_options(case), **extra)
    kw["modes"] = case.solve.get("modes", 6)
    t = case.tolerance
    with _case_terms(case):
        return tolerance(shape, fixed, t.tolerances, samples=t.samples, distribution=t.distribution, **kw)
