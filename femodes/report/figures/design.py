"""Design curves of a sweep (femodes.sweep): the cutoff of each mode against the varied parameter
with the single-mode band shaded and the bandwidth ratio below it; for two varied parameters,
contour maps of the dominant cutoff and of the single-mode ratio.

They take the Dataset of ``SweepResult.to_xarray()`` (or the result itself): dimensions (the
varied names, ``mode``), ``fc`` and ``fc_error`` (Hz), ``f_low`` / ``f_high`` (the single-mode
band) and ``single_mode_ratio``.  The curves drawn are the followed mode identities
(``curve`` / ``ambiguous``, :mod:`femodes.studies.tracking`): where two modes cross, each curve
stays on its own mode, and a point whose assignment could not be decided is ringed.  A Dataset
without them (an older file) is drawn in cutoff order (curve k the k-th cutoff, whichever mode).
"""

from __future__ import annotations

import numpy as np

from femodes.errors import FemodesError
from femodes.report.figures.common import _new_figure, _save, _style

__all__ = ["design_curves", "design_map", "tolerance_histogram"]

_PARAM_SCALE = {"angle": (180.0 / np.pi, "deg")}


def _dataset(result):
    ds = result.to_xarray() if hasattr(result, "to_xarray") else result
    for v in ("fc", "fc_error", "f_low", "f_high", "single_mode_ratio"):
        if v not in ds:
            raise FemodesError(f"expected the result of femodes.sweep (or its .to_xarray()), missing {v!r}")
    return ds


def _axis(name):
    """(scale from SI, axis label) of a swept parameter: mm for a length, degrees for an angle,
    GHz for the frequency, no unit for a material property (eps_r, mu_r, tan_delta)."""
    if name == "frequency":
        return 1e-9, "frequency (GHz)"
    if name.split(".")[-1] in ("eps_r", "mu_r", "tan_delta"):
        return 1.0, name.replace("_", " ")
    scale, unit = _PARAM_SCALE.get(name, (1e3, "mm"))
    return scale, f"{name.replace('_', ' ')} ({unit})"


def design_curves(result, path=None, *, spec_band=None, target=None, dpi=200):
    """Design curves of a one-parameter sweep; returns the Figure (saved to ``path`` if given).

    Top: fc of each mode (GHz) against the parameter (mm, or degrees for an angle), error bars
    where they would be visible (larger than 1e-3 of the axis), the single-mode band (f_low ..
    f_high at each point) shaded; ``spec_band`` (f1, f2 Hz) drawn as two horizontal lines and
    ``target`` (Hz) as a dashed one.  Bottom: the single-mode ratio f_high / f_low.  Invalid
    points are left out (gaps in the curves)."""
    ds = _dataset(result)
    names = [d for d in ds.fc.dims if d != "mode"]
    if len(names) != 1:
        raise FemodesError(f"design_curves draws a one-parameter sweep; this one varies {', '.join(names)}: "
                           "use design_map for two")
    name = names[0]
    scale, xlabel = _axis(name)
    x = np.asarray(ds[name].values, dtype=float) * scale
    fc = np.asarray(ds.fc.values, dtype=float) / 1e9
    err = np.asarray(ds.fc_error.values, dtype=float) / 1e9
    names_k = [f"mode {k + 1}" for k in range(fc.shape[1])]
    amb = np.zeros(fc.shape, dtype=bool)
    if "curve" in ds and "ambiguous" in ds:
        fc, err, amb, names_k = _followed(ds, fc, err)
    st = _style()
    fig = _new_figure(7.5, 6.0)
    top, bottom = fig.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": [3, 1]})
    lo, hi = np.asarray(ds.f_low.values) / 1e9, np.asarray(ds.f_high.values) / 1e9
    top.fill_between(x, lo, hi, color=st["band"], alpha=0.6, lw=0, label="single-mode band", zorder=1)
    span = np.nanmax(fc) - np.nanmin(fc) if np.any(np.isfinite(fc)) else 1.0
    near = 3e-3 * (span or 1.0)  # closer than about a line width at the figure's size
    for k in range(fc.shape[1]):
        y, e = fc[:, k], err[:, k]
        # a curve that lies on one drawn before it (two modes of different classes equal within
        # the line width, e.g. a double ridge's two side-trough modes) is dashed with open
        # markers on top, so that both stay visible
        hidden = any(np.all(np.isnan(y) | np.isnan(fc[:, j]) | (np.abs(y - fc[:, j]) < near))
                     and np.any(np.isfinite(y) & np.isfinite(fc[:, j])) for j in range(k))
        line, = top.plot(x, y, lw=1.6, marker="o", ms=4 if hidden else 3, zorder=3.5 if hidden else 3,
                         ls=(0, (3, 3)) if hidden else "-", mfc="none" if hidden else None, label=names_k[k])
        if np.any(amb[:, k]):
            top.plot(x[amb[:, k]], y[amb[:, k]], ls="none", marker="o", ms=9, mfc="none", mec=st["text"], zorder=4,
                     label="not decided" if not any(amb[:, :k].ravel()) else None)
        show = np.isfinite(e) & (e > 1e-3 * span)
        if np.any(show):
            top.errorbar(x[show], y[show], yerr=e[show], fmt="none", ecolor=line.get_color(), capsize=2, zorder=3)
    if spec_band is not None:
        for f in spec_band:
            top.axhline(float(f) / 1e9, color=st["band_edge"], lw=1.2, ls="-", zorder=2)
        top.text(x[0], float(spec_band[1]) / 1e9, " spec band", va="bottom", color=st["band_edge"], fontsize=8)
    if target is not None:
        top.axhline(float(target) / 1e9, color=st["text"], lw=1.0, ls="--", zorder=2)
        top.text(x[-1], float(target) / 1e9, "target ", ha="right", va="bottom", color=st["text"], fontsize=8)
    top.set_ylabel("cutoff frequency (GHz)")
    top.set_title(f"Cutoffs against {name.replace('_', ' ')} ({ds.attrs.get('shape', '')})", fontsize=11)
    top.grid(alpha=0.3)
    top.legend(fontsize=8, ncol=2, loc="best")
    bottom.plot(x, np.asarray(ds.single_mode_ratio.values, dtype=float), color=st["family"]["TE"][1], marker="o",
                ms=3)
    bottom.set_ylabel("f_high / f_low")
    bottom.set_xlabel(xlabel)
    bottom.grid(alpha=0.3)
    if path is not None:
        _save(fig, path, dpi)
    return fig


def _followed(ds, fc, err):
    """(fc, fc_error, ambiguous, names) rearranged from cutoff order to the followed curves
    (points x curves); a curve is named by the label its mode carries at most points."""
    curve = np.asarray(ds.curve.values, dtype=int)
    amb0 = np.asarray(ds.ambiguous.values, dtype=bool)
    labels = np.asarray(ds.label.values, dtype=object)
    n = max(int(curve.max(initial=0)), 1)
    out = [np.full((fc.shape[0], n), np.nan), np.full((fc.shape[0], n), np.nan), np.zeros((fc.shape[0], n), bool)]
    seen = [dict() for _ in range(n)]
    for i in range(fc.shape[0]):
        for k in range(fc.shape[1]):
            c = curve[i, k]
            if c > 0:
                out[0][i, c - 1], out[1][i, c - 1], out[2][i, c - 1] = fc[i, k], err[i, k], amb0[i, k]
                lab = str(labels[i, k])
                seen[c - 1][lab] = seen[c - 1].get(lab, 0) + 1
    names = [max(s, key=s.get) if s else f"curve {c + 1}" for c, s in enumerate(seen)]
    return out[0], out[1], out[2], names


def design_map(result, path=None, *, quantity="fc1", target=None, dpi=200):
    """Contour map of a two-parameter sweep: ``quantity`` 'fc1' (the dominant cutoff, GHz) or
    'ratio' (the single-mode ratio) over the two parameters, with the ``target`` contour (Hz for
    fc1) drawn bold.  Returns the Figure (saved to ``path`` if given)."""
    ds = _dataset(result)
    names = [d for d in ds.fc.dims if d != "mode"]
    if len(names) != 2:
        raise FemodesError(f"design_map draws a two-parameter sweep; this one varies {len(names)}")
    if quantity == "fc1":
        z, label, tz = np.asarray(ds.fc.values[..., 0], dtype=float) / 1e9, "dominant cutoff fc1 (GHz)", target
        tz = None if target is None else float(target) / 1e9
    elif quantity == "ratio":
        z, label, tz = np.asarray(ds.single_mode_ratio.values, dtype=float), "single-mode ratio f_high / f_low", target
    else:
        raise FemodesError(f"quantity must be 'fc1' or 'ratio', got {quantity!r}")
    (sx, lx), (sy, ly) = _axis(names[0]), _axis(names[1])
    x = np.asarray(ds[names[0]].values, dtype=float) * sx
    y = np.asarray(ds[names[1]].values, dtype=float) * sy
    if x.size < 2 or y.size < 2:
        raise FemodesError("design_map needs at least two values of each parameter")
    st = _style()
    fig = _new_figure(6.5, 5.0)
    ax = fig.subplots()
    cs = ax.contourf(x, y, z.T, levels=12, cmap=st["cmap"])
    ax.contour(x, y, z.T, levels=12, colors="k", linewidths=0.4, alpha=0.5)
    fig.colorbar(cs, ax=ax, label=label)
    if tz is not None and np.nanmin(z) < tz < np.nanmax(z):
        ax.contour(x, y, z.T, levels=[tz], colors="#c0562f", linewidths=2.0)
    ax.set_xlabel(lx)
    ax.set_ylabel(ly)
    shown = tz is not None and np.nanmin(z) < tz < np.nanmax(z)
    ax.set_title(f"{label} ({ds.attrs.get('shape', '')})" + (f"\nbold: the target {tz:.6g}" if shown else ""),
                 fontsize=11)
    if path is not None:
        _save(fig, path, dpi)
    return fig


def tolerance_histogram(result, path=None, *, quantities=("f_low", "f_high", "ratio"), bins=60, dpi=200):
    """Histograms of the Monte Carlo changes of ``quantities`` under the tolerances of a
    :func:`femodes.tolerance` result (MHz for frequencies, the ratio as is), with the linear
    worst case drawn as dashed lines and the dimension that contributes most named in each
    panel.  Returns the Figure (saved to ``path`` if given)."""
    names = list(result.names)
    missing = [q for q in quantities if q not in names]
    if missing:
        raise FemodesError(f"unknown quantities {', '.join(missing)}; have: {', '.join(names)}")
    st = _style()
    fig = _new_figure(3.2 * len(quantities) + 0.8, 3.6)
    axes = np.atleast_1d(fig.subplots(1, len(quantities)))
    for ax, q in zip(axes, quantities):
        j = names.index(q)
        scale, unit = (1.0, "") if q == "ratio" else (1e-6, " (MHz)")
        ax.hist(result.samples[:, j] * scale, bins=bins, color=st["family"]["TE"][1], alpha=0.85)
        w = result.worst[j] * scale
        for s in (-w, w):
            ax.axvline(s, color=st["band_edge"], ls="--", lw=1.2)
        top = result.contributions[q][0]
        ax.set_title(f"{q}: nominal {result.nominal[j] * (1.0 if q == 'ratio' else 1e-9):.6g}"
                     f"{'' if q == 'ratio' else ' GHz'}\nmost from {top[0]} ({100 * top[1]:.0f} %)", fontsize=9)
        ax.set_xlabel(f"change{unit}")
        ax.grid(alpha=0.3)
    axes[0].set_ylabel("samples")
    if path is not None:
        _save(fig, path, dpi)
    return fig
