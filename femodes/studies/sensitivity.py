"""Sensitivities: d fc / d(parameter) of every mode for every numeric parameter of a shape, from the
shape derivative of the eigenvalue on the nominal mesh (no re-solve per parameter).

Physics.  The cutoff wavenumber squared lambda = kc^2 is an eigenvalue of -laplace on the
cross-section Omega: Dirichlet (TM, psi = E_z) or Neumann (TE, psi = H_z), psi normalised to
int psi^2 dA = 1.  Let the section move with a velocity field V (the boundary point x goes to
x + t V(x) when the parameter grows by t).  Pulling the weak form back to Omega with
T_t = I + t V (Jacobian J = 1 + t div V, DT^-1 DT^-T J = I + t (div V I - DV - DV^T)) gives the
volume (domain) form of Hadamard's derivative, the same for both boundary conditions:

    d lambda = int [ div V |grad psi|^2 - 2 grad psi . (DV grad psi) - lambda div V psi^2 ] dA,

(DV)_ij = d V_i / d x_j.  Integrating by parts with the eigen-equation turns it into the boundary
forms (Henrot & Pierre, "Variation et optimisation de formes", sec. 5.9; n the outward normal):

    Dirichlet:  d lambda = - oint (d psi / dn)^2 (V . n) ds
    Neumann:    d lambda =   oint (|grad_t psi|^2 - lambda psi^2) (V . n) ds

(a dilation V = x gives d lambda = -2 lambda for both, as lambda ~ 1 / size^2 requires).  The
volume form is used: with V in the space of the mesh's geometry (P1 on straight meshes, the
isoparametric order on curved ones) it is exactly the derivative of the discrete eigenvalue when
the mesh nodes move by V, so it converges like the eigenvalue itself, corners included, with no
pointwise normal derivative on the wall.  Then d kc = d lambda / (2 kc) and
d fc = c0 d kc / (2 pi sqrt(eps_r mu_r)); TEM modes (kc = 0) have d fc = 0.

The velocity a parameter induces.  The shape is rebuilt at the parameter +/- delta (delta = 1e-6
of the parameter's size); its outline has the same loops and segments in the same order, so each
boundary node of the nominal mesh, at parametric position s along its segment, is mapped to the
point at the same s of the same segment of each rebuilt outline: V = (x+(s) - x-(s)) / (2 delta)
(central difference of exact geometry, error ~ delta^2).  Interior nodes get the harmonic
extension (a Laplace problem on the mesh).  Only V . n on the wall matters for the exact
derivative; the tangential part and the extension change the discrete value by no more than the
discretisation error.

Walls marked magnetic (``Section.with_walls``): the same volume form, with TM Dirichlet on the
electric walls only and TE Dirichlet on the magnetic ones (the scalar solver's conditions); the
pull-back keeps each part of the wall on itself (boundary nodes move along their own segment),
so the form is still the discrete eigenvalue's derivative.

Degenerate groups (a square's TE10 / TE01, a circle's TE11 pair): the derivative of a degenerate
eigenvalue is not one number but the eigenvalues of the matrix of the form above on the group's
span (the group splits into branches).  Each member of the group is given the branch whose
eigenvector overlaps its own field most: for a symmetric perturbation of a symmetric section the
branches are the symmetry-adapted members themselves (a square widened: TE10 moves, TE01 does
not).

Error estimate.  The same derivative at element order p - 1 on the same mesh: the difference
(largest over a degenerate group) times SAFETY = 3, and at least 2 fc_error / |p| (the cutoff's
own error, which moves with the geometry) and the round-off.  On smooth fields order p - 1 is
far worse than p and the estimate is very conservative (100-1000x on rectangles and circles);
near re-entrant corners both orders share the singular error and the raw difference alone came
out up to 1.8x below the true error (sharp double ridge), hence the safety factor.  The nominal
solve is asked for a quarter of ``accuracy``: measured against fc / |p| (the natural scale of a
sensitivity) the derivatives' true errors were up to 2.3x the cutoffs' reported relative errors
(sharp double ridge), so that they stay within ``accuracy`` x fc / |p|.
"""

from __future__ import annotations

import inspect
import math
import numbers
from dataclasses import dataclass, field

import numpy as np
from scipy.sparse.linalg import splu

from femodes.api import solve
from femodes.constants import C0
from femodes.errors import FemodesError
from femodes.geometry.section import Section
from femodes.geometry.walls import magnetic_lines
from femodes.modes.model import ModeSet
from femodes.solvers.discretise import discretise
from femodes.solvers.eigen import lowest_eigenpairs, restrict, single_thread
from femodes.solvers.scalar import _cut_dofs
from femodes.studies.loaded_sensitivity import loaded_sensitivities
from femodes.studies.sweeps import _regions
from femodes.studies.velocity import _boundary_velocity, _locate_on_outline, _same_pieces

__all__ = ["sensitivity", "Sensitivity", "DISCRETE_PARAMETERS"]

#: parameters that count things rather than measure them: never differentiated
DISCRETE_PARAMETERS = ("ridges",)
#: reported error = SAFETY x |derivative at order p - 1 - at order p| on the same mesh (worst
#: true / raw difference measured: 1.8 on the sharp double ridge, where both orders share the error
#: of the re-entrant corners' singular fields; below 0.01 on rectangles and circles)
SAFETY = 3.0
#: and at least CUTOFF_FLOOR x fc_error / |parameter|: the error of a cutoff changes with the
#: geometry too (measured: true error of d fc / d p up to 1.4 fc_error / p on the double ridge)
CUTOFF_FLOOR = 2.0
#: the nominal solve is asked for accuracy / NOMINAL_MARGIN (see sensitivity())
NOMINAL_MARGIN = 4.0
#: relative step of the geometric central difference that gives the boundary velocity
_GEOMETRY_STEP = 1e-6
_J01 = 2.404825557695773


@dataclass(frozen=True, eq=False)
class Sensitivity:
    """Sensitivities of the cutoffs of a homogeneously filled guide to its shape parameters.

    dfc        : parameter name -> array over the modes (cutoff order, as ``modes``) of
                 d fc / d parameter, Hz per SI unit of the parameter (Hz/m, Hz/rad)
    dfc_error  : the same shape: its estimated error (the derivative at order p - 1 on the same
                 mesh; see the module docstring)
    modes      : the nominal :class:`~femodes.modes.ModeSet`
    labels     : the modes' labels;  fc, fc_error: the nominal cutoffs and their errors (Hz)
    parameters : the nominal value of every parameter of the shape (SI; defaults included)
    skipped    : parameter name -> why it has no sensitivity (offsets, counts, a zero corner
                 radius whose change alters the outline's pieces, ...)
    groups     : the degenerate groups (tuples of mode indices, one family each) whose members
                 carry the branch derivatives of the group (module docstring)
    n_dofs, order : of the nominal (and derivative) discretisation
    method     : parameter name -> how its derivative was found (loaded guides:
                 :mod:`femodes.studies.loaded_sensitivity`; empty for a homogeneous guide, whose
                 derivatives are all the shape derivative of the module docstring)
    """

    dfc: dict
    dfc_error: dict
    modes: ModeSet
    labels: tuple
    fc: np.ndarray
    fc_error: np.ndarray
    parameters: dict
    skipped: dict = field(default_factory=dict)
    groups: tuple = ()
    n_dofs: int = 0
    order: int = 0
    method: dict = field(default_factory=dict)

    def relative(self, name):
        """Normalised sensitivity (p / fc) d fc / d p of each mode to parameter ``name``
        (dimensionless: 1 % change of p moves fc by this many per cent); NaN for kc = 0."""
        if name not in self.dfc:
            raise FemodesError(f"no sensitivity to {name!r}; have: {', '.join(self.dfc) or 'none'}")
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(self.fc > 0, self.parameters[name] * self.dfc[name] / np.where(self.fc > 0, self.fc, 1.0),
                            np.nan)

    def table(self):
        """Rows (label, fc, {name: (dfc, dfc_error)}) for reports."""
        return [(lab, float(self.fc[i]), {k: (float(self.dfc[k][i]), float(self.dfc_error[k][i])) for k in self.dfc})
                for i, lab in enumerate(self.labels)]


def sensitivity(shape, parameters, *, modes=6, accuracy=1e-6, regions=None, only=None, **options):
    """d fc / d p of the ``modes`` lowest modes of ``shape(**parameters)`` for every numeric
    parameter p of the shape, from one nominal solve (:func:`femodes.solve` with ``accuracy``
    and ``options``: eps_r, mu_r, family, order, mesh_size, max_iterations).

    ``shape``: a shape function such as :func:`femodes.double_ridge` or :func:`femodes.rectangle`;
    ``parameters``: a dict of its keyword arguments in SI units (metres, radians).  Every
    parameter whose value (given or default) is a real number gets a sensitivity, except counts
    (``ridges``) and parameters whose change alters the outline's pieces (a corner radius of 0:
    a fillet appears) or leaves the valid range; those are listed in ``.skipped`` with the reason.
    Offsets (pairs) are not differentiated.

    ``regions``: dielectric regions put into the guide, as for :func:`femodes.sweep` (dicts
    {"name", "shape" (a Section, placed, or a function of the shape's keyword arguments
    returning one: the region then moves with the dimensions in the differences), "eps_r",
    "mu_r", "tan_delta"}): the guide is solved full-vector and the sensitivities are those of
    :mod:`femodes.studies.loaded_sensitivity`: to each region's ``region.NAME.eps_r`` and
    ``region.NAME.mu_r`` and the fill's ``eps_r``, ``mu_r`` by first-order perturbation, to the
    shape's parameters by the shape derivative on the nominal mesh with the regions held where
    they are placed, or, where a region's edge lies on a wall that moves with the parameter (a
    kink), by central differences of whole solves (``.method`` says which).

    ``only``: the names of the parameters to differentiate (default: all); a loaded guide's
    shape parameter at a kink costs four solves, so :func:`femodes.tolerance` asks for its own only.
    A homogeneously filled guide gives the fill's ``eps_r`` and ``mu_r`` too when ``only`` names
    them (d fc / d eps_r = -fc / (2 eps_r), exact), so that a tolerance may be a material's.

    Returns a :class:`Sensitivity`; see the module docstring for the physics and the error.
    """
    values, names = _check_inputs(shape, parameters)
    regions = _regions(regions)
    wanted = None
    if only is not None:
        if isinstance(only, str) or not hasattr(only, "__iter__"):
            raise FemodesError(f"only must be a list of parameter names, got {only!r}")
        wanted = set(only)
        extra = {"eps_r", "mu_r"} | ({f"region.{r['name']}.{k}" for r in regions for k in ("eps_r", "mu_r", "tan_delta")}
                                     if regions is not None else set())
        unknown = sorted(wanted - set(values) - extra)
        if unknown:
            raise FemodesError(f"no sensitivity to {', '.join(unknown)}: not a parameter of {_name(shape)} here; the "
                               "parameters: " + ", ".join(list(values) + sorted(extra)))
    if regions is not None:
        if "frequency" in options:
            raise FemodesError("frequency= does not apply: the sensitivities are of the loaded guide's cutoffs")
        try:
            accuracy = float(accuracy)
        except (TypeError, ValueError):
            raise FemodesError(f"accuracy must be a number, got {accuracy!r}") from None
        if not 1e-11 <= accuracy < 0.1:
            raise FemodesError(f"accuracy must lie between 1e-11 and 0.1 (relative error on each cutoff), got "
                               f"{accuracy!r}")
        acc = accuracy / NOMINAL_MARGIN if 1e-11 * NOMINAL_MARGIN <= accuracy else accuracy
        return Sensitivity(**loaded_sensitivities(shape, values, names, regions, modes, acc, options,
                                                  DISCRETE_PARAMETERS, wanted))
    try:
        section = shape(**values)
    except TypeError as exc:
        raise FemodesError(f"{_name(shape)}(...) refused the parameters {sorted(values)}: {exc}") from None
    if not isinstance(section, Section):
        raise FemodesError(f"shape must return a Section (e.g. femodes.double_ridge), {_name(shape)} returned "
                           f"{type(section).__name__}")
    if section.materials:
        raise FemodesError("the shape must return a homogeneously filled section; this one has material regions of "
                           "its own: give the regions as regions=[{'name': ..., 'shape': ..., 'eps_r': ...}]")
    if "frequency" in options:
        raise FemodesError("frequency= does not apply: a homogeneously filled guide's sensitivities are of its cutoffs")
    try:
        accuracy = float(accuracy)
    except (TypeError, ValueError):
        raise FemodesError(f"accuracy must be a number, got {accuracy!r}") from None
    # measured against fc / |p|, a derivative's true error was up to 2.3x its cutoff's reported
    # error (sharp double ridge, re-entrant corners): the nominal solve is asked for a quarter
    ms = solve(section, modes=modes, accuracy=accuracy / NOMINAL_MARGIN if 1e-11 * NOMINAL_MARGIN <= accuracy < 0.1
               else accuracy, **options)
    p = int(ms.order)
    if p < 2:
        raise FemodesError("sensitivity() needs element order >= 2: its error estimate is the derivative at "
                           "order p - 1 on the same mesh")

    # the velocity fields: shapes rebuilt at +/- delta, outline pieces matched one to one
    moved = {}
    skipped = {k: "an offset or other pair: not differentiated" for k, v in values.items()
               if isinstance(v, (tuple, list, np.ndarray))}
    for n in names:
        if wanted is not None and n not in wanted:
            continue
        v = values[n]
        if n in DISCRETE_PARAMETERS:
            skipped[n] = "a count, not a dimension"
            continue
        step = _GEOMETRY_STEP * max(abs(v), 1e-3 * section.size)
        try:
            plus, minus = shape(**{**values, n: v + step}), shape(**{**values, n: v - step})
        except FemodesError as exc:
            skipped[n] = f"the shape is not valid on both sides of {n} = {v!r}: {exc}"
            continue
        why = _same_pieces(section, plus) or _same_pieces(section, minus)
        if why:
            skipped[n] = f"changing {n} from {v!r} {why}: the derivative there is one-sided"
            continue
        moved[n] = (plus, minus, 2 * step)

    scale = C0 / (2 * math.pi * math.sqrt(ms.eps_r * ms.mu_r))
    n_modes = len(ms)
    dfc = {n: np.zeros(n_modes) for n in moved}
    err = {n: np.zeros(n_modes) for n in moved}
    group_list = []
    if moved and any(m.family in ("TE", "TM") for m in ms):
        high = _derivatives(ms, section, moved, p)
        low = _derivatives(ms, section, moved, p - 1, {f: h["groups"] for f, h in high.items()})
        for fam, fam_high in high.items():
            members, groups = fam_high["members"], fam_high["groups"]
            kc = fam_high["kc"]
            for g in groups:
                present = [i for i in g if i in members]
                if not present:
                    continue
                if len(g) > 1:
                    group_list.append(tuple(members[i] for i in present))
                for n in moved:
                    mu_h, assign = fam_high["d"][n][tuple(g)]
                    mu_l = np.sort(low[fam]["d"][n][tuple(g)][0]) if fam in low and tuple(g) in low[fam]["d"][n] else None
                    diff = (np.max(np.abs(np.sort(mu_h) - mu_l)) if mu_l is not None and len(mu_l) == len(mu_h)
                            else np.inf)
                    floor = fam_high["floor"][n][tuple(g)]
                    for i in present:
                        k = members[i]
                        dl = mu_h[assign[i]]
                        dfc[n][k] = scale * dl / (2 * kc[i])
                        err[n][k] = max(SAFETY * scale * max(diff, floor) / (2 * kc[i]),
                                        CUTOFF_FLOOR * ms[k].fc_error / (abs(values[n]) or section.size))
    params = {n: values[n] for n in names}
    method = {}
    # the fill's material, when asked for (only=): fc = c0 kc / (2 pi sqrt(eps_r mu_r)) with kc
    # fixed by the shape, so d fc / d eps_r = -fc / (2 eps_r) exactly (mu_r alike); the error is
    # the cutoff's own, fc_error / (2 eps_r)
    fcs, fc_errs = np.array([m.fc for m in ms]), np.array([m.fc_error for m in ms])
    for n, value in (("eps_r", float(ms.eps_r)), ("mu_r", float(ms.mu_r))):
        if wanted is not None and n in wanted:
            dfc[n], err[n] = -fcs / (2 * value), fc_errs / (2 * value)
            params[n] = value
            method[n] = "exact: fc ~ 1 / sqrt(eps_r mu_r) in a homogeneously filled guide"
    return Sensitivity(dfc=dfc, dfc_error=err, modes=ms, labels=tuple(m.label for m in ms),
                       fc=fcs, fc_error=fc_errs, parameters=params, skipped=skipped,
                       groups=tuple(group_list), n_dofs=int(ms.n_dofs), order=p, method=method)


def _name(shape):
    return getattr(shape, "__name__", repr(shape))


def _check_inputs(shape, parameters):
    """(all keyword values with defaults filled in, names of the real-number ones) or FemodesError."""
    if not callable(shape):
        raise FemodesError(f"shape must be a shape function such as femodes.double_ridge, got {shape!r}")
    if not isinstance(parameters, dict):
        raise FemodesError(f"parameters must be a dict of {_name(shape)}'s keyword arguments (SI), "
                           f"got {type(parameters).__name__}")
    try:
        sig = inspect.signature(shape)
    except (TypeError, ValueError):
        raise FemodesError(f"cannot read the parameters of {_name(shape)}: give a shape function") from None
    known = [k for k, v in sig.parameters.items() if v.kind in (v.POSITIONAL_OR_KEYWORD, v.KEYWORD_ONLY)]
    unknown = [k for k in parameters if k not in known]
    if unknown:
        raise FemodesError(f"{_name(shape)} has no parameter {', '.join(repr(k) for k in unknown)}; "
                           f"its parameters are {', '.join(known)}")
    missing = [k for k in known if k not in parameters and sig.parameters[k].default is inspect.Parameter.empty]
    if missing:
        raise FemodesError(f"{_name(shape)} needs {', '.join(repr(k) for k in missing)} (SI units) in parameters")
    values = {k: parameters[k] if k in parameters else sig.parameters[k].default for k in known}
    names = []
    for k, v in values.items():
        if isinstance(v, bool):
            continue
        if isinstance(v, numbers.Real):
            if not math.isfinite(float(v)):
                raise FemodesError(f"parameter {k!r} of {_name(shape)} must be a finite number (SI), got {v!r}")
            names.append(k)
            values[k] = float(v) if k not in DISCRETE_PARAMETERS else v
        elif k in parameters and not isinstance(v, (tuple, list, np.ndarray)):
            raise FemodesError(f"parameter {k!r} of {_name(shape)} must be a number in SI units (metres, radians), "
                               f"got {v!r}")
    return values, names


def _derivatives(ms, section, moved, q, given=None):
    """Per family: the eigenpairs at element order ``q`` on the nominal mesh and, for each moved
    parameter and each same-family degenerate group (tuple of positions in the family's list),
    (branch derivatives of lambda, member position -> branch index), with a round-off floor.
    ``given``: family -> groups to use (those of order p, for the order p - 1 estimate)."""
    skm = ms.mesh.to_skfem(order=max(2, q))
    disc = discretise(skm, q)
    basis = disc.basis
    geo = basis.with_element(skm.elem())  # V lives in the space of the mesh's geometry
    if type(geo.elem) is type(basis.elem):
        Kg = disc.K
        bnd = disc.boundary
    else:
        from skfem import asm
        from skfem.models.poisson import laplace

        Kg = asm(laplace, geo).tocsr()
        bnd = np.unique(geo.get_dofs().flatten())
    pts = geo.doflocs[:, bnd]
    where, pos, dist = _locate_on_outline(section, pts)
    if np.max(dist) > 1e-6 * section.size:
        raise RuntimeError(f"boundary nodes off the outline by {np.max(dist):.3g} m")
    interior = np.setdiff1d(np.arange(geo.N), bnd)
    lu = splu(restrict(Kg, interior).tocsc())
    K_ib = Kg[interior][:, bnd]
    fields = {}
    for n, (plus, minus, step) in moved.items():
        Vb = _boundary_velocity(where, pos, plus, minus, step)
        V = np.zeros((2, geo.N))
        V[:, bnd] = Vb
        for c in range(2):
            V[c, interior] = lu.solve(-(K_ib @ Vb[c]))
        fx, fy = geo.interpolate(V[0]), geo.interpolate(V[1])
        DV = np.array([[fx.grad[0], fx.grad[1]], [fy.grad[0], fy.grad[1]]])  # DV[i, j] = dV_i / dx_j
        fields[n] = (DV, float(np.max(np.linalg.norm(Vb, axis=0))))

    dx = basis.dx
    area = section.area
    shifts = {"TM": 0.9 * math.pi * _J01 ** 2 / area, "TE": -0.1 * math.pi * _J01 ** 2 / area}
    walls = None
    if section.magnetic:  # TM Dirichlet on the electric walls only, TE on the magnetic ones
        walls = _cut_dofs(disc, (), section.size, magnetic_lines(section))
        shifts["TM"] = shifts["TE"]  # no Faber-Krahn bound with Neumann parts
    out = {}
    for fam in ("TE", "TM"):
        nominal = [m for m in ms if m.family == fam]
        if not nominal:
            continue
        count = len(nominal) + 4
        with single_thread():
            if walls is not None:
                fixed = walls["wall"] if fam == "TM" else walls["magnetic"]
                idx = np.setdiff1d(np.arange(disc.n_dofs), fixed)
                lam, Y, _ = lowest_eigenpairs(restrict(disc.K, idx), restrict(disc.M, idx), count, shifts[fam])
                X = np.zeros((disc.n_dofs, Y.shape[1]))
                X[idx] = Y
            elif fam == "TM":
                idx = disc.interior()
                lam, Y, _ = lowest_eigenpairs(restrict(disc.K, idx), restrict(disc.M, idx), count, shifts[fam])
                X = np.zeros((disc.n_dofs, Y.shape[1]))
                X[idx] = Y
            else:
                lam, X, _ = lowest_eigenpairs(disc.K, disc.M, count + 1, shifts[fam])
                drop = int(np.argmin(np.abs(lam)))
                lam, X = np.delete(lam, drop), np.delete(X, drop, axis=1)
        # member positions: the nominal modes of this family are its lowest, in order
        members = {m.ordinal - 1: m.index for m in nominal}
        lam_err = [2 * m.kc * m.kc_error for m in nominal]
        lam_err += [lam_err[-1] / nominal[-1].kc ** 2 * lam[i] for i in range(len(nominal), len(lam))]
        groups = [] if given is None else [list(g) for g in given[fam]]
        for i in range(len(lam) if given is None else 0):
            if groups and abs(lam[i] - lam[groups[-1][-1]]) <= 2 * (lam_err[i] + lam_err[groups[-1][-1]]) + 1e-10 * lam[i]:
                groups[-1].append(i)
            else:
                groups.append([i])
        if given is None and groups[-1][-1] == len(lam) - 1 and not any(i in members for i in groups[-1]):
            groups.pop()  # the last group may be cut by the count: none of the wanted is in it
        used = sorted({i for g in groups for i in g})
        u = np.array([np.asarray(basis.interpolate(X[:, i])) for i in used])            # (k, ne, nq)
        gu = np.array([basis.interpolate(X[:, i]).grad for i in used])                 # (k, 2, ne, nq)
        col = {i: j for j, i in enumerate(used)}
        d = {n: {} for n in moved}
        floor = {n: {} for n in moved}
        for n, (DV, vmax) in fields.items():
            div = DV[0, 0] + DV[1, 1]
            sym = DV + DV.transpose(1, 0, 2, 3)
            for g in groups:
                cols = [col[i] for i in g]
                G, U = gu[cols], u[cols]
                lam_g = float(np.mean(lam[g]))
                S = (np.einsum("ikeq,jkeq,eq->ij", G, G, div * dx)
                     - np.einsum("ikeq,kleq,jleq,eq->ij", G, sym, G, dx)
                     - lam_g * np.einsum("ieq,jeq,eq->ij", U, U, div * dx))
                S = 0.5 * (S + S.T)
                mu, W = np.linalg.eigh(S)
                assign = _assign_branches(g, W, X, disc, ms, members, q == ms.order)
                d[n][tuple(g)] = (mu, assign)
                # round-off: the geometric central difference and the assembly
                floor[n][tuple(g)] = 1e-9 * lam_g * vmax / section.size + 2 * disc.n_dofs * 2.2e-16 * lam_g
        out[fam] = dict(members=members, groups=groups, d=d, floor=floor,
                        kc=np.sqrt(np.maximum(lam, 0.0)))
    return out


def _assign_branches(g, W, X, disc, ms, members, same_space):
    """Group position -> branch index: each present member gets the branch whose eigenvector
    overlaps its own (symmetry-adapted) field most; positions beyond the wanted keep the rest."""
    if len(g) == 1:
        return {g[0]: 0}
    present = [i for i in g if i in members]
    free = list(range(len(g)))
    out = {}
    if same_space and present:
        Y = X[:, g] @ W                                   # branch eigenvectors in the dof space
        MY = disc.M @ Y
        over = np.array([np.abs(ms[members[i]].potential.coeffs @ MY) for i in present])  # (members, branches)
        for _ in present:
            r, c = np.unravel_index(np.argmax(np.where(np.isin(np.arange(len(g)), free)[None, :] &
                                                       np.array([i not in out for i in present])[:, None], over, -1.0)),
                                    over.shape)
            out[present[r]] = int(c)
            free.remove(int(c))
    for i in g:
        if i not in out:
            out[i] = free.pop(0)
    return out
