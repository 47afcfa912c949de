"""The one error type for everything a user can cause."""


class FemodesError(ValueError):
    """Raised for bad input: geometry, materials, files, options, a mode that does not exist.

    The message says what was wrong, the value given, and what would be valid.
    The command-line program prints it and exits non-zero; internal bugs raise other types.
    """


def _number(name, value, unit):
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
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise FemodesError(f"{name} must be a number, got {value!r}") from None
    if not (v > 0 and v < float("inf")):
        raise FemodesError(f"{name} must be a positive finite length in {unit}, got {value!r}")
    return v


def check_nonnegative(name, value, unit="m"):
    """Return ``value`` as float if it is finite and >= 0, else raise FemodesError."""
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise FemodesError(f"{name} must be a number, got {value!r}") from None
    if not (v >= 0 and v < float("inf")):
        raise FemodesError(f"{name} must be zero or a positive finite value in {unit}, got {value!r}")
    return v
