"""Atomic file writes: a failed run never leaves a half-written or clobbered file."""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Callable
from glob import escape as glob_escape
from pathlib import Path


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def _sweep(folder: Path, name: str) -> None:
    """Remove temporary files left by earlier writes of ``name`` whose process is gone.

    A process killed outright (SIGKILL, power loss) cannot clean up after itself;
    its temporary file carries its process id, and the next write removes it.
    """
    for leftover in folder.glob(f".{glob_escape(name)}.*.part"):
        try:
            pid = int(leftover.name[len(name) + 2:].split(".", 1)[0])
        except ValueError:
            continue
        if pid == os.getpid() or _alive(pid):
            continue
        with contextlib.suppress(OSError):
            leftover.unlink()


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def write_atomically(path: str | Path, write: Callable[[Path], None]) -> Path:
    """Call ``write(tmp_path)`` and move the result onto ``path`` only when complete.

    The temporary file lives in the target folder so the final rename is
    atomic; it is removed whatever goes wrong, and an existing file at
    ``path`` stays byte-for-byte as it was.
    """
    path = Path(path)
    folder = path.parent if str(path.parent) else Path(".")
    _sweep(folder, path.name)
    fd, tmp_name = tempfile.mkstemp(dir=folder, prefix=f".{path.name}.{os.getpid()}.",
                                    suffix=".part")
    os.close(fd)
    tmp = Path(tmp_name)
    try:
        write(tmp)
        # mkstemp makes the file private; give it the mode a plain new file would have
        # (or keep the mode of the file it replaces)
        mode = path.stat().st_mode & 0o777 if path.exists() else 0o666 & ~_umask()
        os.chmod(tmp, mode)
        with open(tmp, "rb") as handle:
            os.fsync(handle.fileno())
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(OSError):
            tmp.unlink()
        raise
    return path
