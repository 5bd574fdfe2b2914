"""Explaining TOML syntax errors in a user's words: a key or table given twice is named.

:mod:`tomllib` says "Cannot overwrite a value (at line 9, column 10)" for a key written twice,
without the key. :func:`explain` reads the line it points at (and the table headers above it) and
says which key, and where it was first given. Standard library only.
"""

from __future__ import annotations

import re

__all__ = ["explain", "duplicate_key"]

_POSITION = re.compile(r"\(at line (\d+), column \d+\)|\(at end of document\)")
_PART = r'(?:[A-Za-z0-9_-]+|"(?:[^"\\]|\\.)*"|\'[^\']*\')'
_KEY = re.compile(rf"^\s*({_PART}(?:\s*\.\s*{_PART})*)\s*=")
_HEADER = re.compile(rf"^\s*(\[\[?)\s*({_PART}(?:\s*\.\s*{_PART})*)\s*\]\]?\s*(?:#.*)?$")
_TUPLE = re.compile(r"\((.*?),?\)")
_DUPLICATE = ("Cannot overwrite a value", "Cannot declare", "Duplicate inline table key",
              "Cannot redefine namespace", "Cannot mutate immutable namespace")


def _parts(key: str) -> list[str]:
    """``a."b c".d`` -> ``['a', 'b c', 'd']``."""
    return [p.strip().strip("\"'") for p in re.findall(_PART, key)]


def _dotted(parts) -> str:
    return ".".join(p if re.fullmatch(r"[A-Za-z0-9_-]+", p) else f'"{p}"' for p in parts)


def duplicate_key(message: str, text: str) -> tuple[str, int, int | None] | None:
    """(key path, line, first line or None) of a key or table a TOML error says is given twice,
    or None when the error is of another kind or the place cannot be read.

    >>> duplicate_key("Cannot overwrite a value (at line 4, column 3)",
    ...               "[nodes.a]\\ncapacity = 1\\ninitial = 2\\ncapacity = 3\\n")
    ('nodes.a.capacity', 4, 2)
    """
    if not message.startswith(_DUPLICATE):
        return None
    lines = text.splitlines()
    found = _POSITION.search(message)
    if found is None or not lines:
        return None
    if found.group(1):
        line = int(found.group(1))
    else:   # at the end of the document: the last line with content
        line = max(i + 1 for i, x in enumerate(lines) if x.strip())
    if not 1 <= line <= len(lines):
        return None
    if message.startswith("Cannot declare"):   # a table header given twice
        names = _TUPLE.search(message)
        parts = [p.strip().strip("'\"") for p in names.group(1).split(",") if p.strip()] \
            if names else []
        first = next((i + 1 for i, x in enumerate(lines[:line - 1])
                      if (m := _HEADER.match(x)) and _parts(m.group(2)) == parts), None)
        return _dotted(parts), line, first
    if message.startswith("Duplicate inline table key"):
        key = re.search(r"key '([^']*)'", message)
        outer = _KEY.match(lines[line - 1])   # the key the inline table is the value of
        path = _table_at(lines, line) + (_parts(outer.group(1)) if outer else [])
        return _dotted(path + ([key.group(1)] if key else [])), line, None
    m = _KEY.match(lines[line - 1])
    if m is None:
        return None
    key = _parts(m.group(1))
    table = _table_at(lines, line)
    start = _header_line(lines, line)
    first = next((i + 1 for i in range(start, line - 1)
                  if (k := _KEY.match(lines[i])) and _parts(k.group(1)) == key), None)
    return _dotted(table + key), line, first


def _header_line(lines, line) -> int:
    """Index of the line after the last table header before ``line`` (0 if none)."""
    for i in range(line - 2, -1, -1):
        if _HEADER.match(lines[i]):
            return i + 1
    return 0


def _table_at(lines, line) -> list[str]:
    start = _header_line(lines, line)
    return _parts(_HEADER.match(lines[start - 1]).group(2)) if start else []


def explain(message: str, text: str) -> tuple[str, int | None, str | None]:
    """(message, line or None, hint) for a :class:`tomllib.TOMLDecodeError` message on ``text``:
    a key or table given twice is named, with the line of its first appearance.

    >>> explain("Cannot declare ('x',) twice (at line 3, column 3)", "[x]\\na = 1\\n[x]\\n")
    ('table [x] is declared twice (first at line 1)', 3, 'merge the two tables')
    """
    found = duplicate_key(message, text)
    if found is None:
        return f"TOML syntax error: {message}", None, None
    key, line, first = found
    where = f" (first at line {first})" if first else ""
    if message.startswith("Cannot declare"):
        return f"table [{key}] is declared twice{where}", line, "merge the two tables"
    if message.startswith("Duplicate inline table key"):
        return f"key {key!r} is given twice in one inline table", line, "keep one of them"
    return f"key {key!r} is given twice{where}", line, "keep one of them"
