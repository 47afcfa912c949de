"""What a new user trips over (common practice: the messages must say what was done, in the
user's own terms): millimetres typed into the SI call, an [output] table with no figures, and a
way to watch the refinement."""

import warnings

import pytest

import femodes as fm
from femodes.case import parse_case


def test_millimetres_typed_into_the_si_call_get_a_warning_not_a_refusal():
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        ms = fm.solve(fm.rectangle(22.86, 10.16), modes=1, accuracy=1e-4)
    text = " ".join(str(w.message) for w in caught)
    assert "22.86 m across" in text and "millimetres" in text and "22.86e-3" in text
    assert ms[0].label == "TE10"  # solved all the same


def test_an_ordinary_guide_gets_no_scale_warning():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        fm.solve(fm.rectangle(22.86e-3, 10.16e-3), modes=1, accuracy=1e-4)


def test_output_directory_without_figures_warns():
    with pytest.warns(UserWarning, match="no figures"):
        parse_case('[guide]\nshape = "circle"\nradius = 5\n[output]\ndirectory = "out"\n')


def test_verbose_shows_the_refinement_on_stderr(tmp_path, capsys, monkeypatch):
    from femodes.cli import main

    monkeypatch.delenv("FEMODES_DEBUG", raising=False)
    case = tmp_path / "c.toml"
    case.write_text('[guide]\nshape = "circle"\nradius = 5\n[solve]\nmodes = 2\naccuracy = 1e-4\n', encoding="utf-8")
    try:
        assert main(["solve", str(case), "--no-figures", "--verbose", "--json"]) == 0
    finally:
        monkeypatch.delenv("FEMODES_DEBUG", raising=False)
    out, err = capsys.readouterr()
    assert "iteration 0" in err and "worst estimate" in err
    assert out.lstrip().startswith("{")  # the JSON on stdout stays clean


@pytest.mark.parametrize("body, words", [
    ('[guide]\nshape = "circle"\nradius = -5\n', ["radius in [guide]", "-5 (mm)"]),
    ('[guide]\nshape = "circle"\nunits = "in"\nradius = 0\n', ["radius in [guide]", "must be positive", "0 (in)"]),
    ('[guide]\nshape = "circle"\nradius = 5\n[analysis]\nfrequency = "ten"\n', ["`frequency_units`"]),
    ('[guide]\nshape = "circle"\nradius = 5\n[solve]\naccuracy = 0\n', ["from 1e-11", "up to 0.1", "[solve]"]),
    ('[guide]\nshape = "circle"\nradius = 5\n[solve]\naccuracy = 0.5\n', ["from 1e-11", "up to 0.1", "[solve]"]),
    ('[guide]\nshape = "circle"\nradius = 5\n[solve]\nmodes = 100000\n', ["modes in [solve]", "at most 500"]),
    ('[guide]\nshape = "circle"\nradius = 5\n[[region]]\nshape = "circle"\nradius = 1\noffset = [100, 0]\neps_r = 2\n',
     ["offset = [dx, dy] in mm"]),
])
def test_case_file_messages_speak_the_case_file(tmp_path, body, words):
    from femodes import FemodesError
    from femodes.case import load_case

    path = tmp_path / "m.toml"
    path.write_text(body, encoding="utf-8")
    with pytest.raises(FemodesError) as exc:
        load_case(path)
    msg = str(exc.value)
    assert str(path.name) in msg and ".translated" not in msg
    for w in words:
        assert w in msg, (w, msg)


def test_an_interrupted_write_leaves_the_old_file_whole(tmp_path, monkeypatch):
    # every output goes to a temporary name and is moved into place when complete (femodes.atomic)
    from femodes import report as R
    from femodes.report import files

    ms = fm.solve(fm.rectangle(22.86e-3, 10.16e-3), modes=2, accuracy=1e-4)
    path = tmp_path / "modes.csv"
    R.write_csv(ms, path)
    before = path.read_text()

    def broken(rows):
        raise KeyboardInterrupt  # Ctrl-C while the rows are written

    monkeypatch.setattr(files.csv, "writer", lambda *a, **k: type("W", (), {"writerows": staticmethod(broken)})())
    with pytest.raises(KeyboardInterrupt):
        R.write_csv(ms, path)
    assert path.read_text() == before and not list(tmp_path.glob(".*part-*"))
    monkeypatch.undo()
    figure = tmp_path / "chart.png"
    R.figures.mode_chart(ms, figure)
    assert figure.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" and not list(tmp_path.glob(".*part-*"))
