"""Files in the output folder, written without following symbolic links.

A file that orcscreen writes (ranking.csv, run-info.json, report.html, the run lock) is never
opened through a symbolic link that someone left in the output folder: a link there would
otherwise make a run truncate or overwrite the link's target.

* :func:`open_lock_file` opens the lock file with ``O_NOFOLLOW`` (open(2): the call fails with
  ELOOP when the last component is a symbolic link).
* :func:`atomic_write` and :func:`atomic_writer` write a temporary file created with
  ``O_CREAT | O_EXCL | O_NOFOLLOW`` (a stale temporary file or a link of that name is removed
  first; unlink(2) removes the link, never its target) and then rename it over the target
  (rename(2) replaces a link at the target name instead of following it), so a reader sees
  the old file or the new one, never a partial file.

:class:`OutputFolderError` says which path is at fault and what to do; the command line turns it
into exit status 2.
"""

from __future__ import annotations

import contextlib
import errno
import io
import os
import stat
from collections.abc import Iterator
from pathlib import Path
from typing import IO

__all__ = ["OutputFolderError", "open_lock_file", "atomic_write", "atomic_writer",
           "refuse_link", "describe_os_error"]

_NOFOLLOW = getattr(os, "O_NOFOLLOW", 0)
_CLOEXEC = getattr(os, "O_CLOEXEC", 0)


class OutputFolderError(OSError):
    """A file of the output folder cannot be written or read; the message names the path and
    says what to do."""

    def __str__(self) -> str:  # OSError's own form would prefix "[Errno n]"
        return str(self.args[0]) if self.args else "output folder error"


def describe_os_error(exc: OSError, path: str | os.PathLike[str] | None = None,
                      doing: str = "write") -> str:
    """One line naming the path, what went wrong in plain words and what to do."""
    where = str(path if path is not None else (exc.filename or "the output folder"))
    code = exc.errno
    if code in (errno.EACCES, errno.EPERM):
        return (f"{where}: permission denied (cannot {doing} it); make the folder writable "
                "for you, or choose another output folder with --out")
    if code == errno.EROFS:
        return (f"{where}: the file system is read-only; choose an output folder on a writable "
                "disk with --out")
    if code in (errno.ENOSPC, getattr(errno, "EDQUOT", -1)):
        return (f"{where}: no space left on the device (or the disk quota is used up); free some "
                "space or choose another output folder with --out; the cases stored so far "
                "are kept")
    if code == errno.ELOOP:
        return (f"{where}: is a symbolic link; orcscreen does not write through links in the "
                "output folder: remove the link (or choose another output folder with --out)")
    if code == errno.ENOTDIR:
        return (f"{where}: a part of this path is a file, not a folder; choose another output "
                "folder with --out")
    if code == errno.EISDIR:
        return f"{where}: is a folder where orcscreen writes a file; remove or rename it"
    if code == errno.ENAMETOOLONG:
        return f"{where}: the path is too long; choose a shorter output folder with --out"
    if code == errno.ENOENT:
        return f"{where}: no such file or folder; check the path"
    reason = exc.strerror or type(exc).__name__
    return f"{where}: cannot {doing} it ({reason}); check the output folder or choose another with --out"


def _as_output_error(exc: OSError, path: Path, doing: str = "write") -> OutputFolderError:
    err = OutputFolderError(describe_os_error(exc, path, doing))
    err.errno, err.filename = exc.errno, str(path)
    return err


def refuse_link(path: Path) -> None:
    """Raise :class:`OutputFolderError` when ``path`` exists as a symbolic link."""
    try:
        mode = os.lstat(path).st_mode
    except FileNotFoundError:
        return
    except OSError as exc:
        raise _as_output_error(exc, path, "read") from None
    if stat.S_ISLNK(mode):
        raise _as_output_error(OSError(errno.ELOOP, "symbolic link"), path)


def open_lock_file(path: Path) -> int:
    """Open (creating it if needed) the lock file ``path`` for reading and writing, never
    through a symbolic link; returns the descriptor."""
    try:
        return os.open(path, os.O_RDWR | os.O_CREAT | _NOFOLLOW | _CLOEXEC, 0o644)
    except OSError as exc:
        raise _as_output_error(exc, path) from None


def _temporary(path: Path) -> Path:
    return path.with_name(f".{path.name}.tmp")


def _create_exclusive(tmp: Path) -> int:
    with contextlib.suppress(FileNotFoundError):
        os.unlink(tmp)  # a stale temporary file, or a link of that name (never its target)
    return os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL | _NOFOLLOW | _CLOEXEC, 0o644)


@contextlib.contextmanager
def atomic_writer(path: str | os.PathLike[str], *, newline: str | None = "") -> Iterator[IO[str]]:
    """A text stream (UTF-8) whose contents replace ``path`` when the block ends without an
    error; on an error the temporary file is removed and ``path`` is left as it was."""
    path = Path(path)
    tmp = _temporary(path)
    try:
        fd = _create_exclusive(tmp)
    except OSError as exc:
        raise _as_output_error(exc, tmp) from None
    stream = io.open(fd, "w", encoding="utf-8", newline=newline)
    done = False
    try:
        yield stream
        stream.close()
        os.replace(tmp, path)
        done = True
    except OSError as exc:
        raise _as_output_error(exc, path) from None
    finally:
        if not stream.closed:
            with contextlib.suppress(OSError):
                stream.close()
        if not done:
            with contextlib.suppress(OSError):
                os.unlink(tmp)


def atomic_write(path: str | os.PathLike[str], text: str) -> None:
    """Replace ``path`` with ``text`` (UTF-8) through :func:`atomic_writer`."""
    with atomic_writer(path, newline=None) as stream:
        stream.write(text)
