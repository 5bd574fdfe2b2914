"""Hostile files, round two (issue 16, items 5-10 and 12): files from outside and files written.

Each case asserts what a person sees: the exit status, one line on stderr and no traceback, no
file left under the output name nor as a temporary (``.rcsim-*.tmp``), nothing read from outside
the scenario's folder, and, for files that declare huge sizes, a bounded peak memory measured in
a child process (``resource.getrusage(RUSAGE_CHILDREN).ru_maxrss`` of a fresh interpreter).

Expected values here are properties of the contract (exit status 2, one line, no file), not
numbers; where a number appears its source is named beside it.
"""

from __future__ import annotations

import errno
import json
import os
import subprocess
import sys
import unicodedata

import numpy as np
import pandas as pd
import pytest

import rcsim
from rcsim.errors import InputError, OutputError

BLOCK = """
[simulation]
duration = "2 h"
step = "10 min"
[nodes.block]
capacity = "2 kJ/K"
initial = "10 degC"
[boundaries.room]
temperature = "20 degC"
[links.skin]
between = ["block", "room"]
resistance = "1 K/W"
"""

#: a run long enough that its result file is several MB (a year at one-minute steps)
LONG = BLOCK.replace('duration = "2 h"', 'duration = "2000 h"').replace('"10 min"', '"1 min"')


def leftovers(folder) -> list[str]:
    """Temporary files rcsim left in ``folder`` (it writes ``.rcsim-*.tmp`` only)."""
    return sorted(f for f in os.listdir(folder) if f.startswith(".rcsim-"))


def one_line(r, *words, code=2):
    """A refusal as the CLI must give it: status ``code``, one ``error:`` line on stderr, no
    traceback, and each of ``words`` in that line."""
    err = r.stderr if hasattr(r, "stderr") else r.output
    assert r.exit_code == code if hasattr(r, "exit_code") else r.returncode == code, err
    lines = [ln for ln in err.strip().splitlines() if not ln.startswith("warning: ")]
    assert len(lines) == 1 and lines[0].startswith("error: "), err
    assert "Traceback" not in err and "Traceback" not in (r.stdout or "")
    for w in words:
        assert w in lines[0], lines[0]
    return lines[0]


_CHILD = r"""
import json, resource, subprocess, sys
fsize = int(sys.argv[1])
def limit():
    if fsize:
        resource.setrlimit(resource.RLIMIT_FSIZE, (fsize, fsize))
r = subprocess.run(sys.argv[2:], capture_output=True, text=True, preexec_fn=limit, timeout=600)
peak = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss * 1024
print(json.dumps({"returncode": r.returncode, "stdout": r.stdout, "stderr": r.stderr,
                  "peak": peak}))
"""


class Child:
    """The outcome of ``rcsim ARGS`` run in a fresh interpreter (``peak``: its peak resident
    memory [bytes])."""

    def __init__(self, args, cwd, fsize=0):
        out = subprocess.run([sys.executable, "-c", _CHILD, str(fsize), sys.executable, "-m",
                              "rcsim", *map(str, args)], capture_output=True, text=True,
                             cwd=cwd, timeout=900)
        data = json.loads(out.stdout)
        self.returncode = data["returncode"]
        self.stdout, self.stderr, self.peak = data["stdout"], data["stderr"], data["peak"]


@pytest.fixture
def no_run(monkeypatch):
    """Any simulation fails the test: a refusal must come before the work."""
    def fail(*args, **kwargs):
        raise AssertionError("ran before checking the outputs")

    monkeypatch.setattr(rcsim.Scenario, "run", fail)


@pytest.fixture
def block(tmp_path):
    p = tmp_path / "block.toml"
    p.write_text(BLOCK, encoding="utf-8")
    (tmp_path / "file.txt").write_text("a plain file\n")
    return p


# ---- 16.10: unwritable outputs are refused before the run -------------------------------------
UNWRITABLE = [
    (["run", "{s}", "-o", "{d}/file.txt/out.h5"], ["--output", "is not a folder"]),
    (["run", "{s}", "--csv", "{d}/file.txt/out.csv"], ["--csv", "is not a folder"]),
    (["run", "{s}", "--xlsx", "{d}/file.txt/out.xlsx"], ["--xlsx", "is not a folder"]),
    (["run", "{s}", "--plots", "{d}/file.txt/figures"], ["--plots", "is not a folder"]),
    (["run", "{s}", "--plots", "{d}/file.txt/deeper/figures"], ["--plots", "is not a folder"]),
    (["run", "{s}", "--plots", "{d}/file.txt"], ["--plots", "is not a folder"]),
    (["sweep", "{s}", "--vary", "links.skin.resistance=1..2:2", "-o", "{d}/file.txt/s.csv"],
     ["output", "is not a folder"]),
    (["sweep", "{s}", "--vary", "links.skin.resistance=1..2:2", "--plots",
      "{d}/file.txt/p"], ["--plots", "is not a folder"]),
    (["report", "{s}", "-o", "{d}/file.txt/r.html"], ["--output", "is not a folder"]),
    (["draw", "{s}", "-o", "{d}/file.txt/n.svg"], ["--output", "is not a folder"]),
]


@pytest.mark.parametrize("args,words", UNWRITABLE)
def test_an_output_under_a_plain_file_is_refused_before_running(cli, block, tmp_path, no_run,
                                                               args, words):
    r = cli(*[a.format(s=block, d=tmp_path) for a in args])
    one_line(r, *words)
    assert leftovers(tmp_path) == [] and sorted(os.listdir(tmp_path)) == ["block.toml",
                                                                          "file.txt"]


def _read_only_folder():
    """A folder nobody can create files in, root included (sysfs is read-only), or None."""
    for folder in ("/sys", "/proc/sys"):
        if os.path.isdir(folder):
            try:
                fd = os.open(os.path.join(folder, ".rcsim-probe"), os.O_CREAT | os.O_WRONLY)
            except OSError:
                return folder
            os.close(fd)
            os.remove(os.path.join(folder, ".rcsim-probe"))
    return None


@pytest.mark.parametrize("option,name", [("-o", "out.h5"), ("--csv", "out.csv"),
                                         ("--plots", "figures")])
def test_an_output_in_a_read_only_folder_is_refused_before_running(cli, block, no_run, option,
                                                                   name):
    folder = _read_only_folder()
    if folder is None:
        pytest.skip("no read-only folder on this system")
    r = cli("run", block, option, f"{folder}/{name}")
    one_line(r, "cannot write in folder")


@pytest.mark.skipif(not hasattr(os, "geteuid") or os.geteuid() == 0,
                    reason="root writes into a folder of mode 0555")
def test_an_output_in_a_folder_without_write_permission_is_refused(cli, block, tmp_path, no_run):
    locked = tmp_path / "locked"
    locked.mkdir()
    locked.chmod(0o555)
    try:
        one_line(cli("run", block, "-o", locked / "out.h5"), "--output", "Permission denied")
        one_line(cli("run", block, "--plots", locked / "figs"), "--plots", "Permission denied")
    finally:
        locked.chmod(0o755)


def test_a_folder_that_turns_unwritable_after_the_check_is_one_line(cli, block, tmp_path,
                                                                    monkeypatch):
    # the check passed (as if the folder was writable then): the write itself fails later
    import rcsim.atomic

    monkeypatch.setattr(rcsim.atomic, "check_writable", lambda path, where=None: None)
    monkeypatch.setattr(rcsim.atomic, "check_folder_writable", lambda path, where=None: None)
    for args in (["-o", tmp_path / "file.txt" / "out.h5"],
                 ["--csv", tmp_path / "file.txt" / "out.csv"],
                 ["--plots", tmp_path / "file.txt" / "figures"]):
        one_line(cli("run", block, *args), "file.txt")
    real = rcsim.atomic.tempfile.mkstemp

    def refused(*args, **kwargs):
        raise PermissionError(errno.EACCES, "Permission denied")

    monkeypatch.setattr(rcsim.atomic.tempfile, "mkstemp", refused)
    one_line(cli("run", block, "-o", tmp_path / "out.h5"), "cannot write", "Permission denied")
    monkeypatch.setattr(rcsim.atomic.tempfile, "mkstemp", real)
    assert leftovers(tmp_path) == [] and not (tmp_path / "out.h5").exists()


# ---- 16.9: a full disk while writing -----------------------------------------------------------
class _FillingFile:
    """A raw file that takes ``room`` bytes and then fails as a full disk does."""

    def __init__(self, real, room):
        self.real, self.room = real, room

    def write(self, data):
        n = memoryview(data).nbytes
        if n > self.room:
            raise OSError(errno.ENOSPC, "No space left on device")
        self.room -= n
        return self.real.write(data)

    def __getattr__(self, name):
        return getattr(self.real, name)


@pytest.mark.parametrize("room", [0, 3000, 100_000, 400_000])
def test_a_disk_filling_up_while_a_result_streams_leaves_nothing(block, tmp_path, monkeypatch,
                                                                 room):
    import builtins

    import rcsim.h5files

    def filling_open(path, *args, **kwargs):
        return _FillingFile(builtins.open(path, *args, **kwargs), room)

    monkeypatch.setattr(rcsim.h5files, "open", filling_open, raising=False)
    sc = rcsim.loads(LONG.replace('"2000 h"', '"200 h"'), base_dir=str(tmp_path))
    with pytest.raises(OutputError) as err:
        sc.run(output=tmp_path / "out.h5")
    assert "No space left on device" in str(err.value) and "out.h5" in str(err.value)
    assert leftovers(tmp_path) == [] and not (tmp_path / "out.h5").exists()


def test_a_disk_filling_up_while_a_csv_is_written_leaves_nothing(cli, block, tmp_path,
                                                                 monkeypatch):
    def filling(self, path, *args, **kwargs):
        with open(path, "w") as fh:
            fh.write("time,block\n0,10\n")
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(pd.DataFrame, "to_csv", filling)
    one_line(cli("run", block, "--csv", tmp_path / "out.csv"), "out.csv",
             "No space left on device")
    assert leftovers(tmp_path) == [] and not (tmp_path / "out.csv").exists()


@pytest.mark.slow
@pytest.mark.parametrize("limit", [100, 20_000, 1_000_000, 3_000_000])
@pytest.mark.parametrize("option,name", [("-o", "out.h5"), ("--csv", "out.csv")])
def test_a_file_size_limit_reached_while_writing_is_one_line(tmp_path, limit, option, name):
    # RLIMIT_FSIZE makes write() fail with EFBIG past the limit, as a full disk fails with
    # ENOSPC; HDF5 used to report it from deallocators and crash the process (status -11)
    (tmp_path / "long.toml").write_text(LONG, encoding="utf-8")
    r = Child(["run", "long.toml", option, name, "--quiet"], tmp_path, fsize=limit)
    one_line(r, name, "File too large")
    assert leftovers(tmp_path) == [] and not (tmp_path / name).exists()


# ---- 16.8: names in any script ------------------------------------------------------------------
NAMES = ["café", "Kühlraum", "箱", "מקרר", "غرفة", "🧊 box", "naïve-ﬁle", "e\u0301t\u00e9"]


def _named(names) -> str:
    nodes = "".join(f'[nodes."{n}"]\ncapacity = "2 kJ/K"\ninitial = "10 degC"\n' for n in names)
    links = "".join(f'[links."w{i} {n}"]\nbetween = ["{n}", "outside — dehors"]\n'
                    f'resistance = "1 K/W"\n' for i, n in enumerate(names))
    return ('[simulation]\nduration = "2 h"\nstep = "10 min"\n' + nodes
            + '[boundaries."outside — dehors"]\ntemperature = "20 degC"\n' + links
            + f'[limits."{names[0]}"]\nmax = "30 degC"\n')


def test_names_in_any_script_go_through_every_output(cli, tmp_path):
    (tmp_path / "named.toml").write_text(_named(NAMES), encoding="utf-8")
    r = cli("run", tmp_path / "named.toml", "-o", tmp_path / "run.h5", "--csv",
            tmp_path / "run.csv", "--xlsx", tmp_path / "run.xlsx", "--quiet")
    assert r.exit_code == 0, r.output
    assert leftovers(tmp_path) == []
    back = rcsim.Result.load(tmp_path / "run.h5")
    nfc = [unicodedata.normalize("NFC", n) for n in NAMES]
    assert list(back.temperatures.columns) == nfc
    assert list(back.nodes["node"]) == nfc and back.limits["node"].iloc[0] == nfc[0]
    header = (tmp_path / "run.csv").read_text(encoding="utf-8").splitlines()[0]
    assert all(n in header for n in nfc)
    r = cli("plot", tmp_path / "run.h5", "--nodes", NAMES[-1], "-o", tmp_path / "f.png")
    assert r.exit_code == 0, r.output


def test_names_are_kept_in_normal_form_c():
    # "é" as one code point (U+00E9) and as "e" + combining acute (U+0065 U+0301) are the same
    # name (Unicode Standard Annex #15, canonical equivalence)
    net = rcsim.Network()
    decomposed, composed = "caf" + "e\u0301", "caf\u00e9"
    assert net.add_node(decomposed, capacity=1.0, initial=0.0) == composed
    net.add_boundary("out", temperature=0.0)
    net.add_link(composed, "out", resistance=1.0)
    net.add_source(decomposed, power=1.0)
    assert list(net.nodes) == [composed] and "café-out" in net.links
    with pytest.raises(InputError, match="duplicate"):
        net.add_node(composed, capacity=1.0)
    res = net.simulate("1 min", "10 s", record=[decomposed])
    assert list(res.temperatures.columns) == [composed]
