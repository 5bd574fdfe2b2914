"""CSV and spreadsheet exports: units in the headers, ISO timestamps, exact round trips."""

import os

import numpy as np
import pandas as pd
import pytest

import rcsim
from rcsim import exports
from rcsim.errors import InputError

BOX = """
title = "a box on a bench"
[simulation]
duration = "6 h"
step = "10 min"
start = 2026-03-02T08:00:00+01:00
[nodes.payload]
capacity = "8.4 kJ/K"
initial = "5 degC"
[nodes.lid]
capacity = "1.2 kJ/K"
initial = "5 degC"
[boundaries.bay]
temperature = { sine = { mean = "25 degC", amplitude = "7 K", period = "24 h", peak = "15 h" } }
[links.walls]
between = ["payload", "bay"]
resistance = "2.5 K/W"
[links.heater]
between = ["lid", "payload"]
resistance = "0.5 K/W"
[links.lid_out]
between = ["lid", "bay"]
conductance = "0.3 W/K"
[sources.heater]
node = "payload"
power = { steps = { at = ["0 h", "2 h"], values = ["0 W", "5 W"] } }
[limits.payload]
max = "8 degC"
"""


@pytest.fixture(scope="module")
def run():
    sc = rcsim.loads(BOX, name="box.toml")
    return sc, sc.run()


def test_csv_headers_carry_units_and_kinds_only_on_a_clash(run, tmp_path):
    sc, res = run
    path = exports.write_csv(res, tmp_path / "run.csv")
    header = open(path).readline().strip().split(",")
    assert header[:2] == ["time", "elapsed [s]"]
    assert header[2:] == ["payload [degC]", "lid [degC]", "bay [degC]",
                          "heater (source) [W]", "walls [W]", "heater (link) [W]",
                          "lid_out [W]"]


def test_csv_round_trip_equals_the_histories_exactly(run, tmp_path):
    # shortest round-trip repr (Python's float repr) reads back to the same double: exact
    _, res = run
    back = pd.read_csv(exports.write_csv(res, tmp_path / "run.csv"))
    assert np.array_equal(back["elapsed [s]"].to_numpy(), res.time)
    for node in res.temperatures.columns:
        assert np.array_equal(back[f"{node} [degC]"].to_numpy(), res.temperatures[node].to_numpy())
    assert np.array_equal(back["bay [degC]"].to_numpy(), res.boundary_temperatures["bay"].to_numpy())
    assert np.array_equal(back["heater (source) [W]"].to_numpy(),
                          res.source_powers["heater"].to_numpy())
    assert np.array_equal(back["walls [W]"].to_numpy(), res.heat_flows["walls"].to_numpy())


def test_csv_timestamps_are_iso_8601_on_the_scenario_clock(run, tmp_path):
    _, res = run
    back = pd.read_csv(exports.write_csv(res, tmp_path / "run.csv"), dtype={"time": str})
    assert back["time"].iloc[0] == "2026-03-02T08:00:00+01:00"
    assert back["time"].iloc[1] == "2026-03-02T08:10:00+01:00"      # start + 600 s, by hand
    stamps = pd.to_datetime(back["time"])
    elapsed = (stamps - stamps.iloc[0]).dt.total_seconds().to_numpy()
    assert np.array_equal(elapsed, res.time)


def test_csv_without_a_clock_starts_with_seconds(tmp_path):
    sc = rcsim.loads(BOX.replace("start = 2026-03-02T08:00:00+01:00", ""), name="box.toml")
    res = sc.run()
    back = pd.read_csv(exports.write_csv(res, tmp_path / "run.csv"))
    assert back.columns[0] == "time [s]"
    assert np.array_equal(back["time [s]"].to_numpy(), res.time)


def test_numbers_are_written_without_float_noise(tmp_path):
    # 0.03 is the shortest text of the double nearest 0.03 (IEEE 754; Python's repr)
    frame = pd.DataFrame({"thickness [m]": [0.03, 0.1 * 3, 1e-20], "hold [s]": [np.nan, 1.0, 2.5]})
    text = open(exports.write_table_csv(frame, tmp_path / "t.csv")).read()
    assert text.splitlines()[1] == "0.03,"
    assert "0.029999" not in text and "0.30000000000000004" in text
    assert pd.read_csv(tmp_path / "t.csv")["thickness [m]"].tolist() == [0.03, 0.1 * 3, 1e-20]


def test_clock_columns_keep_fractions_and_offsets():
    # by hand: 06:00:00 + 1.25 s, in UTC
    got = list(exports.clock_columns([0.0, 1.25], "2026-07-14T06:00:00Z"))
    assert got == ["2026-07-14T06:00:00.000Z", "2026-07-14T06:00:01.250Z"]
    assert list(exports.clock_columns([0.0, 86400.0], "2026-07-14 06:00")) == \
        ["2026-07-14T06:00:00", "2026-07-15T06:00:00"]


def test_xlsx_round_trip_through_pandas(run, tmp_path):
    sc, res = run
    path = exports.write_xlsx(res, tmp_path / "run.xlsx", scenario=sc)
    sheets = pd.read_excel(path, sheet_name=None)
    assert list(sheets) == ["summary", "nodes", "limits", "histories", "heat flows", "energy",
                            "inputs"]
    hist = sheets["histories"]
    assert list(hist.columns[:2]) == ["time (UTC+01:00)", "elapsed [s]"]
    # the writer keeps 16 significant digits (a spreadsheet shows 15): equal to 1e-15
    np.testing.assert_allclose(hist["elapsed [s]"], res.time, rtol=1e-15, atol=0)
    for node in res.temperatures.columns:
        np.testing.assert_allclose(hist[f"{node} [degC]"], res.temperatures[node], rtol=1e-15)
    np.testing.assert_allclose(sheets["heat flows"]["walls [W]"], res.heat_flows["walls"],
                               rtol=1e-15, atol=1e-300)
    # spreadsheet dates: the wall-clock time of the start plus the elapsed seconds
    expected = pd.Timestamp("2026-03-02 08:00") + pd.to_timedelta(res.time, unit="s")
    assert (pd.to_datetime(hist["time (UTC+01:00)"]) - expected).abs().max() < pd.Timedelta("1ms")
    lim = sheets["limits"]
    np.testing.assert_allclose(lim["hold_time [s]"], res.limits["hold_time [s]"], rtol=1e-15)
    np.testing.assert_allclose(lim["hold_time [h]"], res.limits["hold_time [s]"] / 3600, rtol=1e-15)
    inputs = sheets["inputs"]
    walls = inputs[(inputs["kind"] == "link") & (inputs["name"] == "walls")
                   & (inputs["property"] == "resistance")]
    assert float(walls["value"].iloc[0]) == 2.5                      # as written: 2.5 K/W
    lid_out = inputs[(inputs["name"] == "lid_out") & (inputs["property"] == "resistance")]
    assert float(lid_out["value"].iloc[0]) == pytest.approx(1 / 0.3, rel=1e-15)   # R = 1/G
    summary = dict(zip(sheets["summary"]["item"], sheets["summary"]["value"]))
    assert float(summary["energy balance (relative closure error)"]) == \
        pytest.approx(res.energy_balance, rel=1e-15, abs=1e-300)


def test_bad_names_and_too_long_runs_leave_no_file(run, tmp_path, monkeypatch):
    sc, res = run
    with pytest.raises(InputError, match="should end with .csv"):
        exports.write_csv(res, tmp_path / "run.txt")
    with pytest.raises(InputError, match="should end with .xlsx"):
        exports.write_xlsx(res, tmp_path / "run.xls")
    monkeypatch.setattr(exports, "XLSX_MAX_ROWS", 10)
    with pytest.raises(InputError, match="at most 10"):
        exports.write_xlsx(res, tmp_path / "run.xlsx")
    assert os.listdir(tmp_path) == []
