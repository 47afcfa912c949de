"""Error bars on the field-derived quantities of a homogeneous guide: wall loss, impedances, peak
field (and so breakdown and rated power), by re-solving the guide on a ladder of meshes.

The accuracy loop of :mod:`femodes.solvers.scalar` chooses its mesh for the cutoffs (kc) only.
A quantity computed from the fields (a wall integral, a path integral, a peak) converges
differently, and slower where the field is singular: near a re-entrant wall corner of interior
angle alpha the potential goes like r^lambda, lambda = pi / alpha, the transverse field like
r^(lambda - 1), and a wall integral of |H_t|^2 picks up an error no better than about
h^(2 lambda) on a mesh of size h.

So :func:`derived_quantities` solves the same section at fixed element sizes h_k = h0 r^(2-k)
(r = 1.5: 2.25 h0, 1.5 h0, h0; h0 the final size of the solve it is given) and evaluates each
quantity q on each.  With the differences d1 = q(1.5 h0) - q(2.25 h0), d2 = q(h0) - q(1.5 h0):

    observed rate   s = log(|d1| / |d2|) / log r
    rate used       q_r = min(s, cap), at least RATE_FLOOR (and RATE_FLOOR itself when d1 and d2
                    differ in sign: not asymptotic yet); cap = p, the element order (the rate of the
                    field itself), or 2 lambda_min for the sharpest re-entrant corner (lambda =
                    pi / angle < 1) if lower: never faster than the theory allows, and the observed
                    rate where it is slower
    error at h0     SAFETY x max(|d2| / (r^q_r - 1), |d1| / (r^q_r - 1) / r^q_r)
                    (at least ROUNDOFF x |q|)

the second term being the older pair's Richardson estimate carried to the finest mesh: two
meshes can agree by chance (on a rectangular coax the pair 1.5 h0, h0 agreed to 1 % while both
were 6 % off the truth), and the older pair then still gives an honest bar.  The value reported
is the one on the finest mesh (not the extrapolation), so the bar bounds its own error.  Where
the largest error exceeds ``accuracy`` times the value, the ladder goes one step finer (h / r)
until it is met, ``max_refinements`` steps are taken or the next mesh would exceed
``max_unknowns``; then a warning says what was reached.

Peak field: at a sharp re-entrant corner it grows without bound with refinement; the peak is
the one outside the small discs (1 % of the guide's size) around such corners that
:func:`femodes.quantities.power_handling` excludes, and its bar is that of the excluded peak.

Wave quantities take their bars from the cutoff's (:func:`wave_errors`): beta = sqrt(k^2 - kc^2)
gives |d beta| = kc |d kc| / beta, and from it the guide wavelength, phase and group velocity
and the wave impedance by their derivatives.

Homogeneous guides (a :class:`femodes.geometry.Section` without material regions) only: a loaded
guide's are :func:`femodes.quantities.loaded_derived_quantities` (the same estimate); a mesh file
cannot be re-meshed (its loaded modes keep order p against p - 1 on the one mesh).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, replace

import numpy as np

from femodes.api import solve
from femodes.constants import C0
from femodes.errors import FemodesError, quantity_accuracy_number
from femodes.geometry.section import Section
from femodes.modes.model import ModeSet
from femodes.quantities.common import _material
from femodes.quantities.impedance import impedance
from femodes.quantities.losses import losses
from femodes.quantities.power import DRY_AIR_BREAKDOWN, power_handling

__all__ = ["DEFAULT_QUANTITY_ACCURACY", "QuantityError", "DerivedErrors", "derived_quantities", "wave_errors",
           "rate_cap"]

#: Default relative accuracy asked of every field-derived quantity (wall loss, impedances, peak
#: field): 1e-3, three significant figures, well inside what a wall's conductivity and
#: roughness are known to, and reachable in a few re-solves on guides without sharp corners.
DEFAULT_QUANTITY_ACCURACY = 1e-3

#: ratio of successive element sizes on the ladder (2.25 h0, 1.5 h0, h0)
RATIO = 1.5
#: multiplies the Richardson estimate (the same factor as the cutoffs' estimate)
SAFETY = 3.0
#: the slowest rate assumed: with differences that grow or wander, a rate this low makes the bar
#: many times the last difference rather than trusting a chance agreement
RATE_FLOOR = 0.5
#: differences below this times |q| are round-off: the bar is at least SAFETY times this
#: (relative).  Field quantities floor well above the eigenvalues' ~N 1e-16: WR-90's wall loss
#: agreed with Pozar's closed form only to 2.8e-10 on meshes whose differences were 1e-11
ROUNDOFF = 1e-9


def rate_cap(section, order):
    """The fastest rate (in h) a field-derived quantity is allowed: p, the rate of the field
    (the gradient of the order-p potential) in a smooth region, and 2 lambda for the sharpest
    re-entrant wall corner (lambda = pi / angle < 1) if lower: the corner's singular term
    pollutes the whole solution at that rate (Strang & Fix, "An analysis of the finite element
    method", 1973, ch. 8; from memory).  Unlike kc (an energy quantity, h^(2p)) a wall
    integral, path voltage or peak of the field is not squared in its error."""
    lams = [c.exponent for c in section.corners() if c.reentrant]
    cap = float(order)
    if lams:
        cap = min(cap, 2.0 * min(lams))
    return cap


@dataclass(frozen=True)
class QuantityError:
    """One quantity on the ladder of meshes: ``value`` on the finest, its ``error`` (same unit,
    bounds the error of ``value``), the ``rate`` used, the ``observed`` rate (NaN if the
    differences vanish) and the values on every mesh, coarsest first."""

    value: float
    error: float
    rate: float
    observed: float
    values: tuple
    scale: float = math.nan  # what the error is relative to, if not |value| (see _table)

    @property
    def relative(self):
        s = self.scale if math.isfinite(self.scale) else abs(self.value)
        return self.error / s if s else math.inf


@dataclass(frozen=True)
class DerivedErrors:
    """Error bars of the field-derived quantities of the modes of a ModeSet at one frequency.

    modes      the ModeSet on the finest mesh (the quantities' values are from it)
    frequency  Hz
    accuracy   the relative accuracy asked
    sizes, unknowns : element size (m) and unknowns of each mesh, coarsest first
    cap        the rate cap (see :func:`rate_cap`)
    quantities {mode index: {name: QuantityError}}; names 'conductor' (wall loss, Np/m), 'Z_PV',
               'Z_PI', 'Z_VI' (ohm), 'peak' (V/m per sqrt(W), outside the corner discs)
    met        True if every quantity met ``accuracy``
    warnings   what was not met, and why
    """

    modes: ModeSet
    frequency: float
    accuracy: float
    sizes: tuple
    unknowns: tuple
    cap: float
    quantities: dict
    met: bool
    warnings: tuple

    def error(self, index, name):
        """The error bar of quantity ``name`` of mode ``index`` (NaN if not computed)."""
        q = self.quantities.get(index, {}).get(name)
        return math.nan if q is None else q.error


def _evaluate(modeset, f, conductivity, roughness, tan_delta, breakdown_field, impedance_of):
    """{mode index: {name: value}} of the propagating modes of one mesh."""
    out = {}
    first = modeset[0].index
    for m in modeset:
        if not (m.family == "TEM" or float(m.fc) < f):
            continue
        v = {"conductor": float(losses(m, f, conductivity, roughness, tan_delta).conductor)}
        if impedance_of is None or m.family == "TEM" or m.index == first:
            for kind in ("PV", "PI", "VI"):
                try:
                    v["Z_" + kind] = float(impedance(m, f, kind))
                except FemodesError:
                    pass
        try:
            v["peak"] = float(power_handling(m, f, breakdown_field).peak_field_per_sqrt_watt)
        except FemodesError:
            pass
        out[m.index] = v
    return out


def _observed_rate(ratio, r1, r2):
    """The rate s with r2^s (r1^s - 1) / (r2^s - 1) = ``ratio`` (= d1 / d2 of e(h) = C h^s on
    sizes h1 = r1 h2, h2 = r2 h3): log(ratio) / log(r) for equal ratios r; solved for unequal
    ones (a loaded guide's mesher can jump 1.3x and then 3x in unknowns), where the equal-ratio
    formula with the mean ratio misreads the rate.  Clipped to [0, 30]."""
    if abs(r1 - r2) <= 1e-9 * r2:
        return math.log(ratio) / math.log(r1)

    def g(t):
        return t * math.log(r2) + math.log(math.expm1(t * math.log(r1))) - math.log(math.expm1(t * math.log(r2)))

    lo, hi = 1e-6, 30.0
    target = math.log(ratio)
    if g(lo) >= target:
        return 0.0
    if g(hi) <= target:
        return hi
    for _ in range(100):  # g increases with t
        mid = 0.5 * (lo + hi)
        if g(mid) < target:
            lo = mid
        else:
            hi = mid
    return 0.5 * (lo + hi)


def _estimate(values, sizes, cap):
    """QuantityError of the last of three ``values`` at element ``sizes`` (coarsest first)."""
    q1, q2, q3 = values
    r1, r2 = sizes[0] / sizes[1], sizes[1] / sizes[2]
    d1, d2 = q2 - q1, q3 - q2
    scale = max(abs(q3), abs(q2), abs(q1))
    floor = ROUNDOFF * scale
    if abs(d1) > floor and abs(d2) > floor:
        # e(h) = C h^s: d1 / d2 = r2^s (r1^s - 1) / (r2^s - 1), = r^s for equal ratios
        observed = _observed_rate(abs(d1) / abs(d2), r1, r2)
    else:
        observed = math.nan
    rate = cap if not math.isfinite(observed) else min(cap, max(observed, RATE_FLOOR))
    if d1 * d2 < 0 and abs(d1) > floor and abs(d2) > floor:
        # the differences change sign: not yet in the asymptotic range (pointwise and path
        # quantities on unstructured meshes wander: WR-90's Z_PV went -1.5e-4, -1.9e-5, -2.7e-5
        # relative on 133, 237, 473 unknowns, and the observed rate 6.9 gave a bar 1.4x too
        # small): no rate is trusted, the slowest is assumed
        rate = RATE_FLOOR
    est = max(abs(d2) / (r2 ** rate - 1.0), abs(d1) / (r1 ** rate - 1.0) / r2 ** rate)
    return QuantityError(q3, SAFETY * max(est, floor), rate, observed, tuple(values))


def derived_quantities(modeset, f, conductivity=5.8e7, roughness=0.0, tan_delta=0.0,
                       breakdown_field=DRY_AIR_BREAKDOWN, accuracy=DEFAULT_QUANTITY_ACCURACY,
                       max_refinements=2, max_unknowns=None):
    """Error bars of the wall loss, impedances and peak field of the modes of ``modeset`` (what
    :func:`femodes.solve` returned for a homogeneous Section) at ``f`` (Hz), refined until each
    meets ``accuracy`` (relative) or ``max_refinements`` finer meshes were solved or the next
    would pass ``max_unknowns`` (default 4 times the given solve's unknowns, at least 20k, at
    most 200k: the re-solves cost a few times the solve, not more); see the module docstring for the estimate.  Returns a
    :class:`DerivedErrors`; a warning (UserWarning) names every quantity left above ``accuracy``.
    """
    if not isinstance(modeset, ModeSet) or not isinstance(modeset.section, Section):
        raise FemodesError("derived_quantities() re-meshes the guide: it needs the result of femodes.solve() on "
                           "a section (a mesh file cannot be re-meshed)")
    if modeset.section.materials:
        raise FemodesError("derived_quantities() is for homogeneous guides; a loaded guide's quantities carry "
                           "their own error (order p against p - 1)")
    if modeset.mesh_size is None:
        raise FemodesError("the mode set has no element size to refine from")
    accuracy = quantity_accuracy_number("accuracy", accuracy)
    f = float(f)
    if max_unknowns is None:
        max_unknowns = min(200_000, max(20_000, 4 * int(modeset.n_dofs)))
    section = modeset.section
    cap = rate_cap(section, modeset.order)
    n = len(modeset)

    def at(h):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return solve(section, modes=n, eps_r=modeset.eps_r, mu_r=modeset.mu_r, accuracy=modeset.accuracy,
                         family=modeset.family, order=modeset.order, mesh_size=h)

    def evaluate(ms):
        return _evaluate(ms, f, conductivity, roughness, tan_delta, breakdown_field, True)

    h0 = float(modeset.mesh_size)
    sets, sizes = [modeset], [h0]
    # coarser meshes first (cheap); a size clamped by the solver (half the section) gives the
    # same mesh again: then the ladder goes finer instead
    for k in (1, 2):
        ms = at(h0 * RATIO ** k)
        if ms.n_dofs >= sets[0].n_dofs:
            break
        sets.insert(0, ms)
        sizes.insert(0, h0 * RATIO ** k)

    def finer():
        h = sizes[-1] / RATIO
        for _ in range(4):  # a size the mesher rounds to the same mesh: one more step
            ms = at(h)
            if ms.n_dofs > sets[-1].n_dofs:
                break
            h /= RATIO
        sizes.append(h)
        sets.append(ms)
        vals.append(evaluate(ms))

    vals = [evaluate(s) for s in sets]
    while len(sets) < 3:
        finer()
    steps = 0
    while True:
        table, worst = _table(sets, vals, sizes, cap)
        if worst <= accuracy or steps >= max_refinements:
            break
        if sets[-1].n_dofs * RATIO ** 2 > max_unknowns:
            break
        finer()
        steps += 1
    warns = []
    fine = sets[-1]
    for i, qs in table.items():
        for name, q in qs.items():
            if q.relative > accuracy:
                label = fine[i].label if i < len(fine) else f"mode {i + 1}"
                warns.append(f"{name} of {label}: error {q.relative:.2g} (relative) after {len(sets)} meshes (up to "
                             f"{fine.n_dofs} unknowns), above the quantity accuracy asked (quantity_accuracy = {accuracy:g})"
                             + (f"; sharp re-entrant corners limit its convergence to about h^{cap:.2g}: rounding "
                                "them (a corner radius) converges faster" if cap < 2 else ""))
    for w in warns:
        warnings.warn("femodes: " + w, UserWarning, stacklevel=2)
    return DerivedErrors(fine, f, accuracy, tuple(sizes), tuple(int(s.n_dofs) for s in sets), cap, table,
                         not warns, tuple(warns))


def _table(sets, vals, sizes, cap):
    """{index: {name: QuantityError}} from the last three meshes, and the worst relative error."""
    table, worst = {}, 0.0
    last = vals[-3:]
    for i, v in last[-1].items():
        row = {}
        for name in v:
            seq = [vv.get(i, {}).get(name) for vv in last]
            same = all(len(s) > i and s[i].label == sets[-1][i].label for s in sets[-3:])
            if any(x is None for x in seq) or not same:
                continue  # the mode is not the same on every mesh (order or label changed)
            q = _estimate(seq, sizes[-3:], cap)
            if name.startswith("Z_"):
                # a voltage that cancels by symmetry makes Z_PV, Z_VI ~ 0: their error is judged
                # against the mode's largest impedance
                q = replace(q, scale=max(abs(x) for k, x in v.items() if k.startswith("Z_")))
            row[name] = q
            worst = max(worst, q.relative)
        table[i] = row
    return table, worst


def wave_errors(mode, f):
    """Errors (SI) of the wave quantities of a homogeneous ``mode`` at ``f`` (Hz, above cutoff)
    from its cutoff error: with k^2 = kc^2 + beta^2, |d beta| = kc |d kc| / beta; the guide
    wavelength 2 pi / beta and phase velocity omega / beta have the same relative error as beta;
    the group velocity v^2 beta / omega the same relative error too; the wave impedance
    eta k / beta (TE) or eta beta / k (TM) again the same relative error.  TEM: all exact (0).
    Returns {'beta', 'guide_wavelength', 'phase_velocity', 'group_velocity', 'wave_impedance'}."""
    names = ("beta", "guide_wavelength", "phase_velocity", "group_velocity", "wave_impedance")
    if mode.family == "TEM":
        return dict.fromkeys(names, 0.0)
    mu, eps = _material(mode)
    w = 2 * math.pi * float(f)
    k = w * math.sqrt(mu * eps)
    b2 = k * k - mode.kc ** 2
    if b2 <= 0:
        return dict.fromkeys(names, math.nan)
    b = math.sqrt(b2)
    rel = mode.kc * mode.kc_error / b2  # |d beta| / beta
    v = C0 / math.sqrt(mode.eps_r * mode.mu_r)
    eta = math.sqrt(mu / eps)
    zw = eta * k / b if mode.family == "TE" else eta * b / k
    return {"beta": rel * b, "guide_wavelength": rel * 2 * math.pi / b, "phase_velocity": rel * w / b,
            "group_velocity": rel * v * v * b / w, "wave_impedance": rel * zw}


def _finite(x):
    return x if x is not None and np.isfinite(x) else None
