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
    (["size", "{s}", "--vary", "links.skin.resistance=1..2", "--require", "max.block <= 30 degC",
      "--write-scenario", "{d}/file.txt/sized.toml"], ["--write-scenario", "is not a folder"]),
    (["size", "{s}", "--vary", "links.skin.resistance=1..2", "--require", "max.block <= 30 degC",
      "--plots", "{d}/file.txt/p"], ["--plots", "is not a folder"]),
    (["size", "{s}", "--vary", "links.skin.resistance=1..2", "--require", "max.block <= 30 degC",
      "-o", "{d}/file.txt/t.csv"], ["output", "is not a folder"]),
    (["fit", "{s}", "{d}/file.txt", "--free", "nodes.block.capacity", "-o",
      "{d}/file.txt/e.csv"], ["--output", "is not a folder"]),
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


# ---- 16.5: files a scenario names stay in its folder; special files are never opened ----------
SECRET = "s3cr3t-row,never-shown-" + "x" * 200

PROFILE = BLOCK.replace('temperature = "20 degC"',
                        'temperature = { csv = { file = "FILE", column = "t_out" } }')
GOOD_CSV = "time,t_out\n0,20\n3600,21\n7200,22\n"


@pytest.fixture
def nest(tmp_path):
    """tmp_path/outside.csv (a file not the user's, with a secret header) and a scenario folder
    tmp_path/sc/ holding good.csv; returns a function writing sc/s.toml naming FILE."""
    (tmp_path / "outside.csv").write_text(SECRET + "\n1,2\n")
    (tmp_path / "elsewhere").mkdir()
    (tmp_path / "elsewhere" / "data.csv").write_text(GOOD_CSV)
    sc = tmp_path / "sc"
    sc.mkdir()
    (sc / "good.csv").write_text(GOOD_CSV)
    (sc / "sub").mkdir()

    def scenario(file):
        p = sc / "s.toml"
        p.write_text(PROFILE.replace("FILE", file), encoding="utf-8")
        return p

    return scenario


OUTSIDE = [
    ("../outside.csv", None),
    ("sub/../../outside.csv", None),
    ("./sub/../../sc/../outside.csv", None),
    ("link.csv", ("link.csv", "../outside.csv")),                 # a link to a file outside
    ("linked/data.csv", ("linked", "../elsewhere")),               # a linked folder
    ("sub/up/outside.csv", ("sub/up", "../..")),                   # a link to a parent
    ("chain.csv", ("chain.csv", "sub/hop.csv"), ("sub/hop.csv", "../../outside.csv")),
]


@pytest.mark.parametrize("case", OUTSIDE, ids=[c[0] for c in OUTSIDE])
def test_a_csv_outside_the_scenarios_folder_is_refused_without_showing_it(cli, nest, tmp_path,
                                                                         case):
    file, *links = case
    for link, target in [x for x in links if x]:
        os.symlink(target, tmp_path / "sc" / link)
    s = nest(file)
    line = one_line(cli("check", s), "leads outside the scenario's folder")
    assert "s3cr3t" not in line and "never-shown" not in line
    # allowed explicitly, the same file is read (and its header quoted short at most)
    r = cli("check", s, "--allow-absolute-paths")
    assert "Traceback" not in r.output and "x" * 41 not in r.output


@pytest.mark.parametrize("file,words", [("a\\u0000b.csv", ["NUL"]), ("", ["file must be a path"]),
                                        (".", ["is a directory"]), ("sub", ["is a directory"])])
def test_odd_file_names_are_one_line(cli, nest, file, words):
    one_line(cli("check", nest(file)), *words)


def test_links_and_dots_that_stay_inside_the_folder_are_read(cli, nest, tmp_path):
    os.symlink("good.csv", tmp_path / "sc" / "alias.csv")
    for file in ("good.csv", "sub/../good.csv", "alias.csv", "./good.csv"):
        r = cli("check", nest(file))
        assert r.exit_code == 0, (file, r.output)


def test_an_absolute_path_stays_refused_unless_allowed(cli, nest, tmp_path):
    s = nest(str(tmp_path / "elsewhere" / "data.csv"))
    one_line(cli("check", s), "absolute path", "--allow-absolute-paths")
    assert cli("check", s, "--allow-absolute-paths").exit_code == 0


def test_a_weather_file_outside_the_folder_is_refused(cli, nest, tmp_path):
    s = tmp_path / "sc" / "w.toml"
    s.write_text(BLOCK + '[site]\nlatitude = 48.0\nlongitude = 11.0\ntime_zone = "+01:00"\n'
                 '[weather]\nfile = "../outside.csv"\ncolumns = { air_temperature = "t" }\n',
                 encoding="utf-8")
    line = one_line(cli("check", s), "weather.file", "leads outside the scenario's folder")
    assert "s3cr3t" not in line


def _run_with_timeout(args, cwd, seconds=120):
    """rcsim ARGS in a child that must end within ``seconds`` (a FIFO read would block)."""
    r = subprocess.run([sys.executable, "-m", "rcsim", *map(str, args)], capture_output=True,
                       text=True, cwd=cwd, timeout=seconds)
    r.exit_code = r.returncode
    return r


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="no FIFOs here")
def test_a_fifo_is_refused_not_waited_on(nest, tmp_path):
    os.mkfifo(tmp_path / "sc" / "pipe.csv")
    one_line(_run_with_timeout(["check", nest("pipe.csv")], tmp_path), "pipe.csv",
             "FIFO", "only regular files are read")
    os.mkfifo(tmp_path / "scenario.toml")
    one_line(_run_with_timeout(["run", tmp_path / "scenario.toml"], tmp_path), "scenario.toml",
             "FIFO")
    os.mkfifo(tmp_path / "log.csv")
    with pytest.raises(InputError, match="FIFO"):
        rcsim.fit(rcsim.loads(BLOCK), tmp_path / "log.csv", ["nodes.block.capacity"])


@pytest.mark.skipif(not os.path.exists("/dev/zero"), reason="no /dev/zero here")
def test_a_device_is_refused_and_memory_stays_bounded(nest, tmp_path):
    os.symlink("/dev/zero", tmp_path / "sc" / "zeros.csv")
    for file, extra in (("/dev/zero", ["--allow-absolute-paths"]), ("zeros.csv", []),
                        ("zeros.csv", ["--allow-absolute-paths"])):
        r = Child(["check", nest(file), *extra], tmp_path)
        one_line(r, "outside" if not extra and file == "zeros.csv" else "character device")
        assert r.peak < 600e6, r.peak        # a child that read /dev/zero would take it all
    with pytest.raises(InputError, match="character device"):
        rcsim.fit(rcsim.loads(BLOCK), "/dev/zero", ["nodes.block.capacity"])
    r = Child(["run", "/dev/zero"], tmp_path)
    one_line(r, "character device")


PROC_FILE = "/proc/self/pagemap"   # 8 bytes per page of address space, yet a size of 0


@pytest.mark.skipif(not os.path.exists(PROC_FILE) or os.stat(PROC_FILE).st_size != 0,
                    reason="no /proc file that hides its size here")
def test_a_file_that_reports_size_0_is_read_with_a_byte_cap(cli, nest, tmp_path, monkeypatch):
    # files of /proc report st_size 0 (proc(5)) and still give any amount when read; the size
    # guard must count what it reads. With 150 kB of memory "available" the cap is
    # 0.8 * 150e3 / 15 = 8000 bytes (rcsim.profiles.timeseries.read_capped)
    import rcsim.profiles.timeseries as timeseries

    # (read whole, the file would be gigabytes: the refusal shows the reading stopped)
    monkeypatch.setattr(timeseries, "memory_available", lambda: 150_000)
    one_line(cli("check", nest(PROC_FILE), "--allow-absolute-paths"), "pagemap",
             "more than 8000 bytes", "memory is available")
    # a fit log is read by the same reader
    with pytest.raises(InputError, match="more than 8000 bytes"):
        rcsim.fit(rcsim.loads(BLOCK), PROC_FILE, ["nodes.block.capacity"])
    # a smaller cap of the caller's own is kept, whatever the file says about its size
    with pytest.raises(InputError, match="more than 100 bytes, the most allowed here"):
        timeseries.read_time_series(PROC_FILE, max_bytes=100)


@pytest.mark.parametrize("text,column", [
    ("time," + "h" * 300 + "\n0,1\n60,2\n", "t_out"),                  # a long header cell
    ("time,t_out\n0,1\n60," + "v" * 300 + "\n", "t_out"),              # a long value cell
    ("time,t_out\n60,1\n" + "9" * 300 + "x,2\n", "t_out"),             # a long time cell
    ("t," + ",".join(f"c{i}{'w' * 60}" for i in range(40)) + "\n0,1\n", "t_out"),
])
def test_errors_quote_at_most_a_short_cell_of_a_file(cli, nest, tmp_path, text, column):
    (tmp_path / "sc" / "odd.csv").write_text(text)
    line = one_line(cli("check", nest("odd.csv")), "odd.csv")
    assert len(line) < 400 and not any(ch * 41 in line for ch in "hv9w"), line


# ---- 16.6, 16.7, 16.12: result files that are not what they claim -------------------------------
def _good_result(path):
    """A small valid result file (a 2-hour run of BLOCK with a limit), written by rcsim."""
    sc = rcsim.loads(BLOCK + '[limits.block]\nmax = "15 degC"\n')
    sc.run(output=path)
    return path


def _edit(path, change):
    import h5py

    with h5py.File(path, "r+") as h5:
        change(h5)
    return path


def _replace(key, data=None, **kwargs):
    def change(h5):
        attrs = dict(h5[key].attrs) if key in h5 and hasattr(h5[key], "attrs") else {}
        del h5[key]
        h5.create_dataset(key, data=data, **kwargs)
        for k, v in attrs.items():
            h5[key].attrs[k] = v
    return change


def _set_attr(name, value, where="/"):
    def change(h5):
        h5[where].attrs[name] = value
    return change


def _external(h5, key="temperature", other="other.h5"):
    import h5py

    folder = os.path.dirname(h5.filename)
    with h5py.File(os.path.join(folder, other), "w") as o:
        o["data"] = np.full(h5[key].shape, 99.0)
    del h5[key]
    h5[key] = h5py.ExternalLink(other, "/data")


def _virtual(h5, key="temperature"):
    import h5py

    folder = os.path.dirname(h5.filename)
    shape = h5[key].shape
    with h5py.File(os.path.join(folder, "other.h5"), "w") as o:
        o["data"] = np.full(shape, 99.0)
    layout = h5py.VirtualLayout(shape=shape, dtype="f8")
    layout[:] = h5py.VirtualSource(os.path.join(folder, "other.h5"), "data", shape=shape)
    del h5[key]
    h5.create_virtual_dataset(key, layout, fillvalue=0)


def _external_storage(h5, key="temperature"):
    folder = os.path.dirname(h5.filename)
    shape = h5[key].shape
    raw = os.path.join(folder, "raw.bin")
    np.full(shape, 99.0).tofile(raw)
    del h5[key]
    h5.create_dataset(key, shape=shape, dtype="f8", external=[(raw, 0, 8 * int(np.prod(shape)))])


def _soft_loop(h5):
    import h5py

    g = h5.create_group("loop")
    g["a"] = h5py.SoftLink("/loop/b")
    g["b"] = h5py.SoftLink("/loop/a")


def _deep(h5):
    g = h5
    for i in range(40):
        g = g.create_group(f"g{i}")


def _many(h5):
    g = h5.create_group("many")
    for i in range(10_050):
        g.create_group(str(i))


def _flip_bytes(path):
    """Bit flips all through the file after its first kilobyte (a damaged copy)."""
    data = bytearray(open(path, "rb").read())
    rng = np.random.default_rng(7)
    for i in rng.integers(1024, len(data), 400):
        data[i] ^= 0xFF
    open(path, "wb").write(bytes(data))
    return path


CORRUPT = {
    "no time": lambda h5: h5.__delitem__("time"),
    "no version": lambda h5: h5.attrs.__delitem__("rcsim_version"),
    "time of text": _replace("time", np.array([b"a", b"b"])),
    "time 2-D": _replace("time", np.zeros((13, 2))),
    "rows not matching time": _replace("temperature", np.zeros((5, 1))),
    "temperature of strings": _replace("temperature", np.array([[b"x"]] * 13)),
    "temperature 3-D": _replace("temperature", np.zeros((13, 1, 1))),
    "names missing": lambda h5: (h5.__delitem__("temperature_names"),
                                 h5["temperature"].attrs.__delitem__("names")),
    "names too few": _replace("temperature_names", np.array([], dtype="S1")),
    "names not UTF-8": _replace("temperature_names", np.array([b"\xff\xfe"])),
    "names as numbers": _replace("temperature_names", np.array([1.0])),
    "names attribute not UTF-8": lambda h5: (h5.__delitem__("temperature_names"),
                                             h5["temperature"].attrs.__setitem__(
                                                 "names", np.array([b"\xc3\x28"]))),
    "limits without columns": lambda h5: h5["limits"].attrs.__delitem__("columns"),
    "limits columns not JSON": _set_attr("columns", "[not json", "limits"),
    "limits columns not a list": _set_attr("columns", '{"a": 1}', "limits"),
    "limits column missing": lambda h5: h5["limits"].__delitem__("margin [K]"),
    "nodes columns of uneven length": _replace("nodes/max [degC]", np.zeros(7)),
    "nodes as a dataset": lambda h5: (h5.__delitem__("nodes"), h5.create_dataset("nodes",
                                                                                 data=[1])),
    "energy balance as text": _set_attr("energy_balance", "lots"),
    "duration as a list": _set_attr("duration", [1.0, 2.0]),
    "scenario not UTF-8": _set_attr("scenario", np.bytes_(b"\xff\xfe\xfa")),
    "stats not JSON": _set_attr("stats", "{broken"),
    "external link": _external,
    "external link to names": lambda h5: _external(h5, "temperature_names", "names.h5"),
    "virtual dataset": _virtual,
    "external storage": _external_storage,
    "soft link loop": _soft_loop,
    "groups 40 deep": _deep,
    "ten thousand groups": _many,
}


@pytest.mark.parametrize("kind", list(CORRUPT))
def test_a_corrupt_or_foreign_result_file_is_one_line(cli, tmp_path, kind):
    path = _edit(_good_result(tmp_path / "r.h5"), CORRUPT[kind])
    try:
        res = rcsim.Result.load(path)
        # what loads must be whole: every history and summary reads, and plots draw
        for name in ("temperatures", "heat_flows", "boundary_temperatures", "source_powers",
                     "energy", "limits", "nodes", "stats", "energy_balance_error", "period"):
            getattr(res, name)
        assert not (np.asarray(res.temperatures) == 99.0).any()   # nothing read from outside
    except InputError as err:
        assert "r.h5" in str(err) and "\n" not in str(err)
    for kind_ in ("history", "flows"):
        r = cli("plot", path, "--kind", kind_, "-o", tmp_path / f"{kind_}.png")
        assert "Traceback" not in r.output, r.output
        if r.exit_code:
            one_line(r, "r.h5")
    assert leftovers(tmp_path) == []


def test_values_from_another_file_are_never_shown(cli, tmp_path):
    for change in (_external, _virtual, _external_storage):
        path = _edit(_good_result(tmp_path / "r.h5"), change)
        one_line(cli("plot", path, "-o", tmp_path / "f.png"), "r.h5", "read only from itself")
        assert not (tmp_path / "f.png").exists()


def test_a_damaged_copy_is_one_line_whatever_is_hit(cli, tmp_path):
    for seed in range(6):
        path = _good_result(tmp_path / f"r{seed}.h5")
        data = bytearray(open(path, "rb").read())
        rng = np.random.default_rng(seed)
        for i in rng.integers(0, len(data), 50 * (seed + 1)):
            data[i] ^= 1 << int(rng.integers(8))
        open(path, "wb").write(bytes(data))
        r = cli("plot", path, "-o", tmp_path / f"f{seed}.png")
        assert "Traceback" not in r.output, r.output
        if r.exit_code:
            one_line(r, f"r{seed}.h5")


def _declare_rows(path, rows):
    """Rewrite ``path`` so that /time and every history declare ``rows`` samples: chunked
    datasets that are never written stay a few hundred bytes on disk."""
    import h5py

    from rcsim.resultfile import SERIES

    with h5py.File(path, "r+") as h5:
        for key in ("time",) + tuple(k for k in SERIES if k in h5):
            shape = (rows,) + h5[key].shape[1:]
            names = h5[key].attrs.get("names")
            del h5[key]
            h5.create_dataset(key, shape=shape, dtype="f8", chunks=True, compression="gzip")
            if names is not None:
                h5[key].attrs["names"] = names
    return path


def test_a_small_file_declaring_huge_histories_is_refused_in_bounded_memory(tmp_path):
    path = _declare_rows(_good_result(tmp_path / "r.h5"), 600_000_000)
    assert os.path.getsize(path) < 2_000_000
    r = Child(["plot", "r.h5", "-o", "f.png"], tmp_path)
    one_line(r, "r.h5", "needs about")
    assert r.peak < 600e6, r.peak
    assert not (tmp_path / "f.png").exists()


def test_the_memory_guard_counts_every_history_of_a_load_together(tmp_path, monkeypatch):
    # 1e8 rows of one column are 0.8 GB, 1.6 GB with the frame built from them: each history
    # alone fits in 0.8 x 6 GB, but the time and the five one-column histories of BLOCK's file
    # (temperature, heat flow, boundary, stored and link energies) together need 9.6 GB
    import rcsim.profiles.timeseries as ts

    path = _declare_rows(_good_result(tmp_path / "r.h5"), 100_000_000)
    monkeypatch.setattr(ts, "memory_available", lambda: 6_000_000_000)
    with pytest.raises(InputError, match="needs about"):
        rcsim.Result.load(path)
    monkeypatch.setattr(ts, "memory_available", lambda: 64_000_000_000)
    assert list(rcsim.Result.load(path).limits["node"]) == ["block"]   # fits: loads (lazily)


def test_a_result_file_that_is_a_fifo_or_device_is_refused(tmp_path):
    os.mkfifo(tmp_path / "pipe.h5")
    one_line(_run_with_timeout(["plot", tmp_path / "pipe.h5"], tmp_path), "FIFO")
    if os.path.exists("/dev/zero"):
        with pytest.raises(InputError, match="character device"):
            rcsim.Result.load("/dev/zero")


# ---- 16.7: scenario text that nests too deep for the TOML reader -------------------------------
DEEP = {
    "dotted key": "a" + ".a" * 50_000 + " = 1\n",
    "table header": "[a" + ".a" * 50_000 + "]\nx = 1\n",
    "array of tables": "[[a" + ".a" * 50_000 + "]]\nx = 1\n",
    "inline tables": "x = " + "{a=" * 30_000 + "1" + "}" * 30_000 + "\n",
    "arrays": "x = " + "[" * 50_000 + "1" + "]" * 50_000 + "\n",
    "dotted key in an inline table": "x = {" + "a." * 30_000 + "b = 1}\n",
    "quoted dotted key": "a" + '."a"' * 30_000 + " = 1\n",
}


@pytest.mark.parametrize("kind", list(DEEP))
def test_deeply_nested_scenario_text_is_refused_cheaply(tmp_path, kind):
    (tmp_path / "deep.toml").write_text(BLOCK + DEEP[kind], encoding="utf-8")
    r = Child(["check", "deep.toml"], tmp_path)
    one_line(r, "deep.toml", "line 13")
    # the tomllib reader took about 1.5 GB for a dotted key of 20,000 parts (measured)
    assert r.peak < 400e6, r.peak


def test_strings_and_comments_full_of_dots_and_brackets_are_not_nesting(cli, tmp_path):
    text = (BLOCK.replace('[simulation]', 'title = "' + "a.b[c{" * 500 + '"\n'
                          "description = '''" + "[[[.{{{" * 500 + "'''\n[simulation]")
            + "# " + "." * 5000 + "\n")
    (tmp_path / "ok.toml").write_text(text, encoding="utf-8")
    assert cli("check", tmp_path / "ok.toml").exit_code == 0


@pytest.mark.parametrize("room", [0, 2000])
def test_a_disk_filling_up_while_a_sweep_table_is_written_leaves_nothing(tmp_path, monkeypatch,
                                                                         room):
    import builtins

    import rcsim.h5files
    from rcsim.sweep.tables import write_table

    def filling_open(path, *args, **kwargs):
        return _FillingFile(builtins.open(path, *args, **kwargs), room)

    monkeypatch.setattr(rcsim.h5files, "open", filling_open, raising=False)
    table = pd.DataFrame({"a": np.arange(500.0), "error": [""] * 500},
                         index=pd.RangeIndex(500, name="run"))
    with pytest.raises(OutputError, match="No space left on device"):
        write_table(table, tmp_path / "t.h5")
    assert leftovers(tmp_path) == [] and not (tmp_path / "t.h5").exists()


def test_a_fit_candidate_is_read_with_the_same_guards(tmp_path):
    from rcsim.fitting.candidates import read_candidate

    (tmp_path / "deep.toml").write_text(BLOCK + DEEP["dotted key"], encoding="utf-8")
    with pytest.raises(InputError, match="dotted parts"):
        read_candidate(tmp_path / "deep.toml")
    os.mkfifo(tmp_path / "pipe.toml")
    with pytest.raises(InputError, match="FIFO"):
        read_candidate(tmp_path / "pipe.toml")


def test_a_small_file_declaring_millions_of_names_is_refused_before_reading_them(tmp_path):
    import h5py

    path = _good_result(tmp_path / "r.h5")
    with h5py.File(path, "r+") as h5:
        del h5["temperature"], h5["temperature_names"]
        h5.create_dataset("temperature", shape=(13, 400_000_000), dtype="f8",
                          chunks=(1, 65536), compression="gzip")
        h5.create_dataset("temperature_names", shape=(400_000_000,),
                          dtype=h5py.string_dtype(), chunks=(65536,), compression="gzip")
    assert os.path.getsize(path) < 5_000_000
    r = Child(["plot", "r.h5", "-o", "f.png"], tmp_path)
    one_line(r, "r.h5", "needs about")
    assert r.peak < 600e6, r.peak


def test_a_file_the_system_refuses_is_one_line(cli, block, tmp_path, monkeypatch):
    # a reader that meets an OSError it does not turn into rcsim's own error (an unreadable
    # file, a failing disk): still one line and status 2, naming the file
    import rcsim.scenario

    def refused(path):
        raise PermissionError(errno.EACCES, "Permission denied", str(path))

    monkeypatch.setattr(rcsim.scenario, "read_text", refused)
    one_line(cli("check", block), "block.toml", "Permission denied")
