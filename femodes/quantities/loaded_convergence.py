"""Error bars on the field-derived quantities of a loaded guide (a Section with material regions)
at the frequency it was solved at: wall loss alpha_c, dielectric loss alpha_d, group velocity,
impedances Z_PV / Z_PI / Z_VI, and the peak |E| per sqrt(W) in the gas (so the breakdown and
rated power) and in every region, by re-solving the guide on a ladder of meshes.

The loaded accuracy loop (:mod:`femodes.solvers.loaded`) chooses its mesh for beta^2 only.  A
quantity of the fields converges differently: the fields themselves (edge elements of order p)
like h^p in the energy norm, so a wall integral, a path integral or a peak no faster than about
h^p, and slower next to a singular corner (a re-entrant wall corner, exponent lambda =
pi / angle, or a corner of a material region, taken like a 270-degree wall corner, lambda = 2/3,
the conservative choice the mesher grades for): then about h^(2 lambda).  The earlier estimate
(order p against p - 1 on the same mesh) was once found 2x below the true error.

:func:`loaded_derived_quantities` meshes the section at element sizes h_k = h0 r^(2-k) (r = 1.5;
h0 the typical element size of the solve it is given: the 90th percentile of its final mesh's
edges; that mesh is the h0 rung itself; a size the mesher turns into a mesh less than 1.3 times
coarser or finer than its neighbour is stretched by 1.3 until it does), solves each at the
frequency with the same elements, follows every mode of the solve onto each mesh (largest overlap of the transverse E sampled at the same points, at least
:data:`MATCH_OVERLAP`; a member of a degenerate group by the nearest beta^2) and evaluates each
quantity there.  The estimate is the homogeneous guides' (:func:`femodes.quantities.convergence`):
Richardson on the last three meshes with the observed rate, never above the cap (p, or
2 lambda of the sharpest singular corner), at least 0.5, the slowest rate when the differences
change sign, the older pair carried to the finest mesh too, times 3; the refinement ratio of a
pair is taken from the unknowns, sqrt(N_fine / N_coarse), not from the nominal sizes (the
mesher rounds).  Where the largest relative error exceeds ``accuracy`` the ladder goes one step
finer, until it is met, ``max_refinements`` steps were taken, or the next mesh would pass
``max_unknowns``; then one warning says what was reached.

The values reported are those of the finest mesh, so the bars bound their own error.  The
modes returned are that mesh's, keeping the labels and parents of the solve; their
``beta_error`` is the solve's bar plus |beta(finest) - beta(solve)| (the solve's bar bounds its
beta, the difference moves it to the finest mesh's).  Guide wavelength and phase velocity
carry beta's relative error; the wave impedance of a TE mode too (omega mu / beta).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import replace

import numpy as np

from femodes.api import Study
from femodes.constants import C0
from femodes.errors import FemodesError, quantity_accuracy_number
from femodes.geometry.mesh import singular_corners
from femodes.geometry.section import Section
from femodes.modes.loaded import LoadedMode
from femodes.quantities.convergence import DEFAULT_QUANTITY_ACCURACY, RATIO, DerivedErrors, _estimate
from femodes.quantities.impedance import loaded_impedances
from femodes.quantities.losses import loaded_conductor_attenuation
from femodes.quantities.power import DRY_AIR_BREAKDOWN, loaded_power_handling
from femodes.solvers.loaded import ORDER, _mesh, _problem

__all__ = ["loaded_derived_quantities", "loaded_rate_cap", "MATCH_OVERLAP"]

#: smallest overlap |<E_t, E_t'>| / (|E_t| |E_t'|) (sampled at the same points) for a mode of
#: another mesh to be taken for the same mode
MATCH_OVERLAP = 0.9
#: the coarsest mesh of the ladder has at least this many triangles (a circle meshed with 8 was
#: far from the asymptotic range: its peak field's bar was 2 % on the next meshes)
MIN_TRIANGLES = 32
#: two modes whose beta^2 differ by less than this times k0^2 eps_max mu_max are taken for a
#: degenerate group: the solver may turn them anyhow, they are followed by beta^2
DEGENERATE = 1e-5


def loaded_rate_cap(section, order):
    """The fastest rate (in h) a field-derived quantity of a loaded guide is allowed: the element
    order p, the rate of the fields in the energy norm, or 2 lambda of the sharpest singular
    corner if lower (re-entrant wall corners: lambda = pi / angle; material corners: taken like
    a 270-degree wall corner, lambda = 2/3, as :func:`femodes.geometry.mesh.singular_corners`
    grades them; Strang & Fix, "An analysis of the finite element method", 1973, ch. 8, from
    memory)."""
    lams = [c.exponent for c in singular_corners(section) if c.exponent < 1]
    cap = float(order)
    if lams:
        cap = min(cap, 2.0 * min(lams))
    return cap


def _typical_edge(mesh):
    """The 90th percentile of the edge lengths of a scikit-fem mesh (m): about the size its mesher
    was asked for away from the corners (graded corners crowd many small edges, which pull the
    median far below it)."""
    f = mesh.facets
    return float(np.percentile(np.hypot(*(mesh.p[:, f[0]] - mesh.p[:, f[1]])), 90))


def _sample_points(section, n=18):
    """About n^2 points of a grid over the section's bounding box, kept where the section is
    (fields are NaN outside a mesh and are ignored there)."""
    pts = np.hstack([l.polyline(64, line_pieces=1) for l in section.loops])
    lo, hi = pts.min(axis=1), pts.max(axis=1)
    pad = 0.02 * (hi - lo)
    xs = np.linspace(lo[0] + pad[0], hi[0] - pad[0], n)
    ys = np.linspace(lo[1] + pad[1], hi[1] - pad[1], n)
    X, Y = np.meshgrid(xs, ys)
    return np.array([X.ravel(), Y.ravel()])


def _et(vm, pts):
    ex, ey = vm.fields(pts)[:2]
    v = np.concatenate([np.asarray(ex), np.asarray(ey)])
    return np.where(np.isfinite(v), v, 0.0)


def _overlap(a, b):
    na, nb = np.linalg.norm(a), np.linalg.norm(b)
    return float(abs(np.vdot(a, b)) / (na * nb)) if na > 0 and nb > 0 else 0.0


def _follow(targets, target_fields, candidates, pts, degenerate):
    """For each target VectorMode (its transverse E at ``pts``: ``target_fields``) the index of the
    same mode among ``candidates`` (VectorModes of another mesh), or -1: the largest transverse-E overlap if at least MATCH_OVERLAP, else for a
    member of a degenerate group (``degenerate[i]``) the nearest beta^2; each candidate once."""
    cand = [c for c in candidates if c.propagating]
    fields = [_et(c, pts) for c in cand]
    out, used = [], set()
    for t, ft, deg in zip(targets, target_fields, degenerate):
        ov = [(-1.0 if j in used else _overlap(ft, fc)) for j, fc in enumerate(fields)]
        j = int(np.argmax(ov)) if ov else -1
        if j >= 0 and ov[j] < MATCH_OVERLAP:
            j = -1
            if deg:
                free = [k for k in range(len(cand)) if k not in used]
                if free:
                    j = min(free, key=lambda k: abs(cand[k].beta2 - t.beta2))
        if j >= 0:
            used.add(j)
            out.append(candidates.index(cand[j]))
        else:
            out.append(-1)
    return out


def _as_mode(vm, like):
    """A LoadedMode of the VectorMode ``vm`` with the name of ``like`` (no lower order: its errors
    come from the ladder)."""
    b = vm.beta
    return LoadedMode(vm.family, like.label, like.frequency, b, like.beta_error, like.index, vm, like.parent,
                      like.parent_share, None)


def _evaluate(mode, f, section, conductivity, roughness, breakdown_field, impedances, lossy):
    """{name: value} of the field-derived quantities of one LoadedMode (SI)."""
    vm = mode.vector
    v = {"conductor": float(loaded_conductor_attenuation(mode, conductivity, roughness)),
         "group_velocity": C0 * float(vm.group_velocity)}
    if lossy:
        v["dielectric"] = float(vm.dielectric_attenuation)
    if impedances:
        try:
            li = loaded_impedances(mode, f, section=section)
        except FemodesError:
            pass
        else:
            for k in ("PV", "PI", "VI"):
                z = float(li.value(k))
                if math.isfinite(z):
                    v["Z_" + k] = z
    try:
        ph = loaded_power_handling(mode, f, breakdown_field, section=section)
    except FemodesError:
        ph = None
    if ph is not None:
        if math.isfinite(ph.peak_field_per_sqrt_watt):
            v["peak"] = float(ph.peak_field_per_sqrt_watt)
        for r in ph.regions:
            v["peak:" + r.name] = float(r.peak_field_per_sqrt_watt)
    return {k: x for k, x in v.items() if math.isfinite(x)}


def loaded_derived_quantities(study, conductivity=5.8e7, roughness=0.0, breakdown_field=DRY_AIR_BREAKDOWN,
                              accuracy=DEFAULT_QUANTITY_ACCURACY, max_refinements=2, max_unknowns=None):
    """Error bars of the wall loss ('conductor'), dielectric loss ('dielectric', when a loss
    tangent was given), group velocity ('group_velocity', m/s), impedances ('Z_PV', 'Z_PI',
    'Z_VI', of the first mode and TEM modes unless a member of a degenerate group), gas peak ('peak') and the peak of every region
    ('peak:<region name>', V/m per sqrt(W)) of the propagating modes of ``study`` (what
    :func:`femodes.study` returned for a Section with material regions, solved at a frequency),
    refined until each meets ``accuracy`` (relative; impedances relative to the mode's largest)
    or ``max_refinements`` finer meshes were solved or the next would pass ``max_unknowns``
    (default 4 times the solve's unknowns, at least 20k, at most 150k).  See the module
    docstring.  Returns a :class:`femodes.quantities.DerivedErrors` whose ``modes`` are the
    finest mesh's LoadedModes (only those followed on every mesh; ``quantities`` keyed by the
    mode's ``index``); a UserWarning names what was left above ``accuracy``."""
    if not isinstance(study, Study) or not study.loaded or not isinstance(study.section, Section):
        raise FemodesError("loaded_derived_quantities() re-meshes the guide: it needs the result of femodes.study() "
                           "on a section with material regions (a mesh file cannot be re-meshed)")
    if study.frequency is None or not study.at_frequency:
        raise FemodesError("loaded_derived_quantities() needs the modes at a frequency: pass frequency= to "
                           "femodes.study()")
    accuracy = quantity_accuracy_number("accuracy", accuracy)
    section, f = study.section, float(study.frequency)
    given = [m for m in study.at_frequency if m.family != "complex" and m.propagating]
    if not given:
        raise FemodesError("no mode propagates at the frequency: nothing to estimate")
    p = int(study.order) if study.order else ORDER
    if max_unknowns is None:
        max_unknowns = min(150_000, max(20_000, 4 * int(study.n_dofs_at_f)))
    eps_max = max([study.eps_r] + [m.eps_r for m in section.materials])
    mu_max = max([study.mu_r] + [m.mu_r for m in section.materials])
    k2max = (2 * math.pi * f / C0) ** 2 * eps_max * mu_max
    lossy = bool(study.tan_delta) or any(m.tan_delta for m in section.materials)
    cap = loaded_rate_cap(section, p)
    pts = _sample_points(section)
    b2 = np.array([m.vector.beta2 for m in given])
    degenerate = [bool(np.sum(np.abs(b2 - x) < DEGENERATE * k2max) > 1) for x in b2]
    deg_of = {g.index: dg for g, dg in zip(given, degenerate)}
    targets = [m.vector for m in given]
    first = study.at_frequency[0]
    count = len(study.at_frequency) + 2

    target_fields = [_et(t, pts) for t in targets]

    def at(mesh):
        if mesh is None:  # the study's own mesh: its modes as they are
            modes = {g.index: _as_mode(g.vector, g) for g in given}
            n = int(given[0].vector.problem.n_dofs)
        else:
            prob = _problem(section, mesh, study.eps_r, study.mu_r, p, study.tan_delta)
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                got = prob.solve(f, modes=count, evanescent=False)
            idx = _follow(targets, target_fields, list(got), pts, degenerate)
            modes = {g.index: _as_mode(got[j], g) for g, j in zip(given, idx) if j >= 0}
            n = int(prob.n_dofs)
        # impedances of the first mode and TEM modes, as the report shows them; not of a member of
        # a degenerate group, whose voltage along a fixed path depends on how the solver turned it
        vals = {i: _evaluate(m, f, section, conductivity, roughness, breakdown_field,
                             (i == first.index or m.family == "TEM") and not deg_of[i], lossy)
                for i, m in modes.items()}
        return modes, vals, n

    def sized(h, n_tri, coarser):
        """(h, mesh) of a mesh at least 1.3 times coarser (finer) than one of ``n_tri`` triangles,
        from the size h, enlarged (reduced) by 1.3 while the mesher gives too near a mesh; None if
        the size is clamped (the mesh stops changing), a coarser mesh would have fewer than
        MIN_TRIANGLES, or six steps do not do it."""
        last = None
        for _ in range(6):
            mesh = _mesh(section, h, p, math.sqrt(k2max))
            t = mesh.n_triangles
            if coarser and t < MIN_TRIANGLES:
                return None  # too few elements to be in the asymptotic range
            if (t * 1.3 <= n_tri) if coarser else (t >= 1.3 * n_tri):
                return h, mesh
            if last is not None and t == last:
                return None
            last = t
            h = h * 1.3 if coarser else h / 1.3
        return None

    study_mesh = given[0].vector.problem.mesh
    h0 = _typical_edge(study_mesh)
    ladder = [(h0, *at(None), study_mesh.t.shape[1])]  # (size, modes, values, unknowns, triangles), coarsest first
    for _ in (1, 2):
        got = sized(ladder[0][0] * RATIO, ladder[0][4], True)
        if got is None:  # clamped by the section's size: the ladder goes finer instead
            break
        h, mesh = got
        ladder.insert(0, (h, *at(mesh), mesh.n_triangles))

    def finer():
        got = sized(ladder[-1][0] / RATIO, ladder[-1][4], False)
        if got is None:
            raise FemodesError("the mesher gives no finer mesh of this section for the quantities' error estimate")
        h, mesh = got
        ladder.append((h, *at(mesh), mesh.n_triangles))

    while len(ladder) < 3:
        finer()
    steps = 0
    while True:
        table, worst = _table(ladder, cap)
        if worst <= accuracy or steps >= max_refinements or ladder[-1][3] * RATIO ** 2 > max_unknowns:
            break
        finer()
        steps += 1
    fine_modes = ladder[-1][1]
    out = []
    for g in given:
        m = fine_modes.get(g.index)
        if m is None or g.index not in table:
            continue
        err = float(g.beta_error) + abs(float(m.beta_value) - float(g.beta_value))
        out.append(LoadedMode(m.family, g.label, g.frequency, m.beta_value, err, g.index, m.vector, g.parent,
                              g.parent_share, None))
    missing = [g.label for g in given if g.index not in table]
    warns = []
    for i, qs in table.items():
        label = next(g.label for g in given if g.index == i)
        for name, q in qs.items():
            if q.relative > accuracy:
                warns.append(f"{name} of {label}: {q.relative:.2g}")
    msgs = []
    if warns:
        msgs.append(f"quantities of the loaded guide above the quantity accuracy asked (quantity_accuracy = {accuracy:g}) after "
                    f"{len(ladder)} meshes (up to {ladder[-1][3]} unknowns): " + "; ".join(warns)
                    + ("; sharp corners (wall or material) limit the convergence to about "
                       f"h^{cap:.2g}: rounding them converges faster" if cap < 2 else ""))
    if missing:
        msgs.append("not followed on every mesh of the error estimate (their quantities keep the estimate of "
                    "order p against p - 1 on one mesh): " + ", ".join(missing))
    for w in msgs:
        warnings.warn("femodes: " + w, UserWarning, stacklevel=2)
    return DerivedErrors(tuple(out), f, accuracy, tuple(r[0] for r in ladder), tuple(r[3] for r in ladder),
                         cap, table, not msgs, tuple(msgs))


def _table(ladder, cap):
    """{mode index: {name: QuantityError}} from the last three meshes, and the worst relative error
    (impedances judged against the mode's largest impedance)."""
    last = ladder[-3:]
    sizes = [1.0 / math.sqrt(r[3]) for r in last]  # effective sizes: refinement ratio from the unknowns
    table, worst = {}, 0.0
    for i, v in last[-1][2].items():
        row = {}
        for name in v:
            seq = [r[2].get(i, {}).get(name) for r in last]
            if any(x is None for x in seq):
                continue
            q = _estimate(seq, sizes, cap)
            if name.startswith("Z_"):
                q = replace(q, scale=max(abs(x) for k, x in v.items() if k.startswith("Z_")))
            row[name] = q
            worst = max(worst, q.relative)
        if row:
            table[i] = row
    return table, worst
