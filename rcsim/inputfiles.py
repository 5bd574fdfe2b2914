"""Files rcsim reads because a user named them: where they may be, what they may be, and how
much of their text an error may show.

* A file a scenario names (a ``{ csv = ... }`` profile, a weather record) is found from the
  scenario's folder and must stay inside it once ``..`` and symbolic links are resolved; an
  absolute path, or one that leads outside, is read only when allowed
  (``--allow-absolute-paths``).
* Only regular files are read: a FIFO would block forever, a device such as ``/dev/zero`` would
  fill the memory; each file is checked with ``os.stat`` before it is opened.
* A file's size on disk is not trusted to bound what reading it gives: files of ``/proc`` and
  ``/sys`` report a size of 0 yet hold any amount. :func:`read_bytes` reads at most one byte more
  than a limit and refuses the file when that byte arrives.
* An error about a file's content quotes at most one short cell of it (:func:`quote_cell`),
  never whole lines of a file that may not be the user's.
"""

from __future__ import annotations

import os
import stat

from .errors import DataError, ScenarioError

__all__ = ["resolve_input", "check_regular_file", "read_bytes", "cut", "quote_cell", "quote_names", "CELL_CHARS"]

#: at most this many characters of a file's cell are quoted in an error
CELL_CHARS = 40

_KINDS = ((stat.S_ISFIFO, "a FIFO (named pipe)"), (stat.S_ISCHR, "a character device"),
          (stat.S_ISBLK, "a block device"), (stat.S_ISSOCK, "a socket"))


def resolve_input(file: str, base_dir: str, allow_outside: bool, where: str) -> str:
    """The real path of ``file``, named in a scenario whose folder is ``base_dir``.

    Relative paths are taken from ``base_dir``; ``..`` and symbolic links are resolved, and the
    result must lie inside ``base_dir`` unless ``allow_outside`` (which also admits absolute
    paths). ``where`` is the key (``boundaries.out.temperature.csv.file``).

    >>> import os, tempfile
    >>> d = tempfile.mkdtemp()
    >>> real = os.path.join(os.path.realpath(d), "b.csv")
    >>> resolve_input("a/../b.csv", d, False, "x.file") == real
    True
    >>> resolve_input("../b.csv", d, False, "x.file")
    Traceback (most recent call last):
    ...
    rcsim.errors.ScenarioError: x.file: '../b.csv' leads outside the scenario's folder (...)
    """
    hint = ("put the file in the scenario's folder or below it, or allow other places "
            "explicitly (--allow-absolute-paths)")
    if "\x00" in file:
        raise ScenarioError("a file name cannot hold a NUL character", where)
    if os.path.isabs(file) and not allow_outside:
        raise ScenarioError(f"absolute path {file!r} refused", where,
                            "use a path relative to the scenario file, or allow absolute "
                            "paths explicitly (--allow-absolute-paths)")
    real = os.path.realpath(os.path.join(base_dir, file))
    if allow_outside:
        return real
    base = os.path.realpath(base_dir)
    if os.path.commonpath([real, base]) != base:
        lexical = os.path.normpath(os.path.join(os.path.abspath(base_dir), file))
        inside = os.path.commonpath([lexical, os.path.abspath(base_dir)]) == \
            os.path.abspath(base_dir)
        how = " through a symbolic link" if inside else ""
        raise ScenarioError(f"{file!r} leads outside the scenario's folder{how}", where, hint)
    return real


def check_regular_file(path, label: str) -> os.stat_result:
    """Refuse, before opening it, a path that is missing, a folder, or not a regular file
    (FIFO, device, socket); returns its ``os.stat``."""
    try:
        st = os.stat(path)
    except FileNotFoundError:
        raise DataError("file not found", label,
                        f"looked for {os.path.abspath(os.fspath(path))}") from None
    except OSError as exc:
        raise DataError(f"cannot be read ({exc.strerror})", label) from None
    if stat.S_ISDIR(st.st_mode):
        raise DataError("is a directory, not a file", label)
    if not stat.S_ISREG(st.st_mode):
        kind = next((name for test, name in _KINDS if test(st.st_mode)), "not a regular file")
        raise DataError(f"is {kind}, not a regular file; only regular files are read", label)
    return st


#: bytes read at a time by :func:`read_bytes`
_CHUNK = 1 << 20


def read_bytes(path, label: str, limit: int | None, too_large: str = "",
               hint: str | None = None) -> bytes:
    """The content of the regular file ``path``, or DataError once more than ``limit`` bytes
    have come (``None``: no limit). At most ``limit + 1`` bytes are read, whatever size the file
    reports. ``too_large`` ends the message ("the most ... allowed"); ``label`` names the file.

    >>> import os, tempfile
    >>> path = os.path.join(tempfile.mkdtemp(), "a.csv")
    >>> with open(path, "w") as fh:
    ...     _ = fh.write("t,x\\n0,1\\n")
    >>> read_bytes(path, "a.csv", 8)
    b't,x\\n0,1\\n'
    >>> read_bytes(path, "a.csv", 7)
    Traceback (most recent call last):
    ...
    rcsim.errors.DataError: a.csv: is more than 7 bytes
    """
    check_regular_file(path, label)
    chunks, got = [], 0
    try:
        with open(path, "rb") as fh:
            while limit is None or got <= limit:
                want = _CHUNK if limit is None else min(_CHUNK, limit + 1 - got)
                chunk = fh.read(want)
                if not chunk:
                    break
                chunks.append(chunk)
                got += len(chunk)
    except OSError as exc:
        raise DataError(f"cannot be read ({exc.strerror})", label) from None
    if limit is not None and got > limit:
        raise DataError(f"is more than {_size(limit)}{too_large}", label, hint)
    return b"".join(chunks)


def _size(n: int) -> str:
    """A byte count for people: ``'7 bytes'``, ``'12.0 MB'``, ``'1.25 GB'``."""
    if n < 1e6:
        return f"{n} bytes"
    return f"{n / 1e6:.1f} MB" if n < 1e9 else f"{n / 1e9:.2f} GB"


def cut(text, limit: int = CELL_CHARS) -> str:
    """``text`` cut to ``limit`` characters (ending in "..." when cut).

    >>> cut("x" * 50, 10)
    'xxxxxxxxx...'
    """
    text = str(text)
    return text if len(text) <= limit else text[:limit - 1] + "..."


def quote_cell(text, limit: int = CELL_CHARS) -> str:
    """``text`` quoted as in Python, cut to ``limit`` characters (with "...").

    >>> quote_cell("21.5"), quote_cell("x" * 50, 10)
    ("'21.5'", "'xxxxxxxxx...'")
    """
    return repr(cut(text, limit))


def quote_names(names, most: int = 6) -> str:
    """A short list of a file's column names for an error: each cut by :func:`quote_cell`, at
    most ``most`` of them, then how many more."""
    names = list(names)
    shown = ", ".join(quote_cell(n) for n in names[:most])
    return shown + (f" and {len(names) - most} more" if len(names) > most else "")
