"""``rcsim fit`` through click's CliRunner: output, files, exit codes."""

import os

import pandas as pd

import rcsim

from conftest import SCENARIOS

BLOCK = os.path.join(SCENARIOS, "fit-block.toml")
LOG = os.path.join(SCENARIOS, "fit-block-log.csv")
FREE = ["--free", "nodes.block.capacity", "--free", "links.skin.resistance",
        "--free", "nodes.block.initial"]


def test_fit_prints_table_and_writes_files(cli, tmp_path):
    est, fitted, png = tmp_path / "est.csv", tmp_path / "fitted.toml", tmp_path / "fit.png"
    r = cli("fit", BLOCK, LOG, *FREE, "-o", est, "--write-scenario", fitted, "--plot", png,
            "--max-gap", "30 min")
    assert r.exit_code == 0, r.output
    out = r.output
    assert "fit-block.toml fitted to fit-block-log.csv: 678 measured values (block)" in out
    assert "measured inputs: room" in out
    assert "nodes.block.capacity" in out and "kJ/K" in out
    assert "RMSE" in out and "time constants of the fitted network" in out
    assert "caution:" in out
    # the 41-minute hole is longer than 30 min: reported on the warning lines
    assert "warning: fit-block-log.csv: column 'block' has no value for 41 min" in out
    table = pd.read_csv(est, index_col="key")
    assert list(table.columns[:4]) == ["value", "std_error", "ci_low", "ci_high"]
    assert table.loc["nodes.block.capacity", "unit"] == "J/K"
    # the generating value (make-fit-block-log.py) lies inside the written interval
    assert table.loc["nodes.block.capacity", "ci_low"] <= 1794.0 <= \
        table.loc["nodes.block.capacity", "ci_high"]
    sc = rcsim.load(fitted)
    assert sc.si_value("links.skin.resistance") == \
        float(f"{table.loc['links.skin.resistance', 'value']:.12g}")
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert not [p for p in os.listdir(tmp_path) if p.startswith(".rcsim-")]


def test_fit_gap_limit_silences_the_hole(cli):
    r = cli("fit", BLOCK, LOG, *FREE, "--max-gap", "1 h", "--starts", "1")
    assert r.exit_code == 0, r.output
    assert "warning:" not in r.output


def test_map_and_ignore(cli, write):
    text = open(LOG).read().replace("time,block,room", "time,probe 1,air,humidity")
    text = "\n".join(line + ("," if i else "") + ("50" if i else "")
                     for i, line in enumerate(text.splitlines())) + "\n"
    log = write("renamed.csv", text)
    r = cli("fit", BLOCK, log, *FREE, "--map", "probe 1=block", "--map", "air=room",
            "--ignore", "humidity", "--starts", "1")
    assert r.exit_code == 0, r.output
    assert "probe 1 -> block" in r.output and "air -> room" in r.output
    r = cli("fit", BLOCK, log, *FREE, "--map", "probe 1=block", "--map", "air=room")
    assert r.exit_code == 2
    assert "column 'humidity' matches no node or boundary" in r.output


def test_fit_bad_input_is_one_line_exit_2(cli, write, tmp_path):
    bad = write("bad.csv", "time,block,room\n0,20,20\n60,abc,20\n")
    with open(BLOCK, encoding="utf-8") as fh:  # the log begins at 08:00, an hour before
        dated = write("dated.toml", fh.read().replace(
            "[simulation]\n", "[simulation]\nstart = 2026-03-02T09:00:00\n"))
    cases = [
        (["fit", BLOCK, bad, *FREE], "column 'block' line 3 is not a number ('abc')"),
        (["fit", BLOCK, LOG], "nothing to fit"),
        (["fit", BLOCK, LOG, "--free", "nodes.blok.capacity"], "did you mean 'block'"),
        (["fit", BLOCK, LOG, *FREE, "--bound", "nodes.block.capacity=5"], "KEY=LOW..HIGH"),
        (["fit", BLOCK, LOG, *FREE, "--map", "nocolumn"], "COLUMN=NAME"),
        (["fit", BLOCK, LOG, *FREE, "--max-gap", "10 kg"], "expected a time"),
        (["fit", BLOCK, tmp_path / "none.csv", *FREE], "file not found"),
        (["fit", dated, LOG, *FREE], "simulation.start: fit-block-log.csv begins at"),
    ]
    for args, expected in cases:
        r = cli(*args)
        assert r.exit_code == 2, (args, r.output)
        assert r.output.startswith("error: ") and expected in r.output, (args, r.output)
        assert "Traceback" not in r.output
        assert r.output.count("\n") == 1


def test_fit_refuses_bad_output_paths_before_work(cli, tmp_path):
    r = cli("fit", BLOCK, LOG, *FREE, "--write-scenario", tmp_path / "nofolder" / "x.toml")
    assert r.exit_code == 2 and "does not exist" in r.output
    r = cli("fit", BLOCK, LOG, *FREE, "--plot", tmp_path / "x.gif")
    assert r.exit_code == 2 and ".png" in r.output
    assert os.listdir(tmp_path) == []


def test_fit_bounds_on_the_command_line(cli):
    r = cli("fit", BLOCK, LOG, *FREE, "--bound", "nodes.block.capacity=1kJ/K..1.5kJ/K",
            "--starts", "1", "--max-gap", "1h")
    assert r.exit_code == 0, r.output
    assert "warning: nodes.block.capacity ended at its upper bound" in r.output


def test_fit_sigma_option(cli):
    r = cli("fit", BLOCK, LOG, *FREE, "--sigma", "0.05 K", "--starts", "1", "--max-gap", "1h")
    assert r.exit_code == 0, r.output
    r = cli("fit", BLOCK, LOG, *FREE, "--sigma", "block=0.05 K", "--sigma", "room=1 K")
    assert r.exit_code == 2 and "sigma is given for 'room', which is no measured column" in r.output
    r = cli("fit", BLOCK, LOG, *FREE, "--sigma", "-1 K")
    assert r.exit_code == 2 and "sigma must be positive" in r.output
