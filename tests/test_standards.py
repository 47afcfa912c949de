"""Standard rectangular guide sizes: the EIA designations' inner dimensions (the WR number is the
broad side in hundredths of an inch; EIA RS-261 tables, from memory) and their TE10 cutoffs
against the closed form fc = c / (2a) (Pozar, Microwave Engineering, 4th ed., sec. 3.3)."""

import pytest

import femodes as fm
from femodes import FemodesError
from femodes.geometry.standards import STANDARD_GUIDES, find_standard, standard_size

C0 = 299792458.0


@pytest.mark.parametrize("name, a_mm, b_mm, band", [
    ("WR-90", 22.86, 10.16, (8.2e9, 12.4e9)),
    ("WR-62", 15.7988, 7.8994, (12.4e9, 18e9)),
    ("WR-28", 7.112, 3.556, (26.5e9, 40e9)),
    ("WR-284", 72.136, 34.036, (2.6e9, 3.95e9)),
])
def test_standard_sizes_from_the_table(name, a_mm, b_mm, band):
    a, b, rec = standard_size(name)
    assert a == pytest.approx(a_mm * 1e-3, rel=1e-12) and b == pytest.approx(b_mm * 1e-3, rel=1e-12)
    assert rec == pytest.approx(band)
    assert find_standard(a, b) == name


def test_every_standard_band_lies_in_its_single_mode_band():
    # common practice: the recommended band sits inside TE10 .. TE20 (and below TE01)
    for name, (a_in, b_in, lo, hi) in STANDARD_GUIDES.items():
        a, b, _ = standard_size(name)
        fc10, fc20, fc01 = C0 / (2 * a), C0 / a, C0 / (2 * b)
        assert fc10 < lo * 1e9 < hi * 1e9 < min(fc20, fc01), name


def test_te10_cutoff_of_a_standard_guide():
    ms = fm.solve(fm.standard("wr 62"), modes=2, accuracy=1e-7)
    a, _, _ = standard_size("WR-62")
    assert ms[0].label == "TE10" and abs(ms[0].fc - C0 / (2 * a)) <= ms[0].fc_error


def test_unknown_designation_names_the_nearest():
    with pytest.raises(FemodesError, match="nearest: WR-90"):
        fm.standard("WR-91")


def test_case_file_standard_shape_prints_the_standard_band(tmp_path, capsys):
    from femodes.cli import main

    case = tmp_path / "s.toml"
    case.write_text('[guide]\nshape = "standard"\ndesignation = "WR-90"\n[solve]\nmodes = 2\naccuracy = 1e-5\n'
                    '[analysis]\nfrequency = 10\n', encoding="utf-8")
    assert main(["solve", str(case), "--no-figures"]) == 0
    out = capsys.readouterr().out
    assert "WR-90 (EIA standard size): its recommended band 8.2 - 12.4 GHz" in out
    assert "rule of thumb 1.25 fc1 .. 0.95 fc2" in out
