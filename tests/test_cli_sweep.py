"""``rcsim sweep`` through click's CliRunner: output, files, exit codes."""

import os

import numpy as np
import pytest

import rcsim
from rcsim.sweep import SweepInterrupted, read_table

from conftest import SCENARIOS

# a fixed linear box (tests/data) rather than the bundled shipper, which may change
COLD_BOX = os.path.join(os.path.dirname(os.path.abspath(__file__)), "data", "warmup-box.toml")
THICKNESS = "links.walls.parts[1].conduction.thickness"


def test_grid_sweep_prints_percentiles_and_writes_the_table(cli, tmp_path):
    out = tmp_path / "grid.csv"
    r = cli("sweep", COLD_BOX, "--vary", f"{THICKNESS}=30mm..90mm:4", "--executor", "serial",
            "-o", out, "--target-hold", "10 h")
    assert r.exit_code == 0, r.output
    assert "4 runs, in this process" in r.output
    assert "5 %" in r.output and "95 %" in r.output and "hold_time.payload" in r.output
    assert "failed runs: 0 of 4" in r.output
    assert "payload holds 10 h:" in r.output
    assert "caution" in r.output
    table = read_table(out)
    assert list(table.columns[:2]) == [THICKNESS, "min.payload"]
    # the same numbers as single runs of the scenario (the reference path)
    sc = rcsim.load(COLD_BOX)
    for _, row in table.iterrows():
        res = sc.with_values({THICKNESS: row[THICKNESS]}).run()
        hold = res.limits.set_index("kind").at["max", "hold_time [s]"]
        assert row["hold_time.payload"] == pytest.approx(hold, rel=1e-15)


@pytest.mark.slow
def test_sampled_sweep_with_tornado_and_plots(cli, tmp_path):
    out = tmp_path / "mc.h5"
    r = cli("sweep", COLD_BOX, "--vary", f"{THICKNESS}=normal(50mm,5mm)",
            "--vary", "boundaries.bay.temperature.sine.mean=normal(25degC,2K)",
            "--sample", 30, "--seed", 4, "--executor", "serial", "--tornado",
            "-o", out, "--plots", tmp_path / "figs")
    assert r.exit_code == 0, r.output
    assert "samples drawn with seed 4" in r.output
    assert "first-order indices" in r.output
    assert "one at a time" in r.output
    assert read_table(out).attrs["seed"] == 4
    assert any(n.startswith("warmup-box-tornado-") for n in os.listdir(tmp_path / "figs"))


@pytest.mark.parametrize("args, message", [
    (["--vary", "nodes.paylod.mass=10kg..14kg:3"], "did you mean 'payload'"),
    (["--vary", "nodes.payload.mass"], "expected KEY=VALUES"),
    (["--vary", "nodes.payload.mass=normal(12kg)"], "normal takes 2 values"),
    (["--vary", "nodes.payload.mass=normal(12kg,1kg)"], "need a number of samples"),
    (["--vary", "nodes.payload.mass=10kg..14kg:3", "--sample", "5"], "no key has a distribution"),
    (["--vary", "nodes.payload.mass=10kg..14kg:3", "--vary", "nodes.payload.mass=1kg"],
     "given twice"),
    (["--vary", "nodes.payload.mass=10 m..14 m:3"], "expected a mass"),
    (["--vary", "nodes.payload.mass=1kg", "--scheduler", "tcp://127.0.0.1:1",
      "--executor", "processes"], "need --executor dask"),
    (["--vary", "nodes.payload.mass=1kg", "-o", "x.xlsx"], "should end with .csv, .h5"),
    # a list item written with a dot: the list's own length names the indices (tests/data file)
    (["--vary", "links.walls.parts.1.conduction.thickness=30mm..90mm:4"],
     "'links.walls.parts' is a list of 4 item(s): "
     "write links.walls.parts[0] to links.walls.parts[3]"),
])
def test_bad_input_is_one_line_and_exit_2(cli, tmp_path, args, message):
    out = tmp_path / "t.csv"
    args = [str(tmp_path / a) if a == "x.xlsx" else a for a in args]
    if "-o" not in args:
        args += ["-o", out]
    r = cli("sweep", COLD_BOX, *args)
    assert r.exit_code == 2, r.output
    assert r.output.startswith("error: ") and message in r.output
    assert len(r.output.strip().splitlines()) == 1
    assert "Traceback" not in r.output
    assert not out.exists()


def test_interrupt_reports_how_far_it_got(cli, tmp_path, monkeypatch):
    import importlib

    import pandas as pd

    # the module, not the function rcsim.sweep that shadows it as a package attribute
    sweep_module = importlib.import_module("rcsim.sweep")

    def interrupted(*args, **kwargs):
        raise SweepInterrupted(pd.DataFrame({"a": [1.0, 2.0]}), 2, 10, str(tmp_path / "t.csv"))

    monkeypatch.setattr(sweep_module, "sweep", interrupted)
    r = cli("sweep", COLD_BOX, "--vary", "nodes.payload.mass=1kg..2kg:10", "-o",
            tmp_path / "t.csv")
    assert r.exit_code == 130
    assert "interrupted after 2 of 10 runs; wrote the 2 finished rows to" in r.output


def test_parquet_output(cli, tmp_path):
    out = tmp_path / "t.parquet"
    r = cli("sweep", COLD_BOX, "--vary", "nodes.payload.mass=10kg,12kg", "--executor", "serial",
            "-o", out, "--quiet")
    assert r.exit_code == 0, r.output
    assert r.output == ""
    table = read_table(out)
    np.testing.assert_array_equal(table["nodes.payload.mass"], [10.0, 12.0])
