"""Sweeps, samples and sensitivity (rcsim.sweep) against single runs, closed forms and scipy."""

import math
import os
import stat

import numpy as np
import pandas as pd
import pytest
from scipy import stats

import rcsim
from rcsim.errors import InputError, RcsimWarning
from rcsim.sweep import (LogNormal, Normal, SweepInterrupted, SweepTable, Triangular, Uniform,
                         check_table_path, first_order_indices, one_at_a_time, parse_spec,
                         percentiles, read_table, sweep)

from conftest import SCENARIOS

# a fixed linear box (tests/data) rather than the bundled shipper, which may change
COLD_BOX = os.path.join(os.path.dirname(os.path.abspath(__file__)), "data", "warmup-box.toml")
THICKNESS = "links.walls.parts[1].conduction.thickness"

# One lumped body warming in still air (an invented case): Newton's law of cooling gives
# T(t) = Ta + (T0 - Ta) exp(-t / (R C)), so the body passes 8 degC at
# t* = R C ln((Ta - T0) / (Ta - 8 degC)) when Ta > 8 degC, and never otherwise.
BODY = """
title = "Lumped body in warm air"
[simulation]
duration = "6 h"
step = "30 s"
[nodes.body]
capacity = "8.4 kJ/K"
initial = "5 degC"
[boundaries.air]
temperature = "30 degC"
[links.skin]
between = ["body", "air"]
resistance = "2.5 K/W"
[limits.body]
max = "8 degC"
"""
STEP = 30.0
DURATION = 6 * 3600.0


def body_hold_time(C, R, Ta, T0=5.0, Tmax=8.0):
    """Closed-form hold time of the lumped body [s] (inf where it stays below Tmax in the run)."""
    C, R, Ta = map(np.asarray, (C, R, Ta))
    with np.errstate(divide="ignore", invalid="ignore"):
        t = R * C * np.log((Ta - T0) / (Ta - Tmax))
    return np.where((Ta > Tmax) & (t <= DURATION), t, np.inf)


def linear_percentile(values, q):
    """Percentile by linear interpolation between order statistics (Hyndman & Fan 1996, type 7,
    numpy's default), with never-reached hold times (inf) ranked last."""
    s = np.sort(np.asarray(values, dtype=float))
    pos = (s.size - 1) * q / 100.0
    lo = int(math.floor(pos))
    frac = pos - lo
    if frac == 0.0:
        return float(s[lo])
    if not np.isfinite(s[lo + 1]):
        return math.inf
    return float(s[lo] + frac * (s[lo + 1] - s[lo]))


@pytest.fixture
def body(write):
    return rcsim.load(write("body.toml", BODY))


# -- grids against single runs ---------------------------------------------------------------
def test_thickness_grid_is_monotonic_and_matches_single_runs():
    sc = rcsim.load(COLD_BOX)
    table = sweep(sc, {THICKNESS: "30 mm..90 mm:7"}, executor="serial")
    np.testing.assert_allclose(table[THICKNESS], np.linspace(0.03, 0.09, 7), rtol=1e-15)
    # more insulation, slower warming: the hold time grows and the peak falls with thickness
    # (the wall resistance grows as L/(kA), Fourier; the node capacities do not change)
    assert np.all(np.diff(table["hold_time.payload"]) > 0)
    assert np.all(np.diff(table["max.payload"]) < 0)
    assert np.all(np.diff(table["time_outside_band.payload"]) < 0)
    # the former column name is kept as an alias: same values, after error, not an output
    # (issue 15: "time_out" read as "timeout")
    assert table["time_out.payload"].equals(table["time_outside_band.payload"])
    assert list(table.columns).index("time_out.payload") > list(table.columns).index("error")
    assert "time_out.payload" not in table.attrs["outputs"]
    assert (table["error"] == "").all()
    # every row equals a single run of the same scenario with that value (the reference path)
    for _, row in table.iterrows():
        res = sc.with_values({THICKNESS: row[THICKNESS]}).run()
        nodes = res.nodes.set_index("node")
        lim = res.limits.set_index("kind")
        assert row["max.payload"] == nodes.at["payload", "max [degC]"]
        assert row["min.box_air"] == nodes.at["box_air", "min [degC]"]
        assert row["hold_time.payload"] == lim.at["max", "hold_time [s]"]  # min side never left
        assert math.isnan(lim.at["min", "hold_time [s]"])
        assert row["time_out.payload"] == lim["time_out [s]"].sum()


def test_grid_keys_make_every_combination_first_key_slowest(body):
    table = sweep(body, {"nodes.body.capacity": ["8 kJ/K", "9 kJ/K"],
                         "links.skin.resistance": [2.0, 2.5, 3.0]}, executor="serial")
    # a full factorial in the documented order; the hold time is the closed form of each pair
    assert table["nodes.body.capacity"].tolist() == [8000.0] * 3 + [9000.0] * 3
    assert table["links.skin.resistance"].tolist() == [2.0, 2.5, 3.0] * 2
    expected = body_hold_time(table["nodes.body.capacity"], table["links.skin.resistance"], 30.0)
    np.testing.assert_allclose(table["hold_time.body"], expected, atol=STEP**2 / (8 * 16000))


# -- samples against the closed form ---------------------------------------------------------
def test_sampled_hold_times_match_the_closed_form_on_the_same_samples(body):
    table = sweep(body, {"nodes.body.capacity": "normal(8.4 kJ/K, 0.8 kJ/K)",
                         "links.skin.resistance": LogNormal("2.5 K/W", 1.2),
                         "boundaries.air.temperature": "uniform(7 degC, 60 degC)"},
                  samples=200, seed=11, executor="serial")
    C = table["nodes.body.capacity"].to_numpy()
    R = table["links.skin.resistance"].to_numpy()
    Ta = table["boundaries.air.temperature"].to_numpy()
    expected = body_hold_time(C, R, Ta)
    got = np.where(np.isnan(table["hold_time.body"]), np.inf, table["hold_time.body"])
    # crossing times come from linear interpolation between output samples: for an exponential
    # the error is at most h^2 / (8 tau) to first order (h the step, tau = RC)
    tol = 1.5 * STEP**2 / (8 * R * C)
    finite = np.isfinite(expected)
    assert np.array_equal(np.isfinite(got), finite)
    assert (~finite).sum() >= 3  # some runs in air at or below 8 degC never leave the band
    np.testing.assert_array_less(np.abs(got[finite] - expected[finite]), tol[finite])
    # a percentile moves no more than the largest change of any value (it is 1-Lipschitz), so
    # the percentiles of the table match those of the closed form within the same tolerance
    pct = percentiles(table, q=(5, 50, 95, 99)).loc["hold_time.body"]
    for q in (5, 50, 95, 99):
        assert pct[f"{q} %"] == pytest.approx(linear_percentile(expected, q),
                                              abs=float(tol.max()))
    assert math.isfinite(pct["95 %"]) and pct["99 %"] == math.inf
    assert pct["never"] == (~finite).sum()
    # the peak temperature of a body that starts colder than the air is its final value
    t_end = Ta + (5.0 - Ta) * np.exp(-DURATION / (R * C))
    warm = Ta > 5.0
    np.testing.assert_allclose(table["max.body"][warm], t_end[warm], rtol=1e-9)


def test_same_seed_same_draws_in_the_documented_order(body):
    vary = {"nodes.body.capacity": Normal(8400.0, 800.0),
            "links.skin.resistance": Triangular(2.0, 2.5, 3.5)}
    a = sweep(body, vary, samples=5, seed=3, executor="serial")
    b = sweep(body, vary, samples=5, seed=3, executor="serial")
    pd.testing.assert_frame_equal(a, b)
    # the draws are numpy's default_rng(seed), one key after the other
    rng = np.random.default_rng(3)
    np.testing.assert_array_equal(a["nodes.body.capacity"], rng.normal(8400.0, 800.0, 5))
    np.testing.assert_array_equal(a["links.skin.resistance"], rng.triangular(2.0, 2.5, 3.5, 5))
    c = sweep(body, vary, samples=5, seed=4, executor="serial")
    assert not np.array_equal(a["nodes.body.capacity"], c["nodes.body.capacity"])
    # without a seed one is drawn and kept, so the sweep can be repeated
    d = sweep(body, vary, samples=3, executor="serial")
    e = sweep(body, vary, samples=3, seed=d.attrs["seed"], executor="serial")
    pd.testing.assert_frame_equal(d.drop(columns=[]), e)


def test_grid_with_samples_reuses_the_same_draws_at_every_grid_point(body):
    table = sweep(body, {"links.skin.resistance": [2.0, 3.0],
                         "nodes.body.capacity": Uniform(7000.0, 9000.0)},
                  samples=4, seed=5, executor="serial")
    assert len(table) == 8
    assert table["links.skin.resistance"].tolist() == [2.0] * 4 + [3.0] * 4
    np.testing.assert_array_equal(table["nodes.body.capacity"][:4],
                                  table["nodes.body.capacity"][4:])


@pytest.mark.parametrize("dist, reference", [
    (Uniform(2.0, 5.0), stats.uniform(loc=2.0, scale=3.0)),
    (Normal(10.0, 2.0), stats.norm(loc=10.0, scale=2.0)),
    # ln X ~ N(ln median, ln factor): scipy's lognorm with s = ln factor, scale = median
    (LogNormal(3.0, 1.5), stats.lognorm(s=math.log(1.5), scale=3.0)),
    (Triangular(1.0, 2.0, 4.0), stats.triang(c=1 / 3, loc=1.0, scale=3.0)),
])
def test_draws_follow_the_distribution(dist, reference):
    # Kolmogorov-Smirnov against scipy.stats' distribution (an independent implementation)
    x = dist.draw(np.random.default_rng(0), 4000)
    assert stats.kstest(x, reference.cdf).pvalue > 0.01
    assert dist.ends() == pytest.approx((reference.ppf(0.05), reference.ppf(0.95)), rel=1e-12)


def test_text_specs_with_units_are_converted_to_si():
    # 77 degF = 25 degC and 3.6 delta_degF = 2 K exactly (degC = (degF - 32) / 1.8)
    n = parse_spec("normal(77 degF, 3.6 delta_degF)").bind("temperature", "x")
    assert n.params == pytest.approx((25.0, 2.0), rel=1e-12)
    u = parse_spec("uniform(40 mm, 3 in)").bind("length", "x")  # 1 in = 25.4 mm exactly
    assert u.params == pytest.approx((0.04, 0.0762), rel=1e-12)
    h = parse_spec("triangular(2 W/(m^2*K), 3 W/(m^2*K), 5 W/(m^2*K))").bind(
        "heat_transfer_coefficient", "x")
    assert h.params == (2.0, 3.0, 5.0)
    g = parse_spec("40mm..80mm:3").bind("length", "x")
    assert g.values == pytest.approx((0.04, 0.06, 0.08), rel=1e-12)
    assert parse_spec("1 kJ/K,2 kJ/K").bind("capacity", "x").values == (1000.0, 2000.0)


@pytest.mark.parametrize("text, match", [
    ("normall(1,2)", "did you mean 'normal'"),
    ("normal(1)", "normal takes 2 values"),
    ("1..2:1", "at least 2 points"),
    ("1..2:x", "not a whole number"),
    ("..5", "cannot read the range"),
])
def test_bad_specs_name_the_problem(text, match):
    with pytest.raises(InputError, match=match):
        parse_spec(text, "--vary k")


@pytest.mark.parametrize("dist, kind, match", [
    (Normal("25 degC", "2 degC"), "temperature", "temperature difference"),
    (LogNormal("25 degC", 1.2), "temperature", "log-normal needs a positive quantity"),
    (LogNormal(1.0, 0.9), "length", "factor above 1"),
    (Uniform(3.0, 2.0), "length", "low < high"),
    (Triangular(1.0, 5.0, 4.0), "length", "low <= mode <= high"),
    (Normal("5 mm", "2 kg"), "length", "expected a length"),
])
def test_bad_distributions_are_refused(dist, kind, match):
    with pytest.raises(InputError, match=match):
        dist.bind(kind, "vary k")


# -- checks before any run -------------------------------------------------------------------
@pytest.mark.parametrize("vary, samples, match", [
    ({"nodes.paylod.capacity": [1.0, 2.0]}, None, "did you mean 'payload'"),
    ({"links.walls.parts[1].conduction.thicknes": [0.05]}, None, "did you mean 'thickness'"),
    ({"links.walls.between": [1.0]}, None, "does not hold a single number"),
    ({THICKNESS: "normal(50mm,5mm)"}, None, "need a number of samples"),
    ({THICKNESS: [0.04, 0.05]}, 10, "no key has a distribution"),
    ({THICKNESS: "-10 mm..50 mm:3"}, None, "value -0.01 is refused"),
    ({}, None, "nothing to vary"),
])
def test_bad_designs_are_refused_before_any_run(vary, samples, match):
    calls = []
    with pytest.raises(InputError, match=match):
        sweep(COLD_BOX, vary, samples=samples, executor="serial",
              progress=lambda d, n: calls.append(d))
    assert calls == []


def test_bad_options_are_refused(tmp_path):
    with pytest.raises(InputError, match="unknown executor 'proceses'.*did you mean"):
        sweep(COLD_BOX, {THICKNESS: [0.05]}, executor="proceses")
    with pytest.raises(InputError, match="should end with .csv, .h5 or .parquet"):
        sweep(COLD_BOX, {THICKNESS: [0.05]}, output=tmp_path / "t.xlsx")
    with pytest.raises(InputError, match="more than the limit"):
        sweep(COLD_BOX, {THICKNESS: "1mm..9mm:50", "nodes.payload.mass": "1kg..9kg:50"},
              max_runs=100)


# -- failures, warnings, interruption ---------------------------------------------------------
def test_a_failed_run_is_a_row_and_the_sweep_goes_on(body):
    # a normal with a wide spread draws some negative resistances, which the model refuses
    table = sweep(body, {"links.skin.resistance": Normal(1.0, 1.5)}, samples=12, seed=2,
                  executor="serial")
    bad = table["links.skin.resistance"] < 0
    assert bad.any() and (~bad).any()
    assert (table.loc[bad, "error"].str.contains("resistance")).all()
    assert table.loc[bad, ["min.body", "max.body", "hold_time.body"]].isna().all().all()
    assert (table.loc[~bad, "error"] == "").all()
    pct = percentiles(table)
    assert pct.at["max.body", "runs"] == (~bad).sum()


def test_warnings_of_the_runs_are_relayed_once_with_a_count():
    text = open(COLD_BOX).read().replace(
        '{ conduction = { material = "polyurethane-foam", thickness = "50 mm", area = "0.85 m^2" } },',
        '{ conduction = { material = "concrete-medium", thickness = "150 mm", area = "0.85 m^2", '
        'slices = 1 } },')
    with pytest.warns(RcsimWarning, match="Biot"):
        sc = rcsim.loads(text, name="heavy.toml")
    with pytest.warns(RcsimWarning, match=r"Biot.*\(in 3 of 3 runs\)") as caught:
        sweep(sc, {"nodes.payload.mass": [10, 11, 12]}, executor="serial")
    relayed = [w for w in caught if "Biot" in str(w.message)]
    assert len(relayed) == 1
    # the warning points at the line that called the sweep, outside rcsim
    assert relayed[0].filename == __file__


def test_interrupted_sweep_keeps_and_writes_the_finished_rows(body, tmp_path):
    out = tmp_path / "partial.csv"
    vary = {"links.skin.resistance": "2 K/W..3 K/W:9"}

    def stop_after_two_batches(done, total):
        if done >= 4:
            raise KeyboardInterrupt

    with pytest.raises(SweepInterrupted) as info:
        sweep(body, vary, executor="serial", batch_size=2, output=out,
              progress=stop_after_two_batches)
    stop = info.value
    assert (stop.done, stop.planned) == (4, 9)
    # the finished rows beside the requested table, under a name that says so
    assert stop.output == str(tmp_path / "partial.interrupted.csv")
    assert not out.exists()
    full = sweep(body, vary, executor="serial")
    saved = read_table(stop.output)
    assert list(saved.index) == [0, 1, 2, 3]
    np.testing.assert_array_equal(saved["hold_time.body"], full["hold_time.body"][:4])
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".")]  # no temporary left


def test_ctrl_c_inside_a_serial_run_stops_the_sweep(body, tmp_path, monkeypatch):
    # before: the run's Interrupted (Ctrl-C during a run) was caught as one failed row and the
    # sweep ran on to the end
    from rcsim.errors import Interrupted
    from rcsim.scenario import Scenario

    real_run, calls = Scenario.run, []

    def run(self, **kwargs):
        calls.append(1)
        if len(calls) == 3:
            raise Interrupted("interrupted at t = 5 s of 100 s")
        return real_run(self, **kwargs)

    monkeypatch.setattr(Scenario, "run", run)
    out = tmp_path / "grid.h5"
    with pytest.raises(SweepInterrupted) as info:
        sweep(body, {"links.skin.resistance": "2 K/W..3 K/W:6"}, executor="serial",
              batch_size=1, output=out)
    assert (info.value.done, info.value.planned, len(calls)) == (2, 6, 3)
    assert not out.exists()
    record = SweepTable.read(info.value.output)
    assert record.interrupted and list(record.frame.index) == [0, 1]
    assert (record.frame["error"] == "").all()


@pytest.mark.parametrize("suffix", [".csv", ".h5", ".parquet"])
def test_sweep_tables_have_the_mode_of_any_new_file(body, tmp_path, suffix):
    # an ordinary new file gets 0666 minus the umask (POSIX open(2), O_CREAT), not mkstemp's 0600
    mask = os.umask(0o022)
    try:
        sweep(body, {"links.skin.resistance": [2.0, 3.0]}, executor="serial",
              output=tmp_path / f"t{suffix}")
    finally:
        os.umask(mask)
    assert stat.S_IMODE(os.stat(tmp_path / f"t{suffix}").st_mode) == 0o644


# -- executors --------------------------------------------------------------------------------
@pytest.mark.slow
def test_same_table_from_serial_processes_and_dask(body):
    from dask.distributed import Client, LocalCluster

    vary = {"nodes.body.capacity": "normal(8.4 kJ/K, 0.8 kJ/K)",
            "links.skin.resistance": Normal(2.0, 1.2)}          # some negative: failed rows too
    serial = sweep(body, vary, samples=10, seed=9, executor="serial")
    assert (serial["error"] != "").any() and (serial["error"] == "").any()
    procs = sweep(body, vary, samples=10, seed=9, executor="processes", workers=2, batch_size=3)
    pd.testing.assert_frame_equal(serial, procs)
    assert SweepTable.from_frame(procs).executor == {"name": "processes", "workers": 2,
                                                     "scheduler": None}
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                      dashboard_address=None) as cluster, Client(cluster) as client:
        dask = sweep(body, vary, samples=10, seed=9, executor="dask", scheduler=client,
                     batch_size=3)
    pd.testing.assert_frame_equal(serial, dask)


# -- sensitivity ------------------------------------------------------------------------------
def test_first_order_indices_of_a_linear_model():
    # y = sum a_i x_i with independent inputs: S_i = a_i^2 Var(x_i) / Var(y) (Saltelli et al.,
    # Global Sensitivity Analysis: The Primer, 2008, ch. 1). Variances: uniform (b - a)^2 / 12,
    # normal sd^2, triangular (a^2 + b^2 + c^2 - ab - ac - bc) / 18.
    rng = np.random.default_rng(42)
    n = 6000
    dists = {"u": Uniform(0.0, 2.0), "g": Normal(1.0, 0.5), "t": Triangular(0.0, 1.0, 4.0)}
    var = {"u": 4 / 12, "g": 0.25, "t": (0 + 1 + 16 - 0 - 0 - 4) / 18}
    a = {"u": 3.0, "g": -2.0, "t": 1.0}
    data = {k: d.draw(rng, n) for k, d in dists.items()}
    y = sum(a[k] * data[k] for k in dists)
    table = pd.DataFrame({**data, "max.y": y})
    s = first_order_indices(table, inputs=list(dists), outputs=["max.y"])["max.y"]
    total = sum(a[k] ** 2 * var[k] for k in dists)
    for k in dists:
        # sampling error of the estimate ~ 1/sqrt(n) ~ 0.013
        assert s[k] == pytest.approx(a[k] ** 2 * var[k] / total, abs=0.03)


def test_first_order_indices_of_the_ishigami_function():
    # Ishigami & Homma (1990), a = 7, b = 0.1, x ~ U(-pi, pi)^3; analytic partial variances
    # V1 = (1 + b pi^4 / 5)^2 / 2, V2 = a^2 / 8, V3 = 0 and
    # V = a^2/8 + b pi^4/5 + b^2 pi^8/18 + 1/2 (S1 = 0.3139, S2 = 0.4424, S3 = 0 as tabulated by
    # Saltelli et al. 2008)
    a, b = 7.0, 0.1
    rng = np.random.default_rng(7)
    x = rng.uniform(-np.pi, np.pi, size=(10000, 3))
    y = np.sin(x[:, 0]) + a * np.sin(x[:, 1]) ** 2 + b * x[:, 2] ** 4 * np.sin(x[:, 0])
    table = pd.DataFrame({"x1": x[:, 0], "x2": x[:, 1], "x3": x[:, 2], "max.y": y})
    s = first_order_indices(table, inputs=["x1", "x2", "x3"], outputs=["max.y"])["max.y"]
    v = a**2 / 8 + b * np.pi**4 / 5 + b**2 * np.pi**8 / 18 + 0.5
    expected = [(1 + b * np.pi**4 / 5) ** 2 / 2 / v, a**2 / 8 / v, 0.0]
    assert expected[:2] == pytest.approx([0.3139, 0.4424], abs=1e-4)
    np.testing.assert_allclose(s.to_numpy(), expected, atol=0.03)


def test_runs_with_an_open_energy_balance_count_in_no_statistic():
    # five runs: run 1 failed, run 3's energy balance is open (0.2 > 1e-3): percentiles over
    # runs 0, 2, 4 only (values 1, 3, 5: median 3, 25th percentile 2 by linear interpolation
    # between order statistics, Hyndman & Fan 1996 definition 7); without the mark it would be
    # over 1, 3, 100, 5 (median 4). The table keeps the run.
    t = pd.DataFrame({"k": [0.1, 0.2, 0.3, 0.4, 0.5],
                      "max.x": [1.0, np.nan, 3.0, 100.0, 5.0],
                      "error": ["", "diverged", "", "", ""],
                      "energy_balance": [1e-9, np.nan, 2e-6, 0.2, 1e-12]})
    pct = percentiles(t, q=(25, 50))
    assert pct.loc["max.x", "50 %"] == 3.0 and pct.loc["max.x", "25 %"] == 2.0
    assert pct.loc["max.x", "runs"] == 3 and pct.loc["max.x", "open_balance"] == 1
    assert pct.attrs["open_balance"] == 1
    assert len(t) == 5 and t.loc[3, "max.x"] == 100.0
    # exactly at the limit is closed (above 1e-3 is open, common practice of the run check)
    t.loc[3, "energy_balance"] = 1e-3
    assert percentiles(t, q=(50,)).loc["max.x", "50 %"] == 4.0    # median of 1, 3, 5, 100
    # the indices leave it out too: y = 2 k exactly on the trusted runs gives S = 1 for k
    # (a deterministic function of one input: Var(E[y|k]) = Var(y)); the open run, y far off
    # the line, is not counted
    rng = np.random.default_rng(3)
    k = rng.uniform(size=400)
    y = 2 * k
    balance = np.full(400, 1e-9)
    balance[::10] = 0.5
    y[::10] = rng.uniform(-50, 50, size=40)
    s = first_order_indices(pd.DataFrame({"k": k, "max.y": y, "energy_balance": balance}),
                            inputs=["k"], outputs=["max.y"])
    assert s.loc["k", "max.y"] == pytest.approx(1.0, abs=0.01)
    assert s.attrs["open_balance"] == 40


def test_one_at_a_time_matches_the_closed_form(body):
    oat = one_at_a_time(body, {"nodes.body.capacity": [6000.0, 10000.0],
                               "links.skin.resistance": Uniform(2.0, 3.0)}, executor="serial")
    rows = oat[oat["output"] == "hold_time.body"].set_index("input")
    # base: the scenario's own values C = 8400 J/K, R = 2.5 K/W, Ta = 30 degC
    tol = STEP**2 / (8 * 14000)
    assert rows["base"].iloc[0] == pytest.approx(body_hold_time(8400, 2.5, 30.0), abs=tol)
    cap = rows.loc["nodes.body.capacity"]
    assert cap["at_low"] == pytest.approx(body_hold_time(6000, 2.5, 30.0), abs=tol)
    assert cap["at_high"] == pytest.approx(body_hold_time(10000, 2.5, 30.0), abs=tol)
    res = rows.loc["links.skin.resistance"]
    assert (res["low"], res["high"]) == pytest.approx((2.05, 2.95), rel=1e-12)  # 5 % / 95 %
    assert res["at_high"] == pytest.approx(body_hold_time(8400, 2.95, 30.0), abs=tol)
    # ranked by swing (the hold time is proportional to RC): capacity spans 4000/8400 of its
    # base value, resistance 0.9/2.5 -> capacity first
    assert list(rows.index) == ["nodes.body.capacity", "links.skin.resistance"]


# -- table files ------------------------------------------------------------------------------
@pytest.mark.parametrize("suffix", [".csv", ".h5", ".parquet"])
def test_table_files_round_trip(body, tmp_path, suffix):
    path = tmp_path / f"t{suffix}"
    table = sweep(body, {"links.skin.resistance": Normal(1.0, 1.5)}, samples=6, seed=2,
                  executor="serial", output=path)
    back = read_table(path)
    pd.testing.assert_frame_equal(back, table, check_dtype=False, check_index_type=False)
    assert (back["error"] != "").any()
    if suffix != ".csv":
        assert back.attrs["seed"] == 2
        assert back.attrs["units"]["hold_time.body"] == "s"
        assert back.attrs["limits"] == {"body": {"min": None, "max": 8.0}}


def test_missing_optional_packages_are_named(body, tmp_path, monkeypatch):
    import sys

    # a module set to None in sys.modules raises ImportError on import, as if not installed
    monkeypatch.setitem(sys.modules, "pyarrow", None)
    with pytest.raises(InputError, match="needs the pyarrow package.*rcsim\\[parquet\\]"):
        sweep(body, {"nodes.body.capacity": [8000.0]}, output=tmp_path / "t.parquet")
    monkeypatch.setitem(sys.modules, "dask.distributed", None)
    with pytest.raises(InputError, match="needs the dask and distributed packages.*rcsim\\[dask\\]"):
        sweep(body, {"nodes.body.capacity": [8000.0]}, executor="dask")
    assert not list(tmp_path.glob("*.parquet"))


def test_one_at_a_time_holds_single_values_and_needs_a_range(body):
    oat = one_at_a_time(body, {"nodes.body.capacity": [6000.0, 10000.0],
                               "boundaries.air.temperature": "40 degC"}, executor="serial")
    rows = oat[oat["output"] == "hold_time.body"]
    assert list(rows["input"]) == ["nodes.body.capacity"]
    # every run in 40 degC air: the base is the closed form at C = 8400 J/K, Ta = 40 degC
    assert rows["base"].iloc[0] == pytest.approx(body_hold_time(8400, 2.5, 40.0),
                                                 abs=STEP**2 / (8 * 21000))
    with pytest.raises(InputError, match="at least one key with a range"):
        one_at_a_time(body, {"nodes.body.capacity": "8 kJ/K"}, executor="serial")


def test_a_worker_that_dies_stops_the_sweep_with_one_line(body, monkeypatch):
    import importlib

    from concurrent.futures import Future
    from concurrent.futures.process import BrokenProcessPool

    sweep_module = importlib.import_module("rcsim.sweep")

    class DeadPool:  # a pool whose worker died: every result raises BrokenProcessPool
        def __init__(self, *a, **k):
            pass

        def submit(self, *a, **k):
            f = Future()
            f.set_exception(BrokenProcessPool("a process terminated abruptly"))
            return f

        def shutdown(self, *a, **k):
            pass

    monkeypatch.setattr("concurrent.futures.ProcessPoolExecutor", DeadPool)
    with pytest.raises(rcsim.SolverError, match="sweep worker stopped unexpectedly.*abruptly"):
        sweep_module.sweep(body, {"nodes.body.capacity": [8000.0, 9000.0]}, workers=2)


def test_the_table_metadata_as_a_typed_record(body, tmp_path):
    table = sweep(body, {"nodes.body.capacity": ["8 kJ/K", "9 kJ/K"],
                         "links.skin.resistance": Normal("2.5 K/W", "0.2 K/W")},
                  samples=3, seed=7, executor="serial")
    record = SweepTable.from_frame(table)
    assert record.frame is table and record.to_frame() is table
    # what the scenario text (BODY) and the call say: [limits.body] max = "8 degC",
    # duration = "6 h", the keys in the order given, the seed and the draws per grid point
    assert record.limits == {"body": {"min": None, "max": 8.0}}
    assert record.duration == 6 * 3600.0
    assert record.inputs == ["nodes.body.capacity", "links.skin.resistance"]
    assert record.outputs == ["min.body", "max.body", "hold_time.body",
                              "time_outside_band.body"]
    assert (record.seed, record.samples, record.interrupted, record.failed) == (7, 3, False, 0)
    assert record.units == {"nodes.body.capacity": "J/K", "links.skin.resistance": "K/W",
                           "min.body": "degC", "max.body": "degC", "hold_time.body": "s",
                           "time_outside_band.body": "s"}
    assert record.design == {"nodes.body.capacity": "grid [8000, 9000] J/K",
                             "links.skin.resistance": "normal(2.5, 0.2) K/W"}
    assert record.executor == {"name": "serial", "workers": 1, "scheduler": None}
    # the rows are the closed form of each (C, R) pair
    np.testing.assert_allclose(record.frame["hold_time.body"],
                               body_hold_time(table["nodes.body.capacity"],
                                              table["links.skin.resistance"], 30.0),
                               atol=STEP**2 / (8 * 16000))
    # the statistics take the record as well as the frame
    pd.testing.assert_frame_equal(percentiles(record), percentiles(table))
    # written and read back, the record is the same
    back = SweepTable.read(record.write(tmp_path / "t.h5"))
    pd.testing.assert_frame_equal(back.frame, table, check_dtype=False, check_index_type=False)
    assert back.metadata() == record.metadata()


@pytest.mark.parametrize("suffix", [".csv", ".h5", ".parquet"])
def test_tables_written_before_the_split_still_read(suffix):
    # written by rcsim 0.1 (sweep.py as one module, before it became a package): BODY with
    # links.skin.resistance ~ normal(1, 1.5) (seed 3, 3 draws) at nodes.body.capacity 8 and 9 kJ/K
    path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "data",
                        f"sweep-table-0.1{suffix}")
    record = SweepTable.read(path)
    table = record.frame
    draws = np.random.default_rng(3).normal(1.0, 1.5, 3)   # numpy's draws, one negative
    np.testing.assert_allclose(table["links.skin.resistance"], np.tile(draws, 2), rtol=1e-15)
    assert table["nodes.body.capacity"].tolist() == [8000.0] * 3 + [9000.0] * 3
    bad = table["links.skin.resistance"] < 0
    assert bad.sum() == 2 and table.loc[bad, "error"].str.contains("must be positive").all()
    assert (table.loc[~bad, "error"] == "").all() and record.failed == 2
    ok = ~bad.to_numpy()
    expected = body_hold_time(table["nodes.body.capacity"], table["links.skin.resistance"], 30.0)
    np.testing.assert_allclose(table["hold_time.body"][ok], expected[ok],
                               atol=STEP**2 / (8 * 8000))
    # written before the rename: the outputs read under their current names, the old column stays
    assert record.outputs == ["min.body", "max.body", "hold_time.body",
                              "time_outside_band.body"]
    np.testing.assert_array_equal(table["time_outside_band.body"], table["time_out.body"])
    assert "time_out.body" not in record.inputs
    assert record.executor is None                          # not recorded then
    if suffix != ".csv":
        assert (record.seed, record.samples, record.duration) == (3, 3, 6 * 3600.0)
        assert record.design["nodes.body.capacity"] == "grid [8000, 9000] J/K"
    assert percentiles(table).at["hold_time.body", "runs"] == 4


def test_table_path_is_checked_by_its_public_name(tmp_path):
    import importlib

    sweep_package = importlib.import_module("rcsim.sweep")  # the package, not rcsim.sweep
    assert sweep_package._check_table_path is check_table_path  # the old name, kept for now
    assert check_table_path(tmp_path / "t.parquet") == str(tmp_path / "t.parquet")
    with pytest.raises(InputError, match="folder .* does not exist"):
        check_table_path(tmp_path / "nofolder" / "t.csv")
    with pytest.raises(InputError, match="is a directory"):
        (tmp_path / "d.csv").mkdir()
        check_table_path(tmp_path / "d.csv")


def test_rcsim_sweep_is_callable_whichever_import_came_first(body, monkeypatch):
    import importlib
    import inspect
    import json
    import subprocess
    import sys

    # in a fresh interpreter, a submodule imported before rcsim binds the package as rcsim.sweep
    vary = {"nodes.body.capacity": [8000.0, 9000.0]}
    script = f"""
import importlib, inspect, json
import rcsim.sweep.grammar
import rcsim
from rcsim.sweep import sweep
package = importlib.import_module("rcsim.sweep")
a = rcsim.sweep({body.path!r}, {vary!r}, executor="serial")
b = package({body.path!r}, {vary!r}, executor="serial")
c = sweep({body.path!r}, {vary!r}, executor="serial")
print(json.dumps([t["hold_time.body"].tolist() for t in (a, b, c)]
                 + [str(inspect.signature(package)) == str(inspect.signature(sweep))]))
"""
    out = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                         check=True).stdout
    *holds, same_signature = json.loads(out.strip().splitlines()[-1])
    expected = body_hold_time([8000.0, 9000.0], 2.5, 30.0)          # closed form
    for h in holds:
        np.testing.assert_allclose(h, expected, atol=STEP**2 / (8 * 20000))
    assert same_signature
    # calling the package forwards to its current sweep function (a replaced one included)
    package = importlib.import_module("rcsim.sweep")
    assert "samples" in inspect.signature(package).parameters
    monkeypatch.setattr(package, "sweep", lambda *a, **k: ("forwarded", a, k))
    assert package(body, vary, seed=1) == ("forwarded", (body, vary), {"seed": 1})
