"""The one error type for everything a user can cause."""


class FemodesError(ValueError):
    """Raised for bad input: geometry, materials, files, options, a mode that does not exist.

    The message says what was wrong, the value given, and what would be valid.
    The command-line program prints it and exits non-zero; internal bugs raise other types.
    """


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
