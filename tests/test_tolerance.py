"""Tolerance analysis against the rectangle's closed form (Pozar, Microwave Engineering, 4th ed.,
sec. 3.3: fc_10 = c / (2a), fc_01 = c / (2b), so d fc_10 / d a = -c / (2 a^2) and the ratio
fc_20 / fc_10 = 2 does not move); Monte Carlo spreads against the uniform distribution's
standard deviation t / sqrt(3) (common practice)."""

import math

import numpy as np
import pytest

import femodes as fm
from femodes import FemodesError

C0 = 299792458.0
A, B, TA, TB = 22.86e-3, 10.16e-3, 50e-6, 30e-6


@pytest.fixture(scope="module")
def wr90():
    return fm.tolerance(fm.rectangle, {"width": A, "height": B}, {"width": TA, "height": TB}, modes=3,
                        accuracy=1e-7, samples=40000)


def test_worst_case_against_the_closed_form(wr90):
    nominal, worst, std = wr90.of("fc1")
    exact = C0 / (2 * A * A) * TA
    assert worst >= exact and worst == pytest.approx(exact, rel=1e-5)  # the bound carries the sensitivity's error
    # TE01 (fc3 here) moves with the height only
    n3, w3, _ = wr90.of("fc3")
    assert w3 == pytest.approx(C0 / (2 * B * B) * TB, rel=1e-5)
    assert wr90.contributions["fc1"][0][0] == "width" and wr90.contributions["fc3"][0][0] == "height"
    # band: f_low = TE10, f_high = TE20 = 2 TE10; the ratio stays 2 whatever the width and height
    assert wr90.of("f_high")[1] == pytest.approx(2 * exact, rel=1e-5)
    s = wr90.sensitivity
    rel = s.fc_error[0] / s.fc[0] + s.fc_error[1] / s.fc[1]
    assert abs(wr90.of("ratio")[0] - 2.0) <= 2.0 * rel
    # its worst case is only the sensitivities' own error bound (the true change is 0)
    assert wr90.of("ratio")[1] < 1e-7


def test_monte_carlo_spread_of_a_uniform_tolerance(wr90):
    _, _, std = wr90.of("fc1")
    want = C0 / (2 * A * A) * TA / math.sqrt(3)
    assert std == pytest.approx(want, rel=0.02)  # 40000 samples: sampling error about 0.5 %
    j = wr90.names.index("fc1")
    assert np.all(np.abs(wr90.samples[:, j]) <= wr90.worst[j])


def test_histogram_and_bad_input(wr90, tmp_path):
    from femodes.report import figures as F

    F.tolerance_histogram(wr90, tmp_path / "tol.png")
    assert (tmp_path / "tol.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    with pytest.raises(FemodesError, match="tolerance of 'width' must be >= 0"):
        fm.tolerance(fm.rectangle, {"width": A, "height": B}, {"width": -1e-6}, modes=2, accuracy=1e-4)
    with pytest.raises(FemodesError, match="no sensitivity to widht"):
        fm.tolerance(fm.rectangle, {"width": A, "height": B}, {"widht": 1e-6}, modes=2, accuracy=1e-4)
