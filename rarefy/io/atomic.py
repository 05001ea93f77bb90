"""Atomic file replacement: a reader (or a killed writer) never sees a half-written file.

The new content goes to a temporary file in the same folder, which is flushed to disk
(``fsync``) and renamed over the target (``os.replace``, atomic on POSIX and Windows);
the folder entry is flushed too. A process killed at any moment leaves the old file or
the new one, each complete, and at worst a stray temporary file that the next write of
the same target replaces.
"""

from __future__ import annotations

import os
from contextlib import contextmanager
from pathlib import Path

__all__ = ["atomic_path"]


def _fsync_dir(folder: Path) -> None:
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


@contextmanager
def atomic_path(path: Path):
    """Yield a temporary path next to ``path``; on success flush it and rename it over
    ``path``; on failure remove it and leave ``path`` as it was."""
    path = Path(path)
    tmp = path.with_name(f".{path.name}.tmp")   # one writer per run folder
    try:
        yield tmp
        with open(tmp, "rb+") as fh:
            os.fsync(fh.fileno())
        os.replace(tmp, path)
        _fsync_dir(path.parent)
    finally:
        if tmp.exists():
            tmp.unlink()
