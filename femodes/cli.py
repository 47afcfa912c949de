"""The ``femodes`` command-line program: a thin layer over femodes.case and femodes.export.

    femodes solve CASE.toml [--json] [--csv PATH] [--fields PATH] [--figures DIR | --no-figures] [--format FMT]
                            [--modes N] [--accuracy X]
                            [--frequency F] [--band F1 F2] [--conductor NAME|S/m]
    femodes sweep CASE.toml [--json] [--csv PATH] [--netcdf PATH] [--store PATH] [--workers N]
                            [--scheduler ADDRESS] [--figure PATH] [--modes N] [--accuracy X]
    femodes seek | sensitivity | tolerance CASE.toml [--json] [--modes N] [--accuracy X] [--figure PATH]
    femodes selfcheck [--thorough] [--details] [--json] [--case NAME]
    femodes shapes
    femodes --version

Errors a user can cause are printed as one line, ``femodes: error: <message>``, on stderr, and the
exit status is 2.  ``femodes selfcheck`` exits with 0 when every reference value passes, 1 when
some fail (and 2 for a usage error, e.g. an unknown case name).
"""

from __future__ import annotations

import argparse
import json
import os
import sys
import time
import warnings

from femodes.case import FORMATS, load_case, run_case, shapes_help
from femodes.case.schema import UNITS
from femodes.case.studies import run_seek, run_sensitivity, run_tolerance
from femodes.case.sweep import run_sweep
from femodes.constants import __version__
from femodes.errors import FemodesError
from femodes.report import (
    analyse,
    check_figures,
    figures,
    report_document,
    report_table,
    write_csv,
    write_fields,
    write_figures,
)
from femodes.report.selfcheck import selfcheck_document, selfcheck_table
from femodes.report.sweeps import seek_table, sensitivity_table, study_document, sweep_document, sweep_table, tolerance_table
from femodes.studies.store import stored_points
from femodes.studies.verify import case_names, selfcheck

__all__ = ["main"]

EXIT_USAGE = 2
EXIT_CHECK_FAILED = 1


class _UsageError(Exception):
    pass


class _Parser(argparse.ArgumentParser):
    """argparse, but usage errors come back as one line, like every other error."""

    def error(self, message):
        raise _UsageError(f"{message} (see '{self.prog} --help')")


def _parser():

    p = _Parser(prog="femodes", description="Cutoffs and mode labels of hollow metal waveguides "
                "(finite elements), from a TOML case file.",
                epilog="Run 'femodes shapes' for the shapes and keys of [guide].  Errors are printed as "
                "one line and exit with status 2.")
    p.add_argument("--version", action="version", version=f"femodes {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    s = sub.add_parser("solve", help="solve a case file and print its modes",
                       description="Solve the guide described by a TOML case file and print a table of "
                       "its modes (GHz, mm); with an [analysis] table (or --frequency / --band) also the "
                       "propagation, loss (dB/m), impedance (ohm) and power handling (kW, MW) of the modes, "
                       "with the cautions that go with power figures.  Options override the case file.")
    _common(s, "the case file")
    s.add_argument("--csv", metavar="PATH", help="also write the modes to a CSV file (SI units)")
    s.add_argument("--fields", metavar="PATH", help="also write the mesh with every mode's fields (e.g. "
                   "guide.vtu for ParaView; SI units, normalised)")
    s.add_argument("--figures", metavar="DIR", help="write figures into DIR (turns figures on; overrides "
                   "[output] directory)")
    s.add_argument("--no-figures", action="store_true", help="write no figures, whatever the case file asks")
    s.add_argument("--format", choices=FORMATS, help="figure file format (overrides [output] format)")
    s.add_argument("--frequency", metavar="F", help="print the engineering quantities (loss, impedance, "
                   "power handling) at F GHz (overrides [analysis] frequency)")
    s.add_argument("--band", nargs=2, metavar=("F1", "F2"), help="sweep the attenuation from F1 to F2 GHz; the "
                   "quantities are printed at the band centre unless --frequency is given (overrides [analysis] band)")
    s.add_argument("--verbose", action="store_true", help="show the refinement loop (mesh size, unknowns, "
                   "error estimate at each step) on stderr")
    s.add_argument("--conductor", metavar="NAME|S/m", help="wall metal (copper, silver, gold, aluminium, brass, "
                   "stainless steel) or its conductivity in S/m (overrides [analysis] conductor)")
    w = sub.add_parser("sweep", help="solve a case file at every point of its [sweep] table",
                       description="Vary the [guide] parameters named in the case file's [sweep] table, solve "
                       "the guide at every point (in parallel), and print the cutoffs and the single-mode band "
                       "of each point.  With a store, every finished point is kept on disk and a second run "
                       "computes only the missing points.")
    _common(w, "the case file, with a [sweep] table")
    w.add_argument("--csv", metavar="PATH", help="also write the points to a CSV file (one row per point and mode)")
    w.add_argument("--netcdf", metavar="PATH", help="also write the points as a netCDF file (xarray)")
    w.add_argument("--store", metavar="PATH", help="keep every finished point in PATH and resume from it "
                   "(overrides [sweep] store)")
    w.add_argument("--workers", metavar="N", help="local processes (overrides [sweep] workers)")
    w.add_argument("--scheduler", metavar="ADDRESS", help="run the points on a dask.distributed scheduler")
    w.add_argument("--figure", metavar="PATH", help="write the design curves (one parameter) or the map of the "
                   "dominant cutoff (two) to PATH (.png, .svg, .pdf)")
    for verb, what in (("seek", "find the [seek] table's free parameters that meet its targets"),
                       ("sensitivity", "d fc / d parameter of every mode for every [guide] dimension (and [[region]] eps_r, mu_r)"),
                       ("tolerance", "the spread of the cutoffs and band under the [tolerance] table's tolerances")):
        v = sub.add_parser(verb, help=what, description=what[0].upper() + what[1:] + ", for the guide of a case "
                           "file (its [solve] modes and accuracy).")
        _common(v, "the case file")
        if verb == "tolerance":
            v.add_argument("--figure", metavar="PATH", help="write the histograms of the band edges and the ratio")
    c = sub.add_parser("selfcheck", help="check this install against published and closed-form reference cases",
                       description="Solve a bundled set of reference cases (closed forms, published eigenvalues; "
                       "each names its source) and print, per case, femodes' true error against its own error "
                       "bar and the asked accuracy.  Exit status 0 when every value passes, 1 when some fail.",
                       epilog=f"Fast set: {', '.join(case_names())}.  Thorough set adds: "
                       f"{', '.join(n for n in case_names(True) if n not in case_names())}.")
    c.add_argument("--thorough", action="store_true", help="more cases, each at several accuracies (half a minute to minutes)")
    c.add_argument("--details", action="store_true", help="print every value and each case's source")
    c.add_argument("--json", action="store_true", help="print a JSON document instead of the table")
    c.add_argument("--case", metavar="NAME", action="append", help="run only this case (may be repeated)")
    sub.add_parser("shapes", help="list the shapes a case file can use and their keys",
                   description="List the shapes of the [guide] table and the keys each one takes.")
    return p


def _common(parser, case_help):
    """The case file and the options every command takes: --json, --modes, --accuracy."""
    parser.add_argument("case", metavar="CASE.toml", help=case_help)
    parser.add_argument("--json", action="store_true", help="print a JSON document (SI units) instead of the table")
    parser.add_argument("--modes", metavar="N", help="number of modes (overrides [solve] modes)")
    parser.add_argument("--accuracy", metavar="X", help="relative accuracy of the cutoffs, e.g. 1e-6 "
                        "(overrides [solve] accuracy)")


def main(argv=None) -> int:
    """Run the program with ``argv`` (default: sys.argv[1:]); returns the exit status."""
    if hasattr(sys.stdout, "reconfigure"):
        try:
            sys.stdout.reconfigure(errors="replace")
        except (ValueError, OSError):  # a stream that cannot be reconfigured
            pass
    parser = _parser()
    try:
        args = parser.parse_args(argv)
    except _UsageError as exc:
        return _fail(str(exc))
    except SystemExit as exc:  # --help, --version
        return int(exc.code or 0)
    try:
        if args.command == "solve":
            return _solve(args)
        if args.command == "sweep":
            return _sweep(args)
        if args.command in ("seek", "sensitivity", "tolerance"):
            return _study(args)
        if args.command == "selfcheck":
            return _selfcheck(args)
        if args.command == "shapes":

            print(shapes_help())
            return 0
        return _fail("choose a command: solve, sweep, seek, sensitivity, tolerance, selfcheck or shapes (see 'femodes --help')")
    except FemodesError as exc:
        return _fail(str(exc))
    except OSError as exc:  # output into a missing or read-only directory, a full disk, ...
        if getattr(exc, "filename", None) is None and getattr(args, "scheduler", None):  # dask: no connection
            return _fail(f"cannot reach the scheduler at --scheduler {args.scheduler}: {exc}; check the address "
                         "and that the scheduler is running")
        where = f" ({exc.filename})" if getattr(exc, "filename", None) else ""
        return _fail(f"{exc.strerror or exc}{where}: check that the directory exists, is writable and has room")
    except MemoryError:
        return _fail("out of memory: ask for a looser accuracy or fewer modes")
    except KeyboardInterrupt:
        print("femodes: interrupted", file=sys.stderr)
        return 130


def _sweep(args):
    case = _load(args.case).with_options(modes=args.modes, accuracy=args.accuracy)
    workers = None
    if args.workers is not None:
        try:
            workers = int(args.workers)
        except ValueError:
            workers = 0
        if workers < 1 or str(workers) != args.workers.strip():
            return _fail(f"--workers must be a whole number >= 1, got {args.workers!r}")
    t0 = time.perf_counter()
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        with _named(case):
            try:
                result = run_sweep(case, store=args.store, workers=workers, scheduler=args.scheduler)
            except KeyboardInterrupt:
                if args.store:
                    kept = stored_points(args.store)
                    print(f"femodes: interrupted; {kept} finished points are kept in {args.store}: the same command "
                          "again computes only the rest", file=sys.stderr)
                else:
                    print("femodes: interrupted; nothing was kept (give --store FILE to keep finished points)",
                          file=sys.stderr)
                return 130
    _print_warnings(caught)
    seconds = time.perf_counter() - t0
    labels = case.sweep.labels
    written = []
    if args.csv:
        written.append(result.to_csv(args.csv))
    if args.netcdf:
        written.append(result.to_netcdf(args.netcdf))
    if args.figure:
        os.environ.setdefault("MPLBACKEND", "Agg")
        s = case.sweep
        if len(result.names) == 1:
            figures.design_curves(result, args.figure, spec_band=s.spec_band, target=s.target)
        else:
            figures.design_map(result, args.figure, target=s.target)
        written.append(args.figure)
    if args.json:
        doc = sweep_document(result, title=case.title, labels=labels)
        doc["files"] = written
        print(json.dumps(doc, indent=2, allow_nan=False))
        return 0
    sys.stdout.write(sweep_table(result, title=case.title, labels=labels, seconds=seconds,
                                 length=(case.units, UNITS[case.units])))
    for p in written:
        print(f"wrote {p}")
    return 0


def _study(args):
    case = _load(args.case).with_options(modes=args.modes, accuracy=args.accuracy)
    kind = args.command
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        with _named(case):
            if kind == "seek":
                result, labels = run_seek(case), case.seek.labels if case.seek else {}
            elif kind == "sensitivity":
                result, labels = run_sensitivity(case), {}
            else:
                result, labels = run_tolerance(case), case.tolerance.labels if case.tolerance else {}
    _print_warnings(caught)
    written = []
    if kind == "tolerance" and args.figure:
        os.environ.setdefault("MPLBACKEND", "Agg")
        figures.tolerance_histogram(result, args.figure)
        written.append(args.figure)
    if args.json:
        doc = study_document(kind, result, labels=labels, title=case.title)
        doc["files"] = written
        print(json.dumps(doc, indent=2, allow_nan=False))
        return 0
    table = {"seek": seek_table, "sensitivity": sensitivity_table, "tolerance": tolerance_table}[kind]
    sys.stdout.write(table(result, labels=labels, title=case.title))
    for p in written:
        print(f"wrote {p}")
    return 0


def _selfcheck(args):
    result = selfcheck(thorough=args.thorough, cases=args.case)
    if args.json:
        print(json.dumps(selfcheck_document(result), indent=2, allow_nan=False))
    else:
        sys.stdout.write(selfcheck_table(result, details=args.details))
    return 0 if result.passed else EXIT_CHECK_FAILED


def _load(path):
    """The case file, its warnings (e.g. [output] without figures) printed as the solve's are."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        case = load_case(path)
    _print_warnings(caught)
    return case


def _print_warnings(caught):
    shown = set()  # each distinct message once (the refinement repeats solves on similar meshes)
    for w in caught:
        msg = str(w.message)
        if issubclass(w.category, (RuntimeWarning, UserWarning)) and msg not in shown:
            shown.add(msg)
            print(f"femodes: warning: {msg[len('femodes: '):] if msg.startswith('femodes: ') else msg}",
                  file=sys.stderr)


class _named:
    """Errors of a loaded case's run (the solve, its analysis, a study) start with the case file's
    name, as the errors of loading it do."""

    def __init__(self, case):
        self.path = case.path

    def __enter__(self):
        return self

    def __exit__(self, kind, exc, tb):
        if isinstance(exc, FemodesError) and self.path and not str(exc).startswith(f"{self.path}:"):
            raise FemodesError(f"{self.path}: {exc}") from None
        return False


def _fail(message):
    print(f"femodes: error: {message}", file=sys.stderr)
    return EXIT_USAGE


def _solve(args):
    if not args.verbose:
        return _solve_case(args)
    before = os.environ.get("FEMODES_DEBUG")
    os.environ["FEMODES_DEBUG"] = "1"  # the solvers' refinement log, for this command only
    try:
        return _solve_case(args)
    finally:
        if before is None:
            os.environ.pop("FEMODES_DEBUG", None)
        else:
            os.environ["FEMODES_DEBUG"] = before


def _solve_case(args):
    case = _load(args.case).with_options(modes=args.modes, accuracy=args.accuracy, figures_dir=args.figures,
                                             fmt=args.format, no_figures=args.no_figures, frequency=args.frequency,
                                             band=args.band, conductor=args.conductor)
    if case.output.figures:
        os.environ.setdefault("MPLBACKEND", "Agg")
        check_figures(case.output)  # fail before a long solve, not after it
    if args.fields and not any(args.fields.lower().endswith(e) for e in (".vtu", ".xdmf", ".xmf", ".vtk")):
        return _fail(f"--fields {args.fields}: use a name ending in .vtu (ParaView) or .xdmf; the ending names the "
                     "file format")
    with warnings.catch_warnings(record=True) as caught:  # the analysis's re-solves warn too
        warnings.simplefilter("always")
        with _named(case):
            study = run_case(case)
            analysis = analyse(study, case.analysis) if case.analysis is not None else None
    _print_warnings(caught)
    csv_paths = write_csv(study, args.csv, analysis) if args.csv else None
    fields_path = write_fields(study, args.fields) if args.fields else None
    figures = write_figures(study, case.output, analysis)
    if args.json:
        doc = report_document(study, analysis=analysis, title=case.title)
        doc["files"] = {"csv": csv_paths, "fields": fields_path, "figures": figures}
        print(json.dumps(doc, indent=2, allow_nan=False))
        return 0
    sys.stdout.write(report_table(study, analysis, title=case.title))
    for p in (csv_paths or []) + [fields_path] + figures:
        if p:
            print(f"wrote {p}")
    return 0
