"""Sweeps: the cutoffs of a guide over one parameter or a grid of several, stored point by point.

``sweep(femodes.double_ridge, {"width": 34e-3, ...}, {"gap": gaps})`` solves the guide at every
point (every combination of the varied values, in the order given) and returns a
:class:`SweepResult`: per point every mode's cutoff with its error and label, and the
single-mode band.  Each point is an ordinary :func:`femodes.solve` of the shape built with that
point's parameters, so its numbers carry the same error estimates as a single solve.

* Points run in parallel: on the local cores by default (separate processes: gmsh is not thread
  safe), or on a dask.distributed cluster when ``scheduler`` names one (an address or a Client),
  in runs of neighbouring points: each point starts its accuracy loop from an element size its
  neighbour suggests (``femodes.solve(start_size=...)``, :func:`next_size`: the neighbour's final
  size scaled so that its error estimate would come out at half the accuracy), which saves the
  refinement steps and the overshoot of an independent solve's last step; its three meshes, its
  estimate and its stopping rule are those of an independent solve.  Measured
  (``benchmarks/bench_sweep.py``, 21-point gap sweep of the double ridge, 6 modes at 1e-6, busy
  2-core machine): a sweep point costs 0.37-0.44 of an independent solve (it was 0.74 when each
  point started at its neighbour's final size: the close pair (1.35 h, h) there estimated 5-16x
  below the accuracy); independent solve 2.1 s (5 meshes, the last up to 137k unknowns) against
  0.8 s (3 meshes of 4-12k unknowns: mesh 0.15 s, assembly 0.05, eigen 0.36, labels 0.18).  With
  an analysis frequency the size is passed on unchanged (see :func:`next_size`).  On several
  workers the point where the second run begins is solved first, here, while the workers start;
  the run before it goes backwards from it (in this process), the others forward in n - 1
  spawned workers, every run starting from its suggestion (one cold start in all instead of one
  per worker); each point is a task of its own (it reaches the store as soon as it is done), and
  a process out of work takes the far end of another's run (two workers 1.62-1.72x one worker on
  a quiet machine, where two independent one-worker sweeps side by side each ran 5-10 % slower
  than alone).  Workers import the calling script: a script must keep its top level under
  ``if __name__ == "__main__":`` (said in one line when it does not).  What is not shared, by
  measurement: the third, coarsest mesh (about a tenth of a point; it gives the point its own observed rates and the
  guard against two meshes agreeing by chance, which a neighbour's history could only imitate),
  moved meshes instead of gmsh (meshing is under a fifth of a point).
* With ``store`` (a file name) each finished point is written to disk at once
  (:class:`femodes.studies.store.SweepStore`): an interrupted sweep loses at most the points in
  flight, and the same sweep run again computes only the missing points (``reused`` and
  ``computed`` say how many).  A store made with other settings is refused.
* A point whose geometry is invalid (the shape refuses its parameters) is recorded as such, with
  the shape's message, and the sweep goes on.
* Progress: a tqdm bar on a terminal (points done, time per point, time left); nothing elsewhere.
"""

from __future__ import annotations

import csv
import inspect
import io
import itertools
import json
import math
import multiprocessing
import os
import pickle
import sys
import threading
import time
import uuid
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass
from multiprocessing.connection import wait as wait_for

import numpy as np

from femodes import quantities as Q
from femodes.api import _check_count, solve, study
from femodes.atomic import replacing
from femodes.errors import FemodesError
from femodes.geometry.section import Section
from femodes.modes.display import _param_text, _param_unit, fixed_text, html_block, html_table, sweep_columns
from femodes.quantities import DRY_AIR_BREAKDOWN
from femodes.solvers.scalar import DEFAULT_ORDER
from femodes.studies.loaded_sensitivity import RegionCallError, _build
from femodes.studies.pointwise import POINT_QUANTITIES, UNITS, homogeneous_partner, quantities_at
from femodes.studies.store import SweepStore
from femodes.studies.tracking import class_signature, follow

__all__ = ["sweep", "SweepResult", "SWEEP_OPTIONS"]

#: options of :func:`femodes.solve` a sweep passes on to every point
SWEEP_OPTIONS = ("eps_r", "mu_r", "family", "order")


@dataclass(frozen=True)
class SweepResult:
    """The points of a sweep.

    shape      : the shape function's name;  parameters : the fixed keyword arguments (SI)
    names      : the varied parameters, in the order given;  values : their values (tuple of arrays)
    modes      : modes asked per point;  accuracy : asked relative accuracy of each cutoff
    points     : {tuple of the point's varied values: result dict} with keys ``status`` ('ok' or
                 'invalid'), ``message``, ``fc``, ``fc_error`` (Hz, cutoff order), ``label``,
                 ``family``, ``band`` ([f_low, f_high] of the single-mode band, or None),
                 ``n_dofs``, ``seconds``
    reused     : points taken from the store;  computed : points solved in this run
    frequency  : the analysis frequency (Hz) when one was given (a varied frequency is a name);
                 with either, every point's dict has ``at_frequency``: the quantities of
                 :mod:`femodes.studies.pointwise` per mode (cutoff order), with ``frequency``
    """

    shape: str
    parameters: dict
    names: tuple
    values: tuple
    modes: int
    accuracy: float
    points: dict
    reused: int
    computed: int
    frequency: float | None = None

    @property
    def modes_shown(self):
        """Modes per point in the tables and the Dataset: the count asked, or more where a point
        returned more (a solve completes a degenerate group the count cuts: a circle's pairs, a
        rectangle's TE_mn / TM_mn); a point with fewer leaves NaN / empty."""
        return max([self.modes] + [len(r["fc"]) for r in self.points.values()])

    # -- display -----------------------------------------------------------------------------------
    def __repr__(self):
        bad = sum(1 for r in self.points.values() if r["status"] != "ok")
        over = ", ".join(f"{name} {_param_text(name, float(min(v)))} .. {_param_text(name, float(max(v)))}"
                         + ("" if _param_unit(name) == "1" else f" {_param_unit(name)}")
                         for name, v in zip(self.names, self.values))
        return (f"<SweepResult of {self.shape}: {len(self.points)} points over {over}, {self.modes} modes each"
                + (f", {bad} invalid" if bad else "") + ">")

    def _repr_html_(self):
        """The sweep's table for a notebook: the columns and units of the text report's
        (:func:`femodes.report.sweeps.sweep_table`: parameters in mm, cutoffs in GHz to the first
        digit of their errors, the single-mode band and its ratio)."""
        head, rows, right, notes = sweep_columns(self)
        before = [f"fixed: {fixed_text(self)}",
                  f"accuracy asked: {self.accuracy:.1e} (relative, on each cutoff); modes per point: {self.modes}"]
        after = [f"invalid: {n}" for n in notes]
        after.append(f"{self.reused + self.computed} points: {self.reused} from the store, {self.computed} computed; "
                     "one row per point and mode (labels): .rows(); as a Dataset: .to_xarray()")
        caption = f"sweep of {self.shape}: " + ", ".join(f"{n} ({len(v)} values)" for n, v in zip(self.names, self.values))
        return html_block(caption, before, html_table(head, rows, right), after)

    def to_xarray(self):
        """An xarray Dataset on the dimensions (the varied names in the order given, then
        ``mode``, numbered 1.. in cutoff order at each point, :attr:`modes_shown` of them): ``fc`` and ``fc_error`` (Hz),
        ``label`` and ``family`` of each mode, ``curve`` (the followed mode identity, 1..; 0 where
        a point has no such mode; followed along the first varied parameter, see
        :mod:`femodes.studies.tracking`) and ``ambiguous`` (the assignment not decided within the
        error bars); ``fc_followed`` (Hz) on (the varied names, ``followed``): the cutoff of each
        followed curve at each point, NaN where absent; per point ``f_low``, ``f_high`` (the single-mode
        band, Hz), ``single_mode_ratio``, ``status`` ('ok' or 'invalid') and ``message``.
        Attributes: shape, parameters (JSON), accuracy, reused, computed."""
        import xarray as xr

        shape = tuple(len(v) for v in self.values)
        n = self.modes_shown
        fc = np.full(shape + (n,), np.nan)
        err = np.full(shape + (n,), np.nan)
        label = np.full(shape + (n,), "", dtype=object)
        family = np.full(shape + (n,), "", dtype=object)
        lo, hi = np.full(shape, np.nan), np.full(shape, np.nan)
        status = np.full(shape, "", dtype=object)
        message = np.full(shape, "", dtype=object)
        for idx in itertools.product(*(range(s) for s in shape)):
            key = tuple(float(self.values[d][i]) for d, i in enumerate(idx))
            r = self.points[key]
            status[idx], message[idx] = r["status"], r["message"]
            k = len(r["fc"])
            fc[idx][:k], err[idx][:k] = r["fc"], r["fc_error"]
            label[idx][:k], family[idx][:k] = r["label"], r["family"]
            if r["band"] is not None:
                lo[idx], hi[idx] = r["band"]
        curve, amb, fc_curve = self._follow(fc)
        dims = self.names + ("mode",)
        with np.errstate(divide="ignore", invalid="ignore"):
            ratio = np.where(lo > 0, hi / np.where(lo > 0, lo, 1.0), np.nan)
        coords = {name: np.asarray(v, dtype=float) for name, v in zip(self.names, self.values)}
        coords["mode"] = np.arange(1, n + 1)
        coords["followed"] = np.arange(1, fc_curve.shape[-1] + 1)
        ds = xr.Dataset(
            {"fc": (dims, fc, {"units": "Hz", "long_name": "cutoff frequency"}),
             "fc_error": (dims, err, {"units": "Hz", "long_name": "estimated error of the cutoff frequency"}),
             "label": (dims, label), "family": (dims, family),
             "f_low": (self.names, lo, {"units": "Hz", "long_name": "single-mode band, lower edge"}),
             "f_high": (self.names, hi, {"units": "Hz", "long_name": "single-mode band, upper edge"}),
             "single_mode_ratio": (self.names, ratio),
             "status": (self.names, status), "message": (self.names, message),
             "curve": (dims, curve, {"long_name": "followed mode identity (curve number, 0: no mode)"}),
             "ambiguous": (dims, amb, {"long_name": "curve assignment not decided within the error bars"}),
             "fc_followed": (self.names + ("followed",), fc_curve,
                             {"units": "Hz", "long_name": "cutoff frequency of each followed curve (NaN: absent)"})},
            coords=coords,
            attrs={"shape": self.shape, "parameters": json.dumps(self.parameters), "accuracy": self.accuracy,
                   "reused": self.reused, "computed": self.computed})
        for name in self.names:
            ds[name].attrs["units"] = ("rad" if name == "angle" else "Hz" if name == "frequency" else
                                       "1" if name.split(".")[-1] in MATERIAL_KEYS else "m")
        self._add_quantities(ds, shape)
        return ds

    def _add_quantities(self, ds, shape):
        """The quantities at the analysis frequency (see :class:`SweepResult`), where computed."""
        if not any("at_frequency" in r for r in self.points.values()):
            return
        n = self.modes_shown
        dims = self.names + ("mode",)
        arrays = {q: np.full(shape + (n,), np.nan) for q in POINT_QUANTITIES + tuple(q + "_error" for q in POINT_QUANTITIES)}
        at_label = np.full(shape + (n,), "", dtype=object)
        for idx in itertools.product(*(range(s) for s in shape)):
            key = tuple(float(self.values[d][i]) for d, i in enumerate(idx))
            q = self.points[key].get("at_frequency")
            if q is None:
                continue
            for name, arr in arrays.items():
                vals = q[name][:n]
                arr[idx][:len(vals)] = vals
            labs = q.get("at_label") or self.points[key]["label"]
            at_label[idx][:len(labs[:n])] = labs[:n]
        for name, arr in arrays.items():
            base = name[:-6] if name.endswith("_error") else name
            attrs = {"units": UNITS[base]}
            if name.endswith("_error"):
                attrs["long_name"] = f"estimated error of {base}"
            ds[name] = (dims, arr, attrs)
        ds["at_label"] = (dims, at_label, {"long_name": "label of the mode the quantities belong to (loaded guides: "
                                                         "the modes at the frequency, largest beta first)"})
        if self.frequency is not None:
            ds.attrs["frequency"] = self.frequency
        ds.attrs["cautions"] = " ".join(Q.CAUTIONS)

    def tracks(self, index=()):
        """The followed curves (:func:`femodes.studies.tracking.follow`) along the first varied
        parameter, the others held at ``index`` (their positions in the grid)."""
        x = self.values[0]
        pts = []
        for v in x:
            key = (float(v),) + tuple(float(self.values[d + 1][i]) for d, i in enumerate(index))
            pts.append(self.points[key])
        return follow(pts, x)

    def _follow(self, fc):
        """(curve, ambiguous, fc per curve) arrays: modes followed along the first varied
        parameter, separately on every line of the grid's other parameters."""
        shape = fc.shape
        curve = np.zeros(shape, dtype=int)
        amb = np.zeros(shape, dtype=bool)
        per_line = {}
        for rest in itertools.product(*(range(s) for s in shape[1:-1])):
            t = self.tracks(rest)
            per_line[rest] = t
            for i in range(shape[0]):
                k = len(t.curve[i])
                curve[(i,) + rest][:k] = t.curve[i]
                amb[(i,) + rest][:k] = t.ambiguous[i]
        n_curves = max([t.n_curves for t in per_line.values()] + [1])
        fc_curve = np.full(shape[:-1] + (n_curves,), np.nan)
        for rest, t in per_line.items():
            by = t.fc_by_curve(fc[(slice(None),) + rest])
            fc_curve[(slice(None),) + rest][:, :by.shape[1]] = by
        return curve, amb, fc_curve

    def rows(self):
        """One dict per point and mode, in grid order (SI units; the columns of :meth:`to_csv`),
        with the followed ``curve`` of each mode and whether its assignment is ``ambiguous``."""
        out = []
        ds = self.to_xarray()
        curve = ds.curve.values.reshape(-1, self.modes_shown)
        amb = ds.ambiguous.values.reshape(-1, self.modes_shown)
        for j, p in enumerate(itertools.product(*self.values)):
            r = self.points[tuple(float(v) for v in p)]
            band = r["band"] or [math.nan, math.nan]
            base = dict(zip(self.names, (float(v) for v in p)))
            base.update(status=r["status"], message=r["message"], f_low_Hz=band[0], f_high_Hz=band[1])
            for k in range(max(1, len(r["fc"]))):
                row = dict(base, mode=k + 1)
                if k < len(r["fc"]):
                    row.update(label=r["label"][k], family=r["family"][k], fc_Hz=r["fc"][k],
                               fc_error_Hz=r["fc_error"][k], curve=int(curve[j, k]), ambiguous=bool(amb[j, k]))
                out.append(row)
        return out

    def to_csv(self, path):
        """The points as CSV, one row per point and mode (SI units named in the header; empty where
        a point is invalid).  Written to a temporary name and moved into place.  Returns the path."""
        cols = list(self.names) + ["mode", "label", "family", "fc_Hz", "fc_error_Hz", "curve", "ambiguous",
                                   "f_low_Hz", "f_high_Hz", "status", "message"]
        buf = io.StringIO()
        w = csv.DictWriter(buf, cols, lineterminator="\n")
        w.writeheader()
        for row in self.rows():
            w.writerow({k: ("" if isinstance(v, float) and not math.isfinite(v) else v) for k, v in row.items()})
        return _replace_file(path, buf.getvalue().encode("utf-8"), "CSV")

    def to_netcdf(self, path):
        """The Dataset of :meth:`to_xarray` as a netCDF (3) file, written to a temporary name and
        moved into place.  Returns the path."""
        return _replace_file(path, self.to_xarray().to_netcdf(None, engine="scipy"), "netCDF")


def _replace_file(path, data, what):
    """Write ``data`` (bytes) to ``path`` whole (femodes.atomic.replacing)."""
    with replacing(path, what) as tmp, open(tmp, "wb") as fh:
        fh.write(bytes(data))
    return str(path)


def _shape_function(shape):
    """The shape function and its parameter names (keyword arguments)."""
    if not callable(shape):
        raise FemodesError(f"shape must be a shape function such as femodes.double_ridge, got {shape!r}")
    try:
        sig = inspect.signature(shape)
    except (TypeError, ValueError):
        raise FemodesError(f"shape {shape!r} has no signature to read its parameters from") from None
    names = [p.name for p in sig.parameters.values() if p.kind in (p.POSITIONAL_OR_KEYWORD, p.KEYWORD_ONLY)]
    if inspect.isfunction(shape):
        local = "<lambda>" in shape.__qualname__ or getattr(shape, "__module__", None) is None
    else:  # a callable object (e.g. a shape with its magnetic walls marked): its class by name
        local = "<locals>" in type(shape).__qualname__
    if local:
        raise FemodesError("shape must be a function defined at module level (the points are solved in other "
                           "processes, which find it by name)")
    return names


def _number(name, value):
    if isinstance(value, bool):
        raise FemodesError(f"{name} must be a number (SI), got {value!r}")
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise FemodesError(f"{name} must be a number (SI), got {value!r}") from None
    if not math.isfinite(x):
        raise FemodesError(f"{name} must be a finite number (SI), got {value!r}")
    return x


#: the names a sweep may vary besides the shape's parameters: the analysis frequency and the fill's
#: material (``region.NAME.eps_r`` and the like for a region given in ``regions``)
MATERIAL_KEYS = ("eps_r", "mu_r", "tan_delta")


def _extra_names(regions):
    out = ["frequency"] + list(MATERIAL_KEYS)
    for r in regions or ():
        out += [f"region.{r['name']}.{k}" for k in MATERIAL_KEYS]
    return out


def _plan(shape, parameters, vary, extra=()):
    """(names, values, fixed parameters) checked against the shape's parameters (and ``extra``,
    names that are not the shape's: frequency, materials; they may be varied, not fixed)."""
    allowed = _shape_function(shape)
    if not isinstance(parameters, dict):
        raise FemodesError(f"parameters must be a dict of the shape's keyword arguments, got {type(parameters).__name__}")
    if not isinstance(vary, dict) or not vary:
        raise FemodesError("vary must be a dict from a parameter name to a sequence of its values, with at least one "
                           "parameter")
    for name in list(parameters) + list(vary):
        if name not in allowed and not (name in extra and name in vary):
            more = f"; a sweep may also vary {', '.join(extra)}" if extra else ""
            raise FemodesError(f"{shape.__name__} has no parameter {name!r}; its parameters: {', '.join(allowed)}"
                               + more)
    both = sorted(set(parameters) & set(vary))
    if both:
        raise FemodesError(f"{', '.join(both)} is both fixed (parameters) and varied (vary): give it in one only")
    names, values = [], []
    for name, seq in vary.items():
        vals = [_number(f"a value of {name!r}", v) for v in np.atleast_1d(np.asarray(seq, dtype=object)).ravel()]
        if not vals:
            raise FemodesError(f"the range of {name!r} is empty: give at least one value")
        if len(set(vals)) != len(vals):
            raise FemodesError(f"the values of {name!r} repeat: give each value once")
        names.append(name)
        values.append(np.array(vals))
    fixed = {}
    for name, v in parameters.items():
        if isinstance(v, (int, float, np.floating, np.integer)) and not isinstance(v, bool):
            fixed[name] = _number(name, v)
        else:
            fixed[name] = v  # e.g. a 'ridges' count or an axis: passed on as given
    return tuple(names), tuple(values), fixed


def _key(point):
    return json.dumps([float(v) for v in point])


def _regions(regions):
    """The ``regions`` option checked: a list of dicts {name, shape, eps_r, mu_r, tan_delta};
    ``shape`` a Section placed in the guide, or a callable of the guide shape's keyword
    arguments returning one (the region then moves and grows with them)."""
    if regions is None:
        return None
    if isinstance(regions, dict) or not hasattr(regions, "__iter__"):
        raise FemodesError("regions must be a list of dicts such as {'name': 'slab', 'shape': "
                           "femodes.rectangle(a, d).translated(0, y), 'eps_r': 2.25}")
    out = []
    for r in regions:
        if not isinstance(r, dict) or "shape" not in r or not str(r.get("name", "")).strip():
            raise FemodesError(f"each region must be a dict with a 'name' and a 'shape' (and eps_r, mu_r, tan_delta), "
                               f"got {r!r}")
        extra = sorted(set(r) - {"name", "shape", "eps_r", "mu_r", "tan_delta"})
        if extra:
            raise FemodesError(f"region {r['name']!r} has unknown key(s) {', '.join(extra)}: give name, shape, eps_r, "
                               "mu_r, tan_delta")
        if not (isinstance(r["shape"], Section) or callable(r["shape"])):
            raise FemodesError(f"the shape of region {r['name']!r} must be a placed Section or a function of the "
                               f"guide shape's parameters returning one, got {type(r['shape']).__name__}")
        out.append({"name": str(r["name"]), "shape": r["shape"], "eps_r": _number("eps_r", r.get("eps_r", 1.0)),
                    "mu_r": _number("mu_r", r.get("mu_r", 1.0)), "tan_delta": _number("tan_delta", r.get("tan_delta", 0.0))})
    names = [r["name"] for r in out]
    if len(set(names)) != len(names):
        raise FemodesError(f"region names repeat ({', '.join(names)}): give each region its own name")
    return out


#: the last solve of this process (sections differing in frequency only share it)
_LAST = {}


def _split(point, options):
    """(shape keyword arguments, solve options, regions, frequency, analysis settings) of one
    point: the varied frequency and material values taken out of ``point`` and put in place."""
    shape_kw, opts = {}, dict(options)
    regions = [dict(r) for r in (opts.pop("regions", None) or ())]
    analysis = dict(opts.pop("analysis", None) or {})
    frequency = analysis.pop("frequency", None)
    for k, v in point.items():
        if k == "frequency":
            frequency = v
        elif k in MATERIAL_KEYS:
            if k == "tan_delta":
                analysis["tan_delta"] = v
            else:
                opts[k] = v
        elif k.startswith("region."):
            _, name, prop = k.split(".", 2)
            for r in regions:
                if r["name"] == name:
                    r[prop] = v
        else:
            shape_kw[k] = v
    return shape_kw, opts, regions, frequency, analysis


def solve_point(shape, fixed, point, modes, accuracy, options, start_size=None):
    """Solve one point (in a worker): the section ``shape(**fixed, **point)`` (with the
    ``regions`` of ``options`` filled in) and its cutoffs, and with an analysis frequency the
    quantities of :mod:`femodes.studies.pointwise`.  Returns the result dict of
    :class:`SweepResult` (status 'invalid' with the shape's message when the parameters make the
    geometry invalid); ``mesh_size`` is the final element size, which the next point may start
    from (``start_size``)."""
    t0 = time.perf_counter()
    out = {"status": "ok", "message": "", "fc": [], "fc_error": [], "label": [], "family": [], "band": None,
           "n_dofs": 0, "mesh_size": None, "seconds": 0.0}
    shape_kw, opts, regions, frequency, analysis = _split(point, options)
    try:
        section = _build(shape, dict(fixed, **shape_kw), regions)
    except RegionCallError:
        raise
    except FemodesError as exc:
        out.update(status="invalid", message=str(exc))
        return out
    at_f = None
    if section.materials:
        if frequency is None:
            ms = solve(section, modes=modes, accuracy=accuracy, **opts)
        else:
            st = study(section, modes=modes, accuracy=accuracy, frequency=frequency,
                       tan_delta=analysis.get("tan_delta", 0.0), **opts)
            ms = st.modes
            at_f = quantities_at(st.at_frequency, frequency, section=section, **analysis)
            at_f["at_label"] = [str(m.label) for m in st.at_frequency]
    else:
        key = json.dumps([_region_id(shape), fixed, shape_kw, opts, modes, accuracy],
                         sort_keys=True, default=str)
        if _LAST.get("key") == key:
            ms, partner = _LAST["ms"], _LAST["partner"]
        else:
            if start_size is not None:
                opts = dict(opts, start_size=start_size)
            ms = solve(section, modes=modes, accuracy=accuracy, **opts)
            partner = None
            _LAST.clear()
            _LAST.update(key=key, ms=ms, partner=None)
        if frequency is not None:
            if partner is None:
                partner = homogeneous_partner(ms, solve)
                _LAST["partner"] = partner
            at_f = quantities_at(ms, frequency, partner=partner, **analysis)
    out["fc"] = [float(m.fc) for m in ms]
    out["fc_error"] = [float(m.fc_error) for m in ms]
    out["label"] = [str(m.label) for m in ms]
    out["family"] = [str(m.family) for m in ms]
    out["degenerate"] = [bool(getattr(m, "degenerate_with", ())) for m in ms]
    out["symmetry"] = [class_signature("", getattr(m, "symmetry", None) or {}).split("|", 1)[1] for m in ms]
    if at_f is not None:
        out["at_frequency"] = dict(at_f, frequency=float(frequency))
    try:
        if hasattr(ms, "single_mode_band"):
            band = ms.single_mode_band()
        else:
            band = (ms[0].fc, ms[1].fc)
        out["band"] = [float(band[0]), float(band[1])]
    except (FemodesError, IndexError):
        out["band"] = None
    out["n_dofs"] = int(getattr(ms, "n_dofs", 0))
    size = getattr(ms, "mesh_size", None)
    out["mesh_size"] = None if size is None else float(size)
    out["seconds"] = time.perf_counter() - t0
    return out


#: a point's estimated error the next point's first mesh pair aims at, as a fraction of the accuracy
#: (the loop refines once more when a point misses the accuracy: a step costs more than the margin)
SIZE_TARGET = 0.5
#: the most the element size may grow from one point to the next
SIZE_GROWTH = 1.5


def next_size(result, accuracy, order=None):
    """The element size the next point's accuracy loop starts from: the final size ``h`` of this
    point scaled so that its estimated error (the largest fc_error / fc) would come out at
    SIZE_TARGET x ``accuracy``.  The relative error falls like h^q with q <= 2p (order p), so
    growing h by (target / estimate)^(1 / 2p) cannot overshoot the target if the next point
    behaves like this one; shrinking uses q = p (slower than any rate the meshes show here, so
    the shrink is ample).  The point's own accuracy loop and error estimate decide the rest: this
    only chooses where that loop starts.  None without a size (loaded guides, invalid points).

    With quantities at an analysis frequency the size is passed on unchanged: their field-based
    errors (Z_PV, alpha_c, breakdown power: :mod:`femodes.studies.pointwise`) come from the final
    mesh and its half, not from the accuracy loop, and a coarser final mesh let the breakdown
    power's error outgrow its bar (WR-90 at 10 GHz, accuracy 1e-5: 4.5 W off against a 4.1 W bar)."""
    h = result.get("mesh_size")
    if not h:
        return None
    if "at_frequency" in result:
        return float(h)
    rel = [e / f for f, e in zip(result["fc"], result["fc_error"]) if f > 0 and math.isfinite(e)]
    worst = max(rel, default=0.0)
    if not worst > 0:
        return float(h)
    p = DEFAULT_ORDER if order is None else int(order)
    ratio = SIZE_TARGET * accuracy / worst
    g = min(SIZE_GROWTH, ratio ** (1.0 / (2 * p))) if ratio >= 1 else max(0.5, ratio ** (1.0 / p))
    return float(h) * g


def _progress(total, enabled):
    if enabled is None:
        enabled = sys.stderr.isatty()
    if not enabled or total == 0:
        return None
    from tqdm import tqdm

    return tqdm(total=total, unit="point", desc="femodes sweep", file=sys.stderr)


def sweep(shape, parameters, vary, *, modes=6, accuracy=1e-6, store=None, scheduler=None, workers=None,
          progress=None, frequency=None, conductivity=5.8e7, roughness=0.0, tan_delta=0.0,
          breakdown_field=DRY_AIR_BREAKDOWN, safety_factor=2.0, regions=None, **options):
    """The cutoffs of ``shape`` over a grid of parameter values (see the module docstring).

    shape      : a shape function, e.g. ``femodes.double_ridge`` (module-level, found by name in
                 the worker processes)
    parameters : its fixed keyword arguments (SI), e.g. {"width": 34e-3, "height": 16e-3}
    vary       : parameter name -> sequence of values (SI); several names make a grid, in the
                 order given.  Besides the shape's parameters: ``frequency`` (Hz, the analysis
                 frequency), ``eps_r``, ``mu_r``, ``tan_delta`` of the fill, and
                 ``region.NAME.eps_r`` (``.mu_r``, ``.tan_delta``) of a region of ``regions``
    modes, accuracy : as for :func:`femodes.solve`, at every point; ``options`` too (eps_r,
                 mu_r, family, order)
    store      : a file (SQLite) to keep every finished point in and to resume from
    scheduler  : a dask.distributed scheduler address or Client: run the points there
    workers    : local processes (default: the cores, at most the points to compute; 1 runs in
                 this process)
    progress   : a progress bar (default: on a terminal only)
    frequency  : an analysis frequency (Hz): per point and mode also the quantities of
                 :mod:`femodes.studies.pointwise` (beta, guide wavelength, wave impedance, Z_PV,
                 conductor and dielectric attenuation, breakdown power, each with its error),
                 using ``conductivity`` (S/m or a metal name), ``roughness`` (m rms),
                 ``tan_delta`` (the fill's), ``breakdown_field`` (V/m) and ``safety_factor``
    regions    : dielectric regions put into the guide at every point: a list of dicts
                 {"name", "shape", "eps_r", "mu_r", "tan_delta"}; the points are then solved
                 full-vector (loaded guides).  ``shape`` is a Section placed in the guide (it
                 stays there whatever the point), or a function of the guide shape's keyword
                 arguments returning the placed Section, so that the region follows them, e.g.
                 ``def slab(width, height, **_): return femodes.rectangle(width, 0.3 * height)
                 .translated(0, -0.35 * height)`` (module level: the points run in other processes)

    Returns a :class:`SweepResult` (``.to_xarray()`` for a Dataset).
    """
    regions = _regions(regions)
    names, values, fixed = _plan(shape, parameters, vary, _extra_names(regions))
    unknown = sorted(set(options) - set(SWEEP_OPTIONS))
    if unknown:
        raise FemodesError(f"unknown option(s) {', '.join(unknown)}; a sweep passes on {', '.join(SWEEP_OPTIONS)}")
    both = sorted(set(options) & set(names))
    if both:
        raise FemodesError(f"{', '.join(both)} is both an option and varied: give it in one only")
    if frequency is not None and "frequency" in names:
        raise FemodesError("frequency is both given and varied: give it in one only")
    analysed = frequency is not None or "frequency" in names
    if frequency is not None:
        frequency = _number("frequency", frequency)
    for name, vals in zip(names, values):
        if (name == "frequency" or name.endswith("eps_r") or name.endswith("mu_r")) and np.any(vals <= 0):
            raise FemodesError(f"the values of {name} must be positive")
        if name.endswith("tan_delta") and np.any(vals < 0):
            raise FemodesError(f"the values of {name} must be >= 0")
    if analysed or "tan_delta" in names:
        options = dict(options, analysis={
            "frequency": frequency, "conductivity": Q.conductivity_of(conductivity),
            "roughness": _number("roughness", roughness), "tan_delta": _number("tan_delta", tan_delta),
            "breakdown_field": _number("breakdown_field", breakdown_field),
            "safety_factor": _number("safety_factor", safety_factor)})
    elif tan_delta:
        raise FemodesError("tan_delta is used for the dielectric attenuation at an analysis frequency: give "
                           "frequency= as well")
    if regions is not None:
        options = dict(options, regions=regions)
    modes = _check_count(modes)  # the solver's own message, once, before any point
    accuracy = _number("accuracy", accuracy)
    grid = list(itertools.product(*values))
    settings = {"shape": _region_id(shape), "parameters": fixed, "modes": modes,
                "accuracy": accuracy, "options": {k: options[k] for k in sorted(options)}}
    if regions is not None:  # a region's shape by its outline, not by the object's address
        settings["options"]["regions"] = [dict(r, shape=_region_id(r["shape"])) for r in regions]
    points, reused = {}, 0
    st = SweepStore(store, json.loads(json.dumps(settings, default=str))) if store is not None else None
    try:
        todo = []
        for p in grid:
            got = st.get(_key(p)) if st is not None else None
            if got is not None:
                points[tuple(float(v) for v in p)] = got
                reused += 1
            else:
                todo.append(p)
        bar = _progress(len(todo), progress)
        try:
            for p, result in _run(shape, fixed, names, todo, modes, accuracy, options, scheduler, workers):
                points[tuple(float(v) for v in p)] = result
                if st is not None:
                    st.put(_key(p), result)
                if bar is not None:
                    bar.update(1)
        finally:
            if bar is not None:
                bar.close()
    finally:
        if st is not None:
            st.close()
    return SweepResult(shape.__name__, fixed, names, values, modes, accuracy, points, reused, len(todo), frequency)


def _region_id(shape):
    """How the store's settings name a shape (of the guide or a region): a Section by its
    outline, a function by its module and name, another callable object by its repr."""
    if isinstance(shape, Section):
        return repr(shape.outer)
    if inspect.isfunction(shape) or inspect.ismethod(shape):
        return f"{shape.__module__}.{shape.__qualname__}"
    return repr(shape)


def _picklable(options):
    """FemodesError unless the regions can go to other processes (a function by its name)."""
    for r in options.get("regions") or ():
        if callable(r["shape"]):
            try:
                pickle.dumps(r["shape"])
            except Exception:
                raise FemodesError(f"the shape function of region {r['name']!r} cannot be sent to the worker "
                                   "processes: define it with def at module level (not a lambda or a local "
                                   "function), or give workers=1") from None


def _blocks(todo, n):
    """``todo`` cut into ``n`` runs of neighbouring points (grid order), as even as can be."""
    n = max(1, min(n, len(todo)))
    edges = np.linspace(0, len(todo), n + 1).round().astype(int)
    return [todo[a:b] for a, b in zip(edges[:-1], edges[1:]) if b > a]


def _run(shape, fixed, names, todo, modes, accuracy, options, scheduler, workers):
    """Yield (point, result) as the points finish: runs of neighbouring points, each run in one
    worker so that a point starts from its neighbour's element size."""
    if not todo:
        return

    def kwargs(block):
        return [dict(zip(names, (float(v) for v in p))) for p in block]

    if scheduler is not None:
        _picklable(options)
        yield from _run_dask(scheduler, shape, fixed, kwargs, todo, modes, accuracy, options)
        return
    n = min(len(todo), os.cpu_count() or 1) if workers is None else int(workers)
    if n < 1:
        raise FemodesError(f"workers must be a whole number >= 1, got {workers!r}")
    if n == 1:
        token = uuid.uuid4().hex
        for p, point in zip(todo, kwargs(todo)):
            yield p, _chained(shape, fixed, point, modes, accuracy, options, None, token, True)
        return
    _picklable(options)
    yield from _run_local(shape, fixed, todo, kwargs, modes, accuracy, options, n)


def _run_local(shape, fixed, todo, kwargs, modes, accuracy, options, n):
    """The points on this process and ``n - 1`` local worker processes, balanced as they go.

    Workers are separate processes started afresh (spawn: gmsh and the BLAS pools are per
    process), one executor of one process each so that a worker's points stay a run of
    neighbours, every point a task of its own (a finished point reaches the store at once).  This
    process solves the cold first point (:func:`_first_point`) while the workers start, then walks
    its own run; the workers walk theirs, each point starting from the size its predecessor in the
    same process suggests (:func:`_chained`).  Balance: a process out of work takes the far end of
    the longest queue still waiting: this process by cancelling a worker's not yet started points
    and solving them here, an idle worker by being given the far half of this process's run.  On
    the 21-point benchmark the two processes finished within a point (0.15-0.5 s) of each other
    with the fixed split too, so the balance gains nothing there; it is for runs whose points
    cost unevenly."""

    order = {p: i for i, p in enumerate(todo)}
    token = uuid.uuid4().hex
    done = {}  # position in todo -> result, for the size a point away from its run starts from

    def start_size(p):
        """The size suggested by the nearest solved point (in grid order)."""
        if not done:
            return None
        i = order[p]
        j = min(done, key=lambda k: (abs(k - i), k))
        return next_size(done[j], accuracy, options.get("order"))

    def give(w, block):
        for m, p in enumerate(block):
            fut = workers[w].submit(_chained, shape, fixed, kwargs([p])[0], modes, accuracy, options,
                                    start_size(p) if m == 0 else None, token, m > 0)
            queues[w].append((p, fut))

    ctx = multiprocessing.get_context("spawn")
    workers = [ProcessPoolExecutor(max_workers=1, mp_context=ctx, initializer=_end_with_parent) for _ in range(n - 1)]
    queues = [[] for _ in workers]
    try:
        for ex in workers:  # the workers start and import femodes while the first point is solved here
            ex.submit(_ready)
        k, runs = _runs(todo, n)
        r = solve_point(shape, fixed, kwargs([todo[k]])[0], modes, accuracy, options)  # a cold start
        done[k] = r
        yield todo[k], r
        own = list(runs[0]) if len(runs) == n else []
        for w, block in enumerate(runs[1 if own else 0:]):  # every run starts from its suggestion
            give(w, block)
        last = None  # the point this process solved last
        while own or any(queues):
            for w, q in enumerate(queues):  # collect what the workers finished
                for p, fut in [x for x in q if x[1].done()]:
                    q.remove((p, fut))
                    r = fut.result()
                    done[order[p]] = r
                    yield p, r
            if len(own) >= 2:  # a worker out of work gets the far half of this process's run
                for w, q in enumerate(queues):
                    if not q and len(own) >= 2:
                        half, own = own[(len(own) + 1) // 2:], own[:(len(own) + 1) // 2]
                        give(w, half)
            if not own:  # out of work here: take a worker's points that have not started, far end first
                w = max(range(len(queues)), key=lambda k: len(queues[k]))
                q = queues[w]
                if len(q) >= 2 and q[-1][1].cancel():
                    own.append(q.pop()[0])
                elif q:
                    wait([fut for qq in queues for _, fut in qq], return_when=FIRST_COMPLETED)
                    continue
                else:
                    continue
            p = own.pop(0)
            after = last is not None and abs(order[last] - order[p]) == 1  # next to the point solved last
            r = _chained(shape, fixed, kwargs([p])[0], modes, accuracy, options, None if after else start_size(p),
                         token, after)
            last = p
            done[order[p]] = r
            yield p, r
    except BrokenProcessPool:
        raise FemodesError(
            "the sweep's worker processes stopped: a script that runs a sweep on several workers must "
            "keep its top level under `if __name__ == \"__main__\":` (the workers import the script), "
            "or give workers=1") from None
    finally:
        for ex in workers:
            ex.shutdown(wait=True, cancel_futures=True)


#: the last element size suggested in this process (main or worker), and the sweep it belongs to
_CHAIN = {}


def _chained(shape, fixed, point, modes, accuracy, options, start_size, token, chain):
    """Solve one point (here or in a worker): from the size the previous point of this process suggested
    when ``chain`` (and it was of the same sweep, ``token``), else from ``start_size``."""
    if chain and _CHAIN.get("token") == token:
        start_size = _CHAIN["size"]
    r = solve_point(shape, fixed, point, modes, accuracy, options, start_size=start_size)
    _CHAIN.update(token=token, size=next_size(r, accuracy, options.get("order")) or start_size)
    return r


def _end_with_parent():
    """In a worker: end this process when the sweep's process ends, even by SIGKILL (the pool's
    own shutdown never runs then, and a worker waiting for work would stay forever)."""

    parent = multiprocessing.parent_process()
    if parent is not None:
        threading.Thread(target=lambda: (wait_for([parent.sentinel]), os._exit(1)), daemon=True).start()


def _ready():
    """Nothing: a first task that makes a worker start (and import femodes) early."""
    return os.getpid()


def _runs(todo, n):
    """(k, runs): the point of ``todo`` where the second of ``n`` runs begins (solved first), and
    the runs: the points before it backwards (they start next to it), the points after it in
    ``n - 1`` runs."""
    k = min(len(_blocks(todo, n)[0]), len(todo) - 1) if n > 1 else 0
    runs = ([todo[:k][::-1]] if k else []) + (_blocks(todo[k + 1:], max(1, n - 1)) if k + 1 < len(todo) else [])
    return k, runs


def _first_point(shape, fixed, todo, kwargs, modes, accuracy, options, n):
    """Solve here the point where the second run of ``todo`` begins (a cold start: the full
    accuracy loop of an independent solve) and yield it; returns (runs, start size): the points
    before it backwards (they start next to it), the points after it in ``n - 1`` runs, and the
    element size every run starts from (:func:`next_size`).  Without it each worker paid a cold
    start of its own (2.6x a warm point in the 21-point benchmark)."""
    k, runs = _runs(todo, n)
    r = solve_point(shape, fixed, kwargs([todo[k]])[0], modes, accuracy, options)
    yield todo[k], r
    return runs, next_size(r, accuracy, options.get("order"))


def _run_dask(scheduler, shape, fixed, kwargs, todo, modes, accuracy, options):
    """The points on a dask.distributed cluster (``scheduler``: an address or a Client): the cold
    first point here, then every other point a task of its own (it reaches the store as soon as
    it is done; a lost worker loses only its point in flight), submitted run by run so that the
    scheduler's first-come order keeps a worker's consecutive points close; each starts from the
    size its worker's previous point suggested (:func:`_chained`), the first from the first
    point's."""

    try:
        from distributed import Client
        from distributed import as_completed as dask_completed
    except ImportError:
        raise FemodesError("scheduler= needs dask.distributed: pip install 'femodes[cluster]'") from None
    own = not isinstance(scheduler, Client)
    client = Client(scheduler) if own else scheduler
    try:
        n = max(1, len(client.scheduler_info().get("workers", {})))
        runs, first = yield from _first_point(shape, fixed, todo, kwargs, modes, accuracy, options, n)
        token = uuid.uuid4().hex
        futures = {client.submit(_chained, shape, fixed, kwargs([p])[0], modes, accuracy, options, first, token, True,
                                 pure=False): p for p in itertools.chain(*runs)}
        for fut in dask_completed(list(futures)):
            yield futures[fut], fut.result()
    finally:
        if own:
            client.close()
