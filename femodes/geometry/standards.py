"""Standard rectangular waveguide sizes by their designation (WR-90, ...).

Inner dimensions a x b in inches as the EIA designations define them (the WR number is a in
hundredths of an inch: WR-90 is 0.900 x 0.400 in, 22.86 x 10.16 mm) and the recommended
operating band of each (about 1.25 to 1.9 times the TE10 cutoff).  From memory of the EIA RS-261
/ IEC 60153-2 tables (R-designations of IEC not included); check a critical design against the
standard itself.
"""

from __future__ import annotations

import math

from femodes.errors import FemodesError

__all__ = ["STANDARD_GUIDES", "standard_size", "find_standard"]

INCH = 25.4e-3

#: designation -> (a inches, b inches, recommended band low GHz, high GHz); from memory (EIA RS-261)
STANDARD_GUIDES = {
    "WR-650": (6.500, 3.250, 1.12, 1.70),
    "WR-510": (5.100, 2.550, 1.45, 2.20),
    "WR-430": (4.300, 2.150, 1.70, 2.60),
    "WR-340": (3.400, 1.700, 2.20, 3.30),
    "WR-284": (2.840, 1.340, 2.60, 3.95),
    "WR-229": (2.290, 1.145, 3.30, 4.90),
    "WR-187": (1.872, 0.872, 3.95, 5.85),
    "WR-159": (1.590, 0.795, 4.90, 7.05),
    "WR-137": (1.372, 0.622, 5.85, 8.20),
    "WR-112": (1.122, 0.497, 7.05, 10.00),
    "WR-90": (0.900, 0.400, 8.20, 12.40),
    "WR-75": (0.750, 0.375, 10.00, 15.00),
    "WR-62": (0.622, 0.311, 12.40, 18.00),
    "WR-51": (0.510, 0.255, 15.00, 22.00),
    "WR-42": (0.420, 0.170, 18.00, 26.50),
    "WR-34": (0.340, 0.170, 22.00, 33.00),
    "WR-28": (0.280, 0.140, 26.50, 40.00),
    "WR-22": (0.224, 0.112, 33.00, 50.00),
    "WR-19": (0.188, 0.094, 40.00, 60.00),
    "WR-15": (0.148, 0.074, 50.00, 75.00),
    "WR-12": (0.122, 0.061, 60.00, 90.00),
    "WR-10": (0.100, 0.050, 75.00, 110.00),
    "WR-8": (0.080, 0.040, 90.00, 140.00),
    "WR-6": (0.065, 0.0325, 110.00, 170.00),
    "WR-5": (0.051, 0.0255, 140.00, 220.00),
    "WR-4": (0.043, 0.0215, 170.00, 260.00),
    "WR-3": (0.034, 0.017, 220.00, 325.00),
}


def _key(designation):
    if not isinstance(designation, str):
        raise FemodesError(f"designation must be a string such as 'WR-90', got {designation!r}")
    s = designation.strip().upper().replace(" ", "").replace("_", "-")
    if s.startswith("WR") and not s.startswith("WR-"):
        s = "WR-" + s[2:]
    return s


def standard_size(designation):
    """(a, b, (f_low, f_high)) in metres and Hz of a standard rectangular guide, e.g. 'WR-90'
    (also 'wr90', 'WR 90')."""
    key = _key(designation)
    if key not in STANDARD_GUIDES:
        hint = ""
        try:
            n = float(key[3:])
            hint = " (nearest: " + ", ".join(sorted(STANDARD_GUIDES, key=lambda k: abs(float(k[3:]) - n))[:3]) + ")"
        except ValueError:
            pass
        raise FemodesError(f"unknown waveguide designation {designation!r}: give an EIA one, WR-650 down to WR-3{hint}")
    a, b, lo, hi = STANDARD_GUIDES[key]
    return a * INCH, b * INCH, (lo * 1e9, hi * 1e9)


def find_standard(width, height, rel=1e-6):
    """The designation whose inner dimensions are ``width`` x ``height`` (m) within ``rel``, or None."""
    for key, (a, b, _, _) in STANDARD_GUIDES.items():
        if math.isclose(width, a * INCH, rel_tol=rel) and math.isclose(height, b * INCH, rel_tol=rel):
            return key
    return None
