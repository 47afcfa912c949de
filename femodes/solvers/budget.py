"""What a solve will cost, and how far it has come: memory and time per refinement step, the
memory this machine has free, and the progress lines of a long accuracy loop.

Cost model: the eigen stage's measured costs of the linear-algebra backend that will factorise
the matrix (:func:`femodes.solvers.backends.predicted_cost`: log-log interpolation of
time and peak resident memory measured by benchmarks/bench_backend.py, as bands for the noise
of a shared machine).  Memory: the top of the band (the factor's fill dominates; it covered the
accuracy loop's measured peak, 4.4-5.0 kB per unknown with SuperLU at 55k-123k unknowns).  Time
of one refinement step: the middle of the band times STEP_OVER_EIGEN for meshing, assembly and
the labels (measured: 23 s for a whole step at 123k unknowns against 11.8 s for SuperLU's eigen
stage at 113k).  These are estimates to refuse what cannot fit, not promises.
"""

from __future__ import annotations

import math
import sys
import time

try:  # optional: only where /proc/meminfo is missing
    import psutil
except ImportError:  # pragma: no cover
    psutil = None

from femodes.solvers.backends import predicted_cost

__all__ = ["available_memory", "predicted_memory", "predicted_time", "fitting_unknowns", "Progress", "STEP_OVER_EIGEN"]

#: a whole refinement step (mesh, assembly, eigen stage, labels) over the eigen stage alone (measured)
STEP_OVER_EIGEN = 2.0
# measured (2026-12-05, WR-90, p = 4, fixed mesh size, peak RSS above the interpreter's): 55k
# unknowns 10 modes 4.6 kB / unknown, 8.1 s; 123k 10 modes 4.4 kB, 23 s; 123k 40 modes 5.0 kB, 53 s


def available_memory():
    """Bytes of memory available to a new solve: MemAvailable of /proc/meminfo (Linux), else
    psutil's figure if psutil is installed, else None (unknown: nothing is refused)."""
    try:
        with open("/proc/meminfo") as fh:
            for line in fh:
                if line.startswith("MemAvailable:"):
                    return float(line.split()[1]) * 1024.0
    except OSError:
        pass
    if psutil is None:
        return None
    return float(psutil.virtual_memory().available)


def predicted_memory(n_unknowns, modes=10):
    """Peak bytes of one accuracy-loop step with ``n_unknowns`` unknowns: the top of the measured
    band of the backend that would factorise it (:func:`~femodes.solvers.backends.predicted_cost`)."""
    return float(predicted_cost(n_unknowns, modes=modes)[1][1])


def predicted_time(n_unknowns, modes=10):
    """Seconds of one accuracy-loop step with ``n_unknowns`` unknowns on this kind of machine: the
    middle of the backend's measured band for the eigen stage, times :data:`STEP_OVER_EIGEN`."""
    lo, hi = predicted_cost(n_unknowns, modes=modes)[0]
    return STEP_OVER_EIGEN * math.sqrt(lo * hi)


def fitting_unknowns(nbytes, modes=10):
    """The largest number of unknowns whose :func:`predicted_memory` stays within ``nbytes``
    (bisection on the monotone model; 0 if not even a small problem fits)."""
    lo, hi = 0.0, 1e4
    if predicted_memory(hi, modes) > nbytes:
        return 0.0
    while predicted_memory(hi, modes) <= nbytes and hi < 1e12:
        lo, hi = hi, 4 * hi
    for _ in range(60):
        mid = math.sqrt(lo * hi) if lo > 0 else hi / 2
        if predicted_memory(mid, modes) <= nbytes:
            lo = mid
        else:
            hi = mid
        if hi / max(lo, 1.0) < 1.001:
            break
    return lo


def _gb(nbytes):
    return f"{nbytes / 1e9:.1f} GB"


class Progress:
    """Progress lines of a long solve on stderr, only when stderr is a terminal.

    One line per refinement step (step, unknowns, worst estimate, elapsed time) once the solve has
    run for ``after`` seconds; nothing at all when stderr is a pipe or a file (scripts and the
    report's output stay as they are).  The stream is looked up when the line is written, so a
    caller that replaces sys.stderr is followed."""

    def __init__(self, after=2.0):
        self.start = time.monotonic()
        self.after = after
        self.shown = False

    def step(self, step, n_unknowns, estimate, accuracy):
        elapsed = time.monotonic() - self.start
        stream = sys.stderr
        isatty = getattr(stream, "isatty", None)
        if elapsed < self.after or not (callable(isatty) and isatty()):
            return
        stream.write(f"femodes: step {step}: {n_unknowns} unknowns, estimated error {estimate:.1e} "
                     f"(asked {accuracy:.0e}), {elapsed:.1f} s\n")
        stream.flush()
        self.shown = True

    def next_mesh(self, n_unknowns):
        """Announce the next mesh before a step expected to take long (terminal only)."""
        elapsed = time.monotonic() - self.start
        stream = sys.stderr
        isatty = getattr(stream, "isatty", None)
        if not (callable(isatty) and isatty()) or (elapsed < self.after and predicted_time(n_unknowns) < self.after):
            return
        stream.write(f"femodes: next mesh about {n_unknowns} unknowns, expected about "
                     f"{predicted_time(n_unknowns):.0f} s and {_gb(predicted_memory(n_unknowns))}\n")
        stream.flush()
