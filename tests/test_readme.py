"""Every shell command in README.md runs and exits 0 (issue 15, item 20).

The fenced ``bash`` blocks of the README are read as a user would paste them (continuation lines
joined, comments dropped, ``&&`` chains split) and run in order, block by block, in a temporary
folder holding a copy of the repository's scenarios, so that a command that writes files (``-o
box.h5``) feeds the next one (``rcsim plot box.h5``). ``rcsim ...`` goes through click's
CliRunner, ``python -m ...`` through a subprocess.

What is not run as written, and why (said here, nowhere else):

* ``pip install ...``: installing the package is what made this test environment;
* ``pytest``: the suite is what runs this test;
* ``--sample 1000`` (the sweep) and ``--sample 200`` (the sizing) become ``--sample 12`` (hundreds
  of shipper runs per value take minutes; the command, its options and its outputs are otherwise
  as written).
"""

from __future__ import annotations

import os
import re
import shlex
import shutil
import subprocess
import sys

import pytest

from conftest import ROOT, SCENARIOS

README = os.path.join(ROOT, "README.md")

#: Programs whose commands are not run, with the reason.
SKIPPED = {"pip": "installing is what made the test environment",
           "pytest": "the suite is what runs this test"}

#: Option values reduced for the test: {(option, value as written): value run}.
REDUCED = {("--sample", "1000"): "12", ("--sample", "200"): "12"}


def shell_blocks(text: str) -> list[list[list[str]]]:
    """The commands of each fenced bash block: a list of blocks, each a list of argument
    lists (continuation lines joined, comments dropped, ``&&`` chains split)."""
    blocks = []
    for body in re.findall(r"^```(?:bash|sh|shell)\n(.*?)^```", text, re.S | re.M):
        commands = []
        for line in body.replace("\\\n", " ").splitlines():
            current = []
            for word in shlex.split(line, comments=True) + ["&&"]:
                if word == "&&":
                    if current:
                        commands.append(current)
                    current = []
                else:
                    current.append(word)
        blocks.append(commands)
    return blocks


def _reduced(args: list[str]) -> list[str]:
    out = list(args)
    for i in range(len(out) - 1):
        if (out[i], out[i + 1]) in REDUCED:
            out[i + 1] = REDUCED[(out[i], out[i + 1])]
    return out


with open(README, encoding="utf-8") as _fh:
    BLOCKS = shell_blocks(_fh.read())


def test_the_readme_has_its_command_blocks():
    # the quick start, the three worked examples, figures, the gallery, fitting and sweeps
    assert len(BLOCKS) >= 8
    programs = {c[0] for block in BLOCKS for c in block}
    assert programs <= {"rcsim", "python", *SKIPPED}, programs


@pytest.mark.slow
@pytest.mark.parametrize("index", range(len(BLOCKS)),
                         ids=[" ; ".join(" ".join(c)[:40] for c in b) for b in BLOCKS])
def test_every_readme_command_runs(index, tmp_path, monkeypatch, cli):
    shutil.copytree(SCENARIOS, tmp_path / "scenarios")
    monkeypatch.chdir(tmp_path)
    ran = 0
    for args in BLOCKS[index]:
        if args[0] in SKIPPED:
            continue
        args = _reduced(args)
        if args[0] == "rcsim":
            result = cli(*args[1:])
            assert result.exit_code == 0, (args, result.output, result.exception)
        elif args[:2] == ["python", "-m"]:
            done = subprocess.run([sys.executable, *args[1:]], cwd=tmp_path, capture_output=True,
                                  text=True, timeout=600)
            assert done.returncode == 0, (args, done.stdout, done.stderr)
        else:
            pytest.fail(f"a README command this test does not know how to run: {args}")
        ran += 1
    if not ran:
        pytest.skip("only install/test commands in this block: " + ", ".join(
            SKIPPED[c[0]] for c in BLOCKS[index]))


def test_every_dependency_is_in_the_readme_table():
    # every runtime, optional and test dependency of pyproject.toml has a row in "Dependencies
    # and why" saying what it is there for (the project's rule: say in README why a dependency is)
    import tomllib

    with open(os.path.join(ROOT, "pyproject.toml"), "rb") as fh:
        project = tomllib.load(fh)["project"]
    specs = list(project["dependencies"])
    for extra in project.get("optional-dependencies", {}).values():
        specs += extra
    wanted = {re.split(r"[\[<>=!~; ]", spec, maxsplit=1)[0].lower() for spec in specs}
    with open(README, encoding="utf-8") as fh:
        text = fh.read()
    section = text.split("## Dependencies and why", 1)[1].split("\n## ", 1)[0]
    listed = set()
    for row in re.findall(r"^\| ([^|]+) \|", section, re.M):
        listed |= {w.lower() for w in re.findall(r"[A-Za-z][A-Za-z0-9_.-]*", row)}
    assert wanted - listed == set(), f"no row in README's 'Dependencies and why' for {wanted - listed}"
