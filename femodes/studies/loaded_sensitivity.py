"""Sensitivities of the cutoffs of a dielectric-loaded guide (a shape with material regions):
d fc / d (a region's eps_r or mu_r, the fill's, or a shape parameter).

Materials: first-order perturbation (no re-solve).  At cutoff (beta = 0) the full-vector
problem splits in two (:meth:`femodes.solvers.vector.VectorProblem.cutoffs`):

    TE-type (E_t only, with H_z):  curl_t ((1 / mu_r) curl_t E_t) = k0^2 eps_r E_t
    TM-type (E_z only):           -div_t ((1 / mu_r) grad_t E_z)  = k0^2 eps_r E_z

with E = 0 tangential on the wall.  In both k0^2 is the Rayleigh quotient W_m / W_e of
W_m = int (1 / mu_r) |curl_t E_t|^2 dA (|grad_t E_z|^2 for TM-type) and W_e = int eps_r |E|^2 dA,
stationary at the mode's field.  Changing eps_r of a region R by d eps changes W_e by
d eps int_R |E|^2 dA = d eps W_e,R / eps_R and, to first order, not the field (stationarity), so

    d (k0^2) / d eps_R = - k0^2 s_e,R / eps_R,     d (k0^2) / d mu_R = - k0^2 s_m,R / mu_R,

s_e,R = W_e,R / W_e the share of the electric energy (at cutoff) in R, s_m,R = W_m,R / W_m the
magnetic one (W_m,R = int_R (1 / mu_r) |curl E|^2: d (1 / mu) = - d mu / mu^2).  As fc = c0 k0
/ (2 pi):

    d fc / d eps_R = - fc s_e,R / (2 eps_R),       d fc / d mu_R = - fc s_m,R / (2 mu_R)

(a homogeneous fill: s = 1 and d fc / d eps = - fc / (2 eps), as fc ~ 1 / sqrt(eps mu)
requires).  Computed with the discrete fields on the final mesh of the nominal solve, this is
exactly the derivative of the discrete eigenvalue (Hellmann-Feynman for S x = k0^2 T x, T linear
in the per-triangle eps_r); its error is the discretisation error of the energy shares.  Error
estimate: the same derivative with elements one order lower on the same mesh, the difference
times SAFETY, plus the part the cutoff's own error carries (|d fc / d p| fc_error / fc).

Shape parameters: the shape derivative of the discrete eigenvalue on the final mesh of the
nominal solve, no re-solve.  The mesh nodes move with a velocity field V: wall nodes by their
parametric position on their segment of the outline rebuilt at p +- delta, material interfaces
held where the regions are placed (V = 0 there; a node where an interface meets a moving wall
slides along the interface), or, for a region given as a function of the shape's parameters,
moved as its outline moves (rebuilt at p +- delta, each interface node by its parametric
position on the region's outline: :func:`femodes.studies.velocity.region_motion`; a region edge
on a wall that moves with it, a slab on the floor that follows the height, is no kink), the rest
by harmonic extension with wall and interface nodes fixed
(:func:`femodes.studies.velocity.loaded_velocity`).  Then, for each cutoff eigenpair
S x = k0^2 T x of the TE-type (Nedelec) or TM-type (Lagrange) pencil,

    d (k0^2) = x^T (S' - k0^2 T') x / x^T T x,      d fc = c0 d (k0^2) / (4 pi k0),

S', T' the derivatives of the assembled matrices under the node motion, in closed form
(:mod:`femodes.solvers.vector.shape`: the forms pulled back to the moving triangles, the
covariant Nedelec functions moving with the covariant Piola map; checked against a central
difference of the assembly).  Only V . n on the wall changes the exact
derivative; the rest of V changes the discrete one by no more than the discretisation error.
Degenerate groups: the branch derivatives (eigenvalues of the form on the group), each member
given the branch overlapping its field most.  Error: the same derivative at order p - 1 on the
same mesh (the same V), the difference times SAFETY, plus CUTOFF_FLOOR fc_error / |p| (the
cutoff's own error moves with the geometry), as for homogeneous guides
(:mod:`femodes.studies.sensitivity`).

Where the derivative has a kink (a region whose own edge lies on a wall that moves with the
parameter: the slab-loaded guide's height with the slab on the floor; an interface along a
moving wall) and where the parameter changes the outline's pieces, the central differences of
whole solves are kept: the guide is rebuilt at p +- h and p +- h / 2 (h = FD_STEP |p|; a region
given as a placed Section stays where it is, one given as a function of the shape's parameters
is rebuilt with them), each solved to the nominal accuracy; D(h) and D(h / 2)
are the two central differences; |D(h) - D(h / 2)| is three times the truncation error of
D(h / 2) on a smooth fc(p), and (e(p + h / 2) + e(p - h / 2)) / h is what the solves' own
error bars e can do to the difference; then the Richardson value (4 D(h / 2) - D(h)) / 3 is
reported (the h^2 term removed), with the error |D(h) - D(h / 2)| + (4 n(h / 2) + n(h)) / 3, n
the solves' part above.  At a kink the one-sided slopes differ by about the same amount at h
and h / 2 instead of by half as much; there D(h / 2), the mean of the two sides, is reported
with their whole difference added to the error, and ``method`` names the modes.  Modes are
matched across the solves by field type (TE / TM at cutoff) and nearest cutoff.  ``method``
says which a parameter got (and why the differences).
"""

from __future__ import annotations

import inspect
import math

import numpy as np

from femodes.api import _check_count, _loaded_modes
from femodes.constants import C0
from femodes.errors import FemodesError, material_number
from femodes.geometry.mesh import triangle_regions
from femodes.geometry.section import Section
from femodes.solvers.loaded import solve_loaded
from femodes.solvers.vector import VectorProblem
from femodes.solvers.vector.shape import cutoff_shape_derivatives
from femodes.studies.velocity import _same_pieces, loaded_velocity, region_motion

__all__ = ["loaded_sensitivities", "FD_STEP", "PERTURBATION", "DIFFERENCE", "SHAPE_DERIVATIVE"]

#: relative step h of the shape parameters' central differences (the second one is h / 2)
FD_STEP = 0.02
#: reported error of a material derivative = SAFETY x |order p - order p - 1| + the cutoff's part
SAFETY = 3.0
#: shape derivative: reported error = SAFETY x |order p - order p - 1| + CUTOFF_FLOOR x fc_error / |p|
CUTOFF_FLOOR = 2.0
#: relative step of the geometric central difference that gives the wall velocity
GEOMETRY_STEP = 1e-6
SHAPE_DERIVATIVE = ("shape derivative on the nominal mesh (regions fixed, wall nodes moved, harmonic extension; "
                    "order p - 1 for the error)")
SHAPE_DERIVATIVE_MOVING = ("shape derivative on the nominal mesh (interfaces moved with their regions, wall nodes "
                           "moved, harmonic extension; order p - 1 for the error)")
PERTURBATION = "first-order perturbation (energy share in the region, order p - 1 for the error)"
DIFFERENCE = "central difference of whole solves (steps h and h/2, h = {:.3g}; error from both and the solves' error bars)"


def _build(shape, values, regions):
    """The section of ``shape(**values)`` with ``regions`` (dicts name, shape, eps_r, mu_r,
    tan_delta) put in: a region's ``shape`` is a placed Section, or a callable of the shape's
    keyword arguments returning one (:func:`region_shape`), so that it moves with them."""
    section = shape(**values)
    for r in regions:
        section = section.with_material(region_shape(r, shape, values), eps_r=r["eps_r"], mu_r=r["mu_r"],
                                        tan_delta=r["tan_delta"], name=r["name"])
    return section


class RegionCallError(FemodesError):
    """A region's shape function that cannot be called with the guide's parameters or returns no
    Section: a mistake in the input (reported at once), not a geometry a point may refuse."""


def region_shape(region, shape, values):
    """The placed Section of ``region`` at the guide's parameters ``values`` (SI): its ``shape``
    itself, or ``shape(**arguments)`` when it is callable, with the guide shape's keyword
    arguments (``values`` over the shape function's defaults; only those the callable takes
    unless it takes ``**kwargs``)."""
    got = region["shape"]
    if not callable(got):
        return got
    try:
        params = inspect.signature(shape).parameters.values()
        full = {p.name: p.default for p in params if p.default is not inspect.Parameter.empty
                and p.kind in (p.POSITIONAL_OR_KEYWORD, p.KEYWORD_ONLY)}
    except (TypeError, ValueError):
        full = {}
    full.update(values)
    try:
        takes = inspect.signature(got).parameters.values()
        if not any(p.kind == p.VAR_KEYWORD for p in takes):
            names = {p.name for p in takes if p.kind in (p.POSITIONAL_OR_KEYWORD, p.KEYWORD_ONLY)}
            full = {k: v for k, v in full.items() if k in names}
    except (TypeError, ValueError):
        pass
    try:
        out = got(**full)
    except TypeError as exc:
        raise RegionCallError(f"the shape function of region {region['name']!r} refused the guide's parameters "
                              f"({', '.join(sorted(full))}): {exc}; give it keyword arguments named like the guide "
                              "shape's (or **kwargs)") from None
    if not isinstance(out, Section):
        raise RegionCallError(f"the shape function of region {region['name']!r} must return a placed Section (e.g. "
                           f"femodes.rectangle(width, 0.3 * height).translated(0, y)), got {type(out).__name__}")
    return out


def _shares(problem, cut, region_index, n_regions):
    """(electric, magnetic) energy shares of each region 0..n_regions (0 the fill) of a cutoff field."""
    if cut.field == "TE":
        basis = problem.basis_t
        f = basis.interpolate(cut.coeffs)
        e, m = np.sum(f.value ** 2, axis=0), f.curl ** 2
    else:
        basis = problem.basis_z
        f = basis.interpolate(cut.coeffs)
        e, m = f.value ** 2, np.sum(f.grad ** 2, axis=0)
    we = problem.eps_r * np.sum(e * basis.dx, axis=1)
    wm = np.sum(m * basis.dx, axis=1) / problem.mu_r
    se = np.array([we[region_index == r].sum() for r in range(n_regions + 1)]) / we.sum()
    sm = np.array([wm[region_index == r].sum() for r in range(n_regions + 1)]) / wm.sum()
    return se, sm


def _nearest(cuts, fc, field):
    """Index of the cutoff among ``cuts`` (objects with .frequency and .field) of the same field
    type nearest to ``fc``, or None."""
    same = [i for i, c in enumerate(cuts) if c.field == field]
    return min(same, key=lambda i: abs(cuts[i].frequency - fc)) if same else None


def _final_cutoffs(problem, nominal):
    """(cutoffs of order p, the order p - 1 problem on the same mesh, its cutoffs)."""
    count = len(nominal) + 2
    high = problem.cutoffs(modes=count)
    lower = VectorProblem(problem.mesh, problem.eps_r, problem.mu_r, order=problem.order - 1)
    return high, lower, lower.cutoffs(modes=count + 2)


def _material_derivatives(section, problem, nominal, materials, high, lower, low):
    """{name: (dfc array, error array)} of the material parameters, from the energy shares at
    order p and p - 1 on the final mesh."""
    n_reg = len(section.materials)
    index = triangle_regions(section, problem.mesh.p, problem.mesh.t[:3])
    n = len(nominal)
    out = {name: (np.zeros(n), np.zeros(n)) for name in materials}
    for k, m in enumerate(nominal):
        i, j = _nearest(high, m.fc, m.field), _nearest(low, m.fc, m.field)
        if i is None or j is None:
            raise RuntimeError(f"mode {m.label} not found again on the final mesh")
        sh, sl = _shares(problem, high[i], index, n_reg), _shares(lower, low[j], index, n_reg)
        for name, (kind, reg, value) in materials.items():
            col = 0 if kind == "eps_r" else 1
            d_high = -m.fc * sh[col][reg] / (2 * value)
            d_low = -low[j].frequency * sl[col][reg] / (2 * value)
            out[name][0][k] = d_high
            out[name][1][k] = SAFETY * abs(d_high - d_low) + abs(d_high) * m.fc_error / m.fc
    return out


def _by_rank(nominal, cuts):
    """Index into ``cuts`` of each nominal mode: the same rank among the cutoffs of its field
    type (degenerate members stay apart), or the nearest where the rank's cutoff is not close."""
    out, seen = [], {}
    for m in nominal:
        r = seen[m.field] = seen.get(m.field, -1) + 1
        same = [i for i, c in enumerate(cuts) if c.field == m.field]
        i = same[r] if r < len(same) else None
        if i is None or abs(cuts[i].frequency - m.fc) > 10 * m.fc_error + 1e-9 * m.fc:
            i = _nearest(cuts, m.fc, m.field)
        out.append(i)
    return out


def _groups(cuts, wanted, rel):
    """Degenerate groups (lists of indices into ``cuts``, one field type, cutoffs within the
    error bars ``rel`` relative) that hold a wanted index."""
    groups = []
    for field in ("TE", "TM"):
        for i in (i for i, c in enumerate(cuts) if c.field == field):
            if groups and cuts[groups[-1][-1]].field == field and \
                    cuts[i].k0 - cuts[groups[-1][-1]].k0 <= (4 * rel + 1e-10) * cuts[i].k0:
                groups[-1].append(i)
            else:
                groups.append([i])
    return [g for g in groups if any(i in wanted for i in g)]


def _window(cuts, group, high):
    """The cutoffs (indices into ``cuts``, same field type) nearest to the group of ``high``."""
    field = high[group[0]].field
    same = [i for i, c in enumerate(cuts) if c.field == field]
    s = len(group)
    if len(same) < s:
        return None
    starts = range(len(same) - s + 1)
    cost = [sum(abs(cuts[same[a + k]].k0 - high[group[k]].k0) for k in range(s)) for a in starts]
    a = int(np.argmin(cost))
    return same[a:a + s]


def _shape_derivatives(problem, lower, high, low, nominal, velocities, values):
    """{name: (dfc, error)} of the shape parameters with a velocity field (module docstring)."""
    n = len(nominal)
    idx = _by_rank(nominal, high)
    if any(i is None for i in idx):
        raise RuntimeError("a nominal cutoff was not found again on the final mesh")
    rel = max(m.fc_error / m.fc for m in nominal)
    groups = _groups(high, set(idx), rel)
    lgroups = [_window(low, g, high) for g in groups]
    scale = C0 / (2 * math.pi)
    out = {}
    for name, V in velocities.items():
        d, e = np.full(n, np.nan), np.full(n, np.inf)
        rh = cutoff_shape_derivatives(problem, high, groups, V)
        have = [k for k, lg in enumerate(lgroups) if lg is not None]
        rl = dict(zip(have, cutoff_shape_derivatives(lower, low, [lgroups[k] for k in have], V)))
        for k, g in enumerate(groups):
            mu_h, branch = rh[k]
            d_h = np.sort(scale * mu_h / (2 * np.mean([high[i].k0 for i in g])))
            if k in rl:
                d_l = np.sort(scale * rl[k][0] / (2 * np.mean([low[j].k0 for j in lgroups[k]])))
                diff = float(np.max(np.abs(d_h - d_l)))
            else:
                diff = math.inf
            for pos, i in enumerate(g):
                for m_idx in (j for j, hi in enumerate(idx) if hi == i):
                    m = nominal[m_idx]
                    d[m_idx] = scale * mu_h[branch[pos]] / (2 * high[i].k0)
                    e[m_idx] = SAFETY * diff + CUTOFF_FLOOR * m.fc_error / abs(values[name])
        out[name] = (d, e)
    return out


def _raw_cutoffs(section, n, accuracy, opts):
    """[(fc, fc_error, field)] of the ``n`` lowest cutoffs of a loaded section (no labels)."""
    sol = solve_loaded(section, n, None, opts.get("eps_r", 1.0), opts.get("mu_r", 1.0), accuracy,
                       order=opts.get("order"))
    out = []
    for i in sol.keep:
        c = sol.objects[i]
        out.append(_Cut(c.frequency, c.frequency * float(sol.errors[i]) / (2 * float(sol.values[i])), c.field))
    return out


class _Cut:
    __slots__ = ("frequency", "error", "field")

    def __init__(self, frequency, error, field):
        self.frequency, self.error, self.field = float(frequency), float(error), field


def _difference(shape, values, name, regions, nominal, section, accuracy, options):
    """(d, error, modes at a kink, h) of one shape parameter by central differences of whole
    solves (module docstring), or why it has none."""
    v = values[name]
    n = len(nominal)
    h = FD_STEP * max(abs(v), 1e-3 * section.size)
    try:
        built = {s: _build(shape, {**values, name: v + s}, regions) for s in (h, -h, h / 2, -h / 2)}
    except RegionCallError:
        raise
    except FemodesError as exc:
        return f"the guide is not valid within +-{h:.3g} of {name} = {v!r}: {exc}"
    got = {s: _raw_cutoffs(sec, n + 2, accuracy, options) for s, sec in built.items()}
    d = np.full(n, np.nan)
    e = np.full(n, np.inf)
    kinks = []
    for k, m in enumerate(nominal):
        at = {}
        for s, cuts in got.items():
            j = _nearest(cuts, m.fc, m.field)
            at[s] = cuts[j] if j is not None else None
        if any(c is None for c in at.values()):
            continue
        f0, e0 = m.fc, m.fc_error
        d1 = (at[h].frequency - at[-h].frequency) / (2 * h)
        d2 = (at[h / 2].frequency - at[-h / 2].frequency) / h
        n1 = (at[h].error + at[-h].error) / (2 * h)
        n2 = (at[h / 2].error + at[-h / 2].error) / h
        # one-sided slopes: their difference falls like h on a smooth fc(p), not at a kink
        a1 = (at[h].frequency - 2 * f0 + at[-h].frequency) / h
        a2 = (at[h / 2].frequency - 2 * f0 + at[-h / 2].frequency) / (h / 2)
        na2 = (at[h / 2].error + 2 * e0 + at[-h / 2].error) / (h / 2)
        if abs(a2) > 0.75 * abs(a1) and abs(a2) > 2 * na2:
            kinks.append(m.label)
            d[k] = d2
            e[k] = abs(d1 - d2) + n2 + na2 + abs(a2)
        else:
            d[k] = (4 * d2 - d1) / 3  # Richardson: the h^2 term of the central difference removed
            e[k] = abs(d1 - d2) + 4 * n2 / 3 + n1 / 3
    return d, e, kinks, h


def _region_motion(shape, values, regions, name, step, section):
    """(velocity, why) of the interfaces when parameter ``name`` moves by +- step / 2: the regions
    given as functions rebuilt at both sides (:func:`femodes.studies.velocity.region_motion`);
    fixed regions stay."""
    moving = [r for r in regions if callable(r.get("shape"))]
    v = values[name]
    try:
        sides = [[region_shape(r, shape, {**values, name: v + s}) for r in moving] for s in (0.0, step, -step)]
    except FemodesError:
        return None, "a region is not valid on both sides"
    return region_motion(*sides, 2 * step, section.size)


def loaded_sensitivities(shape, values, names, regions, modes, accuracy, options, discrete=(), only=None,
                         interface_velocity=None, differences=False):
    """The parts of a :class:`femodes.studies.Sensitivity` of ``shape(**values)`` with
    ``regions``: dict(dfc, dfc_error, modes, labels, fc, fc_error, parameters, skipped, method,
    n_dofs, order).  ``names``: the shape's numeric parameters; ``options``: eps_r, mu_r, order of
    the solve (the fill's eps_r, mu_r); ``accuracy`` that of every solve; ``only`` a set of the
    parameter names to differentiate (None: all).  ``interface_velocity``: parameter name ->
    a function of points (2, n) giving the velocity (2, n) of the interface nodes there (regions
    that move with that parameter; default: the regions stay, V = 0 on every interface).
    ``differences``: True takes central differences of whole solves for every shape parameter
    (the path kept for kinks; for comparisons)."""
    if "family" in options:
        raise FemodesError("family= does not apply to a guide with regions: its modes are hybrid (leave family out)")
    unknown = sorted(set(options) - {"eps_r", "mu_r", "order"})
    if unknown:
        raise FemodesError(f"unknown option(s) {', '.join(unknown)} for a loaded guide's sensitivity; give eps_r, mu_r, "
                           "order")
    try:
        section = _build(shape, values, regions)
    except RegionCallError:
        raise
    except FemodesError as exc:
        raise FemodesError(f"the guide with its regions is not valid at the nominal parameters: {exc}") from None
    eps_r, mu_r = material_number("eps_r", options.get("eps_r", 1.0)), material_number("mu_r", options.get("mu_r", 1.0))
    modes = _check_count(modes)
    order = options.get("order")
    if order is not None and order not in (2, 3):
        raise FemodesError(f"order of a loaded guide's sensitivity must be 2 or 3 (its error compares order p with "
                           f"p - 1), got {order!r}")
    nominal, problem = _loaded_modes(section, modes, None, eps_r, mu_r, accuracy, order=order)
    nominal = list(nominal)
    if not nominal:
        raise FemodesError("no cutoff found: raise modes=")
    # material parameters: the fill (region 0) and each region
    materials = {"eps_r": ("eps_r", 0, eps_r), "mu_r": ("mu_r", 0, mu_r)}
    for i, r in enumerate(regions, start=1):
        materials[f"region.{r['name']}.eps_r"] = ("eps_r", i, r["eps_r"])
        materials[f"region.{r['name']}.mu_r"] = ("mu_r", i, r["mu_r"])
    skipped = {f"region.{r['name']}.tan_delta": "a loss tangent does not move a cutoff" for r in regions}
    params = dict(values)
    params.update({k: spec[2] for k, spec in materials.items()})
    if only is not None:
        materials = {k: v for k, v in materials.items() if k in only}
        skipped = {k: v for k, v in skipped.items() if k in only}
        names = [k for k in names if k in only]
    wanted = [k for k in names if k not in discrete]
    finals = _final_cutoffs(problem, nominal) if (materials or wanted) else None
    derivs = _material_derivatives(section, problem, nominal, materials, *finals) if materials else {}
    method = {name: PERTURBATION for name in materials}

    skipped.update({k: "an offset or other pair: not differentiated" for k, v in values.items()
                    if isinstance(v, (tuple, list, np.ndarray)) and (only is None or k in only)})
    # shape parameters: the shape derivative where the regions do not meet a moving wall
    region = triangle_regions(section, problem.mesh.p, problem.mesh.t[:3]) if wanted else None
    velocities, why_not = {}, {}
    moving = any(callable(r.get("shape")) for r in regions)
    for name in names:
        if name in discrete:
            skipped[name] = "a count, not a dimension"
            continue
        v = values[name]
        step = GEOMETRY_STEP * max(abs(v), 1e-3 * section.size)
        try:
            plus, minus = shape(**{**values, name: v + step}), shape(**{**values, name: v - step})
        except FemodesError:
            why_not[name] = "the shape is not valid on both sides"
            continue
        why = _same_pieces(section, plus) or _same_pieces(section, minus)
        V = None
        if differences:
            why = "asked for"
        elif not why:
            follow = (interface_velocity or {}).get(name)
            if follow is None and moving:
                follow, why = _region_motion(shape, values, regions, name, step, section)
            if not why:
                V, why = loaded_velocity(section, problem.mesh, region, plus, minus, 2 * step, follow)
        if V is None:
            why_not[name] = why
        else:
            velocities[name] = V
    if velocities:
        derivs.update(_shape_derivatives(problem, finals[1], finals[0], finals[2], nominal, velocities, values))
        method.update({name: SHAPE_DERIVATIVE_MOVING if moving else SHAPE_DERIVATIVE for name in velocities})

    # the rest: central differences of whole solves at p +- h and p +- h / 2
    for name, why in why_not.items():
        got = _difference(shape, values, name, regions, nominal, section, accuracy, options)
        if isinstance(got, str):
            skipped[name] = got
            continue
        d, e, kinks, h = got
        derivs[name] = (d, e)
        method[name] = (DIFFERENCE.format(h) + f" ({why})" +
                        (f"; {', '.join(kinks)}: the slopes on the two sides differ (a kink, e.g. a region "
                         "meeting the wall): their mean, with their whole difference in the error" if kinks else ""))
    return dict(dfc={k: v[0] for k, v in derivs.items()}, dfc_error={k: v[1] for k, v in derivs.items()},
                modes=tuple(nominal), labels=tuple(m.label for m in nominal),
                fc=np.array([m.fc for m in nominal]), fc_error=np.array([m.fc_error for m in nominal]),
                parameters=params, skipped=skipped, method=method, n_dofs=int(problem.n_dofs),
                order=int(problem.order))
