"""Notebook display: the HTML tables of mode sets, modes, studies and sweeps (parsed, checked
against the objects' values and against closed forms), the short reprs, the field pattern as an
image, and the example notebook executed in a kernel."""

import dataclasses
import math
import os
from html.parser import HTMLParser
from pathlib import Path

import pytest

import femodes as fm
import femodes.reference as ref
from femodes.constants import C0
from femodes.modes.display import format_ghz

ROOT = Path(__file__).resolve().parents[1]
A, B = 22.86e-3, 10.16e-3  # WR-90 inner size (EIA)


class _Tables(HTMLParser):
    """Every table as rows of cell texts, the header row first; the text outside tables; the
    start tags met (an unescaped '<b>' in a label would show up here)."""

    def __init__(self):
        super().__init__()
        self.tables, self.text, self.tags = [], [], []
        self._cell = None

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        if tag == "table":
            self.tables.append([])
        elif tag == "tr":
            self.tables[-1].append([])
        elif tag in ("td", "th"):
            self._cell = []

    def handle_endtag(self, tag):
        if tag in ("td", "th"):
            self.tables[-1][-1].append("".join(self._cell))
            self._cell = None

    def handle_data(self, data):
        (self._cell if self._cell is not None else self.text).append(data)


def parse(html_text):
    p = _Tables()
    p.feed(html_text)
    p.close()
    return p


def rows_by_column(table):
    head, *rows = table
    return [dict(zip(head, r)) for r in rows]


@pytest.fixture(scope="module")
def wr90():
    return fm.solve(fm.rectangle(A, B), modes=4, accuracy=1e-7)


def test_mode_set_html_shows_every_mode_with_its_cutoff_in_ghz(wr90):
    page = parse(wr90._repr_html_())
    assert len(page.tables) == 1
    rows = rows_by_column(page.tables[0])
    assert len(rows) == len(wr90)
    # rectangle cutoffs fc = c0 / 2 sqrt((m/a)^2 + (n/b)^2) (Pozar, Microwave Engineering, sec. 3.3)
    want = {r.label: C0 * r.kc / (2 * math.pi) for r in ref.rectangle_modes(A, B, 6)}
    for m, row in zip(wr90, rows):
        assert row["#"] == str(m.index + 1) and row["label"] == m.label and row["family"] == m.family
        shown = float(row["fc [GHz]"])
        assert row["fc [GHz]"] == format_ghz(m.fc, m.fc_error)
        # the cell is the object's cutoff rounded to the first digit of its error
        digits = len(row["fc [GHz]"].split(".")[1])
        assert abs(shown - m.fc / 1e9) <= 0.5 * 10.0 ** -digits
        assert float(row["± [GHz]"]) == pytest.approx(m.fc_error / 1e9, rel=0.5)
        # and the closed form lies within the error shown plus the rounding
        assert abs(shown - want[m.label] / 1e9) <= float(row["± [GHz]"]) + 0.5 * 10.0 ** -digits
        assert float(row["cutoff wl [mm]"]) == pytest.approx(2 * math.pi / m.kc * 1e3, rel=1e-6)
    # the terminal table has the same columns (one source for both)
    text = fm.report.modes_table(wr90)
    assert all(h in text for h in page.tables[0][0])
    assert any("single-mode band" in t and "TE10 alone" in t for t in page.text)


def test_labels_are_escaped():
    m = fm.Mode("TE", kc=200.0, kc_error=1e-4, label="<b>TE&1</b>")
    html_text = m._repr_html_()
    assert "<b>" not in html_text and "&lt;b&gt;TE&amp;1&lt;/b&gt;" in html_text
    page = parse(html_text)
    assert "b" not in page.tags
    assert rows_by_column(page.tables[0])[0]["label"] == "<b>TE&1</b>"  # the parser reads back the label
    ms = fm.ModeSet([m])
    assert "b" not in parse(ms._repr_html_()).tags


def test_short_reprs(wr90):
    r = repr(wr90)
    # 4 asked; TM11 comes with TE11 (same cutoff in a rectangle, common practice), so 5 returned
    assert r.startswith(f"<ModeSet: {len(wr90)} modes of a rectangle section") and "TE10 6.5571" in r and len(r) < 200
    assert len(wr90) == 5 and "... 1 more" in r
    r1 = repr(wr90[0])
    assert r1.startswith("<Mode #1 TE10 (TE): fc = ") and format_ghz(wr90[0].fc, wr90[0].fc_error) in r1
    assert "\n" not in r + r1


def test_mode_field_pattern_is_shown_as_an_image(wr90):
    fig = fm.field_pattern(wr90[0], modeset=wr90)
    png = fig._repr_png_()
    assert png[:8] == b"\x89PNG\r\n\x1a\n"
    width, height = int.from_bytes(png[16:20], "big"), int.from_bytes(png[20:24], "big")
    assert width > 200 and height > 100
    assert "femodes.field_pattern(mode)" in wr90[0]._repr_html_()


def test_study_html_of_a_loaded_guide():
    # WR-90 with its lower half filled (eps_r 2.25): cutoffs and betas from the transverse-resonance
    # equations of the layered guide (Collin, Field Theory of Guided Waves, ch. 6)
    eps, f = 2.25, 13e9
    guide = fm.rectangle(A, B).with_material(fm.rectangle(A, B / 2).translated(0, -B / 4), eps_r=eps)
    st = fm.study(guide, modes=2, accuracy=1e-5, frequency=f)
    page = parse(st._repr_html_())
    cut_table, at_f = page.tables
    cut_rows = rows_by_column(cut_table)
    want_fc = ref.layered_guide_cutoffs(A, B, [(B / 2, eps, 1.0), (B / 2, 1.0, 1.0)], 2)
    for c, row, r in zip(st.modes, cut_rows, want_fc):
        assert row["label"] == c.label and row["fc [GHz]"] == format_ghz(c.fc, c.fc_error)
        digits = len(row["fc [GHz]"].split(".")[1])
        assert abs(float(row["fc [GHz]"]) - r.frequency / 1e9) <= float(row["± [GHz]"]) + 0.5 * 10.0 ** -digits
    want_beta = ref.slab_on_wall_modes(A, B, B / 2, eps, f, 2)
    for m, row, r in zip(st.at_frequency, rows_by_column(at_f), want_beta):
        assert row["label"] == m.label
        digits = len(row["beta [rad/m]"].split(".")[1]) if "." in row["beta [rad/m]"] else 0
        assert abs(float(row["beta [rad/m]"]) - r.beta) <= float(row["± [rad/m]"]) + 0.5 * 10.0 ** -digits
        assert float(row["eps_eff"]) == pytest.approx(m.effective_permittivity, abs=1e-5)
    assert repr(st).startswith("<Study: 2 modes of a rectangle section with material regions, at 13 GHz")
    # what solve() returns for a loaded guide shows the same table at the frequency
    assert rows_by_column(parse(st.at_frequency._repr_html_()).tables[0])[0]["label"] == st.at_frequency[0].label
    assert parse(st.at_frequency[0]._repr_html_()).tables and repr(st.at_frequency[0]).startswith("<LoadedMode #1")


def test_sweep_html_shows_every_point():
    widths = [22.86e-3, 19.05e-3]
    sw = fm.sweep(fm.rectangle, {"height": 9.525e-3}, {"width": widths + [-1e-3]}, modes=2, accuracy=1e-6, workers=1)
    page = parse(sw._repr_html_())
    rows = rows_by_column(page.tables[0])
    assert [r["width [mm]"] for r in rows] == ["-1", "19.05", "22.86"]  # grid order, mm
    assert rows[0]["single-mode band [GHz]"] == "invalid"
    for row, a in zip(rows[1:], sorted(widths)):
        r = sw.points[(a,)]
        assert row["fc1 [GHz]"] == format_ghz(r["fc"][0], r["fc_error"][0])
        digits = len(row["fc1 [GHz]"].split(".")[1])
        # TE10 of an a x b rectangle: c0 / (2 a) (Pozar, sec. 3.3)
        assert abs(float(row["fc1 [GHz]"]) - C0 / (2 * a) / 1e9) <= r["fc_error"][0] / 1e9 + 0.5 * 10.0 ** -digits
    assert any("invalid: -1:" in t for t in page.text)  # the shape's message for the refused point
    assert repr(sw) == "<SweepResult of rectangle: 3 points over width -1 .. 22.86 mm, 2 modes each, 1 invalid>"
    # a message with markup in it is escaped
    bad = dict(sw.points)
    bad[(-1e-3,)] = dict(bad[(-1e-3,)], message="<script>x</script> & y")
    html_text = dataclasses.replace(sw, points=bad)._repr_html_()
    assert "<script>" not in html_text and "&lt;script&gt;x&lt;/script&gt; &amp; y" in html_text


def test_example_notebook_runs(monkeypatch):
    nbformat = pytest.importorskip("nbformat")
    nbclient = pytest.importorskip("nbclient")
    nb = nbformat.read(ROOT / "examples" / "notebook.ipynb", as_version=4)
    nbformat.validate(nb)
    # the kernel imports this worktree's femodes
    monkeypatch.setenv("PYTHONPATH", os.pathsep.join([str(ROOT)] + [p for p in [os.environ.get("PYTHONPATH")] if p]))
    nbclient.NotebookClient(nb, timeout=300, kernel_name="python3",
                            resources={"metadata": {"path": str(ROOT / "examples")}}).execute()
    outputs = [o for c in nb.cells if c.cell_type == "code" for o in c.outputs]
    assert not [o for o in outputs if o.output_type == "error"]
    htmls = [o.data["text/html"] for o in outputs if "text/html" in o.get("data", {})]
    pngs = [o for o in outputs if "image/png" in o.get("data", {})]
    assert len(pngs) == 1  # the field pattern
    first = parse(htmls[0])
    labels = [r["label"] for r in rows_by_column(first.tables[0])]
    assert labels[0] == "TE1 (x odd, y even)" and len(labels) == 6
    sweep = rows_by_column(parse(htmls[-1]).tables[0])
    assert [r["gap [mm]"] for r in sweep] == ["1", "2", "3"]
    # a wider gap loads the ridges less: the dominant cutoff rises (common practice)
    fc1 = [float(r["fc1 [GHz]"]) for r in sweep]
    assert fc1 == sorted(fc1)
