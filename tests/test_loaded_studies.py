"""Design studies of dielectric-loaded guides: seek, sensitivity and tolerance against the
slab-loaded rectangle's transverse-resonance cutoffs.

Outside reference: a rectangular guide a x b filled to height d by a slab (full width) has LSE /
LSM modes whose cutoffs solve the transverse-resonance equations (Collin, Field Theory of Guided
Waves, 2nd ed., ch. 6; Pozar, Microwave Engineering, 4th ed., sec. 3.6 for the LSE case),
solved by root finding in femodes.reference.layered without the finite elements.  Derivatives
of the reference are central differences of those roots with a step of 1e-5 relative (the
roots are found to about 1e-14, so the difference is exact to about 1e-8 relative, far below
the error bars checked).
"""


import json
import math

import numpy as np
import pytest

import femodes as fm
from femodes import FemodesError
from femodes import reference as ref

A90, B90 = 22.86e-3, 10.16e-3  # WR-90 inner size (EIA)
# a slab filling the lower half; wider than the guide, so that it still fills the full width
# when the width changes (a region reaching outside the guide is cut at the wall)
SLAB = fm.rectangle(2 * A90, B90 / 2).translated(0, -B90 / 4)


def _regions(eps=2.25):
    return [{"name": "slab", "shape": SLAB, "eps_r": eps}]


def _cutoffs(eps, n=3, a=A90, b=B90):
    """LSE / LSM cutoffs (Hz) of the half-filled a x b guide (transverse resonance, Collin ch. 6)."""
    return [c.frequency for c in ref.layered_guide_cutoffs(a, b, [(b / 2, eps, 1.0), (b / 2, 1.0, 1.0)], n)]


# ----------------------------------------------------------------------------- seek

def test_seek_the_slab_permittivity_for_a_target_cutoff():
    # the target is the reference fc1 at eps_r = 2.5: seek must find 2.5 within its uncertainty
    want = _cutoffs(2.5)[0]
    r = fm.seek(fm.rectangle, {"width": A90, "height": B90}, {"region.slab.eps_r": (2.0, 3.0)}, {"fc1": want},
                modes=2, accuracy=1e-5, regions=_regions())
    got, err = r.values["region.slab.eps_r"], r.errors["region.slab.eps_r"]
    assert abs(got - 2.5) <= err <= 1e-5
    assert abs(r.achieved["fc1"] - want) <= 3 * r.achieved_error["fc1"]
    print(f"seek eps_r: {got:.10g} +- {err:.2g}, true / reported {abs(got - 2.5) / err:.2g}, {r.solves} solves")


def test_seek_the_width_of_a_loaded_guide_for_a_target_ratio():
    # a shape parameter free, the slab fixed: the width at which fc2 / fc1 of the half-filled
    # guide (eps_r 2.25) is the reference ratio at a = 22.86 mm
    f = _cutoffs(2.25, 2)
    r = fm.seek(fm.rectangle, {"height": B90}, {"width": (20e-3, 26e-3)}, {"ratio": f[1] / f[0]}, modes=2,
                accuracy=1e-5, regions=_regions())
    assert abs(r.values["width"] - A90) <= r.errors["width"] <= 1e-3 * A90
    print(f"seek width: true / reported {abs(r.values['width'] - A90) / r.errors['width']:.2g}, {r.solves} solves")


def test_seek_two_parameters_of_a_loaded_guide_for_two_cutoffs():
    # the slab eps_r and the width at which fc1 and fc2 are the reference's at (2.5, 22.86 mm)
    f = _cutoffs(2.5, 2)
    r = fm.seek(fm.rectangle, {"height": B90}, {"region.slab.eps_r": (2.0, 3.0), "width": (20e-3, 26e-3)},
                {"fc1": f[0], "fc2": f[1]}, modes=2, accuracy=1e-6, regions=_regions())
    assert abs(r.values["region.slab.eps_r"] - 2.5) <= r.errors["region.slab.eps_r"] <= 1e-4
    assert abs(r.values["width"] - A90) <= r.errors["width"] <= 1e-6 * A90
    print(f"two-parameter seek: true / reported {abs(r.values['region.slab.eps_r'] - 2.5) / r.errors['region.slab.eps_r']:.2g}"
          f", {abs(r.values['width'] - A90) / r.errors['width']:.2g}, {r.solves} solves")


def test_loaded_seek_refusals():
    base = dict(modes=2, accuracy=1e-3, regions=_regions())
    with pytest.raises(FemodesError, match="region.slab.eps_r"):
        fm.seek(fm.rectangle, {"width": A90, "height": B90}, {"region.other.eps_r": (2, 3)}, {"fc1": 6e9}, **base)
    with pytest.raises(FemodesError, match="must be positive"):
        fm.seek(fm.rectangle, {"width": A90, "height": B90}, {"region.slab.eps_r": (0, 3)}, {"fc1": 6e9}, **base)
    with pytest.raises(FemodesError, match="only for the target alpha"):
        fm.seek(fm.rectangle, {"width": A90, "height": B90}, {"region.slab.tan_delta": (0, 1e-3)}, {"fc1": 6e9}, **base)


# ----------------------------------------------------------------------------- sensitivity

def _layers_cutoffs(layers, n=3, a=A90, b=B90):
    return np.array([c.frequency for c in ref.layered_guide_cutoffs(a, b, layers, n)])


def _ref_derivative(f, x, rel=1e-5):
    """Central difference of the reference with a tiny step (exact to ~1e-8 relative)."""
    d = rel * x
    return (f(x + d) - f(x - d)) / (2 * d)


@pytest.fixture(scope="module")
def slab_sensitivity():
    return fm.sensitivity(fm.rectangle, {"width": A90, "height": B90}, modes=3, accuracy=1e-5, regions=_regions())


def test_material_sensitivities_against_the_transverse_resonance_roots(slab_sensitivity):
    s = slab_sensitivity
    e = 2.25
    want = {
        "region.slab.eps_r": _ref_derivative(lambda x: _layers_cutoffs([(B90 / 2, x, 1.0), (B90 / 2, 1.0, 1.0)]), e),
        "region.slab.mu_r": _ref_derivative(lambda x: _layers_cutoffs([(B90 / 2, e, x), (B90 / 2, 1.0, 1.0)]), 1.0),
        "eps_r": _ref_derivative(lambda x: _layers_cutoffs([(B90 / 2, e, 1.0), (B90 / 2, x, 1.0)]), 1.0),
        "mu_r": _ref_derivative(lambda x: _layers_cutoffs([(B90 / 2, e, 1.0), (B90 / 2, 1.0, x)]), 1.0),
    }
    for name, w in want.items():
        got, err = s.dfc[name], s.dfc_error[name]
        assert np.all(np.abs(got - w) <= err), (name, got, w, err)
        assert np.all(err <= 1e-4 * np.abs(w)), (name, err / np.abs(w))
        assert s.method[name].startswith("first-order perturbation")
        print(name, "true / reported", np.array2string(np.abs(got - w) / err, precision=2))
    # the energy shares of the slab and the fill add up: sum_R eps_R d fc / d eps_R = -fc / 2
    total = e * s.dfc["region.slab.eps_r"] + s.dfc["eps_r"]
    assert np.allclose(total, -s.fc / 2, rtol=1e-9)
    assert "region.slab.tan_delta" in s.skipped


def test_shape_sensitivities_by_shape_derivative_and_at_a_kink_by_differences(slab_sensitivity):
    s = slab_sensitivity
    e = 2.25
    # the width: the slab (wider than the guide) fills every width, so the reference is the
    # layered guide of width a; the slab's top meets the side walls and slides along itself:
    # the shape derivative on the nominal mesh, no solve per parameter
    w = _ref_derivative(lambda a: _layers_cutoffs([(B90 / 2, e, 1.0), (B90 / 2, 1.0, 1.0)], a=a), A90)
    got, err = s.dfc["width"], s.dfc_error["width"]
    assert np.all(np.abs(got - w) <= err)
    assert np.all(err <= 1e-3 * s.fc / A90)
    assert s.method["width"].startswith("shape derivative")
    print("width: true / reported", np.array2string(np.abs(got - w) / err, precision=2))

    # the height: the guide centred, the slab fixed on the old floor.  A taller guide leaves an
    # air gap under the slab, a lower one cuts the slab: fc(height) has a kink, and the two
    # one-sided derivatives (reference: three and two layers) must both lie within the error bar
    def taller(b):
        g = (b - B90) / 2
        return _layers_cutoffs([(g, 1.0, 1.0), (B90 / 2, e, 1.0), (B90 / 2 + g, 1.0, 1.0)], b=b)

    def lower(b):
        g = (b - B90) / 2
        return _layers_cutoffs([(B90 / 2 + g, e, 1.0), (B90 / 2 + g, 1.0, 1.0)], b=b)

    f0, step = _layers_cutoffs([(B90 / 2, e, 1.0), (B90 / 2, 1.0, 1.0)]), 1e-6 * B90
    up, down = (taller(B90 + step) - f0) / step, (f0 - lower(B90 - step)) / step
    got, err = s.dfc["height"], s.dfc_error["height"]
    assert np.all(np.abs(got - up) <= err) and np.all(np.abs(got - down) <= err)
    # the slab's own edge lies on the moving floor: the differences of whole solves are kept
    assert s.method["height"].startswith("central difference") and "kink" in s.method["height"]
    print("height: true / reported (above, below)", np.array2string(np.abs(got - up) / err, precision=2),
          np.array2string(np.abs(got - down) / err, precision=2))


def test_shape_derivative_of_a_floating_slab_against_the_roots_and_the_differences():
    # a slab of eps_r 2.25, a third of the height, centred in the centred WR-90: the height
    # moves floor and roof, the slab stays (reference: three layers, Collin ch. 6, tiny-step
    # differences of the roots); the same derivative by differences of whole solves in the same
    # run, both within their error bars of the reference, and the time of each
    import time

    from femodes.studies.loaded_sensitivity import loaded_sensitivities
    e, d = 2.25, B90 / 3
    regions = [{"name": "slab", "shape": fm.rectangle(2 * A90, d), "eps_r": e, "mu_r": 1.0, "tan_delta": 0.0}]

    def fc(b):
        g = (b - d) / 2
        return _layers_cutoffs([(g, 1.0, 1.0), (d, e, 1.0), (g, 1.0, 1.0)], b=b)

    want = _ref_derivative(fc, B90)
    values = {"width": A90, "height": B90}
    runs = {}
    for diff in (False, True):
        t = time.perf_counter()
        r = loaded_sensitivities(fm.rectangle, values, ["width", "height"], regions, 3, 2.5e-6, {},
                                 only={"height"}, differences=diff)
        runs[diff] = (r, time.perf_counter() - t)
    shape, fd = runs[False][0], runs[True][0]
    assert shape["method"]["height"].startswith("shape derivative")
    assert fd["method"]["height"].startswith("central difference")
    np.testing.assert_allclose(shape["fc"], fc(B90), rtol=1e-5)
    for r in (shape, fd):
        got, err = r["dfc"]["height"], r["dfc_error"]["height"]
        assert np.all(np.abs(got - want) <= err), (got, want, err)
        assert np.all(err <= 1e-3 * r["fc"] / B90)
    assert np.all(np.abs(shape["dfc"]["height"] - fd["dfc"]["height"])
                  <= shape["dfc_error"]["height"] + fd["dfc_error"]["height"])
    ratio = {k: _ratios(np.abs(r["dfc"]["height"] - want) / r["dfc_error"]["height"]) for k, r in (("shape", shape),
                                                                                                 ("fd", fd))}
    print(f"floating slab, d fc / d height: true / reported {ratio['shape']} (differences {ratio['fd']});"
          f" {runs[False][1]:.2f} s vs {runs[True][1]:.2f} s with differences (nominal solve in both)")


def _ratios(x):
    return "[" + ", ".join(f"{v:.2g}" for v in x) + "]"


def _rod_cutoffs(a, b, eps, count):
    """The ``count`` lowest cutoffs (Hz, degenerate pairs twice) of a circular guide of radius b
    with a concentric rod of radius a, eps_r ``eps``.  At beta = 0 the fields split: E_z
    (TM-type) with -div grad E_z = k0^2 eps E_z, and H_z (TE-type) with
    -div (eps^-1 grad H_z) = k0^2 H_z; per azimuthal order n, J_n(k1 r) in the rod (k1 = k0
    sqrt(eps)) and J_n, Y_n outside with E_z = 0 / d H_z / dr = 0 on the wall, E_z and
    d E_z / dr (H_z and eps^-1 d H_z / dr) continuous at r = a (separation of variables in
    cylindrical coordinates, from memory; scipy.special for the Bessel functions)."""
    from scipy import optimize, special

    J, Y, Jp, Yp = special.jv, special.yv, special.jvp, special.yvp

    def char(k0, n, fam):
        k1 = k0 * math.sqrt(eps)
        if fam == "TM":
            f = J(n, k0 * a) * Y(n, k0 * b) - Y(n, k0 * a) * J(n, k0 * b)
            df = k0 * (Jp(n, k0 * a) * Y(n, k0 * b) - Yp(n, k0 * a) * J(n, k0 * b))
            return J(n, k1 * a) * df - k1 * Jp(n, k1 * a) * f
        g = J(n, k0 * a) * Yp(n, k0 * b) - Y(n, k0 * a) * Jp(n, k0 * b)
        dg = k0 * (Jp(n, k0 * a) * Yp(n, k0 * b) - Yp(n, k0 * a) * Jp(n, k0 * b))
        return k1 / eps * Jp(n, k1 * a) * g - dg * J(n, k1 * a)

    ks = np.linspace(0.05 / b, 6.0 / b, 1500)
    out = []
    for fam in ("TE", "TM"):
        for n in range(4):
            v = np.array([char(k, n, fam) for k in ks])
            for i in np.flatnonzero(v[:-1] * v[1:] < 0):
                k = optimize.brentq(char, ks[i], ks[i + 1], args=(n, fam), xtol=1e-14, rtol=1e-15)
                out += [k * 299792458.0 / (2 * math.pi)] * (1 if n == 0 else 2)
    return np.sort(out)[:count]


def test_shape_derivative_on_a_curved_mesh_with_degenerate_pairs():
    # a rod of radius 2 mm, eps_r 4, in a circle of radius 5 mm: d fc / d radius of the wall
    # (the rod stays), curved isoparametric mesh, Nedelec elements, degenerate pairs (n >= 1)
    a, b, e = 2e-3, 5e-3, 4.0
    s = fm.sensitivity(fm.circle, {"radius": b}, modes=4, accuracy=4e-4,
                       regions=[{"name": "rod", "shape": fm.circle(a), "eps_r": e}])
    want = _ref_derivative(lambda r: _rod_cutoffs(a, r, e, 4), b, rel=1e-6)
    np.testing.assert_allclose(s.fc, _rod_cutoffs(a, b, e, 4), rtol=1e-4)
    got, err = s.dfc["radius"], s.dfc_error["radius"]
    assert s.method["radius"].startswith("shape derivative")
    assert np.all(np.abs(got - want) <= err), (got, want, err)
    print("rod in a circle, d fc / d radius: true / reported", _ratios(np.abs(got - want) / err),
          "reported / (fc / radius)", _ratios(err * b / s.fc))
    assert np.all(err <= 2e-3 * s.fc / b)


# ----------------------------------------------------------------------------- tolerance

def test_tolerance_of_a_loaded_guide_against_the_reference_linearisation():
    # eps_r of the slab +- 0.05 and the width +- 0.05 mm: the worst case and the Monte Carlo
    # spread of fc1, fc2 from the reference's derivatives (tiny-step differences of the
    # transverse-resonance roots), and the reference at the four corners within the worst case
    # plus its own second-order part
    e, te, ta = 2.25, 0.05, 0.05e-3
    t = fm.tolerance(fm.rectangle, {"width": A90, "height": B90}, {"region.slab.eps_r": te, "width": ta}, modes=3,
                     accuracy=1e-5, samples=20000, regions=_regions(e))
    assert set(t.sensitivity.dfc) == {"region.slab.eps_r", "width"}   # only what has a tolerance

    def f(x, a):
        return _layers_cutoffs([(B90 / 2, x, 1.0), (B90 / 2, 1.0, 1.0)], 2, a=a)

    de = _ref_derivative(lambda x: f(x, A90), e)
    da = _ref_derivative(lambda a: f(e, a), A90)
    linear = np.abs(de) * te + np.abs(da) * ta
    bound = (np.abs(t.sensitivity.dfc_error["region.slab.eps_r"][:2]) * te
             + np.abs(t.sensitivity.dfc_error["width"][:2]) * ta)
    worst = np.array([t.of("fc1")[1], t.of("fc2")[1]])
    assert np.all(worst - 2 * bound <= linear) and np.all(linear <= worst)
    # uniform and independent: std = sqrt(sum (d t)^2 / 3); 20000 draws: within 2 %
    std = np.sqrt(((de * te) ** 2 + (da * ta) ** 2) / 3)
    assert np.allclose([t.of("fc1")[2], t.of("fc2")[2]], std, rtol=0.02)
    f0 = f(e, A90)
    corners = np.array([np.abs(f(e + se * te, A90 + sa * ta) - f0) for se in (-1, 1) for sa in (-1, 1)]).max(axis=0)
    second = np.abs(f(e + te, A90) - 2 * f0 + f(e - te, A90)) / 2 + np.abs(f(e, A90 + ta) - 2 * f0 + f(e, A90 - ta)) / 2
    assert np.all(corners <= worst + 2 * second)
    assert t.contributions["fc1"][0][0] == "region.slab.eps_r"   # the permittivity moves fc1 most here
    print("tolerance fc1, fc2: worst", worst, "reference linear", linear, "corners", corners)


def test_tolerance_refuses_a_loss_tangent():
    with pytest.raises(FemodesError, match="no sensitivity to region.slab.tan_delta.*loss tangent"):
        fm.tolerance(fm.rectangle, {"width": A90, "height": B90}, {"region.slab.tan_delta": 1e-4}, modes=2,
                     accuracy=1e-3, regions=_regions())


# ----------------------------------------------------------------------------- case files and CLI

CASE = """title = "half-filled WR-90"
[guide]
shape = "rectangle"
width = 22.86
height = 10.16
[[region]]
name = "slab"
shape = "rectangle"
width = 45.72
height = 5.08
offset = [0, -2.54]
eps_r = 2.25
[solve]
modes = 2
accuracy = 1e-5
"""


def _run(tmp_path, capsys, text, *argv):
    from femodes.cli import main

    case = tmp_path / "case.toml"
    case.write_text(text, encoding="utf-8")
    code = main([argv[0], str(case)] + list(argv[1:]))
    out = capsys.readouterr()
    return code, out.out, out.err


SIDE_CASE = """[guide]
shape = "rectangle"
width = 22.86
height = 10.16
[[region]]
name = "slab"
shape = "rectangle"
width = 4.0
height = 10.16
offset = [-9.43, 0]
eps_r = 2.2
[solve]
modes = 1
accuracy = 1e-4
[analysis]
frequency = 9
[seek]
region.slab.eps_r = [2.0, 3.0]
"""


def test_seek_and_tolerance_tables_of_a_loaded_case(tmp_path, capsys):
    # a 4 mm full-height slab against the side wall of WR-90 at 9 GHz: the slab eps_r whose
    # TE10-like mode has the Z_PV of the exact piecewise-sine field at eps_r = 2.56 (transverse
    # resonance, Collin ch. 6; voltage on the centre line; femodes.reference.layered)
    a, b, t, f = A90, B90, 4e-3, 9e9
    beta2 = ref.layered_guide_modes(a, b, [(t, 2.56, 1.0), (a - t, 1.0, 1.0)], f, count=1, axis="x")[0].beta2
    want = ref.side_slab_te_m0_peak_and_voltage(a, b, t, 2.56, f, beta2, a / 2).z_pv
    code, out, _ = _run(tmp_path, capsys, SIDE_CASE + f"z_pv = {want!r}\n", "seek")
    assert code == 0
    line = next(x for x in out.splitlines() if x.strip().startswith("region.slab.eps_r ="))
    value, error = (float(w) for w in line.split("=")[1].split("±"))   # a permittivity has no unit
    assert abs(value - 2.56) <= error <= 0.1
    print(f"seek z_pv: eps_r {value:.6g} +- {error:.2g}, true / reported {abs(value - 2.56) / error:.2g}")
    code, out, _ = _run(tmp_path, capsys, CASE + "[tolerance]\nregion.slab.eps_r = 0.05\nsamples = 1000\n", "tolerance")
    assert code == 0 and "region.slab.eps_r ± 0.05" in out and "fc1" in out
    # the same worst case as the reference's linearisation (tiny-step difference of the roots)
    de = _ref_derivative(lambda x: _layers_cutoffs([(B90 / 2, x, 1.0), (B90 / 2, 1.0, 1.0)], 1), 2.25)[0]
    row = next(line for line in out.splitlines() if line.strip().startswith("fc1"))
    assert f"{abs(de) * 0.05 / 1e6:.3g}"[:4] in row


def test_sensitivity_verb_of_a_loaded_case(tmp_path, capsys):
    code, out, _ = _run(tmp_path, capsys, CASE, "sensitivity", "--modes", "1", "--accuracy", "1e-4")
    assert code == 0
    assert "d fc / d region.slab.eps_r [MHz]" in out and "d fc / d width [MHz/mm]" in out
    assert "first-order perturbation" in out and "central difference" in out


def test_refusals_in_loaded_case_files(tmp_path, capsys):
    code, _, err = _run(tmp_path, capsys, CASE + "[seek]\nregion.lid.eps_r = [2.0, 3.0]\nfc1 = 6\n", "seek")
    assert code == 2 and "region.lid.eps_r in [seek] names no [[region]]" in err and len(err.strip().splitlines()) == 1
    code, _, err = _run(tmp_path, capsys, CASE + "[tolerance]\nregion.slab.loss = 0.1\n", "tolerance")
    assert code == 2 and "region.slab.loss in [tolerance]" in err
    plain = CASE.split("[[region]]")[0] + "[solve]\nmodes = 2\n"
    code, _, err = _run(tmp_path, capsys, plain + "[tolerance]\nregion.slab.eps_r = 0.1\n", "tolerance")
    assert code == 2 and "no [[region]] tables" in err


def test_a_tolerance_on_the_fill_permittivity_homogeneous_and_loaded(tmp_path, capsys):
    # homogeneous: fc_10 = c0 / (2 a sqrt(eps_r)) (Pozar sec. 3.3), so the worst case of fc1 under
    # eps_r +- t is fc1 t / (2 eps_r) to first order
    eps, t = 2.2, 0.02
    r = fm.tolerance(fm.rectangle, {"width": A90, "height": B90}, {"eps_r": t}, modes=2, accuracy=1e-6, eps_r=eps,
                     samples=1000)
    fc1 = 299792458.0 / (2 * A90 * math.sqrt(eps))
    nominal, worst, _ = r.of("fc1")
    assert abs(nominal - fc1) <= r.sensitivity.fc_error[0]
    assert worst == pytest.approx(fc1 * t / (2 * eps), rel=1e-5)
    assert r.sensitivity.method["eps_r"].startswith("exact")
    # loaded, from a case file: the fill is the air above the slab (reference: its layer's eps_r)
    code, out, _ = _run(tmp_path, capsys, CASE + "[tolerance]\neps_r = 0.01\nsamples = 1000\n", "tolerance", "--json")
    assert code == 0
    doc = json.loads(out)
    d = _ref_derivative(lambda x: _layers_cutoffs([(B90 / 2, 2.25, 1.0), (B90 / 2, x, 1.0)], 2), 1.0)
    got = np.array(doc["worst"][:2])
    assert np.all(np.abs(d) * 0.01 <= got) and np.all(got <= np.abs(d) * 0.01 * (1 + 1e-3))


def test_loaded_study_inputs_are_checked_before_any_solve():
    base = {"width": A90, "height": B90}
    with pytest.raises(FemodesError, match="accuracy must lie between"):
        fm.sensitivity(fm.rectangle, base, accuracy=1.0, regions=_regions())
    with pytest.raises(FemodesError, match="modes must be a whole number"):
        fm.sensitivity(fm.rectangle, base, modes=0, regions=_regions())
    with pytest.raises(FemodesError, match="accuracy must lie between"):
        fm.seek(fm.rectangle, base, {"region.slab.eps_r": (2, 3)}, {"fc1": 6e9}, accuracy=0.5, regions=_regions())
    with pytest.raises(FemodesError, match="order of a loaded guide"):
        fm.seek(fm.rectangle, base, {"region.slab.eps_r": (2, 3)}, {"fc1": 6e9}, order=4, regions=_regions())
    with pytest.raises(FemodesError, match="family= does not apply"):
        fm.sensitivity(fm.rectangle, base, family="TE", regions=_regions())


def test_cutoff_shape_derivative_of_a_dilation_and_against_the_assembly_difference():
    # scaling a loaded section (walls and regions) by s scales every cutoff by 1 / s (Maxwell's
    # equations with fixed materials; common practice): under V = x, d (k0^2) = -2 k0^2 for every
    # mode, on a curved P3 mesh with Nedelec elements and degenerate pairs; and the closed-form
    # derivative of the forms equals the central difference of the assembly for any V
    from femodes.geometry.mesh import mesh_section, triangle_regions
    from femodes.solvers.vector import VectorProblem
    from femodes.solvers.vector.shape import cutoff_shape_derivatives

    s = fm.circle(5e-3).with_material(fm.circle(2e-3), eps_r=4)
    skm = mesh_section(s, 1.5e-3, order=3).to_skfem(order=3)
    problem = VectorProblem(skm, np.where(triangle_regions(s, skm.p, skm.t[:3]) == 1, 4.0, 1.0), 1.0, order=3)
    cuts = problem.cutoffs(6)
    groups = [[i] for i in range(len(cuts))]
    got = cutoff_shape_derivatives(problem, cuts, groups, skm.doflocs.copy())
    np.testing.assert_allclose([g[0][0] for g in got], [-2 * c.k0 ** 2 for c in cuts], rtol=1e-10)
    V = np.random.default_rng(1).standard_normal(skm.doflocs.shape) + skm.doflocs * [[30], [-50]] / 5e-3
    exact = cutoff_shape_derivatives(problem, cuts, groups, V)
    diff = cutoff_shape_derivatives(problem, cuts, groups, V, exact=False)
    np.testing.assert_allclose([g[0][0] for g in exact], [g[0][0] for g in diff], rtol=1e-7)
