"""The one error type for everything a user can cause."""

import math


class FemodesError(ValueError):
    """Raised for bad input: geometry, materials, files, options, a mode that does not exist.

    The message says what was wrong, the value given, and what would be valid.
    The command-line program prints it and exits non-zero; internal bugs raise other types.
    """


def _number(name, value, unit):
    if isinstance(value, bool):  # True is 1 to Python, never a length or a count to a user
        raise FemodesError(f"{name} must be a number{' in ' + unit if unit else ''}, got {value!r}")
    try:
        return float(value)
    except (TypeError, ValueError):
        raise FemodesError(f"{name} must be a number{' in ' + unit if unit else ''}, got {value!r}") from None


def positive_number(name, value, unit=""):
    """``value`` as float if it is finite and > 0, else FemodesError naming ``name``."""
    x = _number(name, value, unit)
    if not (x > 0 and x < float("inf")):
        raise FemodesError(f"{name} must be a positive finite number{' in ' + unit if unit else ''}, got {value!r}")
    return x


def nonnegative_number(name, value, unit=""):
    """``value`` as float if it is finite and >= 0, else FemodesError naming ``name``."""
    x = _number(name, value, unit)
    if not (x >= 0 and x < float("inf")):
        raise FemodesError(f"{name} must be zero or a positive finite number{' in ' + unit if unit else ''}, "
                           f"got {value!r}")
    return x


def check_positive(name, value, unit="m"):
    """Return ``value`` as float if it is finite and > 0, else raise FemodesError."""
    if isinstance(value, bool):
        raise FemodesError(f"{name} must be a number, got {value!r}")
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise FemodesError(f"{name} must be a number, got {value!r}") from None
    if not (v > 0 and v < float("inf")):
        raise FemodesError(f"{name} must be a positive finite length in {unit}, got {value!r}")
    return v


def check_nonnegative(name, value, unit="m"):
    """Return ``value`` as float if it is finite and >= 0, else raise FemodesError."""
    if isinstance(value, bool):
        raise FemodesError(f"{name} must be a number, got {value!r}")
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise FemodesError(f"{name} must be a number, got {value!r}") from None
    if not (v >= 0 and v < float("inf")):
        raise FemodesError(f"{name} must be zero or a positive finite value in {unit}, got {value!r}")
    return v


#: relative permittivity and permeability a region or filling may have: passive, non-plasma
#: materials (eps_r, mu_r >= 1) up to the strongest ceramics and ferrites (~1e4); beyond, the
#: cutoffs fall below round-off of the eigenvalues (eps_r = 1e300 turned every cutoff into 0)
MATERIAL_RANGE = (1.0, 1e4)
#: wall conductivity (S/m) for which the good-conductor surface impedance holds: from poor
#: alloys and graphite (1e4) to above silver (6.3e7), with margin
CONDUCTIVITY_RANGE = (1e4, 1e9)
#: highest frequency (Hz): 10 THz; above, metal walls are no longer good conductors
MAX_FREQUENCY = 1e13
#: the accuracies the solvers take (relative error on the cutoffs), lo <= accuracy < hi: below lo
#: the eigenvalues' round-off floor, at hi and above the refinement has nothing to do
ACCURACY_RANGE = (1e-11, 0.1)


def accuracy_range_error(name, value):
    """The one statement of the accuracy range, for the library (``name`` an argument) and the
    case file (``name`` a key and its table, or an option)."""
    lo, hi = ACCURACY_RANGE
    return FemodesError(f"{name} is a relative error on the cutoffs and must lie from {lo:g} (the double-precision "
                        f"floor) up to {hi:g}, not included (e.g. 1e-6), got {value!r}")


#: the relative accuracies the field-derived quantities (wall loss, impedances, peak field) may be
#: asked, lo <= accuracy <= hi: below lo the re-solves would pass any mesh size this machine holds
QUANTITY_ACCURACY_RANGE = (1e-9, 0.5)


def quantity_accuracy_number(name, value):
    """``value`` as float if it lies in :data:`QUANTITY_ACCURACY_RANGE`, else the one statement of
    that range (``name``: the argument, or the case file's key and table)."""
    lo, hi = QUANTITY_ACCURACY_RANGE
    try:
        v = float(value)
    except (TypeError, ValueError):
        v = math.nan
    if isinstance(value, bool) or not (lo <= v <= hi):
        raise FemodesError(f"{name} is the relative error asked of the wall loss, impedances and peak field and must "
                           f"lie from {lo:g} up to {hi:g} (e.g. 1e-3), got {value!r}")
    return v


def in_range(name, value, lo, hi, unit="", why=""):
    """``value`` as float if lo <= value <= hi, else FemodesError naming the range and why."""
    x = positive_number(name, value, unit)
    if not (lo <= x <= hi):
        u = f" {unit}" if unit else ""
        raise FemodesError(f"{name} must lie between {lo:g} and {hi:g}{u}{' (' + why + ')' if why else ''}, "
                           f"got {value!r}")
    return x


def material_number(name, value):
    """eps_r or mu_r, checked against :data:`MATERIAL_RANGE`."""
    return in_range(name, value, *MATERIAL_RANGE, why="relative to vacuum; passive materials up to the "
                    "strongest ceramics and ferrites")
