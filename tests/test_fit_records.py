"""Several records at once: values shared across logs and values per log; log columns that drive
a source's power.

Logs are made with scipy.signal.lsim on an invented heated block (one node), each record with
its own starting temperature and its own heater schedule.
"""

import warnings

import numpy as np
import pandas as pd
import pytest
import scipy.signal as sig

import rcsim
from conftest import HEATER_BLOCK
from rcsim.errors import InputError
from rcsim.fitting import FitWarning, JointFit

C_TRUE, R_TRUE = 1794.0, 1.5
BLOCK = HEATER_BLOCK
SHARED = ["nodes.block.capacity", "links.skin.resistance"]


def record(T0, on, off, seed, noise=0.05, dt=120.0, span=8 * 3600.0):
    """A heating test: heater 10 W from ``on`` to ``off`` [h] (a log column 'heater [W]' that
    drives the source), room logged, the block by lsim (inputs linear between samples)."""
    t = np.arange(0.0, span + 1, dt)
    P = np.where((t >= on * 3600) & (t < off * 3600), 10.0, 0.0)
    room = 20.0 + 1.5 * np.sin(2 * np.pi * t / 30000.0 + seed)
    tau = R_TRUE * C_TRUE
    system = sig.StateSpace([[-1 / tau]], [[1 / tau, 1 / C_TRUE]], [[1.0]], [[0.0, 0.0]])
    _, y, _ = sig.lsim(system, np.column_stack([room, P]), t, X0=[T0])
    rng = np.random.default_rng(seed)
    return pd.DataFrame({"time": t, "block": y + rng.normal(0, noise, t.size), "room": room,
                         "heater [W]": P})


def quiet_fit(*args, **kwargs):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FitWarning)
        return rcsim.fit(*args, **kwargs)


def test_a_log_column_drives_a_source():
    # the heater column (in W, named after the source with --map) drives the source's power:
    # the fit recovers the values that made the log
    res = quiet_fit(rcsim.loads(BLOCK), record(6.0, 2, 5, seed=1), SHARED + ["nodes.block.initial"],
                    columns={"heater [W]": "heater"})
    for key, truth in (("nodes.block.capacity", C_TRUE), ("links.skin.resistance", R_TRUE),
                       ("nodes.block.initial", 6.0)):
        row = res.estimates.loc[key]
        assert row["ci_low"] <= truth <= row["ci_high"], key


def test_a_power_column_in_kilowatts_is_converted():
    log = record(6.0, 2, 5, seed=1)
    log["heater [kW]"] = log.pop("heater [W]") / 1000.0
    res = quiet_fit(rcsim.loads(BLOCK), log, SHARED + ["nodes.block.initial"],
                    columns={"heater [kW]": "heater"})
    assert res.estimates.loc["nodes.block.capacity", "value"] == pytest.approx(C_TRUE, rel=0.02)


def test_a_source_driven_by_the_log_cannot_be_freed():
    with pytest.raises(InputError, match="follows log column"):
        rcsim.fit(rcsim.loads(BLOCK), record(6.0, 2, 5, seed=1), ["sources.heater.power"],
                  columns={"heater [W]": "heater"})


def test_shared_and_per_record_values_of_three_logs():
    logs = [record(6.0, 2, 5, seed=1), record(14.0, 1, 3, seed=2), record(25.0, 4, 7, seed=3)]
    res = quiet_fit(rcsim.loads(BLOCK), logs, SHARED, per_record=["nodes.block.initial"],
                    columns={"heater [W]": "heater"})
    assert isinstance(res, JointFit)
    assert list(res.estimates.index) == SHARED + [
        f"nodes.block.initial@record {i}" for i in (1, 2, 3)]
    truth = {"nodes.block.capacity": C_TRUE, "links.skin.resistance": R_TRUE,
             "nodes.block.initial@record 1": 6.0, "nodes.block.initial@record 2": 14.0,
             "nodes.block.initial@record 3": 25.0}
    for key, value in truth.items():
        row = res.estimates.loc[key]
        assert row["ci_low"] <= value <= row["ci_high"], key
    # each record has its own result: its residuals, and its scenario with its starting state
    assert set(res.records) == {"record 1", "record 2", "record 3"}
    rec2 = res.records["record 2"]
    assert rec2.estimates.loc["nodes.block.initial", "value"] == \
        res.estimates.loc["nodes.block.initial@record 2", "value"]
    assert res.scenario_for("record 2").si_value("nodes.block.initial") == pytest.approx(
        res.estimates.loc["nodes.block.initial@record 2", "value"], rel=1e-9)
    assert res.residuals.index.names == ["record", "time [s]"]
    assert len(res.residuals) == sum(len(log) for log in logs)
    # the joint log-likelihood is the records' sum; k = 5 values + 3 variances
    assert res.log_likelihood == pytest.approx(sum(r.log_likelihood for r in
                                                   res.records.values()))
    assert res.n_parameters == 8


def test_a_shared_value_is_surer_with_more_records():
    # three records hold about three times the information of one: the standard error of the
    # shared capacity shrinks by about sqrt(3) (0.58); allow 0.4 .. 0.8
    logs = [record(6.0, 2, 5, seed=1), record(14.0, 1, 3, seed=2), record(25.0, 4, 7, seed=3)]
    one = quiet_fit(rcsim.loads(BLOCK), logs[0], SHARED + ["nodes.block.initial"],
                    columns={"heater [W]": "heater"})
    joint = quiet_fit(rcsim.loads(BLOCK), logs, SHARED, per_record=["nodes.block.initial"],
                      columns={"heater [W]": "heater"})
    ratio = joint.estimates.loc["nodes.block.capacity", "std_error"] / \
        one.estimates.loc["nodes.block.capacity", "std_error"]
    assert 0.4 < ratio < 0.8


def test_records_written_out(tmp_path):
    logs = [record(6.0, 2, 5, seed=1), record(14.0, 1, 3, seed=2)]
    for i, log in enumerate(logs):
        log.to_csv(tmp_path / f"day{i + 1}.csv", index=False)
    res = quiet_fit(rcsim.loads(BLOCK), [str(tmp_path / "day1.csv"), str(tmp_path / "day2.csv")],
                    SHARED, per_record=["nodes.block.initial"], columns={"heater [W]": "heater"})
    assert set(res.records) == {"day1.csv", "day2.csv"}
    table = pd.read_csv(res.to_csv(tmp_path / "estimates.csv"), index_col="key")
    assert table.loc["nodes.block.initial@day2.csv", "unit"] == "degC"
    back = rcsim.load(res.write_scenario(tmp_path / "day2.toml", record="day2.csv"))
    assert back.si_value("nodes.block.initial") == pytest.approx(
        res.estimates.loc["nodes.block.initial@day2.csv", "value"], rel=1e-9)
    # the comparison figure draws every log: a pair of panels each, named after it
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from rcsim.fitting.figures import plot_candidates

    drawn = plot_candidates({"block": res}, selected="block")
    try:
        assert len(drawn.axes) == 4 and drawn.time_unit == "h"
        assert [drawn.axes[0].get_title(), drawn.axes[2].get_title()] == ["day1.csv",
                                                                         "day2.csv"]
        for name, log in zip(["day1.csv", "day2.csv"], logs):
            # the dots are the log's own values (made by lsim above), at its times in hours
            dots = drawn.lines[f"measured:block@{name}"]
            np.testing.assert_array_equal(dots.get_ydata(), log["block"].to_numpy())
            np.testing.assert_allclose(dots.get_xdata(), log["time"].to_numpy() / 3600.0)
            np.testing.assert_allclose(drawn.lines[f"fit:block@{name}"].get_ydata(),
                                       res.records[name].curve["block"].to_numpy())
            # measured - fitted: the 0.05 K noise the logs were made with
            r = drawn.lines[f"residual:block@{name}"].get_ydata()
            assert np.sqrt(np.mean(r ** 2)) == pytest.approx(0.05, rel=0.2)
    finally:
        plt.close(drawn.figure)
    # the report covers every log: a section each, with its own starting temperature, whose
    # interval holds the one that made the log (6.0 and 14.0 degC above)
    from rcsim.report.fit import build_fit_report

    logs_paths = [tmp_path / "day1.csv", tmp_path / "day2.csv"]
    report = build_fit_report(res, log_path=logs_paths, figures=False)
    sections = {sec.id: sec for sec in report.sections}
    for i, (name, truth) in enumerate((("day1.csv", 6.0), ("day2.csv", 14.0)), 1):
        sec = sections[f"log-{i}"]
        assert sec.title == f"Log {i}: {name}"
        own = next(b for b in sec.blocks if getattr(b, "id", "") == f"fit-own-{i}")
        [row] = own.rows
        key, value, _, low, high, unit = row
        assert key.text == f"nodes.block.initial@{name}" and unit.text == "degC"
        assert float(value.value) == res.estimates.loc[key.text, "value"]
        assert float(low.value) <= truth <= float(high.value)
    provenance = dict(report.provenance)
    assert "SHA-256 of day1.csv" in provenance and "SHA-256 of day2.csv" in provenance
    # the same report from the fit itself, as a page
    page = res.report(tmp_path / "fit.html", log_path=logs_paths, figures=False)
    text = open(page, encoding="utf-8").read()
    assert "Log 1: day1.csv" in text and "Log 2: day2.csv" in text


def with_hole(log, start_h, end_h):
    """The log with its block and room cells empty strictly between two rows [h]."""
    log = log.copy()
    hole = (log["time"] > start_h * 3600) & (log["time"] < end_h * 3600)
    log.loc[hole, ["block", "room"]] = np.nan
    return log


@pytest.mark.parametrize("files", [True, False], ids=["files", "tables"])
def test_warnings_of_several_logs_name_each_log_once(tmp_path, files):
    # a hole from the 2 h row to the 3 h row of the first log (60 min, longer than the 10 min
    # allowed: 5 rows of 120 s) and from 4 h to 4.5 h in the second (30 min); counts by
    # construction. Each warning names its log once, as the fit of one log does (where the
    # log's own name leads the text)
    logs = [with_hole(record(6.0, 2, 5, seed=1), 2, 3),
            with_hole(record(14.0, 1, 3, seed=2), 4, 4.5)]
    names = ["day1.csv", "day2.csv"] if files else ["record 1", "record 2"]
    data = logs
    if files:
        data = [str(tmp_path / n) for n in names]
        for path, log in zip(data, logs):
            log.to_csv(path, index=False)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", FitWarning)
        res = rcsim.fit(rcsim.loads(BLOCK), data, SHARED, per_record=["nodes.block.initial"],
                        columns={"heater [W]": "heater"})
    issued = [str(w.message) for w in caught if issubclass(w.category, FitWarning)]
    for name, hole in zip(names, ("60 min (from 2 h", "30 min (from 4 h")):
        for column, what in (("block", "skipped in the residuals"),
                             ("room", "interpolated linearly across")):
            text = (f"{name}: column {column!r} has no value for {hole} after the start, "
                    f"line ")
            [found] = [t for t in res.warnings if t.startswith(text)]
            assert found.endswith(what) and found in issued
    for text in res.warnings:
        assert "<data>" not in text
        for name in names:
            assert text.count(f"{name}:") <= 1, text


def test_the_same_warning_of_two_logs_is_given_for_each():
    # two copies of one log: the per-log warnings (here the residuals' whiteness of a fit with
    # the resistance held at 1 K/W, 0.67 times the 1.5 K/W that made the log) are the same
    # text for both logs, and each log gets its own line
    log = record(6.0, 2, 5, seed=1)
    res = quiet_fit(rcsim.loads(BLOCK), [log, log.copy()], ["nodes.block.capacity"],
                    per_record=["nodes.block.initial"], columns={"heater [W]": "heater"})
    own = [t.split(": ", 1) for t in res.warnings if t.startswith("record ")]
    by_log = {label: sorted(t for lab, t in own if lab == label)
              for label in ("record 1", "record 2")}
    assert by_log["record 1"] and by_log["record 1"] == by_log["record 2"]


def test_records_with_process_noise():
    logs = [record(6.0, 2, 5, seed=1, dt=240.0, span=6 * 3600.0),
            record(14.0, 1, 3, seed=2, dt=240.0, span=6 * 3600.0)]
    res = quiet_fit(rcsim.loads(BLOCK), logs, SHARED, per_record=["nodes.block.initial"],
                    columns={"heater [W]": "heater"}, noise="process", starts=1)
    assert res.noise == "process"
    assert {"process.block", "measurement.block"} <= set(res.noise_estimates.index)
    row = res.estimates.loc["nodes.block.capacity"]
    assert row["ci_low"] <= C_TRUE <= row["ci_high"]


@pytest.mark.parametrize("data, kwargs, expected", [
    ([], {}, "no log to fit"),
    (None, {"per_record": ["links.skin.resistance"]}, "both as shared"),
    ("one", {"per_record": ["nodes.block.initial"]}, "need several logs"),
])
def test_bad_record_options(data, kwargs, expected):
    logs = [record(6.0, 2, 5, seed=1), record(14.0, 1, 3, seed=2)]
    data = logs if data is None else (logs[0] if data == "one" else data)
    with pytest.raises(InputError, match=expected):
        rcsim.fit(rcsim.loads(BLOCK), data, SHARED, columns={"heater [W]": "heater"}, **kwargs)
