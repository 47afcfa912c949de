"""Charts of a mode set: the mode chart (cutoffs, single-mode band), the band chart, the attenuation
against frequency and the dispersion chart of loaded guides (with light lines and complex pairs).
"""

from __future__ import annotations

import math
import re

import numpy as np

from femodes import quantities as Q
from femodes.errors import FemodesError, positive_number
from femodes.quantities import conductivity_of
from femodes.report.analysis import reliable_attenuation
from femodes.report.figures.common import _ghz, _new_figure, _save, _style


def _groups(modeset):
    """Modes grouped by degeneracy (degenerate_with links), in ascending cutoff."""
    seen = set()
    groups = []
    for m in modeset:
        if m.index in seen:
            continue
        g = [m] + [modeset[i] for i in m.degenerate_with if 0 <= i < len(modeset) and i not in seen]
        for q in g:
            seen.add(q.index)
        groups.append(sorted(g, key=lambda q: q.index))
    groups.sort(key=lambda g: min(q.fc for q in g))
    return groups


def _group_text(g):
    labels = []
    for q in g:
        if q.label not in labels:
            labels.append(q.label)
    parts = []
    for lab in labels:
        k = sum(1 for q in g if q.label == lab)
        parts.append(f"{lab} x{k}" if k > 1 else lab)
    return " / ".join(parts)


def _band(modeset, groups):
    """(f1, f2, n_tem) of the single-mode band, or None if it is not known.

    The edges come from ``ModeSet.single_mode_band`` (one definition for the whole package); a
    plain tuple of modes falls back to the first two degeneracy groups."""
    n_tem = sum(1 for q in groups[0] if q.family == "TEM") if groups else 0
    getter = getattr(modeset, "single_mode_band", None)
    if getter is not None:
        try:
            f1, f2 = getter()
        except FemodesError:
            return None
    elif len(groups) >= 2:
        f1, f2 = min(q.fc for q in groups[0]), min(q.fc for q in groups[1])
    else:
        return None
    return (0.0 if n_tem else float(f1)), float(f2), n_tem


def _place_labels(items, n_rows, x_lo, x_hi, offset, marker, gap):
    """Row and side ('right' or 'left' of the stem) for each label (f, width), in order.

    Greedy: each label takes the cheapest place -- cost for leaving the axis range (x_lo, x_hi),
    more for overlapping a label (with its marker) on the same row than for its stem running
    behind a lower label or another stem behind it; low rows and the right side preferred.
    """
    placed = []                                  # (f, row, text_lo, text_hi, lo, hi)
    out = []
    for f, w in items:
        best, best_cost = (0, "right"), math.inf
        for r in range(n_rows):
            for side in ("right", "left"):
                t_lo, t_hi = (f + offset, f + offset + w) if side == "right" else (f - offset - w, f - offset)
                lo, hi = min(t_lo, f - marker), max(t_hi, f + marker)
                cost = 0.01 * r + (0.004 if side == "left" else 0.0)
                if t_hi > x_hi or t_lo < x_lo:
                    cost += 100.0
                for f2, r2, tl2, th2, lo2, hi2 in placed:
                    if r2 == r and lo < hi2 + gap and lo2 < hi + gap:
                        cost += 10.0
                    if r2 < r and tl2 - gap <= f <= th2 + gap:
                        cost += 3.0
                    if r2 > r and t_lo - gap <= f2 <= t_hi + gap:
                        cost += 3.0
                if cost < best_cost:
                    best, best_cost = (r, side), cost
        r, side = best
        t_lo, t_hi = (f + offset, f + offset + w) if side == "right" else (f - offset - w, f - offset)
        placed.append((f, r, t_lo, t_hi, min(t_lo, f - marker), max(t_hi, f + marker)))
        out.append(best)
    return out


def mode_chart(modeset, path=None, *, f_max=None, dpi=200):
    """Chart of the cutoff frequencies of ``modeset``; returns the Figure (saved to ``path`` if given).

    What is plotted: each distinct cutoff frequency (GHz, horizontal axis) as a stem with a marker
    whose shape and colour give the family (TE, TM, TEM; legend on the right) and the mode label
    with its cutoff in GHz next to it.  Members of a degenerate group are drawn once, their label with an ``x2`` (``x3``
    ...) note, or joined by " / " when the labels differ.  The single-mode band -- from the
    lowest cutoff to the next distinct one, starting at 0 Hz when the guide carries a TEM mode --
    is shaded and annotated with its edges and the ratio f2/f1.  Modes above ``f_max`` (Hz;
    default: a little above the highest cutoff) are left out and counted in a note.  The
    vertical position of the labels carries no meaning: they are staggered so as not to overlap.
    The title names the section (``section.describe()``) or the external mesh, and the filling
    when it is not vacuum.
    """
    from matplotlib.lines import Line2D

    st = _style()
    if len(modeset) == 0:
        raise FemodesError("the mode set is empty: nothing to chart")
    groups = _groups(modeset)
    top = max(max(q.fc for q in g) for g in groups)
    if f_max is None:
        f_max = 1.1 * top if top > 0 else 1e9
    else:
        f_max = positive_number("f_max", f_max, "Hz")
    shown = [g for g in groups if min(q.fc for q in g) <= f_max]
    hidden = sum(len(g) for g in groups) - sum(len(g) for g in shown)
    fmax_g = _ghz(f_max)

    fig = _new_figure(8.0, 3.1)
    ax = fig.add_subplot(1, 1, 1)
    left = -0.025 * fmax_g
    ax.set_xlim(left, fmax_g)
    ax.set_ylim(0.0, 1.0)
    ax.set_yticks([])
    for side in ("left", "right", "top"):
        ax.spines[side].set_visible(False)
    ax.set_xlabel("cutoff frequency (GHz)" + (f"\n({hidden} more mode{'s' if hidden > 1 else ''} above "
                                               f"{fmax_g:.4g} GHz not shown)" if hidden else ""))
    ax.tick_params(axis="x", labelsize=9)
    ax.grid(axis="x", color="#d9dcdf", lw=0.6, zorder=-1)
    ax.set_axisbelow(True)

    section = getattr(modeset, "section", None)
    if section is not None:
        name = section.describe()
    else:
        mesh = getattr(modeset, "mesh", None)
        name = f"external mesh ({mesh.n_triangles} triangles)" if mesh is not None else "external mesh"
    eps_r, mu_r = getattr(modeset, "eps_r", 1.0), getattr(modeset, "mu_r", 1.0)
    fill = "" if eps_r == 1.0 and mu_r == 1.0 else f", filled eps_r = {eps_r:g}, mu_r = {mu_r:g}"
    title = f"Cutoff frequencies: {name}{fill}"
    if len(title) > 80:
        import textwrap
        title = "Cutoff frequencies\n" + "\n".join(textwrap.wrap(f"{name}{fill}", 72))
    ax.set_title(title, fontsize=10.5)
    families = []
    for g in shown:
        for q in g:
            if q.family not in families:
                families.append(q.family)
    handles = [Line2D([], [], marker=st["family"][f][0], color=st["family"][f][1], mec="white", mew=0.8,
                      ls="none", ms=7, label=f) for f in ("TEM", "TE", "TM") if f in families]
    if handles:
        ax.legend(handles=handles, title="family", loc="center left", bbox_to_anchor=(1.01, 0.5),
                  frameon=False, fontsize=9, title_fontsize=9)

    band = _band(modeset, groups)
    if band is not None:
        f1, f2, n_tem = band
        span = ax.axvspan(_ghz(f1), _ghz(min(f2, f_max)), color=st["band"], alpha=0.8, lw=0, zorder=0)
        span.set_gid("single-mode-band")
        for f in (f1, f2):
            if f > 0 and f <= f_max:
                ax.axvline(_ghz(f), color=st["band_edge"], lw=0.9, ls=(0, (4, 3)), zorder=1)
        if n_tem:
            what = "TEM-only band" if n_tem == 1 else f"band of the {n_tem} TEM modes only"
            text = f"{what}: 0 – {_ghz(f2):.3f} GHz\n(f2/f1 unbounded: TEM from DC)"
        else:
            text = f"single-mode band: {_ghz(f1):.3f} – {_ghz(f2):.3f} GHz\nf2/f1 = {f2 / f1:.3f}"
        xc = 0.5 * (_ghz(f1) + _ghz(min(f2, f_max)))
        wide = (_ghz(min(f2, f_max)) - _ghz(f1)) / (fmax_g - left) > 0.2
        note = ax.text(xc if wide else _ghz(min(f2, f_max)) + 0.01 * fmax_g, 0.97, text,
                       ha="center" if wide else "left", va="top", fontsize=8.5, color=st["text"],
                       gid="band-note", zorder=6,
                       bbox=dict(boxstyle="round,pad=0.3", fc="white", ec=st["band_edge"], lw=0.6, alpha=0.9))
        if not wide:
            # a narrow band near the right end: put the note on the band's left instead, or centre it
            fig.canvas.draw()
            r = fig.canvas.get_renderer()
            box = note.get_window_extent(r)
            axbox = ax.get_window_extent(r)
            if box.x1 > axbox.x1:
                if box.width < ax.transData.transform((_ghz(f1), 0))[0] - axbox.x0:
                    note.set_x(_ghz(f1) - 0.01 * fmax_g)
                    note.set_ha("right")
                else:
                    note.set_x(0.5 * (left + fmax_g))
                    note.set_ha("center")
    else:
        ax.text(0.5, 0.97, "single-mode band: solve for at least two distinct cutoffs", transform=ax.transAxes,
                ha="center", va="top", fontsize=8.5, color=st["text"], gid="band-note")

    # stems, markers, labels -- labels staggered on rows (and put left of their stem near the
    # right end) so that no two overlap and no stem runs through a label
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    ax_w = ax.get_window_extent(renderer).width
    per_px = (fmax_g - left) / max(ax_w, 1.0)
    rows = [0.12, 0.27, 0.42, 0.57, 0.72]
    items = []
    for g in shown:
        f = _ghz(min(q.fc for q in g))
        text = f"{_group_text(g)}\n" + ("no cutoff" if f == 0 else f"{f:.3f} GHz")
        probe = ax.text(0, 0, text, fontsize=8, linespacing=1.15)
        tw = probe.get_window_extent(renderer).width * per_px
        probe.remove()
        items.append((f, tw, text, g))
    offset = 8.0 * per_px        # marker to text, in GHz
    places = _place_labels([(f, tw) for f, tw, _, _ in items], len(rows), left, fmax_g, offset,
                           marker=5.0 * per_px, gap=4.0 * per_px)
    for (f, tw, text, g), (r, side) in zip(items, places):
        y = rows[r]
        fams = []
        for q in g:
            if q.family not in fams:
                fams.append(q.family)
        ax.vlines(f, 0.0, y, color="#8a8f94", lw=0.8, zorder=2)
        for k, fam in enumerate(fams):
            marker, colour = st["family"][fam]
            ax.plot([f], [y + 0.045 * k], marker=marker, ms=7, color=colour, mec="white", mew=0.8,
                    ls="none", zorder=4, gid=f"marker-{fam}")
        ax.text(f + offset if side == "right" else f - offset, y, text, fontsize=8, va="center",
                ha="left" if side == "right" else "right", color=st["text"], zorder=5,
                gid="mode-label", linespacing=1.15,
                bbox=dict(boxstyle="square,pad=0.1", fc="white", ec="none", alpha=0.6))

    if path is not None:
        _save(fig, path, dpi=dpi)
    return fig


#: line colours for the curves of several modes (a colour-blind-safe qualitative set, in order)
_CURVE_COLOURS = ("#1d6f8a", "#c0562f", "#5a3f87", "#3c8a3a", "#b08a1e", "#8a2f5a", "#2f4f8a", "#6b6b6b")


_FAMILY_DASH = {"TE": "-", "TM": (0, (5, 2.5)), "TEM": (0, (6, 2, 1.5, 2))}


def _frequencies(frequencies):
    try:
        fs = np.asarray(frequencies, dtype=float).ravel()
    except (TypeError, ValueError):
        raise FemodesError(f"frequencies must be a list of numbers in Hz, got {frequencies!r}") from None
    if fs.size < 2 or not np.all(np.isfinite(fs)) or np.any(fs <= 0) or np.any(np.diff(fs) <= 0):
        raise FemodesError("frequencies must be at least two positive, finite, increasing values in Hz")
    return fs


def _walls_note(conductivity, roughness, tan_delta, conductor):

    sigma = conductivity_of(conductivity)
    name = conductor if conductor else (conductivity if isinstance(conductivity, str) else None)
    metal = f"{name} walls ({sigma:.3g} S/m)" if name else f"walls of {sigma:.3g} S/m"
    rough = "smooth" if not roughness else f"rms roughness {roughness * 1e6:.3g} µm"
    fill = "lossless fill" if not tan_delta else f"fill tan δ = {tan_delta:.3g}"
    return f"{metal}, {rough}, {fill}"


def _unbreakable_units(text):
    """Keep '0.5 mm' and '30 deg' together when a title is wrapped (no-break spaces)."""
    return re.sub(r"(\d) (mm|deg)\b", "\\1\u00a0\\2", text)


def attenuation_chart(modeset, frequencies, *, conductivity="copper", roughness=0.0, tan_delta=0.0,
                      conductor=None, path=None, dpi=200):
    """Attenuation (dB/m) against frequency (GHz) of every mode of ``modeset`` that propagates
    somewhere in ``frequencies`` (Hz); returns the Figure (saved to ``path`` if given).

    What is plotted: for each mode the wall loss plus the loss of the fill
    (:func:`femodes.quantities.attenuation`: power-loss method, ``conductivity`` a metal name or S/m,
    rms ``roughness`` in m, fill loss tangent ``tan_delta``), at the given frequencies above its
    cutoff only.  One curve per mode, colour per mode and dash per family (TE solid, TM dashed,
    TEM dash-dot), named in the legend; members of a degenerate group whose curves agree to 1e-4 are
    drawn once with an ``x2`` note.  A mode whose cutoff lies inside the range gets a dotted line at
    its cutoff: the loss grows without bound there, and points where the loss is not small
    against beta (alpha / beta > :data:`femodes.export.PERTURBATION_LIMIT`, where the power-loss
    method does not hold) are left out, so the curve starts a little above the cutoff.  The
    vertical axis is logarithmic when the values span more than a factor of 30.
    ``conductor`` names the metal in the title when ``conductivity`` is a number.
    """
    from matplotlib.ticker import FuncFormatter, NullFormatter

    st = _style()
    fs = _frequencies(frequencies)
    modes = list(modeset)
    if not modes:
        raise FemodesError("the mode set is empty: nothing to plot")

    curves = []                                   # (modes, values dB/m with NaN, family)
    for m in modes:
        a = reliable_attenuation(m, fs, conductivity, roughness, tan_delta) * Q.NP_TO_DB
        on = np.isfinite(a)
        if not np.any(on):
            continue
        for c in curves:
            same_group = m.index in {q.index for q in c[0]} or any(m.index in q.degenerate_with for q in c[0])
            if same_group and np.array_equal(np.isnan(a), np.isnan(c[1])) and np.allclose(
                    a[on], c[1][on], rtol=1e-4, atol=0.0):
                c[0].append(m)
                break
        else:
            curves.append(([m], a, m.family))
    if not curves:
        raise FemodesError(f"no mode propagates between {fs[0] / 1e9:.6g} and {fs[-1] / 1e9:.6g} GHz: nothing to plot "
                           "(the lowest cutoff is {:.6g} GHz)".format(min(m.fc for m in modes) / 1e9))

    fig = _new_figure(8.0, 4.2)
    ax = fig.add_subplot(1, 1, 1)
    ghz = fs / 1e9
    vals = np.concatenate([c[1][np.isfinite(c[1])] for c in curves])
    lo, hi = float(vals.min()), float(vals.max())
    log = lo > 0 and hi / lo > 30
    for k, (ms, a, fam) in enumerate(curves):
        colour = _CURVE_COLOURS[k % len(_CURVE_COLOURS)]
        labels = []
        for q in ms:
            if q.label not in labels:
                labels.append(q.label)
        name = " / ".join(labels) + (f" x{len(ms)}" if len(ms) > 1 and len(labels) == 1 else "")
        few = fs.size <= 12 or np.count_nonzero(np.isfinite(a)) < 3
        line, = ax.plot(ghz, a, color=colour, lw=1.8, ls=_FAMILY_DASH.get(fam, "-"), marker="o" if few else None,
                        ms=3.5, label=f"{name}  (fc {ms[0].fc / 1e9:.4g} GHz)" if fam != "TEM" else f"{name}  (no cutoff)",
                        zorder=3, clip_on=not few)
        line.set_gid(f"attenuation-{ms[0].index}")
        fc = ms[0].fc
        if fam != "TEM" and fs[0] < fc < fs[-1]:
            ax.axvline(fc / 1e9, color=colour, lw=0.9, ls=(0, (1, 2.5)), zorder=2, gid=f"cutoff-{ms[0].index}")
    if log:
        ax.set_yscale("log")
        ax.yaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:g}"))
        ax.yaxis.set_minor_formatter(NullFormatter())
    else:
        ax.set_ylim(0.0, 1.08 * hi if hi > 0 else 1.0)
    ax.set_xlim(ghz[0], ghz[-1])
    top = max(m.fc for m in modes)
    ax.set_xlabel("frequency (GHz)" + (f"\n(no modes computed above {top / 1e9:.4g} GHz: others may propagate there)"
                                       if fs[-1] > top else ""))
    ax.set_ylabel("attenuation (dB/m)")
    ax.grid(True, which="major", color="#d9dcdf", lw=0.6)
    ax.set_axisbelow(True)
    for side in ("right", "top"):
        ax.spines[side].set_visible(False)
    ax.tick_params(labelsize=9)
    section = getattr(modeset, "section", None)
    name = section.describe() if section is not None else "external mesh"
    sub = _walls_note(conductivity, roughness, tan_delta, conductor)
    import textwrap
    fig.suptitle("Attenuation against frequency", fontsize=11)
    wrap = 75 if len(curves) <= 3 else 58          # the legend outside takes part of the width
    ax.set_title("\n".join(textwrap.wrap(_unbreakable_units(name), wrap) + textwrap.wrap(sub, wrap)), fontsize=8.5,
                 color=st["text"])
    if len(curves) <= 3:
        leg = ax.legend(title="mode", loc="best", frameon=True, framealpha=0.9, edgecolor="#d9dcdf", fontsize=8.5,
                        title_fontsize=9)
    else:
        leg = ax.legend(title="mode", loc="upper left", bbox_to_anchor=(1.01, 1.0), frameon=False, fontsize=8.5,
                        title_fontsize=9)
    leg.set_gid("legend")
    if path is not None:
        _save(fig, path, dpi=dpi)
    return fig


def band_chart(modeset, path=None, *, band=None, frequency=None, f_max=None, dpi=200):
    """Chart of where each mode propagates and of the bands of the guide; returns the Figure
    (saved to ``path`` if given).

    What is plotted, on one frequency axis (GHz): a row per distinct cutoff (degenerate groups
    once) with a bar from the cutoff onwards, coloured by family -- the mode propagates where its bar
    is; then a row with the single-mode band (lowest cutoff to the next distinct one; from 0 Hz with
    a TEM mode), a row with the recommended operating band 1.25 fc1 .. 0.95 fc2 (a rule of thumb,
    common practice; :func:`femodes.quantities.band`) and, if ``band`` = (f1, f2) in Hz is given, a
    row with that analysis band.  ``frequency`` (Hz) is drawn as a vertical line across every row.
    The single-mode band is also tinted behind all rows.  ``f_max`` (Hz) ends the axis (default:
    past the next cutoff and the analysis band, at most a little above the highest cutoff computed).
    """

    st = _style()
    if len(modeset) == 0:
        raise FemodesError("the mode set is empty: nothing to chart")
    groups = _groups(modeset)
    top = max(max(q.fc for q in g) for g in groups)
    if band is not None:
        try:
            b1, b2 = (float(v) for v in band)
        except (TypeError, ValueError):
            raise FemodesError(f"band must be a pair (f1, f2) of frequencies in Hz, got {band!r}") from None
        if not (0 < b1 < b2 and math.isfinite(b2)):
            raise FemodesError(f"band must be (f1, f2) with 0 < f1 < f2 (Hz), got {band!r}")
    if frequency is not None:
        try:
            frequency = float(frequency)
        except (TypeError, ValueError):
            raise FemodesError(f"frequency must be a number in Hz, got {frequency!r}") from None
        if not (frequency > 0 and math.isfinite(frequency)):
            raise FemodesError(f"frequency must be a positive frequency in Hz, got {frequency!r}")
    try:
        qb = Q.band(modeset)
    except (FemodesError, StopIteration):
        qb = None
    if f_max is None:
        f_max = 1.35 * qb.high if qb is not None else 1.1 * top
        if top > 0:
            f_max = min(f_max, 1.1 * top)
        if band is not None:
            f_max = max(f_max, 1.05 * b2)
        if frequency is not None:
            f_max = max(f_max, 1.05 * frequency)
        if not f_max > 0:
            f_max = 1e9
    else:
        f_max = positive_number("f_max", f_max, "Hz")
    X = f_max / 1e9
    shown = [g for g in groups if min(q.fc for q in g) < f_max]
    hidden = len(groups) - len(shown)

    rows = []                                                 # (label, kind, lo, hi, colour, text, gid)
    for g in shown:
        fams = []
        for q in g:
            if q.family not in fams:
                fams.append(q.family)
        fc = min(q.fc for q in g)
        rows.append((_group_text(g), "mode", fc / 1e9, X, st["family"][fams[0]][1],
                     "no cutoff" if fc == 0 else f"fc {fc / 1e9:.4g} GHz", f"mode-row-{g[0].index}"))
    bands = []
    if qb is not None:
        lo = 0.0 if qb.low == 0 else qb.low
        ratio = "TEM from DC" if not math.isfinite(qb.ratio) else f"{qb.ratio:.3g}:1"
        bands.append(("single-mode band", "band", lo / 1e9, qb.high / 1e9, st["band"],
                      f"{lo / 1e9:.4g} – {qb.high / 1e9:.4g} GHz ({ratio})", "single-mode-band"))
        if qb.recommended is not None:
            r1, r2 = qb.recommended
            bands.append(("recommended (rule of\nthumb 1.25 fc1 – 0.95 fc2)", "band", r1 / 1e9, r2 / 1e9, "#bcd8b4",
                          f"{r1 / 1e9:.4g} – {r2 / 1e9:.4g} GHz", "recommended-band"))
    if band is not None:
        bands.append(("analysis band", "band", b1 / 1e9, b2 / 1e9, "#c6d3e6",
                      f"{b1 / 1e9:.4g} – {b2 / 1e9:.4g} GHz", "analysis-band"))

    n = len(rows) + len(bands)
    fig = _new_figure(8.0, 1.3 + 0.36 * n + (0.3 if bands else 0.0))
    ax = fig.add_subplot(1, 1, 1)
    ys, labels = [], []
    y = 0.0
    placed = []
    for r in rows + [None] + bands:
        if r is None:
            y -= 0.5 if bands else 0.0
            continue
        placed.append((y, r))
        ys.append(y)
        labels.append(r[0])
        y -= 1.0
    if qb is not None:
        ax.axvspan(qb.low / 1e9, min(qb.high, f_max) / 1e9, color=st["band"], alpha=0.35, lw=0, zorder=0,
                   gid="single-mode-tint")
    ax.set_xlim(0.0, X)
    top_y = max(ys) + (1.0 if frequency is not None else 0.6)
    ax.set_ylim(min(ys) - 0.6, top_y)
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    per_px = X / max(ax.get_window_extent(renderer).width, 1.0)
    for y, (_, kind, lo, hi, colour, text, gid) in placed:
        hi_c = min(hi, X)
        h = 0.5 if kind == "mode" else 0.62
        bar = ax.barh(y, hi_c - lo, left=lo, height=h, color=colour,
                      edgecolor=st["band_edge"] if kind == "band" else "none", lw=0.6, zorder=2)
        bar.patches[0].set_gid(gid)
        probe = ax.text(0, 0, text, fontsize=8)
        tw = probe.get_window_extent(renderer).width * per_px
        probe.remove()
        pad = 6 * per_px
        if tw + 2 * pad <= hi_c - lo:              # fits inside the bar
            if kind == "mode":
                tx, ha = lo + pad, "left"
            else:
                tx, ha = 0.5 * (lo + hi_c), "center"
            colour_t, box = ("white" if kind == "mode" else st["text"]), colour
        elif hi_c + pad + tw <= X:                  # to the right of the bar
            tx, ha, colour_t, box = hi_c + pad, "left", st["text"], "white"
        else:                                       # to the left of the bar
            tx, ha, colour_t, box = lo - pad, "right", st["text"], "white"
        ax.text(tx, y, text, va="center", ha=ha, fontsize=8, color=colour_t, zorder=6, gid=f"{gid}-text",
                bbox=dict(boxstyle="square,pad=0.15", fc=box, ec="none"))
    if frequency is not None and frequency <= f_max:
        fx = frequency / 1e9
        ax.axvline(fx, color="#16202a", lw=1.1, ls=(0, (5, 2)), zorder=5, gid="analysis-frequency")
        ax.text(fx + 4 * per_px, top_y - 0.2, f"analysis frequency {fx:.4g} GHz", ha="left", va="center",
                fontsize=8, color="#16202a", gid="analysis-frequency-text", zorder=6,
                bbox=dict(boxstyle="square,pad=0.15", fc="white", ec="none", alpha=0.8))
    ax.set_yticks(ys)
    ax.set_yticklabels(labels, fontsize=8)
    ax.tick_params(axis="y", length=0)
    ax.tick_params(axis="x", labelsize=9)
    for side in ("left", "right", "top"):
        ax.spines[side].set_visible(False)
    ax.grid(axis="x", color="#d9dcdf", lw=0.6, zorder=-1)
    ax.set_axisbelow(True)
    more = f"  ({hidden} more cutoff{'s' if hidden > 1 else ''} above {X:.4g} GHz not shown)" if hidden else ""
    beyond = f"  (no modes computed above {top / 1e9:.4g} GHz)" if f_max > top and top > 0 else ""
    ax.set_xlabel("frequency (GHz)" + more + beyond, fontsize=9)
    section = getattr(modeset, "section", None)
    name = section.describe() if section is not None else "external mesh"
    import textwrap
    fig.suptitle("Where each mode propagates, and the bands of the guide", fontsize=11)
    ax.set_title("\n".join(textwrap.wrap(_unbreakable_units(name), 75)), fontsize=8.5, color=st["text"])
    if path is not None:
        _save(fig, path, dpi=dpi)
    return fig


def _cutoff_start(f, b2, k, cutoffs, used):
    """(fc, True) for curve ``k``: the cutoff (Hz) between its last evanescent sample and its first
    propagating one, taken from ``cutoffs`` (the guide's cutoff frequencies, matched to curves by
    that bracket; ``used`` the indices already taken), else estimated by a straight line of beta^2
    in f^2 through the two samples (beta^2 is nearly linear in k0^2 near a cutoff); None where the
    curve propagates from the first sample on or never."""
    ok = b2[:, k] > 0
    if not np.any(ok) or ok[0]:
        return None
    i = int(np.flatnonzero(ok)[0])
    lo, hi = f[i - 1], f[i]
    for j, fc in enumerate(cutoffs):
        if j not in used and lo <= fc <= hi:
            used.add(j)
            return float(fc)
    b_lo, b_hi = b2[i - 1, k], b2[i, k]
    return float(math.sqrt(lo ** 2 + (hi ** 2 - lo ** 2) * (-b_lo) / (b_hi - b_lo)))


def _spread(ys, gap, lo, hi):
    """Label heights ``ys`` (sorted ascending) pushed apart to at least ``gap`` and kept in
    [lo, hi] where there is room."""
    out = list(ys)
    for i in range(1, len(out)):
        out[i] = max(out[i], out[i - 1] + gap)
    if out and out[-1] > hi:
        out[-1] = hi
        for i in range(len(out) - 2, -1, -1):
            out[i] = min(out[i], out[i + 1] - gap)
    if out and out[0] < lo:
        out[0] = lo
        for i in range(1, len(out)):
            out[i] = max(out[i], out[i - 1] + gap)
    return out


def dispersion_chart(disp, path=None, *, section=None, eps_r=1.0, mu_r=1.0, labels=None, empty=None, cutoffs=None,
                     dpi=200):
    """beta against frequency for the tracked curves of a loaded guide (``femodes.dispersion``).

    Each curve is drawn where it propagates (beta^2 > 0), from beta = 0 at its cutoff when the
    cutoff lies inside the band: ``cutoffs`` are the guide's cutoff frequencies in Hz (e.g. the
    ``fc`` of the study's LoadedCutoffs), each matched to the curve whose last evanescent and first
    propagating samples bracket it; a curve without one gets its cutoff estimated by a straight line
    of beta^2 in f^2 through those two samples.  Between the cutoff and the first sample the curve
    follows beta^2 linear in f^2 (beta rises like a square root from the cutoff).  Every curve is
    labelled in the margin right of the band with its column number and its label (``labels``, else
    ``disp.labels``: e.g. 'hybrid from TE10'), or its family there when it has none, joined to its
    end by a short leader; the labels are spread apart vertically so that none overlaps another and
    none sits on a curve.  ``empty``, pairs (label, kc in rad/m) of modes of the
    empty guide (the section without its regions, filled with eps_r, mu_r), draws their
    beta = sqrt(k0^2 eps_r mu_r - kc^2) dotted for comparison (the phase a load adds); the light lines beta = k0 sqrt(eps_r mu_r) of the background
    fill and of every material region are drawn dashed (a guided mode lies below the highest
    one).  Where a tracked mode is a member of a complex pair (complex beta^2 below cutoff:
    complex modes), Re beta is drawn dash-dotted and |Im beta| (its attenuation, Np/m, on the
    same axis) dotted, in the curve's colour, once per pair and labelled.  Returns the Figure;
    saves it when ``path`` is given.
    """
    st = _style()
    f = np.asarray(disp.frequencies, dtype=float)
    b2c = np.asarray(disp.beta2)
    cplx = np.abs(b2c.imag) > 0
    b2 = np.where(cplx, -1.0, b2c.real)  # real curves where real (complex parts drawn apart below)
    fig = _new_figure(8.0, 5.0)
    ax = fig.add_subplot(1, 1, 1)
    fg = f / 1e9
    k0 = 2 * np.pi * f / 299792458.0
    media = {(float(eps_r), float(mu_r))}
    if section is not None:
        media |= {(m.eps_r, m.mu_r) for m in section.materials}
    ends = []  # (x end, y end, text, colour, gid, font size) of every right-hand label
    for eps, mu in sorted(media):
        ax.plot(fg, k0 * np.sqrt(eps * mu), ls="--", lw=0.9, color="#8a8f94", zorder=1, gid="light-line")
        ends.append((fg[-1], k0[-1] * np.sqrt(eps * mu), f"light line, eps_r = {eps:g}" + (f", mu_r = {mu:g}" if mu != 1 else ""),
                     "#5f6468", "light-line-label", 7.5))
    colours = [st["family"][k][1] for k in ("TE", "TM", "TEM")] + ["#6b4c9a", "#b5651d", "#2e7d32"]
    names = list(labels) if labels is not None else list(getattr(disp, "labels", ()) or ())
    given = [float(c) for c in (cutoffs or ()) if c is not None and math.isfinite(float(c))]
    used = set()
    for k in range(b2.shape[1]):
        ok = b2[:, k] > 0
        if not np.any(ok):
            continue
        beta = np.sqrt(np.where(ok, b2[:, k], np.nan))
        x, y = fg, beta
        fc = _cutoff_start(f, b2, k, given, used)
        if fc is not None:
            i = int(np.flatnonzero(ok)[0])
            ff = np.linspace(fc, f[i], 13)[:-1]  # beta^2 linear in f^2 from 0 at fc to the sample
            bb = np.sqrt(np.maximum(b2[i, k] * (ff ** 2 - fc ** 2) / (f[i] ** 2 - fc ** 2), 0.0))
            x = np.concatenate([ff / 1e9, fg[i:]])  # before i the curve is evanescent (not drawn)
            y = np.concatenate([bb, beta[i:]])
        c = colours[k % len(colours)]
        ax.plot(x, y, lw=1.8, color=c, zorder=3, gid=f"curve-{k + 1}")
        last = np.flatnonzero(ok)[-1]
        fam = disp.family[last, k] if np.ndim(disp.family) == 2 else ""
        name = names[k] if k < len(names) and names[k] else fam
        ends.append((fg[last], beta[last], f"{k + 1} ({name})", c, f"curve-label-{k + 1}", 8))
    drawn, top_c = [], 0.0
    for k in range(b2.shape[1]):
        if not np.any(cplx[:, k]):
            continue
        bc = np.sqrt(b2c[:, k].astype(complex))  # principal root: Re beta >= 0
        re = np.where(cplx[:, k], bc.real, np.nan)
        im = np.where(cplx[:, k], np.abs(bc.imag), np.nan)
        if any(np.allclose(re, d, equal_nan=True) for d in drawn):
            continue  # the conjugate member of a pair already drawn: same Re beta, same |Im beta|
        drawn.append(re)
        c = colours[k % len(colours)]
        ax.plot(fg, re, ls="-.", lw=1.6, color=c, zorder=3, marker=".", ms=3, gid="complex-re")
        ax.plot(fg, im, ls=":", lw=1.6, color=c, zorder=3, marker=".", ms=3, gid="complex-im")
        ok = np.flatnonzero(cplx[:, k])
        mid = ok[ok.size // 2]
        ax.annotate(f"{k + 1}: complex pair, Re beta", (fg[mid], re[mid]), xytext=(0, 5),
                    textcoords="offset points", ha="center", fontsize=7.5, color=c)
        ax.annotate(f"{k + 1}: complex pair, |Im beta| (Np/m)", (fg[mid], im[mid]), xytext=(0, 5),
                    textcoords="offset points", ha="center", fontsize=7.5, color=c)
        top_c = max(top_c, float(np.nanmax(re)), float(np.nanmax(im)))
    for lab, kc in (empty or ()):
        # closed form: drawn on a fine grid from beta = 0 at its cutoff (when inside the band)
        fc_e = float(kc) * 299792458.0 / (2 * np.pi * math.sqrt(float(eps_r) * float(mu_r)))
        fe = np.linspace(f[0], f[-1], 241)
        fe = np.unique(np.append(fe, fc_e)) if f[0] <= fc_e <= f[-1] else fe
        ke = 2 * np.pi * fe / 299792458.0
        eb2 = ke ** 2 * float(eps_r) * float(mu_r) - float(kc) ** 2
        eb2[np.isclose(fe, fc_e, rtol=1e-14, atol=0.0)] = 0.0
        ok = eb2 >= 0
        if np.any(ok) and np.any(eb2 > 0):
            eb = np.sqrt(np.where(ok, eb2, np.nan))
            ax.plot(fe / 1e9, eb, ls=":", lw=1.2, color="#6c7378", zorder=2, gid="empty-guide")
            last = np.flatnonzero(ok)[-1]
            ends.append((fe[last] / 1e9, eb[last], f"empty guide {lab}", "#5f6468", "empty-guide-label", 7.5))
    ax.set_xlabel("frequency (GHz)")
    ax.set_ylabel("beta (rad/m)")
    top = max(np.sqrt(max(e * m for e, m in media)) * k0[-1], np.sqrt(max(float(np.max(b2)), 0.0)), top_c)
    ax.set_ylim(0, 1.08 * top)
    _right_labels(fig, ax, fg, ends)
    ax.grid(color="#d9dcdf", lw=0.6)
    title = "Dispersion of the tracked modes"
    if section is not None:
        import textwrap
        title += "\n" + "\n".join(textwrap.wrap(section.describe(), 80))
    ax.set_title(title, fontsize=10)
    if path is not None:
        _save(fig, path, dpi=dpi)
    return fig


def _right_labels(fig, ax, fg, ends):
    """Labels of the curve ends in a margin right of the last frequency, as wide as the widest
    label, spread apart vertically and joined to their curve's end by a short leader: no label sits
    on a curve (the curves end at the last frequency) or on another label."""
    span = fg[-1] - fg[0]
    if not ends:
        ax.set_xlim(fg[0], fg[-1] + 0.05 * span)
        return
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    box = ax.get_window_extent(renderer)
    probes = [ax.text(0, 0, text, fontsize=size) for _, _, text, _, _, size in ends]
    sizes = [p.get_window_extent(renderer) for p in probes]
    for p in probes:
        p.remove()
    lead_px, pad_px = 14.0, 6.0
    margin = min(0.55 * box.width, max(b.width for b in sizes) + lead_px + pad_px)
    right = fg[-1] + span * margin / max(box.width - margin, 1.0)
    ax.set_xlim(fg[0], right)
    y0, y1 = ax.get_ylim()
    per_px_y = (y1 - y0) / max(box.height, 1.0)
    per_px_x = (right - fg[0]) / max(box.width, 1.0)
    gap = (max(b.height for b in sizes) + 2.0) * per_px_y
    order = sorted(range(len(ends)), key=lambda i: ends[i][1])
    ys = _spread([ends[i][1] for i in order], gap, y0 + 0.5 * gap, y1 - 0.5 * gap)
    x_text = fg[-1] + lead_px * per_px_x
    for i, y in zip(order, ys):
        xe, ye, text, colour, gid, size = ends[i]
        ax.annotate(text, (xe, ye), xytext=(x_text, y), textcoords="data", ha="left", va="center",
                    fontsize=size, color=colour, gid=gid, annotation_clip=False,
                    arrowprops=dict(arrowstyle="-", lw=0.6, color=colour, shrinkA=0, shrinkB=1))
