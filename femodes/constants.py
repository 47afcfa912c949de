"""Physical constants (SI, CODATA 2018) and the package version: the bottom layer, imported by all."""

__version__ = "0.1.0"

C0 = 299792458.0                  # speed of light in vacuum, m/s (exact)
MU0 = 1.25663706212e-6            # vacuum permeability, H/m
EPS0 = 1.0 / (MU0 * C0 * C0)      # vacuum permittivity, F/m
NP_TO_DB = 20.0 / 2.302585092994046  # nepers to decibels: 20 / ln 10 = 8.686 dB per neper
ETA0 = (MU0 / EPS0) ** 0.5          # wave impedance of vacuum, ohm
