"""What a solve will cost, and how far it has come: memory and time per unknown, the memory this
machine has free, and the progress lines of a long accuracy loop.

Cost model (order-4 Lagrange elements on WR-90, SuperLU shift-invert, one thread; measured on the
2-core development machine, see DEVELOPERS.md): the peak resident memory of one discrete solve
grows about linearly with the unknowns N (the sparse factor's fill dominates), BYTES_PER_UNKNOWN
covering the factor, the matrices, the Lanczos basis and the two meshes the loop keeps; the time
grows a little faster than linearly (SECONDS_PER_UNKNOWN at the reference size, exponent
TIME_EXPONENT).  These are estimates to refuse what cannot fit, not promises.
"""

from __future__ import annotations

import sys
import time

try:  # optional: only where /proc/meminfo is missing
    import psutil
except ImportError:  # pragma: no cover
    psutil = None

__all__ = ["available_memory", "predicted_memory", "predicted_time", "Progress", "BYTES_PER_UNKNOWN"]

# peak resident bytes per unknown of one step of the accuracy loop (measured, rounded up)
BYTES_PER_UNKNOWN = 5500.0
# seconds of one step of the accuracy loop at REFERENCE_UNKNOWNS, and its growth exponent (measured)
SECONDS_PER_UNKNOWN = 2.0e-4
REFERENCE_UNKNOWNS = 1.0e5
TIME_EXPONENT = 1.2
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


def predicted_memory(n_unknowns):
    """Peak bytes of one accuracy-loop step with ``n_unknowns`` unknowns (the cost model above)."""
    return BYTES_PER_UNKNOWN * float(n_unknowns)


def predicted_time(n_unknowns):
    """Seconds of one accuracy-loop step with ``n_unknowns`` unknowns on this kind of machine."""
    n = float(n_unknowns)
    return SECONDS_PER_UNKNOWN * REFERENCE_UNKNOWNS * (n / REFERENCE_UNKNOWNS) ** TIME_EXPONENT


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
