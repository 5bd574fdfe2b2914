"""The sizing report (rcsim.report.sizing) and the report facades of the results:
``Result.report``, ``FitResult.report``, ``SizingResult.report_html``. The numbers on the page,
parsed back, equal the result's; the answer itself is checked against a closed form."""

import math
import os
import warnings

import numpy as np
import pandas as pd
import pytest

import rcsim
from rcsim.errors import InputError
from rcsim.report import build_report, render_html

lxml_html = pytest.importorskip("lxml.html")
html5lib = pytest.importorskip("html5lib")

# a cold box in a warm room: lumped capacitance, T = 25 - 20 exp(-t / RC); it reaches 8 degC at
# t = R C ln((25 - 5)/(25 - 8)) (closed form derived here), so a 20 h hold needs
# C = 72000 s / (0.1 K/W ln(20/17)) = 4.430 MJ/K
BOX = """# A cold box in a warm room (invented).

title = "Cold box <sized> & checked"
[simulation]
duration = "40 h"
step = "1 min"
[nodes.box]
capacity = "400 kJ/K"   # contents
initial = "5 degC"
[boundaries.room]
temperature = "25 degC"
[links.wall]
between = ["box", "room"]
resistance = "0.1 K/W"
[limits.box]
max = "8 degC"
"""
LOG_RATIO = math.log(20.0 / 17.0)
NEEDED = 72000.0 / (0.1 * LOG_RATIO)


def tables(html):
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


def texts(cells):
    return [t for t, _ in cells]


@pytest.fixture(scope="module")
def box(tmp_path_factory):
    path = tmp_path_factory.mktemp("box") / "box.toml"
    path.write_text(BOX, encoding="utf-8")
    return rcsim.load(str(path))


@pytest.fixture(scope="module")
def sized(box):
    return rcsim.size(box, vary={"nodes.box.capacity": ("1000 kJ/K", "8000 kJ/K")},
                      require="hold_time.box >= 20 h")


@pytest.fixture(scope="module")
def sized_html(sized):
    return sized.report_html(warnings=["a warning of the command & <more>"])


def test_the_answer_on_the_page_is_the_results_and_meets_the_closed_form(sized, sized_html):
    html5lib.HTMLParser(strict=True, namespaceHTMLElements=False).parse(sized_html)
    t = tables(sized_html)
    answer = t["sizing-answer"]
    assert texts(column(answer, "key")) == ["nodes.box.capacity"]
    assert exact(column(answer, "answer"))[0] == sized.value
    assert texts(column(answer, "written into the sized scenario")) == [sized.value_text]
    assert texts(column(answer, "values from the answer")) == [sized.direction] == ["at least"]
    assert exact(column(answer, "nearest value tried that fails"))[0] == sized.bracket[0]
    # the answer brackets the closed form within the search's tolerance (0.1 % of the range)
    assert sized.bracket[0] < NEEDED * (1 + 1e-6) and sized.value >= NEEDED * (1 - 1e-6)
    assert sized.value - NEEDED < 7000.0 + 1.0
    req = t["sizing-requirements"]
    assert texts(column(req, "requirement")) == ["hold_time.box >= 20 h"]
    assert exact(column(req, "required"))[0] == 20.0
    assert exact(column(req, "achieved at the answer"))[0] == \
        sized.achieved["hold_time.box"] / 3600.0
    assert exact(column(req, "margin [h]"))[0] == sized.margin["hold_time.box"] / 3600.0
    # the hold time at the answer: R C ln(20/17) of the answer's capacity (closed form), to the
    # one-minute output step
    assert sized.achieved["hold_time.box"] == pytest.approx(0.1 * sized.value * LOG_RATIO,
                                                            abs=60.0)


def test_every_value_tried_is_on_the_page(sized, sized_html):
    ev = tables(sized_html)["sizing-evaluations"]
    cands = sorted(sized.candidates, key=lambda c: c.x)
    assert np.array_equal(exact(column(ev, "nodes.box.capacity [J/K]")),
                          [c.values[0] for c in cands])
    assert np.array_equal(exact(column(ev, "hold_time.box [h]")),
                          [c.achieved[0] / 3600.0 for c in cands])
    assert texts(column(ev, "met")) == ["yes" if c.met else "no" for c in cands]
    # and met means R C ln(20/17) >= 20 h for that capacity (closed form), away from the edge
    for c in cands:
        hold = 0.1 * c.values[0] * LOG_RATIO
        if abs(hold - 72000.0) > 120.0:
            assert c.met == (hold >= 72000.0)
    runs = tables(sized_html)["sizing-runs"]
    assert np.array_equal(exact(column(runs, "hold_time.box [s]")),
                          sized.runs["hold_time.box"].to_numpy())


def test_the_page_has_the_figure_caution_warnings_provenance_and_escapes(sized, sized_html):
    doc = lxml_html.fromstring(sized_html)
    assert doc.get_element_by_id("fig-sizing").xpath(".//*[local-name()='svg']")
    caution = doc.get_element_by_id("caution").text_content()
    assert "never replaces, qualification testing" in caution
    assert "only as good as the model and its inputs" in caution
    assert "a warning of the command & <more>" in doc.get_element_by_id("warnings").text_content()
    prov = doc.get_element_by_id("provenance").text_content()
    import hashlib

    assert hashlib.sha256(BOX.encode()).hexdigest() in prov
    assert hashlib.sha256(sized.to_toml().encode()).hexdigest() in prov
    assert doc.get_element_by_id("sized-toml").text_content() == sized.to_toml()
    # the title's markup is text, not markup
    assert doc.xpath("//h1")[0].text_content() == "Cold box <sized> & checked"
    assert "<sized>" not in sized_html
    # the printed text is still what SizingResult.report() gives
    assert sized.report().startswith("box.toml") and "answer:" in sized.report()


def test_report_html_writes_the_file_or_refuses_before_building(sized, tmp_path, monkeypatch):
    path = sized.report_html(tmp_path / "size.html", figures=False)
    assert path == str(tmp_path / "size.html")
    assert open(path, encoding="utf-8").read().startswith("<!DOCTYPE html>")
    import rcsim.report.dispatch as dispatch

    def fail(*a, **k):
        raise AssertionError("built before checking the path")

    monkeypatch.setattr(dispatch, "build_report", fail)
    with pytest.raises(InputError, match="should end with .html"):
        sized.report_html(tmp_path / "size.pdf")
    with pytest.raises(InputError, match="does not exist"):
        sized.report_html(tmp_path / "nowhere" / "size.html")
    assert os.listdir(tmp_path) == ["size.html"]


def test_uncertain_sizing_reports_the_share_and_its_interval(box):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        res = rcsim.size(box, vary={"nodes.box.capacity": ("2000 kJ/K", "8000 kJ/K")},
                         require="hold_time.box >= 20 h",
                         vary_uncertain={"links.wall.resistance": "normal(0.1 K/W, 0.005 K/W)"},
                         samples=20, confidence=0.9, seed=3, executor="serial")
    t = tables(render_html(build_report(res, figures=False)))
    share = t["sizing-share"]
    assert exact(column(share, "share met at the answer [-]"))[0] == res.share
    assert exact(column(share, "95 % Wilson interval, low [-]"))[0] == res.share_interval[0]
    assert exact(column(share, "95 % Wilson interval, high [-]"))[0] == res.share_interval[1]
    assert exact(column(share, "draws"))[0] == 20
    # Wilson score interval of k successes in n (Wilson 1927), computed here independently
    k, n, z = round(res.share * 20), 20, 1.959963984540054
    centre = (k + z * z / 2) / (n + z * z)
    half = z * math.sqrt(k * (n - k) / n + z * z / 4) / (n + z * z)
    assert res.share_interval == pytest.approx((centre - half, centre + half), abs=1e-12)
    assert res.share >= 0.9
    ev = t["sizing-evaluations"]
    assert np.array_equal(exact(column(ev, "share met [-]")),
                          [c.share for c in sorted(res.candidates, key=lambda c: c.x)])


# -- the facades of Result and FitResult ------------------------------------------------------
BLOCK = """title = "Block on a bench"
[simulation]
duration = "24 h"
step = "15 min"
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


def test_result_report_writes_returns_text_and_needs_its_scenario(tmp_path):
    sc = rcsim.loads(BLOCK, name="block.toml")
    res = sc.run()
    html = res.report(scenario=sc, figures=False)
    hold = exact(column(tables(html)["res-limits"], "hold time [h]"))[0]
    assert hold == res.limits["hold_time [s]"].iloc[0] / 3600.0
    # 1 h + RC ln 5 with RC = 5 h (closed form: Newton cooling after the room's step)
    assert hold == pytest.approx(1.0 + 5.0 * math.log(5.0), abs=2e-3)
    path = res.report(tmp_path / "run.html", scenario=sc, figures=False)
    assert os.path.exists(path)
    with pytest.raises(InputError, match="needs the scenario"):
        res.report()
    # a network simulated without a scenario reports from the network itself
    net = sc.network
    alone = net.simulate("24 h", "15 min")
    page = lxml_html.fromstring(alone.report(scenario=net, figures=False))
    assert "block" in page.get_element_by_id("in-nodes").text_content()


def test_fit_result_report_shows_its_estimates(tmp_path):
    t = np.arange(0, 6 * 3600 + 1, 120.0)
    path = tmp_path / "log.csv"
    # the block's closed form with the room at 30 degC from the start: 30 - 10 exp(-t / RC)
    pd.DataFrame({"time [s]": t, "block": 30.0 - 10.0 * np.exp(-t / 18000.0),
                  "room": np.full(t.shape, 30.0)}).to_csv(path, index=False)
    sc = rcsim.loads(BLOCK.replace('"36 kJ/K"', '"30 kJ/K"'), name="block.toml")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fit = rcsim.fit(sc, path, free=["nodes.block.capacity"], starts=1)
    html = fit.report(scenario=sc, log_path=path, figures=False)
    est = tables(html)["fit-estimates"]
    assert np.array_equal(exact(column(est, "estimate")), fit.estimates["value"].to_numpy())
    assert fit.estimates["value"].iloc[0] == pytest.approx(36000.0, rel=1e-4)
    assert fit.report(tmp_path / "fit.html") == str(tmp_path / "fit.html")
