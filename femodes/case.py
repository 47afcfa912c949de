"""Case files: a TOML description of one guide and how to solve it.

A case file names a cross-section (or a mesh file), its filling, the solve settings and the
figures wanted.  :func:`load_case` reads and checks it and returns a :class:`Case`;
:func:`run_case` solves it.  Lengths are converted to metres and angles to radians here, once;
everything after this module works in SI units.

Schema
------
Top level::

    title = "..."            optional string, printed in reports

``[guide]`` (required) -- the cross-section:

    shape       required; one of the shape names below
    units       unit of every length in [guide]: m, cm, mm, um, in, mil (default mm;
                1 in = 25.4 mm and 1 mil = 0.001 in exactly)

    rectangle         width, height; optional corner_radius
    circle            radius
    ellipse           a (semi-axis along x), b (semi-axis along y)
    coaxial           outer_radius, inner_radius; optional inner_offset = [dx, dy]
    rectangular_coax  width, height, inner_width, inner_height; optional inner_offset = [dx, dy]
    single_ridge      width, height, ridge_width, gap; optional ridge_corner_radius, base_radius
    double_ridge      width, height, ridge_width, gap; optional ridge_corner_radius, base_radius
    l_shape           width, height, notch_width, notch_height
    sector            radius, angle_deg (opening angle in degrees, 0 < angle_deg < 360);
                      optional inner_radius
    polygon           vertices = [[x, y], ...] (at least 3, in order around the outline);
                      optional holes = [[[x, y], ...], ...] (inner conductors)
    mesh              file = "path/to/mesh.msh": a triangle mesh (gmsh .msh or any format meshio
                      reads), relative to the case file; its coordinates are in `units`

    Placement (every shape except mesh), applied in this order: mirror, rotate, offset.
    mirror      "x" (x -> -x) or "y" (y -> -y)
    rotate_deg  counter-clockwise rotation about the origin, degrees
    offset      [dx, dy] translation, in `units`

    The shapes are those of :mod:`femodes.section`; each key is the shape function's parameter
    of the same name (``angle_deg`` -> ``angle`` in radians, ``inner_offset`` -> ``offset``).

``[fill]`` (optional) -- the homogeneous filling:

    eps_r       relative permittivity, real, > 0 (default 1)
    mu_r        relative permeability, real, > 0 (default 1)

``[solve]`` (optional):

    modes       how many modes, a whole number >= 1 (default 6)
    accuracy    relative error on each cutoff the solver aims for (default 1e-6)
    family      "TE" or "TM" to solve one family only (default: all)
    order       finite-element order 1..4 (default: the solver's choice)

``[output]`` (optional):

    figures     list of figures to write: "fields" (field pattern per mode), "chart" (mode
                chart); default none
    format      png, svg or pdf (default png)
    directory   where figures go, relative to the current directory (default "femodes-out")
    field_count how many modes get a field pattern, a whole number >= 1 (default: all)

Anything else -- an unknown table or key, a wrong type, a missing key -- is an error that says
what was wrong, the value given and what would be valid.
"""

from __future__ import annotations

import difflib
import math
import os
from dataclasses import dataclass, field, replace
from typing import Callable

from . import section as _sec
from .errors import FemodesError

try:  # Python >= 3.11
    import tomllib as _toml
except ModuleNotFoundError:  # pragma: no cover - Python 3.10 with the tomli back-port
    import tomli as _toml

__all__ = ["Case", "OutputSettings", "load_case", "parse_case", "run_case", "SHAPES", "UNITS",
           "FIGURE_KINDS", "FORMATS", "shapes_help"]

# ----------------------------------------------------------------------------- vocabulary

#: length units accepted in [guide] -> metres per unit (exact by definition; 1 in = 25.4 mm, NIST)
UNITS = {"m": 1.0, "cm": 1e-2, "mm": 1e-3, "um": 1e-6, "in": 0.0254, "mil": 0.0254e-3}
DEFAULT_UNITS = "mm"
FIGURE_KINDS = ("fields", "chart")
FORMATS = ("png", "svg", "pdf")
FAMILIES = ("TE", "TM")
ORDERS = (1, 2, 3, 4)
DEFAULT_DIRECTORY = "femodes-out"

# value kinds of [guide] keys
LENGTH = "length"        # a number, in `units`
ANGLE = "angle_deg"      # a number of degrees
POINT = "point"          # [dx, dy], in `units`
POINTS = "points"        # [[x, y], ...], in `units`
LOOPS = "loops"          # [[[x, y], ...], ...], in `units`
FILE = "file"            # a path string, relative to the case file
AXIS = "axis"            # "x" or "y"

_KIND_TEXT = {
    LENGTH: "a length (number)",
    ANGLE: "an angle in degrees (number)",
    POINT: "a pair [dx, dy] of lengths",
    POINTS: "a list of [x, y] pairs",
    LOOPS: "a list of lists of [x, y] pairs",
    FILE: "a file path (string)",
    AXIS: '"x" or "y"',
}


@dataclass(frozen=True)
class Key:
    """One [guide] key: its name in the case file, value kind, and the shape function's parameter."""

    name: str
    kind: str
    param: str | None = None  # None: same as name
    doc: str = ""

    @property
    def target(self):
        return self.param or self.name


@dataclass(frozen=True)
class ShapeSpec:
    """A shape name of the case file: which function builds it and which keys it takes."""

    build: Callable | None  # None for 'mesh' (read from a file instead)
    required: tuple
    optional: tuple = ()
    placement: bool = True
    doc: str = ""

    @property
    def keys(self):
        return self.required + self.optional


def _L(name, param=None, doc=""):
    return Key(name, LENGTH, param, doc)


#: Placement keys, valid for every built-in shape (not for a mesh file).
PLACEMENT = (Key("offset", POINT, doc="translation [dx, dy]"),
             Key("rotate_deg", ANGLE, doc="counter-clockwise rotation about the origin"),
             Key("mirror", AXIS, doc='"x" maps x -> -x, "y" maps y -> -y'))
#: Keys every [guide] takes.
COMMON = ("shape", "units")

#: The one table of shapes: the loader validates with it and `femodes shapes` prints it.
SHAPES = {
    "rectangle": ShapeSpec(_sec.rectangle, (_L("width"), _L("height")), (_L("corner_radius"),),
                           doc="width (x) by height (y), centred at the origin"),
    "circle": ShapeSpec(_sec.circle, (_L("radius"),), doc="circle centred at the origin"),
    "ellipse": ShapeSpec(_sec.ellipse, (_L("a", doc="semi-axis along x"), _L("b", doc="semi-axis along y")),
                         doc="ellipse with semi-axes a (x) and b (y)"),
    "coaxial": ShapeSpec(_sec.coaxial, (_L("outer_radius"), _L("inner_radius")),
                         (Key("inner_offset", POINT, "offset", "inner conductor centre [dx, dy]"),),
                         doc="round coax; the inner conductor may sit off centre"),
    "rectangular_coax": ShapeSpec(_sec.rectangular_coax,
                                  (_L("width"), _L("height"), _L("inner_width"), _L("inner_height")),
                                  (Key("inner_offset", POINT, "offset", "inner conductor centre [dx, dy]"),),
                                  doc="rectangular outer wall with a rectangular inner conductor"),
    "single_ridge": ShapeSpec(_sec.single_ridge, (_L("width"), _L("height"), _L("ridge_width"), _L("gap")),
                              (_L("ridge_corner_radius"), _L("base_radius")),
                              doc="rectangle with one ridge on the bottom wall; gap = ridge face to top wall"),
    "double_ridge": ShapeSpec(_sec.double_ridge, (_L("width"), _L("height"), _L("ridge_width"), _L("gap")),
                              (_L("ridge_corner_radius"), _L("base_radius")),
                              doc="rectangle with ridges on top and bottom walls; gap = between ridge faces"),
    "l_shape": ShapeSpec(_sec.l_shape, (_L("width"), _L("height"), _L("notch_width"), _L("notch_height")),
                         doc="rectangle [0, width] x [0, height] less a top-right notch"),
    "sector": ShapeSpec(_sec.sector, (_L("radius"), Key("angle_deg", ANGLE, "angle", "opening angle")),
                        (_L("inner_radius"),), doc="circular (annular) sector, apex at the origin"),
    "polygon": ShapeSpec(_sec.polygon, (Key("vertices", POINTS, doc="outline, in order"),),
                         (Key("holes", LOOPS, doc="inner conductors, each a vertex list"),),
                         doc="any polygon, optionally with polygonal inner conductors"),
    "mesh": ShapeSpec(None, (Key("file", FILE, doc="triangle mesh, relative to the case file"),),
                      placement=False, doc="a triangle mesh read from a file (gmsh .msh or any meshio format)"),
}

# the other tables: key -> (type check, default)
_TOP_KEYS = ("title", "guide", "fill", "solve", "output")
_FILL_KEYS = ("eps_r", "mu_r")
_SOLVE_KEYS = ("modes", "accuracy", "family", "order")
_OUTPUT_KEYS = ("figures", "format", "directory", "field_count")


# ----------------------------------------------------------------------------- the case

@dataclass(frozen=True)
class OutputSettings:
    """What to write besides the table: figure kinds, file format, directory, field-pattern count."""

    figures: tuple = ()
    format: str = "png"
    directory: str = DEFAULT_DIRECTORY
    field_count: int | None = None


@dataclass(frozen=True)
class Case:
    """A checked case: ``section`` is a Section or a Mesh (metres); ``solve`` holds the keyword
    arguments for :func:`femodes.solve`; ``output`` the figure settings; ``path`` the source file."""

    title: str | None
    section: object
    solve: dict = field(default_factory=dict)
    output: OutputSettings = OutputSettings()
    path: str | None = None

    def with_options(self, modes=None, accuracy=None, figures_dir=None, fmt=None, no_figures=False):
        """A copy with command-line overrides (strings are parsed; None keeps the case value).

        ``figures_dir`` sets the figure directory and turns figures on (all kinds if the case
        file asked for none); ``no_figures`` turns them off.
        """
        if no_figures and figures_dir is not None:
            raise FemodesError("--figures and --no-figures contradict each other; give one of them")
        solve = dict(self.solve)
        if modes is not None:
            solve["modes"] = _count("--modes", _parse_number(modes, "--modes", "a whole number >= 1", whole=True))
        if accuracy is not None:
            solve["accuracy"] = _accuracy("--accuracy", _parse_number(accuracy, "--accuracy",
                                                                      "a relative error (number), e.g. 1e-6"))
        out = self.output
        if fmt is not None:
            out = replace(out, format=_choice("--format", fmt, FORMATS))
        if figures_dir is not None:
            if not isinstance(figures_dir, str) or not figures_dir.strip():
                raise FemodesError(f"--figures needs a directory name, got {figures_dir!r}")
            out = replace(out, directory=figures_dir, figures=out.figures or FIGURE_KINDS)
        if no_figures:
            out = replace(out, figures=())
        return replace(self, solve=solve, output=out)


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
    """Solve the case: ``femodes.solve(case.section, **case.solve)`` -> ModeSet."""
    from .solver import solve

    return solve(case.section, **case.solve)


# ----------------------------------------------------------------------------- building

def _build_case(data, base_dir, path):
    _check_keys(data, _TOP_KEYS, "the case file",
                shown=["title"] + [f"[{t}]" for t in _TOP_KEYS if t != "title"])
    title = data.get("title")
    if title is not None and not isinstance(title, str):
        raise FemodesError(f"title must be a string, got {_show(title)}")
    if "guide" not in data:
        raise FemodesError("missing the [guide] table; it needs at least shape = one of " + ", ".join(SHAPES))
    guide = _table(data, "guide")
    section = _build_guide(guide, base_dir)

    solve = {}
    fill = _table(data, "fill")
    _check_keys(fill, _FILL_KEYS, "[fill]")
    for k in _FILL_KEYS:
        if k in fill:
            v = _number(f"{k} in [fill]", fill[k])
            if not (v > 0 and math.isfinite(v)):
                raise FemodesError(f"{k} in [fill] must be a positive finite number (a real, lossless "
                                   f"material; 1 for air), got {_show(fill[k])}")
            solve[k] = v

    sv = _table(data, "solve")
    _check_keys(sv, _SOLVE_KEYS, "[solve]")
    if "modes" in sv:
        solve["modes"] = _count("modes in [solve]", sv["modes"])
    if "accuracy" in sv:
        solve["accuracy"] = _accuracy("accuracy in [solve]", sv["accuracy"])
    if "family" in sv:
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
    return Case(title=title, section=section, solve=solve, output=out, path=path)


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
    allowed = COMMON + tuple(k.name for k in spec.keys) + (tuple(k.name for k in PLACEMENT) if spec.placement else ())
    for k in guide:
        if k in allowed:
            continue
        if not spec.placement and k in {p.name for p in PLACEMENT}:
            raise FemodesError(f"key {k!r} in [guide] does not apply to shape 'mesh': a mesh is used "
                               f"where it lies (valid keys for shape 'mesh': {', '.join(allowed)})")
        raise FemodesError(f"unknown key {k!r} in [guide]{_suggest(k, allowed)} "
                           f"(valid keys for shape {shape!r}: {', '.join(allowed)})")
    missing = [k.name for k in spec.required if k.name not in guide]
    if missing:
        raise FemodesError(f"shape {shape!r} needs {', '.join(k.name for k in spec.required)}; "
                           f"missing in [guide]: {', '.join(missing)}")

    units = guide.get("units", DEFAULT_UNITS)
    if not isinstance(units, str) or units not in UNITS:
        raise FemodesError(f"units in [guide] must be one of {', '.join(UNITS)}, got {_show(units)}"
                           + (_suggest(units.lower(), UNITS) if isinstance(units, str) else ""))
    scale = UNITS[units]

    if spec.build is None:  # mesh file
        from .mesh import read_mesh

        rel = guide["file"]
        if not isinstance(rel, str) or not rel:
            raise FemodesError(f"file in [guide] must be a path string, got {_show(rel)}")
        full = rel if os.path.isabs(rel) else os.path.join(base_dir, rel)
        if not os.path.isfile(full):
            raise FemodesError(f"mesh file {rel!r} not found (looked for {os.path.normpath(full)}); "
                               "file is relative to the case file")
        return read_mesh(full, scale=scale)

    kwargs = {k.target: _convert(k, guide[k.name], scale, units) for k in spec.keys if k.name in guide}
    moves = {k.name: _convert(k, guide[k.name], scale, units) for k in PLACEMENT if k.name in guide}
    try:
        sec = spec.build(**kwargs)
        if "mirror" in moves:
            sec = sec.mirrored(moves["mirror"])
        if "rotate_deg" in moves:
            sec = sec.rotated(moves["rotate_deg"])
        if "offset" in moves:
            sec = sec.translated(*moves["offset"])
    except FemodesError as exc:
        raise FemodesError(f"[guide] {shape}: {exc}") from None
    return sec


def _convert(key, value, scale, units):
    where = f"{key.name} in [guide]"
    if key.kind == LENGTH:
        return _number(where, value, f"a length in {units}") * scale
    if key.kind == ANGLE:
        return math.radians(_number(where, value, "an angle in degrees"))
    if key.kind == POINT:
        return _pair(where, value, scale, units)
    if key.kind == POINTS:
        return _points(where, value, scale, units)
    if key.kind == LOOPS:
        if not isinstance(value, list):
            raise FemodesError(f"{where} must be {_KIND_TEXT[LOOPS]} in {units}, e.g. "
                               f"[[[0, 0], [1, 0], [0, 1]]], got {_show(value)}")
        return [_points(f"{key.name}[{i}] in [guide]", h, scale, units) for i, h in enumerate(value)]
    if key.kind == AXIS:
        return _choice(where, value, ("x", "y"))
    raise AssertionError(key.kind)


def _pair(where, value, scale, units):
    if (not isinstance(value, list) or len(value) != 2
            or not all(_is_number(v) for v in value)):
        raise FemodesError(f"{where} must be a pair [dx, dy] of numbers in {units}, got {_show(value)}")
    return (float(value[0]) * scale, float(value[1]) * scale)


def _points(where, value, scale, units):
    if not isinstance(value, list):
        raise FemodesError(f"{where} must be {_KIND_TEXT[POINTS]} in {units}, e.g. [[0, 0], [10, 0], [0, 5]], "
                           f"got {_show(value)}")
    out = []
    for i, p in enumerate(value):
        if not isinstance(p, list) or len(p) != 2 or not all(_is_number(v) for v in p):
            raise FemodesError(f"{where}: point {i + 1} must be a pair [x, y] of numbers in {units}, got {_show(p)}")
        out.append((float(p[0]) * scale, float(p[1]) * scale))
    return out


# ----------------------------------------------------------------------------- checks

def _table(data, name):
    t = data.get(name, {})
    if not isinstance(t, dict):
        raise FemodesError(f"{name} must be a table [{name}] with keys, got {name} = {_show(t)}")
    return t


def _check_keys(table, allowed, where, shown=None):
    for k, v in table.items():
        if k not in allowed:
            what = "table" if isinstance(v, dict) else "key"
            raise FemodesError(f"unknown {what} {k!r} in {where}{_suggest(k, allowed)} "
                               f"(valid: {', '.join(shown or allowed)})")


def _suggest(word, options):
    hits = difflib.get_close_matches(str(word), list(options), n=1, cutoff=0.6)
    return f"; did you mean {hits[0]!r}?" if hits else ""


def _is_number(v):
    return isinstance(v, (int, float)) and not isinstance(v, bool)


def _number(where, value, what="a number"):
    if not _is_number(value):
        hint = ""
        if isinstance(value, str):
            hint = " (write the number without quotes; the unit is set by `units`)"
        raise FemodesError(f"{where} must be {what}, got {_show(value)}{hint}")
    v = float(value)
    if not math.isfinite(v):
        raise FemodesError(f"{where} must be a finite number, got {_show(value)}")
    return v


def _parse_number(value, where, what, whole=False):
    """A number from a command-line string (or pass a number through)."""
    if isinstance(value, str):
        try:
            return int(value) if whole else float(value)
        except ValueError:
            raise FemodesError(f"{where} must be {what}, got {value!r}") from None
    return value


def _count(where, value):
    if isinstance(value, bool) or not isinstance(value, int) or value < 1:
        raise FemodesError(f"{where} must be a whole number >= 1, got {_show(value)}")
    return value


def _accuracy(where, value):
    v = _number(where, value, "a relative error (number), e.g. 1e-6")
    if not (0 < v < 1):
        raise FemodesError(f"{where} is a relative error on the cutoffs and must lie between 0 and 1 "
                           f"(e.g. 1e-6), got {_show(value)}")
    return v


def _choice(where, value, options):
    if not isinstance(value, str) or value not in options:
        sug = _suggest(value, options) if isinstance(value, str) else ""
        if isinstance(value, str) and not sug:
            low = [o for o in options if o.lower() == value.lower()]
            sug = f"; did you mean {low[0]!r}?" if low else ""
        raise FemodesError(f"{where} must be one of {', '.join(map(repr, options))}, got {_show(value)}{sug}")
    return value


def _show(value):
    """A value as the user wrote it in TOML terms, with its type when that helps."""
    tname = {bool: "a boolean", str: "a string", int: "an integer", float: "a number",
             list: "a list", dict: "a table"}.get(type(value), type(value).__name__)
    if isinstance(value, bool):
        return f"{str(value).lower()} ({tname})"
    if isinstance(value, dict):
        return "a table"
    text = repr(value) if not isinstance(value, str) else '"' + value + '"'
    if len(text) > 60:
        text = text[:57] + "..."
    return f"{text} ({tname})" if isinstance(value, (str, list)) else text


# ----------------------------------------------------------------------------- help text

def _key_text(k):
    return {LENGTH: k.name, ANGLE: f"{k.name} (degrees)", POINT: f"{k.name} = [dx, dy]",
            POINTS: f"{k.name} = [[x, y], ...]", LOOPS: f"{k.name} = [[[x, y], ...], ...]",
            FILE: f'{k.name} = "path"', AXIS: f'{k.name} = "x" | "y"'}[k.kind]


def shapes_help():
    """Text listing every shape and its keys (from :data:`SHAPES`, the table the loader uses)."""
    lines = ["shapes for [guide] (lengths in `units`):"]
    width = max(map(len, SHAPES))
    for name, spec in SHAPES.items():
        req = ", ".join(_key_text(k) for k in spec.required)
        opt = ", ".join(_key_text(k) for k in spec.optional)
        lines.append(f"  {name:<{width}}  {req}" + (f"; optional: {opt}" if opt else ""))
        lines.append(f"  {'':<{width}}    {spec.doc}")
    lines += ["",
              f"every shape: shape = NAME, units = {' | '.join(UNITS)} (default {DEFAULT_UNITS})",
              "placement, every shape but mesh (applied in this order): "
              + ", ".join(_key_text(k) for k in (PLACEMENT[2], PLACEMENT[1], PLACEMENT[0]))]
    return "\n".join(lines)
