"""Error bars of loaded-guide cutoffs against exact layered-guide cutoffs (issue 11: every number
with an honest error bar).

Guides: WR-90 (a = 22.86 mm, b = 10.16 mm, EIA inner size) layered along one axis, PEC walls: a
dielectric slab on the bottom wall (half, quarter or a tenth of the height, full width), on the
side wall (a quarter of the width, full height) or centred (a third of the width, full height).
Truth: the LSE / LSM modes from the transverse-resonance condition of the layered guide (Collin,
Field Theory of Guided Waves, 2nd ed., ch. 6, "partially filled waveguides"; Pozar, Microwave
Engineering, 4th ed., sec. 3.6, the partially loaded guide), solved at beta = 0 by
femodes.reference.layered_guide_cutoffs with no finite-element code.

For every mode compared: |fc - fc_exact| <= fc_error (an error bar bounds the truth: the project's
rule) and |fc - fc_exact| / fc_exact <= accuracy (the asked accuracy is relative on each cutoff,
femodes.solvers.loaded).  The cases include those where the earlier error model was below the
true error (half-height slab of eps_r 1.5, 2.9, 3.0; quarter-height of eps_r 4, 6 and 10; side
slab of eps_r 2.2; centred slab of eps_r 2.9, 3.0).  The wider grid (5 guides x 7 permittivities x 4
accuracies) is benchmarks/bench_loaded_error_bars.py.
"""

import numpy as np
import pytest

import femodes as fm
from femodes import reference as ref

A, B = 22.86e-3, 10.16e-3


def bottom(t):
    """A slab of thickness t on the bottom wall: layers along y from that wall."""
    return (lambda e: fm.rectangle(A, B).with_material(fm.rectangle(A, t).translated(0, -B / 2 + t / 2), eps_r=e),
            lambda e: [(t, e, 1.0), (B - t, 1.0, 1.0)], "y")


def side(w):
    """A full-height slab of width w on the left wall: layers along x from that wall."""
    return (lambda e: fm.rectangle(A, B).with_material(fm.rectangle(w, B).translated(-A / 2 + w / 2, 0), eps_r=e),
            lambda e: [(w, e, 1.0), (A - w, 1.0, 1.0)], "x")


def centred(w):
    """A full-height slab of width w in the middle: three layers along x."""
    return (lambda e: fm.rectangle(A, B).with_material(fm.rectangle(w, B), eps_r=e),
            lambda e: ref.centred_slab_layers(A, w, e), "x")


GUIDES = {"half": bottom(B / 2), "quarter": bottom(B / 4), "thin": bottom(B / 10), "side": side(A / 4),
          "centred": centred(A / 3)}

CASES = [  # (guide, eps_r, accuracy)
    ("half", 1.5, 1e-6), ("half", 2.2, 1e-4), ("half", 2.9, 1e-5), ("half", 3.0, 1e-4), ("half", 6.0, 1e-7),
    ("half", 10.0, 1e-6),
    ("quarter", 4.0, 1e-7), ("quarter", 6.0, 1e-4), ("quarter", 10.0, 1e-5), ("quarter", 2.2, 1e-7),
    ("thin", 2.2, 1e-6), ("thin", 6.0, 1e-5), ("thin", 10.0, 1e-4),
    ("side", 2.2, 1e-4), ("side", 6.0, 1e-5), ("side", 10.0, 1e-6),
    ("centred", 2.9, 1e-4), ("centred", 3.0, 1e-5), ("centred", 4.0, 1e-6),
]


@pytest.mark.parametrize("guide, eps_r, accuracy", CASES)
def test_layered_guide_cutoffs_within_their_error_bars(guide, eps_r, accuracy):
    make, layers, axis = GUIDES[guide]
    # exact LSE / LSM cutoffs by transverse resonance (Collin ch. 6; Pozar sec. 3.6)
    want = np.array([c.frequency for c in ref.layered_guide_cutoffs(A, B, layers(eps_r), 3, axis=axis)])
    got = fm.solve(make(eps_r), modes=3, accuracy=accuracy)
    assert len(got) == 3
    for m, fc in zip(got, want):
        err = abs(m.fc - fc)
        assert err <= m.fc_error, (m.label, err / fc, m.fc_error / fc)  # the bar bounds the truth
        assert err / fc <= accuracy, (m.label, err / fc)                 # the asked accuracy is met
