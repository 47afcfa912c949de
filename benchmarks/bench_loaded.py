"""Benchmark: dielectric-loaded guides, femodes against a plain baseline, measured in one run.

The guide: WR-90 (a = 22.86 mm, b = 10.16 mm, EIA inner size) with a dielectric slab eps_r = 2.25
filling its bottom half (0 <= y <= b/2, full width), PEC walls.  Reference values: the LSE / LSM
transverse-resonance solution of a guide with a slab on one wall (Collin, Field Theory of Guided
Waves, ch. 6; Harrington, Time-Harmonic Electromagnetic Fields), computed by
femodes.reference.slab_on_wall_modes with no finite-element code.

Prints time and error of
  1. beta of the first 4 modes (largest beta) at 13 GHz, worst relative error of beta, for
       a. femodes' public path, ``femodes.solve(section, modes=4, frequency=13e9, accuracy=...)``
          (accuracy is asked on beta^2 relative to k0^2 eps_max, see femodes.solvers.loaded; the row for
          the target converts 1e-7 relative on beta into that measure with the smallest beta^2),
       b. the direct core, femodes.solvers.vector.VectorProblem at order 3 on a chosen mesh (no error
          control): meshing, then assembly + solve,
       c. a plain baseline: uniform mesh, first-order edge and nodal elements, the same eigensolver,
          no error control, refined h -> h / sqrt 2 until one solve would exceed the budget;
     then the ratio of times at equal accuracy: femodes asked for the best error the baseline
     reached, against the baseline's time for it.
  2. dispersion: the 4 modes of largest beta at 8 GHz tracked over 50 frequencies 8-16 GHz, by
     ``femodes.dispersion`` (accuracy 1e-6), by VectorProblem.dispersion on one fixed order-3
     problem (method "reduced" and "direct"), and by the plain baseline (first order, one fixed
     uniform mesh, one solve per frequency), then femodes asked for the baseline's accuracy.
     Error: beta^2 against the reference relative to k0^2 eps_max (near cutoff beta itself is
     small), worst over all frequencies and curves, in two ways:
       * "curve": each tracked curve against the reference curve it starts on (label matched at
         the first frequency, as tests/test_loaded.py does): wrong if the tracking changes curves,
       * "value": each value against the nearest reference value at its frequency (identity
         ignored): the accuracy of the numbers themselves; the equal-accuracy ratio uses this one.
     A curve that leaves its reference curve is listed.

Speed targets are ratios measured in the same process (shared machines are noisy); nothing here
is a timed test.  BLAS is held to one thread for every side (femodes.solvers.eigen.single_thread).

    python benchmarks/bench_loaded.py                 # about a minute
    python benchmarks/bench_loaded.py --budget 20     # let the baseline refine further
"""

from __future__ import annotations

import argparse
import math
import sys
import time
import warnings

import numpy as np

import femodes as fm
from femodes import reference as ref
from femodes.api import _loaded_modes
from femodes.errors import FemodesError
from femodes.geometry.mesh import mesh_section
from femodes.solvers.eigen import single_thread
from femodes.solvers.vector import VectorProblem, layered_rectangle_mesh

C0 = 299792458.0
A, B = 22.86e-3, 10.16e-3   # WR-90 inner size (EIA)
EPS = 2.25                  # slab, bottom half
D = B / 2                   # slab thickness
F1 = 13e9                   # frequency of part 1
N_MODES = 4
F_LO, F_HI, N_FREQ = 8e9, 16e9, 50
CORE_HS = (B / 4, B / 6, B / 8, B / 12, B / 16)   # order-3 core meshes of part 1
CORE_DISP_H = B / 8                               # the fixed order-3 problem of part 2
BASE_DISP_H = B / 8 / math.sqrt(2) / math.sqrt(2) / math.sqrt(2)   # fixed P1 mesh of part 2: level 4 of 1c


def section():
    return fm.rectangle(A, B).with_material(fm.rectangle(A, B / 2).translated(0, -B / 4), eps_r=EPS)


def k2max(f):
    """k0^2 eps_max: the scale beta^2 errors are measured against (femodes.solvers.loaded)."""
    return (2 * math.pi * f / C0) ** 2 * EPS


# ---------------------------------------------------------------------------- timing, printing
def timed(fn, *a, **k):
    """(result, seconds, warnings other than scikit-fem's deprecation notes)."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        t = time.perf_counter()
        r = fn(*a, **k)
        t = time.perf_counter() - t
    notes = []
    for w in caught:
        msg = str(w.message)
        if issubclass(w.category, DeprecationWarning) and "u.value" in msg:
            continue
        if msg not in notes:
            notes.append(msg)
    return r, t, notes


def row(name, t, err, extra=""):
    print(f"  {name:40s} {t:8.3f} s   rel. error {err:9.2e}  {extra}")


def note(notes):
    for msg in notes:
        print(f"  {'':40s} ! warning: {msg}")


def verdict(t, t_max, err, err_max):
    """'met', or 'MISSED' with what was missed."""
    miss = [w for w, bad in (("time", t > t_max), ("accuracy", err > err_max)) if bad]
    return "met" if not miss else "MISSED (" + " and ".join(miss) + ")"


# ---------------------------------------------------------------------------- part 1
def beta_error(betas, exact):
    """Worst relative error of beta; FE and reference both in descending beta^2."""
    b = np.array([complex(x).real for x in betas[:len(exact)]])
    if b.size < len(exact):
        return math.inf
    return float(np.max(np.abs(b - exact) / exact))


def femodes_solve(sec, exact, accuracy, parents=True):
    """The public path; returns (seconds, true error, estimate, unknowns, modes, warnings)."""
    if parents:
        ms, t, notes = timed(fm.solve, sec, modes=N_MODES, frequency=F1, accuracy=accuracy)
    else:
        ms, t, notes = timed(lambda *a, **k: _loaded_modes(*a, **k)[0], sec, N_MODES, F1, accuracy=accuracy, parents=False)
    err = beta_error([m.beta() for m in ms], exact)
    est = max(m.beta_error / abs(m.beta()) for m in ms)
    return t, err, est, ms[0].vector.problem.n_dofs, ms, notes


def layered_eps(region):
    return np.where(region == 0, EPS, 1.0)   # layer 0 is the bottom one (the slab)


def section_eps(mesh):
    return np.where(mesh.regions == 1, EPS, 1.0)   # region 1: the section's first material


def core_solve(h, exact, mesher="layers"):
    """Order-3 VectorProblem on a chosen mesh: (mesh s, assembly + solve s, error, unknowns)."""
    t0 = time.perf_counter()
    if mesher == "layers":
        mesh, region = layered_rectangle_mesh(A, B, [D], h=h)
        eps = layered_eps(region)
    else:
        mesh = mesh_section(section(), h, order=3)
        eps = section_eps(mesh)
    t1 = time.perf_counter()
    prob = VectorProblem(mesh, eps, order=3)
    ms = prob.solve(F1, modes=N_MODES, evanescent=True)
    t2 = time.perf_counter()
    return t1 - t0, t2 - t1, beta_error([m.beta for m in ms], exact), prob.n_dofs


def baseline_problem(sec, h):
    """Uniform mesh, first-order elements: (VectorProblem, seconds spent meshing + assembling)."""
    t = time.perf_counter()
    mesh = mesh_section(sec, h, order=1, curved=False, graded=False)
    prob = VectorProblem(mesh, section_eps(mesh), order=1)
    return prob, time.perf_counter() - t


def baseline_solve(sec, h, exact):
    """(total s, solve-only s, error, unknowns, h)."""
    prob, t_setup = baseline_problem(sec, h)
    t = time.perf_counter()
    ms = prob.solve(F1, modes=N_MODES, evanescent=True)
    t_solve = time.perf_counter() - t
    return t_setup + t_solve, t_solve, beta_error([m.beta for m in ms], exact), prob.n_dofs, h


def baseline_ladder(sec, exact, budget):
    """Refine h -> h / sqrt 2 from b / 8; stop before a level whose predicted time (from the
    growth of the last two) exceeds ``budget``, or after one that did (not kept).  Prints and
    returns the levels kept: (total s, solve-only s, error, unknowns, h)."""
    h = B / 8
    levels = []
    while True:
        lev = baseline_solve(sec, h, exact)
        if lev[0] > budget and levels:
            row(f"uniform P1, h = {h * 1e3:.3f} mm", lev[0], lev[2], f"{lev[3]} unknowns (over budget, dropped)")
            break
        row(f"uniform P1, h = {h * 1e3:.3f} mm", lev[0], lev[2], f"{lev[3]} unknowns")
        levels.append(lev)
        if len(levels) >= 2:
            growth = max(levels[-1][0] / max(levels[-2][0], 1e-9), 1.5)
            if levels[-1][0] * growth > budget:
                break
        h /= math.sqrt(2)
    return levels


def accuracy_for_beta(rel_beta, exact, f):
    """femodes' accuracy (beta^2 relative to k0^2 eps_max) that bounds the relative error of
    every beta by rel_beta: |d beta^2| = 2 beta^2 |d beta / beta|, worst for the smallest beta."""
    acc = rel_beta * 2 * float(np.min(exact)) ** 2 / k2max(f)
    return min(max(acc, 1e-11), 0.09)


def part1(sec, budget):
    exact = np.array([r.beta for r in ref.slab_on_wall_modes(A, B, D, EPS, F1, N_MODES)])
    labels = [r.label for r in ref.slab_on_wall_modes(A, B, D, EPS, F1, N_MODES)]
    print(f"1. beta of the first {N_MODES} modes at {F1 / 1e9:g} GHz (reference: LSE/LSM transverse resonance,")
    print("   Collin ch. 6 / Harrington; femodes.reference.slab_on_wall_modes)")
    print("   " + ", ".join(f"{lab} {b:.6f}" for lab, b in zip(labels, exact)) + " rad/m")
    print()
    print("1a. femodes.solve(section, modes=4, frequency=13e9, accuracy=...)  (time includes meshing;")
    print("    'estimate' is femodes' own bound on the relative error of beta, max over the modes)")
    acc_target = accuracy_for_beta(1e-7, exact, F1)
    best_modes = None
    for acc in (1e-6, 1e-8):
        t, err, est, N, ms, notes = femodes_solve(sec, exact, acc)
        # femodes' accuracy is on beta^2 relative to k0^2 eps_max: the matching bound on beta is
        # acc k0^2 eps_max / (2 beta^2) for each mode
        b2err = max(abs(m.beta() ** 2 - e ** 2) for m, e in zip(ms, exact)) / k2max(F1)
        row(f"accuracy {acc:g}", t, err, f"estimate {est:.1e}, {N} unknowns; on femodes' measure {b2err:.1e}"
            + ("" if b2err <= acc else "  (! true error above the accuracy asked)"))
        note(notes)
        best_modes = ms
    t, err, est, N, ms, notes = femodes_solve(sec, exact, acc_target)
    row(f"accuracy {acc_target:.2g} (= 1e-7 on beta)", t, err,
        f"estimate {est:.1e}, {N} unknowns")
    note(notes)
    print(f"  {'':40s} target '4 betas to 1e-7 relative within 1 s': {verdict(t, 1.0, err, 1e-7)}")
    t2, err2, _, N2, _, notes = femodes_solve(sec, exact, acc_target, parents=False)
    row("  the same without parent labels", t2, err2,
        f"{N2} unknowns (_loaded_modes(..., parents=False): labelling took {t - t2:.2f} s)")
    note(notes)
    print("   labels given: " + ", ".join(f"{lab} = '{m.label}'" for lab, m in zip(labels, best_modes)))

    print()
    print("1b. direct core: VectorProblem(order=3), no error control (meshing | assembly + solve)")
    core = []
    for h in CORE_HS:
        tm, ts, err, N = core_solve(h, exact)
        core.append((tm + ts, err, N, h))
        row(f"layered_rectangle_mesh, h = b/{B / h:.0f}", tm + ts, err,
            f"{tm:.3f} | {ts:.3f} s, {N} unknowns")
    h = B / 8
    tm, ts, err, N = core_solve(h, exact, mesher="section")
    row(f"mesh_section (graded), h = b/{B / h:.0f}", tm + ts, err, f"{tm:.3f} | {ts:.3f} s, {N} unknowns")

    print()
    print(f"1c. plain baseline (uniform mesh, first order, same eigensolver), h -> h/sqrt2 within a "
          f"{budget:g} s budget per solve")
    levels = baseline_ladder(sec, exact, budget)
    errs = [lev[2] for lev in levels]
    if any(e2 > e1 for e1, e2 in zip(errs, errs[1:])):
        print("  ! the baseline's error did not decrease at every refinement")
    b_t, _, b_err, b_n, _ = levels[-1]

    print()
    print("1d. equal accuracy: femodes asked for the best error the baseline reached (target: >= 100x faster)")
    acc = accuracy_for_beta(b_err, exact, F1)
    t, err, est, N, _, notes = femodes_solve(sec, exact, acc)
    row("baseline, finest level", b_t, b_err, f"{b_n} unknowns")
    row(f"femodes.solve, accuracy {acc:.2g}", t, err,
        f"{N} unknowns;  time ratio {b_t / t:7.1f}x" + ("" if err <= b_err else "  (! less accurate than asked)"))
    note(notes)
    good = [c for c in core if c[1] <= b_err]
    if good:
        tc, ec, Nc, hc = min(good, key=lambda c: c[0])
        row(f"core, cheapest mesh of 1b (h = b/{B / hc:.0f})", tc, ec, f"{Nc} unknowns;  time ratio {b_t / tc:7.1f}x")
    else:
        print("  core: no mesh of 1b reached the baseline's error")
    return levels


# ---------------------------------------------------------------------------- part 2
def reference_curves(fs, count=10):
    """Per frequency {label: beta^2}, the first ``count`` modes (enough to hold every curve the
    4 tracked ones can reach in the band)."""
    return [{r.label: r.beta2 for r in ref.slab_on_wall_modes(A, B, D, EPS, f, count)} for f in fs]


def curve_errors(beta2, fs, refs):
    """(curve error, value error, (GHz, curve) of the worst value error, start labels,
    [(curve, from, to, frequency index)] of curves that end on another reference curve than the
    one they start on); see the module docstring."""
    F, n = beta2.shape
    first = refs[0]
    start = [min(first, key=lambda lab: abs(first[lab] - beta2[0, k])) for k in range(n)]
    e_curve = e_value = 0.0
    where = (fs[0] / 1e9, 1)
    left = []
    for k in range(n):
        moved = None
        near = start[k]
        for i in range(F):
            sc = k2max(fs[i])
            e_curve = max(e_curve, abs(beta2[i, k] - refs[i][start[k]]) / sc)
            near = min(refs[i], key=lambda lab: abs(refs[i][lab] - beta2[i, k]))
            e = abs(beta2[i, k] - refs[i][near]) / sc
            if e > e_value:
                e_value, where = e, (fs[i] / 1e9, k + 1)
            if moved is None and near != start[k]:
                moved = (k + 1, start[k], near, i)
        if moved is not None and near != start[k]:
            left.append(moved)
    return e_curve, e_value, where, start, left


def report_dispersion(name, t, disp, fs, refs, extra="", target=None):
    e_curve, e_value, (f_w, k_w), start, left = curve_errors(disp.beta2, fs, refs)
    info = f"(worst at {f_w:.2f} GHz, curve {k_w}); curve error {e_curve:8.2e}; {extra}"
    row(name, t, e_value, info)
    if target is not None:
        print(f"  {'':40s} target '4 modes x 50 frequencies within 5 s' (at accuracy {target:g}): "
              f"{verdict(t, 5.0, e_value, target)}")
    for k, a, b, i in left:
        print(f"  {'':40s} ! curve {k} starts on {a} but is on {b} from {fs[i] / 1e9:.2f} GHz on "
              f"(overlap there {disp.overlap[i, k - 1]:.4f}, lowest on the curve "
              f"{np.min(disp.overlap[1:, k - 1]):.4f})")
    return e_value, start


def part2(sec, base_h):
    fs = np.linspace(F_LO, F_HI, N_FREQ)
    refs = reference_curves(fs)
    print(f"2. dispersion: {N_MODES} modes tracked over {N_FREQ} frequencies {F_LO / 1e9:g}-{F_HI / 1e9:g} GHz;"
          " error of beta^2 / (k0^2 eps_max)")
    print("   against the LSE/LSM transverse resonance (Collin ch. 6 / Harrington; femodes.reference.slab_on_wall_modes)")
    print("   ('rel. error' below is the value error; 'curve error' follows each curve's starting label)")
    disp, t, notes = timed(fm.dispersion, sec, fs, modes=N_MODES, accuracy=1e-6)
    N = disp.modes[0][0].problem.n_dofs
    _, start = report_dispersion("femodes.dispersion, accuracy 1e-6", t, disp, fs, refs,
                                 f"{N} unknowns, {disp.snapshots.size} full solves", target=1e-6)
    note(notes)
    print("   curves start on: " + ", ".join(start))

    print()
    (mesh, region), tm, _ = timed(layered_rectangle_mesh, A, B, [D], h=CORE_DISP_H)
    prob, ta, _ = timed(VectorProblem, mesh, layered_eps(region), order=3)
    print(f"   VectorProblem.dispersion on one order-3 problem, h = b/{B / CORE_DISP_H:.0f}, {prob.n_dofs} "
          f"unknowns (meshing {tm:.3f} s, assembly {ta:.3f} s, not included below)")
    core_t = {}
    for method in ("reduced", "direct"):
        disp, t, notes = timed(prob.dispersion, fs, modes=N_MODES, method=method)
        core_t[method] = t
        report_dispersion(f"method '{method}'", t, disp, fs, refs, f"{disp.snapshots.size} full solves")
        note(notes)
    print(f"   reduced vs direct on the same problem: {core_t['direct'] / core_t['reduced']:.1f}x")

    print()
    h = base_h
    print(f"   plain baseline: fixed uniform P1 mesh, h = {h * 1e3:.3f} mm (as in 1c), one solve per frequency "
          "(method 'direct')")

    def baseline_dispersion():
        prob, _ = baseline_problem(sec, h)
        return prob.dispersion(fs, modes=N_MODES, method="direct"), prob.n_dofs

    (disp, Nb), b_t, notes = timed(baseline_dispersion)
    b_err, _ = report_dispersion("baseline (meshing included)", b_t, disp, fs, refs, f"{Nb} unknowns")
    note(notes)
    acc = min(max(b_err, 1e-11), 0.09)
    disp, t, notes = timed(fm.dispersion, sec, fs, modes=N_MODES, accuracy=acc)
    N = disp.modes[0][0].problem.n_dofs
    e_value, _ = report_dispersion(f"femodes.dispersion, accuracy {acc:.2g}", t, disp, fs, refs,
                                   f"{N} unknowns, {disp.snapshots.size} full solves;  time ratio "
                                   f"{b_t / t:6.1f}x")
    note(notes)
    if e_value > b_err:
        print(f"  {'':40s} ! femodes' value error is above the baseline's: not at equal accuracy")


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--budget", type=float, default=10.0, help="baseline time budget per solve in part 1 (s)")
    p.add_argument("--disp-h", type=float, default=BASE_DISP_H * 1e3,
                   help="element size of the baseline's fixed P1 mesh in part 2 (mm; default %(default).3f)")
    args = p.parse_args(argv)
    warnings.simplefilter("ignore", DeprecationWarning)
    sec = section()
    print("femodes", fm.__version__, "loaded-guide benchmark (times include meshing unless said; one BLAS thread)")
    print(f"WR-90 {A * 1e3:g} x {B * 1e3:g} mm, slab eps_r = {EPS:g} on the bottom wall, {D * 1e3:g} mm thick")
    print()
    try:
        with single_thread():
            fm.solve(sec, modes=1, frequency=F1, accuracy=1e-3)   # warm-up: imports, first calls
            part1(sec, args.budget)
            print()
            part2(sec, args.disp_h * 1e-3)
    except FemodesError as exc:
        print(f"femodes refused: {exc}")
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
