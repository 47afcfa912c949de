"""Case-file geometry that follows the [guide] dimensions in the design studies.

A [[region]]'s dimensions and placement may be written as arithmetic of the [guide] keys, in
the same units (angles in degrees), so that the region moves and grows with them in a [sweep],
[seek], [tolerance] or ``femodes sensitivity``::

    [guide]
    shape = "rectangle"
    width = 22.86
    height = 10.16

    [[region]]                     # a slab on the floor, 0.3 of the height thick, full width
    shape = "rectangle"
    width = "width"
    height = "0.3 * height"
    offset = [0, "-0.35 * height"]
    eps_r = 2.2

An expression is a string of numbers, the [guide] key names, + - * / ** and parentheses (read
with :mod:`ast`; nothing else is evaluated).  In a solve the region is built at the [guide]
values; a study rebuilds it at every point (:class:`CaseRegion`, a callable region shape of
:func:`femodes.sweep`).

A guide with ``magnetic_walls``: the marked sides are kept by their place in the outline (the
k-th side of the outer wall stays marked whatever its length), :class:`MarkedShape`.
"""

from __future__ import annotations

import ast
import inspect
import math
import operator
from dataclasses import dataclass
from typing import Callable

from femodes.case.schema import ANGLE, LENGTH, LOOPS, PLACEMENT, POINT, POINTS, SHAPES, UNITS, WALL_MARKS
from femodes.case.values import _convert, _in_file_units, _show
from femodes.errors import FemodesError
from femodes.geometry.walls import resolve_marks

__all__ = ["CaseRegion", "MarkedShape", "evaluate", "guide_names", "has_expressions", "region_section"]

#: value kinds whose numbers may be expressions of the [guide] keys
_EXPRESSION_KINDS = (LENGTH, ANGLE, POINT, POINTS, LOOPS)

_OPS = {ast.Add: operator.add, ast.Sub: operator.sub, ast.Mult: operator.mul, ast.Div: operator.truediv,
        ast.Pow: operator.pow}
_UNARY = {ast.UAdd: operator.pos, ast.USub: operator.neg}


def evaluate(text, names, where):
    """The number an arithmetic ``text`` of ``names`` ({name: number}) gives: numbers, names,
    + - * / ** and parentheses only; anything else is a FemodesError naming ``where``."""
    known = ", ".join(sorted(names)) or "none (a mesh-file guide has no dimensions)"
    try:
        tree = ast.parse(text.strip(), mode="eval")
    except SyntaxError:
        raise FemodesError(f"{where} = {_show(text)} is not an arithmetic expression: write numbers and [guide] keys "
                           f"({known}) with + - * / ** and parentheses") from None

    def value(node):
        if isinstance(node, ast.Constant) and isinstance(node.value, (int, float)) and not isinstance(node.value, bool):
            return float(node.value)
        if isinstance(node, ast.Name):
            if node.id not in names:
                raise FemodesError(f"{where} = {_show(text)} names {node.id!r}, which is not a [guide] key here: use "
                                   f"{known}")
            return float(names[node.id])
        if isinstance(node, ast.BinOp) and type(node.op) in _OPS:
            a, b = value(node.left), value(node.right)
            try:
                return _OPS[type(node.op)](a, b)
            except (ZeroDivisionError, OverflowError):
                raise FemodesError(f"{where} = {_show(text)} divides by zero or overflows at "
                                   + ", ".join(f"{k} = {v:g}" for k, v in sorted(names.items()))) from None
        if isinstance(node, ast.UnaryOp) and type(node.op) in _UNARY:
            return _UNARY[type(node.op)](value(node.operand))
        raise FemodesError(f"{where} = {_show(text)}: only numbers, [guide] keys ({known}), + - * / ** and "
                           "parentheses may be used in an expression")

    out = value(tree.body)
    if isinstance(out, complex) or not math.isfinite(out):
        raise FemodesError(f"{where} = {_show(text)} is not a finite real number at "
                           + ", ".join(f"{k} = {v:g}" for k, v in sorted(names.items())))
    return out


def _has_text(value):
    if isinstance(value, str):
        return True
    return isinstance(value, list) and any(_has_text(v) for v in value)


def _keys_of(table):
    """The keys of a [[region]] table whose numbers may be expressions: {name: Key}."""
    spec = SHAPES.get(table.get("shape")) if isinstance(table.get("shape"), str) else None
    keys = list(spec.keys) if spec is not None else []
    return {k.name: k for k in keys + list(PLACEMENT) if k.kind in _EXPRESSION_KINDS}


def has_expressions(table):
    """True if a [[region]] table writes any of its dimensions or placement as an expression."""
    if not isinstance(table, dict):
        return False
    return any(_has_text(table[k]) for k in _keys_of(table) if k in table)


def _substitute(value, names, where):
    if isinstance(value, str):
        return evaluate(value, names, where)
    if isinstance(value, list):
        return [_substitute(v, names, where) for v in value]
    return value


def guide_names(guide_shape, params, units):
    """{[guide] key: value in the file's units (angles in degrees)} from the shape function's
    arguments ``params`` (SI) of the [guide] shape ``guide_shape``: the names an expression may use."""
    if guide_shape is None or params is None or guide_shape not in SHAPES:
        return {}
    scale = UNITS[units]
    out = {}
    for k in SHAPES[guide_shape].keys:
        v = params.get(k.target)
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            continue
        if k.kind == LENGTH:
            out[k.name] = float(v) / scale
        elif k.kind == ANGLE:
            out[k.name] = math.degrees(float(v))
    return out


def shape_from(table, shape, spec, scale, units, where):
    """The Section of a checked shape table (lengths converted with ``scale``), placed (and, for
    [guide], its magnetic wall marks made)."""
    kwargs = {k.target: _convert(k, table[k.name], scale, units, where, required=k in spec.required)
              for k in spec.keys if k.name in table}
    moves = {k.name: _convert(k, table[k.name], scale, units, where) for k in PLACEMENT if k.name in table}
    renamed = {k.target: k.name for k in spec.keys if k.target != k.name}  # the shape function's names
    try:
        sec = spec.build(**kwargs)
    except FemodesError as exc:
        raise FemodesError(f"{where} {shape}: {_in_file_units(str(exc), units, scale, renamed)}") from None
    try:
        sec = place(sec, moves)
        if where == "[guide]" and "magnetic_walls" in table:
            sec = sec.with_walls(magnetic=_convert(WALL_MARKS[0], table["magnetic_walls"], scale, units, where))
    except FemodesError as exc:
        raise FemodesError(f"{where} {shape} (placed with {', '.join(moves)}): "
                           f"{_in_file_units(str(exc), units, scale)}") from None
    return sec


def place(section, moves):
    """``section`` mirrored, rotated, then moved by the placement ``moves`` (SI, radians)."""
    if "mirror" in moves:
        section = section.mirrored(moves["mirror"])
    if "rotate_deg" in moves:
        section = section.rotated(moves["rotate_deg"])
    if "offset" in moves:
        section = section.translated(*moves["offset"])
    return section


def region_section(table, number, units, names):
    """The placed Section of the [[region]] ``table`` (number ``number``), its expressions
    evaluated with ``names`` (the [guide] keys in the file's units)."""
    where = f"[[region]] {number}"
    shape = table["shape"]
    spec = SHAPES[shape]
    keys = _keys_of(table)
    filled = {k: (_substitute(v, names, f"{k} in {where}") if k in keys else v) for k, v in table.items()}
    return shape_from(filled, shape, spec, UNITS[units], units, where)


@dataclass(frozen=True)
class CaseRegion:
    """The shape of a [[region]] whose numbers are expressions of the [guide] keys, as a
    function of the [guide] shape function's arguments (SI): a region shape of
    :func:`femodes.sweep` that follows the guide (picklable: the points run in other processes)."""

    table: dict
    number: int
    units: str
    guide_shape: str

    def __call__(self, **params):
        return region_section(self.table, self.number, self.units, guide_names(self.guide_shape, params, self.units))


@dataclass(frozen=True)
class MarkedShape:
    """The [guide] shape function with its placement and magnetic wall marks: the sides of the
    outer wall at positions ``sides`` (indices into its segments, found on the case's own
    section) are marked at their midpoints whatever the dimensions, so a study's rebuilt guides
    keep the walls the case file marked.  Called with the shape function's arguments (SI)."""

    build: Callable
    moves: tuple
    sides: tuple

    @property
    def __name__(self):
        return self.build.__name__

    @property
    def __signature__(self):
        return inspect.signature(self.build)

    def __repr__(self):
        return f"MarkedShape({self.build.__module__}.{self.build.__qualname__}, moves={self.moves}, sides={self.sides})"

    def __call__(self, **params):
        sec = place(self.build(**params), dict(self.moves))
        segs = sec.outer.segments
        if max(self.sides) >= len(segs):
            raise FemodesError(f"the outline has {len(segs)} sides at these dimensions, fewer than where the marked "
                               "magnetic walls were: keep the dimensions where the outline keeps its sides")
        marks = [((segs[i].start[0] + segs[i].end[0]) / 2, (segs[i].start[1] + segs[i].end[1]) / 2) for i in self.sides]
        return sec.with_walls(magnetic=marks)


def marked_shape(build, section, moves):
    """:class:`MarkedShape` of the [guide] shape function ``build`` placed by ``moves`` (SI)
    with the magnetic sides of the case's ``section``."""
    return MarkedShape(build, tuple(sorted(moves.items())), tuple(resolve_marks(section, section.magnetic)))

