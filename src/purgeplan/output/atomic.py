"""Atomic file writes: a failed run never leaves a half-written or clobbered file."""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Callable
from pathlib import Path


def write_atomically(path: str | Path, write: Callable[[Path], None]) -> Path:
    """Call ``write(tmp_path)`` and move the result onto ``path`` only when complete.

    The temporary file lives in the target folder so the final rename is
    atomic; it is removed whatever goes wrong, and an existing file at
    ``path`` stays byte-for-byte as it was.
    """
    path = Path(path)
    folder = path.parent if str(path.parent) else Path(".")
    fd, tmp_name = tempfile.mkstemp(dir=folder, prefix=f".{path.name}.", suffix=".part")
    os.close(fd)
    tmp = Path(tmp_name)
    try:
        write(tmp)
        with open(tmp, "rb") as handle:
            os.fsync(handle.fileno())
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(OSError):
            tmp.unlink()
        raise
    return path
