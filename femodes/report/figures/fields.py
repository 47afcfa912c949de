"""Field-pattern figures of single modes (homogeneous and loaded guides): colour by |E_t| (or |H_t|)
normalised to its peak, arrows on a regular grid, outline of the walls and of material regions.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from femodes.errors import FemodesError
from femodes.modes.loaded import LoadedMode
from femodes.report.figures.common import _ghz, _new_figure, _save, _style, safe_name
from femodes.report.figures.raster import fill_edges, sample_on_grid
from femodes.solvers.fields import _transverse


def _merge_points(x, y, tris, *values):
    """Merge the duplicated element-wise points of a sampling triangulation.

    Returns (x, y, triangles, values...) with every value averaged over the copies of a point.
    A triangulation without duplicates is what matplotlib's triangle finder needs, and shared
    points make the Gouraud colouring continuous across elements.
    """
    scale = max(float(np.ptp(x)), float(np.ptp(y)), 1e-300)
    key = np.round(np.column_stack([x, y]) / (scale * 1e-9)).astype(np.int64)
    _, first, inverse = np.unique(key, axis=0, return_index=True, return_inverse=True)
    inverse = inverse.ravel()
    n = first.size
    counts = np.bincount(inverse, minlength=n).astype(float)
    out = [x[first], y[first], inverse[tris]]
    for v in values:
        out.append(np.bincount(inverse, weights=v, minlength=n) / counts)
    t = out[2]
    px, py = out[0][t], out[1][t]
    area2 = (px[:, 1] - px[:, 0]) * (py[:, 2] - py[:, 0]) - (px[:, 2] - px[:, 0]) * (py[:, 1] - py[:, 0])
    keep = (t[:, 0] != t[:, 1]) & (t[:, 1] != t[:, 2]) & (t[:, 0] != t[:, 2]) & (np.abs(area2) > 1e-14 * scale ** 2)
    out[2] = t[keep]
    return tuple(out)


def _boundary_loops(points, tris, midpoints=None):
    """Closed boundary polylines of a triangulation: the edges used by exactly one triangle,
    chained into loops, the loop of largest extent first (the outer wall), then the holes.

    points (2, n), tris (m, 3); ``midpoints`` maps a sorted vertex pair to the true mid-point of a
    curved edge, inserted so that arcs are followed.
    """
    t = np.asarray(tris)
    e = np.sort(np.vstack([t[:, [0, 1]], t[:, [1, 2]], t[:, [2, 0]]]), axis=1)
    uniq, cnt = np.unique(e, axis=0, return_counts=True)
    edges = uniq[cnt == 1]
    nbrs = {}
    for a, b in edges:
        nbrs.setdefault(int(a), []).append(int(b))
        nbrs.setdefault(int(b), []).append(int(a))
    used = set()
    loops = []
    for a0, b0 in edges:
        a0, b0 = int(a0), int(b0)
        if (a0, b0) in used:
            continue
        chain = [a0]
        prev, cur = a0, b0
        used.add((min(a0, b0), max(a0, b0)))
        while cur != a0:
            chain.append(cur)
            nxt = None
            for c in nbrs[cur]:
                k = (min(cur, c), max(cur, c))
                if c != prev and k not in used:
                    nxt = c
                    break
            if nxt is None:
                break
            used.add((min(cur, nxt), max(cur, nxt)))
            prev, cur = cur, nxt
        pts = []
        for i, v in enumerate(chain):
            w = chain[(i + 1) % len(chain)]
            pts.append(points[:, v])
            if midpoints is not None:
                m = midpoints.get((min(v, w), max(v, w)))
                if m is not None:
                    pts.append(m)
        loops.append(np.array(pts).T)
    loops.sort(key=lambda p: -float(np.max(np.ptp(p, axis=1))))
    return loops


def _mesh_loops(mesh):
    """Outline loops of a femodes Mesh (boundary edges, curved edges through their mid-points)."""
    mids = {}
    ce = np.asarray(mesh.curved_edges)
    cm = np.asarray(mesh.curved_midpoints)
    for k in range(ce.shape[1] if ce.ndim == 2 else 0):
        a, b = int(ce[0, k]), int(ce[1, k])
        mids[(min(a, b), max(a, b))] = cm[:, k]
    return _boundary_loops(np.asarray(mesh.points, float), np.asarray(mesh.triangles).T, mids)


def _outline(section, mesh, sampled):
    """(outer, holes) polylines (2, n) in metres, from the exact section, else the mesh, else the
    boundary of the sampling triangulation (which follows curved elements)."""
    if section is not None:
        loops = [l.polyline(96) for l in section.loops]
    elif mesh is not None:
        loops = _mesh_loops(mesh)
    else:
        x, y, t = sampled
        loops = _boundary_loops(np.vstack([x, y]), t)
    return loops[0], loops[1:]


def field_samples(mode, subdivisions=None):
    """The data a field pattern is drawn from, as a dict of arrays (SI units).

    x, y (m) and triangles (k, 3): the plotting triangulation (elements subdivided so that curved
    edges are followed, duplicate points merged); psi: the longitudinal potential (E_z for TM, H_z
    for TE, the electrostatic potential for TEM); ex, ey, hx, hy: the transverse mode vectors
    normalised to ``int |e_t|^2 dA = 1`` (1/m), ``h_t = z x e_t``; magnitude: ``|e_t|``
    (= ``|h_t|``).  ``subdivisions`` per element edge defaults to about 40 000 plotting
    triangles in all (3 to 16 per edge).
    """
    fld = mode.potential
    if fld is None:
        raise FemodesError(f"mode {mode.label!r} carries no field data, so it cannot be plotted")
    if subdivisions is None:
        ne = int(fld.basis.mesh.t.shape[1])
        subdivisions = int(np.clip(round(math.sqrt(40000.0 / max(ne, 1))), 3, 16))
    x, y, t, psi, gx, gy = fld.sample(subdivisions=subdivisions)
    x, y, t, psi, gx, gy = _merge_points(np.asarray(x, float), np.asarray(y, float), np.asarray(t), psi, gx, gy)
    ex, ey, hx, hy = _transverse(mode.family, mode.kc, fld, gx, gy)
    return dict(x=x, y=y, t=t, triangles=t, psi=psi, ex=ex, ey=ey, hx=hx, hy=hy, magnitude=np.hypot(ex, ey))


def _title_lines(mode, modeset):
    fc = mode.fc
    head = f"{mode.label}   fc = {_ghz(fc):.4f} GHz"
    if mode.family == "TEM":
        head += " (no cutoff)"
    notes = []
    if mode.degenerate_with:
        parts = []
        for i in mode.degenerate_with:
            lab = None
            if modeset is not None and 0 <= i < len(modeset):
                lab = modeset[i].label
            elif mode.partner is not None and mode.partner.index == i:
                lab = mode.partner.label
            parts.append(f"mode {i + 1}, {lab}" if lab else f"mode {i + 1}")
        kind = getattr(mode, "degeneracy", "")
        notes.append("(degenerate with " + "; ".join(parts) + (f": {kind}" if kind else "") + ")")
    return head, notes


def _notes(mode, comps, peak, clip=None):
    """(panel titles, shared note): what each panel shows, and the normalisation and parity."""
    sym = mode.symmetry or {}
    par = ", ".join(f"{ax} {sym[ax]}" for ax in ("x", "y") if ax in sym)
    bits = [f"mode {mode.index + 1}"]
    if par and "mixed" not in par:
        pot = {"TE": "H_z", "TM": "E_z"}.get(mode.family, "potential")
        bits.append(f"${pot}$ {par}")
    if clip is None:
        bits.append(f"peak $|e_t|$ = {peak:.4g} m$^{{-1}}$ for $\\int|e_t|^2\\,dA = 1$")
        shared = "  ·  ".join(bits)
    else:
        bits.append("$\\int|e_t|^2\\,dA = 1$")
        shared = ("  ·  ".join(bits) + f"\ncolours clipped at {clip:.4g} m$^{{-1}}$ (99.5 % of the area below; "
                  f"corner max {peak:.3g} m$^{{-1}}$)")
    names = {"E": "transverse E: colour $|E_t|$, arrows $E_t$",
             "H": "transverse H: colour $|H_t|$, arrows $H_t$"}
    return [names[c] for c in comps], shared


def _area_quantile(data, values, q):
    """The value below which a fraction ``q`` of the cross-section's area lies (point values weighted
    by a third of the area of their triangles, so that mesh grading does not bias it)."""
    x, y, t = data["x"], data["y"], data["t"]
    px, py = x[t], y[t]
    area = 0.5 * np.abs((px[:, 1] - px[:, 0]) * (py[:, 2] - py[:, 0]) - (px[:, 2] - px[:, 0]) * (py[:, 1] - py[:, 0]))
    w = np.bincount(t.ravel(), weights=np.repeat(area / 3.0, 3), minlength=x.size)
    order = np.argsort(values)
    cw = np.cumsum(w[order])
    k = int(np.searchsorted(cw, q * cw[-1]))
    return float(values[order[min(k, order.size - 1)]])


def _grid(xmin, xmax, ymin, ymax, density):
    """A regular grid of about ``density`` points along the larger extent, its outermost rows
    0.6 cell from the bounding box (so that arrows clear straight walls) and its cells square to
    within a few per cent.  Returns (xs, ys, cell size)."""
    w, h = xmax - xmin, ymax - ymin
    d = max(w, h) / float(density)
    axes = []
    for lo, ext in ((xmin, w), (ymin, h)):
        if ext < 2.2 * d:                       # too thin for two rows: one row on the centre line
            axes.append((np.array([lo + 0.5 * ext]), d))
            continue
        n = max(2, int(round((ext - 1.2 * d) / d)) + 1)
        n += 1 - n % 2      # an odd count puts a row on the centre line (centred ridge gaps, septa)
        step = (ext - 1.2 * d) / (n - 1)
        axes.append((lo + 0.6 * d + step * np.arange(n), step))
    (xs, sx), (ys, sy) = axes
    return xs, ys, min(sx, sy)


def _ccw(x, y):
    return float(np.sum(x * np.roll(y, -1) - np.roll(x, -1) * y)) > 0


def _wall_distance(px, py, loops):
    """Distance of points (px, py) to the nearest segment of any closed polyline in ``loops``."""
    best = np.full(px.shape, np.inf)
    for p in loops:
        a = p
        b = np.roll(p, -1, axis=1)
        ab = b - a
        L2 = np.maximum(np.sum(ab * ab, axis=0), 1e-300)
        wx = px[:, None] - a[0][None, :]
        wy = py[:, None] - a[1][None, :]
        s = np.clip((wx * ab[0] + wy * ab[1]) / L2, 0.0, 1.0)
        dx = wx - s * ab[0]
        dy = wy - s * ab[1]
        best = np.minimum(best, np.sqrt(np.min(dx * dx + dy * dy, axis=1)))
    return best


def _draw_panel(ax, data, comp, outer, holes, *, arrows, lines, density, cmap, vmax, note, pixels=900):
    """One colour map + arrows + outline panel on ``ax``; returns the colour mappable."""
    from matplotlib.patches import PathPatch, Polygon
    from matplotlib.path import Path as MPath

    st = _style()
    mm = 1e3
    x, y, t = data["x"] * mm, data["y"] * mm, data["t"]
    u, v = (data["ex"], data["ey"]) if comp == "E" else (data["hx"], data["hy"])
    ox, oy = outer[0] * mm, outer[1] * mm
    xmin, xmax, ymin, ymax = ox.min(), ox.max(), oy.min(), oy.max()
    # the colours: one image of the linear interpolant on a grid of about ``pixels`` along the
    # larger extent (the plotting triangulation is much finer than a pixel near graded corners)
    step = max(xmax - xmin, ymax - ymin) / float(pixels)
    gx = np.arange(xmin + 0.5 * step, xmax, step)
    gy = np.arange(ymin + 0.5 * step, ymax, step)
    # the vector is interpolated and its length taken per pixel (a zero of the field stays a zero)
    gu, gv = sample_on_grid(x, y, t, [u / vmax, v / vmax], gx, gy)
    img = np.ma.masked_invalid(fill_edges(np.minimum(np.hypot(gu, gv), 1.0)))
    pc = ax.imshow(img, origin="lower", extent=(gx[0] - 0.5 * step, gx[-1] + 0.5 * step, gy[0] - 0.5 * step,
                                                gy[-1] + 0.5 * step),
                   cmap=cmap, vmin=0.0, vmax=1.0, interpolation="bilinear", zorder=1)
    pc.set_gid(f"magnitude-{comp}")

    if arrows or lines:
        xs, ys, d = _grid(xmin, xmax, ymin, ymax, density)
        X, Y = np.meshgrid(xs, ys)
        U, V = sample_on_grid(x, y, t, [u / vmax, v / vmax], xs, ys)
        U = np.ma.masked_invalid(U)
        V = np.ma.masked_invalid(V)
        inside = ~(np.ma.getmaskarray(U) | np.ma.getmaskarray(V))
        if lines:
            sp = ax.streamplot(xs, ys, U, V, density=max(0.6, density / 22.0), color=st["stream"],
                               linewidth=0.7, arrowsize=0.0 if arrows else 0.7,
                               arrowstyle="-" if arrows else "-|>", broken_streamlines=True)
            sp.lines.set_gid(f"field-lines-{comp}")
            sp.lines.set_alpha(0.75)
        if arrows:
            A = np.hypot(U.filled(0.0), V.filled(0.0))
            L = 0.75 * d
            keep = inside & (A > 0.02)
            # length grows like sqrt(|E|): weak-field regions still show their direction, and the
            # colour map carries the magnitude; lengths clip where the colours clip
            length = L * np.sqrt(np.minimum(A, 1.0))
            # an arrow whose tip would come closer than a tenth of a cell to a wall is shortened to
            # fit (narrow gaps keep their arrows), or left out if it would lose over half its length
            room = np.full(A.shape, np.inf)
            room[keep] = 2.0 * (_wall_distance(X[keep], Y[keep], [outer * mm] + [h * mm for h in holes])
                                - 0.1 * d)
            fitted = np.minimum(length, room)
            keep &= fitted >= 0.5 * length
            scale = fitted / np.where(A > 0, A * L, 1.0)
            qu = (U.filled(0.0) * scale * L)[keep]
            qv = (V.filled(0.0) * scale * L)[keep]
            q = ax.quiver(X[keep], Y[keep], qu, qv, angles="xy", scale_units="xy", scale=1.0,
                          pivot="middle", color=st["arrow"], edgecolor=st["arrow_edge"], linewidth=0.35,
                          width=0.0036, headwidth=3.4, headlength=3.8, headaxislength=3.3, minlength=0.0,
                          zorder=3)
            q.set_gid(f"arrows-{comp}")

    pad = 0.04 * max(xmax - xmin, ymax - ymin)
    bx0, bx1, by0, by1 = xmin - pad, xmax + pad, ymin - pad, ymax + pad
    big = 4.0 * pad + max(xmax - xmin, ymax - ymin)        # a frame well beyond the axes limits
    frame = np.array([[xmin - big, ymin - big], [xmax + big, ymin - big], [xmax + big, ymax + big],
                      [xmin - big, ymax + big], [xmin - big, ymin - big]])
    loop = np.column_stack([ox, oy])
    if _ccw(ox, oy):
        loop = loop[::-1]                                    # opposite turn: the wall's inside is a hole
    wall = np.vstack([frame, loop, loop[:1]])
    codes = ([MPath.MOVETO] + [MPath.LINETO] * 3 + [MPath.CLOSEPOLY] +
             [MPath.MOVETO] + [MPath.LINETO] * (loop.shape[0] - 1) + [MPath.CLOSEPOLY])
    # add_artist: the frame reaches far beyond the axes limits (set below) and must not widen them
    ax.add_artist(PathPatch(MPath(wall, codes), facecolor=st["metal"], edgecolor="none", zorder=4,
                            gid="outer-metal", transform=ax.transData))
    ax.plot(np.append(ox, ox[0]), np.append(oy, oy[0]), color=st["outline"], lw=st["outline_width"],
            solid_joinstyle="round", zorder=5, gid="outline")
    for k, h in enumerate(holes):
        ax.add_patch(Polygon((h * mm).T, closed=True, facecolor=st["conductor"], edgecolor=st["outline"],
                             lw=st["outline_width"], zorder=4, gid=f"conductor-{k + 1}"))
    ax.set_xlim(bx0, bx1)
    ax.set_ylim(by0, by1)
    ax.set_aspect("equal")
    ax.set_xlabel("x (mm)")
    ax.set_ylabel("y (mm)")
    ax.tick_params(labelsize=8)
    ax.set_title(note, fontsize=8, color=st["text"])
    return pc


def _fixed_layout(fig, axes, title_lines, foot_lines):
    """Place the equal-aspect panels and the colour bar of a field pattern by hand; returns the
    colour bar's Axes.  Margins in inches from the font sizes (suptitle lines of 12 pt, the panel
    note above each panel, tick labels and axis labels, ``foot_lines`` of 8 pt below), the panels
    as large as the figure allows at the data's aspect, and the figure trimmed to them.  A layout
    engine found the same places by measuring every text on a full extra drawing pass, about a
    quarter of the figure's time (benchmarks/bench_figures.py)."""
    line = 1.25 / 72.0                                   # inches per point of font size, with leading
    ax0 = axes[0]
    tick = ax0.xaxis.get_major_ticks()[0].label1.get_fontsize()
    label = ax0.xaxis.label.get_fontsize()
    note_lines = max(a.get_title().count("\n") + 1 if a.get_title() else 0 for a in axes)
    top = 0.1 + title_lines * 12 * line + 0.08 + note_lines * 8 * line + 0.06
    bottom = 0.1 + tick * line + label * line + 0.12 + foot_lines * 8 * line
    y0, y1 = ax0.get_ylim()
    width_chars = max(len(f"{v:g}") for v in ax0.get_yticks() if y0 <= v <= y1)
    left = 0.12 + label * line + width_chars * 0.62 * tick / 72.0 + 0.12
    gap = left                                           # the next panel's own tick and axis labels
    right = 0.12 + 0.14 + 0.1 + 3 * 0.62 * 8 / 72.0 + 9 * line + 0.12  # pad, bar, ticks "0.8", label
    n = len(axes)
    W, H = fig.get_figwidth(), fig.get_figheight()
    x0, x1 = ax0.get_xlim()
    aspect = (y1 - y0) / (x1 - x0)
    pw = min((W - left - right - (n - 1) * gap) / n, (H - top - bottom) / aspect)
    ph = pw * aspect
    W, H = left + n * pw + (n - 1) * gap + right, top + ph + bottom
    fig.set_size_inches(W, H)
    for i, a in enumerate(axes):
        a.set_position([(left + i * (pw + gap)) / W, bottom / H, pw / W, ph / H])
    return fig.add_axes([(left + n * pw + (n - 1) * gap + 0.12) / W, bottom / H, 0.14 / W, ph / H])


def field_pattern(mode, path=None, *, show="E", section=None, mesh=None, modeset=None, ax=None,
                  arrows=True, lines=False, density=18, cmap=None, subdivisions=None, dpi=200):
    """Field-pattern figure of one mode; returns the :class:`matplotlib.figure.Figure`.

    What is plotted: the transverse mode vector of ``mode`` with the normalisation of
    :mod:`femodes.modes` (``int |e_t|^2 dA = 1`` over the cross-section, units 1/m;
    ``h_t = z x e_t``).  The colour map is ``|e_t|`` (``show="E"``), ``|h_t|`` (``show="H"``)
    or both panels side by side (``show="EH"``), divided by its peak so that it runs from 0 to 1
    (colour bar "... (normalised to peak)"); the peak of the power-normalised vector is printed
    above the panel.  If a corner singularity makes the peak much larger than the bulk of the
    field (more than 1.5 times the level below which 99.5 % of the area lies), the colours are
    clipped at that level (colour bar with a pointed end, "normalised to clip level", both values
    printed) so that the rest of the pattern stays visible.  ``|h_t| = |e_t|`` everywhere, so the H panel has the same
    colours as the E panel; its arrows are turned by 90 degrees.

    arrows : direction arrows on a regular grid (about ``density`` along the larger extent),
             length proportional to the local magnitude (the longest 0.75 cell), weak-field
             arrows (< 2 % of the colour scale) left out, lengths grow like sqrt(|E|); an arrow whose tip would come within
             a tenth of a cell of a wall is shortened to fit (so narrow gaps keep theirs) or
             left out if it would lose more than half its length.  Values come from the
             plotting triangulation by linear interpolation.
    density : arrows (and grid points of the field lines) along the larger extent, 3 .. 200.
    cmap   : a matplotlib colour map name (default "cividis", perceptually uniform).
    subdivisions : plotting points per element edge (default: about 40 000 triangles in all).
    lines  : also draw field lines (streamlines of the same vector field).
    section, mesh, modeset : where the outline comes from.  A Mode does not know its ModeSet,
             so pass ``section=ms.section`` (or ``modeset=ms``, which also names degenerate
             partners in the title).  Without a section the mesh's boundary edges are drawn, and
             without either the boundary of the plotting triangulation.  Inner conductors are
             filled grey, the wall drawn as a solid dark line.
    ax     : draw into this Axes (or a pair of Axes for ``show="EH"``) instead of a new figure.
    path   : if given, the figure is also written there; the format follows the suffix
             (.png at ``dpi``, .svg, .pdf).  The Figure is returned either way.

    The title is ``"<label>   fc = <GHz> GHz"`` plus ``"(degenerate with mode k, <label>)"`` for
    a member of a degenerate group (k 1-based, as in the file names of :func:`field_patterns`).
    Around the guide the wall metal is tinted light grey.  Axes are in millimetres, equal aspect.
    """
    if isinstance(mode, LoadedMode):  # one entry for every guide: a loaded mode's own drawing
        return loaded_field_pattern(mode, path, section=section, arrows=arrows, density=density, cmap=cmap,
                                    subdivisions=subdivisions or 3, dpi=dpi)
    show = str(show).upper()
    if show not in ("E", "H", "EH"):
        raise FemodesError(f"show must be 'E', 'H' or 'EH', got {show!r}")
    if modeset is not None:
        section = section if section is not None else getattr(modeset, "section", None)
        mesh = mesh if mesh is not None else getattr(modeset, "mesh", None)
    try:
        density = float(density)
    except (TypeError, ValueError):
        raise FemodesError(f"density must be a number of arrows along the larger side, got {density!r}") from None
    if not 3 <= density <= 200:
        raise FemodesError(f"density must lie between 3 and 200 arrows along the larger side, got {density!r}")
    st = _style()
    cmap = cmap or st["cmap"]
    data = field_samples(mode, subdivisions)
    outer, holes = _outline(section, mesh, (data["x"], data["y"], data["t"]))

    mag = data["magnitude"]
    peak = float(np.max(mag)) if mag.size else 0.0
    if not (np.all(np.isfinite(mag)) and peak > 0):
        raise FemodesError(f"mode {mode.label!r} has no finite non-zero transverse field to plot")
    bulk = _area_quantile(data, mag, 0.995)
    clipped = peak > 1.5 * bulk
    vmax = bulk if clipped else peak

    comps = ["E", "H"] if show == "EH" else [show]
    head, notes = _title_lines(mode, modeset)
    extra_lines = len(notes) + (1 if clipped else 0)
    w = float(np.ptp(outer[0]))
    h = float(np.ptp(outer[1]))
    aspect = min(max(h / w, 0.3), 1.6)
    if ax is None:
        panel_w = 5.2 if len(comps) == 1 else 4.4
        fig = _new_figure(panel_w * len(comps) + 1.1,
                          panel_w * aspect + (1.1 if len(comps) == 1 else 1.2) + 0.2 * extra_lines,
                          layout=None)  # placed by _fixed_layout
        axes = [fig.add_subplot(1, len(comps), i + 1) for i in range(len(comps))]
        own = True
    else:
        axes = list(ax) if isinstance(ax, (list, tuple, np.ndarray)) else [ax]
        if len(axes) != len(comps):
            raise FemodesError(f"show={show!r} needs {len(comps)} Axes, got {len(axes)}")
        fig = axes[0].figure
        own = False

    pc = None
    panel_notes, shared = _notes(mode, comps, peak, vmax if clipped else None)
    for a, comp, pn in zip(axes, comps, panel_notes):
        note = shared if len(comps) == 1 else pn
        pc = _draw_panel(a, data, comp, outer, holes, arrows=arrows, lines=lines, density=density,
                         cmap=cmap, vmax=vmax, note=note)
    if len(comps) > 1 and own:
        fig.supxlabel(shared, fontsize=8, color=st["text"])
    what = {"E": "$|E_t|$", "H": "$|H_t|$", "EH": "$|E_t| = |H_t|$"}[show]
    title = "\n".join([head] + notes)
    cax = _fixed_layout(fig, axes, 1 + len(notes), shared.count("\n") + 1 if len(comps) > 1 else 0) if own else None
    if cax is not None:
        cb = fig.colorbar(pc, cax=cax, extend="max" if clipped else "neither")
    else:
        cb = fig.colorbar(pc, ax=axes, shrink=1.0, pad=0.02, aspect=25, extend="max" if clipped else "neither")
    cb.set_label(f"{what} (normalised to {'clip level' if clipped else 'peak'})", fontsize=9)
    cb.ax.tick_params(labelsize=8)

    if own:
        fig.suptitle(title, fontsize=12, fontweight="bold" if not notes else "normal", y=1.0 - 0.06 / fig.get_figheight())
    else:
        extra = [shared] if len(comps) > 1 else []
        axes[0].set_title("\n".join([title] + extra + [axes[0].get_title()]), fontsize=9)
    if path is not None:
        _save(fig, path, dpi=dpi)
    return fig


def field_patterns(modeset, directory, fmt="png", count=None, show="E", **options):
    """Write one field-pattern file per mode of ``modeset`` into ``directory`` (a ModeSet, or the
    modes of a loaded guide at a frequency: any sequence of modes, drawn by :func:`field_pattern`).

    Files are named ``mode01_TE10.png``, ``mode02_TE11.png``, ... (1-based position in the set,
    label made file-name safe by :func:`safe_name`).  ``count`` limits the number of modes (the
    lowest cutoffs first); ``fmt`` is 'png', 'svg' or 'pdf'; other keyword options go to
    :func:`field_pattern` (the outline comes from the set's section or mesh).  Returns the list of
    written paths.
    """
    fmt = str(fmt).lower().lstrip(".")
    if fmt not in ("png", "svg", "pdf"):
        raise FemodesError(f"fmt must be 'png', 'svg' or 'pdf', got {fmt!r}")
    n = len(modeset) if count is None else int(count)
    if n < 0 or (count is not None and n != count):
        raise FemodesError(f"count must be a whole number >= 0, got {count!r}")
    directory = Path(directory)
    directory.mkdir(parents=True, exist_ok=True)
    width = max(2, len(str(len(modeset))))
    out = []
    for mode in list(modeset)[:n]:
        p = directory / f"mode{mode.index + 1:0{width}d}_{safe_name(mode.label)}.{fmt}"
        if isinstance(mode, LoadedMode):
            field_pattern(mode, p, **options)
        else:
            field_pattern(mode, p, show=show, modeset=modeset, **options)
        out.append(p)
    return out


def loaded_field_pattern(mode, path=None, *, section=None, arrows=True, density=18, cmap=None,
                         subdivisions=3, dpi=200):
    """Field pattern of one mode of a loaded guide (:class:`femodes.loaded.LoadedMode`).

    Colour: ``|E_t|`` normalised to its peak; arrows: ``E_t`` (real: the transverse field of a
    lossless guided mode has one phase, E_z is in quadrature with it).  The mode is normalised
    with int (|E_t|^2 + |E_z|^2) dA = 1 (femodes.vector).  The material regions of ``section`` are
    outlined dashed and marked with their eps_r; ``E_t``'s normal component jumps across them
    (normal D is continuous), which the colours show.  The title gives the label, the frequency,
    beta and the longitudinal shares.  Sampled on the solution mesh, each element cut into
    ``subdivisions^2`` triangles (:meth:`femodes.vector.VectorProblem.sample`).  Returns the Figure; saves it when ``path`` is given.
    """
    vm = getattr(mode, "vector", mode)
    skm = vm.problem.mesh
    x, y, t, F = vm.problem.sample(vm, subdivisions)
    # shared points averaged (matplotlib's triangle finder needs a valid triangulation): the
    # jump of normal E at an interface then spans one sub-triangle on each side
    x, y, t, ex, ey = _merge_points(x, y, t, np.real(F[0]), np.real(F[1]))
    data = dict(x=x, y=y, t=t, ex=ex, ey=ey, hx=ex, hy=ey, magnitude=np.hypot(ex, ey))
    st = _style()
    if section is not None and not hasattr(section, "loops"):
        section = None  # a mesh file (femodes.Mesh): outline from the mesh, its groups not drawn
    if section is None:
        loops = _boundary_loops(np.vstack([skm.p[0], skm.p[1]]), skm.t[:3].T)
        outer, holes = loops[0], loops[1:]
    else:
        outer, holes = section.loops[0].polyline(96), [l.polyline(96) for l in section.loops[1:]]
    peak = float(np.max(data["magnitude"]))
    if not peak > 0:
        raise FemodesError(f"mode {getattr(mode, 'label', '')!r} has no transverse field to plot")
    w = float(np.ptp(outer[0]))
    h = float(np.ptp(outer[1]))
    aspect = min(max(h / w, 0.3), 1.6)
    fig = _new_figure(6.3, 5.2 * aspect + 1.3)
    ax = fig.add_subplot(1, 1, 1)
    def share(v):
        return "0" if abs(v) < 1e-12 else f"{v:.3g}"

    note = (f"$E_z$ share {share(vm.e_share)}, $H_z$ share {share(vm.h_share)} of the electric / magnetic energy"
            f"  ·  peak $|E_t|$ = {peak:.4g} m$^{{-1}}$")
    pc = _draw_panel(ax, data, "E", outer, holes, arrows=arrows, lines=False, density=density,
                     cmap=cmap or st["cmap"], vmax=peak, note=note)
    if section is not None:
        for m in section.materials:
            for loop in (m.region,) + tuple(m.holes):
                q = loop.polyline(96) * 1e3
                ax.plot(np.append(q[0], q[0, 0]), np.append(q[1], q[1, 0]), ls="--", lw=1.1,
                        color="#f28e2b", zorder=4.5, gid="material-outline")
            c = m.region.polyline(96).mean(axis=1) * 1e3
            ax.annotate(m.name or f"eps_r = {m.eps_r:g}", (c[0], c[1]), fontsize=7.5, color="#f28e2b",
                        ha="center", va="center", zorder=6,
                        bbox=dict(boxstyle="round,pad=0.2", fc="white", ec="none", alpha=0.7))
    cb = fig.colorbar(pc, ax=[ax], shrink=1.0, pad=0.02, aspect=25)
    cb.set_label("$|E_t|$ (normalised to peak)", fontsize=9)
    cb.ax.tick_params(labelsize=8)
    label = getattr(mode, "label", vm.family)
    beta = math.sqrt(vm.beta2) if vm.beta2 > 0 else float("nan")
    fig.suptitle(f"{label}   f = {_ghz(vm.frequency):.4g} GHz,  beta = {beta:.5g} rad/m", fontsize=12)
    if path is not None:
        _save(fig, path, dpi=dpi)
    return fig
