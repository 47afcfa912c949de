"""The case-file schema: units, the keys of each table, the shapes a [guide] can name with their
keys (generated from the shape functions' own parameters), and the help text of `femodes shapes`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

from femodes.geometry import shapes as _sec

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
NAME = "name"            # a designation string, e.g. "WR-90"


_KIND_TEXT = {
    LENGTH: "a length (number)",
    ANGLE: "an angle in degrees (number)",
    POINT: "a pair [dx, dy] of lengths",
    POINTS: "a list of [x, y] pairs",
    LOOPS: "a list of lists of [x, y] pairs",
    FILE: "a file path (string)",
    AXIS: '"x" or "y"',
    NAME: 'a designation (string), e.g. "WR-90"',
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


#: Wall marks of a built-in [guide] shape (not of a [[region]] or a mesh file): points where the
#: guide lies (after offset / rotate_deg / mirror), each on a straight side of the outer wall
#: that is a magnetic wall (PMC) instead of an electric one (Section.with_walls).
WALL_MARKS = (Key("magnetic_walls", POINTS, doc="points on straight outer sides that are magnetic walls "
                  "(PMC), where the guide lies"),)


#: Keys every [guide] takes.
COMMON = ("shape", "units")


#: The one table of shapes: the loader validates with it and `femodes shapes` prints it.
SHAPES = {
    "rectangle": ShapeSpec(_sec.rectangle, (_L("width"), _L("height")), (_L("corner_radius"),),
                           doc="width (x) by height (y), centred at the origin"),
    "standard": ShapeSpec(_sec.standard, (Key("designation", NAME, doc='EIA rectangular guide, e.g. "WR-90"'),),
                          (_L("corner_radius"),), doc="a standard rectangular guide by its designation (WR-650 .. WR-3)"),
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
_TOP_KEYS = ("title", "guide", "region", "fill", "solve", "analysis", "output", "sweep", "seek", "tolerance")


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


_SOLVE_KEYS = ("modes", "accuracy", "family", "order", "quantity_accuracy")


_OUTPUT_KEYS = ("figures", "format", "directory", "field_count")


def _key_text(k):
    return {LENGTH: k.name, ANGLE: f"{k.name} (degrees)", POINT: f"{k.name} = [dx, dy]",
            POINTS: f"{k.name} = [[x, y], ...]", LOOPS: f"{k.name} = [[[x, y], ...], ...]",
            FILE: f'{k.name} = "path"', AXIS: f'{k.name} = "x" | "y"', NAME: f'{k.name} = "WR-90"'}[k.kind]


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
