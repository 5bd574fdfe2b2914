"""Writing files so that nothing half-written ever stands under the requested name.

Every output file of rcsim (results, tables, figures, fitted scenarios) is written to a temporary
name in the destination folder and renamed over the requested name only when complete. A crash,
Ctrl-C or kill during writing leaves any previous file intact; a write that fails (folder not
writable, disk full, file size limit) removes the temporary file and raises one
:class:`rcsim.errors.OutputError` naming the file and the reason.

Outputs are checked before any work (:func:`check_writable`, :func:`check_folder_writable`): the
folder exists, is a folder, and a file can be created in it (tried, not guessed from permission
bits, which say nothing for root or read-only file systems).
"""

from __future__ import annotations

import contextlib
import errno as _errno
import os
import re
import tempfile

from .errors import OutputError

__all__ = ["atomic_path", "temporary_beside", "commit", "discard", "check_writable",
           "check_folder_writable", "make_folder", "write_failure", "TEMPORARY_PREFIX"]

#: every temporary file rcsim writes starts with this (and ends with ``.tmp``)
TEMPORARY_PREFIX = ".rcsim-"


def _umask() -> int:
    # the process umask can only be read by setting it; do that once, read-only afterwards
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


_UMASK = _umask()


def write_failure(exc: BaseException, path, where: str | None = None) -> OutputError:
    """The one-line error for ``exc`` (an OSError, or a library's error wrapping one) met while
    writing ``path``: the file, and the system's reason (``No space left on device``...)."""
    return OutputError(f"cannot write {os.fspath(path)!r} ({_reason(exc)})", where,
                       _remedy(exc))


def _errno_of(exc: BaseException) -> int | None:
    number = getattr(exc, "errno", None)
    if isinstance(number, int) and number > 0:
        return number
    # HDF5 reports the system's errno inside its message: "... errno = 28, error message = ..."
    found = re.search(r"errno = (\d+)", str(exc))
    return int(found.group(1)) if found else None


def _reason(exc: BaseException) -> str:
    number = _errno_of(exc)
    if number is not None:
        return os.strerror(number)
    lines = str(exc).strip().splitlines()
    text = lines[0] if lines else type(exc).__name__
    return text if len(text) <= 120 else text[:117] + "..."


def _remedy(exc: BaseException) -> str | None:
    number = _errno_of(exc)
    if number in (_errno.ENOSPC, _errno.EDQUOT, _errno.EFBIG):
        return "free some space or write elsewhere"
    if number in (_errno.EACCES, _errno.EPERM, _errno.EROFS):
        return "choose a folder you can write to"
    return None


def _folder_of(path) -> str:
    return os.path.dirname(os.path.abspath(os.fspath(path)))


def _check_folder(folder: str, shown: str, where: str | None) -> None:
    """Refuse a folder that is missing or not a folder, and one where no file can be created."""
    if not os.path.isdir(folder):
        if os.path.exists(folder):
            raise OutputError(f"{shown!r} is not a folder", where,
                              "give a path in an existing folder")
        raise OutputError(f"folder {shown!r} does not exist", where, "create it first")
    try:
        fd, probe = tempfile.mkstemp(prefix=TEMPORARY_PREFIX, suffix=".tmp", dir=folder)
    except OSError as exc:
        raise OutputError(f"cannot write in folder {shown!r} ({_reason(exc)})", where,
                          "choose a folder you can write to") from None
    os.close(fd)
    discard(probe)


def check_writable(path, where: str | None = None) -> None:
    """Refuse, before any work, an output file that could not be written: its folder is missing
    or not a folder or not writable, or the path is a folder.

    ``where`` names the option (``--output``); the message names the path.
    """
    path = os.fspath(path)
    _check_folder(_folder_of(path), os.path.dirname(path) or ".", where)
    if os.path.isdir(path):
        raise OutputError(f"{path!r} is a directory", where, "give a file name")


def check_folder_writable(folder, where: str | None = None) -> None:
    """Refuse, before any work, a folder for outputs that could not be made or written: it is
    something else than a folder, or its nearest existing parent is not a writable folder (it
    is created only when the outputs are written)."""
    folder = os.fspath(folder)
    if os.path.exists(folder) and not os.path.isdir(folder):
        raise OutputError(f"{folder!r} exists and is not a folder", where)
    existing = os.path.abspath(folder)
    while not os.path.exists(existing):
        parent = os.path.dirname(existing)
        if parent == existing:
            break
        existing = parent
    shown = folder if existing == os.path.abspath(folder) else existing
    _check_folder(existing, shown, where)


def make_folder(folder, where: str | None = None) -> None:
    """Create ``folder`` (and its parents) for outputs, or raise one OutputError."""
    try:
        os.makedirs(os.fspath(folder), exist_ok=True)
    except OSError as exc:
        raise write_failure(exc, folder, where) from None


def temporary_beside(path, suffix: str = ".tmp") -> str:
    """Create an empty temporary file in the folder of ``path`` (with ordinary permissions)."""
    path = os.fspath(path)
    folder = _folder_of(path)
    if not os.path.isdir(folder):
        _check_folder(folder, os.path.dirname(path) or ".", None)
    try:
        fd, tmp = tempfile.mkstemp(prefix=TEMPORARY_PREFIX, suffix=suffix, dir=folder)
    except OSError as exc:
        raise write_failure(exc, path) from None
    os.close(fd)
    os.chmod(tmp, 0o666 & ~_UMASK)  # as an ordinary new file would be, not mkstemp's 0600
    return tmp


def commit(tmp: str, path) -> None:
    """Rename the finished temporary file over ``path``."""
    os.replace(tmp, os.fspath(path))


def discard(tmp: str) -> None:
    """Remove a temporary file if it is still there."""
    with contextlib.suppress(OSError):
        os.remove(tmp)


@contextlib.contextmanager
def atomic_path(path, suffix: str = ".tmp"):
    """Yield a temporary path to write; rename it to ``path`` on success, remove it otherwise.

    An OSError while writing (disk full, no permission) becomes one
    :class:`rcsim.errors.OutputError` naming ``path``; the temporary file is removed.

    >>> import os, tempfile
    >>> d = tempfile.mkdtemp()
    >>> with atomic_path(os.path.join(d, "a.txt")) as tmp:
    ...     _ = open(tmp, "w").write("done")
    >>> open(os.path.join(d, "a.txt")).read(), [f for f in os.listdir(d) if f.endswith(".tmp")]
    ('done', [])
    """
    tmp = temporary_beside(path, suffix)
    try:
        yield tmp
        commit(tmp, path)
    except OSError as exc:
        discard(tmp)
        raise write_failure(exc, path) from None
    except BaseException:
        discard(tmp)
        raise
