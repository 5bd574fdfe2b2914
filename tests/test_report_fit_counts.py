"""A fit with a held-out span: every count of values (the command's headline, the report's glance
and per-column table, the fitted scenario's header) says how many were fitted and how many held
out, and they agree with each other and with the log counted independently."""

import os

import numpy as np
import pandas as pd
import pytest

import rcsim

from conftest import SCENARIOS

lxml_html = pytest.importorskip("lxml.html")

BLOCK = os.path.join(SCENARIOS, "fit-block.toml")
LOG = os.path.join(SCENARIOS, "fit-block-log.csv")
FREE = ["nodes.block.capacity", "links.skin.resistance", "nodes.block.initial"]


def _log_counts():
    """The log's own counts, by pandas alone: values of 'block' in the whole log and in its last
    25 % of time (the held-out span of holdout=0.25, both ends included)."""
    log = pd.read_csv(LOG, parse_dates=["time"])
    t = (log["time"] - log["time"].iloc[0]).dt.total_seconds().to_numpy()
    has = log["block"].notna().to_numpy()
    start = t[-1] - 0.25 * (t[-1] - t[0])
    held = int((has & (t >= start)).sum())
    return int(has.sum()), held


@pytest.fixture(scope="module")
def held_fit():
    return rcsim.fit(rcsim.load(BLOCK), LOG, free=FREE, holdout=0.25)


def test_counts_agree_with_the_log(held_fit):
    total, held = _log_counts()
    # the log as written: 720 one-minute rows less a 41-minute hole (make-fit-block-log.py)
    assert (total, held) == (678, 180)
    counts = held_fit.value_counts()
    assert counts.loc["block"].to_dict() == {"measured": total, "fitted": total - held,
                                             "held out": held}
    assert held_fit.n_points == total - held                    # the fit saw only these
    assert held_fit.values_text("block") == (
        "678 measured values (block): 498 fitted, 180 held out in the last 25 % "
        "(9 h to 12 h after the first row)")


def test_the_report_gives_the_same_counts_everywhere(held_fit):
    from rcsim.report import build_report, render_html

    doc = lxml_html.fromstring(render_html(build_report(held_fit, figures=False)))
    glance = doc.get_element_by_id("glance").text_content()
    assert "678: 498 fitted, 180 held out in the last 25 %" in glance
    fig = doc.get_element_by_id("fit-quality")
    header = [th.text_content() for th in fig.xpath(".//thead//th")]
    row = [td.text_content() for td in fig.xpath(".//tbody/tr")[0].xpath("./td")]
    assert row[header.index("fitted values")] == "498"
    assert row[header.index("held-out values")] == "180"
    assert "measured values" not in header          # no third, unexplained count
    # the held-out RMSE of the column is the one the fit computed over those 180 values
    held = held_fit.holdout_residuals["block"].dropna().to_numpy()
    assert held.size == 180
    assert float(fig.xpath(".//tbody/tr")[0].xpath("./td")[header.index(
        "held-out RMSE [K]")].get("data-value")) == pytest.approx(np.sqrt(np.mean(held ** 2)),
                                                                rel=1e-12)


def test_the_command_and_the_fitted_scenario_say_it_too(cli, tmp_path):
    fitted = tmp_path / "fitted.toml"
    free = [a for k in FREE for a in ("--free", k)]
    r = cli("fit", BLOCK, LOG, *free, "--holdout", "0.25", "--write-scenario", fitted)
    assert r.exit_code == 0, r.output
    assert ("fit-block-log.csv: 678 measured values (block): 498 fitted, 180 held out in the "
            "last 25 %") in r.output
    assert "RMSE" in r.output and "over 180 values" in r.output
    header = fitted.read_text(encoding="utf-8").splitlines()[:2]
    assert "678 measured values: 498 fitted, 180 held out" in header[0]
    assert header[1].startswith("# held-out RMSE")


def test_without_a_held_out_span_every_value_is_fitted():
    fit = rcsim.fit(rcsim.load(BLOCK), LOG, free=FREE, starts=1)
    counts = fit.value_counts()
    assert counts.loc["block"].to_dict() == {"measured": 678, "fitted": 678, "held out": 0}
    assert fit.values_text() == "678 measured values, all fitted"


def test_a_comparison_of_candidates_says_the_same(cli):
    # both candidates of scenarios/ fitted to the identification log with its last fifth held
    # out: 721 logged values of 'inside', 145 of them in the last 20 % of the time (counted
    # from the log by pandas alone)
    log = pd.read_csv(os.path.join(SCENARIOS, "identify-case-log.csv"))
    t = pd.to_datetime(log.iloc[:, 0])
    s = (t - t.iloc[0]).dt.total_seconds().to_numpy()
    has = log["inside"].notna().to_numpy()
    held = int((has & (s >= s[-1] - 0.2 * (s[-1] - s[0]))).sum())
    assert (int(has.sum()), held) == (721, 145)
    r = cli("fit", os.path.join(SCENARIOS, "case-one-node.toml"),
            os.path.join(SCENARIOS, "identify-case-log.csv"), "--candidate",
            os.path.join(SCENARIOS, "case-two-nodes.toml"), "--holdout", "0.2")
    assert r.exit_code == 0, r.output
    assert "2 candidates compared (measurement noise; 576 measured values fitted, 145 held out " \
           "each)" in r.output
    assert "721 measured values (inside): 576 fitted, 145 held out" in r.output
