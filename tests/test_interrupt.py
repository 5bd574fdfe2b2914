"""Interruption and killing: Ctrl-C stops cleanly and says how far it got; a killed writer leaves
the previous file intact. Real processes, real signals."""

import os
import signal
import subprocess
import sys
import time

import pytest

LONG = """
title = "a long thermostat run, to be interrupted"
[simulation]
duration = "400 d"
step = "1 min"
[nodes.room]
capacity = "200 kJ/K"
initial = "18 degC"
[boundaries.out]
temperature = { sine = { mean = "0 degC", amplitude = "5 K", period = "24 h" } }
[links.wall]
between = ["room", "out"]
resistance = "0.05 K/W"
[thermostats.heater]
node = "room"
setpoint = "20 degC"
band = "0.2 K"
power = "1 kW"
"""


def _start(tmp_path, out):
    scenario = tmp_path / "long.toml"
    scenario.write_text(LONG)
    code = "import sys; from rcsim.cli import main; sys.exit(main())"
    proc = subprocess.Popen([sys.executable, "-c", code, "run", str(scenario), "-o", str(out)],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    return proc


def _wait_for_temp_file(folder, proc, timeout=60.0):
    """Wait until the run has started writing (its temporary file exists)."""
    t0 = time.time()
    while time.time() - t0 < timeout:
        if any(p.name.endswith(".h5.tmp") for p in folder.iterdir()):
            return
        if proc.poll() is not None:
            pytest.fail(f"the run ended early: {proc.communicate()}")
        time.sleep(0.05)
    pytest.fail("the run did not start writing")


@pytest.mark.skipif(sys.platform == "win32", reason="POSIX signals")
def test_ctrl_c_stops_cleanly_and_says_how_far(tmp_path):
    out = tmp_path / "out.h5"
    proc = _start(tmp_path, out)
    _wait_for_temp_file(tmp_path, proc)
    time.sleep(1.0)
    proc.send_signal(signal.SIGINT)
    stdout, stderr = proc.communicate(timeout=60)
    assert proc.returncode == 130, (stdout, stderr)
    assert "interrupted at t = " in stderr and "nothing was written to" in stderr
    assert "Traceback" not in stderr
    assert not out.exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["long.toml"]  # no temporary file left


@pytest.mark.skipif(sys.platform == "win32", reason="POSIX signals")
def test_killed_writer_leaves_the_previous_file(tmp_path):
    out = tmp_path / "out.h5"
    out.write_bytes(b"the previous result")
    proc = _start(tmp_path, out)
    _wait_for_temp_file(tmp_path, proc)
    time.sleep(1.0)
    proc.kill()  # SIGKILL: no chance to clean up
    proc.communicate(timeout=60)
    assert out.read_bytes() == b"the previous result"
    # only the writer's own temporary file may remain beside it, never a half file under the name
    leftovers = [p.name for p in tmp_path.iterdir() if p.name not in ("long.toml", "out.h5")]
    assert all(name.startswith(".rcsim-") and name.endswith(".tmp") for name in leftovers)


def test_file_larger_than_memory_is_refused(tmp_path, monkeypatch):
    import rcsim
    import rcsim.profiles.timeseries as profiles  # where the memory check lives

    path = tmp_path / "log.csv"
    path.write_text("time,t\n" + "".join(f"{i},{i * 0.1}\n" for i in range(2000)))
    # pretend the machine has 10 kB free: reading must be refused with a message, not attempted
    monkeypatch.setattr(profiles, "memory_available", lambda: 10_000)
    with pytest.raises(rcsim.InputError, match="memory is available"):
        profiles.read_time_series(path, ["t"])


def test_history_larger_than_memory_is_refused(tmp_path, monkeypatch):
    import rcsim
    import rcsim.profiles.timeseries as profiles  # where the memory check lives

    net = rcsim.Network()
    net.add_node("a", capacity=1000.0, initial=0.0)
    net.add_boundary("b", temperature=10.0)
    net.add_link("a", "b", resistance=1.0)
    net.simulate("1 d", "1 min", output=tmp_path / "r.h5")
    res = rcsim.Result.load(tmp_path / "r.h5")
    monkeypatch.setattr(profiles, "memory_available", lambda: 1_000)
    with pytest.raises(rcsim.InputError, match="r.h5: /temperature: loading this history"):
        res.temperatures


# ---- SIGTERM and SIGHUP are handled like Ctrl-C (issue 16, item 13) ---------------------------
@pytest.mark.skipif(sys.platform == "win32", reason="POSIX signals")
@pytest.mark.parametrize("name,status", [("SIGTERM", 128 + 15), ("SIGHUP", 128 + 1)])
@pytest.mark.slow
def test_stop_signals_stop_a_run_cleanly(tmp_path, name, status):
    # the status a POSIX shell reports for a process ended by signal n is 128 + n (common practice)
    out = tmp_path / "out.h5"
    proc = _start(tmp_path, out)
    _wait_for_temp_file(tmp_path, proc)
    time.sleep(0.5)
    proc.send_signal(getattr(signal, name))
    stdout, stderr = proc.communicate(timeout=60)
    assert proc.returncode == status, (stdout, stderr)
    assert f"{name} received: interrupted at t = " in stderr
    assert "Traceback" not in stderr
    assert sorted(p.name for p in tmp_path.iterdir()) == ["long.toml"]  # no temporary file left


@pytest.mark.skipif(sys.platform == "win32", reason="POSIX signals")
@pytest.mark.slow
def test_an_ignored_hangup_stays_ignored(tmp_path):
    # started under nohup (SIGHUP ignored), a run goes on through a hangup
    out = tmp_path / "out.h5"
    scenario = tmp_path / "long.toml"
    scenario.write_text(LONG.replace('"400 d"', '"4 d"'))
    code = ("import signal, sys; signal.signal(signal.SIGHUP, signal.SIG_IGN); "
            "from rcsim.cli import main; sys.exit(main())")
    proc = subprocess.Popen([sys.executable, "-c", code, "run", str(scenario), "-o", str(out)],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    _wait_for_temp_file(tmp_path, proc)
    proc.send_signal(signal.SIGHUP)
    stdout, stderr = proc.communicate(timeout=300)
    assert proc.returncode == 0, stderr
    assert out.exists()


# ---- sweeps: Ctrl-C and signals stop them, workers never outlive their parent -----------------
def _start_sweep(tmp_path, executor, duration="60 d", runs=4, workers=2, session=False):
    scenario = tmp_path / "long.toml"
    scenario.write_text(LONG.replace('"400 d"', f'"{duration}"'))
    code = "import sys; from rcsim.cli import main; sys.exit(main())"
    args = [sys.executable, "-c", code, "sweep", str(scenario), "--vary",
            f"links.wall.resistance=0.04K/W..0.06K/W:{runs}", "--executor", executor,
            "--workers", str(workers), "-o", str(tmp_path / "table.csv")]
    return subprocess.Popen(args, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True,
                            start_new_session=session)


def _children(pid):
    out = subprocess.run(["ps", "--ppid", str(pid), "-o", "pid="], capture_output=True,
                         text=True).stdout
    return [int(p) for p in out.split()]


def _running(pid) -> bool:
    """Whether ``pid`` is a live process (an exited one waiting to be reaped does not count)."""
    try:
        with open(f"/proc/{pid}/stat") as fh:
            return fh.read().rsplit(")", 1)[1].split()[0] not in ("Z", "X")
    except OSError:
        return False


def _wait_for_workers(proc, n, timeout=60.0):
    t0 = time.time()
    while time.time() - t0 < timeout:
        kids = _children(proc.pid)
        if len(kids) >= n:
            time.sleep(1.5)        # inside their first runs
            return kids
        if proc.poll() is not None:
            pytest.fail(f"the sweep ended early: {proc.communicate()}")
        time.sleep(0.05)
    pytest.fail("the sweep's workers did not start")


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="POSIX signals, /proc")
@pytest.mark.parametrize("executor,name,status", [
    ("serial", "SIGINT", 130), ("processes", "SIGINT", 130), ("processes", "SIGTERM", 143),
    ("serial", "SIGHUP", 129), ("dask", "SIGINT", 130)])
@pytest.mark.slow
def test_a_stopped_sweep_stops_at_once(tmp_path, executor, name, status):
    # before: Ctrl-C in a serial sweep was a failed row and the sweep ran on (exit 0); a process
    # sweep waited for the running batches (minutes) before leaving
    proc = _start_sweep(tmp_path, executor)
    kids = _wait_for_workers(proc, 2) if executor != "serial" else (time.sleep(8) or [])
    if executor == "dask":
        time.sleep(6)   # past the cluster's start (Ctrl-C while it starts: the test below)
    proc.send_signal(getattr(signal, name))
    _stdout, stderr = proc.communicate(timeout=30)
    assert proc.returncode == status, stderr
    said = "interrupted after 0 of 4 runs; no table written"
    assert [x for x in stderr.splitlines() if x.strip()] == [
        said if name == "SIGINT" else f"{name} received: {said}"]   # one line, nothing else
    assert sorted(p.name for p in tmp_path.iterdir()) == ["long.toml"]
    deadline = time.time() + 10
    while any(_running(k) for k in kids) and time.time() < deadline:
        time.sleep(0.1)
    assert not any(_running(k) for k in kids)


def _session(sid) -> list[int]:
    """The live processes of session ``sid`` (``ps -s``)."""
    out = subprocess.run(["ps", "-s", str(sid), "-o", "pid="], capture_output=True,
                         text=True).stdout
    return [int(p) for p in out.split() if _running(int(p))]


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="POSIX signals, /proc")
@pytest.mark.parametrize("after", [0.3, 1.5])
@pytest.mark.slow
def test_ctrl_c_while_a_local_dask_cluster_starts_is_one_line(tmp_path, after):
    # Ctrl-C at a terminal is SIGINT to the whole foreground process group (POSIX job
    # control): the sweep, the fork server and Dask's worker processes, still importing.
    # Before, each worker printed its KeyboardInterrupt traceback and Dask its own at exit.
    pytest.importorskip("dask.distributed")
    proc = _start_sweep(tmp_path, "dask", session=True)
    t0 = time.time()
    while not _children(proc.pid) and time.time() - t0 < 60:   # the first process it starts
        if proc.poll() is not None:
            pytest.fail(f"the sweep ended early: {proc.communicate()}")
        time.sleep(0.02)
    time.sleep(after)                  # inside the cluster's start (it takes seconds here)
    started = len(_session(proc.pid))
    os.killpg(proc.pid, signal.SIGINT)
    _stdout, stderr = proc.communicate(timeout=120)
    assert proc.returncode == 130, stderr
    assert [x for x in stderr.splitlines() if x.strip()] == [
        "interrupted after 0 of 4 runs; no table written"], stderr   # one line, nothing else
    assert started >= 1
    assert sorted(p.name for p in tmp_path.iterdir()) == ["long.toml"]
    deadline = time.time() + 10
    while _session(proc.pid) and time.time() < deadline:   # no worker outlives the sweep
        time.sleep(0.1)
    assert not _session(proc.pid)


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="POSIX signals, /proc")
@pytest.mark.slow
def test_workers_leave_when_their_parent_is_killed(tmp_path):
    proc = _start_sweep(tmp_path, "processes")
    kids = _wait_for_workers(proc, 2)
    proc.kill()   # SIGKILL: the parent cleans nothing up; the workers notice on their own
    proc.communicate(timeout=30)
    deadline = time.time() + 10
    while any(_running(k) for k in kids) and time.time() < deadline:
        time.sleep(0.1)
    assert not any(_running(k) for k in kids)


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="POSIX signals, /proc")
@pytest.mark.slow
def test_a_signal_to_the_whole_process_group_is_one_line(tmp_path):
    # a terminal's hangup or a supervisor's SIGTERM reaches every process of the group, idle
    # workers included: they end quietly (no traceback of theirs), the parent says how far it got
    proc = _start_sweep(tmp_path, "processes", runs=2, workers=4, session=True)
    kids = _wait_for_workers(proc, 4)
    os.killpg(proc.pid, signal.SIGTERM)
    _stdout, stderr = proc.communicate(timeout=30)
    assert proc.returncode == 143, stderr
    assert [x for x in stderr.splitlines() if x.strip()] == [
        "SIGTERM received: interrupted after 0 of 2 runs; no table written"]
    assert not any(_running(k) for k in kids)
