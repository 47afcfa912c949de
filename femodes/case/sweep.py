"""The [sweep] table of a case file: which [guide] parameters to vary, and how.

    [sweep]
    gap = { from = 1.0, to = 3.0, points = 21 }   # in the [guide] units (angles in degrees)
    ridge_width = [6, 8, 10]                      # or the values themselves; two names: a grid
    store = "gap_sweep.db"                        # optional: keep every point, resume (relative to the case file)
    workers = 2                                   # optional: local processes (default: the cores)
    spec_band = [2, 18]                           # optional, GHz: drawn on the design curves
    target = 2.0                                  # optional, GHz: drawn on the curves / as the map's contour

Besides the [guide] parameters a sweep may vary (same two forms):

    frequency = { from = 8, to = 12, points = 5 }  # GHz: the analysis frequency
    eps_r = [1.0, 2.0]                             # the fill's eps_r (also mu_r, tan_delta)
    region.slab.eps_r = [2.0, 2.5, 3.0]            # a [[region]] by its name (unnamed: its number,
                                                   # region.1.eps_r); also .mu_r, .tan_delta

With an [analysis] table (or a varied frequency) every point also gets the quantities of
:mod:`femodes.studies.pointwise` at the analysis frequency (the [analysis] frequency, conductor,
roughness, breakdown_field and safety_factor; the fill's tan_delta).  A guide with [[region]]
tables is swept with its regions where the case file puts them; a region whose dimensions or
offset are written as expressions of the [guide] keys (``height = "0.3 * height"``,
:mod:`femodes.case.regions`) follows them at every point, the others stay put (a region
reaching outside the guide is cut at the wall).  A guide with ``magnetic_walls`` keeps the same
sides of its outline marked at every point.

The fixed parameters are the [guide] table's own; the shape's placement does not change a cutoff
and is left out.  :func:`run_sweep` runs it through :func:`femodes.sweep`.
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass

import numpy as np

from femodes.case.regions import CaseRegion, marked_shape
from femodes.case.schema import ANGLE, LENGTH, SHAPES, UNITS
from femodes.case.values import _check_keys, _count, _material_range, _number, _show, _suggest
from femodes.errors import FemodesError
from femodes.geometry.section import Section
from femodes.studies import sweep

__all__ = ["SweepSettings", "build_sweep", "run_sweep", "SWEEP_KEYS"]

#: the keys of [sweep] other than the parameters varied
SWEEP_KEYS = ("store", "workers", "spec_band", "target")


@dataclass(frozen=True)
class SweepSettings:
    """[sweep], checked, SI: ``vary`` the shape function's parameter -> values (m or rad),
    ``labels`` the case-file key of each, ``store`` a path or None, ``workers`` or None,
    ``spec_band`` (Hz, Hz) or None, ``target`` Hz or None."""

    vary: dict
    labels: dict
    store: str | None = None
    workers: int | None = None
    spec_band: tuple | None = None
    target: float | None = None


def build_sweep(table, guide, base_dir):
    """SweepSettings from the [sweep] table and the [guide] table (its shape and units)."""
    shape = guide.get("shape")
    if shape == "mesh" or shape not in SHAPES or SHAPES[shape].build is None:
        raise FemodesError("[sweep] varies the parameters of a built-in shape; a mesh file has none")
    keys = {k.name: k for k in SHAPES[shape].keys if k.kind in (LENGTH, ANGLE)}
    _check_keys(table, tuple(keys) + SWEEP_KEYS + OTHER_KEYS, "[sweep]",
                shown=[f"{k} (a [guide] key of {shape})" for k in keys] + list(SWEEP_KEYS) + list(OTHER_KEYS))
    units = guide.get("units", "mm")
    scale = UNITS[units]
    vary, labels = {}, {}
    for name, value, factor, target in _entries(table, keys, scale):
        where = f"{name} in [sweep]"
        if isinstance(value, dict):
            extra = sorted(set(value) - {"from", "to", "points"})
            if extra or not {"from", "to", "points"} <= set(value):
                raise FemodesError(f"{where} must be a list of values or {{ from = A, to = B, points = N }}, got "
                                   f"{_show(value)}")
            lo, hi = _number(f"from of {where}", value["from"]), _number(f"to of {where}", value["to"])
            n = _count(f"points of {where}", value["points"])
            if n < 2 or lo == hi:
                raise FemodesError(f"{where}: from and to must differ and points be >= 2, got {_show(value)}")
            vals = np.linspace(lo, hi, n)
        elif isinstance(value, list) and value:
            vals = np.array([_number(where, v) for v in value])
        else:
            raise FemodesError(f"{where} must be a non-empty list of values or {{ from = A, to = B, points = N }}, got "
                               f"{_show(value)}")
        prop = target.split(".")[-1]
        if target == "frequency":
            if np.any(vals <= 0):
                raise FemodesError(f"{where} is the analysis frequency in GHz and must be positive, got {_show(value)}")
        elif prop in ("eps_r", "mu_r"):
            for v in vals:
                _material_range(where, prop, float(v))
        elif prop == "tan_delta":
            if np.any(vals < 0) or np.any(vals >= 1):
                raise FemodesError(f"{where} is a loss tangent and must lie in 0 <= tan_delta < 1, got {_show(value)}")
        elif name in keys and keys[name].kind == LENGTH:
            required = keys[name] in SHAPES[shape].required
            if np.any(vals < 0) or (required and np.any(vals == 0)):
                rule = "must be positive" if required else "must not be negative"
                raise FemodesError(f"{where}: {name} is a length and {rule}, got {_show(value)} ({units})")
        elif name in keys and keys[name].kind == ANGLE and keys[name].name == "angle_deg":
            if np.any(vals <= 0) or np.any(vals >= 360):
                raise FemodesError(f"{where}: angle_deg is the opening angle in degrees and must lie strictly between "
                                   f"0 and 360, got {_show(value)}")
        vary[target] = tuple(float(v) * factor for v in vals)
        labels[target] = name
    if not vary:
        raise FemodesError(f"[sweep] names no parameter to vary: give one of {', '.join(keys)} with its values"
                           + (_suggest(next(iter(table), ""), keys) if table else ""))
    store = table.get("store")
    if store is not None:
        if not isinstance(store, str) or not store.strip():
            raise FemodesError(f"store in [sweep] must be a file name, got {_show(store)}")
        store = store if os.path.isabs(store) else os.path.join(base_dir, store)
    workers = _count("workers in [sweep]", table["workers"]) if "workers" in table else None
    spec = table.get("spec_band")
    if spec is not None:
        if not isinstance(spec, list) or len(spec) != 2:
            raise FemodesError(f"spec_band in [sweep] must be [f1, f2] in GHz, got {_show(spec)}")
        spec = tuple(_number("spec_band in [sweep]", v, "[f1, f2] in GHz") * 1e9 for v in spec)
    target = (_number("target in [sweep]", table["target"], "a frequency in GHz (number)") * 1e9
              if "target" in table else None)
    return SweepSettings(vary, labels, store, workers, spec, target)


#: what [sweep] may vary besides the [guide] parameters
OTHER_KEYS = ("frequency", "eps_r", "mu_r", "tan_delta", "region")


def _entries(table, keys, scale):
    """(case key, value, factor to SI, femodes.sweep name) of each varied entry of [sweep]."""
    for name, value in table.items():
        if name in SWEEP_KEYS:
            continue
        if name == "region":
            if not isinstance(value, dict) or not value:
                raise FemodesError("region in [sweep] names a [[region]] and what to vary, e.g. "
                                   "region.slab.eps_r = [2.0, 3.0]")
            for reg, props in value.items():
                if not isinstance(props, dict) or not props:
                    raise FemodesError(f"region.{reg} in [sweep] must name what to vary: region.{reg}.eps_r (or "
                                       ".mu_r, .tan_delta) = [...]")
                for prop, v in props.items():
                    if prop not in ("eps_r", "mu_r", "tan_delta"):
                        raise FemodesError(f"region.{reg}.{prop} in [sweep]: a region's eps_r, mu_r or tan_delta "
                                           f"can be varied{_suggest(prop, ('eps_r', 'mu_r', 'tan_delta'))}")
                    yield f"region.{reg}.{prop}", v, 1.0, f"region.{reg}.{prop}"
        elif name == "frequency":
            yield name, value, 1e9, name
        elif name in OTHER_KEYS:
            yield name, value, 1.0, name
        else:
            key = keys[name]
            yield name, value, (math.pi / 180.0 if key.kind == ANGLE else scale), key.target


def _case_regions(case):
    """The case's [[region]] tables as femodes.sweep regions, each named by its name or, when
    unnamed, by its number (1, 2, ...)."""
    from_section = getattr(case.section, "materials", ())
    moving = dict(getattr(case, "moving_regions", ()))
    out = []
    for i, m in enumerate(from_section, start=1):
        if i in moving:  # written with expressions of the [guide] keys: rebuilt at every point
            shape = CaseRegion(moving[i], i, case.units, case.guide_shape)
        else:
            shape = Section(m.region, tuple(m.holes), "region")
        out.append({"name": m.name or str(i), "shape": shape, "eps_r": m.eps_r, "mu_r": m.mu_r,
                    "tan_delta": m.tan_delta})
    return out


def study_shape(case):
    """The shape function a study of the case varies: the [guide] shape's, or for a guide with
    magnetic_walls one that marks the same sides of the rebuilt outline
    (:class:`femodes.case.regions.MarkedShape`)."""
    build = SHAPES[case.guide_shape].build
    if getattr(case.section, "magnetic", ()):
        return marked_shape(build, case.section, getattr(case, "placement", {}) or {})
    return build


def run_sweep(case, store=None, workers=None, scheduler=None):
    """Run the case's [sweep] (:func:`femodes.sweep`) with its [solve] settings; ``store``,
    ``workers`` and ``scheduler`` override the table's.  Returns the SweepResult."""
    s = case.sweep
    if s is None:
        raise FemodesError("the case file has no [sweep] table: add one naming the [guide] parameters to vary")
    shape_function = study_shape(case)  # the [guide] table's own arguments (SI)
    fixed = {k: v for k, v in case.guide_params.items() if k not in s.vary}
    opts = {k: v for k, v in case.solve.items() if k in ("eps_r", "mu_r", "family", "order") and k not in s.vary}
    kw = {k: case.solve[k] for k in ("modes", "accuracy") if k in case.solve}
    regions = _case_regions(case) if case.loaded else None
    names = {r["name"] for r in regions or ()}
    for name in s.vary:
        if name.startswith("region.") and name.split(".")[1] not in names:
            raise FemodesError(f"{s.labels[name]} in [sweep] names no [[region]] of this case; its regions: "
                               + (", ".join(sorted(names)) or "none") + " (an unnamed region by its number)")
    an = case.analysis
    extra = {}
    if an is not None or "frequency" in s.vary:
        if an is not None and "frequency" not in s.vary:
            extra["frequency"] = an.table_frequency
        if an is not None:
            extra.update(conductivity=an.conductivity, roughness=an.roughness, breakdown_field=an.breakdown_field,
                         safety_factor=an.safety_factor)
        if "tan_delta" not in s.vary:
            extra["tan_delta"] = case.tan_delta or (an.tan_delta if an is not None else 0.0)
    return sweep(shape_function, fixed, s.vary, store=store or s.store, workers=workers or s.workers,
                 scheduler=scheduler, regions=regions, **kw, **opts, **extra)
