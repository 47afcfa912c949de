"""The dispersion chart (femodes.report.figures.dispersion_chart) read back from its drawn data.

The curves are not solved here: they are the exact LSE / LSM curves of WR-90 (22.86 x 10.16 mm,
EIA standard) with an eps_r 2.25 slab on its lower half, from the transverse-resonance equations
(Collin, Field Theory of Guided Waves, ch. 6, from memory; femodes.reference.layered, roots by
brentq), and their cutoffs from the same equations at beta = 0.
"""

import math
from types import SimpleNamespace

import numpy as np
import pytest

from femodes import reference as ref
from femodes.report.figures import dispersion_chart

A, B, EPS = ref.WR90_A, ref.WR90_B, 2.25
LAYERS = [(B / 2, EPS, 1.0), (B / 2, 1.0, 1.0)]


@pytest.fixture(scope="module")
def curves():
    """A Dispersion-like object of the four lowest modes over 5-16 GHz (12 samples), columns
    followed by their (family, indices), and the four cutoffs (Hz)."""
    cuts = ref.layered_guide_cutoffs(A, B, LAYERS, 4)
    keys = [(c.family, c.indices) for c in cuts]
    fs = np.linspace(5e9, 16e9, 12)
    b2 = np.empty((fs.size, len(keys)))
    for i, f in enumerate(fs):
        found = {(m.family, m.indices): m.beta2 for m in ref.layered_guide_modes(A, B, LAYERS, f, count=12)}
        b2[i] = [found[k] for k in keys]
    disp = SimpleNamespace(frequencies=fs, beta2=b2, family=np.full(b2.shape, "hybrid", dtype=object),
                           labels=tuple(f"{fam}{''.join(map(str, ind))}" for fam, ind in keys))
    return disp, [c.frequency for c in cuts]


def _curve_lines(fig):
    return [ln for ln in fig.axes[0].lines if str(ln.get_gid()).startswith("curve-")]


def test_each_curve_starts_at_zero_at_its_cutoff(curves):
    disp, fcs = curves
    fig = dispersion_chart(disp, cutoffs=fcs[::-1])  # any order: matched by the bracketing samples
    lines = _curve_lines(fig)
    assert len(lines) == 4
    for k, ln in enumerate(lines):
        x, y = (np.asarray(v, dtype=float) for v in ln.get_data())
        assert x[0] == fcs[k] / 1e9 and y[0] == 0.0, (k, x[0], y[0])
        assert np.all(np.diff(x) > 0) and np.all(np.isfinite(y)) and np.all(np.diff(y) > 0)
        # the samples themselves are drawn as they are: beta = sqrt(beta^2)
        at = np.isin(x, disp.frequencies / 1e9)
        want = np.sqrt(disp.beta2[np.isin(disp.frequencies / 1e9, x[at]), k])
        np.testing.assert_allclose(y[at], want, rtol=1e-12)


def test_without_cutoffs_the_start_is_estimated_inside_its_bracket(curves):
    disp, fcs = curves
    fig = dispersion_chart(disp)
    f = disp.frequencies
    for k, ln in enumerate(_curve_lines(fig)):
        x, y = ln.get_data()
        i = int(np.flatnonzero(disp.beta2[:, k] > 0)[0])
        assert y[0] == 0.0 and f[i - 1] / 1e9 <= x[0] <= f[i] / 1e9
        # beta^2 nearly linear in f^2 near cutoff: the estimate is close to the true cutoff
        assert x[0] == pytest.approx(fcs[k] / 1e9, rel=0.02)


def _dense(line, ax):
    """The line's points in display coordinates, with 20 points along every segment."""
    x, y = (np.asarray(v, dtype=float) for v in line.get_data())
    pts = ax.transData.transform(np.column_stack([x, y]))
    pts = pts[np.all(np.isfinite(pts), axis=1)]
    t = np.linspace(0.0, 1.0, 20)[:, None]
    return np.vstack([p0 + t * (p1 - p0) for p0, p1 in zip(pts[:-1], pts[1:])] + [pts[-1:]])


def test_labels_sit_off_the_curves_and_off_each_other(curves):
    disp, fcs = curves
    empty = [(m.label, m.kc) for m in ref.rectangle_modes(A, B, 2)]
    fig = dispersion_chart(disp, cutoffs=fcs, empty=empty)
    ax = fig.axes[0]
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    labels = [t for t in ax.texts if "label" in str(t.get_gid())]
    names = [t.get_text() for t in labels]
    assert sum(n.startswith(("1 (", "2 (", "3 (", "4 (")) for n in names) == 4
    assert any(n.startswith("light line") for n in names) and any(n.startswith("empty guide") for n in names)
    boxes = [t.get_window_extent(renderer) for t in labels]
    drawn = [ln for ln in ax.lines if ln.get_gid() in ("light-line", "empty-guide") or
             str(ln.get_gid()).startswith("curve-")]
    for t, b in zip(labels, boxes):
        for ln in drawn:
            p = _dense(ln, ax)
            inside = (p[:, 0] >= b.x0) & (p[:, 0] <= b.x1) & (p[:, 1] >= b.y0) & (p[:, 1] <= b.y1)
            assert not np.any(inside), (t.get_text(), ln.get_gid())
        # and inside the axes, so that the saved figure shows it whole
        assert ax.get_window_extent(renderer).contains(b.x1 - 1, b.y0 + 1)
    for i in range(len(boxes)):
        for j in range(i + 1, len(boxes)):
            assert not boxes[i].overlaps(boxes[j]), (names[i], names[j])
    # the empty guide's closed-form curve starts at its own cutoff, c / (2a) for TE10 (Pozar sec. 3.3)
    te10 = next(ln for ln in ax.lines if ln.get_gid() == "empty-guide")
    x, y = (np.asarray(v, dtype=float) for v in te10.get_data())
    first = np.flatnonzero(np.isfinite(y))[0]
    assert x[first] == pytest.approx(299792458.0 / (2 * A) / 1e9, rel=1e-12) and y[first] == 0.0
    assert math.isfinite(y[-1])
