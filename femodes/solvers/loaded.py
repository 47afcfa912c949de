"""Guides partly loaded with dielectric: section with materials -> full-vector modes, with errors.

This joins :meth:`Section.with_material` (meshes conforming to the material regions) to the
full-vector solver of :mod:`femodes.vector`, with the same kind of accuracy control as the scalar
solver: every solve is repeated on three meshes and the differences, extrapolated with an assumed
convergence rate, estimate the error (Richardson, the larger of the two pairs, reported with a
safety factor).

* At a frequency: the propagating modes of largest beta.  The error measure is that of beta^2
  relative to k0^2 eps_max mu_max (the largest beta^2 the guide can have), so that modes near
  their cutoff, whose beta tends to zero, are not asked for an impossible relative accuracy.
  ``beta_error`` is the resulting absolute error on beta (rad/m).
* Without a frequency: the lowest cutoff frequencies (beta = 0), computed directly; the error is
  relative to each cutoff.

Complex modes (complex-conjugate pairs of beta^2 below cutoff, family 'complex', see
femodes.solvers.vector.VectorMode) take part in the same three-mesh estimate, with |difference|
of the complex values; each member is matched on the other meshes to the nearest complex value
with the same sign of Im beta^2 (real modes are matched by their rank among the real ones, as
before).  A complex pair is reported as a mode when it is found on all three meshes and its
estimated error is below |Im beta^2| (it persists under refinement with a resolved imaginary
part); otherwise it is taken for what coarse meshes also produce, two nearly equal evanescent
eigenvalues of the discrete pencil merged into a complex pair, and left out with a warning.

The assumed rate in h for elements of order p is 2p where the fields are smooth in every region
(no singular corner, no curved wall or interface: the slab-loaded rectangle measured 5 to 6 at
p = 3), else the conservative p + 1 (material corners and curved interfaces).  The meshes do not
always show it: on the unstructured meshes of layered guides one mode's error often stalled,
grew or changed sign between two meshes before it fell at the model's rate (a thin slab's
division across its thickness changes by whole elements).  So each mode's rate is the one its
three meshes show (capped at the model's, half the model's when its two differences change
sign), a pair's difference is carried to the finest mesh at no more than p + 1, the outer pair
counts too, and a cutoff's relative error is at least the trend of the higher modes' (see
:func:`_three_mesh_errors`, :func:`_trend_floor`).  Measured by benchmarks/bench_loaded_error_bars.py
(slabs on the bottom or side wall of WR-90, eps_r 1.5 to 10, accuracy 1e-4 to 1e-7, 4 cutoffs
each, against the transverse-resonance cutoffs): with the model's rate alone, 69 of 560 cutoffs
were outside their error bars (true / reported median 0.29, max 6.4); with these rules none
(median 0.059, max 0.65), for 1.3x the CPU time.
"""

from __future__ import annotations

import functools
import math
import os
import sys
import warnings
from dataclasses import dataclass

import numpy as np

from femodes.constants import C0
from femodes.errors import FemodesError
from femodes.geometry.loops import Arc
from femodes.geometry.mesh import mesh_section, singular_corners
from femodes.solvers.rates import MIN_OBSERVED_RATE, observed_rate
from femodes.solvers.vector import VectorProblem

__all__ = ["solve_loaded", "solve_loaded_mesh", "LoadedSolution", "SAFETY", "ORDER", "GRADING_FLOOR"]


SAFETY = 3.0


ORDER = 3


def _material_arrays(section, mesh, eps_r, mu_r, tan_delta=0.0):
    """Per-triangle eps_r, mu_r, tan_delta: the fill's, then each region's (mesh.regions)."""
    eps = np.full(mesh.n_triangles, float(eps_r))
    mu = np.full(mesh.n_triangles, float(mu_r))
    tand = np.full(mesh.n_triangles, float(tan_delta))
    for i, m in enumerate(section.materials, start=1):
        eps[mesh.regions == i] = m.eps_r
        mu[mesh.regions == i] = m.mu_r
        tand[mesh.regions == i] = m.tan_delta
    return eps, mu, tand


# Grading toward singular corners for edge elements (femodes.mesh.mesh_section): over a radius
# of 1 / k_max (k_max the largest wavenumber in the section), and no element smaller than the
# corner law gives at r = GRADING_FLOOR x that radius.  Measured on a 6 x 4 mm bar of eps_r 6 in
# WR-90 at 11 GHz (four free-standing material corners, order 3): grading over the whole section
# cost 20x the unknowns; radius 0.3 / k doubled the error at equal unknowns, 3 / k was no better
# than 1 / k; the scalar solver's floor (1e-7, elements down to nanometres) broke the pencil's
# precision (discrete Gauss-law residual 1e-3, beta wrong in the 4th digit at 130k unknowns),
# 1e-4 did so from 270k unknowns, while 1e-3 stayed clean (residual < 1e-7) and converged like
# h^5 to within 1e-8 of k0^2 eps_max.
GRADING_FLOOR = 1e-3


def _mesh(section, h, order, k_max=None):
    """The mesh of size h for edge elements of ``order``, graded over 1 / k_max (GRADING_FLOOR)."""

    radius = None if not k_max else 1.0 / float(k_max)
    return mesh_section(section, h, order=order, grading_radius=radius, grading_floor=GRADING_FLOOR,
                        all_corners=True)


def _problem(section, mesh, eps_r, mu_r, order, tan_delta=0.0, magnetic=None, like=None):
    """The VectorProblem of elements ``order`` on ``mesh`` with the section's materials
    (``magnetic``: the magnetic-wall facets; ``like``: a problem of the same mesh and materials
    whose assembled matrices are reused; see VectorProblem)."""

    if like is not None:
        return VectorProblem(like.mesh, like.eps_r, like.mu_r, order=order, tan_delta=like.tan_delta,
                             magnetic=magnetic, assembled=like)
    eps, mu, tand = _material_arrays(section, mesh, eps_r, mu_r, tan_delta)
    return VectorProblem(mesh, eps, mu, order=order, tan_delta=tand, magnetic=magnetic)


def _rate(section, p):
    """Assumed convergence rate in h of beta^2 (and of cutoff k0^2) for edge elements of order p:
    2p where the fields are smooth in every region (no singular corner, see
    femodes.mesh.singular_corners, and no curved wall or interface, whose geometry the mesh
    only follows to the element order), else the conservative p + 1 (graded singular corners:
    re-entrant wall corners, material corners, and convex wall corners whose exponent pi / angle
    is not whole and below p, e.g. 135 degrees, which :func:`_mesh` grades too)."""

    loops = list(section.loops) + [l for m in section.materials for l in (m.region,) + tuple(m.holes)]
    curved = any(isinstance(seg, Arc) for l in loops for seg in l.segments)
    if curved or singular_corners(section, order=p):
        return p + 1.0
    return 2.0 * p


def _partner(vm, candidates):
    """The mode among ``candidates`` (VectorModes of another discretisation of the same guide)
    nearest in beta^2 and of the same family, or None."""
    same = [c for c in candidates if c.family == vm.family and c.propagating]
    if not same:
        return None
    return min(same, key=lambda c: abs(c.beta2 - vm.beta2))


def _match(values, finest):
    """For each value of ``finest`` (the finest mesh's beta^2 or k0^2) the index of the same mode
    among ``values`` (another mesh's), -1 if none: real ones by their rank among the real ones
    (the lists are sorted alike), complex ones by the nearest complex value with the same sign of
    the imaginary part."""
    values, finest = np.asarray(values), np.asarray(finest)
    out = -np.ones(finest.size, dtype=np.int64)
    real_v, real_f = np.flatnonzero(values.imag == 0), np.flatnonzero(finest.imag == 0)
    m = min(real_v.size, real_f.size)
    out[real_f[:m]] = real_v[:m]
    cv = np.flatnonzero(values.imag != 0)
    for i in np.flatnonzero(finest.imag != 0):
        same = cv[np.sign(values[cv].imag) == np.sign(finest[i].imag)]
        if same.size:
            out[i] = same[np.argmin(np.abs(values[same] - finest[i]))]
    return out


def _observed_rate(dofs, values, rate, noise):
    """The rate q of  v(N) = v* + C N^(-q/2)  through three meshes' real values of one mode
    (:func:`femodes.solvers.rates.observed_rate`: capped at the model's ``rate``, floored at
    MIN_OBSERVED_RATE).

    d1 = v_0 - v_1, d2 = v_1 - v_2 satisfy d1 / d2 = s2^a (s1^a - 1) / (s2^a - 1), s1 = N_1 / N_0,
    s2 = N_2 / N_1, a = q / 2, increasing in a.  Differences below ``noise`` (round-off) say
    nothing: the model's rate.  Differences of opposite sign mean the meshes are not yet in the
    asymptotic range: the slowest rate (on the unstructured meshes of layered guides the error
    of one mode changed sign or stalled between meshes, e.g. the WR-90 with a quarter-height
    slab of eps_r 4: k0^2 errors -7.7e-8, +3.4e-8, +3.9e-8 on 1483, 2767, 4411 unknowns; the
    model's 2p reported 1.6x below the last one)."""
    return observed_rate(dofs, values, rate, noise, sign_change=max(MIN_OBSERVED_RATE, rate / 2))


def _three_mesh_errors(dofs, values, rate, p):
    """Estimated absolute error of the finest of three meshes' values of one mode (before the
    safety factor): the largest of

    * the fine pair's Richardson estimate |v_1 - v_2| / (s2^q - 1),
    * the coarse pair's, |v_0 - v_1| / (s1^q - 1), carried to the finest mesh at the rate
      min(q, p + 1): a pair's agreement is not carried down at the full 2p, because on these
      unstructured meshes a fast first drop was often followed by a stall (the quarter-height
      slab of eps_r 4 in WR-90, third cutoff: k0^2 errors 1.1e-6, 9.8e-8, 5.6e-8 on 1483, 2767,
      7105 unknowns: carried at 2p, 1.7x below the last),
    * the outer pair's, |v_0 - v_2| / (s02^q - 1) (two of the meshes can agree by chance),
    * the round-off floor 2 N eps |v|,

    with s = sqrt(N_fine / N_coarse) and q the observed rate (:func:`_observed_rate`, model
    ``rate`` at most).  Complex values (complex modes): |differences| at the model's rate.
    Returns (error, q)."""
    n0, n1, n2 = (float(d) for d in dofs)
    v0, v1, v2 = values
    floor = 2 * n2 * 2.2e-16 * abs(v2)
    if all(np.imag(v) == 0 for v in values):
        q = _observed_rate((n0, n1, n2), (float(np.real(v0)), float(np.real(v1)), float(np.real(v2))),
                           rate, 30 * floor)
    else:
        q = rate
    s1, s2, s02 = ((b / a) ** (q / 2) for a, b in ((n0, n1), (n1, n2), (n0, n2)))
    carry = max((n2 / n1) ** (min(q, p + 1.0) / 2), 1.0)
    err = max(abs(v1 - v2) / max(s2 - 1.0, 1e-3), abs(v0 - v1) / max(s1 - 1.0, 1e-3) / carry,
              abs(v0 - v2) / max(s02 - 1.0, 1e-3), floor)
    return err, q


def _trend_floor(values, errors, rate):
    """Cutoffs: no mode's relative error below that of a higher mode scaled by the error model,
    rel_j >= rel_i (k_j / k_i)^rate (errors grow like (k h)^rate): one mode's meshes can agree by
    chance where a higher mode's show the mesh's true quality (the scalar solver's rule too).
    ``values`` ascending k0^2; NaN errors are left alone and ignored."""
    lam = np.asarray(values, float)
    err = np.asarray(errors, float)
    rel = np.where(np.isfinite(err), err / np.abs(lam), 0.0)
    order = np.argsort(lam)
    out = err.copy()
    for pos, j in enumerate(order):
        higher = order[pos:]
        t = float(np.max(rel[higher] * (lam[j] / lam[higher]) ** (rate / 2)))
        if np.isfinite(out[j]):
            out[j] = max(out[j], t * abs(lam[j]))
    return out


def _debug(msg):
    """The refinement loop, step by step, on stderr when FEMODES_DEBUG is set (the command line's
    --verbose sets it)."""
    if os.environ.get("FEMODES_DEBUG"):
        print("femodes:", msg, file=sys.stderr)


def _first_size(section, modes, frequency, eps_r, mu_r, mesh_size=None):
    """(h, k_max, scale): the element size of the finest of the first three meshes (L / 4 or 1.5
    / k_max, ``mesh_size`` if given), the largest wavenumber in the section (at the frequency, or
    the one below which ``modes`` + 1 modes of the area are expected), and the measure of beta^2
    errors at a frequency, k0^2 eps_max mu_max (the largest beta^2 the guide can have)."""
    eps_max = max([float(eps_r)] + [m.eps_r for m in section.materials])
    mu_max = max([float(mu_r)] + [m.mu_r for m in section.materials])
    if frequency is not None:
        k_max = 2 * math.pi * float(frequency) / C0 * math.sqrt(eps_max * mu_max)
    else:
        k_max = math.sqrt(2 * math.pi * (modes + 1) / section.area * 1.15) * math.sqrt(eps_max * mu_max)
    h = min(section.size / 4, 1.5 / k_max) if mesh_size is None else float(mesh_size)
    return h, k_max, k_max ** 2


def _step(worst, plan, rate, accuracy):
    """The factor on h for the next mesh: (0.3 accuracy / worst)^(1 / plan), ``plan`` the slowest
    rate observed among the modes that miss the accuracy (not below half the model's ``rate``),
    between 0.4 and 0.75.  A slower observed rate may be a mesh that was merely unlucky (the
    half-filled WR-90 at eps_r 3, fourth cutoff: k0^2 errors 6.5e-6, 3.2e-6, 7.9e-9 on 979, 1969,
    10897 unknowns, observed rate 1.6): then no more than 0.6 per step, so that the next mesh
    shows the rate (a step of 0.4 went on to 74k unknowns and an error 1e4 x below the 1e-7
    asked)."""
    if worst <= 0:
        return 0.75
    shrink = 0.4 if plan >= rate else 0.6
    return min(0.75, max(shrink, (0.3 * accuracy / worst) ** (1.0 / plan)))


def _estimate(runs, frequency, rate, p, trend=True):
    """Error of the finest run's values from the last three runs (:func:`_three_mesh_errors`),
    times the safety factor; for cutoffs, no mode's relative error below the trend of a higher
    one (:func:`_trend_floor`; ``trend=False`` leaves that to the caller: the symmetry classes
    apply it over all classes together).  ``runs``: (values, objects, unknowns, ...) per mesh,
    coarsest first.  Modes are matched across meshes by :func:`_match` (complex ones by nearest
    complex value); NaN where one has no partner.  Returns (errors, the observed rate of each
    mode)."""
    finest = runs[-1]
    maps = [_match(r[0], finest[0]) for r in runs[-3:]]
    n = min(len(r[0]) for r in runs[-3:]) if frequency is None else len(finest[0])
    dofs = [r[2] for r in runs[-3:]]
    err = np.full(n, np.nan)
    qs = np.full(n, rate)
    for i in range(n):
        idx = [int(m[i]) for m in maps]
        if min(idx) < 0:
            continue
        err[i], qs[i] = _three_mesh_errors(dofs, [r[0][j] for r, j in zip(runs[-3:], idx)], rate, p)
    err *= SAFETY
    if trend and frequency is None and n:
        err = _trend_floor(np.real(finest[0][:n]), err, rate)
    return err, qs


def _kept(err, objs, frequency, evanescent):
    """Indices of the final mesh's modes to report: those with a partner on every coarser mesh
    (finite error; real ones beyond what a coarser mesh found are not), propagating unless
    ``evanescent``; complex pairs only when found on every mesh with an error below |Im beta^2|,
    else taken for merged near-equal evanescent eigenvalues of a coarse mesh and left out with a
    warning (module docstring)."""
    n = len(err)
    keep = [i for i in range(n) if np.isfinite(err[i])
            and (frequency is None or evanescent or objs[i].propagating)]
    if frequency is not None:
        loose = [i for i in range(n) if objs[i].family == "complex"
                 and not (np.isfinite(err[i]) and err[i] < abs(objs[i].beta2.imag))]
        if loose:
            b2 = objs[loose[0]].beta2
            warnings.warn(f"femodes: {len(loose)} complex beta^2 value(s) (beta^2 = {b2.real:.4g} "
                          f"{b2.imag:+.3g}j rad^2/m^2 the first) did not persist under refinement with a "
                          "resolved imaginary part (absent from a coarser mesh, or |Im beta^2| within its "
                          "error estimate): taken for two nearly equal evanescent eigenvalues that the "
                          "discretisation merged into a complex pair (a numerical artefact, not a complex "
                          "mode) and left out; if one sits at the end of the modes asked for, ask for a few "
                          "more modes to check it", RuntimeWarning, stacklevel=4)
            keep = [i for i in keep if i not in loose]
    return keep


@dataclass(frozen=True, eq=False)
class LoadedSolution:
    """What the loaded accuracy loop found, before the modes are named (femodes.modes.parents).

    values  : beta^2 (at a frequency) or cutoff k0^2 (without) of the final mesh, per object
    errors  : their estimated absolute errors (same units; complex |difference| for complex
              modes; fewer than ``objects`` when the coarser meshes found fewer, NaN for a
              complex mode without partners on the coarser meshes)
    objects : the VectorModes (at a frequency) or VectorCutoffs of the final mesh
    keep    : indices of the objects to report (propagating only, unless evanescent asked;
              complex pairs judged numerical artefacts never)
    problem : the final VectorProblem;  order : its element order
    lower   : () -> the VectorModes of order p - 1 on the final mesh (cached), or None
    mesh    : the final femodes Mesh (None for a mesh file's fixed mesh)
    empty   : count -> the empty guide's modes on the final mesh as
              femodes.modes.parents._empty_guide gives them, when the solver has a cheaper way
              (the symmetry classes), else None
    """

    values: np.ndarray
    errors: np.ndarray
    objects: tuple
    keep: tuple
    problem: object
    order: int
    lower: object = None
    mesh: object = None
    empty: object = None


def solve_loaded(section, modes, frequency=None, eps_r=1.0, mu_r=1.0, accuracy=1e-6, order=None,
                 evanescent=False, max_iterations=5, tan_delta=0.0, mesh_size=None, magnetic=None,
):
    """Modes (at ``frequency``) or cutoffs (without) of a section with material regions, with
    their errors: the accuracy loop (module docstring), unnamed (:class:`LoadedSolution`).

    ``eps_r``, ``mu_r``, ``tan_delta``: the background fill (the regions carry their own).
    ``mesh_size``: the element size (m) of the third (finest) of the first three meshes instead
    of the one chosen from the wavelength (the others 1.35 and 1.35^2 times larger).
    ``magnetic``: the magnetic-wall facets of a reduced section (VectorProblem; the symmetry
    classes of femodes.solvers.loaded_mirror, which run their own loop on shared meshes)."""
    p = ORDER if order is None else int(order)
    if p not in (1, 2, 3):
        raise FemodesError(f"order must be 1, 2 or 3 for loaded guides (edge elements), got {order!r}")
    rate = _rate(section, p)
    h, k_max, scale = _first_size(section, modes, frequency, eps_r, mu_r, mesh_size)

    def run(size):
        """(values, mode objects, unknowns, problem, mesh) on the mesh of element size ``size``."""
        mesh = _mesh(section, size, p, k_max)
        prob = _problem(section, mesh, eps_r, mu_r, p, tan_delta, magnetic)
        if frequency is not None:
            got = prob.solve(frequency, modes=modes, evanescent=True)
            return np.array([m.beta2 for m in got]), got, prob.n_dofs, prob, mesh
        got = prob.cutoffs(modes=modes)
        return np.array([c.k0 ** 2 for c in got]), got, prob.n_dofs, prob, mesh

    estimate = functools.partial(_estimate, frequency=frequency, rate=rate, p=p)

    runs = [run(k * h) for k in (1.35 ** 2, 1.35, 1.0)]
    for _ in range(max_iterations):
        fine = runs[-1]
        err, qs = estimate(runs)
        rel = err / scale if frequency is not None else err / (2 * fine[0][:len(err)])
        # the next mesh planned with the slowest rate observed among the modes that miss the
        # accuracy, but not below half the model's (the scalar solver's rule)
        missing = np.isfinite(rel) & (rel > accuracy)
        plan = max(rate / 2, float(np.min(qs[:len(rel)][missing]))) if np.any(missing) else rate
        rel = rel[np.isfinite(rel)]  # complex pairs not on every mesh: judged at the end
        worst = float(rel.max()) if len(rel) else 0.0
        _debug(f"loaded loop: h={h:.4g} N={fine[2]} worst estimate {worst:.2e} (rate plan {plan:.2f})")
        if worst <= accuracy:
            break
        if fine[2] > 1_500_000:
            warnings.warn(f"femodes: asked accuracy {accuracy:.1e} not reached; estimated {worst:.1e} "
                          f"with {fine[2]} unknowns", RuntimeWarning, stacklevel=3)
            break
        h *= _step(worst, plan, rate, accuracy)
        runs = runs[-2:] + [run(h)]
    else:
        warnings.warn(f"femodes: asked accuracy {accuracy:.1e} not reached after {max_iterations} "
                      f"refinements; estimated {worst:.1e}", RuntimeWarning, stacklevel=3)
    fine = runs[-1]
    err = estimate(runs)[0]
    vals, objs = fine[0], fine[1]
    keep = _kept(err, objs, frequency, evanescent)

    def lower_modes(mesh=fine[4]):
        """The modes with elements of order p - 1 on the final mesh, for the error of field-based
        quantities."""
        prob = _problem(section, mesh, eps_r, mu_r, p - 1, tan_delta, magnetic)
        return prob.solve(frequency, modes=len(objs) + 2, evanescent=False)

    lower = functools.lru_cache(maxsize=1)(lower_modes) if frequency is not None and p > 1 else None
    return LoadedSolution(vals, err, tuple(objs), tuple(keep), fine[3], p, lower, fine[4])


# ---------------------------------------------------------------------------- fixed meshes
def _mesh_material_arrays(mesh, eps_r, mu_r, tan_delta=0.0):
    """Per-triangle eps_r, mu_r, tan_delta of a mesh file with materials: the fill's, then each
    named group's (``mesh.materials``, ``mesh.material_index()``)."""
    index = mesh.material_index()
    eps = np.full(mesh.n_triangles, float(eps_r))
    mu = np.full(mesh.n_triangles, float(mu_r))
    tand = np.full(mesh.n_triangles, float(tan_delta))
    for i, m in enumerate(mesh.materials, start=1):
        eps[index == i], mu[index == i], tand[index == i] = m.eps_r, m.mu_r, m.tan_delta
    return eps, mu, tand


def solve_loaded_mesh(mesh, modes, frequency=None, eps_r=1.0, mu_r=1.0, accuracy=1e-6, order=None,
                      evanescent=False, tan_delta=0.0):
    """Modes (at ``frequency``) or cutoffs (without) of a mesh file whose named groups carry
    materials (:meth:`femodes.geometry.mesh.Mesh.with_materials`), with their errors, on that one
    mesh: a fixed mesh cannot be refined, so the accuracy is what the mesh gives.

    The problem is solved with edge elements of order p and p - 1 on the same mesh (the scalar
    solver's fixed-mesh estimate, :func:`femodes.solvers.scalar.solve_scalar_mesh`): the k-th
    value of the lower order differs from the k-th of order p by about the lower order's own
    error, which in the asymptotic range is larger than order p's (h^(2p - 2) against h^(2p) on
    smooth fields), so the whole difference, times the safety factor SAFETY, is the reported
    error of the order-p value.  Where a field singularity (a free-standing material corner)
    caps both orders at the same rate the two errors come closer and this bound is less sure;
    measured on our cases in tests/test_mesh_regions.py.  The error measures are those of
    :func:`solve_loaded` (beta^2 relative to k0^2 eps_max mu_max at a frequency, k0^2 at
    cutoff); when the estimate misses ``accuracy`` a RuntimeWarning says so (refine the mesh
    file).  The geometry is the mesh's own: curved 6-node triangles are followed to second
    order, and the error of the mesh's boundary against a true curve is not part of the
    estimate.  Returns a :class:`LoadedSolution`."""
    p = ORDER if order is None else int(order)
    if p not in (2, 3):
        raise FemodesError(f"order must be 2 or 3 for a mesh file with materials (edge elements; the error "
                           f"estimate on a fixed mesh compares order p with p - 1), got {order!r}")
    eps, mu, tand = _mesh_material_arrays(mesh, eps_r, mu_r, tan_delta)
    emu_max = float(np.max(eps * mu))
    fine = VectorProblem(mesh, eps, mu, order=p, tan_delta=tand)
    low = VectorProblem(mesh, eps, mu, order=p - 1, tan_delta=tand)
    if frequency is not None:
        objs = fine.solve(frequency, modes=modes, evanescent=True)
        lower = low.solve(frequency, modes=modes + 2, evanescent=True)
        vals = np.array([m.beta2 for m in objs])
        low_vals = np.array([m.beta2 for m in lower])
        scale = np.full(len(vals), (2 * math.pi * float(frequency) / C0) ** 2 * emu_max)
    else:
        objs = fine.cutoffs(modes=modes)
        lower = low.cutoffs(modes=modes + 2)
        vals = np.array([c.k0 ** 2 for c in objs])
        low_vals = np.array([c.k0 ** 2 for c in lower])
        scale = 2 * vals
    n = min(len(vals), len(low_vals))
    err = SAFETY * np.abs(vals[:n] - low_vals[:n])
    worst = float(np.max(err / scale[:n])) if n else 0.0
    if worst > accuracy:
        name = mesh.source or "the mesh"
        warnings.warn(f"femodes: asked accuracy {accuracy:.1e} not reached on the fixed mesh {name}; estimated "
                      f"{worst:.1e} with {fine.n_dofs} unknowns (a mesh file is not refined: refine it to do "
                      "better)", RuntimeWarning, stacklevel=3)
    keep = [i for i in range(n) if frequency is None or evanescent or objs[i].beta2 > 0]
    lower_modes = None
    if frequency is not None:
        prop = tuple(m for m in lower if m.beta2 > 0)
        lower_modes = lambda: prop  # noqa: E731  the order p - 1 modes, for field-based errors
    return LoadedSolution(vals, err, tuple(objs), tuple(keep), fine, p, lower_modes)
