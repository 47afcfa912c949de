"""The front door: ``solve``, ``dispersion`` and ``study`` choose the solver for a guide and name
its modes.

A homogeneously filled section (or a mesh file) goes to the scalar solver
(:mod:`femodes.solvers.scalar`), whose eigenpairs :mod:`femodes.modes.labels` turns into a
:class:`~femodes.modes.ModeSet`; a section with material regions, or a mesh file whose named
groups were given materials (:meth:`Mesh.with_materials`), goes to the full-vector solver
(:mod:`femodes.solvers.loaded`: refined meshes for a section, orders p and p - 1 on the one mesh
for a mesh file), whose modes :mod:`femodes.modes.parents` names after the empty-guide mode each
grows from.  Arguments are checked here, once, with messages that say what
would be valid.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, replace

import numpy as np

from femodes.constants import C0
from femodes.errors import ACCURACY_RANGE, MAX_FREQUENCY, FemodesError, accuracy_range_error, material_number, positive_number
from femodes.geometry.loops import Arc
from femodes.geometry.mesh import Mesh
from femodes.geometry.mirror import mirror_planes
from femodes.geometry.section import Section
from femodes.modes.display import at_frequency_html, cutoff_html, fill_text, html_lines, list_repr, section_text
from femodes.modes.labels import build_modes
from femodes.modes.loaded import LoadedCutoff, LoadedMode, LoadedModes
from femodes.modes.model import ModeSet
from femodes.modes.parents import _parents
from femodes.solvers.discretise import ELEMENT_ORDERS
from femodes.solvers.electrostatic import line_parameters
from femodes.solvers.loaded import ORDER, solve_loaded, solve_loaded_mesh
from femodes.solvers.loaded_mirror import solve_loaded_mirror
from femodes.solvers.scalar import DEFAULT_ORDER, solve_scalar, solve_scalar_mesh

__all__ = ["solve", "dispersion", "study", "Study", "LoadedStudy", "DispersionTable", "DEFAULT_ORDER"]

MAX_MODES = 500


def solve(section, modes=6, eps_r=1.0, mu_r=1.0, accuracy=1e-6, family=None, order=None,
          mesh_size=None, max_iterations=6, frequency=None, evanescent=False, start_size=None,
          symmetry=True):
    """The ``modes`` lowest-cutoff modes of a guide.

    Parameters
    ----------
    section  : a Section (from the shape functions) or a Mesh (from :func:`femodes.read_mesh`;
               with materials in its named groups, ``read_mesh(...).with_materials({...})``, it
               is solved full-vector on that fixed mesh like a section with material regions)
    modes    : how many mode objects to return (each member of a degenerate pair counts; TEM count)
    eps_r, mu_r : relative permittivity and permeability of the filling (real, > 0)
    accuracy : relative error on each kc that the solver aims for and estimates (default 1e-6)
    family   : None for all, or 'TE', 'TM' to return one family only
    order    : element order (default 4 for homogeneous guides, Lagrange 1..4; 3 for loaded
               guides, edge elements 1..3)
    mesh_size: fix the fine element size h (m) instead of choosing it from the accuracy
    start_size: start the accuracy loop at this element size (m), e.g. the ``mesh_size`` of a
               solve of a similar section (sweeps pass it from point to point); the accuracy
               control is unchanged
    symmetry : where a section has mirror planes (in its own frame; material regions must be
               mirrored too), solve each symmetry class on the half or quarter section with
               electric / magnetic walls on the cuts and unfold the modes to the whole section
               (the same modes, labels and error estimates within the error bars; fewer unknowns
               per eigensolve).  True (the default): where that pays (:func:`reduction_pays`,
               :func:`loaded_reduction_pays`); 'always': whenever the section has a mirror
               plane; False: the whole section.
    frequency, evanescent : for sections with material regions only: the modes of largest beta
               at ``frequency`` (evanescent ones too if asked); without a frequency such a
               section gives its lowest cutoffs

    Returns a :class:`ModeSet` (a tuple of :class:`Mode`, ascending in cutoff) for a
    homogeneous guide; for a loaded one a tuple of :class:`LoadedMode` (at ``frequency``) or
    :class:`LoadedCutoff`.
    """
    n_modes = _check_count(modes)
    eps_r = material_number("eps_r", eps_r)
    mu_r = material_number("mu_r", mu_r)
    try:
        accuracy = float(accuracy)
    except (TypeError, ValueError):
        raise FemodesError(f"accuracy must be a number, got {accuracy!r}") from None
    if not (ACCURACY_RANGE[0] <= accuracy < ACCURACY_RANGE[1]):
        raise accuracy_range_error("accuracy", accuracy)
    if family is not None and family not in ("TE", "TM"):
        hint = f"; did you mean {family.upper()!r}?" if isinstance(family, str) and family.upper() in ("TE", "TM") else ""
        raise FemodesError(f"family must be None, 'TE' or 'TM', got {family!r}{hint}")
    if frequency is not None:
        frequency = positive_number("frequency", frequency, "Hz")
        if frequency > MAX_FREQUENCY:
            raise FemodesError(f"frequency {frequency:.3g} Hz is above the {MAX_FREQUENCY:g} Hz (10 THz) femodes "
                               "handles (metal walls stop being good conductors); give it in Hz")
    p = DEFAULT_ORDER if order is None else int(order) if (order in ELEMENT_ORDERS and not isinstance(order, bool)) else None
    if p is None:
        raise FemodesError(f"order must be one of {ELEMENT_ORDERS}, got {order!r}")

    if isinstance(section, Mesh) and section.materials:
        if family is not None:
            raise FemodesError("family= does not apply to a mesh with materials: its modes are hybrid in general "
                               "(leave family out)")
        return _loaded_modes(section, n_modes, frequency, eps_r, mu_r, accuracy, order=order,
                             evanescent=evanescent)[0]
    if isinstance(section, Mesh):
        if frequency is not None:
            raise FemodesError("frequency= is for guides with material regions (hybrid modes); this mesh has "
                               "none: give its named groups materials with mesh.with_materials({...}), or "
                               "use mode.beta(f) of the modes of the empty guide")
        sol = solve_scalar_mesh(section, n_modes, family, p)
        return _mode_set(sol, None, n_modes, eps_r, mu_r, accuracy, family)
    if not isinstance(section, Section):
        raise FemodesError(f"solve() needs a section (e.g. femodes.rectangle(...)) or a mesh, got {type(section).__name__}")
    _check_scale(section)
    if symmetry not in (True, False, "always"):
        raise FemodesError(f"symmetry must be True (reduce where it pays), 'always' or False, got {symmetry!r}")
    if section.materials:
        return _loaded_modes(section, n_modes, frequency, eps_r, mu_r, accuracy, order=order,
                             evanescent=evanescent, symmetry=symmetry)[0]
    if frequency is not None:
        raise FemodesError("frequency= is for sections with material regions (hybrid modes); a guide "
                           "filled with one material is solved for its cutoffs: use mode.beta(f) and the "
                           "other methods of each mode at any frequency")
    if mesh_size is not None:
        mesh_size = positive_number("mesh_size", mesh_size, "m")
    if start_size is not None:
        start_size = positive_number("start_size", start_size, "m")
    if symmetry not in (True, False, "always"):
        raise FemodesError(f"symmetry must be True (reduce where it pays), 'always' or False, got {symmetry!r}")
    reduced = symmetry == "always" or (symmetry is True and reduction_pays(section, n_modes, accuracy, p))
    sol = solve_scalar(section, n_modes, accuracy, family, p, mesh_size, max_iterations, start_size,
                       symmetry=reduced)
    return _mode_set(sol, section, n_modes, eps_r, mu_r, accuracy, family)


def reduction_pays(section, n_modes, accuracy, order=DEFAULT_ORDER):
    """Whether solving a mirror-symmetric section class by class on its half or quarter is
    expected to be faster than solving it whole (measured, benchmarks/bench_symmetry.py and
    DEVELOPERS.md): each class costs its own eigensolves and the modes are unfolded at the end,
    which small problems do not repay.  Measured on 5 guides (WR-90, a square, a rounded
    rectangle, a coax, the double ridge) x (6, 20, 50 modes) x (1e-4, 1e-6, 1e-8), whole / reduced
    time: from 40 modes 0.73-4.5 (median 1.6); on sections with curved walls or rate-limiting
    corners at accuracy 1e-8 and 10 modes or more 1.2-3.2; elsewhere mostly 0.3-0.7 (sub-second
    solves, where the per-class eigensolves and the unfolding dominate)."""
    if n_modes >= 40:
        return True
    smooth = not section.rate_limiting_corners(order) and \
        not any(isinstance(seg, Arc) for loop in section.loops for seg in loop.segments)
    return not smooth and accuracy <= 1e-8 and n_modes >= 10


def loaded_reduction_pays(section, n_modes, accuracy, frequency=None):
    """Whether solving a loaded section class by class on its half or quarter (one accuracy loop
    over all classes on common reduced meshes) is expected to be faster than solving it whole:
    where it has two mirror planes (four classes on the quarter), no curved wall or interface
    and the accuracy asked is 1e-8 or finer.  Measured whole / reduced time (benchmarks/
    bench_symmetry.py loaded, interleaved, busy 2-core machine), WR-90 with a centred slab
    (two planes), 4 and 10 modes at 24 GHz and as cutoffs: at 1e-8 1.55-2.1x (3 runs each;
    2.1-2.9x in a single-run survey), at 1e-7 0.48-1.40x, at 1e-6 0.72-1.27x (sub-3-second
    solves: the unfolding, the whole mesh's assembly and the per-class eigensolves cost what the
    smaller factorisations save, and the two loops' meshes differ by luck); a slab on the bottom
    wall (one plane, two classes) 0.40-1.0x but for one case; a rod in a circular guide (curved
    meshes) about 1.0x at 1e-6 and 0.40x at 1e-8 (one refinement more than the whole loop, the
    last step to 2.5x its unknowns).  ``symmetry='always'`` reduces regardless."""
    del n_modes, frequency  # no measured dependence beyond the noise
    if not isinstance(section, Section) or accuracy > 1e-8:
        return False
    loops = list(section.loops) + [l for m in section.materials for l in (m.region,) + tuple(m.holes)]
    if any(isinstance(seg, Arc) for loop in loops for seg in loop.segments):
        return False
    return len(mirror_planes(section)) == 2


#: outlines beyond these sizes (m) get a warning: implausible for a microwave guide
SCALE_LIMITS = (10e-6, 1.0)


def _check_scale(section):
    """Warn (never refuse) when the section's size is implausible for a microwave guide: most
    often millimetres typed into the SI (metres) call."""
    size = section.size
    lo, hi = SCALE_LIMITS
    if size > hi:
        warnings.warn(f"femodes: the section is {size:.4g} m across, implausibly large for a microwave guide: "
                      f"femodes takes metres; if these were millimetres, that is {size * 1e-3:.4g} m (e.g. "
                      "femodes.rectangle(22.86e-3, 10.16e-3))", UserWarning, stacklevel=3)
    elif size < lo:
        warnings.warn(f"femodes: the section is {size:.4g} m across ({size * 1e6:.4g} um), implausibly small for "
                      "a microwave guide: femodes takes metres", UserWarning, stacklevel=3)


def _mode_set(sol, section, n_modes, eps_r, mu_r, accuracy, family):
    """Name the scalar solution's modes (femodes.modes.labels) and wrap them in a ModeSet."""
    line = line_parameters(sol.tem, eps_r, mu_r)
    modes = build_modes(section, sol.fine, sol.merged, sol.tem, eps_r, mu_r, sol.safety, n_modes, line)
    return ModeSet(modes, section=section, mesh=sol.mesh, eps_r=eps_r, mu_r=mu_r, accuracy=accuracy,
                   modes_asked=n_modes, n_dofs=sol.n_dofs, order=sol.order, mesh_size=sol.mesh_size, family=family, line=line)


def _loaded_order(order):
    """The edge-element order of a loaded guide: None (default) or 1, 2, 3."""
    if order is None:
        return ORDER
    if isinstance(order, bool) or order not in (1, 2, 3):
        raise FemodesError(f"order of a loaded guide's edge elements must be 1, 2 or 3, got {order!r}")
    return int(order)


def _check_count(modes):
    if isinstance(modes, bool):
        raise FemodesError(f"modes must be a whole number >= 1, got {modes!r}")
    try:
        n = int(modes)
    except (TypeError, ValueError):
        raise FemodesError(f"modes must be a whole number >= 1, got {modes!r}") from None
    if n < 1 or n != modes:
        raise FemodesError(f"modes must be a whole number >= 1, got {modes!r}")
    if n > MAX_MODES:
        raise FemodesError(f"modes={n} is more than this solver is meant for (at most {MAX_MODES})")
    return n


def _bare_modes(section, count, eps_r, mu_r):
    """The scalar solver's labelled modes of the section without its regions (labels only: kc
    is matched to 1e-3, so accuracy 1e-4 is plenty)."""
    return solve(replace(section, materials=()), modes=count, eps_r=eps_r, mu_r=mu_r, accuracy=1e-4)


def _loaded_modes(section, modes, frequency=None, eps_r=1.0, mu_r=1.0, accuracy=1e-6, order=None,
                  evanescent=False, tan_delta=0.0, parents=True, bare=None, symmetry=True):
    """(modes, final VectorProblem) of a section with material regions: LoadedModes at
    ``frequency`` or LoadedCutoffs without, each named after the empty-guide mode it grows from
    when ``parents`` (an extra solve of the empty guide on the final mesh; ``bare`` the bare
    section's labelled scalar modes when the caller has them).  ``symmetry`` as in :func:`solve`:
    a section with mirror planes (materials included) solved class by class on its half or
    quarter (:func:`femodes.solvers.loaded_mirror.solve_loaded_mirror`) where that pays
    (:func:`loaded_reduction_pays`) or always."""
    sol = None
    if isinstance(section, Section) and (symmetry == "always" or (
            symmetry is True and loaded_reduction_pays(section, modes, accuracy, frequency))):
        sol = solve_loaded_mirror(section, modes, frequency, eps_r, mu_r, accuracy, order=order,
                                  evanescent=evanescent, tan_delta=tan_delta)
    if sol is None:
        solver = solve_loaded_mesh if isinstance(section, Mesh) else solve_loaded  # a mesh file: fixed mesh
        sol = solver(section, modes, frequency, eps_r, mu_r, accuracy, order=order, evanescent=evanescent,
                     tan_delta=tan_delta)
    objs, err, vals = sol.objects, sol.errors, sol.values
    # complex modes (members of complex-conjugate pairs of beta^2) grow from no single empty-guide
    # mode: they are named by pair, not by parent
    named_keep = [i for i in sol.keep if getattr(objs[i], "family", "") != "complex"]
    picked = [objs[i] for i in named_keep]
    named = {}
    if parents and picked:
        if bare is None or len(bare) < len(picked) + 8:
            bare = _bare_modes(section, len(picked) + 8, eps_r, mu_r)
        named = dict(zip(named_keep, _parents(section, sol.problem, picked, eps_r, mu_r, bare, sol.empty)))
    out, counts = [], {}
    for i in sol.keep:
        o = objs[i]
        parent, share = named.get(i, (None, math.nan))
        if frequency is not None:
            fam = o.family
            counts[fam] = counts.get(fam, 0) + 1
            b = o.beta  # complex modes: principal root of the complex beta^2 (Re beta >= 0)
            # |d beta| = |d beta^2| / (2 |beta|), complex |difference| for complex modes
            beta_err = err[i] / (2 * abs(b)) if abs(b) > 0 else math.sqrt(err[i])
            if fam == "complex":
                label = f"complex pair {(counts[fam] + 1) // 2} ({'+' if o.beta2.imag > 0 else '-'})"
            else:
                label = f"{fam} from {parent}" if parent else f"{fam} {counts[fam]}"
            out.append(LoadedMode(fam, label, float(frequency), b, float(beta_err), len(out), o, parent, share,
                                  sol.lower))
        else:
            fam = o.field
            counts[fam] = counts.get(fam, 0) + 1
            fc = o.frequency
            label = f"{fam}-type from {parent}" if parent else f"{fam}-type {counts[fam]}"
            out.append(LoadedCutoff(fam, label, fc, float(fc * err[i] / (2 * vals[i])), len(out), parent, share))
    return LoadedModes(out), sol.problem


def dispersion(section, frequencies, modes=4, eps_r=1.0, mu_r=1.0, accuracy=1e-6, order=None,
               tan_delta=0.0, labels=True, _bare=None):
    """beta(f) of the ``modes`` modes of largest beta at the first frequency, tracked along
    ``frequencies`` (Hz) by field overlap, so crossing curves keep their identities
    (:meth:`femodes.vector.VectorProblem.dispersion`).

    ``section``: a Section with material regions, or a Mesh whose groups carry materials (its
    fixed mesh is used as it is, solved at the top frequency for the error check).

    The mesh is the one :func:`solve_loaded` refines at the highest frequency (the hardest: the
    shortest wavelength) to ``accuracy`` (f_min / f_max)^2 / 4, so that the error of beta^2
    relative to k0^2 eps_max mu_max stays within ``accuracy`` down to the lowest frequency (the 4:
    a margin for modes away from the top frequency); assembled once, the curves are computed on it.  Returns a
    :class:`femodes.vector.Dispersion` (``frequencies``, ``beta`` (F, N), ``family``, ``overlap``).
    Complex modes (complex-conjugate pairs of beta^2 below cutoff) are tracked like the others:
    ``beta2`` is then complex and ``family`` 'complex' where a curve is a member of a pair.
    """
    fixed = isinstance(section, Mesh) and bool(section.materials)
    if not (isinstance(section, Section) or fixed):
        raise FemodesError(f"dispersion() needs a section or a mesh with materials, got {type(section).__name__}")
    try:
        fs = np.atleast_1d(np.asarray(frequencies, dtype=float))
    except (TypeError, ValueError):
        raise FemodesError(f"frequencies must be two or more positive frequencies in Hz, got {frequencies!r}") from None
    if fs.size < 2 or not np.all(np.isfinite(fs)) or np.any(fs <= 0) or np.any(fs > MAX_FREQUENCY):
        raise FemodesError(f"frequencies must be two or more positive frequencies in Hz, got {frequencies!r}")
    p = _loaded_order(order)
    # the error of beta^2 is measured relative to k0^2 eps_max mu_max, which is smallest at the
    # lowest frequency: ask the top-frequency solve for that much more, and a margin of 4 for
    # the tracked modes away from the top frequency, whose errors its estimate does not see
    # (measured on the slab-loaded WR-90, 8-16 GHz: 1.5e-6 at accuracy 1e-6 without the margin)
    acc = float(accuracy) * (float(fs.min()) / float(fs.max())) ** 2 / 4.0
    if fixed:  # a mesh file is not refined: its problem at the top frequency, estimate checked as asked
        problem = solve_loaded_mesh(section, modes, float(fs.max()), eps_r, mu_r, float(accuracy), order=p,
                                    evanescent=True, tan_delta=tan_delta).problem
    else:
        problem = solve_loaded(section, modes, float(fs.max()), eps_r, mu_r, acc, order=p,
                               evanescent=True, tan_delta=tan_delta).problem
    disp = problem.dispersion(fs, modes=modes)  # the same assembled problem, reused
    if not labels:
        return disp
    first = disp.modes[0]
    if _bare is None:
        _bare = _bare_modes(section, len(first) + 8, eps_r, mu_r)
    # members of complex pairs at the first frequency have no single parent: named as such
    real = [m for m in first if m.family != "complex"]
    named = iter(_parents(section, problem, real, eps_r, mu_r, _bare) if real else ())
    names = []
    for m in first:
        if m.family == "complex":
            names.append(f"complex pair ({'+' if m.beta2.imag > 0 else '-'})")
        else:
            par = next(named)[0]
            names.append(f"{m.family} from {par}" if par else "")
    return replace(disp, labels=tuple(names))


@dataclass(frozen=True, eq=False)
class DispersionTable:
    """beta(f) of the modes that propagate somewhere in a band, as tables and files want it.

    frequencies : (F,) Hz
    beta        : (F, N) complex, rad/m: beta where the mode propagates, -1j alpha where it is
                  evanescent (column k is one mode followed along the band)
    beta_error  : (F, N) estimated error of |beta| (rad/m), or None where not estimated per point
                  (loaded guides: the whole curve set is solved to the study's accuracy on beta^2
                  relative to k0^2 eps_max mu_max at every frequency)
    labels      : (N,) the name of each curve ('' where none)
    family      : (N,) its family at the top frequency
    overlap     : (F, N) how surely each point continues its curve (loaded guides, tracked by
                  field overlap; see femodes.solvers.vector.Dispersion), or None (homogeneous
                  guides: every curve is closed-form, beta = sqrt(k^2 - kc^2))
    solved      : the loaded solver's own :class:`femodes.solvers.vector.Dispersion` (for the
                  dispersion chart), or None
    """

    frequencies: np.ndarray
    beta: np.ndarray
    beta_error: np.ndarray | None
    labels: tuple
    family: tuple
    overlap: np.ndarray | None = None
    solved: object = None


@dataclass(frozen=True, eq=False)
class Study:
    """What a case file asks of a guide, solved, for either kind of guide: the lowest cutoffs,
    the modes at one frequency, and the dispersion over a band (None / empty when not asked).

    section    : the Section, or the Mesh of a mesh file
    modes      : the lowest cutoffs: a :class:`~femodes.modes.ModeSet` of a homogeneous guide, or
                 the :class:`~femodes.modes.LoadedCutoff` s of a loaded one (ascending)
    at_frequency : the modes whose quantities are reported at ``frequency``: the same ModeSet
                 (closed-form dispersion) or the :class:`~femodes.modes.LoadedMode` s solved there
    n_dofs     : unknowns of the final cutoff mesh; n_dofs_at_f: of the mesh at the frequency
    more_propagate : True when every loaded mode asked for propagates at ``frequency`` (more
                 may: ask for more modes to see them all)
    dispersion : a :class:`DispersionTable` over the band, or None
    empty_modes: (label, kc) of the empty guide's modes with a cutoff below the band top (loaded
                 guides, for comparison curves)
    family     : None, or 'TE' / 'TM' for a one-family solve of a homogeneous guide
    """

    section: object
    eps_r: float
    mu_r: float
    tan_delta: float
    accuracy: float
    order: int
    modes: tuple
    n_dofs: int
    frequency: float | None = None
    at_frequency: tuple = ()
    n_dofs_at_f: int = 0
    more_propagate: bool = False
    dispersion: DispersionTable | None = None
    empty_modes: tuple = ()
    family: str | None = None

    @property
    def loaded(self):
        """True for a guide with material regions (full-vector solve, hybrid modes)."""
        return not isinstance(self.modes, ModeSet)

    @property
    def cutoffs(self):
        """The lowest cutoffs (the same as ``modes``)."""
        return self.modes

    @property
    def single_mode_band(self):
        """(f1, f2) Hz from the lowest cutoff to the next one not degenerate with it, or None."""
        if not self.loaded:
            try:
                return self.modes.single_mode_band()
            except FemodesError:
                return None
        if len(self.modes) < 2:
            return None
        return (self.modes[0].fc, self.modes[1].fc)

    # -- display -----------------------------------------------------------------------------------
    def __repr__(self):
        kind = getattr(self.section, "kind", None)
        extra = (f" of a {kind} section" if kind else " of a mesh") + (" with material regions" if self.loaded else "")
        if self.frequency is not None:
            extra += f", at {self.frequency / 1e9:.6g} GHz"
        if self.dispersion is not None:
            fs = self.dispersion.frequencies
            extra += f", dispersion {fs[0] / 1e9:.6g} - {fs[-1] / 1e9:.6g} GHz"
        return list_repr("Study", self.modes, extra, limit=4)

    def _repr_html_(self):
        """The study as a notebook shows it: the cutoff table (the columns and units of
        :func:`femodes.report.modes_table`), the modes at the frequency for a loaded guide (the
        columns of the report's table at a frequency that the modes themselves know) and a line
        on the dispersion; the full text report is ``femodes.report.report_table(study)`` (with the
        losses and power handling of ``femodes.report.analyse``)."""
        acc = f"accuracy asked {self.accuracy:.1e}; unknowns {self.n_dofs}"
        fill = fill_text(self.eps_r, self.mu_r) + (f", tan_delta = {self.tan_delta:.3g}" if self.tan_delta else "")
        if self.loaded:
            regions = "; ".join(f"{m.name or f'region {i}'}: eps_r = {m.eps_r:g}"
                                for i, m in enumerate(getattr(self.section, "materials", ()), start=1))
            fill += f"; regions: {regions}" if regions else ""
        parts = [cutoff_html(self.modes, self.loaded, caption=f"study of {section_text(self.section)}",
                             before=[fill, acc + (f"; {self.family} modes only" if self.family else "")],
                             family=self.family)]
        if self.frequency is not None and self.loaded and self.at_frequency:
            parts.append(at_frequency_html(self.at_frequency, caption=f"at f = {self.frequency / 1e9:.6g} GHz"))
        elif self.frequency is not None:
            prop = [m.label for m in self.modes if m.propagates(self.frequency)]
            parts.append(html_lines([f"at f = {self.frequency / 1e9:.6g} GHz: propagating "
                                     + (", ".join(prop) if prop else "none")]))
        if self.dispersion is not None:
            d = self.dispersion
            fs = d.frequencies
            parts.append(html_lines([f"dispersion: {fs.size} frequencies {fs[0] / 1e9:.6g} - {fs[-1] / 1e9:.6g} GHz, "
                                     f"{d.beta.shape[1]} curves ({', '.join(lab or '?' for lab in d.labels)})"]))
        parts.append(html_lines(["full text report: femodes.report.report_table(study)"]))
        return "".join(parts)


#: the old name of :class:`Study` (loaded guides only)
LoadedStudy = Study


def study(section, modes=6, accuracy=1e-6, order=None, eps_r=1.0, mu_r=1.0, tan_delta=0.0,
          frequency=None, band=None, points=41, family=None, symmetry=True):
    """Cutoffs, modes at ``frequency`` (Hz) and dispersion over ``band`` (f1, f2 Hz, ``points``
    frequencies) of any guide: what a case file asks.  A homogeneous guide is solved once for its
    cutoffs (its dispersion is closed-form); a loaded one (section with material regions, or a mesh file with materials, solved on its fixed mesh) for its
    cutoffs, at the frequency, and along the band (following the modes whose cutoff, of the
    ``modes`` computed, lies below the band top).  ``tan_delta``: the fill's loss tangent (a
    loaded solve takes it into its modes; a homogeneous one leaves it to the quantities).
    ``symmetry``: as in :func:`solve` (the cutoffs and the modes at the frequency; the
    dispersion curves are followed on the whole section).  Returns a :class:`Study`."""
    fs = None if band is None else np.linspace(float(band[0]), float(band[1]), int(points))
    if not section.materials:
        ms = solve(section, modes=modes, eps_r=eps_r, mu_r=mu_r, accuracy=accuracy, family=family, order=order,
                   symmetry=symmetry)
        disp = None if fs is None else _closed_form_dispersion(ms, fs)
        return Study(section, float(eps_r), float(mu_r), float(tan_delta), float(accuracy), ms.order, ms, ms.n_dofs,
                     frequency=None if frequency is None else float(frequency),
                     at_frequency=tuple(ms) if frequency is not None else (), n_dofs_at_f=ms.n_dofs,
                     dispersion=disp, family=family)
    if family is not None:
        raise FemodesError("family= is for homogeneously filled guides: a loaded guide's modes are hybrid")
    p = _loaded_order(order)
    bare = _bare_modes(section, modes + 8, eps_r, mu_r)  # the labels of every part, solved once
    cuts, prob = _loaded_modes(section, modes, None, eps_r, mu_r, accuracy, order=p, tan_delta=tan_delta,
                               bare=bare, symmetry=symmetry)
    out = Study(section, float(eps_r), float(mu_r), float(tan_delta), float(accuracy), p, cuts, prob.n_dofs)
    if frequency is not None:
        ms, prob_f = _loaded_modes(section, modes, frequency, eps_r, mu_r, accuracy, order=p,
                                   tan_delta=tan_delta, bare=bare, symmetry=symmetry)
        out = replace(out, frequency=float(frequency), at_frequency=ms, n_dofs_at_f=prob_f.n_dofs,
                      more_propagate=len(ms) >= modes)
    if fs is not None:
        # the curves worth drawing: the modes with a cutoff below the top of the band (those
        # that propagate somewhere in it), at least one
        n_band = max(1, sum(1 for c in cuts if c.fc < fs[-1]))
        empty = tuple((m.label, float(m.kc)) for m in bare[:n_band] if m.fc < fs[-1])
        # followed from the top of the band down: there the modes asked for propagate (their
        # cutoffs lie below it), while at the bottom the least attenuated evanescent ones need not
        # be the same modes (a band starting below cutoff followed the wrong curve otherwise)
        d = _ascending(dispersion(section, fs[::-1], n_band, eps_r, mu_r, accuracy, order=p, tan_delta=tan_delta,
                                  _bare=bare))
        names = tuple(lab or "" for lab in d.labels) or ("",) * d.beta2.shape[1]
        table = DispersionTable(np.asarray(d.frequencies, dtype=float), np.asarray(d.beta), None, names,
                                tuple(str(f) for f in d.family[-1]), np.asarray(d.overlap), d)
        out = replace(out, dispersion=table, empty_modes=empty)
    return out


def _ascending(d):
    """A Dispersion computed from the highest frequency down, put back in ascending frequency
    (``overlap`` then links each point with the next higher frequency)."""
    return replace(d, frequencies=np.asarray(d.frequencies)[::-1], beta2=np.asarray(d.beta2)[::-1],
                   overlap=np.asarray(d.overlap)[::-1], family=np.asarray(d.family)[::-1],
                   modes=tuple(d.modes)[::-1])


def _closed_form_dispersion(modeset, fs):
    """DispersionTable of the homogeneous modes with a cutoff below the top of ``fs``:
    beta = sqrt(k^2 - kc^2) (or -j alpha), its error from each mode's kc error."""
    picked = [m for m in modeset if m.fc < fs[-1]] or list(modeset[:1])
    beta = np.column_stack([np.asarray(m.beta(fs), dtype=complex) for m in picked])
    k = 2 * np.pi * fs[:, None] * math.sqrt(modeset.eps_r * modeset.mu_r) / C0
    kc = np.array([m.kc for m in picked])
    dkc = np.array([m.kc_error for m in picked])
    gap = np.sqrt(np.abs(k * k - kc * kc))
    with np.errstate(divide="ignore", invalid="ignore"):
        err = np.where(gap > 0, kc * dkc / np.where(gap > 0, gap, 1.0), np.inf)
    err[:, kc == 0] = 0.0
    return DispersionTable(np.asarray(fs, dtype=float), beta, err, tuple(m.label for m in picked),
                           tuple(m.family for m in picked))
