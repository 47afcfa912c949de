"""Loading and running a case file: TOML -> :class:`Case` (the guide, its regions, the [solve],
[analysis] and [output] tables), and :func:`run_case` -> :func:`femodes.api.study`.
"""

from __future__ import annotations

import os
import warnings
from dataclasses import replace

from femodes.api import MAX_MODES, SCALE_LIMITS, study
from femodes.case.regions import guide_names, has_expressions, region_section, shape_from
from femodes.case.schema import (
    _ANALYSIS_KEYS,
    _ELSEWHERE,
    _FILL_KEYS,
    _OUTPUT_KEYS,
    _REGION_KEYS,
    _SOLVE_KEYS,
    _TOP_KEYS,
    COMMON,
    DEFAULT_FREQUENCY_UNITS,
    DEFAULT_UNITS,
    FAMILIES,
    FIGURE_KINDS,
    FORMATS,
    FREQUENCY_UNITS,
    IMPEDANCE_KINDS,
    MAX_POINTS,
    ORDERS,
    PLACEMENT,
    SHAPES,
    UNITS,
    WALL_MARKS,
)
from femodes.case.settings import AnalysisSettings, Case, OutputSettings, _check_figures_apply
from femodes.case.studies import build_seek, build_tolerance
from femodes.case.sweep import build_sweep
from femodes.case.values import (
    _accuracy,
    _band_value,
    _check_keys,
    _choice,
    _conductor_value,
    _convert,
    _count,
    _decimal_scale,
    _frequency_value,
    _in_file_units,
    _material_range,
    _number,
    _show,
    _suggest,
    _table,
    case_scale_warnings,
)
from femodes.errors import FemodesError, quantity_accuracy_number
from femodes.geometry.mesh import Mesh, read_mesh
from femodes.quantities.convergence import DEFAULT_QUANTITY_ACCURACY

try:  # Python >= 3.11
    import tomllib as _toml
except ModuleNotFoundError:  # pragma: no cover - Python 3.10 with the tomli back-port
    import tomli as _toml




def load_case(path) -> Case:
    """Read and check the case file at ``path``; raises FemodesError on any problem."""
    path = os.fspath(path)
    try:
        with open(path, "rb") as fh:
            raw = fh.read()
    except FileNotFoundError:
        raise FemodesError(f"case file not found: {path}") from None
    except IsADirectoryError:
        raise FemodesError(f"case file {path} is a directory; give the path of a .toml file") from None
    except OSError as exc:
        raise FemodesError(f"cannot read case file {path}: {exc.strerror or exc}") from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise FemodesError(f"{path}: not a UTF-8 text file (byte {exc.start}); TOML case files are UTF-8") from None
    return parse_case(text, path=path)


def parse_case(text, path=None, base_dir=None) -> Case:
    """Check a case given as TOML text.  ``path`` names it in messages; mesh files are looked up
    relative to ``base_dir`` (default: the directory of ``path``, else the current directory)."""
    name = path if path is not None else "case"
    try:
        data = _toml.loads(text)
    except _toml.TOMLDecodeError as exc:
        raise FemodesError(f"{name}: not valid TOML: {exc}") from None
    if base_dir is None:
        base_dir = os.path.dirname(os.path.abspath(path)) if path is not None else os.getcwd()
    try:
        return _build_case(data, base_dir, path)
    except FemodesError as exc:
        raise FemodesError(f"{name}: {exc}") from None


def run_case(case: Case):
    """Solve the case: :func:`femodes.api.study` of its guide with its [solve] settings, at the
    [analysis] table frequency and over its band when it has an [analysis] table -> a
    :class:`femodes.api.Study` (the same kind of result for homogeneous and loaded guides)."""
    an = case.analysis
    kw = dict(case.solve)
    if an is not None:
        kw.update(frequency=an.table_frequency, band=an.band, points=an.points)
    with case_scale_warnings():
        return study(case.section, tan_delta=case.tan_delta, **kw)


def _build_case(data, base_dir, path):
    _check_keys(data, _TOP_KEYS, "the case file",
                shown=["title"] + [f"[{t}]" for t in _TOP_KEYS if t != "title"])
    title = data.get("title")
    if title is not None and not isinstance(title, str):
        raise FemodesError(f"title must be a string, got {_show(title)}")
    if "guide" not in data:
        raise FemodesError("missing the [guide] table; it needs at least shape = one of " + ", ".join(SHAPES))
    guide = _table(data, "guide")
    section, units = _build_guide(guide, base_dir)
    shape_name = guide["shape"]
    guide_params = None
    if shape_name == "standard":  # the studies vary a standard guide as the rectangle it is
        shape_name = "rectangle"
        guide_params = {k: section.params[k] for k in ("width", "height", "corner_radius") if k in section.params}
    elif SHAPES[shape_name].build is not None:
        spec, scale = SHAPES[shape_name], UNITS[units]
        guide_params = {k.target: _convert(k, guide[k.name], scale, units) for k in spec.keys if k.name in guide}
    _warn_scale(section, units)
    regions = data.get("region", [])
    if isinstance(regions, dict):
        raise FemodesError("write each material region as a [[region]] table (double brackets), not [region]")
    names = guide_names(shape_name, guide_params, units)
    for i, r in enumerate(regions, start=1):
        section = _build_region(r, i, units, section, names)
    moving = tuple((i, dict(r)) for i, r in enumerate(regions, start=1) if has_expressions(r))
    loaded = bool(regions)

    solve = {}
    fill = _table(data, "fill")
    _check_keys(fill, _FILL_KEYS, "[fill]")
    mat = _material_values(fill, "[fill]")
    tan_delta = mat.pop("tan_delta", 0.0)
    solve.update(mat)

    sv = _table(data, "solve")
    _check_keys(sv, _SOLVE_KEYS, "[solve]")
    if "modes" in sv:
        solve["modes"] = _count("modes in [solve]", sv["modes"])
        if solve["modes"] > MAX_MODES:
            raise FemodesError(f"modes in [solve] is at most {MAX_MODES} (more than this solver is meant for), "
                               f"got {solve['modes']}")
    if "accuracy" in sv:
        solve["accuracy"] = _accuracy("accuracy in [solve]", sv["accuracy"])
    if "family" in sv:
        if isinstance(sv["family"], str) and sv["family"].upper() == "TEM":
            raise FemodesError("family in [solve] must be one of 'TE', 'TM', got \"TEM\": TEM modes come with every "
                               "solve of a guide with inner conductors; leave family out to get them")
        solve["family"] = _choice("family in [solve]", sv["family"], FAMILIES)
    if "order" in sv:
        o = sv["order"]
        if isinstance(o, bool) or not isinstance(o, int) or o not in ORDERS:
            raise FemodesError(f"order in [solve] must be one of {', '.join(map(str, ORDERS))}, got {_show(o)}")
        solve["order"] = o

    ov = _table(data, "output")
    _check_keys(ov, _OUTPUT_KEYS, "[output]")
    out = OutputSettings()
    if "figures" in ov:
        figs = ov["figures"]
        if isinstance(figs, str):
            figs = [figs]
        if not isinstance(figs, list):
            raise FemodesError(f"figures in [output] must be a list of names from {list(FIGURE_KINDS)}, "
                               f"got {_show(ov['figures'])}")
        kinds = []
        for f in figs:
            kinds.append(_choice("figures in [output]", f, FIGURE_KINDS))
        out = replace(out, figures=tuple(dict.fromkeys(kinds)))
    if "format" in ov:
        out = replace(out, format=_choice("format in [output]", ov["format"], FORMATS))
    if "directory" in ov:
        d = ov["directory"]
        if not isinstance(d, str) or not d.strip():
            raise FemodesError(f"directory in [output] must be a non-empty string, got {_show(d)}")
        out = replace(out, directory=d)
    if "field_count" in ov:
        out = replace(out, field_count=_count("field_count in [output]", ov["field_count"]))
    if ov and "figures" not in ov and ("directory" in ov or "format" in ov):
        warnings.warn("femodes: [output] names a directory or format but no figures, so none are written: add "
                      'figures = ["fields", "chart", ...] to [output] (or pass --figures DIR)', UserWarning,
                      stacklevel=2)

    if loaded and "family" in solve:
        raise FemodesError("family in [solve] does not apply to a guide with [[region]] tables: its modes "
                           "are hybrid in general (leave family out)")
    if loaded and solve.get("order", 3) > 3:
        raise FemodesError(f"order in [solve] must be 1, 2 or 3 for a guide with [[region]] tables (edge "
                           f"elements), got {solve['order']}")
    if loaded and isinstance(section, Mesh) and solve.get("order", 3) < 2:
        raise FemodesError("order in [solve] must be 2 or 3 for a mesh file with [[region]] tables (the error "
                           "estimate on a fixed mesh compares order p with p - 1), got 1")
    qa = _quantity_accuracy(sv["quantity_accuracy"]) if "quantity_accuracy" in sv else DEFAULT_QUANTITY_ACCURACY
    analysis = None
    if "analysis" in data:
        an = _table(data, "analysis")
        analysis = replace(_build_analysis(an, tan_delta), quantity_accuracy=qa)
    _check_figures_apply(out, analysis, "in the case file", loaded)
    sweep = build_sweep(_table(data, "sweep"), guide, base_dir) if "sweep" in data else None
    seek = build_seek(_table(data, "seek"), guide) if "seek" in data else None
    tol = build_tolerance(_table(data, "tolerance"), guide) if "tolerance" in data else None
    return Case(title=title, section=section, solve=solve, output=out, path=path, analysis=analysis,
                tan_delta=tan_delta, sweep=sweep, seek=seek, tolerance=tol, quantity_accuracy=qa, units=units,
                guide_shape=shape_name, guide_params=guide_params, moving_regions=moving,
                placement=_placement(guide, units))


def _placement(guide, units):
    """The [guide] table's placement (offset, rotate_deg, mirror) in SI: a study rebuilding a
    guide with magnetic walls places it the same way before marking its sides."""
    scale = UNITS[units]
    return {k.name: _convert(k, guide[k.name], scale, units) for k in PLACEMENT if k.name in guide}


def _warn_scale(section, units):
    """The library's size warning (femodes.api.SCALE_LIMITS), said in the case file's terms: a
    case file's lengths are in its `units`, so the usual cause is the wrong `units`."""
    size = getattr(section, "size", None)
    lo, hi = SCALE_LIMITS
    if size is None or lo <= size <= hi:
        return
    what = "large" if size > hi else "small"
    metres = f" ({size:.4g} m)" if units != "m" else ""
    warnings.warn(f"femodes: the guide is {size / UNITS[units]:.4g} {units} across{metres}, implausibly "
                  f"{what} for a microwave guide: check units in [guide] (now \"{units}\"; one of "
                  f"{', '.join(UNITS)})", UserWarning, stacklevel=4)


def _quantity_accuracy(value):
    """[solve] quantity_accuracy: a relative accuracy from 1e-9 up to 0.5, or 0 (no re-solves)."""
    v = _number("quantity_accuracy in [solve]", value, "a relative error (number), e.g. 1e-3, or 0 for none")
    if v == 0:
        return v
    try:
        return quantity_accuracy_number("quantity_accuracy in [solve]", v)
    except FemodesError as exc:
        raise FemodesError(f"{exc}; or 0 to skip their error bars") from None


def _build_analysis(an, tan_delta):
    for k, v in an.items():
        if k not in _ANALYSIS_KEYS and k in _ELSEWHERE:
            raise FemodesError(f"key {k!r} does not belong in [analysis]: it goes in {_ELSEWHERE[k]} "
                               f"(valid in [analysis]: {', '.join(_ANALYSIS_KEYS)})")
    _check_keys(an, _ANALYSIS_KEYS, "[analysis]")
    if "frequency" not in an and "band" not in an:
        raise FemodesError("[analysis] needs frequency = F or band = [F1, F2] (or both), in frequency_units "
                           f"(default {DEFAULT_FREQUENCY_UNITS})")
    units = an.get("frequency_units", DEFAULT_FREQUENCY_UNITS)
    if not isinstance(units, str) or units not in FREQUENCY_UNITS:
        sug = ""
        if isinstance(units, str):
            low = [u for u in FREQUENCY_UNITS if u.lower() == units.lower()]
            sug = f"; did you mean {low[0]!r}?" if low else _suggest(units, FREQUENCY_UNITS)
            if units.lower() == "thz":
                sug = " (give THz in GHz: 1 THz = 1000 GHz, frequency_units = \"GHz\")"
        raise FemodesError(f"frequency_units in [analysis] must be one of {', '.join(FREQUENCY_UNITS)}, "
                           f"got {_show(units)}{sug}")
    scale = FREQUENCY_UNITS[units]
    s = AnalysisSettings(tan_delta=tan_delta, frequency_units=units, frequency_from="frequency in [analysis]",
                         band_from="band in [analysis]")
    if "band" in an and "frequency" not in an:
        s = replace(s, frequency_from="the centre of band in [analysis]")
    if "frequency" in an:
        s = replace(s, frequency=_frequency_value("frequency in [analysis]", an["frequency"], units, scale))
    if "band" in an:
        s = replace(s, band=_band_value("band in [analysis]", an["band"], units, scale))
    if "points" in an:
        if "band" not in an:
            raise FemodesError("points in [analysis] is the number of frequencies in the band sweep; it needs "
                               "band = [F1, F2]")
        p = an["points"]
        if isinstance(p, bool) or not isinstance(p, int) or not 2 <= p <= MAX_POINTS:
            raise FemodesError(f"points in [analysis] must be a whole number from 2 to {MAX_POINTS}, got {_show(p)}")
        s = replace(s, points=p)
    if "conductor" in an:
        name, sigma = _conductor_value("conductor in [analysis]", an["conductor"])
        s = replace(s, conductor=name, conductivity=sigma)
    if "roughness_um" in an:
        r = _number("roughness_um in [analysis]", an["roughness_um"], "an rms roughness in micrometres (number)")
        if r < 0:
            raise FemodesError(f"roughness_um in [analysis] is an rms roughness in micrometres and must be >= 0 "
                               f"(0 for smooth walls), got {_show(an['roughness_um'])}")
        s = replace(s, roughness=_decimal_scale(r, 1e-6))
    if "breakdown_field" in an:
        e = _number("breakdown_field in [analysis]", an["breakdown_field"], "a field strength in V/m (number), "
                    "e.g. 3e6")
        if e <= 0:
            raise FemodesError(f"breakdown_field in [analysis] must be a positive field strength in V/m "
                               f"(3e6 for dry air at sea level), got {_show(an['breakdown_field'])}")
        s = replace(s, breakdown_field=e)
    if "safety_factor" in an:
        k = _number("safety_factor in [analysis]", an["safety_factor"], "a number >= 1")
        if k < 1:
            raise FemodesError(f"safety_factor in [analysis] divides the breakdown power and must be >= 1 "
                               f"(1 for none), got {_show(an['safety_factor'])}")
        s = replace(s, safety_factor=k)
    if "impedance" in an:
        v = an["impedance"]
        s = replace(s, impedance=_choice("impedance in [analysis]", v.upper() if isinstance(v, str) and
                                         v.upper() in IMPEDANCE_KINDS else v, IMPEDANCE_KINDS))
    return s


def _build_guide(guide, base_dir):
    if "shape" not in guide:
        raise FemodesError("[guide] needs shape = one of " + ", ".join(SHAPES))
    shape = guide["shape"]
    if not isinstance(shape, str):
        raise FemodesError(f"shape in [guide] must be a string, one of {', '.join(SHAPES)}; got {_show(shape)}")
    if shape not in SHAPES:
        raise FemodesError(f"unknown shape {shape!r} in [guide]{_suggest(shape, SHAPES)} "
                           f"(valid shapes: {', '.join(SHAPES)})")
    spec = SHAPES[shape]
    allowed = COMMON + tuple(k.name for k in spec.keys) + (tuple(k.name for k in PLACEMENT + WALL_MARKS)
                                                          if spec.placement else ())
    _check_shape_keys(guide, shape, spec, allowed, "[guide]")
    units = guide.get("units", DEFAULT_UNITS)
    if not isinstance(units, str) or units not in UNITS:
        raise FemodesError(f"units in [guide] must be one of {', '.join(UNITS)}, got {_show(units)}"
                           + (_suggest(units.lower(), UNITS) if isinstance(units, str) else ""))
    scale = UNITS[units]

    if spec.build is None:  # mesh file

        rel = guide["file"]
        if not isinstance(rel, str) or not rel:
            raise FemodesError(f"file in [guide] must be a path string, got {_show(rel)}")
        full = rel if os.path.isabs(rel) else os.path.join(base_dir, rel)
        if not os.path.isfile(full):
            raise FemodesError(f"mesh file {rel!r} not found (looked for {os.path.normpath(full)}); "
                               "file is relative to the case file")
        try:
            return read_mesh(full, scale=scale), units
        except FemodesError as exc:  # the mesh checks print mm and m: the file's coordinates are in `units`
            raise FemodesError(f"[guide] mesh: {_in_file_units(str(exc), units, scale)}") from None
    return _shape_from(guide, shape, spec, scale, units, "[guide]"), units


def _check_shape_keys(table, shape, spec, allowed, where):
    for k in table:
        if k in allowed:
            continue
        if not spec.placement and k in {p.name for p in PLACEMENT}:
            raise FemodesError(f"key {k!r} in {where} does not apply to shape 'mesh': a mesh is used "
                               f"where it lies (valid keys for shape 'mesh': {', '.join(allowed)})")
        hint = ""
        if k == "units" and where != "[guide]":
            hint = "; a region's lengths are in the units of [guide]"
        elif k in _TOP_KEYS and where == "[guide]":  # title = ... written below [guide]
            hint = f"; {k} belongs at the top of the file, above the first [table]"
        raise FemodesError(f"unknown key {k!r} in {where}{_suggest(k, allowed)}{hint} "
                           f"(valid keys for shape {shape!r}: {', '.join(allowed)})")
    missing = [k.name for k in spec.required if k.name not in table]
    if missing:
        raise FemodesError(f"shape {shape!r} needs {', '.join(k.name for k in spec.required)}; "
                           f"missing in {where}: {', '.join(missing)}")


_shape_from = shape_from  # the [guide] and [[region]] tables' builder (femodes.case.regions)


def _material_values(table, where):
    """The eps_r, mu_r, tan_delta keys present in ``table``, checked: {key: float}."""
    vals = {}
    for k in ("eps_r", "mu_r"):
        if k in table:
            vals[k] = _material_range(f"{k} in {where}", k, table[k])
    if "tan_delta" in table:
        t = _number(f"tan_delta in {where}", table["tan_delta"], "a loss tangent (number), e.g. 2e-4")
        if not 0 <= t < 1:
            raise FemodesError(f"tan_delta in {where} is a loss tangent and must lie in 0 <= tan_delta < 1 "
                               f"(e.g. 2e-4 for a good plastic), got {_show(table['tan_delta'])}")
        vals["tan_delta"] = t
    return vals


def _build_region(table, number, units, section, names=None):
    """One [[region]] table -> the section with that material region added (its dimensions may
    be expressions of the [guide] keys ``names``, :mod:`femodes.case.regions`)."""
    where = f"[[region]] {number}"
    if not isinstance(table, dict):
        raise FemodesError(f"region must be written as [[region]] tables (one per region), got {_show(table)}")
    if isinstance(section, Mesh):
        return _build_group_region(table, where, section)
    if "group" in table:
        raise FemodesError(f"group in {where} names a group of triangles of a mesh file; it applies only with "
                           "shape = \"mesh\" in [guide].  Give this region a shape instead (one of "
                           f"{', '.join(n for n in SHAPES if n != 'mesh')}, with its keys)")
    if "shape" not in table:
        raise FemodesError(f"{where} needs shape = one of {', '.join(n for n in SHAPES if n != 'mesh')}, "
                           "with that shape's keys, and eps_r")
    shape = table["shape"]
    if not isinstance(shape, str) or shape not in SHAPES or shape == "mesh":
        names = [n for n in SHAPES if n != "mesh"]
        sug = _suggest(shape, names) if isinstance(shape, str) else ""
        raise FemodesError(f"shape in {where} must be one of {', '.join(names)}{sug}, got {_show(shape)}"
                           + (" (a region cannot be a mesh file)" if shape == "mesh" else ""))
    spec = SHAPES[shape]
    allowed = ("shape",) + tuple(k.name for k in spec.keys) + tuple(k.name for k in PLACEMENT) + _REGION_KEYS
    _check_shape_keys(table, shape, spec, allowed, where)
    vals = _region_material(table, where)
    region = region_section(table, number, units, names or {})
    try:
        return section.with_material(region, **vals)
    except FemodesError as exc:
        # the library's advice speaks Python: a case file places a region with its offset key
        text = str(exc).replace("use .translated(dx, dy)", f"give the {where} table offset = [dx, dy] in {units}")
        raise FemodesError(f"{where}: {text}") from None


def _region_material(table, where):
    """eps_r (required), mu_r, tan_delta and name of a [[region]] table, checked."""
    if "eps_r" not in table:
        raise FemodesError(f"{where} needs eps_r (its relative permittivity; 1 for air)")
    vals = _material_values(table, where)
    if "name" in table:
        if not isinstance(table["name"], str):
            raise FemodesError(f"name in {where} must be a string, got {_show(table['name'])}")
        vals["name"] = table["name"]
    return vals


def _build_group_region(table, where, mesh):
    """A [[region]] table of a mesh-file guide: ``group`` names a group of the file's triangles
    (a gmsh physical surface), which gets the table's material; shapes do not apply."""
    allowed = ("group",) + _REGION_KEYS
    groups = ", ".join(repr(g) for g in mesh.groups) or "none"
    shape_keys = [k for k in table if k not in allowed and (k == "shape" or any(
        k in {x.name for x in spec.keys} for spec in SHAPES.values()) or k in {x.name for x in PLACEMENT})]
    if shape_keys:
        verb = "does" if len(shape_keys) == 1 else "do"
        raise FemodesError(f"{where}: {', '.join(map(repr, shape_keys))} {verb} not apply to a mesh-file guide: "
                           "its regions are the mesh's own groups of triangles; name one with group = \"...\" "
                           f"(groups in {mesh.source}: {groups}; valid keys: {', '.join(allowed)})")
    for k in table:
        if k not in allowed:
            raise FemodesError(f"unknown key {k!r} in {where}{_suggest(k, allowed)} (valid keys for a region of a "
                               f"mesh file: {', '.join(allowed)})")
    if "group" not in table:
        raise FemodesError(f"{where} needs group = the name of a group of triangles of the mesh file (groups in "
                           f"{mesh.source}: {groups}), and eps_r")
    group = table["group"]
    if not isinstance(group, str):
        raise FemodesError(f"group in {where} must be a string naming a group of the mesh file (unnamed gmsh "
                           f"groups by their number in quotes, e.g. \"2\"), got {_show(group)}; groups in "
                           f"{mesh.source}: {groups}")
    vals = _region_material(table, where)
    try:
        return mesh.with_material(group, **vals)
    except FemodesError as exc:
        raise FemodesError(f"{where}: {exc}") from None
