"""``rcsim fit`` through click's CliRunner: output, files, exit codes."""

import os

import numpy as np
import pandas as pd
import pytest

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


# -- candidates, several logs, held-out span, process noise (issue 20) ------------------------
# Numbers checked against the Python API run in the same test on the same files; the API is
# checked against synthetic truth in tests/test_fit_compare.py and tests/test_fit_records.py.
def _quiet(fn, *args, **kwargs):
    import warnings

    from rcsim.fitting import FitWarning

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FitWarning)
        return fn(*args, **kwargs)


def _one_node_log(path, initial, seed, n=240, dt=120.0):
    """A log of one invented node (3 kJ/K behind 2 K/W, heated 20 W from 1 h to 4 h) by
    scipy.signal.lsim: columns M (measured), room and heat (drive the model)."""
    import numpy as np
    import scipy.signal as sig

    t = np.arange(n) * dt
    room = 15 + 2 * np.sin(2 * np.pi * t / 86400)
    heat = np.where((t >= 3600) & (t < 4 * 3600), 20.0, 0.0)
    C, R = 3000.0, 2.0
    _, y, _ = sig.lsim(sig.StateSpace([[-1 / (R * C)]], [[1 / C, 1 / (R * C)]], [[1.0]],
                                      [[0.0, 0.0]]), np.column_stack([heat, room]), t,
                       X0=[initial])
    rng = np.random.default_rng(seed)
    pd.DataFrame({"time": t, "M": y + rng.normal(0, 0.03, n), "room": room,
                  "heat": heat}).to_csv(path, index=False)
    return str(path)


def _candidate_files(tmp_path):
    from test_fit_compare import FREE_ONE, FREE_TWO, ONE, TWO

    one, two = tmp_path / "one.toml", tmp_path / "two.toml"
    one.write_text(f"[fit]\nfree = {FREE_ONE!r}\nlabel = 'one node'\n".replace("'", '"') + ONE,
                   encoding="utf-8")
    two.write_text(f"[fit]\nfree = {FREE_TWO!r}\nlabel = 'two nodes'\n".replace("'", '"') + TWO,
                   encoding="utf-8")
    return str(one), str(two)


@pytest.mark.slow
def test_candidates_compared_on_the_command_line(cli, tmp_path):
    from test_fit_compare import two_node_log

    log = tmp_path / "box.csv"
    two_node_log().to_csv(log, index=False)
    one, two = _candidate_files(tmp_path)
    table, chosen, fig = tmp_path / "cmp.csv", tmp_path / "chosen.toml", tmp_path / "all.png"
    r = cli("fit", one, log, "--candidate", two, "--holdout", "0.2", "--select", "lr",
            "--starts", "1", "--comparison", table, "--write-scenario", chosen, "--plot", fig)
    assert r.exit_code == 0, r.output
    api = _quiet(rcsim.fit, [one, two], str(log), holdout=0.2, select="lr", starts=1)
    written = pd.read_csv(table, index_col="candidate")
    assert list(written.index) == ["one node", "two nodes"]
    for col in ("log_likelihood", "aic", "bic", "rmse_holdout", "whiteness_p"):
        pd.testing.assert_series_equal(written[col], api.table[col].astype(float),
                                       check_names=False, rtol=1e-9)
    # the log came from two nodes: the likelihood-ratio test keeps the second
    assert api.selected == "two nodes" and written.loc["two nodes", "selected"]
    lr = 2 * (written.loc["two nodes", "log_likelihood"] - written.loc["one node",
                                                                       "log_likelihood"])
    assert "selected 'two nodes' by likelihood-ratio tests" in r.output
    assert f"LR {lr:.4g} on 3 df" in r.output
    assert rcsim.load(chosen).si_value("nodes.E.capacity") == pytest.approx(
        api.selected_fit.estimates.loc["nodes.E.capacity", "value"], rel=1e-9)
    assert fig.read_bytes()[:4] == b"\x89PNG"


@pytest.mark.slow
def test_several_logs_with_values_per_record(cli, tmp_path):
    from test_fit_compare import ONE

    sc = tmp_path / "one.toml"
    sc.write_text(ONE, encoding="utf-8")
    a = _one_node_log(tmp_path / "a.csv", 22.0, seed=1)
    b = _one_node_log(tmp_path / "b.csv", 9.0, seed=2)
    est = tmp_path / "est.csv"
    html = tmp_path / "fit.html"
    r = cli("fit", sc, "--log", a, "--log", b, "--free", "nodes.M.capacity", "--free",
            "links.out.resistance", "--per-record", "nodes.M.initial", "--starts", "1",
            "-o", est, "--plot", tmp_path / "fig.png", "--report", html)
    assert r.exit_code == 0, r.output
    api = _quiet(rcsim.fit, rcsim.load(sc), [a, b], ["nodes.M.capacity", "links.out.resistance"],
                 per_record=["nodes.M.initial"], starts=1)
    table = pd.read_csv(est, index_col="key")
    assert list(table.index) == list(api.estimates.index)
    pd.testing.assert_series_equal(table["value"], api.estimates["value"], rtol=1e-9,
                                   check_names=False)
    # each record's own starting temperature, near the one that made it
    assert table.loc["nodes.M.initial@a.csv", "value"] == pytest.approx(22.0, abs=0.1)
    assert table.loc["nodes.M.initial@b.csv", "value"] == pytest.approx(9.0, abs=0.1)
    assert "one.toml fitted to 2 logs at once" in r.output
    assert "a.csv: 240 values" in r.output and "b.csv: 240 values" in r.output
    assert (tmp_path / "fig-a.csv.png").exists() and (tmp_path / "fig-b.csv.png").exists()
    # the report: a section per log, each with its own starting temperature
    page = html.read_text(encoding="utf-8")
    assert "Log 1: a.csv" in page and "Log 2: b.csv" in page
    for name in ("a.csv", "b.csv"):
        value = repr(float(table.loc[f"nodes.M.initial@{name}", "value"]))
        assert f'data-value="{value}"' in page


@pytest.mark.slow
def test_process_noise_holdout_and_lags(cli, tmp_path):
    from test_fit_compare import ONE

    sc = tmp_path / "one.toml"
    sc.write_text(ONE, encoding="utf-8")
    log = _one_node_log(tmp_path / "a.csv", 22.0, seed=1)
    free = ["nodes.M.capacity", "links.out.resistance", "nodes.M.initial"]
    est = tmp_path / "est.csv"
    r = cli("fit", sc, log, *[a for k in free for a in ("--free", k)], "--noise", "process",
            "--holdout", "6 h..", "--lags", "6", "--starts", "1", "-o", est)
    assert r.exit_code == 0, r.output
    api = _quiet(rcsim.fit, rcsim.load(sc), log, free, noise="process", holdout="6 h..",
                 lags=6, starts=1)
    table = pd.read_csv(est, index_col="key")
    pd.testing.assert_series_equal(table["value"], api.estimates["value"], rtol=1e-9,
                                   check_names=False)
    assert "with process noise (Kalman filter)" in r.output
    assert f"RMSE {api.holdout_rmse:.4g} K over" in r.output
    q = api.whiteness.loc["M", "statistic"]
    assert f"M Q {q:.4g} on 6 lags" in r.output
    assert "measurement.M" in r.output


def test_new_fit_options_refuse_bad_input(cli, tmp_path):
    a = _one_node_log(tmp_path / "a.csv", 22.0, seed=1)
    before = set(os.listdir(tmp_path))
    cases = [
        (["fit", BLOCK, *FREE], "no log to fit"),
        (["fit", BLOCK, LOG, *FREE, "--comparison", tmp_path / "c.csv"],
         "there is no comparison without candidates"),
        (["fit", BLOCK, LOG, "--log", a, *FREE, "--report", tmp_path / "r.txt"], ".html"),
        (["fit", BLOCK, LOG, *FREE, "--holdout", "5 kg"], "holdout"),
        (["fit", BLOCK, LOG, *FREE, "--candidate", tmp_path / "none.toml"], "file not found"),
    ]
    for args, expected in cases:
        r = cli(*args)
        assert r.exit_code == 2, (args, r.output)
        errors = [ln for ln in r.output.splitlines() if ln.startswith("error:")]
        assert len(errors) == 1 and expected in errors[0], (args, r.output)
    assert set(os.listdir(tmp_path)) == before


@pytest.mark.slow
def test_an_undetermined_noise_gives_an_open_interval_without_a_numpy_warning(cli):
    # README example: one node fitted with process noise to the two-node case record
    # (scenarios/make-identify-log.py); the measurement noise is not determined (the process
    # noise takes it all), so its interval reaches infinity: said by the fit's own warning, not
    # by numpy overflowing in exp(log value + 1.96 se)
    case = os.path.join(SCENARIOS, "case-one-node.toml")
    log = os.path.join(SCENARIOS, "identify-case-log.csv")
    r = cli("fit", case, log, "--noise", "process", "--holdout", "0.2")
    assert r.exit_code == 0, r.output
    assert "overflow" not in r.output
    res = _quiet(rcsim.fit, case, log, noise="process", holdout=0.2)
    assert res.noise_estimates.loc["measurement.inside", "ci_high"] == float("inf")


def test_a_fitted_scenario_written_elsewhere_runs_with_no_option(cli, tmp_path):
    """The block's heater read from a CSV beside its scenario; the fitted scenario written into
    another folder gets a copy of the CSV (said on stdout) and `rcsim run` reads it with no
    option. The run is checked against the closed form of one node behind one resistance, with
    the fitted values: T = T_a + (T_0 - T_a) e^(-t/RC), plus P R (1 - e^(-t/RC)) while heated
    (standard heat-transfer texts, lumped capacitance)."""
    src, out = tmp_path / "src", tmp_path / "out"
    src.mkdir()
    out.mkdir()
    text = open(BLOCK, encoding="utf-8").read()
    steps = 'power = { steps = { at = ["0 h", "3 h", "7 h"], values = ["0 W", "8 W", "0 W"] } }'
    assert steps in text
    (src / "block.toml").write_text(text.replace(
        steps, 'power = { csv = { file = "heater.csv", column = "P [W]" } }'), encoding="utf-8")
    # the resistor's 8 W from 3 h to 7 h (ramps of 3.6 ms at the switching times)
    (src / "heater.csv").write_text("time [h],P [W]\n0,0\n2.999999,0\n3,8\n6.999999,8\n7,0\n"
                                    "12,0\n",
                                    encoding="utf-8")
    est, fitted = tmp_path / "est.csv", out / "fitted.toml"
    r = cli("fit", src / "block.toml", LOG, *FREE, "--starts", "1", "--max-gap", "1 h",
            "-o", est, "--write-scenario", fitted)
    assert r.exit_code == 0, r.output
    assert f"wrote {fitted}" in r.output
    assert f"copied {os.path.realpath(src / 'heater.csv')} to {out / 'heater.csv'}" in r.output
    assert (out / "heater.csv").read_bytes() == (src / "heater.csv").read_bytes()
    h5 = out / "run.h5"
    run = cli("run", fitted, "-o", h5)
    assert run.exit_code == 0, run.output
    T = rcsim.Result.load(str(h5)).temperatures["block"]
    table = pd.read_csv(est, index_col="key")["value"]
    C, R, T0 = (table[k] for k in ("nodes.block.capacity", "links.skin.resistance",
                                   "nodes.block.initial"))
    tau, room = R * C, 20.0           # the scenario's room: 20 degC (the log drove the fit)
    t3, t7 = 3 * 3600.0, 7 * 3600.0
    at3 = room + (T0 - room) * np.exp(-t3 / tau)
    decay = np.exp(-(t7 - t3) / tau)
    at7 = room + (at3 - room) * decay + 8.0 * R * (1 - decay)
    # the ramps add or take at most 8 W x 3.6 ms / C, below 2e-5 K
    assert T.loc[t3] == pytest.approx(at3, abs=1e-4)
    assert T.loc[t7] == pytest.approx(at7, abs=1e-4)


def test_command_line_options_override_a_fit_section(cli, tmp_path):
    """A [fit] section freeing the capacity only, with a 5 K sigma: --free and --sigma on the
    command line win, and one note names what they overrode. The estimates cover the values
    that made the log (scenarios/make-fit-block-log.py: 1794 J/K, 1.5 K/W, 6.0 degC)."""
    text = open(BLOCK, encoding="utf-8").read()
    sc = tmp_path / "block.toml"
    sc.write_text(text + '\n[fit]\nfree = ["nodes.block.capacity"]\nsigma = "5 K"\n',
                  encoding="utf-8")
    est = tmp_path / "est.csv"
    r = cli("fit", sc, LOG, *FREE, "--sigma", "0.05 K", "--starts", "1", "--max-gap", "1 h",
            "-o", est)
    assert r.exit_code == 0, r.output
    notes = [ln for ln in r.output.splitlines() if ln.startswith("note:")]
    assert notes == ["note: block.toml: the command line overrides its [fit] section's free "
                     "(--free), sigma (--sigma)"]
    assert "warning:" not in r.output
    table = pd.read_csv(est, index_col="key")
    assert list(table.index) == FREE[1::2]
    for key, truth in (("nodes.block.capacity", 1794.0), ("links.skin.resistance", 1.5),
                       ("nodes.block.initial", 6.0)):
        assert table.loc[key, "ci_low"] <= truth <= table.loc[key, "ci_high"], key
    # the section alone: its one free value; an option it does not give is no override
    r = cli("fit", sc, LOG, "--starts", "1", "--max-gap", "1 h", "-o", est)
    assert r.exit_code == 0 and "note:" not in r.output, r.output
    assert list(pd.read_csv(est, index_col="key").index) == ["nodes.block.capacity"]
