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
"""

from __future__ import annotations

import datetime as _dt
import math
import tomllib

import tomlkit
from tomlkit.items import String, StringType

__all__ = ["dumps", "update", "same"]

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
