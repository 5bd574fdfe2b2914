"""A cheap scan of TOML text before it is parsed: how deep its keys and values nest.

Python's TOML reader takes time and memory that grow with the square of a dotted key's length
(a 40 KB key of 20,000 parts takes about 1.5 GB and 20 s), and recurses once per level of
nested arrays and inline tables. A scenario nests a handful of levels; :func:`check_nesting`
refuses text whose keys have more than :data:`MAX_KEY_PARTS` parts or whose values nest more
than :data:`MAX_DEPTH` levels, in one pass over its tokens (strings and comments skipped), so
such a file costs milliseconds, not gigabytes.
"""

from __future__ import annotations

import re

from .errors import ScenarioError

__all__ = ["check_nesting", "nesting", "MAX_KEY_PARTS", "MAX_DEPTH"]

#: most parts of one key (``a.b.c`` has 3), a table header's included
MAX_KEY_PARTS = 64
#: most levels of arrays and inline tables inside one another
MAX_DEPTH = 64

_TOKEN = re.compile(r'"""(?:[^"\\]|\\.|"(?!""))*"""|\'\'\'(?:[^\']|\'(?!\'\'))*\'\'\''
                    r'|"(?:[^"\\\n]|\\.)*"|\'[^\'\n]*\'|#[^\n]*|[\[\]{}=,.\n]', re.S)


def nesting(text: str) -> tuple[int, int, int, int]:
    """(most parts of a key, its line, most levels of nested values, their line).

    >>> nesting('a.b.c = 1\\n[x.y]\\nz = { p = [[1, 2.5]], "q.r" = 2 }\\n')
    (3, 1, 3, 3)
    """
    parts = depth = 0
    parts_line = depth_line = line = 1
    stack: list[str] = []          # open arrays '[' and inline tables '{' of the current value
    in_key = True                  # reading a key (line start, or after '{' or ',' in a table)
    header = False                 # inside [table] or [[array of tables]]
    key_parts = 1
    for m in _TOKEN.finditer(text):
        tok = m.group()
        if tok == "\n" or tok.startswith(('"""', "'''")):
            line += tok.count("\n")
            if tok == "\n" and not stack:
                in_key, header, key_parts = True, False, 1
            continue
        if tok[0] == "#" or tok[0] in "\"'":
            continue
        if in_key:
            if tok == ".":
                key_parts += 1
                if key_parts > parts:
                    parts, parts_line = key_parts, line
            elif tok == "[" and not stack:
                header = True
            elif tok == "]" and header:
                in_key = False
            elif tok == "=":
                in_key, key_parts = False, 1
            elif tok == "}" and stack:          # an empty inline table
                stack.pop()
                in_key = False
            continue
        if tok in "[{":
            stack.append(tok)
            if len(stack) > depth:
                depth, depth_line = len(stack), line
            if tok == "{":
                in_key, key_parts = True, 1
        elif tok in "]}" and stack:
            stack.pop()
        elif tok == "," and stack and stack[-1] == "{":
            in_key, key_parts = True, 1
    return max(parts, 1), parts_line, depth, depth_line


def check_nesting(text: str, name: str) -> None:
    """Refuse scenario text (named ``name``) whose keys or values nest too deep to parse
    safely."""
    parts, parts_line, depth, depth_line = nesting(text)
    if parts > MAX_KEY_PARTS:
        raise ScenarioError(f"line {parts_line}: a key of {parts} dotted parts; a scenario key has at "
                            f"most {MAX_KEY_PARTS}", name)
    if depth > MAX_DEPTH:
        raise ScenarioError(f"line {depth_line}: values nested {depth} levels deep; a scenario nests "
                            f"at most {MAX_DEPTH}", name)
