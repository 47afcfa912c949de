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

The assumed rate in h for elements of order p is 2p where the fields are smooth in every region
(no singular corner, no curved wall or interface: the slab-loaded rectangle measured 5 to 6 at
p = 3), else the conservative p + 1 (material corners and curved interfaces).
"""

from __future__ import annotations

import functools
import math
import warnings
from dataclasses import dataclass, field, replace

import numpy as np

from .errors import FemodesError
from .modes import C0

__all__ = ["LoadedMode", "LoadedCutoff", "LoadedStudy", "solve_loaded", "dispersion", "study"]

SAFETY = 3.0
ORDER = 3


@dataclass(frozen=True, eq=False)
class LoadedMode:
    """One mode of a loaded guide at the frequency it was solved at.

    family : 'TE', 'TM', 'TEM' or 'hybrid', from the longitudinal energy shares (``e_share``,
             ``h_share``; see femodes.vector.FAMILY_THRESHOLD)
    label  : 'hybrid from TE10' when the mode's transverse E is mostly (``parent_share`` >= 0.8)
             that of one empty-guide mode or degenerate group ('hybrid from TE11/TM11': the
             LSE/LSM mixtures of a rectangle's degenerate pair), or of two ('... from TE10+TE20');
             else family and ordinal, e.g. 'hybrid 2'
    parent : the empty-guide label(s) it grows from, or None; ``parent_share`` the share of
             int |E_t|^2 in their transverse fields (empty guide = the section without its
             regions, solved with the scalar solver for the labels)
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
    parent: str | None = None
    parent_share: float = math.nan
    lower: object = field(default=None, repr=False)  # () -> the modes at order p - 1, same mesh

    def beta(self, f=None):
        """beta (rad/m) at the solve frequency, -1j alpha if evanescent.  Asking at another
        frequency is an error: the mode was solved at one frequency only."""
        if f is not None and not math.isclose(float(f), self.frequency, rel_tol=1e-12):
            raise FemodesError(f"this mode was solved at {self.frequency / 1e9:.9g} GHz, not {float(f) / 1e9:.9g} GHz; "
                               "for beta at other frequencies use femodes.dispersion(section, frequencies, "
                               "modes=N), or solve again at that frequency")
        return self.beta_value

    @property
    def propagating(self):
        return self.vector.beta2 > 0

    def guide_wavelength(self, f=None):
        """2 pi / beta (m); inf for an evanescent mode."""
        b = self.beta(f)
        return 2 * math.pi / b if isinstance(b, float) and b > 0 else math.inf

    def phase_velocity(self, f=None):
        """v_p / c0 = k0 / beta (inf if evanescent)."""
        b = self.beta(f)
        k0 = 2 * math.pi * self.frequency / C0
        return k0 / b if isinstance(b, float) and b > 0 else math.inf

    def group_velocity(self, f=None):
        """v_g / c0 = d omega / d beta / c0, by perturbation of the pencil at this frequency
        (femodes.vector.VectorMode.group_velocity); NaN if evanescent."""
        self.beta(f)
        return self.vector.group_velocity

    def dielectric_attenuation(self, f=None):
        """Attenuation by the loss tangents of the fill and the regions, Np/m (first order in
        tan_delta; femodes.vector.VectorMode.dielectric_attenuation); NaN if evanescent."""
        self.beta(f)
        return self.vector.dielectric_attenuation

    def conductor_attenuation(self, f=None, conductivity=5.8e7, roughness=0.0):
        """Wall-loss attenuation alpha_c (Np/m) by the power-loss method, as for the homogeneous
        modes (femodes.quantities.conductor_attenuation):

            alpha_c = P_loss / (2 P),   P_loss = (K R_s / 2) oint |H_tan|^2 dl,

        P the Poynting flux of the hybrid mode and H_tan its field tangential to the walls (H_z
        and the tangential part of H_t), from the full-vector fields; ``conductivity`` in S/m or
        a metal name, ``roughness`` rms (m, Hammerstad-Jensen factor K).  A perturbation of the
        lossless mode: not valid close to cutoff, and it ignores the coupling of degenerate
        modes; NaN if evanescent.  Its error: :meth:`conductor_attenuation_error`."""
        self.beta(f)
        if not self.propagating:
            return math.nan
        return _alpha_c(self.vector, conductivity, roughness)

    def conductor_attenuation_error(self, f=None, conductivity=5.8e7, roughness=0.0):
        """Estimated error (Np/m) of :meth:`conductor_attenuation`: its difference from the same
        quantity with elements one order lower on the same mesh (solved on first use), as the
        scalar solver estimates on a fixed mesh.  Conservative by design: on the side-slab WR-90
        it was 100 to 1000 times the true error, while the Richardson difference of the last two
        meshes (the fields converge like h^p, irregularly, and a TEM mode's beta is exact on any
        mesh so its meshes stay coarse) came out below the true error.  NaN if no lower-order
        partner is found."""
        self.beta(f)
        if not self.propagating or self.lower is None:
            return math.nan
        partner = _partner(self.vector, self.lower())
        if partner is None:
            return math.nan
        return abs(_alpha_c(self.vector, conductivity, roughness) - _alpha_c(partner, conductivity, roughness))

    @property
    def e_share(self):
        """int eps_r |E_z|^2 / int eps_r |E|^2: how far from TE the mode is (0 for TE)."""
        return self.vector.e_share

    @property
    def h_share(self):
        """int mu_r |H_z|^2 / int mu_r |H|^2: how far from TM the mode is (0 for TM)."""
        return self.vector.h_share

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
    'TM' (E_z only); ``fc`` Hz, ``fc_error`` its estimated error (Hz).

    label  : 'TE-type from TE10' when the field at cutoff is mostly (``parent_share`` >= 0.8) that
             of one empty-guide mode or degenerate group at its cutoff (transverse E compared with
             the TE modes' for a TE-type cutoff, E_z with the TM modes' for a TM-type one), else
             'TE-type 2' (the ordinal among its type)
    """

    field: str
    label: str
    fc: float
    fc_error: float
    index: int
    parent: str | None = None
    parent_share: float = math.nan

    @property
    def rel_error(self):
        return self.fc_error / self.fc if self.fc > 0 else 0.0


def _alpha_c(vm, conductivity, roughness):
    """alpha_c = K R_s oint |H_tan|^2 dl / (4 P) of a VectorMode (Np/m)."""
    from .quantities import conductivity_of, roughness_factor, surface_resistance

    sigma = conductivity_of(conductivity)
    f = vm.frequency
    rs = float(surface_resistance(f, sigma)) * float(roughness_factor(f, sigma, roughness))
    return rs * vm.wall_integral() / (4.0 * vm.power())


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
    from .mesh import mesh_section

    radius = None if not k_max else 1.0 / float(k_max)
    return mesh_section(section, h, order=order, grading_radius=radius, grading_floor=GRADING_FLOOR)


def _problem(section, mesh, eps_r, mu_r, order, tan_delta=0.0):
    """The VectorProblem of elements ``order`` on ``mesh`` with the section's materials."""
    from .vector import VectorProblem

    eps, mu, tand = _material_arrays(section, mesh, eps_r, mu_r, tan_delta)
    return VectorProblem(mesh, eps, mu, order=order, tan_delta=tand)


def _rate(section, p):
    """Assumed convergence rate in h of beta^2 (and of cutoff k0^2) for edge elements of order p:
    2p where the fields are smooth in every region (no singular corner, see
    femodes.mesh.singular_corners, and no curved wall or interface, whose geometry the mesh
    only follows to the element order), else the conservative p + 1 (graded singular corners)."""
    from .mesh import singular_corners
    from .section import Arc

    loops = list(section.loops) + [l for m in section.materials for l in (m.region,) + tuple(m.holes)]
    curved = any(isinstance(seg, Arc) for l in loops for seg in l.segments)
    if curved or singular_corners(section):
        return p + 1.0
    return 2.0 * p


PARENT_SHARE = 0.8  # share of int |E_t|^2 in one or two empty-guide modes that names a parent


def _empty_guide(problem, count):
    """The empty guide's lowest modes on ``problem``'s mesh: [(family, kc^2, E_t, u)], E_t (2, ne, nq)
    and the potential u (H_z of TE, E_z of TM, phi of TEM; (ne, nq)) at the quadrature points of
    ``problem.basis_t``.

    The empty (homogeneous) guide's modes are pure (common practice): TE from the Neumann
    eigenproblem of H_z, E_t = z x grad H_z; TM from the Dirichlet one of E_z, E_t = grad E_z;
    TEM (kc = 0, one per inner conductor) from the electrostatic potentials, E_t = grad phi.  The
    Lagrange elements of the longitudinal field serve for all three, so this costs two small
    symmetric eigensolves instead of a second vector problem."""
    from skfem import BilinearForm, asm
    from skfem.helpers import dot, grad
    from scipy.sparse.linalg import spsolve

    from .eigen import lowest_eigenpairs
    from .solver import _conductors

    bz = problem.basis_z
    S = asm(BilinearForm(lambda u, v, w: dot(grad(u), grad(v))), bz).tocsr()
    T = problem.mats["T_z1"].tocsr()
    iz = problem.interior_z
    scale = float(np.sum(problem.basis_t.dx))  # the area
    sigma = -1.0 / scale  # below every eigenvalue (kc^2 > 0, or 0 for the constant H_z)

    def fields(cols):
        for c in cols.T:
            f = bz.interpolate(c)
            yield np.asarray(f.grad), np.asarray(f)

    out = []
    lam, X, _ = lowest_eigenpairs(S, T, count + 1, sigma, tol=1e-9)  # labels and shares only
    for kc2, (g, u) in zip(lam, fields(X)):
        if kc2 > 1e-8 / scale:  # not the constant
            out.append(("TE", float(kc2), np.array([-g[1], g[0]]), u))
    lam, X, _ = lowest_eigenpairs(S[iz][:, iz], T[iz][:, iz], count, sigma, tol=1e-9)
    full = np.zeros((bz.N, X.shape[1]))
    full[iz] = X
    out += [("TM", float(kc2), g, u) for kc2, (g, u) in zip(lam, fields(full))]
    groups = _conductors(bz.mesh)
    if len(groups) > 1:
        cond = [np.unique(bz.get_dofs(facets=gr).flatten()) for gr in groups]
        bnd = np.setdiff1d(np.arange(bz.N), iz)
        phis = np.zeros((bz.N, len(groups) - 1))
        for i in range(1, len(groups)):
            phis[cond[i], i - 1] = 1.0
            phis[iz, i - 1] = spsolve(S[iz][:, iz].tocsc(), -(S[iz][:, bnd] @ phis[bnd, i - 1]))
        out += [("TEM", 0.0, g, u) for g, u in fields(phis)]
    return sorted(out, key=lambda m: m[1])


def _bare_modes(section, count, eps_r, mu_r):
    """The scalar solver's labelled modes of the section without its regions (labels only: kc
    is matched to 1e-3, so accuracy 1e-4 is plenty)."""
    from dataclasses import replace as _replace

    from .solver import solve as _solve_scalar

    return _solve_scalar(_replace(section, materials=()), modes=count, eps_r=eps_r, mu_r=mu_r, accuracy=1e-4)


def _parents(section, problem, loaded_modes, eps_r, mu_r, ref=None):
    """For each loaded VectorMode (or VectorCutoff): (parent label or None, share).  The empty guide (the section
    without its regions) is solved on the same mesh (:func:`_empty_guide`); its modes are pure
    TE / TM / TEM and are named by matching their kc to the scalar solver's labelled modes of the
    bare section.  A loaded mode's parent is the empty-guide mode (or pair of them) holding >=
    PARENT_SHARE of its int |E_t|^2; the transverse fields of distinct empty-guide modes are
    orthogonal (common practice: the modal orthogonality of homogeneous guides), so the shares
    add up to at most 1.  A degenerate group (TE11 and TM11 of a rectangle, a circle's TE11 pair,
    the TEM modes of several inner conductors) is one parent, its share the projection on the
    group's span.  At a cutoff the comparison is of like with like: the transverse E of a TE-type
    cutoff with the empty guide's TE and TEM modes, the E_z of a TM-type cutoff with its TM modes
    (an empty-guide TM mode has no transverse E at cutoff, a TE mode no E_z).  ``ref``: the
    bare section's scalar modes (:func:`_bare_modes`) when the caller has them."""
    n = len(loaded_modes)
    if n == 0:
        return []
    count = n + 8
    empty = _empty_guide(problem, count)
    # labels only: kc is matched to 1e-3, so 1e-4 is plenty
    if ref is None or len(ref) < count:
        ref = _bare_modes(section, count, eps_r, mu_r)
    kmax2 = max([r.kc ** 2 for r in ref] + [m[1] for m in empty])
    names = []
    for fam, kc2, _, _ in empty:
        hits = [r for r in ref if r.family == fam and abs(r.kc ** 2 - kc2) <= 1e-3 * max(r.kc ** 2, 1e-6 * kmax2)]
        names.append(hits[0].label if hits else None)
    # group the empty modes by kc (degenerate groups); unnamed ones stay alone
    groups = []
    for j, (fam, kc2, _, _) in enumerate(empty):
        for gr in groups:
            i = gr[0]
            if names[i] and names[j] and abs(empty[i][1] - kc2) <= 1e-5 * max(kc2, 1e-6 * kmax2):
                gr.append(j)
                break
        else:
            groups.append([j])
    dx = problem.basis_t.dx
    bt = problem.basis_t
    ip = lambda a, b: float(np.sum(np.einsum("kij,kij->ij", a, b) * dx))  # noqa: E731
    ips = lambda a, b: float(np.sum(a * b * dx))  # noqa: E731
    grams = [np.array([[ip(empty[a][2], empty[b][2]) for b in gr] for a in gr]) for gr in groups]
    grams_z = [np.array([[ips(empty[a][3], empty[b][3]) for b in gr] for a in gr]) for gr in groups]

    def group_name(members):
        labs = [names[i] for i in members if names[i]]
        if len(labs) < len(members):
            return None
        if len(labs) > 1 and all(empty[i][0] == "TEM" for i in members):
            return "TEM"
        return "/".join(dict.fromkeys(sorted(labs, key=lambda t: (t[:2] != "TE", t))))

    out = []
    for lm in loaded_modes:
        cutoff = hasattr(lm, "field")  # a VectorCutoff
        if cutoff and lm.field == "TM":
            e = np.asarray(problem.basis_z.interpolate(lm.coeffs))
            prod, slot, G_all, want = ips, 3, grams_z, {"TM"}
        else:
            e = np.asarray(bt.interpolate(lm.coeffs if cutoff else lm.et))
            prod, slot, G_all = ip, 2, grams
            want = {"TE", "TEM"} if cutoff else {"TE", "TM", "TEM"}
        ee = prod(e, e)
        share = {}
        for k, (gr, G) in enumerate(zip(groups, G_all)):
            pos = [q for q, i in enumerate(gr) if empty[i][0] in want]
            if not pos:
                continue
            members = [gr[q] for q in pos]
            c = np.array([prod(e, empty[i][slot]) for i in members])
            v = float(c @ np.linalg.solve(G[np.ix_(pos, pos)], c)) / ee
            key = group_name(members) or f"?{k}"
            share[key] = share.get(key, 0.0) + v
        ranked = sorted(share.items(), key=lambda kv: -kv[1]) or [("?", 0.0)]
        top = ranked[0]
        if not top[0].startswith("?") and top[1] >= PARENT_SHARE:
            out.append((top[0], top[1]))
        elif (len(ranked) > 1 and not ranked[1][0].startswith("?") and not top[0].startswith("?")
              and top[1] + ranked[1][1] >= PARENT_SHARE):
            out.append((f"{top[0]}+{ranked[1][0]}", top[1] + ranked[1][1]))
        else:
            out.append((None, top[1] + (ranked[1][1] if len(ranked) > 1 else 0.0)))
    return out


def _partner(vm, candidates):
    """The mode among ``candidates`` (VectorModes of another discretisation of the same guide)
    nearest in beta^2 and of the same family, or None."""
    same = [c for c in candidates if c.family == vm.family and c.beta2 > 0]
    if not same:
        return None
    return min(same, key=lambda c: abs(c.beta2 - vm.beta2))


def solve_loaded(section, modes, frequency=None, eps_r=1.0, mu_r=1.0, accuracy=1e-6, order=None,
                 evanescent=False, max_iterations=5, tan_delta=0.0, parents=True, _return_problem=False,
                 _bare=None):
    """Modes (at ``frequency``) or cutoffs (without) of a section with material regions.

    ``eps_r``, ``mu_r``, ``tan_delta``: the background fill (the regions carry their own);
    ``parents``: name the empty-guide mode each mode grows from (an extra solve of the empty
    guide on the final mesh)."""
    p = ORDER if order is None else int(order)
    if p not in (1, 2, 3):
        raise FemodesError(f"order must be 1, 2 or 3 for loaded guides (edge elements), got {order!r}")
    eps_max = max([float(eps_r)] + [m.eps_r for m in section.materials])
    mu_max = max([float(mu_r)] + [m.mu_r for m in section.materials])
    rate = _rate(section, p)
    L = section.size
    if frequency is not None:
        k_max = 2 * math.pi * float(frequency) / C0 * math.sqrt(eps_max * mu_max)
    else:
        k_max = math.sqrt(2 * math.pi * (modes + 1) / section.area * 1.15) * math.sqrt(eps_max * mu_max)
    h = min(L / 4, 1.5 / k_max)

    def run(size):
        """(values, mode objects, unknowns, problem, mesh) on the mesh of element size ``size``."""
        mesh = _mesh(section, size, p, k_max)
        prob = _problem(section, mesh, eps_r, mu_r, p, tan_delta)
        if frequency is not None:
            got = prob.solve(frequency, modes=modes, evanescent=True)
            return np.array([m.beta2 for m in got]), got, prob.n_dofs, prob, mesh
        got = prob.cutoffs(modes=modes)
        return np.array([c.k0 ** 2 for c in got]), got, prob.n_dofs, prob, mesh

    def estimate(runs):
        """Error of the finest run's values: for each consecutive pair of the last three runs the
        Richardson estimate s = sqrt(N_fine / N_coarse) of the pair's finer values, carried to the
        finest mesh at the assumed rate, the largest taken, times the safety factor.  One pair
        alone can be fooled: when a refinement leaves the division of a short side unchanged the
        two errors come out nearly equal (the slab-loaded WR-90 at 1069 unknowns: estimate 16x
        below the true error of its third mode)."""
        finest = runs[-1]
        n = min(len(r[0]) for r in runs[-3:])
        worst = np.zeros(n)
        for c, f in zip(runs[-3:-1], runs[-2:]):
            s_rate = max((f[2] / c[2]) ** (rate / 2) - 1.0, 1.0)
            carry = max((finest[2] / f[2]) ** (rate / 2), 1.0)
            worst = np.maximum(worst, np.abs(c[0][:n] - f[0][:n]) / s_rate / carry)
        return worst * SAFETY

    runs = [run(k * h) for k in (1.35 ** 2, 1.35, 1.0)]
    for _ in range(max_iterations):
        fine = runs[-1]
        err = estimate(runs)
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
        runs = runs[-2:] + [run(h)]
    else:
        warnings.warn(f"femodes: asked accuracy {accuracy:.1e} not reached after {max_iterations} "
                      f"refinements; estimated {worst:.1e}", RuntimeWarning, stacklevel=3)
    fine = runs[-1]
    err = estimate(runs)
    vals, objs = fine[0], fine[1]
    n = len(err)
    out = []
    counts = {}
    keep = [i for i in range(n) if frequency is None or evanescent or objs[i].beta2 > 0]
    def lower_modes(mesh=fine[4]):
        """The modes with elements of order p - 1 on the final mesh, for the error of field-based
        quantities."""
        prob = _problem(section, mesh, eps_r, mu_r, p - 1, tan_delta)
        return prob.solve(frequency, modes=len(objs) + 2, evanescent=False)

    lower = functools.lru_cache(maxsize=1)(lower_modes) if frequency is not None and p > 1 else None
    named = dict(zip(keep, _parents(section, fine[3], [objs[i] for i in keep], eps_r, mu_r, _bare))) if parents else {}
    for i in keep:
        o = objs[i]
        if frequency is not None:
            fam = o.family
            counts[fam] = counts.get(fam, 0) + 1
            b = o.beta
            beta_err = err[i] / (2 * abs(b)) if abs(b) > 0 else math.sqrt(err[i])
            parent, share = named.get(i, (None, math.nan))
            label = f"{fam} from {parent}" if parent else f"{fam} {counts[fam]}"
            out.append(LoadedMode(fam, label, float(frequency), b, float(beta_err), len(out), o, parent, share,
                                  lower))
        else:
            fam = o.field
            counts[fam] = counts.get(fam, 0) + 1
            fc = o.frequency
            parent, share = named.get(i, (None, math.nan))
            label = f"{fam}-type from {parent}" if parent else f"{fam}-type {counts[fam]}"
            out.append(LoadedCutoff(fam, label, fc, float(fc * err[i] / (2 * vals[i])), len(out), parent, share))
    return (tuple(out), fine[3]) if _return_problem else tuple(out)


def dispersion(section, frequencies, modes=4, eps_r=1.0, mu_r=1.0, accuracy=1e-6, order=None,
               tan_delta=0.0, labels=True, _bare=None):
    """beta(f) of the ``modes`` modes of largest beta at the first frequency, tracked along
    ``frequencies`` (Hz) by field overlap, so crossing curves keep their identities
    (:meth:`femodes.vector.VectorProblem.dispersion`).

    The mesh is the one :func:`solve_loaded` refines at the highest frequency (the hardest: the
    shortest wavelength) to ``accuracy`` (f_min / f_max)^2 / 4, so that the error of beta^2
    relative to k0^2 eps_max mu_max stays within ``accuracy`` down to the lowest frequency (the 4:
    a margin for modes away from the top frequency); assembled once, the curves are computed on it.  Returns a
    :class:`femodes.vector.Dispersion` (``frequencies``, ``beta`` (F, N), ``family``, ``overlap``).
    """
    from .section import Section

    if not isinstance(section, Section):
        raise FemodesError(f"dispersion() needs a section, got {type(section).__name__}")
    fs = np.atleast_1d(np.asarray(frequencies, dtype=float))
    if fs.size < 2 or not np.all(np.isfinite(fs)) or np.any(fs <= 0):
        raise FemodesError(f"frequencies must be two or more positive frequencies in Hz, got {frequencies!r}")
    p = ORDER if order is None else int(order)
    # the error of beta^2 is measured relative to k0^2 eps_max mu_max, which is smallest at the
    # lowest frequency: ask the top-frequency solve for that much more, and a margin of 4 for
    # the tracked modes away from the top frequency, whose errors its estimate does not see
    # (measured on the slab-loaded WR-90, 8-16 GHz: 1.5e-6 at accuracy 1e-6 without the margin)
    acc = float(accuracy) * (float(fs.min()) / float(fs.max())) ** 2 / 4.0
    _, problem = solve_loaded(section, modes, float(fs.max()), eps_r, mu_r, acc, order=p,
                              evanescent=True, tan_delta=tan_delta, parents=False, _return_problem=True)
    disp = problem.dispersion(fs, modes=modes)  # the same assembled problem, reused
    if not labels:
        return disp
    first = disp.modes[0]
    named = _parents(section, problem, list(first), eps_r, mu_r, _bare)
    names = tuple(f"{m.family} from {par}" if par else "" for m, (par, _) in zip(first, named))
    return replace(disp, labels=names)


@dataclass(frozen=True, eq=False)
class LoadedStudy:
    """What a case file asks of a loaded guide, solved: the lowest cutoffs, the modes at one
    frequency, and the dispersion over a band (each None / empty when not asked).

    n_dofs : unknowns of the final cutoff mesh; n_dofs_at_f : of the mesh at the frequency
    more_propagate : True when every mode asked for propagates at ``frequency`` (more may: ask
                     for more modes to see them all)
    empty_modes : (label, kc) of the empty guide's modes with a cutoff below the band top (for
                  comparison curves), with a band
    """

    section: object
    eps_r: float
    mu_r: float
    tan_delta: float
    accuracy: float
    order: int
    cutoffs: tuple
    n_dofs: int
    frequency: float | None = None
    modes: tuple = ()
    n_dofs_at_f: int = 0
    more_propagate: bool = False
    dispersion: object = None
    empty_modes: tuple = ()
    conductor: str = "copper (5.8e+07 S/m)"
    conductivity: float = 5.8e7
    roughness: float = 0.0

    @property
    def single_mode_band(self):
        """(f1, f2) Hz between the two lowest cutoffs, or None with fewer than two."""
        if len(self.cutoffs) < 2:
            return None
        return (self.cutoffs[0].fc, self.cutoffs[1].fc)


def study(section, modes=6, accuracy=1e-6, order=None, eps_r=1.0, mu_r=1.0, tan_delta=0.0,
          frequency=None, band=None, points=41, conductivity=5.8e7, roughness=0.0, conductor=None):
    """Cutoffs, modes at ``frequency`` (Hz) and dispersion over ``band`` (f1, f2 Hz, ``points``
    frequencies) of a section with material regions: the loaded-guide part of a case file.  The
    dispersion follows the modes whose cutoff (of the ``modes`` computed) lies below f2.
    ``conductivity`` (S/m), ``roughness`` (m) and ``conductor`` (its description) are the wall
    metal for the wall loss of the modes at ``frequency``."""
    p = ORDER if order is None else int(order)
    bare = _bare_modes(section, modes + 8, eps_r, mu_r)  # the labels of every part, solved once
    cuts, prob = solve_loaded(section, modes, None, eps_r, mu_r, accuracy, order=p, tan_delta=tan_delta,
                              _return_problem=True, _bare=bare)
    out = LoadedStudy(section, float(eps_r), float(mu_r), float(tan_delta), float(accuracy), p, cuts,
                      prob.n_dofs, conductor=conductor or f"{float(conductivity):.4g} S/m",
                      conductivity=float(conductivity), roughness=float(roughness))
    if frequency is not None:
        ms, prob_f = solve_loaded(section, modes, frequency, eps_r, mu_r, accuracy, order=p,
                                  tan_delta=tan_delta, _return_problem=True, _bare=bare)
        out = replace(out, frequency=float(frequency), modes=ms, n_dofs_at_f=prob_f.n_dofs,
                      more_propagate=len(ms) >= modes)
    if band is not None:
        # the curves worth drawing: the modes with a cutoff below the top of the band (those
        # that propagate somewhere in it), at least one
        fs = np.linspace(float(band[0]), float(band[1]), int(points))
        n_band = max(1, sum(1 for c in cuts if c.fc < fs[-1]))
        empty = tuple((m.label, float(m.kc)) for m in bare[:n_band] if m.fc < fs[-1])
        out = replace(out, dispersion=dispersion(section, fs, n_band, eps_r, mu_r, accuracy, order=p,
                                                 tan_delta=tan_delta, _bare=bare), empty_modes=empty)
    return out
