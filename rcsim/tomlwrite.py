"""A small TOML writer for the subset of TOML that scenario files use.

Python reads TOML (:mod:`tomllib`) but does not write it. Scenarios are plain data: tables,
inline tables, arrays, strings, integers, floats, booleans and dates, so a short emitter is enough
and keeps rcsim free of another dependency. Its output is checked by reading it back with
:mod:`tomllib` (the tests do this for arbitrary generated documents).

Layout: the top level and its sub-tables become ``[table]`` headers down to ``header_depth``
levels (``[nodes.payload]``); anything deeper is written inline
(``temperature = { sine = { mean = "25 degC", ... } }``); arrays of tables are inline tables, one
per line.

>>> print(dumps({"title": "box", "nodes": {"payload": {"capacity": "8.4 kJ/K", "initial": 5.0}}}))
title = "box"
<BLANKLINE>
[nodes.payload]
capacity = "8.4 kJ/K"
initial = 5.0
<BLANKLINE>
"""

from __future__ import annotations

import datetime as _dt
import math
import re

__all__ = ["dumps"]

_BARE_KEY = re.compile(r"[A-Za-z0-9_-]+")
_ESCAPES = {'"': '\\"', "\\": "\\\\", "\b": "\\b", "\t": "\\t", "\n": "\\n", "\f": "\\f",
            "\r": "\\r"}


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
        A value of a type TOML cannot hold (e.g. None).
    """
    if not isinstance(data, dict):
        raise TypeError(f"a TOML document is a table, got {type(data).__name__}")
    out: list[str] = []
    _table(data, [], header_depth, out)
    text = "\n".join(out).lstrip("\n")
    return text + ("\n" if text and not text.endswith("\n") else "")


def _table(table: dict, path: list[str], depth_left: int, out: list[str]) -> None:
    header_children = []
    body = []
    for key, value in table.items():
        if isinstance(value, dict) and depth_left > 0:
            header_children.append((key, value))
        else:
            body.append(f"{_key(key)} = {_value(value)}")
    # a header is needed when the table holds values of its own, or is empty and would vanish
    if path and (body or not header_children):
        out.append("")
        out.append("[" + ".".join(_key(k) for k in path) + "]")
    out.extend(body)
    for key, value in header_children:
        _table(value, path + [key], depth_left - 1, out)


def _key(key) -> str:
    if not isinstance(key, str):
        raise TypeError(f"TOML keys are strings, got {type(key).__name__} {key!r}")
    return key if _BARE_KEY.fullmatch(key) else _string(key)


def _string(text: str) -> str:
    parts = []
    for ch in text:
        if ch in _ESCAPES:
            parts.append(_ESCAPES[ch])
        elif ord(ch) < 0x20 or ord(ch) == 0x7F:
            parts.append(f"\\u{ord(ch):04X}")
        else:
            parts.append(ch)
    return '"' + "".join(parts) + '"'


def _float(x: float) -> str:
    if math.isnan(x):
        return "nan"
    if math.isinf(x):
        return "inf" if x > 0 else "-inf"
    text = repr(x)  # shortest text that reads back to the same float
    if "e" not in text and "." not in text:  # pragma: no cover - repr always has one of them
        text += ".0"
    return text


def _value(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        return _float(value)
    if isinstance(value, str):
        return _string(value)
    if isinstance(value, _dt.datetime):
        return value.isoformat()
    if isinstance(value, (_dt.date, _dt.time)):
        return value.isoformat()
    if isinstance(value, dict):
        if not value:
            return "{}"
        return "{ " + ", ".join(f"{_key(k)} = {_value(v)}" for k, v in value.items()) + " }"
    if isinstance(value, (list, tuple)):
        if not value:
            return "[]"
        items = [_value(v) for v in value]
        if any(isinstance(v, dict) for v in value) or sum(map(len, items)) > 80:
            return "[\n" + "".join(f"  {item},\n" for item in items) + "]"
        return "[" + ", ".join(items) + "]"
    raise TypeError(f"TOML cannot hold {type(value).__name__} {value!r:.60}")
