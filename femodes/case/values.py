"""Reading single values of a case file: numbers, counts, choices, lengths in the file's units,
frequencies and bands, conductors; tables and unknown keys (with a suggestion of the key meant).
"""

from __future__ import annotations

import contextlib
import difflib
import math
import re
import warnings

from femodes.case.schema import _KIND_TEXT, ANGLE, AXIS, LENGTH, LOOPS, NAME, POINT, POINTS
from femodes.errors import ACCURACY_RANGE, CONDUCTIVITY_RANGE, MATERIAL_RANGE, MAX_FREQUENCY, FemodesError, accuracy_range_error
from femodes.quantities import METALS, conductivity_of


def _decimal_scale(value, scale):
    """value x scale for a power-of-ten scale, rounded as the decimal product would be (8.2 GHz ->
    exactly 8.2e9 Hz, not 8199999999.999999)."""
    from decimal import Decimal

    exp = round(math.log10(scale))
    if 10.0 ** exp != scale:
        return float(value) * scale
    return float(Decimal(repr(float(value))).scaleb(exp))


def _frequency_value(where, value, units, scale):
    v = _number(where, value, f"a frequency in {units} (number)", unit_key="frequency_units")
    if v <= 0:
        raise FemodesError(f"{where} must be a positive frequency in {units}, got {_show(value)}")
    f = _decimal_scale(v, scale)
    if f > MAX_FREQUENCY:
        raise FemodesError(f"{where} is {v:g} {units}, above the {MAX_FREQUENCY / scale:g} {units} (10 THz) femodes "
                           f"handles (metal walls stop being good conductors); check the value and frequency_units")
    return f


def _band_value(where, value, units, scale):
    if (not isinstance(value, (list, tuple)) or len(value) != 2 or not all(_is_number(v) for v in value)):
        quoted = isinstance(value, (list, tuple)) and any(isinstance(v, str) for v in value)
        raise FemodesError(f"{where} must be a pair [f1, f2] of frequencies in {units}, e.g. [8.2, 12.4], "
                           f"got {_show(list(value) if isinstance(value, tuple) else value)}"
                           + (" (write the numbers without quotes; the unit is set by `frequency_units`)"
                              if quoted else ""))
    f1, f2 = (float(v) for v in value)
    if not (math.isfinite(f1) and math.isfinite(f2) and 0 < f1 < f2):
        raise FemodesError(f"{where} must be [f1, f2] with 0 < f1 < f2 ({units}), got [{value[0]!r}, {value[1]!r}]")
    band = (_decimal_scale(f1, scale), _decimal_scale(f2, scale))
    if band[1] > MAX_FREQUENCY:
        raise FemodesError(f"{where} reaches {f2:g} {units}, above the {MAX_FREQUENCY / scale:g} {units} (10 THz) "
                           "femodes handles; check the values and frequency_units")
    return band


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
    lo, hi = CONDUCTIVITY_RANGE
    if not lo <= v <= hi:
        raise FemodesError(f"{where} must be a metal name or a conductivity in S/m from {lo:g} to {hi:g} (the "
                           f"good-conductor surface impedance: metals, alloys, graphite; 5.8e7 for copper), "
                           f"got {_show(value)}")
    return None, v


def _material_range(where, key, value):
    """eps_r or mu_r of a case file, checked against the library's one range (MATERIAL_RANGE)."""
    v = _number(where, value, f"a relative {'permittivity' if key == 'eps_r' else 'permeability'} (number)")
    lo, hi = MATERIAL_RANGE
    if not lo <= v <= hi:
        raise FemodesError(f"{where} must lie from {lo:g} to {hi:g} (relative to vacuum, 1 for air; passive "
                           f"materials up to the strongest ceramics and ferrites; losses go in tan_delta), "
                           f"got {_show(value)}")
    return v


def _convert(key, value, scale, units, table="[guide]", required=False):
    """A [guide] (or [[region]]) value in SI; ``required`` lengths must be positive, optional ones
    (radii of rounded corners, a sector's inner radius) may be 0."""
    where = f"{key.name} in {table}"
    if key.kind == LENGTH:
        v = _number(where, value, f"a length in {units}", unit_key="units")
        if v < 0 or (required and v == 0):
            rule = "must be positive" if required else "must not be negative (0 for none)"
            raise FemodesError(f"{where} is a length and {rule}, got {_show(value)} ({units})")
        return v * scale
    if key.kind == ANGLE:
        v = _number(where, value, "an angle in degrees (number)")
        if key.name == "angle_deg" and not 0 < v < 360:
            raise FemodesError(f"{where} is the opening angle in degrees and must lie strictly between 0 and 360, "
                               f"got {_show(value)}")
        return math.radians(v)
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
    if key.kind == NAME:
        if not isinstance(value, str) or not value.strip():
            raise FemodesError(f"{where} must be {_KIND_TEXT[NAME]}, got {_show(value)}")
        return value
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


def _number(where, value, what="a number", unit_key=None):
    """A finite number of the case file; ``unit_key`` names the key that sets its unit (for the
    hint when the number was written in quotes)."""
    if not _is_number(value):
        hint = ""
        if isinstance(value, str):
            hint = " (write the number without quotes" + (f"; the unit is set by `{unit_key}`)" if unit_key else ")")
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
    lo, hi = ACCURACY_RANGE  # the library's own range, stated by the library's own words
    if not (lo <= v < hi):
        raise accuracy_range_error(where, value)
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
    if isinstance(value, dict):  # an inline table as written: { from = 1, to = 3, points = 5 }
        text = "{ " + ", ".join(f"{k} = {v!r}" for k, v in value.items()) + " }"
        return text if len(text) <= 60 else "a table"
    text = repr(value) if not isinstance(value, str) else '"' + value + '"'
    if len(text) > 60:
        text = text[:57] + "..."
    return f"{text} ({tname})" if isinstance(value, (str, list)) else text


_NUM = r"-?\d+(?:\.\d*)?(?:e[+-]?\d+)?"


def _in_file_units(text, units, scale, renamed=None):
    """A message of the shape functions (which speak SI and print lengths in mm or m) with every
    length in the case file's ``units`` (``scale`` metres each) and the shape function's parameter
    names ``renamed`` to the case file's keys (offset -> inner_offset)."""
    def conv(value, per_metre):
        return f"{float(value) * per_metre / scale:.6g}"

    def one(m, per_metre):
        return conv(m.group(1), per_metre)

    # a point (x, y) mm; two lengths 'A x B mm' / 'A and B mm'; one length 'A mm'; metres; areas
    text = re.sub(rf"\(({_NUM}), ({_NUM})\) mm\b",
                  lambda m: f"({conv(m.group(1), 1e-3)}, {conv(m.group(2), 1e-3)}) {units}", text)
    text = re.sub(rf"({_NUM})( x | and )({_NUM}) mm\b",
                  lambda m: f"{conv(m.group(1), 1e-3)}{m.group(2)}{conv(m.group(3), 1e-3)} {units}", text)
    text = re.sub(rf"({_NUM}) mm\b", lambda m: f"{one(m, 1e-3)} {units}", text)
    text = re.sub(rf"({_NUM}) m\^2", lambda m: f"{float(m.group(1)) / scale ** 2:.3g} {units}^2", text)
    text = re.sub(rf"({_NUM}) m\b(?!\^)", lambda m: f"{one(m, 1.0)} {units}", text)
    text = text.replace(" in metres", f" in {units}").replace(" (femodes takes metres; the case file's lengths "
                                                               "are in its units)", "")
    for param, key in (renamed or {}).items():
        text = re.sub(rf"\b{param}\b", key, text)
    return text


@contextlib.contextmanager
def case_scale_warnings():
    """Within: the library's own size warning (it speaks of metres typed into Python calls) is
    left out; a case file gets :func:`_warn_scale`'s when it is loaded."""
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", message=r"femodes: the section is .* implausibly")
        yield
