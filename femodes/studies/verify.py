"""The self-check: a bundled set of reference cases solved on this machine, each value compared
with a closed form or a published value outside the finite-element code (:mod:`femodes.reference`).

For every value the check reports

* the true error: |femodes - reference| in the measure the solver's ``accuracy`` is asked in
  (relative error of kc for cutoffs, of Z0 for a TEM line; for a loaded guide the error of beta^2
  relative to k0^2 eps_max mu_max, as :func:`femodes.solve` defines it there),
* the reported error: femodes' own error bar in the same measure,
* the asked accuracy,

and the value passes when the true error is within the reported error and within the asked
accuracy.  A reference value carries its own uncertainty (zero for a closed form, round-off for a
root found by scipy.special and brentq, the last digit of a printed value, more for a value recalled
from memory): the comparison gives it to femodes' side, pass = |femodes - reference| - u <=
min(reported, accuracy).  The whole check passes when every value passes.

Fast set (:data:`FAST`): one accuracy (1e-6; 1e-5 for the loaded guide), about forty values, a
few seconds.  Thorough set: the same cases and a few more (sectors of 120, 150 and 270 degrees,
the right isosceles triangle, the ellipse), each at the accuracies 1e-4, 1e-6 and 1e-8 (1e-4 ..
1e-6 for the loaded guide): minutes.
"""

from __future__ import annotations

import math
import time
import warnings
from dataclasses import dataclass

from femodes import reference as ref
from femodes.api import solve
from femodes.errors import FemodesError
from femodes.geometry.shapes import circle, coaxial, ellipse, l_shape, polygon, rectangle, sector
from femodes.quantities.lines import modal_impedances

__all__ = ["CheckRow", "CheckCase", "SelfCheck", "selfcheck", "case_names", "FAST_ACCURACY"]

#: the accuracy the fast set asks of every homogeneous case (the loaded guide: LOADED_FAST)
FAST_ACCURACY = 1e-6
LOADED_FAST = 1e-5
THOROUGH_ACCURACIES = (1e-4, 1e-6, 1e-8)
LOADED_THOROUGH = (1e-4, 1e-5, 1e-6)
#: a root of scipy.special functions refined by brentq: a few ulps of kc, taken generously
_ROOT = 1e-13


@dataclass(frozen=True)
class CheckRow:
    """One value of a reference case.

    quantity  : what is compared, e.g. 'kc TE10', 'Z0 TEM', 'beta LSM10'
    value, reference : femodes' value and the reference value (SI: rad/m, ohm)
    true_error : |value - reference| in the accuracy's measure (relative, see the module docstring)
    reported_error : femodes' error bar in the same measure
    reference_uncertainty : the reference's own uncertainty in the same measure
    accuracy : the asked accuracy;  passed : see the module docstring
    """

    quantity: str
    value: float
    reference: float
    true_error: float
    reported_error: float
    reference_uncertainty: float
    accuracy: float

    @property
    def passed(self) -> bool:
        slack = self.true_error - self.reference_uncertainty
        return bool(slack <= self.reported_error and slack <= self.accuracy)

    @property
    def ratio(self) -> float:
        """true error / reported error: below 1 when the error bar bounds the truth."""
        return self.true_error / self.reported_error if self.reported_error > 0 else math.inf


@dataclass(frozen=True)
class CheckCase:
    """One reference case solved at one accuracy: its rows, the source of its reference values,
    the seconds the solve took and any warning the solver gave."""

    name: str
    title: str
    source: str
    accuracy: float
    rows: tuple
    seconds: float
    warnings: tuple = ()

    @property
    def passed(self) -> bool:
        return all(r.passed for r in self.rows)


@dataclass(frozen=True)
class SelfCheck:
    """The result of :func:`selfcheck`: the cases in the order run, and the total time."""

    cases: tuple
    thorough: bool
    seconds: float

    @property
    def rows(self):
        return tuple(r for c in self.cases for r in c.rows)

    @property
    def passed(self) -> bool:
        return all(c.passed for c in self.cases)

    @property
    def failures(self):
        return tuple((c.name, r) for c in self.cases for r in c.rows if not r.passed)

    @property
    def max_ratio(self) -> float:
        """The largest true / reported error over every value (below 1: every error bar holds)."""
        return max((r.ratio for r in self.rows), default=0.0)


# ---------------------------------------------------------------------------
# matching femodes' modes with the reference's
# ---------------------------------------------------------------------------
def _kc_rows(modes, refs, accuracy, uncertainty=None):
    """Rows comparing kc family by family: the i-th TE (TM) mode of femodes with the i-th TE (TM)
    of the reference (both ascending; members of a degenerate pair have the same kc, so the order
    within a pair does not matter).  ``uncertainty(ref_mode)``: the reference's relative
    uncertainty of kc (default: a brentq root's)."""
    rows = []
    by_family = {}
    for r in refs:
        by_family.setdefault(r.family, []).append(r)
    seen = {}
    for m in modes:
        if m.family not in ("TE", "TM"):
            continue
        i = seen.get(m.family, 0)
        seen[m.family] = i + 1
        want = by_family.get(m.family, [])
        if i >= len(want):
            raise RuntimeError(f"the reference lists too few {m.family} modes for {m.label}")
        r = want[i]
        u = _ROOT if uncertainty is None else uncertainty(r)
        rows.append(CheckRow(f"kc {m.label}", float(m.kc), float(r.kc), abs(m.kc - r.kc) / r.kc,
                             float(m.rel_error), u, accuracy))
    return rows


def _solve(section, modes, accuracy, **kw):
    """femodes.solve, with the warnings it gives kept (a missed accuracy is part of the check)."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        out = solve(section, modes=modes, accuracy=accuracy, **kw)
    notes = tuple(dict.fromkeys(str(w.message) for w in caught if issubclass(w.category, RuntimeWarning)))
    return out, notes


# ---------------------------------------------------------------------------
# the cases: each a function of the accuracy returning (rows, warnings)
# ---------------------------------------------------------------------------
_A, _B = ref.WR90_A, ref.WR90_B


def _rectangle(acc):
    modes, notes = _solve(rectangle(_A, _B), 8, acc)
    return _kc_rows(modes, ref.rectangle_modes(_A, _B, 20), acc, lambda r: 0.0), notes


def _circle(acc):
    a = 10e-3
    modes, notes = _solve(circle(a), 8, acc)
    return _kc_rows(modes, ref.circle_modes(a, 24), acc), notes


def _coax(acc):
    a, b = 1.5e-3, 3.5e-3
    modes, notes = _solve(coaxial(b, a), 5, acc)
    rows = _kc_rows(modes, ref.coax_modes(a, b, 24), acc)
    z = modal_impedances(modes.line)
    z0, dz = float(z.impedance[0]), float(z.error[0])
    want = ref.coax_tem_impedance(a, b)
    rows.insert(0, CheckRow("Z0 TEM", z0, want, abs(z0 - want) / want, dz / z0, 1e-15, acc))
    return rows, notes


def _l_shape_uncertainty():
    """Relative uncertainty of kc for each tabulated L-shape value (u of kc^2 / 2)."""
    d = ref.L_SHAPE_DIRICHLET
    n = ref.L_SHAPE_NEUMANN
    # TM1 published to 14 digits; TM2 recalled and kept to 1e-9 (confirmed by the particular-
    # solutions method); TM3 = 2 pi^2 exact; TM4, TM5 kept to 1e-7.  TE3 = TE4 = pi^2 exact; TE1,
    # TE2, TE5 recalled from memory: the recalled TE1 was 6.6e-11 off the particular-solutions
    # value, so 1e-10 absolute on kc^2 is granted to each
    du_tm = (1e-13, 1e-9, 0.0, 1e-7, 1e-7)
    du_te = (1e-10, 1e-10, 0.0, 0.0, 1e-10)
    return ({"TM": [(v, u / v / 2) for v, u in zip(d, du_tm)], "TE": [(v, u / v / 2) for v, u in zip(n, du_te)]})


def _l_shape(acc):
    s = 5e-3  # the unit square's side: the L of three 5 mm squares, 10 x 10 mm outside
    modes, notes = _solve(l_shape(2 * s, 2 * s, s, s), 10, acc)
    table = _l_shape_uncertainty()
    refs = [ref.RefMode(f, math.sqrt(v) / s, f"{f}{i + 1}", (i + 1,)) for f, vals in table.items()
            for i, (v, _) in enumerate(vals)]
    unc = {(f, i + 1): u for f, vals in table.items() for i, (_, u) in enumerate(vals)}
    refs.sort(key=lambda r: r.kc)
    modes = [m for m in modes if m.family in ("TE", "TM")]
    # only as far as the table goes (five of each family)
    counts = {"TE": 0, "TM": 0}
    kept = []
    for m in modes:
        counts[m.family] += 1
        if counts[m.family] <= 5:
            kept.append(m)
    return _kc_rows(kept, refs, acc, lambda r: unc[(r.family, r.indices[0])]), notes


def _sector(angle_deg):
    def run(acc):
        R = 10e-3
        angle = math.radians(angle_deg)
        modes, notes = _solve(sector(R, angle), 5, acc)
        return _kc_rows(modes, ref.sector_modes(R, angle, 20), acc), notes
    return run


def _triangle(acc):
    s = 10e-3
    tri = polygon([(0.0, 0.0), (s, 0.0), (s / 2, s * math.sqrt(3) / 2)])
    modes, notes = _solve(tri, 6, acc)
    return _kc_rows(modes, ref.equilateral_triangle_modes(s, 20), acc, lambda r: 0.0), notes


def _right_triangle(acc):
    s = 10e-3
    modes, notes = _solve(polygon([(0.0, 0.0), (s, 0.0), (0.0, s)]), 6, acc)
    return _kc_rows(modes, ref.right_isosceles_triangle_modes(s, 20), acc, lambda r: 0.0), notes


def _ellipse(acc):
    a, b = 10e-3, 6e-3
    modes, notes = _solve(ellipse(a, b), 6, acc)
    # Mathieu functions summed from their Fourier coefficients: agrees with the independent Ritz
    # method to about 1e-11 (femodes.reference, tests/test_reference.py)
    return _kc_rows(modes, ref.ellipse_modes(a, b, 20), acc, lambda r: 1e-11), notes


_SLAB_EPS, _SLAB_F = 2.25, 13e9


def _slab(acc):
    d = _B / 2
    guide = rectangle(_A, _B).with_material(rectangle(_A, d).translated(0, -_B / 4), eps_r=_SLAB_EPS)
    modes, notes = _solve(guide, 4, acc, frequency=_SLAB_F)
    want = ref.slab_on_wall_modes(_A, _B, d, _SLAB_EPS, _SLAB_F, 4)
    k2 = (2 * math.pi * _SLAB_F / ref.C0) ** 2 * _SLAB_EPS  # k0^2 eps_max mu_max
    rows = []
    for m, r in zip(modes, want):
        beta = complex(m.beta())
        if beta.imag:
            raise RuntimeError(f"the slab guide's {m.label} came out complex")
        beta = beta.real
        name = f"{r.family}{r.indices[0]}{r.indices[1]}"
        rows.append(CheckRow(f"beta {name}", beta, math.sqrt(r.beta2), abs(beta ** 2 - r.beta2) / k2,
                             2 * beta * m.beta_error / k2, 1e-13, acc))
    return rows, notes


@dataclass(frozen=True)
class _Case:
    name: str
    title: str
    source: str
    run: object
    fast: bool = True
    loaded: bool = False


_CASES = (
    _Case("rectangle", "WR-90, 22.86 x 10.16 mm, TE and TM, 8 modes",
          "closed form kc = sqrt((m pi/a)^2 + (n pi/b)^2) (Pozar, Microwave Engineering, sec. 3.3)", _rectangle),
    _Case("circle", "circle of radius 10 mm, 8 modes",
          "Bessel zeros j_nm, j'_nm from scipy.special (Pozar, Microwave Engineering, sec. 3.4)", _circle),
    _Case("coax", "coaxial line, conductor diameters 3 and 7 mm: Z0 of the TEM mode and 4 higher modes",
          "Z0 = eta0 ln(b/a) / (2 pi) (Pozar, sec. 2.2); kc from the Bessel cross products "
          "J_n(ka) Y_n(kb) - J_n(kb) Y_n(ka) (Marcuvitz, Waveguide Handbook, sec. 2.4) by scipy.special "
          "and brentq", _coax),
    _Case("l-shape", "L of three 5 mm squares (re-entrant corner of 270 degrees), 5 TE and 5 TM",
          "TM1 9.6397238440219 (Fox, Henrici & Moler, SIAM J. Numer. Anal. 4, 1967; Trefethen & Betcke, "
          "Contemp. Math. 412, 2006); TM3 = 2 pi^2, TE3 = TE4 = pi^2 exact; the others recalled from "
          "memory (given an uncertainty)", _l_shape),
    _Case("sector-135", "circular sector of radius 10 mm and 135 degrees (corner exponent 4/3), 5 modes",
          "zeros of J_nu and J_nu', nu = 4p/3 (fractional order), from scipy.special and brentq", _sector(135)),
    _Case("triangle", "equilateral triangle of side 10 mm, 6 modes",
          "Lame's closed form kc^2 = 16 pi^2 (m^2 + mn + n^2) / (9 s^2) (Pinsky, SIAM J. Math. Anal. 11, "
          "1980; McCartin, SIAM Review 45, 2003)", _triangle),
    _Case("slab", "WR-90 with an eps_r 2.25 slab on the lower half, 4 modes at 13 GHz",
          "LSE / LSM transverse resonance of the layered guide (Collin, Field Theory of Guided Waves, "
          "ch. 6), roots by brentq", _slab, loaded=True),
    _Case("sector-120", "circular sector of radius 10 mm and 120 degrees, 5 modes",
          "zeros of J_nu and J_nu', nu = 3p/2, from scipy.special and brentq", _sector(120), fast=False),
    _Case("sector-150", "circular sector of radius 10 mm and 150 degrees, 5 modes",
          "zeros of J_nu and J_nu', nu = 6p/5, from scipy.special and brentq", _sector(150), fast=False),
    _Case("sector-270", "circular sector of radius 10 mm and 270 degrees (re-entrant), 5 modes",
          "zeros of J_nu and J_nu', nu = 2p/3, from scipy.special and brentq", _sector(270), fast=False),
    _Case("right-triangle", "right isosceles triangle with 10 mm legs, 6 modes",
          "closed form from the square's modes (kc^2 = (pi/s)^2 (m^2 + n^2), m > n for TM, m >= n for TE; "
          "common practice)", _right_triangle, fast=False),
    _Case("ellipse", "ellipse of semi-axes 10 and 6 mm, 6 modes",
          "roots of the radial Mathieu functions (McLachlan, Theory and Application of Mathieu Functions), "
          "summed from their Fourier coefficients", _ellipse, fast=False),
)


#: the citations of the sources above (book sections, papers) are recalled from memory; the values
#: themselves are computed here (closed forms, scipy.special) except the L-shape's, see _l_shape_uncertainty


def case_names(thorough=False):
    """The names of the cases the fast (or the thorough) set runs, in order."""
    return tuple(c.name for c in _CASES if thorough or c.fast)


def selfcheck(thorough=False, cases=None):
    """Solve the bundled reference cases and compare every value with its reference.

    thorough : False for the fast set (one accuracy per case, a few seconds), True for the
               thorough set (more cases, each at several accuracies; minutes)
    cases    : None for all, or a name or a list of names (see :func:`case_names`)

    Returns a :class:`SelfCheck`; ``.passed`` is True when every value's true error lies within
    its reported error and the asked accuracy.
    """
    names = case_names(thorough)
    if cases is None:
        chosen = names
    else:
        chosen = (cases,) if isinstance(cases, str) else tuple(cases)
        unknown = [c for c in chosen if c not in names]
        if unknown:
            hint = "" if thorough or any(c not in case_names(True) for c in unknown) else \
                " (the thorough set has it: add --thorough, or thorough=True)"
            raise FemodesError(f"no self-check case named {', '.join(map(repr, unknown))} in the "
                               f"{'thorough' if thorough else 'fast'} set{hint}; it has: {', '.join(names)}")
    t_all = time.perf_counter()
    out = []
    for c in _CASES:
        if c.name not in chosen:
            continue
        if thorough:
            accuracies = LOADED_THOROUGH if c.loaded else THOROUGH_ACCURACIES
        else:
            accuracies = (LOADED_FAST if c.loaded else FAST_ACCURACY,)
        for acc in accuracies:
            t0 = time.perf_counter()
            rows, notes = c.run(acc)
            out.append(CheckCase(c.name, c.title, c.source, acc, tuple(rows), time.perf_counter() - t0, notes))
    return SelfCheck(tuple(out), bool(thorough), time.perf_counter() - t_all)
