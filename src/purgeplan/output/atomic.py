"""Atomic file writes: a failed run never leaves a half-written or clobbered file.

:func:`file_problem` and :func:`folder_problem` say before any work is done
whether an output could be written where it is asked for, so that a long run
does not fail at its end.
"""

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


def _folder_words(folder: Path) -> str:
    return "the current folder" if str(folder) in ("", ".") else f"folder {folder}"


def _probe(folder: Path, name: str) -> str | None:
    """Why no file can be created in ``folder`` (a temporary file is made and removed)."""
    try:
        fd, probe = tempfile.mkstemp(dir=folder, prefix=f".{name}.{os.getpid()}.",
                                     suffix=".part")
    except OSError as exc:
        return (f"cannot write in {_folder_words(folder)} ({exc.strerror or exc}); "
                "choose another folder")
    os.close(fd)
    with contextlib.suppress(OSError):
        os.unlink(probe)
    return None


def file_problem(path: str | Path) -> str | None:
    """Why :func:`write_atomically` could not write ``path``, in plain words, or None.

    The folder must exist (none is created) and take a new file; an existing
    ``path`` must be a regular file, which the write then replaces.
    """
    path = Path(path)
    folder = path.parent
    if path.is_dir():
        return "is a folder; give a file name"
    if path.exists() and not path.is_file():
        return "exists and is not a regular file; give another file name"
    if not folder.exists():
        return f"{_folder_words(folder)} does not exist; create it first"
    if not folder.is_dir():
        return f"{folder} is not a folder"
    return _probe(folder, path.name)


def folder_problem(folder: str | Path) -> str | None:
    """Why files could not be written in ``folder``, in plain words, or None.

    A missing ``folder`` is fine when the folder that would hold it exists and
    takes a new entry (see :func:`make_folder`); missing parents are not created.
    """
    folder = Path(folder)
    if folder.exists():
        if not folder.is_dir():
            return "exists and is not a folder"
        return _probe(folder, "probe")
    parent = folder.parent
    if not parent.exists():
        return f"{_folder_words(parent)} does not exist; create it first"
    if not parent.is_dir():
        return f"{parent} is not a folder"
    return _probe(parent, folder.name)


def make_folder(folder: str | Path) -> Path:
    """Create ``folder`` if it is missing (its parent must exist)."""
    folder = Path(folder)
    folder.mkdir(exist_ok=True)
    return folder
