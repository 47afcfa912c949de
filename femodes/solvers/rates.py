"""The convergence rate three meshes show, shared by the accuracy loops of the scalar
(:mod:`femodes.solvers.scalar`) and the loaded (:mod:`femodes.solvers.loaded`) solvers.

A mode's value on a mesh of N unknowns behaves as  v(N) = v* + C N^(-q/2)  in the asymptotic
range (q: the rate in the element size h).  Through three meshes N_0 < N_1 < N_2 the differences
d1 = v_0 - v_1, d2 = v_1 - v_2 satisfy

    d1 / d2 = s2^a (s1^a - 1) / (s2^a - 1),   s1 = N_1 / N_0, s2 = N_2 / N_1, a = q / 2,

which increases with a, so q follows by bisection.
"""

from __future__ import annotations

__all__ = ["MIN_OBSERVED_RATE", "observed_rate"]

#: the slowest observed rate believed (in h): below it two of the three differences are taken as noise
MIN_OBSERVED_RATE = 1.0


def observed_rate(dofs, values, rate, noise, sign_change=None):
    """The rate q through three meshes' real ``values`` of one mode on ``dofs`` unknowns, capped at
    the model's ``rate`` (never faster than the model) and floored at :data:`MIN_OBSERVED_RATE`.

    Differences below ``noise`` (round-off) say nothing about the rate: the model's is kept.
    Differences of opposite sign (not yet asymptotic) give ``sign_change`` (a rate) where given,
    else the model's rate.
    """
    d1 = values[0] - values[1]
    d2 = values[1] - values[2]
    if abs(d1) <= noise or abs(d2) <= noise:
        return rate
    if d1 * d2 <= 0:
        return rate if sign_change is None else sign_change
    s1, s2 = dofs[1] / dofs[0], dofs[2] / dofs[1]
    if s1 <= 1.0 or s2 <= 1.0:
        return rate
    ratio = abs(d1 / d2)

    def g(a):
        return s2 ** a * (s1 ** a - 1.0) / (s2 ** a - 1.0) - ratio

    lo, hi = MIN_OBSERVED_RATE / 2, rate / 2
    if g(hi) <= 0:
        return rate
    if g(lo) >= 0:
        return MIN_OBSERVED_RATE
    for _ in range(60):  # bisection: g is monotone in a
        mid = 0.5 * (lo + hi)
        if g(mid) > 0:
            hi = mid
        else:
            lo = mid
    return 2.0 * lo
