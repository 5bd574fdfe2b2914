"""Sweep figures (rcsim.plotting), headless: drawn data equals the table, limits where they are."""

import os

import matplotlib
import numpy as np
import pytest

from rcsim.plotting import plot_distribution, plot_scatter, plot_tornado, sweep_figures
from rcsim.sweep import one_at_a_time, sweep

from conftest import SCENARIOS

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402

# a fixed linear box (tests/data) rather than the bundled shipper, which may change
COLD_BOX = os.path.join(os.path.dirname(os.path.abspath(__file__)), "data", "warmup-box.toml")
VARY = {"links.walls.parts[1].conduction.thickness": "normal(50 mm, 5 mm)",
        "nodes.payload.mass": "triangular(10 kg, 12 kg, 15 kg)"}


@pytest.fixture(scope="module")
def table():
    return sweep(COLD_BOX, VARY, samples=40, seed=1, executor="serial")


@pytest.fixture(scope="module")
def oat():
    return one_at_a_time(COLD_BOX, VARY, executor="serial")


@pytest.fixture(autouse=True)
def close_figures():
    yield
    plt.close("all")


def test_distribution_draws_the_table_with_the_limit(table):
    drawn = plot_distribution(table, "max.payload")
    # the bars are numpy's histogram of the table column over the same edges
    counts, _ = np.histogram(table["max.payload"], bins=drawn["edges"])
    np.testing.assert_array_equal(drawn["counts"], counts)
    heights = [p.get_height() for p in drawn["ax"].patches]
    np.testing.assert_array_equal(heights, counts)
    # the upper limit of the payload from the scenario file, 8 degC
    assert drawn["limit"].get_xdata()[0] == 8.0
    assert drawn["ax"].get_xlabel() == "highest temperature, payload [degC]"
    assert drawn["ax"].get_ylabel() == "runs"


def test_hold_time_distribution_in_hours_with_the_required_hold(table):
    drawn = plot_distribution(table, "hold_time.payload", target_hold=8 * 3600.0)
    np.testing.assert_allclose(drawn["values"], table["hold_time.payload"] / 3600.0, rtol=1e-15)
    assert drawn["limit"].get_xdata()[0] == 8.0
    assert drawn["ax"].get_xlabel().endswith("[h]")
    assert drawn["counts"].sum() == len(table)


def test_tornado_bars_run_from_the_base_to_each_end(oat):
    drawn = plot_tornado(oat, "hold_time.payload")
    rows = oat[oat["output"] == "hold_time.payload"].set_index("input")
    base = rows["base"].iloc[0] / 3600.0
    assert drawn["base"].get_xdata()[0] == pytest.approx(base, rel=1e-15)
    # top to bottom in order of swing, largest first, as in the table
    assert drawn["inputs"] == list(rows.sort_values("swing", ascending=False).index)
    bottom_up = drawn["inputs"][::-1]
    for bar, key in zip(drawn["low_bars"], bottom_up):
        assert bar.get_x() == pytest.approx(base)
        assert bar.get_width() == pytest.approx(rows.at[key, "at_low"] / 3600.0 - base)
    for bar, key in zip(drawn["high_bars"], bottom_up):
        assert bar.get_width() == pytest.approx(rows.at[key, "at_high"] / 3600.0 - base)
    assert drawn["ax"].get_xlabel() == "hold time, payload [h]"


def test_scatter_draws_output_against_each_input(table):
    drawn = plot_scatter(table, "max.payload")
    assert list(drawn["points"]) == list(VARY)
    for key, points in drawn["points"].items():
        xy = points.get_offsets()
        np.testing.assert_array_equal(xy[:, 0], table[key])
        np.testing.assert_array_equal(xy[:, 1], table["max.payload"])
    assert [line.get_ydata()[0] for line in drawn["limits"]] == [8.0, 8.0]
    assert drawn["axes"][0].get_xlabel() == "links.walls.parts[1].conduction.thickness [m]"
    assert drawn["axes"][1].get_xlabel() == "nodes.payload.mass [kg]"


@pytest.mark.slow
def test_sweep_figures_writes_pngs_for_outputs_that_vary(table, oat, tmp_path):
    paths = sweep_figures(table, tmp_path, stem="box", oat=oat)
    names = sorted(os.path.basename(p) for p in paths)
    # the minima equal the starting 5 degC in every run, so they get no figure
    assert "box-distribution-hold_time.payload.png" in names
    assert "box-tornado-max.payload.png" in names
    assert not [n for n in names if "min." in n]
    for p in paths:
        with open(p, "rb") as fh:
            assert fh.read(8) == b"\x89PNG\r\n\x1a\n"


def test_hold_times_never_reached_are_counted_not_drawn():
    import pandas as pd

    t = pd.DataFrame({"k": [1.0, 2.0, 3.0, 4.0], "hold_time.x": [3600.0, 7200.0, np.nan, np.nan],
                      "error": ["", "", "", ""]})
    t.attrs.update(inputs=["k"], outputs=["hold_time.x"], duration=36000.0)
    drawn = plot_distribution(t, "hold_time.x")
    assert drawn["never"] == 2 and drawn["counts"].sum() == 2
    assert "2 more never left the band within 10 h" in drawn["ax"].get_title()
    drawn = plot_scatter(t, "hold_time.x")
    np.testing.assert_array_equal(drawn["points"]["k"].get_offsets(), [[1.0, 1.0], [2.0, 2.0]])
    assert "2 runs never left the band" in drawn["axes"][0].figure.get_suptitle()


def test_runs_with_an_open_energy_balance_are_counted_not_drawn():
    import pandas as pd

    # run 2's energy balance is open (0.3 > 1e-3): not in the histogram or the scatter, counted
    t = pd.DataFrame({"k": [1.0, 2.0, 3.0, 4.0], "max.x": [10.0, 11.0, 99.0, 12.0],
                      "error": ["", "", "", ""], "energy_balance": [0.0, 1e-8, 0.3, 1e-6]})
    t.attrs.update(inputs=["k"], outputs=["max.x"])
    drawn = plot_distribution(t, "max.x")
    assert sorted(drawn["values"]) == [10.0, 11.0, 12.0]
    assert "1 with an open energy balance left out" in drawn["ax"].get_title()
    drawn = plot_scatter(t, "max.x")
    np.testing.assert_array_equal(drawn["points"]["k"].get_offsets(),
                                  [[1.0, 10.0], [2.0, 11.0], [4.0, 12.0]])
    assert "1 with an open energy balance" in drawn["axes"][0].figure.get_suptitle()
    plt.close("all")
