"""HTML reports: the numbers on the page are the result's, text is escaped, the page is valid
HTML and self-contained."""

import io
import math
import os
import re
import subprocess
import sys

import numpy as np
import pandas as pd
import pytest

import rcsim
from rcsim.errors import InputError
from rcsim.report import build_report, build_run_report, render_html, write_report

lxml_html = pytest.importorskip("lxml.html")
html5lib = pytest.importorskip("html5lib")

HERE = os.path.dirname(__file__)
SCENARIOS = os.path.join(HERE, "..", "scenarios")

# one node of C = 36 kJ/K behind R = 0.5 K/W: a single time constant RC = 18000 s = 5 h
BLOCK = """
# A block on a bench, warming after the room steps up.

title = "Block on a bench"
[simulation]
duration = "24 h"
step = "15 min"
start = 2026-03-02T08:00:00
[nodes.block]
capacity = "36 kJ/K"
initial = "20 degC"
[boundaries.room]
temperature = { steps = { at = ["0 h", "1 h"], values = ["20 degC", "30 degC"] } }
[links.skin]
between = ["block", "room"]
resistance = "0.5 K/W"
[limits.block]
max = "28 degC"
"""

HOSTILE = """
title = "<script>window.pwned = 1</script> & <b>bold</b>"
description = "<img src=x onerror=alert(1)> purpose"
[simulation]
duration = "2 h"
step = "10 min"
[nodes."<script>alert(2)</script>"]
capacity = "1 kJ/K"
initial = "20 degC"
[boundaries."<i>room</i>"]
temperature = "25 degC"
[links."</table><script>alert(3)</script>"]
between = ["<script>alert(2)</script>", "<i>room</i>"]
resistance = "1 K/W"
"""


def tables(html):
    """Every table of the page as (caption, header, rows of (text, data-value))."""
    doc = lxml_html.fromstring(html)
    out = {}
    for fig in doc.xpath("//figure[@class='table']"):
        header = [th.text_content() for th in fig.xpath(".//thead//th")]
        rows = [[(td.text_content(), td.get("data-value")) for td in tr.xpath("./td")]
                for tr in fig.xpath(".//tbody/tr")]
        out[fig.get("id")] = (header, rows)
    return out


def column(table, name):
    header, rows = table
    j = header.index(name)
    return [r[j] for r in rows]


def exact(cells):
    return np.array([float(v) if v is not None else np.nan for _, v in cells])


def shown(cells):
    return pd.to_numeric(pd.Series([t for t, _ in cells]), errors="coerce").to_numpy()


@pytest.fixture(scope="module")
def block_run():
    sc = rcsim.loads(BLOCK, name="block.toml")
    return sc, sc.run()


@pytest.fixture(scope="module")
def block_html(block_run):
    sc, res = block_run
    return render_html(build_run_report(sc, res, warnings=["a warning & <more>"]))


def test_run_tables_equal_the_result(block_run, block_html):
    sc, res = block_run
    t = tables(block_html)
    nodes = t["res-nodes"]
    for col in ("min [degC]", "max [degC]", "final [degC]"):
        assert np.array_equal(exact(column(nodes, col)), res.nodes[col].to_numpy())
        # the text shows 5 significant digits of the same number
        np.testing.assert_allclose(shown(column(nodes, col)), res.nodes[col], rtol=5e-5)
    lim = t["res-limits"]
    hold = exact(column(lim, "hold time [h]"))
    assert np.array_equal(hold, res.limits["hold_time [s]"].to_numpy() / 3600.0)
    # closed form: T = 30 - 10 exp(-(t - 1 h)/RC) reaches 28 degC at 1 h + RC ln 5
    assert hold[0] == pytest.approx((3600 + 18000 * math.log(5)) / 3600, abs=2e-3)
    when = column(lim, "leaves the band at")[0][0]
    assert when == (pd.Timestamp("2026-03-02 08:00")
                    + pd.Timedelta(seconds=float(res.limits["hold_time [s]"].iloc[0]))
                    ).strftime("%Y-%m-%d %H:%M")
    taus = t["res-time-constants"]
    assert exact(column(taus, "time constant [h]"))[0] == pytest.approx(5.0, rel=1e-12)  # RC
    energy = t["res-energy"]
    stored = exact(column(energy, "energy [kJ]"))[0]
    assert stored == res.energy["stored"].iloc[-1] / 1000.0


def test_run_report_lists_inputs_purpose_caution_warnings_and_provenance(block_run, block_html):
    sc, res = block_run
    doc = lxml_html.fromstring(block_html)
    t = tables(block_html)
    assert exact(column(t["in-links"], "resistance [K/W]"))[0] == 0.5
    assert exact(column(t["in-nodes"], "capacity [J/K]"))[0] == 36000.0
    assert "A block on a bench, warming" in doc.xpath("//div[@class='purpose']")[0].text_content()
    caution = doc.get_element_by_id("caution").text_content()
    assert "never replaces, qualification testing, local codes and licensed professional" \
        in caution
    assert "a warning & <more>" in doc.get_element_by_id("warnings").text_content()
    prov = doc.get_element_by_id("provenance").text_content()
    import hashlib

    assert hashlib.sha256(BLOCK.encode()).hexdigest() in prov      # of the text as read
    assert doc.get_element_by_id("scenario-text").text_content() == BLOCK
    assert rcsim.__version__ in prov
    assert len(doc.xpath("//figure[contains(@class,'chart')]//svg")) >= 4   # figures, network, profile


def test_the_page_is_valid_html_and_asks_for_nothing(block_html):
    html5lib.HTMLParser(strict=True, namespaceHTMLElements=False).parse(block_html)
    doc = lxml_html.fromstring(block_html)
    ids = doc.xpath("//@id")
    assert len(ids) == len(set(ids))
    assert not doc.xpath("//script | //link | //img | //iframe | //object | //embed")
    for attr in doc.xpath("//@href | //@src | //@xlink:href",
                          namespaces={"xlink": "http://www.w3.org/1999/xlink"}):
        assert attr.startswith("#"), attr
    assert not re.search(r"url\((?!#)", block_html)
    assert "@import" not in block_html
    for ref in re.findall(r'href="#([^"]+)"', block_html):
        assert ref in ids


def test_scenario_text_comes_out_escaped():
    sc = rcsim.loads(HOSTILE, name="hostile.toml")
    html = render_html(build_run_report(sc, sc.run()))
    assert "<script" not in html and "<img" not in html and "<i>" not in html
    assert "&lt;script&gt;window.pwned = 1&lt;/script&gt; &amp; &lt;b&gt;bold&lt;/b&gt;" in html
    doc = html5lib.HTMLParser(strict=True, namespaceHTMLElements=False).parse(html)
    assert doc.find(".//script") is None
    assert doc.find(".//h1").text == "<script>window.pwned = 1</script> & <b>bold</b>"
    t = tables(html)
    assert column(t["res-nodes"], "node")[0][0] == "<script>alert(2)</script>"


def test_write_report_is_atomic_and_checks_the_name(block_run, tmp_path):
    sc, res = block_run
    report = build_run_report(sc, res, figures=False)
    with pytest.raises(InputError, match="should end with .html"):
        write_report(report, tmp_path / "report.pdf")
    assert os.listdir(tmp_path) == []
    path = write_report(report, tmp_path / "report.html")
    assert open(path, encoding="utf-8").read().startswith("<!DOCTYPE html>")
    with pytest.raises(InputError, match="needs the scenario"):
        build_report(res)


@pytest.fixture(scope="module")
def block_fit(tmp_path_factory):
    # a log made by the closed form of the same block (C = 36 kJ/K, R = 0.5 K/W); the capacity
    # and the starting temperature are fitted from 30 kJ/K and 19 degC (without a known heat
    # input only the product RC would be determined, so R stays as written)
    t = np.arange(0, 6 * 3600 + 1, 120.0)
    room = np.full(t.shape, 30.0)                  # the room already at 30 degC: no ramp
    block = 30.0 - 10.0 * np.exp(-t / 18000.0)
    path = tmp_path_factory.mktemp("log") / "log.csv"
    pd.DataFrame({"time [s]": t, "block": block, "room": room}).to_csv(path, index=False)
    sc = rcsim.loads(BLOCK.replace('"36 kJ/K"', '"30 kJ/K"').replace('"20 degC"\n[b', '"19 degC"\n[b')
                     .replace("start = 2026-03-02T08:00:00", ""), name="block.toml")
    import warnings

    with warnings.catch_warnings():   # noise-free data: the residuals are rounding, correlated
        from rcsim.fitting import FitWarning

        warnings.simplefilter("ignore", FitWarning)
        fit = rcsim.fit(sc, path, free=["nodes.block.capacity", "nodes.block.initial"], starts=1)
    return sc, path, fit


def test_fit_report_numbers_equal_the_fit(block_fit):
    sc, path, fit = block_fit
    html = render_html(build_report(fit, sc, log_path=path))
    html5lib.HTMLParser(strict=True, namespaceHTMLElements=False).parse(html)
    est = tables(html)["fit-estimates"]
    keys = [c[0] for c in column(est, "key")]
    assert keys == list(fit.estimates.index)
    for col, src in (("estimate", "value"), ("std error", "std_error"), ("95 % low", "ci_low"),
                     ("95 % high", "ci_high")):
        assert np.array_equal(exact(column(est, col)), fit.estimates[src].to_numpy())
    # the log was made with 36 kJ/K and 0.5 K/W (closed form above)
    values = dict(zip(keys, exact(column(est, "estimate"))))
    assert values["nodes.block.capacity"] == pytest.approx(36000.0, rel=1e-4)
    assert values["nodes.block.initial"] == pytest.approx(20.0, abs=1e-3)
    import hashlib

    assert hashlib.sha256(open(path, "rb").read()).hexdigest() in html
    assert "check it against data it was not fitted to" in \
        lxml_html.fromstring(html).get_element_by_id("caution").text_content()


@pytest.fixture(scope="module")
def block_sweep():
    sc = rcsim.loads(BLOCK, name="block.toml")
    table = rcsim.sweep(sc, {"links.skin.resistance": "0.4 K/W..0.6 K/W:3"}, executor="serial")
    return sc, table


def test_sweep_report_numbers_equal_the_table(block_sweep):
    from rcsim.sweep import percentiles

    sc, table = block_sweep
    html = render_html(build_report(table, sc))
    html5lib.HTMLParser(strict=True, namespaceHTMLElements=False).parse(html)
    t = tables(html)
    runs = t["sweep-runs"]
    assert np.array_equal(exact(column(runs, "links.skin.resistance [K/W]")),
                          table["links.skin.resistance"].to_numpy())
    assert np.array_equal(exact(column(runs, "hold_time.block [s]")),
                          table["hold_time.block"].to_numpy())
    # closed form: the hold time is 1 h + R C ln 5 for each R of the grid
    expected = 3600 + np.array([0.4, 0.5, 0.6]) * 36000 * math.log(5)
    np.testing.assert_allclose(table["hold_time.block"], expected, atol=60)
    pct = t["sweep-percentiles"]
    rows = [c[0] for c in column(pct, "output")]
    ref = percentiles(table)
    j = rows.index("hold_time.block")
    assert exact(column(pct, "50 %"))[j] == ref.loc["hold_time.block", "50 %"] / 3600.0
    assert "says nothing about the model's own error" in \
        lxml_html.fromstring(html).get_element_by_id("caution").text_content()


def test_importing_reports_and_exports_loads_no_heavy_library():
    # what importing these modules adds to what the package itself loads
    code = ("import sys, rcsim; before = set(sys.modules); "
            "import rcsim.report, rcsim.exports, rcsim.drawing; "
            "print(sorted(m for m in ('jinja2', 'networkx', 'xlsxwriter', 'openpyxl') "
            "if m in set(sys.modules) - before))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"
