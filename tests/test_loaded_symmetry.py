"""Loaded guides with mirror planes solved class by class (femodes.solvers.loaded_mirror).

Each class of a section whose walls and material regions are mirror-symmetric is solved on the
half or quarter with an electric (E' = -E) or magnetic (E' = +E) wall on each cut and unfolded to
the whole section.  References: the LSE / LSM modes and cutoffs of rectangular guides layered
along one axis by the transverse-resonance equations (femodes.reference.layered; Collin, "Field
Theory of Guided Waves", 2nd ed., ch. 6, from memory): a centred slab standing wall to wall
(layered along x) is symmetric about both axes, a slab on the bottom wall (layered along y) about
the vertical axis only.  The reduced solve must also give the modes of the unreduced one within
the error bars, with the same labels.
"""

import math

import numpy as np
import pytest

import femodes as fm
from femodes.geometry.mirror import canonical, mirror_planes, reduce
from femodes.reference.layered import layered_guide_cutoffs, layered_guide_modes
from femodes.solvers.loaded_mirror import mirror_classes, solve_loaded_mirror

A, B = 22.86e-3, 10.16e-3  # WR-90 (common practice)
W, EPS = 4e-3, 2.5
CENTRED = fm.rectangle(A, B).with_material(fm.rectangle(W, B), eps_r=EPS)
BOTTOM = fm.rectangle(A, B).with_material(fm.rectangle(A, 3e-3).translated(0, -B / 2 + 1.5e-3), eps_r=EPS)


def test_mirror_planes_and_reduced_regions():
    assert mirror_planes(CENTRED) == ("x", "y")
    assert mirror_planes(BOTTOM) == ("x",)
    off = fm.rectangle(A, B).with_material(fm.rectangle(W, B).translated(1e-3, 0), eps_r=EPS)
    assert mirror_planes(off) == ("y",)
    red = reduce(canonical(CENTRED), ("x", "y"))
    assert red.cuts == ("x", "y")
    assert red.area == pytest.approx(A * B / 4, rel=1e-12)
    assert [abs(m.region.signed_area()) for m in red.materials] == pytest.approx([W * B / 4], rel=1e-12)
    assert [c["x"] for c in mirror_classes(("x",))] == ["magnetic", "electric"]


def test_centred_slab_at_a_frequency_moved_against_lse_lsm_and_the_whole_solve():
    f = 24e9
    guide = CENTRED.rotated(0.4).translated(0.01, -0.02)  # the modes do not depend on where it lies
    g = (A - W) / 2
    ref = layered_guide_modes(A, B, [(g, 1, 1), (W, EPS, 1), (g, 1, 1)], f, count=6, axis="x")
    red = fm.solve(guide, modes=6, frequency=f, accuracy=1e-6, symmetry="always")
    whole = fm.solve(guide, modes=6, frequency=f, accuracy=1e-6, symmetry=False)
    assert len(red) == len(whole) == 6
    for r, m, w in zip(ref, red, whole):
        beta = math.sqrt(r.beta2)
        assert abs(m.beta_value - beta) <= m.beta_error, (r.label, m.beta_value, beta, m.beta_error)
        assert abs(m.beta_value - w.beta_value) <= m.beta_error + w.beta_error
    assert [m.label for m in red] == [m.label for m in whole]
    # the unfolded vectors are eigenvectors of the whole discrete pencil (residual, Gauss law)
    assert max(m.vector.residual for m in red) < 1e-9
    assert max(m.vector.divergence for m in red) < 1e-9


def test_bottom_slab_cutoffs_one_plane_against_lse_lsm_and_the_whole_solve():
    ref = layered_guide_cutoffs(A, B, [(3e-3, EPS, 1), (B - 3e-3, 1, 1)], 5, axis="y")
    red = fm.solve(BOTTOM, modes=5, accuracy=1e-6, symmetry="always")
    whole = fm.solve(BOTTOM, modes=5, accuracy=1e-6, symmetry=False)
    for r, m, w in zip(ref, red, whole):
        assert abs(m.fc - r.frequency) <= m.fc_error, (m.label, m.fc, r.frequency, m.fc_error)
        assert abs(m.fc - w.fc) <= m.fc_error + w.fc_error
        assert m.field == r.field
    assert [m.label for m in red] == [m.label for m in whole]


def test_quarter_fields_unfold_with_the_class_signs():
    # LSE_mn (layered along x) has E_y ~ (cos or sin)(m pi x / a) cos(n pi y / b) from the corner:
    # about the centre even in x for m odd, even in y for n even; the two modes of largest beta
    # at 14 GHz, LSE10 (both cuts magnetic) and LSE11 (E_y odd in y: an electric cut on y = 0)
    sol = solve_loaded_mirror(CENTRED, 2, 14e9, accuracy=1e-5)
    g = (A - W) / 2
    ref = layered_guide_modes(A, B, [(g, 1, 1), (W, EPS, 1), (g, 1, 1)], 14e9, count=2, axis="x")
    pts = np.array([[3e-3, -3e-3, 3e-3], [1e-3, 1e-3, -1e-3]])
    assert [r.label for r in ref] == ["LSE10(x)", "LSE11(x)"]
    for i, r in zip(sol.keep, ref):
        m = sol.objects[i]
        assert sol.values[i] == pytest.approx(r.beta2, abs=sol.errors[i])
        ey = np.real(m.fields(pts)[1])
        parity_x = 1 if r.indices[0] % 2 == 1 else -1
        scale = np.max(np.abs(ey))
        assert ey[1] == pytest.approx(parity_x * ey[0], abs=1e-9 * scale)
        parity_y = 1 if r.indices[1] % 2 == 0 else -1
        assert ey[2] == pytest.approx(parity_y * ey[0], abs=1e-9 * scale)
        assert scale > 0


def test_centred_slab_cutoffs_reduced_and_whole_agree_with_each_other_and_lse_lsm():
    # the classes run one accuracy loop on common quarter meshes; the reduced and the whole solve
    # must agree within the sum of their error bars, and each must hold the transverse-resonance
    # cutoffs of the LSE / LSM modes (Collin, "Field Theory of Guided Waves", 2nd ed., ch. 6, from
    # memory; femodes.reference.layered) within its own bar, with the same field types, labels
    # and degeneracies
    g = (A - W) / 2
    ref = layered_guide_cutoffs(A, B, [(g, 1, 1), (W, EPS, 1), (g, 1, 1)], 6, axis="x")
    red = fm.solve(CENTRED, modes=6, accuracy=1e-6, symmetry="always")
    whole = fm.solve(CENTRED, modes=6, accuracy=1e-6, symmetry=False)
    assert len(red) == len(whole) == 6
    for r, m, w in zip(ref, red, whole):
        assert abs(m.fc - w.fc) <= m.fc_error + w.fc_error, (m.label, m.fc, w.fc)
        assert abs(m.fc - r.frequency) <= m.fc_error, (m.label, m.fc, r.frequency, m.fc_error)
        assert abs(w.fc - r.frequency) <= w.fc_error, (w.label, w.fc, r.frequency, w.fc_error)
        assert m.field == w.field == r.field
    assert [m.label for m in red] == [m.label for m in whole]
    assert [(m.parent, m.degenerate_with) for m in red] == [(m.parent, m.degenerate_with) for m in whole]
