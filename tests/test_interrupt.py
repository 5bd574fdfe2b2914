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
