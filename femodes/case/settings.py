"""What a case file asks for, checked and in SI units: :class:`Case` with its
:class:`AnalysisSettings` and :class:`OutputSettings`, and which figures apply to which guide.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

from femodes.case.schema import (
    _BAND_FIGURES,
    _HOMOGENEOUS_FIGURES,
    _LOADED_FIGURES,
    DEFAULT_BREAKDOWN_FIELD,
    DEFAULT_CONDUCTOR,
    DEFAULT_DIRECTORY,
    DEFAULT_FREQUENCY_UNITS,
    DEFAULT_POINTS,
    DEFAULT_SAFETY_FACTOR,
    FORMATS,
    FREQUENCY_UNITS,
)
from femodes.case.values import _accuracy, _band_value, _choice, _conductor_value, _count, _frequency_value, _parse_conductor, _parse_number
from femodes.errors import FemodesError
from femodes.quantities.convergence import DEFAULT_QUANTITY_ACCURACY


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
    quantity_accuracy  relative accuracy asked of the field-derived quantities (wall loss,
                   impedances, peak field; loaded guides also the dielectric loss and group
                   velocity), from [solve]; 0 turns the re-solves off (homogeneous guides: no
                   error bars on them; loaded: order p against p - 1 on the one mesh)
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
    quantity_accuracy: float = DEFAULT_QUANTITY_ACCURACY
    frequency_units: str = DEFAULT_FREQUENCY_UNITS  # how the case file gave its frequencies (messages)
    frequency_from: str | None = None  # where the frequency came from ('frequency in [analysis]', '--frequency')
    band_from: str | None = None

    @property
    def frequency_scale(self):
        """Hz per ``frequency_units``."""
        return FREQUENCY_UNITS[self.frequency_units]

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
    sweep: object = None  # femodes.case.sweep.SweepSettings of a [sweep] table, or None
    seek: object = None  # femodes.case.studies.SeekSettings of a [seek] table, or None
    tolerance: object = None  # femodes.case.studies.ToleranceSettings of a [tolerance] table, or None
    quantity_accuracy: float = DEFAULT_QUANTITY_ACCURACY  # [solve] quantity_accuracy
    units: str = "mm"  # [guide] units: how the messages of the studies give lengths back
    guide_shape: str | None = None  # the [guide] shape name and its shape function's arguments (SI),
    guide_params: dict | None = None  # for the design studies (None for a mesh file)
    moving_regions: tuple = ()  # (number, [[region]] table) of the regions written with expressions
    placement: dict = field(default_factory=dict)  # the [guide] offset / rotate_deg / mirror (SI)

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
                an = AnalysisSettings(tan_delta=self.tan_delta, quantity_accuracy=self.quantity_accuracy)
            if band is not None:
                if not isinstance(band, (list, tuple)) or len(band) != 2:
                    raise FemodesError(f"--band needs two frequencies F1 F2 in GHz, got {band!r}")
                vals = [_parse_number(b, "--band", "two frequencies in GHz, e.g. --band 8.2 12.4") for b in band]
                if all(isinstance(v, (int, float)) for v in vals) and not 0 < vals[0] < vals[1]:
                    raise FemodesError(f"--band must be F1 F2 with 0 < F1 < F2 (GHz), e.g. --band 8.2 12.4, got "
                                       f"{' '.join(str(b) for b in band)}")
                an = replace(an, band=_band_value("--band", vals, "GHz", 1e9), frequency=None, band_from="--band",
                             frequency_from="the centre of --band", frequency_units="GHz")
            if frequency is not None:
                v = _parse_number(frequency, "--frequency", "a frequency in GHz (number), e.g. 10")
                an = replace(an, frequency=_frequency_value("--frequency", v, "GHz", 1e9), frequency_from="--frequency",
                             frequency_units="GHz")
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
