"""Writing the figures a case file asks for into its output directory.
"""

from __future__ import annotations

import importlib.util
import math
import os
from pathlib import Path

from femodes.errors import FemodesError
from femodes.report import figures
from femodes.report.analysis import as_study


def _figures_module(output):
    """femodes.report.figures, or one clear error when matplotlib is missing from the installation
    (figures draw with it lazily, so everything else works without it)."""
    if importlib.util.find_spec("matplotlib") is None:
        raise FemodesError(f"figures were asked for ({', '.join(output.figures)}) but matplotlib is not "
                           "available in this installation; leave out --figures and [output] figures, "
                           "or pass --no-figures")
    return figures


def check_figures(output):
    """Raise FemodesError now (before a long solve) if ``output`` asks for figures that cannot
    be written: no figure support installed."""
    if output.figures:
        _figures_module(output)


def write_figures(result, output, analysis=None):
    """Write the figures asked for in ``output`` (a :class:`femodes.case.OutputSettings`) for a
    ModeSet or a :class:`femodes.api.Study` of either kind of guide; returns the paths written.
    Raises FemodesError if figure support is not installed.

    Homogeneous guides: "fields" (field patterns), "chart" (mode chart), "attenuation" and
    "band"; ``analysis`` (an :class:`Analysis`) feeds the "attenuation" figure (its band,
    conductor, roughness and fill loss; needed for that figure) and marks its band and frequency
    on the "band" figure.  Loaded guides: "fields" (the modes at the frequency) and "dispersion"."""
    if not output.figures:
        return []
    figures = _figures_module(output)
    study = as_study(result)
    if study.loaded:
        return _loaded_figures(figures, study, output)
    modeset = study.modes
    directory = output.directory
    try:
        os.makedirs(directory, exist_ok=True)
    except OSError as exc:
        raise FemodesError(f"cannot create the figure directory {directory}: {exc.strerror or exc}") from None
    paths = []
    if "fields" in output.figures:
        count = None if output.field_count is None else min(output.field_count, len(modeset))
        paths += [str(p) for p in figures.field_patterns(modeset, directory, fmt=output.format, count=count)]
    if "chart" in output.figures:
        path = os.path.join(directory, f"mode_chart.{output.format}")
        got = figures.mode_chart(modeset, path)
        paths.append(str(got) if isinstance(got, (str, os.PathLike)) else path)
    st = analysis.settings if analysis is not None else None
    if "attenuation" in output.figures:
        if st is None or st.band is None or analysis.sweep is None:
            raise FemodesError("the figure 'attenuation' needs an analysis band: add band = [f1, f2] to [analysis] "
                               "or give --band F1 F2")
        path = os.path.join(directory, f"attenuation.{output.format}")
        figures.attenuation_chart(modeset, analysis.sweep.frequencies, conductivity=st.conductivity,
                                  roughness=st.roughness, tan_delta=st.tan_delta, conductor=st.conductor, path=path)
        paths.append(path)
    if "band" in output.figures:
        path = os.path.join(directory, f"band_chart.{output.format}")
        figures.band_chart(modeset, path, band=None if st is None else st.band,
                           frequency=None if st is None else analysis.frequency)
        paths.append(path)
    return paths


def _loaded_figures(figs, study, output):
    """Field patterns of a loaded study's modes at the frequency ("fields") and its dispersion
    chart ("dispersion")."""
    d = Path(output.directory)
    try:
        d.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise FemodesError(f"cannot create the figure directory {d}: {exc.strerror or exc}") from None
    out = []
    if "fields" in output.figures and study.frequency is not None:
        prop = [m for m in study.at_frequency if m.propagates()]
        n = len(prop) if output.field_count is None else min(output.field_count, len(prop))
        out += [str(p) for p in figs.field_patterns(prop, d, fmt=output.format, count=n, section=study.section)]
    if "dispersion" in output.figures and study.dispersion is not None:
        p = d / f"dispersion.{output.format}"
        figs.dispersion_chart(study.dispersion.solved, p, section=study.section, eps_r=study.eps_r,
                              mu_r=study.mu_r, empty=study.empty_modes,
                              cutoffs=[c.fc for c in study.modes if math.isfinite(getattr(c, "fc", math.nan))])
        out.append(str(p))
    return out
