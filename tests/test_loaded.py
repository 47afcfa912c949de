"""Loaded guides through solve(): Section.with_material -> full-vector modes with error estimates.

References: the LSE/LSM transverse-resonance solutions of a rectangular guide with a dielectric
slab on its bottom wall (Collin, Field Theory of Guided Waves, ch. 6; Harrington, Time-Harmonic
Electromagnetic Fields, sec. 4.x), computed in femodes.reference (no finite-element code).
"""

import math

import pytest

import femodes as fm
from femodes import FemodesError
from femodes import reference as ref

A, B = 22.86e-3, 10.16e-3  # WR-90 inner size (EIA)
EPS = 2.25
C0 = 299792458.0


@pytest.fixture(scope="module")
def slab_guide():
    return fm.rectangle(A, B).with_material(fm.rectangle(A, B / 2).translated(0, -B / 4), eps_r=EPS)


def test_slab_loaded_betas_within_their_estimates(slab_guide):
    f = 13e9
    modes = fm.solve(slab_guide, modes=4, frequency=f, accuracy=1e-6)
    want = ref.slab_on_wall_modes(A, B, B / 2, EPS, f, 4)
    k2 = (2 * math.pi * f / C0) ** 2 * EPS
    assert len(modes) == 4
    for m, r in zip(modes, want):
        err = abs(m.beta() - r.beta)
        assert err <= m.beta_error, (m.label, err, m.beta_error)
        # the accuracy is asked on beta^2 relative to k0^2 eps_max (femodes.loaded)
        assert abs(m.beta() ** 2 - r.beta ** 2) / k2 <= 1e-6
    assert {m.family for m in modes} == {"hybrid", "TE"}  # LSE01 has no E_z: TE (Collin ch. 6)


def test_slab_loaded_cutoffs_computed_directly(slab_guide):
    cuts = fm.solve(slab_guide, modes=4, accuracy=1e-7)
    want = ref.layered_guide_cutoffs(A, B, [(B / 2, EPS, 1.0), (B / 2, 1.0, 1.0)], 4)
    for c, r in zip(cuts, want):
        err = abs(c.fc / r.frequency - 1)
        assert err <= 1e-7 and err <= c.rel_error


def test_beta_at_another_frequency_points_to_dispersion(slab_guide):
    m = fm.solve(slab_guide, modes=1, frequency=12e9, accuracy=1e-5)[0]
    assert m.beta(12e9) == m.beta()
    with pytest.raises(FemodesError, match="dispersion"):
        m.beta(11e9)


def test_frequency_on_a_homogeneous_guide_is_refused():
    with pytest.raises(FemodesError, match="mode.beta"):
        fm.solve(fm.rectangle(A, B), modes=2, frequency=10e9)


def test_dispersion_curves_follow_the_references(slab_guide):
    import numpy as np

    fs = np.linspace(11e9, 14e9, 7)
    disp = fm.dispersion(slab_guide, fs, modes=3, accuracy=1e-6)
    b2 = disp.beta2
    assert b2.shape == (7, 3)
    # each tracked curve stays on one reference curve (LSE/LSM transverse resonance, Collin ch. 6);
    # beta^2 compared relative to k0^2 eps_max, the measure the accuracy is asked in (the third
    # mode is still evanescent at 11 GHz: beta^2 < 0)
    def ref_b2(f):
        return {r.label: (r.beta ** 2).real for r in ref.slab_on_wall_modes(A, B, B / 2, EPS, f, 6)}

    first = ref_b2(fs[0])
    for k in range(3):
        label = min(first, key=lambda lab: abs(first[lab] - b2[0, k]))
        for i, f in enumerate(fs):
            scale = (2 * math.pi * f / C0) ** 2 * EPS
            assert abs(b2[i, k] - ref_b2(f)[label]) / scale < 1e-6


def test_dispersion_figure(slab_guide, tmp_path):
    import numpy as np

    from femodes.figures import dispersion_chart

    fs = np.linspace(11e9, 14e9, 5)
    disp = fm.dispersion(slab_guide, fs, modes=3, accuracy=1e-5)
    fig = dispersion_chart(disp, tmp_path / "d.png", section=slab_guide)
    assert (tmp_path / "d.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    ax = fig.axes[0]
    # two light lines (air, eps_r = 2.25) and three mode curves
    assert len(ax.lines) == 5
    texts = [t.get_text() for t in ax.texts]
    assert any("eps_r = 2.25" in t for t in texts) and any(t.startswith("1 (") for t in texts)
