"""Output files written whole or not at all: every file femodes writes goes to a temporary name
beside its final one and is moved into place (os.replace, atomic on one file system) only when
complete, so an interrupted run (Ctrl-C, a killed process, a full disk) leaves either the old file
or the whole new one, never a truncated file under the final name."""

from __future__ import annotations

import os
from contextlib import contextmanager
from pathlib import Path

from femodes.errors import FemodesError

__all__ = ["replacing"]


@contextmanager
def replacing(path, what="output"):
    """Yield a temporary path (same folder, same suffix, so writers that choose the format by the
    suffix still work) and move it to ``path`` when the block ends without an error; on an error,
    remove it and re-raise (an OSError as one FemodesError naming the file)."""
    final = Path(path)
    tmp = final.with_name(f".{final.stem}.part-{os.getpid()}{final.suffix}")
    try:
        yield tmp
        os.replace(tmp, final)
    except OSError as exc:
        _remove(tmp)
        raise FemodesError(f"cannot write {what} file {final}: {exc.strerror or exc}") from None
    except BaseException:
        _remove(tmp)
        raise


def _remove(tmp):
    try:
        os.remove(tmp)
    except OSError:
        pass
