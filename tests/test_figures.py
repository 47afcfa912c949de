"""Tests of femodes.figures: files are written and valid, titles and colour bars say what is shown,
the outline is drawn, and the plotted fields peak where the closed-form modes say they do.

Physics references (closed forms, not another program's output):
* Pozar, Microwave Engineering, 4th ed., sec. 3.3: rectangular guide TE10, E_y ~ sin(pi x' / a)
  with x' from the left wall; fc = c / 2a.  WR-90 inner size 22.86 x 10.16 mm (EIA):
  fc(TE10) = 6.557 GHz, fc(TE20) = 13.114 GHz, so f2/f1 = 2.
* Pozar sec. 3.4: circular guide TE11 (p'11 = 1.8412) and TM01 (p01 = 2.4048); for TM01
  E_rho ~ J1(p01 rho / a), largest where J1 peaks, rho = 1.8412 / 2.4048 a = 0.7656 a; TE11 has its
  strongest transverse E on the axis.  f(TM01) / f(TE11) = 2.4048 / 1.8412 = 1.306.
* Pozar sec. 2.2 / 3.5: coaxial TEM E_rho = V / (rho ln(b/a)): radial, largest on the inner
  conductor, falling as 1/rho.
"""

import math
import struct

import numpy as np
import pytest

import femodes
from femodes import FemodesError
from femodes.report import figures as F

C0 = 299792458.0
A_WR90, B_WR90 = 22.86e-3, 10.16e-3


# ----------------------------------------------------------------------------- fixtures

@pytest.fixture(scope="module")
def rect():
    return femodes.solve(femodes.rectangle(A_WR90, B_WR90), modes=3, accuracy=1e-4)


@pytest.fixture(scope="module")
def circ():
    return femodes.solve(femodes.circle(5e-3), modes=3, accuracy=1e-4)


@pytest.fixture(scope="module")
def coax():
    return femodes.solve(femodes.coaxial(5e-3, 2e-3), modes=2, accuracy=1e-4)


@pytest.fixture(scope="module")
def te10_png(rect, tmp_path_factory):
    """The WR-90 TE10 pattern, drawn once and written as PNG; several tests inspect it."""
    path = tmp_path_factory.mktemp("te10") / "te10.png"
    return F.field_pattern(rect[0], path, section=rect.section), path


# ----------------------------------------------------------------------------- helpers

def assert_png(path, width_in=None, height_in=None, dpi=200):
    data = path.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n", "not a PNG signature"
    assert data[12:16] == b"IHDR"
    w, h = struct.unpack(">II", data[16:24])
    assert w > 100 and h > 100
    if width_in is not None:
        assert abs(w - width_in * dpi) <= 2 and abs(h - height_in * dpi) <= 2
    assert b"IEND" in data[-16:]
    return w, h


def assert_svg(path):
    text = path.read_text(encoding="utf-8")
    assert "<svg" in text and text.rstrip().endswith("</svg>")
    return text


def assert_pdf(path):
    data = path.read_bytes()
    assert data[:5] == b"%PDF-"
    assert b"%%EOF" in data[-64:]
    return data


def title_of(fig):
    return fig.get_suptitle() or fig.axes[0].get_title()


def by_gid(ax, gid):
    hits = [a for a in ax.get_children() if a.get_gid() == gid]
    assert hits, f"no artist with gid {gid!r}"
    return hits[0]


def colour_data(fig, comp="E"):
    """The colour image of a panel: (image, values, x, y) of its pixels inside the guide, with
    the pixel centres in metres."""
    ax = fig.axes[0] if comp == "E" else fig.axes[1]
    im = by_gid(ax, f"magnitude-{comp}")
    a = np.ma.asarray(im.get_array())
    x0, x1, y0, y1 = im.get_extent()
    ny, nx = a.shape
    xc = x0 + (np.arange(nx) + 0.5) * (x1 - x0) / nx
    yc = y0 + (np.arange(ny) + 0.5) * (y1 - y0) / ny
    X, Y = np.meshgrid(xc, yc)
    ok = ~np.ma.getmaskarray(a)
    return im, np.asarray(a[ok]), X[ok] * 1e-3, Y[ok] * 1e-3


def arrows(ax, comp="E"):
    q = by_gid(ax, f"arrows-{comp}")
    xy = np.asarray(q.get_offsets())
    return xy[:, 0], xy[:, 1], np.asarray(q.U), np.asarray(q.V)


def outline_xy(ax):
    line = by_gid(ax, "outline")
    return np.asarray(line.get_xdata()), np.asarray(line.get_ydata())


# ----------------------------------------------------------------------------- rectangle TE10

def test_rectangle_te10_png_title_colourbar(rect, te10_png):
    assert rect[0].label == "TE10"
    fig, path = te10_png
    w_in, h_in = fig.get_size_inches()
    assert_png(path, w_in, h_in, dpi=200)
    title = title_of(fig)
    assert "TE10" in title and "GHz" in title
    assert f"{C0 / (2 * A_WR90) / 1e9:.3f}" in title          # 6.557 GHz, Pozar sec. 3.3
    assert "degenerate" not in title
    ax = fig.axes[0]
    assert ax.get_aspect() == 1.0                                 # equal aspect
    assert ax.get_xlabel() == "x (mm)" and ax.get_ylabel() == "y (mm)"
    cbar_labels = [a.get_ylabel() for a in fig.axes[1:]]
    assert any("normalised" in s and "E_t" in s for s in cbar_labels)
    assert "m$^{-1}$" in ax.get_title() and "dA = 1" in ax.get_title()


def test_rectangle_te10_outline_in_millimetres(te10_png):
    fig, _ = te10_png
    x, y = outline_xy(fig.axes[0])
    assert x.min() == pytest.approx(-A_WR90 / 2 * 1e3, abs=1e-9)
    assert x.max() == pytest.approx(A_WR90 / 2 * 1e3, abs=1e-9)
    assert y.min() == pytest.approx(-B_WR90 / 2 * 1e3, abs=1e-9)
    assert y.max() == pytest.approx(B_WR90 / 2 * 1e3, abs=1e-9)
    assert (x[0], y[0]) == (x[-1], y[-1])                         # closed
    xl, yl = fig.axes[0].get_xlim(), fig.axes[0].get_ylim()
    assert xl[0] < x.min() and xl[1] > x.max() and yl[0] < y.min() and yl[1] > y.max()


def test_rectangle_te10_peak_on_centre_line(rect, te10_png):
    """Pozar sec. 3.3: E_y ~ sin(pi x'/a), x' from the left wall: peak on x = 0, zero at the walls."""
    te10 = rect[0]
    fig, _ = te10_png
    im, shown, px, py = colour_data(fig)
    assert np.all(np.isfinite(shown))
    assert shown.min() >= 0.0 and shown.max() == pytest.approx(1.0, abs=1e-3)
    inside = (np.abs(px) < A_WR90 / 2) & (np.abs(py) < B_WR90 / 2)
    x0, x1, y0, y1 = im.get_extent()
    pixel = (x1 - x0) * (y1 - y0) * 1e-6 / im.get_array().size
    assert inside.sum() == pytest.approx(A_WR90 * B_WR90 / pixel, rel=0.01)   # the whole guide is coloured
    x_peak = px[np.argmax(shown)]
    assert abs(x_peak) < 0.1 * A_WR90
    at_wall = inside & (np.abs(np.abs(px) - A_WR90 / 2) < A_WR90 / 400)
    assert at_wall.any() and shown[at_wall].max() < 0.05
    # the profile is the sine: compare across the whole guide
    np.testing.assert_allclose(shown[inside], np.cos(np.pi * px[inside] / A_WR90), atol=5e-3)
    d = F.field_samples(te10)
    # the normalisation: int |e_t|^2 dA = 1 gives a peak sqrt(2 / (a b))
    assert d["magnitude"].max() == pytest.approx(math.sqrt(2 / (A_WR90 * B_WR90)), rel=1e-3)
    # arrows: E is along +y or -y everywhere, never along x
    _, _, U, V = arrows(fig.axes[0])
    assert U.size > 50
    assert np.max(np.abs(U)) < 0.02 * np.max(np.abs(V))
    assert np.all(np.sign(V) == np.sign(V[0]))


def test_rectangle_te10_svg_and_pdf(rect, tmp_path):
    te10 = rect[0]
    svg = tmp_path / "te10.svg"
    pdf = tmp_path / "te10.pdf"
    F.field_pattern(te10, svg, section=rect.section)
    F.field_pattern(te10, pdf, section=rect.section)
    text = assert_svg(svg)
    assert 'id="outline' in text and 'id="arrows-E' in text     # outline and arrows are vectors
    assert "<image" in text                                       # the colour map is an embedded image
    assert_pdf(pdf)
    assert pdf.stat().st_size < 2_000_000 and svg.stat().st_size < 2_000_000


def test_show_eh_has_h_arrows_turned_by_90_degrees(rect):
    fig = F.field_pattern(rect[0], section=rect.section, show="EH")
    ax_e = [a for a in fig.axes if any(c.get_gid() == "arrows-E" for c in a.get_children())][0]
    ax_h = [a for a in fig.axes if any(c.get_gid() == "arrows-H" for c in a.get_children())][0]
    xe, ye, ue, ve = arrows(ax_e, "E")
    xh, yh, uh, vh = arrows(ax_h, "H")
    np.testing.assert_allclose(np.c_[xe, ye], np.c_[xh, yh])
    np.testing.assert_allclose(uh, -ve, atol=1e-12)               # h_t = z x e_t
    np.testing.assert_allclose(vh, ue, atol=1e-12)
    labels = " ".join(a.get_ylabel() for a in fig.axes)
    assert "|E_t| = |H_t|" in labels and "normalised" in labels
    assert "GHz" in title_of(fig)


def test_field_lines_option(rect):
    fig = F.field_pattern(rect[0], section=rect.section, lines=True, arrows=False)
    ax = fig.axes[0]
    lines = by_gid(ax, "field-lines-E")
    assert len(lines.get_segments()) > 20
    assert not any(c.get_gid() == "arrows-E" for c in ax.get_children())
    # E field lines of TE10 run along y: every segment is (nearly) vertical
    seg = np.concatenate([s for s in lines.get_segments() if len(s) > 1])
    assert np.ptp(seg[:, 0]) > 10                                  # spread across the guide
    steps = np.concatenate([np.diff(s, axis=0) for s in lines.get_segments() if len(s) > 1])
    long = np.hypot(steps[:, 0], steps[:, 1]) > 1e-6
    assert np.median(np.abs(steps[long, 0]) / np.hypot(*steps[long].T)) < 0.05


# ----------------------------------------------------------------------------- circle TE11 pair, TM01

def test_circle_te11_pair_both_members(circ, tmp_path):
    a = 5e-3
    pair = [m for m in circ if m.label == "TE11"]
    assert len(pair) == 2
    dirs = []
    for k, m in enumerate(pair):
        path = tmp_path / f"te11_{m.index}.png"
        fig = F.field_pattern(m, path if k == 0 else None, modeset=circ)
        if k == 0:
            assert_png(path)
        title = title_of(fig)
        other = pair[1] if m is pair[0] else pair[0]
        assert "TE11" in title and "GHz" in title
        assert f"degenerate with mode {other.index + 1}, TE11" in title
        assert "symmetry" in title  # the pair is forced by the circle's rotation (issue 11 item 4)
        assert f"{m.fc / 1e9:.4f}" in title
        # outline: the exact circle of 5 mm
        x, y = outline_xy(fig.axes[0])
        np.testing.assert_allclose(np.hypot(x, y), a * 1e3, rtol=1e-9)
        # colour data finite; Pozar 3.4: the strongest transverse E of TE11 is on the axis
        _, shown, px, py = colour_data(fig)
        assert np.all(np.isfinite(shown))
        assert math.hypot(px[np.argmax(shown)], py[np.argmax(shown)]) < 0.1 * a
        X, Y, U, V = arrows(fig.axes[0])
        k = np.argmin(np.hypot(X, Y))
        dirs.append(np.array([U[k], V[k]]) / math.hypot(U[k], V[k]))
        # arrows stay inside the wall (tip clearance)
        assert np.all(np.hypot(X, Y) + 0.5 * np.hypot(U, V) < a * 1e3)
    # the two members are the two polarisations: their central E fields are orthogonal
    assert abs(float(dirs[0] @ dirs[1])) < 0.05


def test_circle_tm01_peak_radius(circ, tmp_path):
    a = 5e-3
    tm01 = circ.by_label("TM01")[0]
    path = tmp_path / "tm01.pdf"
    fig = F.field_pattern(tm01, path, modeset=circ)
    assert_pdf(path)
    title = title_of(fig)
    assert "TM01" in title and "GHz" in title
    assert "E_z" in fig.axes[0].get_title()                       # TM: the potential is E_z
    _, shown, px, py = colour_data(fig)
    assert np.all(np.isfinite(shown))
    r = np.hypot(px, py)
    r_peak = r[np.argmax(shown)]
    assert abs(r_peak - 1.8412 / 2.4048 * a) < 0.1 * a            # J1 maximum, Pozar sec. 3.4
    assert shown[r < 0.02 * a].max() < 0.05                        # E_t vanishes on the axis
    # E is radial: arrows parallel to the position vector
    X, Y, U, V = arrows(fig.axes[0])
    cross = (X * V - Y * U) / (np.hypot(X, Y) * np.hypot(U, V))
    assert np.max(np.abs(cross)) < 0.1


# ----------------------------------------------------------------------------- coax TEM

def test_coax_tem_pattern(coax, tmp_path):
    a, b = 2e-3, 5e-3
    tem = coax[0]
    assert tem.family == "TEM"
    path = tmp_path / "tem.png"
    fig = F.field_pattern(tem, path, modeset=coax)
    assert_png(path)
    title = title_of(fig)
    assert "TEM" in title and "GHz" in title
    ax = fig.axes[0]
    # the inner conductor is a filled grey patch on the 2 mm circle, the outer wall a 5 mm line
    hole = by_gid(ax, "conductor-1")
    v = hole.get_xy()
    np.testing.assert_allclose(np.hypot(v[:, 0], v[:, 1]), a * 1e3, rtol=1e-9)
    rgb = np.array(hole.get_facecolor()[:3])
    assert np.ptp(rgb) < 0.05 and 0.3 < rgb.mean() < 0.9         # grey
    x, y = outline_xy(ax)
    np.testing.assert_allclose(np.hypot(x, y), b * 1e3, rtol=1e-9)
    # E = V / (rho ln(b/a)): largest on the inner conductor, 1/rho fall-off
    _, shown, px, py = colour_data(fig)
    assert np.all(np.isfinite(shown))
    r = np.hypot(px, py)
    assert abs(r[np.argmax(shown)] - a) < 0.1 * (b - a)
    on_outer = (r > 0.99 * b) & (r < b)
    d = F.field_samples(tem)
    assert np.mean(shown[on_outer]) == pytest.approx(a / b, rel=0.03)
    assert d["magnitude"].max() == pytest.approx(1 / (a * math.sqrt(2 * math.pi * math.log(b / a))), rel=0.02)
    # arrows point radially outwards (psi = 1 V on the inner conductor, e_t = -grad psi)
    X, Y, U, V = arrows(ax)
    cos = (X * U + Y * V) / (np.hypot(X, Y) * np.hypot(U, V))
    assert cos.min() > 0.95
    assert np.all(np.hypot(X, Y) > a * 1e3)                       # no arrows inside the conductor


# ----------------------------------------------------------------------------- many files, names

def test_safe_name():
    assert F.safe_name("TE10") == "TE10"
    assert F.safe_name("TE1 (x odd, y even)") == "TE1_x-odd_y-even"
    for label in ("TM01", "TE1 (x odd, y even)", "a/b\\c:d*e?", "  ", "TEM2"):
        s = F.safe_name(label)
        assert s and all(ch.isalnum() or ch in "_.+-" for ch in s)


def test_field_patterns_writes_one_file_per_mode(circ, tmp_path):
    paths = F.field_patterns(circ, tmp_path / "out", fmt="svg")
    assert [p.name for p in paths] == ["mode01_TE11.svg", "mode02_TE11.svg", "mode03_TM01.svg"]
    assert sorted(p.name for p in (tmp_path / "out").iterdir()) == [p.name for p in paths]
    for p in paths:
        text = assert_svg(p)
        assert 'id="outline' in text
    assert F.field_patterns(circ, tmp_path / "none", count=0) == []
    assert list((tmp_path / "none").iterdir()) == []
    with pytest.raises(FemodesError):
        F.field_patterns(circ, tmp_path, fmt="jpg")


# ----------------------------------------------------------------------------- mode chart

def band_edges(fig):
    ax = fig.axes[0]
    span = by_gid(ax, "single-mode-band")
    bb = span.get_bbox()
    return bb.x0, bb.x1, by_gid(ax, "band-note").get_text()


def test_mode_chart_wr90_band(rect, tmp_path):
    path = tmp_path / "chart.png"
    fig = F.mode_chart(rect, path)
    assert_png(path)
    f1, f2, note = band_edges(fig)
    assert f1 == pytest.approx(C0 / (2 * A_WR90) / 1e9, rel=1e-4)   # 6.557 GHz
    assert f2 == pytest.approx(C0 / A_WR90 / 1e9, rel=1e-4)         # 13.114 GHz
    assert "6.557" in note and "13.114" in note and "f2/f1 = 2.000" in note
    ax = fig.axes[0]
    assert "rectangle" in ax.get_title() and "22.86 mm" in ax.get_title()
    assert ax.get_xlabel() == "cutoff frequency (GHz)"
    labels = [t.get_text().split("\n")[0] for t in ax.texts if t.get_gid() == "mode-label"]
    assert labels == ["TE10", "TE20", "TE01"]
    markers = [c for c in ax.get_children() if c.get_gid() == "marker-TE"]
    xs = sorted(float(m.get_xdata()[0]) for m in markers)
    np.testing.assert_allclose(xs, [m.fc / 1e9 for m in rect], rtol=1e-12)
    assert [t.get_text() for t in ax.get_legend().get_texts()] == ["TE"]


def test_mode_chart_circle_degenerate_once(circ, tmp_path):
    fig = F.mode_chart(circ, tmp_path / "c.svg")
    assert_svg(tmp_path / "c.svg")
    ax = fig.axes[0]
    labels = [t.get_text().split("\n")[0] for t in ax.texts if t.get_gid() == "mode-label"]
    assert labels == ["TE11 x2", "TM01"]
    assert len([c for c in ax.get_children() if c.get_gid() == "marker-TE"]) == 1
    f1, f2, note = band_edges(fig)
    assert f2 / f1 == pytest.approx(2.4048 / 1.8412, rel=1e-3)
    assert "f2/f1 = 1.306" in note
    assert {t.get_text() for t in ax.get_legend().get_texts()} == {"TE", "TM"}
    assert "circle" in ax.get_title()


def test_mode_chart_coax_band_from_zero(coax, tmp_path):
    fig = F.mode_chart(coax, tmp_path / "x.pdf")
    assert_pdf(tmp_path / "x.pdf")
    ax = fig.axes[0]
    f1, f2, note = band_edges(fig)
    assert f1 == 0.0
    assert f2 == pytest.approx(coax[1].fc / 1e9, rel=1e-12)
    assert "TEM" in note and "0 –" in note
    tem = by_gid(ax, "marker-TEM")
    assert float(tem.get_xdata()[0]) == 0.0
    assert [t.get_text() for t in ax.get_legend().get_texts()] == ["TEM", "TE"]


def test_mode_chart_f_max_leaves_out_modes(rect):
    fig = F.mode_chart(rect, f_max=14e9)
    ax = fig.axes[0]
    labels = [t.get_text().split("\n")[0] for t in ax.texts if t.get_gid() == "mode-label"]
    assert labels == ["TE10", "TE20"]
    assert "1 more mode above 14 GHz" in ax.get_xlabel()
    assert ax.get_xlim()[1] == pytest.approx(14.0)


# ----------------------------------------------------------------------------- external mesh, singular fields

def test_external_mesh_outline_from_mesh_edges(tmp_path):
    mesh = femodes.mesh_section(femodes.coaxial(5e-3, 2e-3), 1.5e-3, order=2)
    ms = femodes.solve(mesh, modes=2)
    assert ms.section is None
    fig = F.field_pattern(ms[0], modeset=ms)
    ax = fig.axes[0]
    x, y = outline_xy(ax)
    np.testing.assert_allclose(np.hypot(x, y), 5.0, rtol=2e-3)      # boundary edges through their mid-points
    v = by_gid(ax, "conductor-1").get_xy()
    np.testing.assert_allclose(np.hypot(v[:, 0], v[:, 1]), 2.0, rtol=5e-3)
    # without any geometry the outline comes from the plotting triangulation
    fig2 = F.field_pattern(ms[0])
    x2, y2 = outline_xy(fig2.axes[0])
    np.testing.assert_allclose(np.hypot(x2, y2), 5.0, rtol=2e-3)
    chart = F.mode_chart(ms)
    assert "external mesh" in chart.axes[0].get_title()


def test_corner_singularity_clips_colours():
    """An L-shaped guide's TE1 field is singular at the re-entrant corner: the colours are clipped
    at a bulk level (colour bar with a pointed end) instead of being washed out by one point."""
    ms = femodes.solve(femodes.l_shape(10e-3, 10e-3, 5e-3, 5e-3), modes=1, accuracy=1e-3)
    fig = F.field_pattern(ms[0], modeset=ms)
    _, shown, _, _ = colour_data(fig)
    assert np.all(np.isfinite(shown)) and shown.max() == 1.0
    assert np.mean(shown) > 0.2                                    # the bulk of the pattern is visible
    assert "clipped" in fig.axes[0].get_title()
    cbar = fig.axes[1]
    assert "clip level" in cbar.get_ylabel()


# ----------------------------------------------------------------------------- options and errors

def test_draw_into_given_axes(rect):
    from matplotlib.figure import Figure

    fig = Figure(figsize=(8, 3))
    axes = fig.subplots(1, 2)
    out = F.field_pattern(rect[0], section=rect.section, ax=axes[1])
    assert out is fig
    assert "TE10" in axes[1].get_title() and "GHz" in axes[1].get_title()
    assert any(c.get_gid() == "outline" for c in axes[1].get_children())
    assert not any(c.get_gid() == "outline" for c in axes[0].get_children())


def test_bad_options(rect, tmp_path):
    with pytest.raises(FemodesError):
        F.field_pattern(rect[0], show="Z")
    with pytest.raises(FemodesError):
        F.field_pattern(rect[0], tmp_path / "x.jpg", section=rect.section)
    with pytest.raises(FemodesError):
        F.field_pattern(rect[0], density=0)
    with pytest.raises(FemodesError):
        F.mode_chart(rect, f_max=-1)
    from dataclasses import replace
    with pytest.raises(FemodesError):
        F.field_pattern(replace(rect[0], potential=None))


def test_mode_chart_labels_do_not_overlap():
    """Twelve WR-90 modes, several pairs 0.07 GHz apart (TE30 / TE21): no two labels overlap and
    all lie inside the plot area."""
    ms = femodes.solve(femodes.rectangle(A_WR90, B_WR90), modes=12, accuracy=1e-3)
    fig = F.mode_chart(ms)
    fig.canvas.draw()
    r = fig.canvas.get_renderer()
    ax = fig.axes[0]
    boxes = [t.get_window_extent(r) for t in ax.texts if t.get_gid() == "mode-label"]
    assert len(boxes) == len({round(m.fc / 1e6) for m in ms})   # one label per distinct cutoff (MHz)
    frame = ax.get_window_extent(r)
    for i, b in enumerate(boxes):
        assert frame.x0 - 1 <= b.x0 and b.x1 <= frame.x1 + 1
        for c in boxes[i + 1:]:
            assert not b.overlaps(c)


# ----------------------------------------------------------------------------- attenuation and band charts

MU0 = femodes.MU0
ETA0 = MU0 * C0


def wr90_te10_loss_db(f, sigma=5.8e7):
    # alpha_c = R_s (2 b pi^2 + a^3 k^2) / (a^3 b beta k eta), R_s = sqrt(omega mu0 / 2 sigma):
    # Pozar, 4th ed., eq. 3.96 and sec. 1.7; x 20 / ln 10 dB per neper
    a, b = A_WR90, B_WR90
    k = 2 * np.pi * f / C0
    beta = np.sqrt(k ** 2 - (np.pi / a) ** 2)
    rs = np.sqrt(2 * np.pi * f * MU0 / (2 * sigma))
    return rs * (2 * b * np.pi ** 2 + a ** 3 * k ** 2) / (a ** 3 * b * beta * k * ETA0) * 20 / math.log(10)


def test_attenuation_chart_wr90(rect, tmp_path):
    fs = np.linspace(7e9, 14e9, 15)
    path = tmp_path / "att.png"
    fig = F.attenuation_chart(rect, fs, conductivity="copper", path=path)
    assert_png(path, 8.0, 4.2)
    ax = fig.axes[0]
    te10 = by_gid(ax, "attenuation-0")
    x, y = np.asarray(te10.get_xdata()), np.asarray(te10.get_ydata())
    np.testing.assert_allclose(x, fs / 1e9)
    assert np.all(np.isfinite(y))                            # TE10 (6.557 GHz) propagates at every point
    np.testing.assert_allclose(y, wr90_te10_loss_db(fs), rtol=1e-4)
    # TE20 cuts off at c / a = 13.114 GHz (Pozar sec. 3.3): drawn above it only, with a cutoff line
    y20 = np.asarray(by_gid(ax, "attenuation-1").get_ydata(), dtype=float)
    above = fs > C0 / A_WR90
    assert np.all(np.isnan(y20[~above])) and np.all(np.isfinite(y20[above])) and np.all(y20[above] > 0)
    assert by_gid(ax, "cutoff-1").get_xdata()[0] == pytest.approx(C0 / A_WR90 / 1e9, rel=1e-4)
    # TE01 (14.76 GHz) does not propagate below 14 GHz: no curve
    assert not any(c.get_gid() == "attenuation-2" for c in ax.get_children())
    names = [t.get_text() for t in ax.get_legend().get_texts()]
    assert names[0].startswith("TE10") and names[1].startswith("TE20") and len(names) == 2
    assert ax.get_ylabel() == "attenuation (dB/m)" and ax.get_xlabel() == "frequency (GHz)"
    assert "copper walls" in ax.get_title() and "rectangle" in ax.get_title()
    # the documented rule: a log axis when the values span more than a factor of 30
    vals = np.concatenate([y, y20[above]])
    assert ax.get_yscale() == ("log" if vals.max() / vals.min() > 30 else "linear")
    # just above cutoff the loss is not small against beta: those points are left out
    near = F.attenuation_chart(rect, np.linspace(7e9, 13.12e9, 30))   # TE20 only 0.05 % above its cutoff
    assert not any(c.get_gid() == "attenuation-1" for c in near.axes[0].get_children())
    svg = tmp_path / "att.svg"
    fig2 = F.attenuation_chart(rect, fs[:8], conductivity=3.5e7, conductor="aluminium", roughness=1e-6, path=svg)
    assert_svg(svg)
    assert "aluminium walls" in fig2.axes[0].get_title() and "roughness 1 µm" in fig2.axes[0].get_title()
    assert fig2.axes[0].get_yscale() == "linear"             # TE10 alone over 7 - 10.5 GHz
    assert "no modes computed above" in F.attenuation_chart(rect, [8e9, 16e9]).axes[0].get_xlabel()


def test_attenuation_chart_coax_log_axis(coax):
    # the TEM loss grows like sqrt(f) (alpha_c = R_s (1/a + 1/b) / (2 eta ln(b/a)), R_s ~ sqrt(f):
    # Pozar sec. 2.7): from 10 MHz to 20 GHz a factor sqrt(2000) = 45 > 30, so a logarithmic axis
    f = np.geomspace(0.01e9, 20e9, 40)
    fig = F.attenuation_chart(coax, f)
    ax = fig.axes[0]
    assert ax.get_yscale() == "log"
    y = np.asarray(by_gid(ax, "attenuation-0").get_ydata())
    np.testing.assert_allclose(y / y[0], np.sqrt(f / f[0]), rtol=1e-4)   # alpha_c ~ R_s ~ sqrt(f)
    assert [t.get_text() for t in ax.get_legend().get_texts()][0] == "TEM  (no cutoff)"


def test_attenuation_chart_refuses_bad_input(rect):
    with pytest.raises(FemodesError, match="no mode propagates"):
        F.attenuation_chart(rect, [1e9, 2e9])                # below the 6.557 GHz TE10 cutoff
    with pytest.raises(FemodesError, match="increasing"):
        F.attenuation_chart(rect, [10e9, 9e9])
    with pytest.raises(FemodesError, match="unknown metal"):
        F.attenuation_chart(rect, [8e9, 9e9], conductivity="unobtainium")


def bar_span(ax, gid):
    bb = by_gid(ax, gid).get_bbox()
    return bb.x0, bb.x1


def test_band_chart_wr90(rect, tmp_path):
    path = tmp_path / "bands.png"
    fig = F.band_chart(rect, path, band=(8.2e9, 12.4e9), frequency=10e9)
    assert_png(path)
    ax = fig.axes[0]
    fc1, fc2 = C0 / (2 * A_WR90) / 1e9, C0 / A_WR90 / 1e9       # 6.557, 13.114 GHz (Pozar sec. 3.3)
    assert bar_span(ax, "single-mode-band") == pytest.approx((fc1, fc2), rel=1e-4)
    # the rule of thumb 1.25 fc1 .. 0.95 fc2 (common practice) = 8.196 .. 12.459 GHz
    assert bar_span(ax, "recommended-band") == pytest.approx((1.25 * fc1, 0.95 * fc2), rel=1e-4)
    assert bar_span(ax, "analysis-band") == pytest.approx((8.2, 12.4), rel=1e-12)
    assert by_gid(ax, "analysis-frequency").get_xdata()[0] == pytest.approx(10.0)
    # a row per distinct cutoff, its bar starting at the cutoff
    for m in rect:
        assert bar_span(ax, f"mode-row-{m.index}")[0] == pytest.approx(m.fc / 1e9, rel=1e-12)
    labels = [t.get_text() for t in ax.get_yticklabels()]
    assert labels[:3] == ["TE10", "TE20", "TE01"] and labels[-1] == "analysis band"
    assert "rule of" in labels[-2]
    # no text leaves the plot area
    fig.canvas.draw()
    r = fig.canvas.get_renderer()
    frame = ax.get_window_extent(r)
    for t in ax.texts:
        b = t.get_window_extent(r)
        assert frame.x0 - 1 <= b.x0 and b.x1 <= frame.x1 + 1, t.get_text()


def test_band_chart_coax_from_zero_and_without_analysis(coax, tmp_path):
    fig = F.band_chart(coax, tmp_path / "b.svg")
    assert_svg(tmp_path / "b.svg")
    ax = fig.axes[0]
    lo, hi = bar_span(ax, "single-mode-band")
    assert lo == 0.0 and hi == pytest.approx(coax[1].fc / 1e9, rel=1e-12)   # TEM from DC
    assert "TEM from DC" in by_gid(ax, "single-mode-band-text").get_text()
    gids = {c.get_gid() for c in ax.get_children()}
    assert "analysis-band" not in {p.get_gid() for p in ax.patches} and "analysis-frequency" not in gids
    with pytest.raises(FemodesError, match="0 < f1 < f2"):
        F.band_chart(coax, band=(5e9, 1e9))


@pytest.mark.parametrize("show", ["E", "EH"])
def test_field_pattern_layout_keeps_every_text_inside_and_apart(rect, coax, show):
    # the panels and the colour bar are placed by hand (no layout engine): nothing may be cut
    # off at the figure's edge, and the panels, their tick labels and the colour bar must not
    # overlap (checked on the drawn figure's own text extents)
    for ms, mode in ((rect, rect[0]), (coax, coax[1])):
        fig = F.field_pattern(mode, modeset=ms, show=show)
        fig.canvas.draw()
        r = fig.canvas.get_renderer()
        W, H = fig.bbox.width, fig.bbox.height
        ticks = {id(t.label1) for a in fig.axes for axis in (a.xaxis, a.yaxis) for t in axis.get_major_ticks()}
        drawn = [t.label1 for a in fig.axes for axis in (a.xaxis, a.yaxis)  # tick labels inside the view
                 for t, loc in zip(axis.get_major_ticks(), axis.get_majorticklocs())
                 if min(axis.get_view_interval()) - 1e-9 <= loc <= max(axis.get_view_interval()) + 1e-9]
        texts = [t for t in fig.findobj(lambda a: hasattr(a, "get_text") and hasattr(a, "get_window_extent"))
                 if t.get_visible() and t.get_text().strip() and id(t) not in ticks] + drawn
        assert len(texts) > 10
        for t in texts:
            b = t.get_window_extent(r)
            assert b.x0 >= -1 and b.y0 >= -1 and b.x1 <= W + 1 and b.y1 <= H + 1, t.get_text()
        axes = fig.axes
        boxes = [a.get_window_extent(r) for a in axes]
        for i in range(len(boxes)):
            for j in range(i + 1, len(boxes)):
                assert not boxes[i].overlaps(boxes[j]), (axes[i], axes[j])
        panels, bar = axes[:-1], axes[-1]
        for a in panels:  # a panel's y tick labels stay left of the panel and right of the one before
            for lab in a.get_yticklabels():
                if lab.get_text():
                    assert lab.get_window_extent(r).x1 <= a.get_window_extent(r).x0 + 1
        assert bar.get_window_extent(r).x0 > max(a.get_window_extent(r).x1 for a in panels)
