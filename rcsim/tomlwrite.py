"""Writing TOML: the user's own scenario text edited to hold new values, or a new document.

Python reads TOML (:mod:`tomllib`) but does not write it; :mod:`tomlkit` (a style-preserving TOML
library) does both. :func:`update` is how a fitted scenario is written back: the user's text is
parsed with its comments, key order and layout, only the values that differ from the new data
are replaced (a replaced value keeps the comment beside it, and a literal string stays literal
when it can), and the result is read back with :mod:`tomllib` and compared with the data before
it is returned. :func:`dumps` writes a document from plain data when there is no text to edit.

Layout of :func:`dumps`: the top level and its sub-tables become ``[table]`` headers down to
``header_depth`` levels (``[nodes.payload]``); anything deeper is written inline
(``temperature = { sine = { mean = "25 degC", ... } }``); arrays of tables are inline tables, one
per line.

>>> print(dumps({"title": "box", "nodes": {"payload": {"capacity": "8.4 kJ/K", "initial": 5.0}}}))
title = "box"
<BLANKLINE>
[nodes.payload]
capacity = "8.4 kJ/K"
initial = 5.0
<BLANKLINE>
>>> print(update('[nodes.payload]  # the load\\ncapacity = "8 kJ/K"  # a guess\\n',
...              {"nodes": {"payload": {"capacity": "8.43 kJ/K"}}}), end="")
[nodes.payload]  # the load
capacity = "8.43 kJ/K"  # a guess

A scenario rcsim writes (a fitted or sized one, :func:`write_scenario`) is read back by the
same rule as a hand-written one: the files it names (``{ csv = { file = ... } }`` profiles, the
``[weather]`` record) must lie in its folder or below (:mod:`rcsim.inputfiles`). So the paths it
refers to are written relative to where it is written, and a file that would lie outside that
folder is copied beside it (under its own name, or ``<name>-2.csv``, ... when another file has
taken the name; an identical file already there is used as it is) and the scenario refers to the
copy. The written file then reads back with no option, and it keeps reading the data it was
fitted or sized with, even when the original file is later edited. What was copied is listed
in :attr:`Written.copied` for the command to say.
"""

from __future__ import annotations

import contextlib
import datetime as _dt
import filecmp
import math
import os
import shutil
import tomllib
from dataclasses import dataclass

import tomlkit
from tomlkit.items import String, StringType

__all__ = ["dumps", "update", "same", "write_scenario", "place_files", "Written", "Copied",
           "copy_lines"]

_SCALARS = (bool, int, float, str, _dt.date, _dt.time)
_LONG_LINE = 80  # an inline array longer than this (characters of its items) gets one per line


# -- a new document ------------------------------------------------------------------------
def dumps(data: dict, header_depth: int = 2) -> str:
    """TOML text of ``data`` (a dict as :func:`tomllib.loads` returns it).

    Parameters
    ----------
    data : dict
        Keys are strings; values are dicts, lists, str, int, float, bool or
        :mod:`datetime` date, time and datetime objects.
    header_depth : int
        Tables nested up to this depth get ``[a.b]`` headers; deeper ones are inline.

    Raises
    ------
    TypeError
        A value of a type TOML cannot hold (e.g. None), or a key that is not a string.
    """
    if not isinstance(data, dict):
        raise TypeError(f"a TOML document is a table, got {type(data).__name__}")
    doc = tomlkit.document()
    _fill(doc, data, header_depth)
    text = doc.as_string().lstrip("\n")
    return text + ("\n" if text and not text.endswith("\n") else "")


def _fill(container, table: dict, depth_left: int) -> None:
    """Values (and inline tables) of ``table`` first, then its sub-tables under headers."""
    children = []
    for key, value in table.items():
        _check_key(key)
        if isinstance(value, dict) and depth_left > 0:
            children.append((key, value))
        else:
            container.add(key, _inline(value))
    for key, value in children:
        own = any(not (isinstance(v, dict) and depth_left > 1) for v in value.values())
        # a header is needed when the table holds values of its own, or is empty and would vanish
        sub = tomlkit.table(is_super_table=not own and bool(value))
        _fill(sub, value, depth_left - 1)
        container.add(key, sub)


def _inline(value):
    """A tomlkit item written on the value's own line (tables inline, arrays bracketed)."""
    if isinstance(value, dict):
        table = tomlkit.inline_table()
        for key, item in value.items():
            _check_key(key)
            table.append(key, _inline(item))
        return table
    if isinstance(value, (list, tuple)):
        array = tomlkit.array()
        for item in value:
            array.append(_inline(item))
        long = sum(len(item.as_string()) for item in array) > _LONG_LINE
        array.multiline(bool(value) and (long or any(isinstance(v, dict) for v in value)))
        return array
    if isinstance(value, _SCALARS):
        return tomlkit.item(value)
    raise TypeError(f"TOML cannot hold {type(value).__name__} {value!r:.60}")


def _check_key(key) -> None:
    if not isinstance(key, str):
        raise TypeError(f"TOML keys are strings, got {type(key).__name__} {key!r}")


# -- the user's text, edited ----------------------------------------------------------------
def update(text: str, data: dict) -> str:
    """``text`` (a TOML document) changed so that it reads as ``data``, its style kept.

    Keys, comments, blank lines, table order and the way each unchanged value is written stay
    as they are; a value that differs is replaced in place, a key that ``data`` lacks is
    removed and a key that ``text`` lacks is added at the end of its table.

    Raises
    ------
    ValueError
        ``text`` is not TOML, or the edited text would not read back (with :mod:`tomllib`) as
        ``data``; the caller may then write a new document with :func:`dumps`.
    TypeError
        ``data`` holds a value TOML cannot hold.
    """
    try:
        doc = tomlkit.parse(text)
    except tomlkit.exceptions.TOMLKitError as exc:
        raise ValueError(f"not TOML: {exc}") from None
    _sync_table(doc, data)
    out = doc.as_string()
    try:
        back = tomllib.loads(out)
    except tomllib.TOMLDecodeError as exc:  # pragma: no cover - a tomlkit bug if reached
        raise ValueError(f"the edited text is not TOML: {exc}") from None
    if not same(back, data):
        raise ValueError("the edited text does not read back as the data")
    return out


def _sync_table(container, target: dict) -> None:
    for key in [k for k in container if k not in target]:
        del container[key]
    for key, value in target.items():
        _check_key(key)
        if key not in container:
            container[key] = _inline(value)
            continue
        current = container[key]
        plain = _plain(current)
        if same(plain, value):
            continue
        if isinstance(value, dict) and isinstance(plain, dict):
            _sync_table(current, value)
        elif _editable_array(current, plain, value):
            _sync_array(current, value)
        else:
            container[key] = _replacement(current, value)


def _sync_array(array, target: list) -> None:
    common = min(len(array), len(target))
    for i in range(common):
        current = array[i]
        plain, value = _plain(current), target[i]
        if same(plain, value):
            continue
        if isinstance(value, dict) and isinstance(plain, dict):
            _sync_table(current, value)
        elif _editable_array(current, plain, value):
            _sync_array(current, value)
        else:
            array[i] = _replacement(current, value)
    while len(array) > len(target):
        del array[len(array) - 1]
    for value in target[common:]:
        array.append(_inline(value))


def _editable_array(current, plain, value) -> bool:
    """An array edited item by item (its comments kept); an array of tables ([[name]]) only
    when the length stays, since its items are tables with headers of their own."""
    if not (isinstance(value, list) and isinstance(plain, list)):
        return False
    return isinstance(current, tomlkit.items.Array) or len(plain) == len(value)


def _replacement(current, value):
    """The new value as a tomlkit item, written like the one it replaces where it can be."""
    if (isinstance(current, String) and isinstance(value, str)
            and current.type is StringType.SLL and not set(value) & {"'", "\n", "\r"}):
        return tomlkit.string(value, literal=True)
    return _inline(value)


def _plain(item):
    """A tomlkit item (or a plain value) as the plain Python value tomllib would give."""
    return item.unwrap() if hasattr(item, "unwrap") else item


def same(a, b) -> bool:
    """Whether two TOML values are the same value of the same TOML type.

    Stricter than ``==``: ``1``, ``1.0`` and ``true`` differ (Python calls them equal), a date
    differs from a datetime, NaN equals NaN and 0.0 differs from -0.0.

    >>> same({"a": [1, 2.0]}, {"a": [1, 2.0]}), same(1, 1.0), same(True, 1)
    (True, False, False)
    """
    if isinstance(a, dict):
        return isinstance(b, dict) and a.keys() == b.keys() and all(same(a[k], b[k]) for k in a)
    if isinstance(a, (list, tuple)):
        return (isinstance(b, (list, tuple)) and len(a) == len(b)
                and all(same(x, y) for x, y in zip(a, b)))
    if isinstance(a, float) and isinstance(b, float):
        if math.isnan(a) or math.isnan(b):
            return math.isnan(a) and math.isnan(b)
        return a == b and math.copysign(1.0, a) == math.copysign(1.0, b)
    if isinstance(a, (_dt.datetime, _dt.time)) and type(a) is type(b):  # same offset, too
        return a == b and a.utcoffset() == b.utcoffset() and (a.tzinfo is None) == (b.tzinfo is None)
    return type(a) is type(b) and a == b


# -- a scenario written elsewhere -------------------------------------------------------------
@dataclass(frozen=True)
class Copied:
    """A file a written scenario refers to, copied beside it (or found there already)."""

    source: str   #: the file the scenario read (its real path)
    target: str   #: the copy beside the written scenario
    reused: bool = False   #: an identical file of that name was there already (nothing copied)


class Written(str):
    """The path of a written scenario (a ``str``, as before) with :attr:`copied`: the files
    copied beside it (a tuple of :class:`Copied`)."""

    copied: tuple = ()

    def __new__(cls, path, copied=()):
        out = super().__new__(cls, os.fspath(path))
        out.copied = tuple(copied)
        return out


def _file_references(data: dict):
    """(table, key, key path) of every file a scenario's data names: the ``file`` of each
    ``{ csv = {...} }`` profile, wherever it sits, and ``weather.file``."""
    found = []

    def walk(node, where):
        if isinstance(node, dict):
            for k, v in node.items():
                here = f"{where}.{k}" if where else str(k)
                if k == "csv" and isinstance(v, dict) and isinstance(v.get("file"), str):
                    found.append((v, "file", f"{here}.file"))
                else:
                    walk(v, here)
        elif isinstance(node, list):
            for i, v in enumerate(node):
                walk(v, f"{where}[{i}]")

    walk(data, "")
    weather = data.get("weather")
    if isinstance(weather, dict) and isinstance(weather.get("file"), str):
        found.append((weather, "file", "weather.file"))
    return found


def _inside(path: str, folder: str, where: str):
    """The real path ``path`` (relative to ``folder``) names when read by the rule for
    scenario files, or None where that rule refuses it."""
    from .errors import InputError
    from .inputfiles import resolve_input

    try:
        return resolve_input(path, folder, False, where)
    except InputError:
        return None


def place_files(data: dict, source_dir, folder) -> tuple[dict, list]:
    """``data`` (a scenario read from ``source_dir``) made to be written into ``folder``.

    Returns a copy of ``data`` whose file paths are relative to ``folder`` and lead to the same
    files inside it, and the copies needed: ``(source real path, name in folder, reused)`` for
    each file that lies outside ``folder`` (one copy per file, however often it is named).
    Nothing is written here.
    """
    import copy as _copy

    data = _copy.deepcopy(data)
    source_dir = os.path.abspath(os.fspath(source_dir))
    folder = os.path.abspath(os.fspath(folder))
    same_folder = os.path.realpath(source_dir) == os.path.realpath(folder)
    plans: dict[str, tuple[str, bool]] = {}   # source real path -> (name in folder, reused)
    taken: set[str] = set()
    for table, key, where in _file_references(data):
        written = table[key]
        real = os.path.realpath(os.path.join(source_dir, written))
        if same_folder and not os.path.isabs(written):
            moved = written
        else:
            lexical = os.path.normpath(os.path.join(source_dir, written))
            moved = os.path.relpath(lexical, folder).replace(os.sep, "/")
        if _inside(moved, folder, where) == real:
            table[key] = moved
            continue
        if real not in plans:
            plans[real] = _copy_name(real, os.path.basename(written) or "data.csv", folder,
                                     taken, where)
            taken.add(plans[real][0])
        table[key] = plans[real][0]
    return data, [(real, name, reused) for real, (name, reused) in plans.items()]


def _copy_name(real: str, name: str, folder: str, taken: set, where: str) -> tuple[str, bool]:
    """A name in ``folder`` for a copy of ``real``: its own name, or ``<stem>-<i><suffix>``
    when a different file has that name; (name, True) when an identical file is there."""
    stem, suffix = os.path.splitext(name)
    for i in range(1, 1000):
        candidate = name if i == 1 else f"{stem}-{i}{suffix}"
        if candidate in taken:
            continue
        target = os.path.join(folder, candidate)
        if not os.path.lexists(target):
            return candidate, False
        if (_inside(candidate, folder, where) is not None and os.path.isfile(target)
                and os.path.isfile(real) and filecmp.cmp(real, target, shallow=False)):
            return candidate, True
    from .errors import OutputError

    raise OutputError(f"no free name for a copy of {name!r} in {folder!r}", where)


def write_scenario(path, data: dict, source_dir, text_of, check=None) -> Written:
    """Write a scenario rcsim made from one read in ``source_dir`` (a fitted or sized one).

    ``data`` is the scenario's data; ``text_of(data)`` gives its TOML text (the user's own text
    edited, with a header). The files it names are placed for ``path``'s folder
    (:func:`place_files`; files outside it are copied beside it), the text is read back by the
    rule every scenario is read by (no file outside its folder) and compared with the data,
    ``check(scenario)`` may check more (raise to refuse), and the text is written under a
    temporary name renamed when complete. Copies made are removed again when anything fails.

    Returns
    -------
    Written
        The path, with the files copied beside it in ``.copied``.
    """
    from .atomic import atomic_path
    from .errors import OutputError, SolverError
    from .inputfiles import check_regular_file
    from .scenario import loads

    path = os.fspath(path)
    folder = os.path.dirname(os.path.abspath(path))
    placed, plans = place_files(data, source_dir, folder)
    made, copied = [], []
    try:
        for real, name, reused in plans:
            target = os.path.join(folder, name)
            if not reused:
                check_regular_file(real, real)      # still there, and a regular file
                with atomic_path(target) as tmp:    # a failed copy is one OutputError
                    shutil.copyfile(real, tmp)
                made.append(target)
            copied.append(Copied(real, target, reused))
        text = text_of(placed)
        back = loads(text, name=os.path.basename(path), base_dir=folder)
        if not same(back.data, placed):  # pragma: no cover - a bug if reached
            raise SolverError("the written scenario does not read back as the data")
        if check is not None:
            check(back)
        try:
            with atomic_path(path) as tmp, open(tmp, "w", encoding="utf-8",
                                                newline="\n") as fh:
                fh.write(text)
        except OSError as exc:  # pragma: no cover - atomic_path turns these into OutputError
            raise OutputError(f"cannot write ({exc.strerror})", path) from None
    except BaseException:
        for target in made:
            with contextlib.suppress(OSError):
                os.remove(target)
        raise
    return Written(path, copied)


def copy_lines(written) -> list[str]:
    """What a command says about the files copied beside a written scenario (none: [])."""
    lines = []
    for c in getattr(written, "copied", ()):
        shown = os.path.relpath(c.target) if not os.path.isabs(os.fspath(written)) else c.target
        if c.reused:
            lines.append(f"note: {os.fspath(written)} reads {shown}, an identical copy of "
                         f"{c.source} already there")
        else:
            lines.append(f"copied {c.source} to {shown}: it lies outside the folder of "
                         f"{os.fspath(written)}, which reads the copy")
    return lines
