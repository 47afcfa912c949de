"""Tolerance analysis: how machining tolerances move the cutoffs, the band edges and the
single-mode ratio, from the sensitivities of one nominal solve (:mod:`.sensitivity`).

Given a +- tolerance t_p per dimension p, to first order (the linearisation is the same one the
sensitivities are; it holds while the tolerances are small against the dimensions):

* worst case (linear): |d q| <= sum_p |d q / d p| t_p for each quantity q (a cutoff, the band
  edges f_low = fc1 and f_high = the next distinct cutoff, the ratio f_high / f_low);
* Monte Carlo: the dimensions drawn independently, uniform in [-t_p, t_p] (``distribution
  ="uniform"``, the default: a part inside its tolerance) or normal with t_p = 3 sigma
  (``"normal"``), the quantities moved by the linearised change; the spread (standard deviation,
  1st and 99th percentiles) and the samples for a histogram.

Each dimension's share of the worst case is listed, the largest first: the dimension to hold
tighter.  The sensitivities' own errors (``dfc_error``) are carried into the worst case as a
bound: the reported worst case is sum_p (|dq/dp| + error) t_p.

Dielectric-loaded guides (``regions=``, as for :func:`femodes.sweep`): the sensitivities of
:mod:`femodes.studies.loaded_sensitivity`, so a tolerance may also be a material's,
``region.NAME.eps_r`` (or ``.mu_r``, or the fill's ``eps_r`` / ``mu_r``) +- t, next to the
dimensions'; only the parameters given a tolerance are differentiated.  A region given as a
function of the shape's parameters moves with the dimensions (a slab whose thickness is a share
of the height); one given as a placed Section stays where it is.  The band edges of a
loaded guide are its first two cutoffs.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from femodes.errors import FemodesError
from femodes.studies.sensitivity import sensitivity
from femodes.studies.sweeps import _number

__all__ = ["tolerance", "Tolerance"]


@dataclass(frozen=True)
class Tolerance:
    """The spread of the quantities under the given tolerances (Hz; the ratio dimensionless).

    names      : the quantities: the cutoffs 'fc1'.., then 'f_low', 'f_high', 'ratio'
    nominal    : their nominal values;  worst : their worst-case (linear) excursion, +-
    std, p01, p99 : Monte Carlo standard deviation and 1st / 99th percentiles of the change
    samples    : (n, len(names)) Monte Carlo changes, for a histogram
    contributions : quantity -> ((parameter, share of the worst case), ...), largest first
    tolerances : parameter -> its +- tolerance (SI);  sensitivity : the :class:`Sensitivity`
    """

    names: tuple
    nominal: np.ndarray
    worst: np.ndarray
    std: np.ndarray
    p01: np.ndarray
    p99: np.ndarray
    samples: np.ndarray
    contributions: dict
    tolerances: dict
    sensitivity: object

    def of(self, name):
        """(nominal, worst case, std) of one quantity."""
        i = self.names.index(name)
        return float(self.nominal[i]), float(self.worst[i]), float(self.std[i])


#: fewest Monte Carlo draws: fewer make the 1 % .. 99 % spread meaningless
MIN_SAMPLES = 100


def _band_columns(sens):
    """Indices (i1, i2) of f_low = fc1 and f_high = the next cutoff not degenerate with it."""
    ms = sens.modes
    first = ms[0]
    same = set(first.degenerate_with) | {first.index}
    rest = [m.index for m in ms if m.index not in same]
    if not rest:
        raise FemodesError("the band edges need the second distinct cutoff: raise modes=")
    return first.index, rest[0]


def tolerance(shape, parameters, tolerances, *, modes=6, accuracy=1e-6, samples=20000, distribution="uniform",
              seed=0, **options):
    """The spread of the cutoffs, band edges and single-mode ratio of ``shape(**parameters)``
    when each dimension in ``tolerances`` (name -> +- tolerance, SI) varies within it (see the
    module docstring).  ``samples`` Monte Carlo draws (linearised, so cheap), reproducible with
    ``seed``.  ``options`` go to :func:`femodes.sensitivity` (``regions`` for a loaded guide:
    then also material tolerances such as {'region.slab.eps_r': 0.05}).  Returns a
    :class:`Tolerance`."""
    if not isinstance(tolerances, dict) or not tolerances:
        raise FemodesError("tolerances must map each dimension to its +- tolerance (SI), e.g. {'gap': 20e-6}")
    if distribution not in ("uniform", "normal"):
        raise FemodesError(f"distribution must be 'uniform' or 'normal', got {distribution!r}")
    tol = {}
    for name, t in tolerances.items():
        v = _number(f"the tolerance of {name!r}", t)
        if v < 0:
            raise FemodesError(f"the tolerance of {name!r} must be >= 0 (a +- value), got {t!r}")
        tol[name] = v
    sens = sensitivity(shape, parameters, modes=modes, accuracy=accuracy, only=list(tol), **options)
    missing = [n for n in tol if n not in sens.dfc]
    if missing:
        why = "; ".join(f"{n}: {sens.skipped.get(n, 'not a parameter of the shape')}" for n in missing)
        raise FemodesError(f"no sensitivity to {', '.join(missing)} ({why}); have: {', '.join(sens.dfc)}")
    i1, i2 = _band_columns(sens)
    n = len(sens.fc)
    names = tuple(f"fc{k + 1}" for k in range(n)) + ("f_low", "f_high", "ratio")
    fc = np.asarray(sens.fc, dtype=float)
    nominal = np.concatenate([fc, [fc[i1], fc[i2], fc[i2] / fc[i1]]])
    params = list(tol)
    # d quantity / d parameter (rows: parameters), and its error bound
    D = np.zeros((len(params), len(names)))
    E = np.zeros_like(D)
    for r, p in enumerate(params):
        d, e = np.asarray(sens.dfc[p], dtype=float), np.asarray(sens.dfc_error[p], dtype=float)
        dratio = (d[i2] * fc[i1] - d[i1] * fc[i2]) / fc[i1] ** 2
        eratio = (e[i2] * fc[i1] + e[i1] * fc[i2]) / fc[i1] ** 2
        D[r] = np.concatenate([d, [d[i1], d[i2], dratio]])
        E[r] = np.concatenate([e, [e[i1], e[i2], eratio]])
    t = np.array([tol[p] for p in params])
    parts = (np.abs(D) + E) * t[:, None]
    worst = parts.sum(axis=0)
    rng = np.random.default_rng(seed)
    n_samples = int(samples)
    if n_samples < MIN_SAMPLES:
        raise FemodesError(f"samples must be at least {MIN_SAMPLES}, got {samples!r}")
    if distribution == "uniform":
        dx = rng.uniform(-1.0, 1.0, size=(n_samples, len(params))) * t
    else:
        dx = rng.normal(0.0, 1.0, size=(n_samples, len(params))) * (t / 3.0)
    changes = dx @ D
    contributions = {}
    for j, q in enumerate(names):
        total = worst[j] if worst[j] > 0 else 1.0
        contributions[q] = tuple(sorted(((p, float(parts[r, j] / total)) for r, p in enumerate(params)),
                                        key=lambda kv: -kv[1]))
    return Tolerance(names, nominal, worst, changes.std(axis=0), np.percentile(changes, 1, axis=0),
                     np.percentile(changes, 99, axis=0), changes, contributions, tol, sens)
