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
                      reads), relative to the case file; its coordinates are in `units`; its named
                      groups of triangles (gmsh physical surfaces) can be filled by [[region]] tables

    Placement (every shape except mesh), applied in this order: mirror, rotate, offset.
    mirror      "x" (x -> -x) or "y" (y -> -y)
    rotate_deg  counter-clockwise rotation about the origin, degrees
    offset      [dx, dy] translation, in `units`

    The shapes are those of :mod:`femodes.section`; each key is the shape function's parameter
    of the same name (``angle_deg`` -> ``angle`` in radians, ``inner_offset`` -> ``offset``).

``[[region]]`` (optional, repeatable) -- a part of the guide filled with another material (a
dielectric slab, a ceramic load, a ferrite), making the guide inhomogeneous: its modes are then
hybrid in general and are solved with the full-vector solver (femodes.loaded).  Each region
takes a shape of the list below except mesh, with its keys and placement, in the units of
[guide], and:

    eps_r       relative permittivity, real, > 0 (required)
    mu_r        relative permeability, real, > 0 (default 1)
    tan_delta   loss tangent, 0 <= tan_delta < 1 (default 0): dielectric attenuation
    name        what the report calls the region (default: by its permittivity)

    A later region wins where two overlap; parts of a region outside the guide are ignored.

    With shape = "mesh" in [guide] a region is one of the file's named groups of triangles (a
    gmsh physical surface) instead of a shape:

    group       the group's name in the mesh file (required; an unnamed gmsh group by its
                number in quotes, "2"); each group at most once
    eps_r, mu_r, tan_delta, name   as above (name defaults to the group's name)

    Shape and placement keys do not apply there, and group applies to mesh files only.  The
    mesh is not refined: the error of each value is estimated from elements of order p and
    p - 1 on it, and a warning says when it misses the asked accuracy.
    Such a case reports the lowest cutoffs (beta = 0) of the loaded guide and, with [analysis],
    the propagating modes at the frequency (beta, guide wavelength, phase and group velocity,
    dielectric loss, wall loss with the [analysis] conductor and roughness_um; which empty-guide
    mode each grows from) and, with a band, their dispersion (figure "dispersion").  Impedance
    and power handling are not computed for loaded guides yet; breakdown_field, safety_factor
    and impedance in [analysis] are then refused.

``[fill]`` (optional) -- the homogeneous filling (the background, where there are regions):

    eps_r       relative permittivity, real, > 0 (default 1)
    mu_r        relative permeability, real, > 0 (default 1)
    tan_delta   loss tangent of the filling, >= 0 and < 1 (default 0); used only for the
                dielectric part of the attenuation in [analysis] (the modes are solved lossless)

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

    figures may also list "attenuation" (attenuation against frequency over the [analysis]
    band; needs `band`) and "band" (the bands of the guide on a frequency axis, with the
    [analysis] band and frequency when given); and, for guides with [[region]] tables,
    "dispersion" (beta against frequency over the band; needs `band`).  "fields" then draws
    the modes at the [analysis] frequency, and "chart", "band", "attenuation" do not apply.  Turning figures on from the command line
    without a list in the case file writes "fields" and "chart", plus "band" with an
    [analysis] table and "attenuation" with a band.

``[analysis]`` (optional) -- engineering quantities at a frequency or over a band (computed after
the solve; see :mod:`femodes.quantities`).  It needs ``frequency`` or ``band`` (or both):

    frequency        the frequency of the quantity table, a number in `frequency_units`
                     (default: the centre (f1 + f2) / 2 of `band`)
    band             [f1, f2], 0 < f1 < f2, in `frequency_units`: attenuation is swept over it
                     and the figures "attenuation" and "band" show it
    points           frequencies in the band sweep, a whole number 2 .. 2001 (default 41);
                     only with `band`
    frequency_units  Hz, kHz, MHz or GHz (default GHz)
    conductor        the wall metal: a name (copper, silver, gold, aluminium, brass, stainless
                     steel; a few aliases such as "aluminum" or "cu") or a conductivity in S/m
                     (default copper, 5.8e7 S/m)
    roughness_um     rms surface roughness of the walls in micrometres (default 0: smooth);
                     applied with the Hammerstad-Jensen factor
    breakdown_field  peak field at which the filling breaks down, V/m (default 3e6: dry air at
                     sea level, common practice)
    safety_factor    divisor applied to the breakdown power, >= 1 (default 2: a choice, not a
                     standard)
    impedance        "PV", "PI" or "VI": which characteristic impedance the table shows first
                     (default "PV"; all three are computed)

The frequency and the band must lie below the highest cutoff computed (solve for more modes
otherwise): modes that were not computed could propagate there.

Anything else -- an unknown table or key, a wrong type, a missing key -- is an error that says
what was wrong, the value given and what would be valid.
"""

from __future__ import annotations

import difflib
import math
import os
from dataclasses import dataclass, field, replace
from typing import Callable

from femodes.api import study
from femodes.errors import FemodesError
from femodes.geometry import shapes as _sec
from femodes.geometry.mesh import Mesh, read_mesh
from femodes.quantities import METALS, conductivity_of

try:  # Python >= 3.11
    import tomllib as _toml
except ModuleNotFoundError:  # pragma: no cover - Python 3.10 with the tomli back-port
    import tomli as _toml

__all__ = ["Case", "OutputSettings", "AnalysisSettings", "load_case", "parse_case", "run_case", "SHAPES",
           "UNITS", "FREQUENCY_UNITS", "FIGURE_KINDS", "FORMATS", "IMPEDANCE_KINDS", "shapes_help"]

# ----------------------------------------------------------------------------- vocabulary

#: length units accepted in [guide] -> metres per unit (exact by definition; 1 in = 25.4 mm, NIST)
UNITS = {"m": 1.0, "cm": 1e-2, "mm": 1e-3, "um": 1e-6, "in": 0.0254, "mil": 0.0254e-3}
DEFAULT_UNITS = "mm"
FIGURE_KINDS = ("fields", "chart", "attenuation", "band", "dispersion")
#: figure kinds that need an [analysis] band -- the others always apply
_BAND_FIGURES = ("attenuation", "dispersion")
#: figure kinds for homogeneous guides / for guides with material regions
_HOMOGENEOUS_FIGURES = ("fields", "chart", "attenuation", "band")
_LOADED_FIGURES = ("fields", "dispersion")
#: frequency units accepted in [analysis] -> hertz per unit (SI prefixes)
FREQUENCY_UNITS = {"Hz": 1.0, "kHz": 1e3, "MHz": 1e6, "GHz": 1e9}
DEFAULT_FREQUENCY_UNITS = "GHz"
IMPEDANCE_KINDS = ("PV", "PI", "VI")
DEFAULT_POINTS = 41
MAX_POINTS = 2001
DEFAULT_CONDUCTOR = "copper"
DEFAULT_BREAKDOWN_FIELD = 3.0e6   # V/m, dry air at sea level (common practice)
DEFAULT_SAFETY_FACTOR = 2.0
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
_TOP_KEYS = ("title", "guide", "region", "fill", "solve", "analysis", "output")
_REGION_KEYS = ("eps_r", "mu_r", "tan_delta", "name")
#: [analysis] keys not computed for loaded guides yet (impedance and power handling)
_WALL_KEYS = ("breakdown_field", "safety_factor", "impedance")
_FILL_KEYS = ("eps_r", "mu_r", "tan_delta")
_ANALYSIS_KEYS = ("frequency", "band", "points", "frequency_units", "conductor", "roughness_um",
                  "breakdown_field", "safety_factor", "impedance")
#: keys that belong to another table, with where they go (for the error message)
_ELSEWHERE = {"tan_delta": "[fill]", "eps_r": "[fill]", "mu_r": "[fill]", "modes": "[solve]",
              "roughness": "[analysis] as roughness_um (micrometres)",
              "conductivity": "[analysis] as conductor = <S/m>"}
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
class AnalysisSettings:
    """What the [analysis] table asks for, in SI units (Hz, S/m, m, V/m).

    frequency      the frequency of the quantity table (Hz), or None: the centre of ``band``
    band           (f1, f2) in Hz for the attenuation sweep, or None
    points         frequencies in the sweep
    conductor      the name of the wall metal as given, or None when given as a number
    conductivity   S/m
    roughness      rms wall roughness (m)
    tan_delta      loss tangent of the filling (from [fill])
    breakdown_field, safety_factor : for power handling (V/m; divisor of the power)
    impedance      'PV', 'PI' or 'VI': the impedance shown first
    """

    frequency: float | None = None
    band: tuple | None = None
    points: int = DEFAULT_POINTS
    conductor: str | None = DEFAULT_CONDUCTOR
    conductivity: float = 5.8e7
    roughness: float = 0.0
    tan_delta: float = 0.0
    breakdown_field: float = DEFAULT_BREAKDOWN_FIELD
    safety_factor: float = DEFAULT_SAFETY_FACTOR
    impedance: str = "PV"

    @property
    def table_frequency(self):
        """The frequency of the quantity table (Hz): ``frequency``, else the band centre."""
        if self.frequency is not None:
            return self.frequency
        return 0.5 * (self.band[0] + self.band[1])

    @property
    def frequency_role(self):
        """How the table frequency was chosen: 'given' or 'band centre'."""
        return "given" if self.frequency is not None else "band centre"

    @property
    def conductor_text(self):
        """'copper (5.8e+07 S/m)' or '3.5e+07 S/m'."""
        if self.conductor:
            return f"{self.conductor} ({self.conductivity:.3g} S/m)"
        return f"{self.conductivity:.4g} S/m"


@dataclass(frozen=True)
class Case:
    """A checked case: ``section`` is a Section or a Mesh (metres); ``solve`` holds the keyword
    arguments for :func:`femodes.solve`; ``output`` the figure settings; ``analysis`` the
    [analysis] settings or None; ``tan_delta`` the loss tangent of the fill; ``path`` the source
    file."""

    title: str | None
    section: object
    solve: dict = field(default_factory=dict)
    output: OutputSettings = OutputSettings()
    path: str | None = None
    analysis: AnalysisSettings | None = None
    tan_delta: float = 0.0

    @property
    def loaded(self):
        """True for a guide with material regions ([[region]] tables): hybrid modes."""
        return bool(getattr(self.section, "materials", ()))

    def with_options(self, modes=None, accuracy=None, figures_dir=None, fmt=None, no_figures=False,
                     frequency=None, band=None, conductor=None):
        """A copy with command-line overrides (strings are parsed; None keeps the case value).

        ``figures_dir`` sets the figure directory and turns figures on (every kind that applies
        if the case file asked for none); ``no_figures`` turns them off.  ``frequency`` (GHz)
        sets the table frequency, ``band`` (two values in GHz) the sweep band (and, unless
        ``frequency`` is given too, moves the table frequency to its centre); ``conductor`` a
        metal name or a conductivity in S/m.  Any of the three turns the analysis on.
        """
        if no_figures and figures_dir is not None:
            raise FemodesError("--figures and --no-figures contradict each other; give one of them")
        an = self.analysis
        if frequency is not None or band is not None or conductor is not None:
            if an is None:
                if frequency is None and band is None:
                    raise FemodesError("--conductor needs a frequency: give --frequency F or --band F1 F2 "
                                       "(GHz), or an [analysis] table in the case file")
                an = AnalysisSettings(tan_delta=self.tan_delta)
            if band is not None:
                if not isinstance(band, (list, tuple)) or len(band) != 2:
                    raise FemodesError(f"--band needs two frequencies F1 F2 in GHz, got {band!r}")
                vals = [_parse_number(b, "--band", "two frequencies in GHz, e.g. --band 8.2 12.4") for b in band]
                an = replace(an, band=_band_value("--band", vals, "GHz", 1e9), frequency=None)
            if frequency is not None:
                v = _parse_number(frequency, "--frequency", "a frequency in GHz (number), e.g. 10")
                an = replace(an, frequency=_frequency_value("--frequency", v, "GHz", 1e9))
            if conductor is not None:
                name, sigma = _conductor_value("--conductor", _parse_conductor(conductor))
                an = replace(an, conductor=name, conductivity=sigma)
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
            out = replace(out, directory=figures_dir, figures=out.figures or figure_kinds_for(an, self.loaded))
        if no_figures:
            out = replace(out, figures=())
        _check_figures_apply(out, an, "with the options given", self.loaded)
        return replace(self, solve=solve, output=out, analysis=an)


def figure_kinds_for(analysis, loaded=False):
    """The figure kinds that apply to a case with these analysis settings.  Homogeneous guides:
    field patterns and the mode chart always, the band chart with an analysis, the attenuation
    figure with a band.  Loaded guides: field patterns with an analysis frequency, the
    dispersion figure with a band."""
    if loaded:
        if analysis is None:
            return ()
        return ("fields",) + (("dispersion",) if analysis.band is not None else ())
    if analysis is None:
        return ("fields", "chart")
    kinds = _HOMOGENEOUS_FIGURES
    if analysis.band is None:
        return tuple(k for k in kinds if k not in _BAND_FIGURES)
    return kinds


def _check_figures_apply(output, analysis, where, loaded=False):
    kinds = _LOADED_FIGURES if loaded else _HOMOGENEOUS_FIGURES
    for k in output.figures:
        if k not in kinds:
            what = "a guide with [[region]] tables" if loaded else "a guide without [[region]] tables"
            raise FemodesError(f"the figure {k!r} does not apply to {what} (figures there: {', '.join(kinds)}); "
                               f"leave it out of figures in [output] ({where})")
        if loaded and k == "fields" and analysis is None:
            raise FemodesError("field patterns of a guide with [[region]] tables are drawn at a frequency: add "
                               f"[analysis] frequency = F (or give --frequency F), or leave 'fields' out ({where})")
    for k in output.figures:
        if k in _BAND_FIGURES and (analysis is None or analysis.band is None):
            raise FemodesError(f"the figure {k!r} needs a band: add band = [f1, f2] to [analysis] (or give "
                               f"--band F1 F2), or leave {k!r} out of figures in [output] ({where})")


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
    return study(case.section, tan_delta=case.tan_delta, **kw)


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
    section, units = _build_guide(guide, base_dir)
    regions = data.get("region", [])
    if isinstance(regions, dict):
        raise FemodesError("write each material region as a [[region]] table (double brackets), not [region]")
    for i, r in enumerate(regions, start=1):
        section = _build_region(r, i, units, section)
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

    if loaded and "family" in solve:
        raise FemodesError("family in [solve] does not apply to a guide with [[region]] tables: its modes "
                           "are hybrid in general (leave family out)")
    if loaded and solve.get("order", 3) > 3:
        raise FemodesError(f"order in [solve] must be 1, 2 or 3 for a guide with [[region]] tables (edge "
                           f"elements), got {solve['order']}")
    if loaded and isinstance(section, Mesh) and solve.get("order", 3) < 2:
        raise FemodesError("order in [solve] must be 2 or 3 for a mesh file with [[region]] tables (the error "
                           "estimate on a fixed mesh compares order p with p - 1), got 1")
    analysis = None
    if "analysis" in data:
        an = _table(data, "analysis")
        analysis = _build_analysis(an, tan_delta)
    _check_figures_apply(out, analysis, "in the case file", loaded)
    return Case(title=title, section=section, solve=solve, output=out, path=path, analysis=analysis,
                tan_delta=tan_delta)


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
        raise FemodesError(f"frequency_units in [analysis] must be one of {', '.join(FREQUENCY_UNITS)}, "
                           f"got {_show(units)}{sug}")
    scale = FREQUENCY_UNITS[units]
    s = AnalysisSettings(tan_delta=tan_delta)
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


def _decimal_scale(value, scale):
    """value x scale for a power-of-ten scale, rounded as the decimal product would be (8.2 GHz ->
    exactly 8.2e9 Hz, not 8199999999.999999)."""
    from decimal import Decimal

    exp = round(math.log10(scale))
    if 10.0 ** exp != scale:
        return float(value) * scale
    return float(Decimal(repr(float(value))).scaleb(exp))


def _frequency_value(where, value, units, scale):
    v = _number(where, value, f"a frequency in {units} (number)")
    if v <= 0:
        raise FemodesError(f"{where} must be a positive frequency in {units}, got {_show(value)}")
    return _decimal_scale(v, scale)


def _band_value(where, value, units, scale):
    if (not isinstance(value, (list, tuple)) or len(value) != 2 or not all(_is_number(v) for v in value)):
        raise FemodesError(f"{where} must be a pair [f1, f2] of frequencies in {units}, e.g. [8.2, 12.4], "
                           f"got {_show(list(value) if isinstance(value, tuple) else value)}")
    f1, f2 = (float(v) for v in value)
    if not (math.isfinite(f1) and math.isfinite(f2) and 0 < f1 < f2):
        raise FemodesError(f"{where} must be [f1, f2] with 0 < f1 < f2 ({units}), got [{value[0]!r}, {value[1]!r}]")
    return (_decimal_scale(f1, scale), _decimal_scale(f2, scale))


def _parse_conductor(text):
    """A --conductor argument: a number (S/m) if it reads as one, else a metal name."""
    if isinstance(text, str):
        try:
            return float(text)
        except ValueError:
            return text
    return text


def _conductor_value(where, value):
    """(name or None, conductivity in S/m) from a metal name or a number in S/m."""

    if isinstance(value, str):
        try:
            sigma = conductivity_of(value)
        except FemodesError:
            names = list(METALS)
            raise FemodesError(f"{where}: unknown metal {value!r}{_suggest(value.lower(), names)} (known: "
                               f"{', '.join(names)}; or give the conductivity in S/m as a number)") from None
        return next(k for k, v in METALS.items() if v == sigma), sigma
    v = _number(where, value, "a metal name or a conductivity in S/m")
    if v <= 0:
        raise FemodesError(f"{where} must be a metal name or a positive conductivity in S/m (5.8e7 for "
                           f"copper), got {_show(value)}")
    return None, v


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
        return read_mesh(full, scale=scale), units
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
        raise FemodesError(f"unknown key {k!r} in {where}{_suggest(k, allowed)}{hint} "
                           f"(valid keys for shape {shape!r}: {', '.join(allowed)})")
    missing = [k.name for k in spec.required if k.name not in table]
    if missing:
        raise FemodesError(f"shape {shape!r} needs {', '.join(k.name for k in spec.required)}; "
                           f"missing in {where}: {', '.join(missing)}")


def _shape_from(guide, shape, spec, scale, units, where):
    """The Section of a checked shape table (lengths converted with ``scale``), placed."""
    kwargs = {k.target: _convert(k, guide[k.name], scale, units, where) for k in spec.keys if k.name in guide}
    moves = {k.name: _convert(k, guide[k.name], scale, units, where) for k in PLACEMENT if k.name in guide}
    try:
        sec = spec.build(**kwargs)
        if "mirror" in moves:
            sec = sec.mirrored(moves["mirror"])
        if "rotate_deg" in moves:
            sec = sec.rotated(moves["rotate_deg"])
        if "offset" in moves:
            sec = sec.translated(*moves["offset"])
    except FemodesError as exc:
        raise FemodesError(f"{where} {shape}: {exc}") from None
    return sec


def _material_values(table, where):
    """The eps_r, mu_r, tan_delta keys present in ``table``, checked: {key: float}."""
    vals = {}
    for k in ("eps_r", "mu_r"):
        if k in table:
            v = _number(f"{k} in {where}", table[k])
            if not (v > 0 and math.isfinite(v)):
                raise FemodesError(f"{k} in {where} must be a positive finite number (the real part; "
                                   f"1 for air; losses go in tan_delta), got {_show(table[k])}")
            vals[k] = v
    if "tan_delta" in table:
        t = _number(f"tan_delta in {where}", table["tan_delta"], "a loss tangent (number), e.g. 2e-4")
        if not 0 <= t < 1:
            raise FemodesError(f"tan_delta in {where} is a loss tangent and must lie in 0 <= tan_delta < 1 "
                               f"(e.g. 2e-4 for a good plastic), got {_show(table['tan_delta'])}")
        vals["tan_delta"] = t
    return vals


def _build_region(table, number, units, section):
    """One [[region]] table -> the section with that material region added."""
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
    region = _shape_from(table, shape, spec, UNITS[units], units, where)
    try:
        return section.with_material(region, **vals)
    except FemodesError as exc:
        raise FemodesError(f"{where}: {exc}") from None


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


def _convert(key, value, scale, units, table="[guide]"):
    where = f"{key.name} in {table}"
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
        return [_points(f"{key.name}[{i}] in {table}", h, scale, units) for i, h in enumerate(value)]
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
