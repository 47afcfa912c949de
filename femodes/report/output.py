"""Writing the figures a case file asks for into its output directory.
"""

from __future__ import annotations

import importlib.util
import os

from femodes.errors import FemodesError
from femodes.report import figures


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


def write_figures(modeset, output, analysis=None):
    """Write the figures asked for in ``output`` (a :class:`femodes.case.OutputSettings`);
    returns the paths written.  Raises FemodesError if figure support is not installed.

    ``analysis`` (an :class:`Analysis`) feeds the "attenuation" figure (its band, conductor,
    roughness and fill loss; needed for that figure) and marks its band and frequency on the
    "band" figure."""
    if not output.figures:
        return []
    figures = _figures_module(output)
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


def write_loaded_figures(study, output):
    """The figures of [output] for a loaded study: field patterns of the modes at the frequency
    ("fields") and the dispersion chart ("dispersion").  Returns the written paths."""
    if not output.figures:
        return []
    figs = _figures_module(output)
    from pathlib import Path

    d = Path(output.directory)
    d.mkdir(parents=True, exist_ok=True)
    out = []
    if "fields" in output.figures and study.frequency is not None:
        prop = [m for m in study.modes if m.propagating]
        n = len(prop) if output.field_count is None else min(output.field_count, len(prop))
        for m in prop[:n]:
            p = d / f"mode{m.index + 1:02d}_{figs.safe_name(m.label)}.{output.format}"
            figs.loaded_field_pattern(m, p, section=study.section)
            out.append(str(p))
    if "dispersion" in output.figures and study.dispersion is not None:
        p = d / f"dispersion.{output.format}"
        figs.dispersion_chart(study.dispersion, p, section=study.section, eps_r=study.eps_r, mu_r=study.mu_r,
                              empty=study.empty_modes)
        out.append(str(p))
    import matplotlib.pyplot as plt

    plt.close("all")
    return out
