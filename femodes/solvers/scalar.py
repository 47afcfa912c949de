"""solve(): section -> mesh -> discretise -> eigen -> modes, with an error estimate on every cutoff.

Homogeneous fill.  TM modes are the Dirichlet eigenvalues kc^2 of -laplace E_z, TE modes the non-zero
Neumann eigenvalues of -laplace H_z; a section with k inner conductors also has k TEM modes (kc = 0),
from the conductor potentials and their capacitance matrix (:mod:`femodes.solvers.electrostatic`),
which the accuracy loop refines with the cutoffs: its relative error (each entry against
sqrt(C_ii C_jj)) is estimated the same way and held to the same accuracy.

Accuracy control.  Each solve is repeated on two meshes graded the same way, a fine one of size h
and a coarser one; with conforming elements of order p on corner-graded meshes the eigenvalue
error falls like h^(2p), so the difference of the two (Richardson) estimates the fine error:

    err(lam_fine) ~= |lam_coarse - lam_fine| / (s^rate - 1),   s = sqrt(N_fine / N_coarse),

and the reported error on kc is half that relative error times a safety factor of 3 (see
SAFETY).  The
rate is 2p on straight meshes and p + 1 where arcs are meshed with degree-p isoparametric edges.  If any wanted
mode misses the asked accuracy, h is reduced by the observed rate and the fine mesh becomes the
next coarse one.  The estimate is checked against closed forms in the tests.

Corners.  Every wall corner whose exponent pi / angle is not whole and below p (re-entrant ones,
and convex ones of 120, 135, 150 degrees: :meth:`Section.rate_limiting_corners`) is graded toward
and lowers the model's rate as graded (:func:`_rate`).  A third, coarsest mesh is solved first:
each mode's error is also estimated from the older meshes carried to the fine one (two meshes can
agree by chance), with the mode's observed rate where the rate is uncertain (:func:`_merge`).
"""

from __future__ import annotations

import math
import os
import sys
import warnings
from dataclasses import dataclass

import numpy as np
from scipy.spatial import cKDTree

from femodes.errors import FemodesError
from femodes.geometry.checks import check_unknowns, lagrange_unknowns, predicted_unknowns
from femodes.geometry.mesh import mesh_section
from femodes.geometry.mirror import canonical, mirror_planes, reduce, to_frame, unfold_mesh
from femodes.geometry.section import Section
from femodes.geometry.walls import magnetic_lines, on_lines
from femodes.solvers.budget import Progress, available_memory, fitting_unknowns, predicted_memory, predicted_time
from femodes.solvers.discretise import discretise
from femodes.solvers.eigen import lowest_eigenpairs, restrict, single_thread
from femodes.solvers.electrostatic import Electrostatics, conductor_groups, conductor_potentials, gram_error, relative_error
from femodes.solvers.rates import observed_rate

__all__ = ["solve_scalar", "solve_scalar_mesh", "ScalarSolution", "DEFAULT_ORDER", "MAX_DOFS"]

DEFAULT_ORDER = 4
# reported error = SAFETY x Richardson estimate.  Smallest (raw estimate / true error) seen over the
# closed-form cases: about 1.0 on straight meshes; on curved ones the assumed rate p + 1 already
# makes the raw estimate conservative there, but the rate is less certain for other curves
SAFETY = {"straight": 3.0, "curved": 3.0}


def _safety(disc_result):
    return SAFETY["curved" if disc_result["mesh"].is_curved else "straight"]
# relative eigenvalue error ~ C_p (kc h)^(2p) on the graded meshes (fitted on a circle and WR-90)
_ERROR_CONSTANT = {1: 4e-2, 2: 8e-4, 3: 6e-6, 4: 2e-8}
# largest kc h at which the Richardson estimate is trusted (asymptotic range, measured)
_KH_MAX = {1: 0.6, 2: 1.2, 3: 1.8, 4: 2.5}
_MIN_DOF_RATIO = 1.3
GRADING_REACH = 3.0
_J01 = 2.404825557695773
MAX_DOFS = 3_000_000
# a trusted step whose estimate is above this fraction of the best so far is a round-off plateau
_PLATEAU = 0.9
# ... when the estimate is within this factor of the round-off floor (else it is something else)
_NEAR_ROUNDOFF = 1000.0
# unknowns per (area / h^2) of the order-p meshes: measured on WR-90 (p = 4: 21.6, about 1.35 p^2)
_DOFS_PER_CELL = 1.35


@dataclass(frozen=True, eq=False)
class ScalarSolution:
    """What the scalar accuracy loop found, before the modes are named (femodes.modes.labels).

    fine    : the final discrete solve (dict: mesh, disc, n_dofs, h, and per family (lam, X, res))
    merged  : wanted rows (kc^2, error of kc^2, family, column in fine[family], residual), ascending
    tem     : :class:`Electrostatics` of the inner conductors (potentials phi_i, their energy
              products and errors; femodes.solvers.electrostatic), or None without inner conductors
    safety  : the factor the raw Richardson estimates carry (SAFETY)
    mesh_size : the fine element size h (m), None on a fixed mesh
    """

    fine: dict
    merged: list
    tem: Electrostatics | None
    safety: float
    order: int
    mesh_size: float | None

    @property
    def mesh(self):
        return self.fine["mesh"]

    @property
    def n_dofs(self):
        return self.fine["n_dofs"]


def solve_scalar(section, n_modes, accuracy, family, p, mesh_size=None, max_iterations=6, start_size=None,
                 symmetry=False):
    """The accuracy loop of a homogeneously filled Section: TE (Neumann) and TM (Dirichlet)
    eigenvalues kc^2 with Richardson error estimates, and the TEM potentials; see the module
    docstring.  Arguments are checked by the caller (femodes.api.solve).  ``start_size``: an
    element size that met the accuracy on a similar section (a neighbouring sweep point): the loop
    starts from it instead of from the error model, which usually saves the refinement steps; the
    estimate and the stopping rule are the same.

    ``symmetry``: where the section has mirror planes (:func:`femodes.geometry.symmetry.mirror_planes`)
    each symmetry class (family x parity of psi under each mirror) is solved on the half or
    quarter section with its symmetry walls (psi odd: Dirichlet on the cut, even: Neumann), every
    class in the same accuracy loop on the same reduced meshes (a class whose computed modes all
    fall among the wanted ones is asked for more: no class can hide a lower mode), and the
    eigenvectors are unfolded to a mesh of the whole section at the end (:func:`_unfold`)."""
    fams = ("TE", "TM") if family is None else (family,)
    geom, axes = section, ()
    if symmetry:
        axes = mirror_planes(section)
        red = reduce(canonical(section), axes) if axes else None
        if red is None:
            axes = ()
        else:
            geom = red
            fams = _class_keys(fams, axes)
    n_tem = len(section.holes) if family is None else 0
    want = max(0, n_modes - n_tem)
    A = section.area
    lam_max = _weyl_estimate(want, A, section.perimeter, family)
    kc_max = math.sqrt(lam_max)
    if mesh_size is None:
        h = _initial_size(accuracy, p, kc_max, section.size)
    else:
        h = float(mesh_size)
        if not h > 0:
            raise FemodesError(f"mesh_size must be positive (m), got {mesh_size!r}")
    shifts = _initial_shifts(A, section.perimeter)
    if section.magnetic:
        # TM is Neumann on a magnetic wall: no Faber-Krahn bound holds (a quarter of a 2a x 2b
        # guide has TM11 at (pi / 2a)^2 + (pi / 2b)^2, far below pi j01^2 / ab); start below zero
        shifts["TM"] = shifts["TE"]
    # at most half of the lowest modes are TM: the k-th Dirichlet eigenvalue lies above the first
    # k + 1 Neumann ones (Friedlander, Arch. Rational Mech. Anal. 116, 1991)
    counts = {f: (want // 2 + 1 if (f == "TM" and family is None) else want + 1) for f in fams}
    if axes:  # a share of each family's count per class, with a margin (the loop adds if short)
        nc = 2 ** len(axes)
        counts = {f: math.ceil(1.5 * (want // 2 + 1 if (f[:2] == "TM" and family is None) else want + 1) / nc) + 2
                  for f in fams}
    # corner grading reaches out to about 3 / kc: beyond that the smooth part of the field, not the
    # corner singularity, sets the error (kept fixed through the refinement, so Richardson holds)
    radius = min(section.size, GRADING_REACH / kc_max)
    # at loose accuracy a weaker grading pays (fewer elements at the corners); 1 = equidistributing
    grading = 1.0 + 1.5 * min(1.0, max(0.0, (math.log10(accuracy) + 8.0) / 4.0))
    radius = (radius, grading)

    if mesh_size is None:
        _check_budget(section, accuracy, p, h, n_modes, kc_max)
    progress = Progress()

    with single_thread():
        if mesh_size is None and start_size is not None:
            # a neighbour's final size: the pair (1.35 h, h) there, the coarsest mesh below it
            h = min(float(start_size), section.size / 2)
            h_coarse = 1.35 * h
        elif mesh_size is None:
            # a cheap first pair, coarser than the error model asks (the model is pessimistic for
            # many modes); its Richardson estimate then sets the size of the next mesh
            h_coarse = min(3.0 * h, section.size / 2, 1.5 * _KH_MAX[p] / kc_max)
            h = h_coarse / 1.35
        else:
            h_coarse = 1.5 * h
        coarse = _discrete_solve(geom, h_coarse, p, fams, counts, shifts, radius)
        short = _short_families(coarse, want)
        while short:  # rare: a family had all its computed modes among the wanted ones
            counts = {f: c + (max(3, c // 2) if f in short else 0) for f, c in counts.items()}
            coarse = _discrete_solve(geom, h_coarse, p, fams, counts, shifts, radius)
            short = _short_families(coarse, want)
        if family is None and want:
            # ask each family for what the coarse solve found of it among the wanted, plus margin
            seen = _families_of_lowest(coarse, want)
            counts = {f: min(c, seen.get(f, 0) + 2) for f, c in counts.items()}
        history = []  # eigenvalues of the meshes before the coarse one, coarsest first
        if mesh_size is None:
            # a third, coarsest mesh (cheap): the observed rate of every mode, and a guard against
            # the coarse and fine meshes agreeing by chance (see _merge)
            try:
                history.append(_eigenvalues(_discrete_solve(geom, 1.6 * h_coarse, p, fams, counts,
                                                            shifts, radius), section if n_tem else None, axes, p))
            except FemodesError:  # too coarse for the modes asked: two meshes only
                pass
        fine = _discrete_solve(geom, h, p, fams, counts, shifts, radius)
        best = None  # (worst, fine, coarse, merged, tem, h) of the best trusted step so far
        stop = None  # why the loop stopped short of the asked accuracy, for the one warning
        for it in range(max_iterations):
            short = _short_families(fine, want)
            if short:
                counts = {f: c + (3 if f in short else 0) for f, c in counts.items()}
                coarse = _discrete_solve(geom, coarse["h"], p, fams, counts, shifts, radius)
                fine = _discrete_solve(geom, h, p, fams, counts, shifts, radius)
                continue
            merged = _merge(fine, coarse, p, want, history=history)
            worst = max((e / lam for lam, e, *_ in merged), default=0.0) / 2 * _safety(fine)
            tem = _tem_statics(*_wholes(fine, coarse, axes, section, p), p, section,
                               history=history) if n_tem else None
            worst = max(worst, relative_error(tem))
            trusted = (fine["n_dofs"] >= _MIN_DOF_RATIO * coarse["n_dofs"]
                       and math.sqrt(merged[-1][0]) * coarse["h"] <= _KH_MAX[p]) if merged else True
            _debug(f"iteration {it}: h={h:.4g} N={fine['n_dofs']} (coarse {coarse['n_dofs']}) "
                   f"worst estimate {worst:.2e} trusted={trusted}")
            progress.step(it + 1, fine["n_dofs"], worst, accuracy)
            if mesh_size is not None or (worst <= accuracy and trusted) or not (merged or n_tem):
                break
            if trusted and best is not None and worst > _PLATEAU * best[0] \
                    and worst <= _NEAR_ROUNDOFF * _roundoff(fine["n_dofs"], _safety(fine)):
                # round-off plateau: a finer mesh did not lower the estimate (it rose with the
                # floor 2 N eps lam of every eigenvalue): the best step so far is the answer
                stop = "plateau"
                break
            if trusted and (best is None or worst < best[0]):
                best = (worst, fine, coarse, merged, tem, h)
            # plan with the observed rate, but not below half the model's (on coarse meshes the
            # observed rate is partly noise: planning with it alone overshoots by far)
            model = _rate(fine, p)
            rate = min(model, max(fine.get("observed_rate", model), 0.5 * model))
            shrink = min(0.85, max(0.3, (0.3 * accuracy / worst) ** (1.0 / rate)))
            if not trusted:
                shrink = min(shrink, _KH_MAX[p] / (math.sqrt(merged[-1][0]) * h))
                if fine["n_dofs"] < _MIN_DOF_RATIO * coarse["n_dofs"]:
                    # the unknowns hardly grew (graded zones do not follow h_max alone): a
                    # bigger step, or the loop creeps on meshes too alike to compare
                    shrink = min(shrink, 0.7)
            shrink = max(shrink, 0.25)
            n_next = fine["n_dofs"] / shrink ** 2
            if trusted and _roundoff(n_next, _safety(fine)) >= worst:
                # the next mesh's round-off floor alone is above the present estimate: refining
                # cannot help (measured: WR-90, 20 modes at 1e-11 went on to 427k unknowns, the
                # estimate rising from 2.0e-11 at 30k, before this stop)
                stop = "plateau"
                break
            if n_next > MAX_DOFS:
                stop = "size"
                break  # the next mesh would be too large: report what was reached
            avail = available_memory()
            if avail is not None and predicted_memory(n_next, max(counts.values())) > avail:
                stop = "memory"
                break
            progress.next_mesh(int(n_next))
            h *= shrink
            history.append(_eigenvalues(coarse, section if n_tem else None, axes, p))
            coarse, fine = fine, _discrete_solve(geom, h, p, fams, counts, shifts, radius)
        else:
            merged = _merge(fine, coarse, p, want, history=history)
            worst = max((e / lam for lam, e, *_ in merged), default=0.0) / 2 * _safety(fine)
            tem = _tem_statics(*_wholes(fine, coarse, axes, section, p), p, section,
                               history=history) if n_tem else None
            worst = max(worst, relative_error(tem))
        if best is not None and worst > best[0]:
            worst, fine, coarse, merged, tem, h = best
        if worst > accuracy and mesh_size is None:
            if stop == "plateau":
                warnings.warn(f"femodes: asked accuracy {accuracy:.1e} is below the round-off floor here: finer "
                              f"meshes stopped lowering the error estimate; returning the best reached, "
                              f"estimated {worst:.1e} with {fine['n_dofs']} unknowns (ask for accuracy "
                              f">= {worst:.0e}, or fewer modes)", RuntimeWarning, stacklevel=2)
            else:
                why = {"memory": " (the next mesh would not fit in the memory available)",
                       "size": f" (the next mesh would exceed {MAX_DOFS} unknowns)"}.get(stop, "")
                warnings.warn(f"femodes: asked accuracy {accuracy:.1e} not reached{why}; estimated {worst:.1e} "
                              f"with {fine['n_dofs']} unknowns", RuntimeWarning, stacklevel=2)
    safety = _safety(fine)
    if axes:
        fine, merged = _unfold(fine, merged, axes, section, p)
    return ScalarSolution(fine, merged, tem, safety, p, h)
def _class_keys(fams, axes):
    """The symmetry classes of the families: 'TE x even', ... or 'TM x odd y even', ..."""
    keys = []
    for f in fams:
        for par in ([("even",), ("odd",)] if len(axes) == 1 else
                    [("even", "even"), ("odd", "even"), ("even", "odd"), ("odd", "odd")]):
            keys.append(f + "".join(f" {a} {q}" for a, q in zip(axes, par)))
    return tuple(keys)


def _whole(res, axes, section, p):
    """The reduced discrete solve ``res`` mirrored to the whole section (cached in it): the
    unfolded mesh in the section's place, its discretisation, and for each whole dof the reduced
    dof at its mirror image in the reduced part with the sign flips per axis (-1 where the dof
    lies on the far side of that plane)."""
    if "whole" in res:
        return res["whole"]
    canon = canonical(section)
    mesh = to_frame(unfold_mesh(res["mesh"], axes, canon), section)
    disc = discretise(mesh.to_skfem(order=max(2, p)), p)
    x0, y0, th = section.frame
    c, s = math.cos(th), math.sin(th)
    xy = disc.basis.doflocs
    loc = np.array([c * (xy[0] - x0) + s * (xy[1] - y0), -s * (xy[0] - x0) + c * (xy[1] - y0)])
    far = {}
    for a in axes:
        k = 0 if a == "x" else 1
        far[a] = loc[k] < 0
        loc[k] = np.abs(loc[k])
    dist, idx = cKDTree(res["disc"].basis.doflocs.T).query(loc.T)
    if dist.max() > 1e-7 * section.size:
        raise RuntimeError(f"unfolding: a dof of the whole mesh has no mirror image ({dist.max():.3g} m off)")
    res["whole"] = {"mesh": mesh, "disc": disc, "index": idx, "far": far}
    return res["whole"]


def _wholes(fine, coarse, axes, section, p):
    """The fine and coarse solves as the TEM statics want them: whole discretisations, with the
    reduced meshes' sizes and rate data (the same view each time: the statics are cached in it)."""
    if not axes:
        return fine, coarse
    out = []
    for r in (fine, coarse):
        w = _whole(r, axes, section, p)
        if "view" not in w:
            w["view"] = {"disc": w["disc"], "n_dofs": r["n_dofs"], "mesh": r["mesh"],
                         "grading": r.get("grading", 1.0), "corners": r.get("corners", ()),
                         "singular": r.get("singular", False)}
        out.append(w["view"])
    return out


def _unfold(fine, merged, axes, section, p):
    """The reduced classes' eigenvectors mirrored to the whole section: each column of class
    key (parity q_a under the mirror of axis a) is x(whole dof) = prod_a (q_a sign if the dof is
    on the far side) x(reduced dof at its image), divided by sqrt(2^planes) so that the columns
    stay M-orthonormal on the whole mesh.  Returns the fine solve and merged rows in the
    unreduced form (families 'TE', 'TM'; columns of the family's arrays)."""
    w = _whole(fine, axes, section, p)
    scale = 1.0 / math.sqrt(2.0 ** len(axes))
    cols = {}
    per_fam = {}
    for key in fine["classes"]:
        fam, odd = _class_of(key)
        lam, X, res = fine[key]
        sign = np.ones(len(w["index"]))
        for a in odd:
            sign[w["far"][a]] *= -1.0
        Y = X[w["index"]] * (sign * scale)[:, None]
        lst = per_fam.setdefault(fam, [])
        for i in range(len(lam)):
            lst.append((float(lam[i]), key, i, Y[:, i], float(res[i])))
    out = {k: v for k, v in fine.items() if k not in fine["classes"] and k not in ("whole",)}
    for fam, lst in per_fam.items():
        lst.sort(key=lambda t: t[0])
        for j, t in enumerate(lst):
            cols[(t[1], t[2])] = j
        out[fam] = (np.array([t[0] for t in lst]), np.column_stack([t[3] for t in lst]),
                    np.array([t[4] for t in lst]))
    out.update(mesh=w["mesh"], disc=w["disc"], n_dofs=w["disc"].n_dofs, classes=tuple(per_fam),
               reduced_dofs=fine["n_dofs"], symmetry=tuple(axes))
    rows = [(r[0], r[1], _class_of(r[2])[0], cols[(r[2], r[3])], r[4]) for r in merged]
    return out, rows


def _roundoff(n_dofs, safety):
    """The reported relative error of kc that round-off alone gives with ``n_dofs`` unknowns: the
    floor 2 N eps lam of kc^2 (see :func:`_merge`), halved for kc, times the safety factor."""
    return safety * n_dofs * 2.2e-16


def _predicted_dofs(area, h, p):
    """Unknowns of an order-p mesh of element size h over ``area`` (graded zones add to it)."""
    return _DOFS_PER_CELL * p * p * area / (h * h)


def _check_budget(section, accuracy, p, h, n_modes, kc_max):
    """Refuse, before any mesh is made, a solve whose final mesh by the error model (element size
    ``h``) would not fit in the memory available, saying what would fit."""
    avail = available_memory()
    if avail is None:
        return
    n = _predicted_dofs(section.area, h, p)
    need = predicted_memory(n, n_modes)
    if need <= avail:
        return
    # the finest mesh that fits, and the accuracy and mode count the model gives it
    n_fit = max(fitting_unknowns(avail, n_modes), 1.0)
    h_fit = math.sqrt(_DOFS_PER_CELL * p * p * section.area / n_fit)
    acc_fit = _ERROR_CONSTANT[p] * (kc_max * h_fit) ** (2 * p) * SAFETY["curved"] / (2 * 0.7)
    modes_fit = max(1, int(n_modes * (h / h_fit) ** 2))
    raise FemodesError(
        f"this solve would need about {n:.2g} unknowns, {need / 1e9:.1f} GB of memory and "
        f"{predicted_time(n, n_modes):.0f} s per refinement step (accuracy {accuracy:.0e}, {n_modes} modes), but only "
        f"{avail / 1e9:.1f} GB is available: ask for a looser accuracy (about {min(acc_fit, 0.05):.0e} fits) "
        f"or fewer modes (about {modes_fit} at this accuracy)")


def _debug(msg):
    """The refinement loop, step by step, on stderr when FEMODES_DEBUG is set (the command line's
    --verbose sets it)."""
    if os.environ.get("FEMODES_DEBUG"):
        print("femodes:", msg, file=sys.stderr)


def _initial_size(accuracy, p, kc_max, size):
    """Fine element size from the error model  rel. error of kc^2 ~ C_p (kc h)^(2p), aiming at
    half the asked accuracy after the safety factor, within the trusted range of kc h."""
    target = 2 * accuracy / SAFETY["curved"] * 0.7
    h = (target / _ERROR_CONSTANT[p]) ** (1.0 / (2 * p)) / kc_max
    return min(h, size / 2)


def _weyl_estimate(n, area, perimeter, family):
    """kc^2 of the n-th mode by Weyl's law (with the perimeter term), padded by 15%.

    Dirichlet: N(lam) ~ A lam / 4 pi - L sqrt(lam) / 4 pi; Neumann: + L sqrt(lam) / 4 pi.
    """
    n = max(n, 1)
    if family == "TM":
        # solve A x^2 - L x - 4 pi n = 0 for x = sqrt(lam)
        x = (perimeter + math.sqrt(perimeter ** 2 + 16 * math.pi * n * area)) / (2 * area)
    elif family == "TE":
        x = (-perimeter + math.sqrt(perimeter ** 2 + 16 * math.pi * (n + 1) * area)) / (2 * area)
    else:
        x = math.sqrt(2 * math.pi * (n + 1) / area)
    return 1.15 * x * x


def _initial_shifts(area, perimeter):
    """Shift-invert shifts below each family's lowest kc^2.  TM: 0.9 x the Faber-Krahn bound
    pi j01^2 / A, below the lowest Dirichlet eigenvalue of any region of area A (Faber 1923,
    Krahn 1925).  TE: below zero (the constant mode), by the smaller of a tenth of that and half
    (2 pi / L)^2 for perimeter L: a long thin guide or a narrow ring channel has its first
    Neumann eigenvalue near (2 pi / L)^2 or (pi / length)^2, far below the area's scale, and a
    shift far below a cluster of eigenvalues makes Lanczos crawl (a 1 um ring gap in a 20 mm
    coax: 60 s for one solve)."""
    fk = math.pi * _J01 ** 2 / area
    return {"TM": 0.9 * fk, "TE": -min(0.1 * fk, 0.5 * (2 * math.pi / perimeter) ** 2)}


def _update_shift(shifts, family, lam):
    """Move a family's shift up toward the eigenvalues just found: finer conforming meshes give
    lower eigenvalues, but not by half, so half the lowest found stays below the next mesh's."""
    if family == "TM" and len(lam):
        shifts["TM"] = max(shifts["TM"], 0.5 * float(lam[0]))
    elif family == "TE":
        nonzero = lam[lam > 1e-6 * np.max(np.abs(lam))] if len(lam) else lam
        if len(nonzero):
            shifts["TE"] = -min(-shifts["TE"], 0.5 * float(nonzero[0]))


def _discrete_solve(geometry, h, p, fams, counts, shifts, radius=None):
    """Mesh (or reuse a fixed mesh), assemble, and solve each family for ``counts[f]`` pairs."""
    if isinstance(geometry, Section):
        # a uniform mesh of size h is a lower bound of the graded one: refuse before meshing
        check_unknowns(predicted_unknowns(geometry.area, h, p), MAX_DOFS, "the mesh this accuracy asks for")
        r, g = radius if isinstance(radius, tuple) else (radius, 1.0)
        mesh = mesh_section(geometry, h, order=p, grading_radius=r, grading=g, all_corners=True)
    else:
        mesh = geometry
        t = mesh.triangles
        n_edges = len(np.unique(np.sort(np.hstack([t[[0, 1]], t[[1, 2]], t[[2, 0]]]), axis=0), axis=1).T)
        check_unknowns(lagrange_unknowns(mesh.n_vertices, n_edges, mesh.n_triangles, p), MAX_DOFS,
                       "the mesh file at this element order")
    skm = mesh.to_skfem(order=max(2, p))
    disc = discretise(skm, p)
    if disc.n_dofs > MAX_DOFS:
        raise FemodesError(f"the mesh needs {disc.n_dofs} unknowns, more than the limit {MAX_DOFS}: "
                           "ask for a looser accuracy or fewer modes")
    r, g = radius if isinstance(radius, tuple) else (radius, 1.0)
    # the exponents of the corners graded toward (they cap the rate unless the grading restores it)
    corners = tuple(c.singular_exponent for c in geometry.rate_limiting_corners(p)) \
        if isinstance(geometry, Section) else ()
    out = {"mesh": mesh, "disc": disc, "n_dofs": disc.n_dofs, "h": h, "grading": g,
           "singular": bool(corners), "corners": corners}
    out["classes"] = tuple(fams)
    cuts = geometry.cuts if isinstance(geometry, Section) else ()
    magnetic = magnetic_lines(geometry) if isinstance(geometry, Section) else ()
    walls = _cut_dofs(disc, cuts, geometry.size, magnetic) if (cuts or magnetic) else None
    found = {}  # the eigenvalues of each family over its classes: the next mesh's shift
    for f in fams:
        fam, odd = _class_of(f)
        if walls is None:
            dirichlet = disc.boundary if fam == "TM" else np.zeros(0, dtype=np.int64)
        else:
            # electric walls: TM Dirichlet; magnetic walls (user marks): TE Dirichlet (H_z = 0)
            parts = [walls[a] for a in odd] + ([walls["wall"]] if fam == "TM" else
                                                [walls["magnetic"]] if "magnetic" in walls else [])
            dirichlet = np.unique(np.concatenate(parts)) if parts else np.zeros(0, dtype=np.int64)
        constant = dirichlet.size == 0  # all Neumann: the constant mode comes too
        if dirichlet.size:
            free = np.ones(disc.n_dofs, dtype=bool)
            free[dirichlet] = False
            free = np.flatnonzero(free)
            K, M = restrict(disc.K, free), restrict(disc.M, free)
        else:
            K, M = disc.K, disc.M
        k = counts[f] + (1 if constant else 0)
        n = K.shape[0]
        if n < k + 3:
            raise FemodesError(f"the mesh is too coarse for {counts[f]} {fam} modes ({n} unknowns); "
                               "ask for fewer modes or a finer mesh")
        lam, X, res = lowest_eigenpairs(K, M, k, shifts[fam], residual_limit=1e-6)
        found.setdefault(fam, []).append(lam)
        if constant:
            drop = int(np.argmin(np.abs(lam)))
            lam, X, res = np.delete(lam, drop), np.delete(X, drop, axis=1), np.delete(res, drop)
        else:
            full = np.zeros((disc.n_dofs, X.shape[1]))
            full[free] = X
            X = full
        out[f] = (lam, X, res)
    for fam, lams in found.items():
        # over all classes of the family: one class's lowest eigenvalue can lie far above another's
        # (a TM class odd about both planes), and the shift must stay below every class's lowest
        _update_shift(shifts, fam, np.sort(np.concatenate(lams)))
    return out


def _class_of(key):
    """(family, axes where psi is odd) of a class key: 'TE', 'TM', or e.g. 'TE x odd y even'
    (the parity of psi = H_z or E_z under the section's mirrors, as the labels name it)."""
    parts = key.split()
    return parts[0], tuple(parts[i] for i in range(1, len(parts) - 1, 2) if parts[i + 1] == "odd")


def _cut_dofs(disc, cuts, size, magnetic=()):
    """Boundary dofs of a reduced section: {'wall': dofs of the PEC wall facets, axis: dofs of
    the facets on that symmetry wall} (a dof where a cut meets a wall is in both); with
    ``magnetic`` (the sides a user marked magnetic, :func:`femodes.geometry.walls.magnetic_lines`)
    also 'magnetic': the dofs of the facets on them, which are then not in 'wall'."""
    mesh = disc.basis.mesh
    bf = mesh.boundary_facets()
    xy = mesh.p[:, mesh.facets[:, bf]]  # (2, 2, nb)
    tol = 1e-9 * size
    out, on_any = {}, np.zeros(len(bf), dtype=bool)
    for a in cuts:
        k = 0 if a == "x" else 1
        on = np.all(np.abs(xy[k]) <= tol, axis=0)
        on_any |= on
        out[a] = np.asarray(disc.basis.get_dofs(facets=bf[on]).all(), dtype=np.int64)
    if magnetic:
        on = on_lines(magnetic, xy[:, 0], xy[:, 1], size)
        on_any |= on
        out["magnetic"] = np.asarray(disc.basis.get_dofs(facets=bf[on]).all(), dtype=np.int64)
    out["wall"] = np.asarray(disc.basis.get_dofs(facets=bf[~on_any]).all(), dtype=np.int64)
    return out


def _eigenvalues(result, section=None, axes=(), p=None):
    """The part of a discrete solve the error estimate keeps from older meshes (no vectors): the
    eigenvalues of each class, and with ``section`` (a guide with inner conductors) the
    conductors' energy products (the gram matrix of :func:`_tem_statics`), computed on the whole
    section (a reduced solve is unfolded for them, :func:`_wholes`)."""
    out = {"n_dofs": result["n_dofs"], **{f: (result[f][0],) for f in result["classes"]}}
    if section is not None:
        view = _wholes(result, result, axes, section, p)[0] if axes else result
        if "statics" not in view:
            view["statics"] = conductor_potentials(view["disc"], section)
        out["gram"] = view["statics"][1]
    return out


def _merge(fine, coarse, p, want, same_mesh=False, history=()):
    """Wanted (lam, err, family, column, residual) rows, lowest first, with Richardson errors.

    With ``same_mesh`` the coarse solution is one element order lower on the same mesh and the
    whole difference is taken as the error (no extrapolation: a conservative estimate).

    With ``history`` (eigenvalues of older, coarser meshes, coarsest first) each mode's error is
    the largest of the fine pair's Richardson estimate, the estimate of the last older pair
    carried to the fine mesh, and that of the finest older mesh with at most half the fine
    mesh's unknowns against the fine one: two meshes close in size can agree by chance (on the
    octagon at accuracy 1e-4, meshes of 1873 and 2481 unknowns differed by a quarter of the fine
    mesh's error: the corner's innermost elements from gmsh do not follow h_max smoothly).  Each
    uses the mode's observed rate from the last three meshes where that is slower than the
    model's (:func:`_observed_rate`): never a faster rate than the meshes show.  Where the rate
    is certain (2p: straight mesh, no rate-limiting corner) the model's rate is used.
    """
    rate = _rate(fine, p)
    # the rate is certain (2p) on straight meshes without a rate-limiting corner: there the
    # observed rate of a few coarse unstructured meshes is mostly noise
    certain = not fine.get("singular") and not fine["mesh"].is_curved
    s2p = 2.0 if same_mesh else (fine["n_dofs"] / coarse["n_dofs"]) ** (rate / 2)  # s^rate, s = sqrt(N_f/N_c)
    slowest = rate
    rows = []
    for f in fine["classes"]:
        lf, Xf, rf = fine[f]
        lc = coarse[f][0]
        cancel = _cancellation_floor(fine["disc"].K, Xf)
        older = history[-1] if history else None
        lo = older[f][0] if older is not None and f in older else ()
        far = [r for r in history if 2 * r["n_dofs"] <= fine["n_dofs"] and f in r]
        far = far[-1] if far else None
        n = min(len(lf), len(lc))
        for i in range(n):
            # round-off floor: grows with N, and with the cancellation in x^T K x (stretched elements)
            floor = max(2 * fine["n_dofs"] * 2.2e-16 * lf[i], cancel[i] if i < len(cancel) else 0.0)
            err = abs(lc[i] - lf[i]) / max(s2p - 1.0, 1.0)
            q = rate
            if i < len(lo) and not same_mesh and coarse["n_dofs"] >= _MIN_DOF_RATIO * older["n_dofs"]:
                if not certain:
                    q = _observed_rate((older["n_dofs"], coarse["n_dofs"], fine["n_dofs"]),
                                       (lo[i], lc[i], lf[i]), rate, 30 * floor)
                    slowest = min(slowest, q)
                s1 = (coarse["n_dofs"] / older["n_dofs"]) ** (q / 2)
                s2 = (fine["n_dofs"] / coarse["n_dofs"]) ** (q / 2)
                err = max(err, abs(lc[i] - lf[i]) / max(s2 - 1.0, 1e-3),
                          abs(lo[i] - lc[i]) / max(s1 - 1.0, 1e-3) / s2)
            if far is not None and i < len(far[f][0]) and not same_mesh:
                s3 = (fine["n_dofs"] / far["n_dofs"]) ** (q / 2)
                err = max(err, abs(far[f][0][i] - lf[i]) / (s3 - 1.0))
            err = max(err, floor)
            rows.append((float(lf[i]), float(err), f, i, float(rf[i])))
    fine["observed_rate"] = slowest
    rows.sort(key=lambda r: r[0])
    if not same_mesh and rows:
        # a single mode's coarse/fine difference can be small by chance on unstructured meshes:
        # no mode's relative estimate may fall below the trend (kc_i / kc_j)^(2p) of a higher mode
        lam = np.array([r[0] for r in rows])
        rel = np.array([r[1] for r in rows]) / lam
        trend = np.array([np.max(rel[j:] * (lam[j] / lam[j:]) ** (rate / 2)) for j in range(len(rows))])
        rows = [(r[0], float(max(r[1], t * r[0])), *r[2:]) for r, t in zip(rows, trend)]
    keep = rows[:want]
    # carry on past the count through a degenerate group the count cuts, so that the kept member
    # is symmetry-adapted with its partner (the extra rows are dropped after labelling)
    k = len(keep)
    while keep and k < len(rows) and abs(rows[k][0] - keep[-1][0]) <= \
            2 * SAFETY["curved"] * (rows[k][1] + keep[-1][1]) + 1e-10 * rows[k][0]:
        keep.append(rows[k])
        k += 1
    return keep


def _cancellation_floor(K, X):
    """Per eigenvector x (M-normalised, so x^T K x = lam) the round-off floor eps |x|^T |K| |x| of
    its eigenvalue: an entrywise relative perturbation of K of size eps (assembly, factorisation)
    moves lam by up to that much.  Where the products K_ij x_i x_j cancel -- elements stretched
    16:1 across a 1000:1 slab, whose kc^2 came out 9.4e-10 below the exact value against a floor
    2 N eps = 5e-13 -- this is the larger floor (there 5.3e-9, 0.18 of it seen); on ordinary
    meshes it lies near or below 2 N eps lam."""
    if X is None or not np.size(X):
        return np.zeros(0)
    A = abs(X)
    return 2.2e-16 * np.einsum("ij,ij->j", A, abs(K) @ A)


def _observed_rate(dofs, values, rate, noise):
    """The rate three meshes show (:func:`femodes.solvers.rates.observed_rate`); differences of
    opposite sign keep the model's rate (the trend floor and the older pairs guard that case)."""
    return observed_rate(dofs, values, rate, noise)


def _families_of_lowest(result, want):
    """How many of the ``want`` lowest computed modes belong to each family."""
    vals = sorted((lam, f) for f in result["classes"] for lam in result[f][0])
    out = {}
    for _, f in vals[:want]:
        out[f] = out.get(f, 0) + 1
    return out


def _short_families(result, want):
    """Families whose computed modes all fall among the ``want`` lowest: a mode of that family
    just above them could still be lower than the last wanted one, so more must be computed."""
    seen = _families_of_lowest(result, want)
    return {f for f in result["classes"] if seen.get(f, 0) >= len(result[f][0])
            and len(result[f][0]) < result["disc"].n_dofs // 4}


def _rate(fine, p):
    """Convergence rate of kc^2 in h: the slowest any mode can feel on this mesh.

    2p for smooth fields.  A corner of non-integer exponent lambda = pi / angle < p (re-entrant,
    or convex of 120, 135, 150 degrees: :meth:`Corner.singular_exponent`) caps it at 2 lambda on
    a quasi-uniform mesh (Strang & Fix ch. 8).  Graded as h ~ r^(1 - mu), mu = g lambda / (p + 1),
    the singular part's error density h^(2p) r^(2 lambda - 2 p mu - 2) is integrable for
    mu < lambda / p, and otherwise the innermost elements (size h^(1 / mu)) leave h^(2 lambda / mu):
    rate min(2p, 2 lambda / min(1, mu)), i.e. 2 (p + 1) / g, the full 2p only for
    g <= (p + 1) / p.  On curved meshes the degree-p isoparametric boundary limits the rate to
    about p + 1 (measured: 5.4 for p = 4 on a circle).
    """
    rate = 2.0 * p
    g = fine.get("grading", 1.0)
    for lam in fine.get("corners", ()):
        rate = min(rate, 2.0 * lam / min(1.0, g * lam / (p + 1)))
    if fine.get("singular") and not fine.get("corners"):
        rate = min(rate, 2.0 * (p + 1) / g)
    if fine["mesh"].is_curved:
        rate = min(rate, p + 1.0)
    return rate


def _conductors(mesh):
    """Boundary facets grouped by conductor (connected boundary pieces), outer wall first
    (the piece of largest extent); see femodes.solvers.electrostatic.conductor_groups."""
    return conductor_groups(mesh)[0]


def _tem_statics(fine, coarse, p, section, same_mesh=False, history=()):
    """The conductor potentials on the fine discretisation with the error of their energy
    products (the capacitance matrix over eps) from the coarse one.

    The energy of the Dirichlet problem converges like an eigenvalue (the square of the
    energy-norm error of the potential), so the same rate and safety factor as the cutoffs are
    used: Richardson between two meshes with s^rate, s = sqrt(N_fine / N_coarse); with
    ``same_mesh`` (order p - 1 on the same mesh) the whole difference is the error.

    With ``history`` (older, coarser meshes carrying their ``gram``) the estimate is guarded as the
    eigenvalues' are in :func:`_merge`: the last older pair carried to the fine mesh, and the finest
    older mesh with at most half the fine mesh's unknowns against the fine one, at the slowest rate
    the three meshes show on the diagonal (never faster than the model's).  Without the guard two
    close meshes agreed by chance on a coaxial line (7 / 3 mm, accuracy 1e-6, 1272 and 2032
    unknowns): the capacitance's error bar came out 1.3x below its error against 2 pi eps / ln(b/a).
    """
    for res in (fine, coarse):
        if "statics" not in res:
            res["statics"] = conductor_potentials(res["disc"], section)
    Phi, g, centroids = fine["statics"]
    g_c = coarse["statics"][1]
    if g_c.shape != g.shape:
        raise RuntimeError("the two meshes found different numbers of conductors")
    if same_mesh:
        return Electrostatics(Phi, g, gram_error(g, g_c, 1.0, 1.0, fine["n_dofs"]), centroids)
    rate = _rate(fine, p)
    safety = _safety(fine)
    n_f, n_c = fine["n_dofs"], coarse["n_dofs"]
    err = gram_error(g, g_c, max((n_f / n_c) ** (rate / 2) - 1.0, 0.25), safety, n_f)
    older = [r for r in history if "gram" in r and r["gram"].shape == g.shape]
    q = rate
    if older and n_c >= _MIN_DOF_RATIO * older[-1]["n_dofs"]:
        o = older[-1]
        if fine.get("singular") or fine["mesh"].is_curved:  # the rate is uncertain: the observed one
            floor = 30 * 2 * n_f * 2.2e-16 * float(np.max(np.abs(np.diag(g))))
            q = min(_observed_rate((o["n_dofs"], n_c, n_f), (o["gram"][i, i], g_c[i, i], g[i, i]), rate, floor)
                    for i in range(g.shape[0]))
        s1 = (n_c / o["n_dofs"]) ** (q / 2)
        s2 = (n_f / n_c) ** (q / 2)
        err = np.maximum(err, gram_error(g, g_c, max(s2 - 1.0, 1e-3), safety, n_f))
        err = np.maximum(err, gram_error(g, g + (o["gram"] - g_c), max(s1 - 1.0, 1e-3) * s2, safety, n_f))
    for o in older:  # every older mesh with at most half the unknowns, carried to the fine one
        if 2 * o["n_dofs"] <= n_f:
            s3 = (n_f / o["n_dofs"]) ** (q / 2)
            err = np.maximum(err, gram_error(g, o["gram"], max(s3 - 1.0, 1e-3), safety, n_f))
    return Electrostatics(Phi, g, err, centroids)


def solve_scalar_mesh(mesh, n_modes, family, p):
    """Solve on a given mesh; the error estimate compares order p with order p - 1 on it."""
    if p == 1:
        raise FemodesError("on a fixed mesh the error estimate needs order >= 2")
    fams = ("TE", "TM") if family is None else (family,)
    n_tem = 0
    area = float(np.sum(_areas(mesh)))
    counts = {f: n_modes + 2 for f in fams}
    shifts = {"TM": 0.9 * math.pi * _J01 ** 2 / area, "TE": -0.1 * math.pi * _J01 ** 2 / area}
    with single_thread():
        fine = _discrete_solve(mesh, None, p, fams, counts, shifts)
        coarse = _discrete_solve(mesh, None, p - 1, fams, counts, shifts)
        n_tem = _count_conductors(fine) - 1 if family is None else 0
        want = max(0, n_modes - n_tem)
        merged = _merge(fine, coarse, p, want, same_mesh=True)
        tem = _tem_statics(fine, coarse, p, None, same_mesh=True) if n_tem else None
    return ScalarSolution(fine, merged, tem, 1.0, p, None)


def _areas(mesh):
    p = mesh.points[:, mesh.triangles]
    return 0.5 * np.abs((p[0, 1] - p[0, 0]) * (p[1, 2] - p[1, 0]) - (p[0, 2] - p[0, 0]) * (p[1, 1] - p[1, 0]))


def _count_conductors(fine):
    return len(_conductors(fine["disc"].basis.mesh))
