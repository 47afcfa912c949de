"""Benchmark: field-pattern figures, the raster colour path and fixed layout against the earlier
triangle path and layout engine.

The earlier path drew the colours as a Gouraud-shaded triangle mesh (``Axes.tripcolor``, one
path per plotting triangle, about 40 000) and read the arrows through matplotlib's triangle
finder, and placed the panels with matplotlib's compressed layout engine (an extra drawing pass
that measures every text); the current one samples the same piecewise-linear field on a pixel
grid (``femodes.report.figures.raster``), draws one image, and places the panels by hand
(``fields._fixed_layout``).  Both run here, in one process, on
the same modes of the bundled double-ridge example, and the ratio of their times is printed
(the target of the figures item: at least 3x).  Then the whole example as the command line runs
it (solve + report + figures), with each figure path, and that ratio too.

Speed targets are ratios measured in the same run (shared machines are noisy); nothing here is a
timed test.

    python benchmarks/bench_figures.py
"""

from __future__ import annotations

import contextlib
import io
import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

import femodes
from femodes.cli import main
from femodes.report.figures import fields as F

EXAMPLE = Path(__file__).resolve().parent.parent / "examples" / "double_ridge_feed.toml"


def triangle_panel(ax, data, comp, outer, holes, *, arrows, lines, density, cmap, vmax, note, pixels=None):
    """The earlier colour path (baseline): tripcolor + triangle-finder interpolation of the arrows.
    Outline, wall and labels as the current panel draws them."""
    import matplotlib.tri as mtri

    mm = 1e3
    x, y, t = data["x"] * mm, data["y"] * mm, data["t"]
    u, v = (data["ex"], data["ey"]) if comp == "E" else (data["hx"], data["hy"])
    tri = mtri.Triangulation(x, y, t)
    pc = ax.tripcolor(tri, np.minimum(np.hypot(u, v) / vmax, 1.0), shading="gouraud", cmap=cmap,
                      vmin=0.0, vmax=1.0, rasterized=True)
    ox, oy = outer[0] * mm, outer[1] * mm
    if arrows:
        xs, ys, d = F._grid(ox.min(), ox.max(), oy.min(), oy.max(), density)
        X, Y = np.meshgrid(xs, ys)
        finder = tri.get_trifinder()
        U = mtri.LinearTriInterpolator(tri, u / vmax, trifinder=finder)(X, Y)
        V = mtri.LinearTriInterpolator(tri, v / vmax, trifinder=finder)(X, Y)
        keep = ~(np.ma.getmaskarray(U) | np.ma.getmaskarray(V))
        ax.quiver(X[keep], Y[keep], U.filled(0)[keep], V.filled(0)[keep], pivot="middle", color="w")
    # the rest (wall, outline, conductors, labels) as the current panel: drawn without colours/arrows
    F._draw_panel_current(ax, data, comp, outer, holes, arrows=False, lines=False, density=density, cmap=cmap,
                          vmax=vmax, note=note, pixels=8)
    return pc


def _measured_layout(fig, axes, *_):
    """The earlier placement (baseline): matplotlib's compressed layout engine, which measures every
    text on an extra drawing pass; the colour bar then steals its room from the panels."""
    fig.set_layout_engine("compressed")
    return None  # field_pattern then adds the colour bar beside the panels as it did before


@contextlib.contextmanager
def triangle_path():
    F._draw_panel_current = F._draw_panel
    F._fixed_layout_current = F._fixed_layout
    F._draw_panel = triangle_panel
    F._fixed_layout = _measured_layout
    try:
        yield
    finally:
        F._draw_panel = F._draw_panel_current
        F._fixed_layout = F._fixed_layout_current


@contextlib.contextmanager
def before_speed_work():
    """The command line as it ran before the speed work, stage by stage, from the paths this
    repository keeps for comparison: triangle colours and the layout engine
    (:func:`triangle_path`), scikit-fem's quadrature assembly (``discretise_skfem``), SuperLU for
    every factorisation, the whole section instead of its symmetry classes, and no thread limit
    (the first solve of a process then ran OpenBLAS on all cores: the thread trap)."""
    from importlib import import_module

    from femodes.solvers import backends

    api, D, E, S, VP, SE = (import_module(f"femodes.{m}") for m in (
        "api", "solvers.discretise", "solvers.eigen", "solvers.scalar", "solvers.vector.problem",
        "studies.sensitivity"))

    def quadrature(skmesh, order):  # discretise() with its assembly replaced by scikit-fem's quadrature
        from functools import partial

        from skfem import Basis
        from skfem.assembly import Dofs

        elem = D._element(order)
        K, M, _ = D.discretise_skfem(skmesh, order)
        dofs = Dofs(skmesh, elem)
        boundary = np.unique(dofs.get_facet_dofs(skmesh.boundary_facets()).flatten())
        return D.Discretisation(K.tocsr(), M.tocsr(), boundary,
                                partial(Basis, skmesh, elem, intorder=D._intorder(skmesh, order), dofs=dofs), order)

    def whole(*a, **k):
        return solve_scalar(*a, **dict(k, symmetry=False))

    solve_scalar = api.solve_scalar
    saved = [(S, "discretise", S.discretise), (api, "solve_scalar", api.solve_scalar)]
    saved += [(m, "single_thread", m.single_thread) for m in (E, S, VP, SE)]
    S.discretise = quadrature
    api.solve_scalar = whole
    for m in (E, S, VP, SE):
        m.single_thread = contextlib.nullcontext
    try:
        with triangle_path(), backends.use("superlu"):
            yield
    finally:
        for mod, name, value in saved:
            setattr(mod, name, value)


def time_patterns(ms, repeat):
    out = []
    with tempfile.TemporaryDirectory() as tmp:
        for _ in range(repeat):
            t0 = time.perf_counter()
            F.field_patterns(ms, tmp, count=4)
            out.append(time.perf_counter() - t0)
    return statistics.median(out)


def time_cli(repeat):
    out = []
    with tempfile.TemporaryDirectory() as tmp:
        for _ in range(repeat):
            t0 = time.perf_counter()
            with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):
                code = main(["solve", str(EXAMPLE), "--figures", tmp])
            out.append(time.perf_counter() - t0)
            if code != 0:
                sys.exit(f"the example failed (exit {code})")
    return statistics.median(out)


def run():
    sec = femodes.double_ridge(width=34e-3, height=16e-3, ridge_width=8e-3, gap=1.5e-3,
                               ridge_corner_radius=0.2e-3, base_radius=0.5e-3)
    ms = femodes.solve(sec, modes=4, accuracy=1e-6)
    time_patterns(ms, 1)  # warm-up: imports, font cache
    rows = []
    for _ in range(3):  # interleaved, so that a busy spell hits both
        with triangle_path():
            old = time_patterns(ms, 1)
        new = time_patterns(ms, 1)
        rows.append((old, new))
    old = statistics.median(r[0] for r in rows)
    new = statistics.median(r[1] for r in rows)
    print("four field patterns of the double-ridge example (PNG, 200 dpi), median of 3:")
    print(f"  triangle colours, layout engine (baseline) {old:6.2f} s")
    print(f"  raster colours, fixed layout (current)     {new:6.2f} s   ratio {old / new:4.2f}x (target >= 3x)")
    with triangle_path():
        old_cli = time_cli(1)
    new_cli = time_cli(1)
    print("the example through the command line (solve, report, 7 figures):")
    print(f"  with triangle colours {old_cli:6.2f} s;  with raster colours {new_cli:6.2f} s;  "
          f"ratio {old_cli / new_cli:4.2f}x")
    rows = []
    for _ in range(2):  # interleaved
        with before_speed_work():
            before = time_cli(1)
        rows.append((before, time_cli(1)))
    before = statistics.median(r[0] for r in rows)
    now = statistics.median(r[1] for r in rows)
    print("the example through the command line, before the speed work (earlier figures and layout, quadrature "
          "assembly, SuperLU, whole section, no thread limit) and now, median of 2:")
    print(f"  before {before:6.2f} s;  now {now:6.2f} s;  ratio {before / now:4.2f}x (target >= 2x)")


if __name__ == "__main__":
    run()
