"""The rcsim command through click's CliRunner: outputs, exit codes, files."""

import os

import h5py
import pytest

from conftest import SCENARIOS

COLD_BOX = os.path.join(SCENARIOS, "cold-box.toml")


def test_check(cli):
    r = cli("check", COLD_BOX)
    assert r.exit_code == 0, r.output
    assert "cold-box.toml: ok" in r.output
    assert "foam" in r.output and "R = " in r.output


_RISING_CSV_RUN = """
[simulation]
duration = "48 h"
step = "10 min"
initial = "{initial}"

[boundaries.out]
temperature = {{ csv = {{ file = "rise.csv", column = "T", time = "t" }} }}

[nodes.a]
capacity = "100 kJ/K"

[links.wall]
between = ["out", "a"]
resistance = "0.05 K/W"
"""


@pytest.mark.parametrize("initial, hours, expect", [
    ("steady", 48, None),                                    # runs: check says ok
    ("periodic", 48, "a periodic start needs periodic inputs"),  # a rising CSV does not repeat
    ("steady", 24, "covers 0 s to 86400 s"),                 # the CSV ends at 24 h = 86400 s
    ("given", 48, "no initial temperature"),                 # node a has no initial value
])
def test_check_refuses_what_run_refuses(cli, tmp_path, initial, hours, expect):
    # check and run must agree: what run refuses before integrating, check refuses too
    # (common practice for a validating command), with the same one-line message.
    rows = "".join(f"{3600 * h},{20 + 0.1 * h}\n" for h in range(hours + 1))
    (tmp_path / "rise.csv").write_text("t,T\n" + rows)
    scenario = tmp_path / "rise.toml"
    scenario.write_text(_RISING_CSV_RUN.format(initial=initial))
    checked = cli("check", str(scenario))
    ran = cli("run", str(scenario))
    assert checked.exit_code == ran.exit_code == (0 if expect is None else 2), checked.output
    if expect is not None:
        line = checked.output.strip().splitlines()[-1]
        assert line.startswith("error: ") and expect in line.lower(), checked.output
        assert line in ran.output


def test_steady_and_between(cli):
    r = cli("steady", COLD_BOX, "--between", "payload", "bay")
    assert r.exit_code == 0, r.output
    assert "equivalent resistance payload - bay" in r.output
    bad = cli("steady", COLD_BOX, "--between", "payload", "nowhere")
    assert bad.exit_code == 2
    assert bad.output.startswith("error: ")


def test_modes(cli):
    r = cli("modes", COLD_BOX)
    assert r.exit_code == 0, r.output
    assert "payload" in r.output and "mode" in r.output


def test_materials(cli):
    r = cli("materials", "--sources")
    assert r.exit_code == 0
    assert "polyurethane-foam" in r.output and "source:" in r.output
    r = cli("materials", "--category", "insulaton")
    assert r.exit_code == 2
    assert "did you mean 'insulation'" in r.output


def test_run_writes_files(cli, tmp_path):
    out = tmp_path / "r.h5"
    csv = tmp_path / "r.csv"
    r = cli("run", COLD_BOX, "-o", out, "--csv", csv)
    assert r.exit_code == 0, r.output
    assert "hold time" in r.output
    assert "energy" in r.output and "balance error" in r.output
    assert "caution" in r.output
    with h5py.File(out, "r") as h5:
        assert h5.attrs["scenario"] == open(COLD_BOX, encoding="utf-8").read()
    assert csv.exists()


def test_run_refuses_bad_output_paths_before_work(cli, tmp_path):
    r = cli("run", COLD_BOX, "-o", tmp_path / "nofolder" / "x.h5")
    assert r.exit_code == 2
    assert "does not exist" in r.output
    r = cli("run", COLD_BOX, "-o", tmp_path / "x.txt")
    assert r.exit_code == 2
    assert ".h5" in r.output


@pytest.mark.parametrize("cmd", ["run", "check", "steady", "modes"])
def test_missing_file(cli, tmp_path, cmd):
    r = cli(cmd, tmp_path / "none.toml")
    assert r.exit_code == 2
    assert "file not found" in r.output
    assert "Traceback" not in r.output


def test_warning_is_relayed(cli, tmp_path):
    text = open(COLD_BOX).read().replace(
        '{ conduction = { material = "polyurethane-foam", thickness = "50 mm", area = "1.05 m^2" } },',
        '{ conduction = { material = "concrete-medium", thickness = "150 mm", area = "1.05 m^2", slices = 1 } },')
    assert text != open(COLD_BOX).read()
    p = tmp_path / "b.toml"
    p.write_text(text)
    r = cli("check", p)
    assert r.exit_code == 0
    assert "warning:" in r.output and "Biot" in r.output


# -- the progress bar (rcsim.cli.progress, drawn by tqdm) -----------------------------------

@pytest.fixture
def clock(monkeypatch):
    """A clock the test moves by hand (tqdm reads time through tqdm.std.time)."""
    import tqdm.std

    now = [0.0]
    monkeypatch.setattr(tqdm.std, "time", lambda: now[0])
    return now


def test_progress_bar_appears_after_two_seconds_on_stderr_with_time_left(clock, monkeypatch):
    import io

    from rcsim.cli.progress import Progress

    err = io.StringIO()
    monkeypatch.setattr("sys.stderr", err)
    with Progress(True) as progress:
        for k in range(61):                     # a 6 s job at a constant rate, 0.1 s steps
            clock[0] = 0.1 * k
            progress(k / 60)
            if k == 19:
                assert err.getvalue() == ""     # 1.9 s: nothing shown yet
            if k == 30:
                # 3 s in, half done: 3 s left (closed form elapsed * (1 - f) / f; the bar was
                # last drawn at 2.9 s, 48.3 %, 3.1 s left, shown in whole seconds)
                assert err.getvalue().rstrip().endswith("48.3%  00:03 left")
    assert "100.0%  00:00 left" in err.getvalue()
    assert err.getvalue().endswith("\n")


def test_sweep_progress_counts_runs(clock, monkeypatch):
    import io

    from rcsim.cli.progress import Progress

    err = io.StringIO()
    monkeypatch.setattr("sys.stderr", err)
    with Progress(True, "sweep") as progress:
        for done in range(11):                  # 10 runs, one per second
            clock[0] = float(done)
            progress.runs(done, 10)
    assert "sweep" in err.getvalue() and "10/10 runs" in err.getvalue()
    assert "4/10 runs, 00:06 left" in err.getvalue()   # 4 s for 4 runs: 6 left at 1 run/s


def test_short_job_and_disabled_bar_print_nothing(clock, monkeypatch):
    import io

    from rcsim.cli.progress import Progress

    err = io.StringIO()
    monkeypatch.setattr("sys.stderr", err)
    with Progress(True) as quick:                # done within 2 s: never drawn
        for k in range(11):
            clock[0] = 0.15 * k
            quick(k / 10)
    with Progress(False) as off:                 # not a terminal, or --quiet
        clock[0] = 100.0
        off(0.5)
        off.runs(3, 4)
        assert off._bar is None
    assert err.getvalue() == ""


def test_summary_formatters_stay_importable_from_rcsim_cli():
    # names the single-file cli module had; they now live beside their commands
    from rcsim.cli import CAUTION, format_fit_summary, format_run_summary, format_sweep_summary
    from rcsim.cli.fit import format_fit_summary as fit_summary
    from rcsim.cli.run import format_run_summary as run_summary
    from rcsim.cli.sweep import format_sweep_summary as sweep_summary

    assert (format_run_summary, format_fit_summary, format_sweep_summary) == (
        run_summary, fit_summary, sweep_summary)
    assert CAUTION.startswith("caution: a simulation supports")


def test_internal_nodes_are_hidden_unless_asked(cli, tmp_path):
    # a sliced layer's internal nodes are named <link>.<i> (README, part kinds)
    text = open(COLD_BOX).read().replace(
        '{ conduction = { material = "polyurethane-foam", thickness = "50 mm", '
        'area = "1.05 m^2" } },',
        '{ conduction = { material = "polyurethane-foam", thickness = "50 mm", '
        'area = "1.05 m^2", slices = 3 } },')
    assert text != open(COLD_BOX).read()
    p = tmp_path / "sliced.toml"
    p.write_text(text)
    r = cli("run", p)
    assert r.exit_code == 0, r.output
    assert "(3 internal nodes of sliced layers not shown; --all-nodes lists them)" in r.output
    r = cli("run", p, "--all-nodes")
    assert r.exit_code == 0, r.output
    assert "internal nodes" not in r.output
    assert sum(line.lstrip().startswith("foam.") for line in r.output.splitlines()) == 3
