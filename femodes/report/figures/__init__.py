"""Figures: field patterns of single modes (:mod:`.fields`) and charts of a mode set (:mod:`.charts`).

Everything is drawn on explicit :class:`matplotlib.figure.Figure` objects with the Agg canvas;
pyplot and its global state are never touched, so the functions are safe in scripts, servers and
threads and need no display.

What is plotted
---------------
* Field pattern (:func:`field_pattern`): the transverse mode vector of one mode, normalised as in
  :mod:`femodes.modes` (``int |e_t|^2 dA = 1``, units 1/m; ``h_t = z x e_t``).  The colour map
  shows ``|e_t|`` (or ``|h_t|``) divided by its peak over the cross-section, so it runs 0 .. 1
  (clipped at a bulk level when a corner singularity would wash it out); the peak of the
  power-normalised vector is printed above the panel.  Arrows show the
  direction of E_t (or H_t) on a regular grid, their length proportional to the local
  magnitude; optional field lines follow the same vector field.  Because ``h_t = z x e_t``,
  ``|h_t| = |e_t|`` at every point: an H panel has the same colours as the E panel and arrows
  turned by 90 degrees.  The picture is a snapshot of a forward wave at the phase where the
  longitudinal potential's largest value is positive (the solver's sign convention).
* Mode chart (:func:`mode_chart`): the cutoff frequency of every mode on a horizontal axis in
  GHz, one stem per distinct cutoff (degenerate partners drawn once, with an ``x2`` note), the
  single-mode band shaded and annotated with its edges and the ratio f2/f1.

Files: the format follows the suffix of ``path`` (``.png`` at 200 dpi, ``.svg``, ``.pdf``); the
colour map is embedded as an image in the vector formats so they stay small, while outline,
arrows and text stay vectors.
"""

from femodes.report.figures.charts import attenuation_chart, band_chart, dispersion_chart, mode_chart
from femodes.report.figures.common import safe_name
from femodes.report.figures.design import design_curves, design_map, tolerance_histogram
from femodes.report.figures.fields import field_pattern, field_patterns, field_samples, loaded_field_pattern

__all__ = ["field_pattern", "field_patterns", "field_samples", "mode_chart", "attenuation_chart", "band_chart",
           "dispersion_chart", "loaded_field_pattern", "safe_name", "design_curves", "design_map", "tolerance_histogram"]
