"""Figures: field patterns of single modes and a cutoff-frequency chart of a mode set.

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

from __future__ import annotations

import math
import re
from pathlib import Path

import numpy as np

from femodes import quantities as Q
from femodes.errors import FemodesError, positive_number
from femodes.modes.loaded import LoadedMode
from femodes.quantities import conductivity_of
from femodes.report.analysis import reliable_attenuation
from femodes.solvers.fields import _transverse

__all__ = ["field_pattern", "field_patterns", "field_samples", "mode_chart", "attenuation_chart", "band_chart",
           "dispersion_chart", "loaded_field_pattern", "safe_name"]


def _style():
    """The house style: colours and sizes (a function, so nothing is module-level state)."""
    return {
        "cmap": "cividis",          # perceptually uniform, readable in grey and by colour-blind readers
        "outline": "#16202a",       # near-black slate for the metal wall
        "outline_width": 1.8,
        "conductor": "#a3a7ab",     # inner conductors: brushed-metal grey
        "metal": "#dfe1e3",         # the wall material around the guide: a lighter grey
        "arrow": "#ffffff",
        "arrow_edge": "#1a1a1a",
        "stream": "#f4f1ea",
        "family": {                 # marker shape and colour per family (mode chart)
            "TE": ("o", "#1d6f8a"),
            "TM": ("s", "#c0562f"),
            "TEM": ("D", "#5a3f87"),
        },
        "band": "#f0dfa6",
        "band_edge": "#b08a1e",
        "text": "#333333",
    }


# ----------------------------------------------------------------------------- small helpers

def safe_name(label):
    """A file-name-safe form of a mode label: 'TE1 (x odd, y even)' -> 'TE1_x-odd_y-even'."""
    s = str(label).strip()
    s = re.sub(r"\(([^)]*)\)", lambda m: "_" + m.group(1), s)        # bracketed part -> suffix
    s = re.sub(r"\s*,\s*", "_", s)                                      # list separators
    s = re.sub(r"\s+", "-", s)                                          # words inside a part
    s = re.sub(r"[^A-Za-z0-9_.+-]", "", s)
    s = re.sub(r"_[-_]+|-[-_]+", "_", s).strip("_-.")
    return s or "mode"


def _new_figure(width, height):
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width, height), layout="compressed")
    FigureCanvasAgg(fig)
    return fig


def _save(fig, path, dpi=200):
    """Save ``fig`` to ``path``; the format follows the suffix (.png, .svg, .pdf)."""
    path = Path(path)
    fmt = path.suffix.lower().lstrip(".")
    if fmt not in ("png", "svg", "pdf"):
        raise FemodesError(f"cannot save a figure as {path.name!r}: use a .png, .svg or .pdf file name")
    path.parent.mkdir(parents=True, exist_ok=True)
    kw = {"dpi": dpi} if fmt == "png" else {"dpi": 150}   # dpi of the embedded colour image in svg/pdf
    meta = {"Creator": "femodes"} if fmt in ("svg", "pdf") else {"Software": "femodes"}
    fig.savefig(path, format=fmt, metadata=meta, **kw)
    return path


def _ghz(f):
    return f / 1e9


# ----------------------------------------------------------------------------- geometry

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


# ----------------------------------------------------------------------------- field pattern

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
        notes.append("(degenerate with " + "; ".join(parts) + ")")
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


def _draw_panel(ax, data, comp, outer, holes, *, arrows, lines, density, cmap, vmax, note):
    """One colour map + arrows + outline panel on ``ax``; returns the colour mappable."""
    import matplotlib.tri as mtri
    from matplotlib.patches import PathPatch, Polygon
    from matplotlib.path import Path as MPath

    st = _style()
    mm = 1e3
    x, y, t = data["x"] * mm, data["y"] * mm, data["t"]
    u, v = (data["ex"], data["ey"]) if comp == "E" else (data["hx"], data["hy"])
    mag = np.hypot(u, v)
    tri = mtri.Triangulation(x, y, t)
    shown = np.minimum(mag / vmax, 1.0)
    pc = ax.tripcolor(tri, shown, shading="gouraud", cmap=cmap, vmin=0.0, vmax=1.0, rasterized=True)
    pc.set_gid(f"magnitude-{comp}")

    ox, oy = outer[0] * mm, outer[1] * mm
    xmin, xmax, ymin, ymax = ox.min(), ox.max(), oy.min(), oy.max()
    if arrows or lines:
        xs, ys, d = _grid(xmin, xmax, ymin, ymax, density)
        X, Y = np.meshgrid(xs, ys)
        finder = tri.get_trifinder()
        U = mtri.LinearTriInterpolator(tri, u / vmax, trifinder=finder)(X, Y)
        V = mtri.LinearTriInterpolator(tri, v / vmax, trifinder=finder)(X, Y)
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
    ax.add_patch(PathPatch(MPath(wall, codes), facecolor=st["metal"], edgecolor="none", zorder=4,
                           gid="outer-metal"))
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
                          panel_w * aspect + (1.1 if len(comps) == 1 else 1.2) + 0.2 * extra_lines)
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
    cb = fig.colorbar(pc, ax=axes, shrink=1.0, pad=0.02, aspect=25, extend="max" if clipped else "neither")
    cb.set_label(f"{what} (normalised to {'clip level' if clipped else 'peak'})", fontsize=9)
    cb.ax.tick_params(labelsize=8)

    title = "\n".join([head] + notes)
    if own:
        fig.suptitle(title, fontsize=12, fontweight="bold" if not notes else "normal")
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


# ----------------------------------------------------------------------------- mode chart

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


# ----------------------------------------------------------------------------- attenuation against frequency

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


# ----------------------------------------------------------------------------- band chart

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


# ----------------------------------------------------------------------------- dispersion

def dispersion_chart(disp, path=None, *, section=None, eps_r=1.0, mu_r=1.0, labels=None, empty=None, dpi=200):
    """beta against frequency for the tracked curves of a loaded guide (``femodes.dispersion``).

    Each curve is drawn where it propagates (beta^2 > 0) and labelled at its right end with its
    column number and its label (``labels``, else ``disp.labels``: e.g. 'hybrid from TE10'), or
    its family there when it has none; ``empty``, pairs (label, kc in rad/m) of modes of the
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
    for eps, mu in sorted(media):
        ax.plot(fg, k0 * np.sqrt(eps * mu), ls="--", lw=0.9, color="#8a8f94", zorder=1)
        ax.annotate(f"light line, eps_r = {eps:g}" + (f", mu_r = {mu:g}" if mu != 1 else ""),
                    (fg[-1], k0[-1] * np.sqrt(eps * mu)), xytext=(-4, 4), textcoords="offset points",
                    ha="right", va="bottom", fontsize=7.5, color="#5f6468")
    colours = [st["family"][k][1] for k in ("TE", "TM", "TEM")] + ["#6b4c9a", "#b5651d", "#2e7d32"]
    names = list(labels) if labels is not None else list(getattr(disp, "labels", ()) or ())
    for k in range(b2.shape[1]):
        ok = b2[:, k] > 0
        if not np.any(ok):
            continue
        beta = np.sqrt(np.where(ok, b2[:, k], np.nan))
        c = colours[k % len(colours)]
        ax.plot(fg, beta, lw=1.8, color=c, zorder=3)
        last = np.flatnonzero(ok)[-1]
        fam = disp.family[last, k] if np.ndim(disp.family) == 2 else ""
        name = names[k] if k < len(names) and names[k] else fam
        ax.annotate(f"{k + 1} ({name})", (fg[last], beta[last]), xytext=(4, 0), textcoords="offset points",
                    va="center", fontsize=8, color=c)
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
        eb2 = k0 ** 2 * float(eps_r) * float(mu_r) - float(kc) ** 2
        ok = eb2 > 0
        if np.any(ok):
            eb = np.sqrt(np.where(ok, eb2, np.nan))
            ax.plot(fg, eb, ls=":", lw=1.2, color="#6c7378", zorder=2, gid="empty-guide")
            last = np.flatnonzero(ok)[-1]
            ax.annotate(f"empty guide {lab}", (fg[last], eb[last]), xytext=(4, -9), textcoords="offset points",
                        va="center", fontsize=7.5, color="#5f6468")
    ax.set_xlabel("frequency (GHz)")
    ax.set_ylabel("beta (rad/m)")
    ax.set_xlim(fg[0], fg[-1] + 0.12 * (fg[-1] - fg[0]))
    top = max(np.sqrt(max(e * m for e, m in media)) * k0[-1], np.sqrt(max(float(np.max(b2)), 0.0)), top_c)
    ax.set_ylim(0, 1.08 * top)
    ax.grid(color="#d9dcdf", lw=0.6)
    title = "Dispersion of the tracked modes"
    if section is not None:
        import textwrap
        title += "\n" + "\n".join(textwrap.wrap(section.describe(), 80))
    ax.set_title(title, fontsize=10)
    if path is not None:
        _save(fig, path, dpi=dpi)
    return fig


# ----------------------------------------------------------------------------- loaded guides

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

