"""Guides partly loaded with dielectric: section with materials -> full-vector modes, with errors.

This joins :meth:`Section.with_material` (meshes conforming to the material regions) to the
full-vector solver of :mod:`femodes.vector`, with the same kind of accuracy control as the scalar
solver: every solve is repeated on two meshes and the difference, extrapolated with an assumed
convergence rate, estimates the error (Richardson, reported with a safety factor).

* At a frequency: the propagating modes of largest beta.  The error measure is that of beta^2
  relative to k0^2 eps_max mu_max (the largest beta^2 the guide can have), so that modes near
  their cutoff, whose beta tends to zero, are not asked for an impossible relative accuracy.
  ``beta_error`` is the resulting absolute error on beta (rad/m).
* Without a frequency: the lowest cutoff frequencies (beta = 0), computed directly; the error is
  relative to each cutoff.

The assumed rate is p + 1 in h for elements of order p: conservative, because material corners
and curved interfaces keep the fields from being smooth (the smooth rate would be 2p).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field

import numpy as np

from .errors import FemodesError
from .modes import C0

__all__ = ["LoadedMode", "LoadedCutoff", "solve_loaded", "dispersion"]

SAFETY = 3.0
ORDER = 3


@dataclass(frozen=True, eq=False)
class LoadedMode:
    """One mode of a loaded guide at the frequency it was solved at.

    family : 'TE', 'TM', 'TEM' or 'hybrid' (by the longitudinal energy shares, see vector.py)
    label  : family and ordinal among the modes returned, e.g. 'hybrid 2', 'TE 1'
    frequency : Hz;  beta_error : estimated absolute error of beta (rad/m)
    vector : the :class:`femodes.vector.VectorMode` with the fields
    """

    family: str
    label: str
    frequency: float
    beta_value: complex | float
    beta_error: float
    index: int
    vector: object = field(repr=False)

    def beta(self, f=None):
        """beta (rad/m) at the solve frequency, -1j alpha if evanescent.  Asking at another
        frequency is an error: the mode was solved at one frequency only."""
        if f is not None and not math.isclose(float(f), self.frequency, rel_tol=1e-12):
            raise FemodesError(f"this mode was solved at {self.frequency / 1e9:.9g} GHz, not {float(f) / 1e9:.9g} GHz; "
                               "for beta at other frequencies use femodes.dispersion(section, frequencies, "
                               "modes=N), or solve again at that frequency")
        return self.beta_value

    def guide_wavelength(self, f=None):
        b = self.beta(f)
        return 2 * math.pi / b if isinstance(b, float) and b > 0 else math.inf

    @property
    def effective_permittivity(self):
        """(beta / k0)^2: the relative permittivity of a medium in which a plane wave would have
        this beta (below the largest eps_r mu_r of the section for any guided mode)."""
        k0 = 2 * math.pi * self.frequency / C0
        return self.vector.beta2 / (k0 * k0)

    def fields(self, points):
        """(E_x, E_y, E_z, H_x, H_y, H_z) at points (2, n); see VectorMode.fields."""
        return self.vector.fields(points)


@dataclass(frozen=True, eq=False)
class LoadedCutoff:
    """A cutoff (beta = 0) of a loaded guide: ``field`` 'TE' (transverse E only at cutoff) or
    'TM' (E_z only); ``fc`` Hz, ``fc_error`` its estimated error (Hz)."""

    field: str
    label: str
    fc: float
    fc_error: float
    index: int

    @property
    def rel_error(self):
        return self.fc_error / self.fc if self.fc > 0 else 0.0


def _material_arrays(section, mesh, eps_r, mu_r):
    eps = np.full(mesh.n_triangles, float(eps_r))
    mu = np.full(mesh.n_triangles, float(mu_r))
    for i, m in enumerate(section.materials, start=1):
        eps[mesh.regions == i] = m.eps_r
        mu[mesh.regions == i] = m.mu_r
    return eps, mu


def _problem(section, h, eps_r, mu_r, order):
    from .mesh import mesh_section
    from .vector import VectorProblem

    mesh = mesh_section(section, h, order=order)
    eps, mu = _material_arrays(section, mesh, eps_r, mu_r)
    return VectorProblem(mesh, eps, mu, order=order)


def solve_loaded(section, modes, frequency=None, eps_r=1.0, mu_r=1.0, accuracy=1e-6, order=None,
                 evanescent=False, max_iterations=5, _return_problem=False):
    """Modes (at ``frequency``) or cutoffs (without) of a section with material regions."""
    p = ORDER if order is None else int(order)
    if p not in (1, 2, 3):
        raise FemodesError(f"order must be 1, 2 or 3 for loaded guides (edge elements), got {order!r}")
    eps_max = max([float(eps_r)] + [m.eps_r for m in section.materials])
    mu_max = max([float(mu_r)] + [m.mu_r for m in section.materials])
    rate = p + 1.0
    L = section.size
    if frequency is not None:
        k_max = 2 * math.pi * float(frequency) / C0 * math.sqrt(eps_max * mu_max)
    else:
        k_max = math.sqrt(2 * math.pi * (modes + 1) / section.area * 1.15) * math.sqrt(eps_max * mu_max)
    h = min(L / 4, 1.5 / k_max)

    def run(prob):
        if frequency is not None:
            got = prob.solve(frequency, modes=modes, evanescent=True)
            return np.array([m.beta2 for m in got]), got, prob.n_dofs, prob
        got = prob.cutoffs(modes=modes)
        return np.array([c.k0 ** 2 for c in got]), got, prob.n_dofs, prob

    def estimate(coarse, fine):
        """Richardson error of each value, s = sqrt(N_fine / N_coarse), times the safety factor."""
        n = min(len(coarse[0]), len(fine[0]))
        s_rate = max((fine[2] / coarse[2]) ** (rate / 2) - 1.0, 1.0)
        return np.abs(coarse[0][:n] - fine[0][:n]) / s_rate * SAFETY

    coarse = run(_problem(section, 1.35 * h, eps_r, mu_r, p))
    fine = run(_problem(section, h, eps_r, mu_r, p))
    for _ in range(max_iterations):
        err = estimate(coarse, fine)
        if frequency is not None:
            rel = err / ((2 * math.pi * float(frequency) / C0) ** 2 * eps_max * mu_max)
        else:
            rel = err / (2 * fine[0][:len(err)])
        worst = float(rel.max()) if len(rel) else 0.0
        if worst <= accuracy:
            break
        if fine[2] > 1_500_000:
            warnings.warn(f"femodes: asked accuracy {accuracy:.1e} not reached; estimated {worst:.1e} "
                          f"with {fine[2]} unknowns", RuntimeWarning, stacklevel=3)
            break
        h *= min(0.75, max(0.4, (0.3 * accuracy / worst) ** (1.0 / rate))) if worst > 0 else 0.75
        coarse, fine = fine, run(_problem(section, h, eps_r, mu_r, p))
    else:
        warnings.warn(f"femodes: asked accuracy {accuracy:.1e} not reached after {max_iterations} "
                      f"refinements; estimated {worst:.1e}", RuntimeWarning, stacklevel=3)
    err = estimate(coarse, fine)
    vals, objs = fine[0], fine[1]
    n = len(err)
    out = []
    counts = {}
    for i in range(n):
        o = objs[i]
        if frequency is not None:
            if not evanescent and o.beta2 <= 0:
                continue
            fam = o.family
            counts[fam] = counts.get(fam, 0) + 1
            b = o.beta
            beta_err = err[i] / (2 * abs(b)) if abs(b) > 0 else math.sqrt(err[i])
            out.append(LoadedMode(fam, f"{fam} {counts[fam]}", float(frequency), b, float(beta_err), len(out), o))
        else:
            fam = o.field
            counts[fam] = counts.get(fam, 0) + 1
            fc = o.frequency
            out.append(LoadedCutoff(fam, f"{fam}-type {counts[fam]}", fc, float(fc * err[i] / (2 * vals[i])), len(out)))
    return (tuple(out), fine[3]) if _return_problem else tuple(out)


def dispersion(section, frequencies, modes=4, eps_r=1.0, mu_r=1.0, accuracy=1e-6, order=None):
    """beta(f) of the ``modes`` modes of largest beta at the first frequency, tracked along
    ``frequencies`` (Hz) by field overlap, so crossing curves keep their identities
    (:meth:`femodes.vector.VectorProblem.dispersion`).

    The mesh is the one :func:`solve_loaded` refines to ``accuracy`` at the highest frequency (the
    hardest: the shortest wavelength), assembled once; the curves are computed on it.  Returns a
    :class:`femodes.vector.Dispersion` (``frequencies``, ``beta`` (F, N), ``family``, ``overlap``).
    """
    from .section import Section

    if not isinstance(section, Section):
        raise FemodesError(f"dispersion() needs a section, got {type(section).__name__}")
    fs = np.atleast_1d(np.asarray(frequencies, dtype=float))
    if fs.size < 2 or not np.all(np.isfinite(fs)) or np.any(fs <= 0):
        raise FemodesError(f"frequencies must be two or more positive frequencies in Hz, got {frequencies!r}")
    p = ORDER if order is None else int(order)
    _, problem = solve_loaded(section, modes, float(fs.max()), eps_r, mu_r, accuracy, order=p,
                              evanescent=True, _return_problem=True)
    return problem.dispersion(fs, modes=modes)  # the same assembled problem, reused
