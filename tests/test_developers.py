"""DEVELOPERS.md stays true to the repository: every file or folder it names exists, its picture
of the layers is the table that tests/test_layering.py enforces, and it points nowhere outside
the repository."""

from __future__ import annotations

import os
import re

from conftest import ROOT
from test_layering import LAYERS

DEVELOPERS = os.path.join(ROOT, "DEVELOPERS.md")

with open(DEVELOPERS, encoding="utf-8") as _fh:
    TEXT = _fh.read()


def _repository_paths() -> list[str]:
    """Every file and folder of the repository, relative, with '/' (folders end with '/')."""
    out = []
    for folder, dirs, files in os.walk(ROOT):
        dirs[:] = [d for d in dirs if not d.startswith(".") and d not in ("__pycache__",)
                   and not d.endswith(".egg-info")]
        rel = os.path.relpath(folder, ROOT).replace(os.sep, "/")
        rel = "" if rel == "." else rel + "/"
        out += [rel + d + "/" for d in dirs] + [rel + f for f in files]
    return out


def test_every_file_and_folder_named_exists():
    # a name in backticks that looks like a file (`exact_chunks.py`, `tests/air_table.py`) or a
    # folder (`rcsim/transient/`, `profiles/`) must end some path of the repository
    paths = _repository_paths()
    named = set(re.findall(r"`([\w./-]+\.py|[\w./-]+/)`", TEXT))
    named |= set(re.findall(r"\b((?:rcsim|tests)/[\w./-]+\.py)\b", TEXT))
    missing = sorted(n for n in named
                     if not any(p == n or p.endswith("/" + n.lstrip("./")) for p in paths))
    assert not missing, f"DEVELOPERS.md names what the repository does not have: {missing}"


def test_the_picture_of_the_layers_is_the_layering_table():
    # the fenced block under "## Layers": "N  floor name   module module ...  # note" with
    # continuation lines; every module of LAYERS is drawn on its own floor
    block = re.search(r"## Layers.*?```\n(.*?)```", TEXT, re.S).group(1)
    drawn: dict[int, set[str]] = {}
    floor = None
    for line in block.splitlines():
        head = re.match(r"^(\d)\s+(.*)$", line)
        if head:
            floor, rest = int(head.group(1)), head.group(2)
        else:
            rest = line
        rest = rest.split("#")[0]
        # module names are lower-case words, folders end with '/'; floor names are words the
        # table does not hold or the name of a module of the same floor
        drawn.setdefault(floor, set()).update(re.findall(r"(?<![\w.>-])([a-z_][a-z0-9_]*/?)(?![\w.(])", rest))
    table = {}
    for k, (_, members) in enumerate(LAYERS, start=1):
        for m in members:
            table[m] = k
    placed = {}
    for k, words in drawn.items():
        for w in words:
            name = "rcsim" if w == "rcsim" else "rcsim." + w.rstrip("/")
            if name in table:
                placed.setdefault(name, set()).add(k)
    wrong = {m: (sorted(placed.get(m, ())), k) for m, k in table.items()
             if m != "rcsim" and placed.get(m) != {k}}
    assert not wrong, ("DEVELOPERS.md's picture of the layers differs from LAYERS in "
                       "tests/test_layering.py; draw each module on its floor in the picture "
                       "(and say in a line of DEVELOPERS.md what a new module does): "
                       + "; ".join(f"{m} drawn on floor(s) {d or 'none'}, belongs on floor {k}"
                                   for m, (d, k) in sorted(wrong.items())))


def test_nothing_outside_the_repository_is_referenced():
    # maintainers read the design here: no design file, folder or machine outside the repository
    for pattern in (r"DESIGN\.md", r"/work/", r"shared/", r"STYLE\.md", r"https?://"):
        assert not re.search(pattern, TEXT), f"DEVELOPERS.md refers outside the repository: {pattern}"
