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
