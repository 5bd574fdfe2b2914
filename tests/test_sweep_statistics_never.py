"""Hold times of runs that never left their band: shown and written as "more than the run",
never as a bare infinity, and every NaN a file holds says what it means."""

import math

import h5py
import numpy as np
import pandas as pd
import pytest

import rcsim
from rcsim.sweep import percentiles, read_table, write_table
from rcsim.sweep.statistics import percentile_text

lxml_html = pytest.importorskip("lxml.html")

# One node of C = 50 kJ/K at 20 degC behind a resistance R to a room held at 30 degC, band
# 15..25 degC. Lumped first-order response (Incropera et al., 6th ed., eq. 5.6):
# T(t) = 30 - 10 exp(-t / RC), so the node leaves the band (25 degC) at t = R C ln 2. Within
# the 24 h run that happens only for R < 86400 / (50000 ln 2) = 2.493 K/W.
BOX = """
title = "Box"
[simulation]
duration = "24 h"
step = "10 min"
[nodes.inside]
capacity = "50 kJ/K"
initial = "20 degC"
[boundaries.room]
temperature = "30 degC"
[links.wall]
between = ["inside", "room"]
resistance = "1 K/W"
[limits.inside]
min = "15 degC"
max = "25 degC"
"""
R = np.array([0.2, 1.0, 1.8, 3.0, 4.0, 5.0, 6.0, 7.0])      # K/W: three leave, five never


@pytest.fixture(scope="module")
def box_sweep():
    sc = rcsim.loads(BOX, name="box.toml")
    table = rcsim.sweep(sc, {"links.wall.resistance": ",".join(f"{r:g}" for r in R)},
                        executor="serial")
    return sc, table


def test_hold_times_and_percentiles_against_the_closed_form(box_sweep):
    _, table = box_sweep
    hold = table["hold_time.inside"].to_numpy()
    leaves = R * 50e3 * math.log(2) < 86400.0
    assert leaves.tolist() == [True] * 3 + [False] * 5
    # the closed form R C ln 2, within one output step (10 min) as the crossing is found at
    # the samples or between them
    np.testing.assert_allclose(hold[leaves], R[leaves] * 50e3 * math.log(2), atol=600)
    assert np.isnan(hold[~leaves]).all()
    pct = percentiles(table)
    row = pct.loc["hold_time.inside"]
    # 8 runs, numpy's linear percentile: 50 % lies between the 4th and 5th smallest (both
    # never left), 5 % between the 1st and 2nd (both finite)
    assert math.isinf(row["50 %"]) and math.isinf(row["95 %"]) and math.isfinite(row["5 %"])
    assert row["never"] == 5
    assert pct.attrs["duration"] == 86400.0 and "more than the run's duration" in pct.attrs["inf"]
    assert percentile_text(row["50 %"], pct.attrs["duration"]) == "> 24 h"


def test_the_report_shows_more_than_the_run_never_infinity(box_sweep):
    from rcsim.report import build_report, render_html

    sc, table = box_sweep
    html = render_html(build_report(table, sc))
    doc = lxml_html.fromstring(html)
    fig = doc.get_element_by_id("sweep-percentiles")
    header = [th.text_content() for th in fig.xpath(".//thead//th")]
    rows = {tr.xpath("./td")[0].text_content(): [td.text_content() for td in tr.xpath("./td")]
            for tr in fig.xpath(".//tbody/tr")}
    hold = rows["hold_time.inside"]
    assert hold[header.index("50 %")] == "> 24" and hold[header.index("95 %")] == "> 24"
    assert hold[header.index("never left the band")] == "5"
    assert "> 24 h: more than the run's duration" in fig.text_content()
    # the runs table: each hold time as computed, "> 86400" (s) where it never left the band
    runs = doc.get_element_by_id("sweep-runs")
    header = [th.text_content() for th in runs.xpath(".//thead//th")]
    cells = [tr.xpath("./td")[header.index("hold_time.inside [s]")]
             for tr in runs.xpath(".//tbody/tr")]
    assert [c.text_content() for c in cells[3:]] == ["> 86400"] * 5
    np.testing.assert_array_equal([float(c.get("data-value")) for c in cells[:3]],
                                  table["hold_time.inside"].to_numpy()[:3])
    assert "\u221e" not in html and not any(t in html.lower() for t in (">inf<", ">nan<"))


def test_the_run_report_gives_the_run_length_for_a_node_that_never_left():
    from rcsim.report import build_run_report, render_html

    sc = rcsim.loads(BOX.replace('resistance = "1 K/W"', 'resistance = "5 K/W"'), name="b.toml")
    html = render_html(build_run_report(sc, sc.run(), figures=False))
    text = lxml_html.fromstring(html).get_element_by_id("res-limits").text_content()
    assert "> 24, never left" in text          # hold time [h] of the 24 h run


def test_files_say_what_their_nan_means(box_sweep, tmp_path):
    _, table = box_sweep
    csv = write_table(table, tmp_path / "t.csv")
    text = open(csv).read()
    assert "inf" not in text.lower()
    back = pd.read_csv(csv, index_col="run")
    # an empty cell where the node never left (the README's key to the CSV)
    assert back["hold_time.inside"].isna().sum() == 5 and (back["error"].isna()).all()
    h5 = write_table(table, tmp_path / "t.h5")
    with h5py.File(h5, "r") as f:
        note = f["sweep/hold_time.inside"].attrs["nan"]
        assert "never left its band within the run (more than 86400 s)" in note
        assert f["sweep/max.inside"].attrs["nan"] == "NaN: the run failed (error not empty)"
        assert not np.isinf(f["sweep/hold_time.inside"][()]).any()
    for path in (h5, write_table(table, tmp_path / "t.parquet")):
        meta = read_table(path).attrs["missing"]
        assert meta["hold_time.inside"].startswith("NaN: the node never left its band")
