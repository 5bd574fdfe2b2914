"""Writing files so that nothing half-written ever stands under the requested name.

Every output file of rcsim (results, tables, figures, fitted scenarios) is written to a temporary
name in the destination folder and renamed over the requested name only when complete. A crash,
Ctrl-C or kill during writing leaves any previous file intact.
"""

from __future__ import annotations

import contextlib
import os
import tempfile

from .errors import InputError

__all__ = ["atomic_path", "temporary_beside", "commit", "discard"]


def _umask() -> int:
    # the process umask can only be read by setting it; do that once, read-only afterwards
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


_UMASK = _umask()


def temporary_beside(path, suffix: str = ".tmp") -> str:
    """Create an empty temporary file in the folder of ``path`` (with ordinary permissions)."""
    path = os.fspath(path)
    folder = os.path.dirname(os.path.abspath(path))
    if not os.path.isdir(folder):
        raise InputError("folder does not exist", os.path.dirname(path) or ".", "create it first")
    fd, tmp = tempfile.mkstemp(prefix=".rcsim-", suffix=suffix, dir=folder)
    os.close(fd)
    os.chmod(tmp, 0o666 & ~_UMASK)  # as an ordinary new file would be, not mkstemp's 0600
    return tmp


def commit(tmp: str, path) -> None:
    """Rename the finished temporary file over ``path``."""
    os.replace(tmp, os.fspath(path))


def discard(tmp: str) -> None:
    """Remove a temporary file if it is still there."""
    with contextlib.suppress(FileNotFoundError):
        os.remove(tmp)


@contextlib.contextmanager
def atomic_path(path, suffix: str = ".tmp"):
    """Yield a temporary path to write; rename it to ``path`` on success, remove it otherwise.

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
    except BaseException:
        discard(tmp)
        raise
