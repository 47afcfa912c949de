"""Sensitivities d fc / d(parameter) (femodes.studies.sensitivity) against closed forms and against
finite differences of independent solves.

Outside references: the rectangle's fc = (c / 2) sqrt((m / a)^2 + (n / b)^2) (Pozar, "Microwave
Engineering", sec. 3.3; femodes.reference.rectangle_fc_derivatives); the circle's
fc = c x_nm / (2 pi R) with x_nm a zero of J_n or J_n' (scipy.special, femodes.reference.circle_modes),
so d fc / d R = -fc / R for every mode.  Finite differences of independent ``femodes.solve`` calls
check the method (not the physics) for every parameter of the double-ridge guide.
"""

import math

import numpy as np
import pytest

import femodes
from femodes.reference import circle_modes, rectangle_fc_derivatives

ACC = 1e-6


def _check(sens, name, i, expected, scale):
    """The true error lies within the reported error and within the asked accuracy (relative
    to the natural scale fc / parameter of a sensitivity)."""
    got, err = sens.dfc[name][i], sens.dfc_error[name][i]
    true = abs(got - expected)
    assert true <= err, (sens.labels[i], name, got, expected, true, err)
    assert true <= ACC * scale, (sens.labels[i], name, true / scale)


def test_rectangle_every_mode_against_the_closed_form():
    # a WR-90-sized guide (22.86 x 10.16 mm): TE10, TE20, TE01, TE11 / TM11 (degenerate across
    # families: separate problems, each its own derivative), TE30
    a, b = 22.86e-3, 10.16e-3
    s = femodes.sensitivity(femodes.rectangle, {"width": a, "height": b}, modes=6, accuracy=ACC)
    assert set(s.dfc) == {"width", "height"}
    assert "corner_radius" in s.skipped  # sharp corners: a fillet would appear
    assert [m.label for m in s.modes][:2] == ["TE10", "TE20"]
    for i, m in enumerate(s.modes):
        mm, nn = m.indices
        da, db = rectangle_fc_derivatives(a, b, mm, nn)  # Pozar sec. 3.3
        _check(s, "width", i, da, m.fc / a)
        _check(s, "height", i, db, m.fc / b)
    # TE10: exactly -c / (2 a^2) and independent of b
    assert s.dfc["width"][0] == pytest.approx(-femodes.C0 / (2 * a * a), rel=1e-8)
    assert abs(s.dfc["height"][0]) <= max(s.dfc_error["height"][0], 1e-8 * s.fc[0] / b)


def test_square_degenerate_pair_splits_by_member():
    # a square's TE10 / TE01 are one degenerate group; widening moves TE10 only (Pozar sec. 3.3)
    a = 20e-3
    s = femodes.sensitivity(femodes.rectangle, {"width": a, "height": a}, modes=6, accuracy=ACC)
    assert (0, 1) in s.groups
    for i, m in enumerate(s.modes):
        da, db = rectangle_fc_derivatives(a, a, *m.indices)
        _check(s, "width", i, da, m.fc / a)
        _check(s, "height", i, db, m.fc / a)


def test_circle_every_mode_scales_as_one_over_radius():
    # fc = c x_nm / (2 pi R): d fc / d R = -fc / R (zeros from scipy.special via femodes.reference);
    # modes 1-8: TE11 pair, TM01, TE21 pair, TE01, TM11 pair (TE01 / TM11 degenerate across families)
    R = 10e-3
    s = femodes.sensitivity(femodes.circle, {"radius": R}, modes=8, accuracy=ACC)
    ref = circle_modes(R, 8)
    assert len(s.groups) == 3 and all(len(g) == 2 for g in s.groups)
    for i, m in enumerate(s.modes):
        assert m.fc == pytest.approx(ref[i].fc, rel=1e-6)
        _check(s, "radius", i, -ref[i].fc / R, ref[i].fc / R)


@pytest.mark.parametrize("shape,params", [
    (femodes.ellipse, {"a": 12e-3, "b": 8e-3}),
    (femodes.l_shape, {"width": 20e-3, "height": 16e-3, "notch_width": 9e-3, "notch_height": 7e-3}),
    (femodes.rectangle, {"width": 20e-3, "height": 10e-3, "corner_radius": 1.5e-3}),
], ids=["ellipse", "l_shape", "rounded_rectangle"])
def test_normalised_sensitivities_of_all_lengths_sum_to_minus_one(shape, params):
    # every cutoff of a shape scaled by t goes as 1 / t (lambda ~ 1 / size^2; Euler's relation for a
    # function homogeneous of degree -1, common practice): sum over the lengths of (p / fc) d fc / d p = -1
    s = femodes.sensitivity(shape, params, modes=4, accuracy=ACC)
    assert set(s.dfc) == set(params)
    total = sum(s.relative(n) for n in params)
    bound = sum(s.dfc_error[n] * params[n] / s.fc for n in params)
    assert np.all(np.abs(total + 1.0) <= bound), (total + 1.0, bound)
    assert np.all(np.abs(total + 1.0) <= ACC)


RIDGE = {"width": 19.05e-3, "height": 9.525e-3, "ridge_width": 4.7625e-3, "gap": 3.175e-3}
ROUNDED = {**RIDGE, "ridge_corner_radius": 0.4e-3, "base_radius": 0.4e-3}


def _finite_difference(params, name, modes, accuracy, step):
    """Central differences D(h), D(2h) of independent solves, Richardson's (4 D(h) - D(2h)) / 3, and
    its error budget: the reported solve errors through the difference quotients, plus |D(h) - D(2h)| / 3
    (the size of the h^2 term removed; the h^4 remainder is far smaller)."""
    v = params[name]
    quot, noise = [], []
    for h in (step * v, 2 * step * v):
        up = femodes.solve(femodes.double_ridge(**{**params, name: v + h}), modes=modes, accuracy=accuracy)
        dn = femodes.solve(femodes.double_ridge(**{**params, name: v - h}), modes=modes, accuracy=accuracy)
        quot.append((np.array([m.fc for m in up]) - np.array([m.fc for m in dn])) / (2 * h))
        noise.append((np.array([m.fc_error for m in up]) + np.array([m.fc_error for m in dn])) / (2 * h))
    fd = (4 * quot[0] - quot[1]) / 3
    budget = (4 * noise[0] + noise[1]) / 3 + np.abs(quot[0] - quot[1]) / 3
    return fd, budget


@pytest.mark.parametrize("params,names", [(RIDGE, ("width", "height", "ridge_width", "gap")),
                                          (ROUNDED, ("ridge_corner_radius", "base_radius"))],
                         ids=["sharp", "rounded"])
def test_double_ridge_against_finite_differences_of_independent_solves(params, names):
    # steps of 0.5 % and 1 % of each parameter, solves at accuracy 1e-7: the FD budget (solve
    # errors / 2h ~ 2e-5 fc / p, h^2 term ~ 2e-5 fc / p) is far above the sensitivity's own
    # error, so this checks the method to a few parts in 1e5 of fc / p
    modes = 3
    s = femodes.sensitivity(femodes.double_ridge, params, modes=modes, accuracy=ACC)
    assert set(names) <= set(s.dfc) and not s.skipped.keys() & set(names)
    for name in names:
        fd, budget = _finite_difference(params, name, modes, 1e-7, 0.005)
        scale = s.fc / params[name]
        diff = np.abs(s.dfc[name] - fd)
        assert np.all(diff <= s.dfc_error[name] + budget), (name, diff / scale, (s.dfc_error[name] + budget) / scale)
        assert np.all(s.dfc_error[name] + budget <= 1e-4 * scale), name  # a sharp check, not a loose one


def test_zero_radius_and_offsets_are_skipped_with_a_reason():
    s = femodes.sensitivity(femodes.coaxial, {"outer_radius": 5e-3, "inner_radius": 2e-3}, modes=3, accuracy=1e-5)
    assert set(s.dfc) == {"outer_radius", "inner_radius"} and "offset" in s.skipped
    assert s.modes[0].family == "TEM" and s.dfc["outer_radius"][0] == 0 and s.dfc["inner_radius"][0] == 0
    # TE11 of the coax: fc falls as either radius grows (its kc ~ 2 / (a + b), Pozar sec. 3.5)
    te11 = [i for i, m in enumerate(s.modes) if m.family == "TE"][0]
    assert s.dfc["outer_radius"][te11] < 0 and s.dfc["inner_radius"][te11] < 0
    r = femodes.sensitivity(femodes.double_ridge, RIDGE, modes=2, accuracy=1e-4)
    assert "ridge_corner_radius" in r.skipped and "base_radius" in r.skipped


def test_bad_input_says_what_is_valid():
    with pytest.raises(femodes.FemodesError, match="no parameter 'depth'.*width, height"):
        femodes.sensitivity(femodes.rectangle, {"width": 0.02, "height": 0.01, "depth": 1.0})
    with pytest.raises(femodes.FemodesError, match="'gap'.*must be a number.*'3mm'"):
        femodes.sensitivity(femodes.double_ridge, {**RIDGE, "gap": "3mm"})
    with pytest.raises(femodes.FemodesError, match="needs 'height'"):
        femodes.sensitivity(femodes.rectangle, {"width": 0.02})
    with pytest.raises(femodes.FemodesError, match="parameters must be a dict"):
        femodes.sensitivity(femodes.rectangle, [0.02, 0.01])

    def loaded(width, height):
        return femodes.rectangle(width, height).with_material(femodes.rectangle(width / 4, height), eps_r=2.0)

    with pytest.raises(femodes.FemodesError, match="homogeneously filled"):
        femodes.sensitivity(loaded, {"width": 0.02, "height": 0.01})
    s = femodes.sensitivity(femodes.rectangle, {"width": 0.02, "height": 0.01}, modes=1, accuracy=1e-4)
    with pytest.raises(femodes.FemodesError, match="no sensitivity to 'gap'"):
        s.relative("gap")
    assert math.isfinite(s.relative("width")[0])
