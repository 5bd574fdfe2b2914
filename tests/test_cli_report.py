"""The report commands and options through click's CliRunner: `rcsim report`, `rcsim draw`,
`--report` on fit, sweep and size, `rcsim run --csv/--xlsx`; numbers read back from the files
against the library's results and closed forms; bad input refused in one line, exit 2, before any
work, leaving no file."""

import math
import os

import numpy as np
import pandas as pd
import pytest

import rcsim

lxml_html = pytest.importorskip("lxml.html")
html5lib = pytest.importorskip("html5lib")

# one node of C = 36 kJ/K behind R = 0.5 K/W (time constant RC = 18000 s = 5 h); the room steps
# from 20 to 30 degC at 1 h, so T = 30 - 10 exp(-(t - 1 h)/RC) after it and the block reaches
# its 28 degC limit at 1 h + RC ln 5 (Newton cooling solved for t, closed form derived here)
BLOCK = """# A block on a bench, warming after the room steps up.

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
RC = 36000.0 * 0.5
HOLD = 3600.0 + RC * math.log(5.0)

# a concrete layer kept as one node with h L / k far above 0.1: the load warns (Biot number)
WARNS = """title = "A thick wall kept whole"
[simulation]
duration = "6 h"
step = "30 min"
[nodes.room]
capacity = "50 kJ/K"
initial = "20 degC"
[boundaries.outdoor]
temperature = "0 degC"
[links.wall]
between = ["room", "outdoor"]
parts = [
  { convection = { h = "8 W/(m^2*K)", area = "10 m^2" } },
  { conduction = { material = "concrete-medium", thickness = "200 mm", area = "10 m^2", slices = 1 } },
  { convection = { h = "25 W/(m^2*K)", area = "10 m^2" } },
]
"""


@pytest.fixture
def block(tmp_path):
    path = tmp_path / "block.toml"
    path.write_text(BLOCK, encoding="utf-8")
    return path


def tables(html):
    """Every table of a page: {id: (header, rows of (text, data-value))}."""
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


def valid(path):
    html = open(path, encoding="utf-8").read()
    html5lib.HTMLParser(strict=True, namespaceHTMLElements=False).parse(html)
    return html


def one_line_refusal(r, *words):
    assert r.exit_code == 2, r.output
    lines = r.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: "), r.output
    assert "Traceback" not in r.output
    for w in words:
        assert w in lines[0], lines[0]


@pytest.fixture
def no_run(monkeypatch):
    """Any simulation fails the test: a refusal must come before the work."""
    def fail(*args, **kwargs):
        raise AssertionError("ran before checking the output path")

    monkeypatch.setattr(rcsim.Scenario, "run", fail)


# -- rcsim report -----------------------------------------------------------------------------
def test_report_writes_a_valid_page_with_the_runs_numbers(cli, block, tmp_path):
    out = tmp_path / "block.html"
    r = cli("report", block, "-o", out)
    assert r.exit_code == 0, r.output
    assert r.output.strip().splitlines()[-1] == f"wrote {out}"
    html = valid(out)
    res = rcsim.load(str(block)).run()
    t = tables(html)
    hold = exact(column(t["res-limits"], "hold time [h]"))
    assert np.array_equal(hold, res.limits["hold_time [s]"].to_numpy() / 3600.0)
    assert hold[0] == pytest.approx(HOLD / 3600.0, abs=2e-3)          # closed form above
    assert np.array_equal(exact(column(t["res-nodes"], "max [degC]")),
                          res.nodes["max [degC]"].to_numpy())
    doc = lxml_html.fromstring(html)
    assert "never replaces, qualification testing" in doc.get_element_by_id("caution").text_content()
    # the run's figures, the network picture and a profile
    charts = doc.xpath("//figure[contains(@class,'chart')]")
    assert {"fig-history", "fig-flows", "network-picture"} <= {c.get("id") for c in charts}
    assert [p for p in os.listdir(tmp_path) if p != "block.toml"] == ["block.html"]


def test_report_without_figures_and_with_expanded_layers(cli, tmp_path):
    path = tmp_path / "wall.toml"
    sliced = WARNS.replace("slices = 1", "slices = 4")
    path.write_text(sliced, encoding="utf-8")
    plain, full = tmp_path / "plain.html", tmp_path / "full.html"
    assert cli("report", path, "-o", plain, "--no-figures", "--quiet").exit_code == 0
    r = cli("report", path, "-o", full, "--expand-layers", "--solver", "stiff")
    assert r.exit_code == 0, r.output
    a, b = lxml_html.fromstring(valid(plain)), lxml_html.fromstring(valid(full))
    ids_a = {f.get("id") for f in a.xpath("//figure[contains(@class,'chart')]")}
    ids_b = {f.get("id") for f in b.xpath("//figure[contains(@class,'chart')]")}
    assert "fig-history" not in ids_a and "fig-history" in ids_b
    assert "network-picture" in ids_a
    # one block for the sliced layer, or each of its 4 internal nodes wall.1 .. wall.4 drawn
    net_a = a.get_element_by_id("network-picture").xpath(".//*[local-name()='svg']")[0]
    net_b = b.get_element_by_id("network-picture").xpath(".//*[local-name()='svg']")[0]
    assert "sliced layer is drawn as one block" in a.get_element_by_id("network-picture") \
        .text_content()
    assert "sliced layer is drawn as one block" not in b.get_element_by_id("network-picture") \
        .text_content()
    # the chain room - 4 slices - outdoor is drawn twice as tall as room - block - outdoor
    height_a = float(net_a.get("viewbox").split()[3])
    height_b = float(net_b.get("viewbox").split()[3])
    assert height_b > 1.5 * height_a
    solver = b.get_element_by_id("solver").text_content()
    assert "stiff" in solver


def test_report_puts_the_warnings_on_the_page_and_prints_them(cli, tmp_path):
    path = tmp_path / "wall.toml"
    path.write_text(WARNS, encoding="utf-8")
    out = tmp_path / "wall.html"
    r = cli("report", path, "-o", out)
    assert r.exit_code == 0, r.output
    printed = [line for line in r.output.splitlines() if line.startswith("warning: ")]
    assert printed and any("Biot" in line for line in printed)
    on_page = lxml_html.fromstring(valid(out)).get_element_by_id("warnings").text_content()
    for line in printed:
        assert line[len("warning: "):] in on_page


@pytest.mark.parametrize("name, words", [
    ("report.pdf", ("--output", "should end with .html")),
    ("missing/report.html", ("--output", "does not exist")),
    ("afolder.html", ("--output", "is a directory")),
])
def test_report_refuses_a_bad_output_before_running(cli, block, tmp_path, no_run, name, words):
    (tmp_path / "afolder.html").mkdir()
    before = sorted(os.listdir(tmp_path))
    one_line_refusal(cli("report", block, "-o", tmp_path / name), *words)
    assert sorted(os.listdir(tmp_path)) == before


def test_report_of_a_bad_scenario_is_one_line_and_no_file(cli, tmp_path):
    path = tmp_path / "bad.toml"
    path.write_text(BLOCK.replace('resistance = "0.5 K/W"', 'resistance = "0.5 K"'),
                    encoding="utf-8")
    one_line_refusal(cli("report", path, "-o", tmp_path / "bad.html"), "links.skin")
    assert sorted(os.listdir(tmp_path)) == ["bad.toml"]
    r = cli("report", tmp_path / "none.toml", "-o", tmp_path / "x.html")
    one_line_refusal(r, "file not found")
    assert cli("report", path).exit_code == 2            # -o is required (click's usage error)


# -- rcsim draw -------------------------------------------------------------------------------
@pytest.mark.parametrize("suffix, magic", [(".svg", b"<?xml"), (".png", b"\x89PNG"),
                                           (".pdf", b"%PDF")])
def test_draw_writes_each_format(cli, block, tmp_path, suffix, magic):
    out = tmp_path / f"net{suffix}"
    r = cli("draw", block, "-o", out)
    assert r.exit_code == 0, r.output
    assert r.output.strip() == f"wrote {out}"
    assert out.read_bytes()[:len(magic)] == magic


def test_draw_orientation_and_layers_follow_the_options(cli, tmp_path):
    import xml.etree.ElementTree as ET

    path = tmp_path / "wall.toml"
    path.write_text(WARNS.replace("slices = 1", "slices = 6"), encoding="utf-8")

    def size(*options):
        out = tmp_path / "net.svg"
        r = cli("draw", path, "-o", out, *options)
        assert r.exit_code == 0, r.output
        root = ET.fromstring(out.read_bytes())
        _, _, w, h = map(float, root.get("viewBox").split())
        return w, h, out.read_text(encoding="utf-8")

    w_down, h_down, _ = size("--expand-layers")
    w_right, h_right, _ = size("--expand-layers", "--orientation", "right")
    # a chain outdoor - 6 slices - room: tall when drawn down, wide when drawn to the right
    assert h_down > w_down and w_right > h_right
    _, h_block, _ = size()
    assert h_block < h_down                        # the layer as one block: a shorter chain


def test_draw_refuses_bad_names_in_one_line(cli, block, tmp_path, monkeypatch):
    one_line_refusal(cli("draw", block, "-o", tmp_path / "net.jpg"), "--output", ".svg")
    one_line_refusal(cli("draw", block, "-o", tmp_path / "no" / "net.svg"), "does not exist")
    assert sorted(os.listdir(tmp_path)) == ["block.toml"]
    r = cli("draw", block, "-o", tmp_path / "net.svg", "--orientation", "up")
    assert r.exit_code == 2 and "Traceback" not in r.output
    assert sorted(os.listdir(tmp_path)) == ["block.toml"]


# -- rcsim run --csv / --xlsx -------------------------------------------------------------------
def test_run_csv_has_units_iso_time_and_reads_back_exactly(cli, block, tmp_path):
    csv, xlsx = tmp_path / "run.csv", tmp_path / "run.xlsx"
    r = cli("run", block, "--csv", csv, "--xlsx", xlsx)
    assert r.exit_code == 0, r.output
    assert f"wrote {csv}" in r.output and f"wrote {xlsx}" in r.output
    res = rcsim.load(str(block)).run()
    head = csv.read_text(encoding="utf-8").splitlines()[:2]
    assert head[0] == "time,elapsed [s],block [degC],room [degC],skin [W]"
    assert head[1].startswith("2026-03-02T08:00:00,0.0,20.0,")
    back = pd.read_csv(csv)
    assert np.array_equal(back["elapsed [s]"].to_numpy(), res.time)
    assert np.array_equal(back["block [degC]"].to_numpy(), res.temperatures["block"].to_numpy())
    assert np.array_equal(back["skin [W]"].to_numpy(), res.heat_flows["skin"].to_numpy())
    # ISO-8601 stamps on the scenario's clock: start + elapsed
    stamps = pd.to_datetime(back["time"])
    assert (stamps - pd.Timestamp("2026-03-02T08:00:00")).dt.total_seconds().tolist() == \
        res.time.tolist()
    # every number as its shortest round-trip text (no 0.029999999999999999)
    for line in csv.read_text(encoding="utf-8").splitlines()[1:]:
        for text in line.split(",")[1:]:
            assert text == repr(float(text))
    sheets = pd.read_excel(xlsx, sheet_name=None, engine="openpyxl")
    assert {"summary", "nodes", "limits", "histories", "heat flows", "energy", "inputs"} <= \
        set(sheets)
    hist = sheets["histories"]
    # the spreadsheet keeps 16 significant digits (its format shows 15): equal to 1e-15
    np.testing.assert_allclose(hist["block [degC]"], res.temperatures["block"], rtol=1e-15)
    np.testing.assert_allclose(hist["elapsed [s]"], res.time, rtol=1e-15)
    np.testing.assert_allclose(sheets["limits"]["hold_time [s]"], res.limits["hold_time [s]"],
                               rtol=1e-15)


def test_run_csv_without_a_clock_starts_with_seconds(cli, tmp_path):
    path = tmp_path / "b.toml"
    path.write_text(BLOCK.replace("start = 2026-03-02T08:00:00\n", ""), encoding="utf-8")
    csv = tmp_path / "b.csv"
    assert cli("run", path, "--csv", csv, "--quiet").exit_code == 0
    assert csv.read_text(encoding="utf-8").splitlines()[0] == \
        "time [s],block [degC],room [degC],skin [W]"


def test_run_refuses_a_spreadsheet_too_long_for_a_sheet_before_running(cli, tmp_path, no_run):
    # 24 h every 0.05 s: 1,728,001 samples; a sheet holds 1,048,576 rows (the format's limit)
    path = tmp_path / "b.toml"
    path.write_text(BLOCK.replace('step = "15 min"', 'step = "0.05 s"'), encoding="utf-8")
    one_line_refusal(cli("run", path, "--xlsx", tmp_path / "run.xlsx"), "1728001 samples")
    assert sorted(os.listdir(tmp_path)) == ["b.toml"]


@pytest.mark.parametrize("option, name, words", [
    ("--xlsx", "run.xls", ("--xlsx", ".xlsx")),
    ("--xlsx", "no/run.xlsx", ("--xlsx", "does not exist")),
    ("--csv", "run.txt", ("--csv", ".csv")),
])
def test_run_refuses_bad_export_names_before_running(cli, block, tmp_path, no_run, option, name,
                                                     words):
    one_line_refusal(cli("run", block, option, tmp_path / name), *words)
    assert sorted(os.listdir(tmp_path)) == ["block.toml"]


# -- --report on fit, sweep and size --------------------------------------------------------------
@pytest.fixture
def block_log(tmp_path):
    """A log made by the closed form of the block with the room already at 30 degC:
    T = 30 - 10 exp(-t / RC)."""
    t = np.arange(0, 6 * 3600 + 1, 120.0)
    path = tmp_path / "log.csv"
    pd.DataFrame({"time [s]": t, "block": 30.0 - 10.0 * np.exp(-t / RC),
                  "room": np.full(t.shape, 30.0)}).to_csv(path, index=False)
    scenario = tmp_path / "guess.toml"
    scenario.write_text(BLOCK.replace('"36 kJ/K"', '"30 kJ/K"')
                        .replace("start = 2026-03-02T08:00:00\n", ""), encoding="utf-8")
    return scenario, path


def test_fit_report_shows_the_estimates_the_fit_prints(cli, block_log, tmp_path):
    scenario, log = block_log
    out = tmp_path / "fit.html"
    r = cli("fit", scenario, log, "--free", "nodes.block.capacity", "--free",
            "nodes.block.initial", "--starts", "1", "--report", out)
    assert r.exit_code == 0, r.output
    assert f"wrote {out}" in r.output
    html = valid(out)
    est = tables(html)["fit-estimates"]
    values = dict(zip([c[0] for c in column(est, "key")], exact(column(est, "estimate"))))
    # the log was made with 36 kJ/K and 20 degC (closed form above)
    assert values["nodes.block.capacity"] == pytest.approx(36000.0, rel=1e-4)
    assert values["nodes.block.initial"] == pytest.approx(20.0, abs=1e-3)
    # the printed estimate (5 significant digits, kJ/K as written) is the page's value
    line = next(x for x in r.output.splitlines() if x.strip().startswith("nodes.block.capacity"))
    assert float(line.split()[1]) == pytest.approx(values["nodes.block.capacity"] / 1000.0,
                                                   rel=1e-4)
    import hashlib

    assert hashlib.sha256(log.read_bytes()).hexdigest() in html
    # every warning printed is on the page too
    page = lxml_html.fromstring(html)
    shown = page.get_element_by_id("warnings").text_content() if page.xpath("//*[@id='warnings']") \
        else ""
    for line in r.output.splitlines():
        if line.startswith("warning: "):
            assert line[len("warning: "):] in shown


def test_fit_refuses_a_bad_report_name_before_fitting(cli, block_log, tmp_path, monkeypatch):
    scenario, log = block_log
    import rcsim.fitting

    def fail(*a, **k):
        raise AssertionError("fitted before checking the report path")

    monkeypatch.setattr(rcsim.fitting, "fit", fail)
    before = sorted(os.listdir(tmp_path))
    one_line_refusal(cli("fit", scenario, log, "--free", "nodes.block.capacity", "--report",
                         tmp_path / "fit.htm.txt"), "--report", ".html")
    assert sorted(os.listdir(tmp_path)) == before


@pytest.mark.slow
def test_sweep_report_and_table_hold_the_same_exact_numbers(cli, block, tmp_path):
    from rcsim.sweep import read_table

    out, table_path = tmp_path / "sweep.html", tmp_path / "sweep.csv"
    r = cli("sweep", block, "--vary", "links.skin.resistance=0.4 K/W..0.6 K/W:3", "--executor",
            "serial", "-o", table_path, "--report", out, "--target-hold", "10 h")
    assert r.exit_code == 0, r.output
    assert f"wrote {out}" in r.output
    table = read_table(table_path)
    # hold time 1 h + R C ln 5 for each R of the grid (closed form above)
    expected = 3600.0 + np.array([0.4, 0.5, 0.6]) * 36000.0 * math.log(5.0)
    np.testing.assert_allclose(table["hold_time.block"], expected, atol=60)
    runs = tables(valid(out))["sweep-runs"]
    assert np.array_equal(exact(column(runs, "links.skin.resistance [K/W]")),
                          table["links.skin.resistance"].to_numpy())
    assert np.array_equal(exact(column(runs, "hold_time.block [s]")),
                          table["hold_time.block"].to_numpy())
    share = tables(valid(out))["sweep-target"]
    # 10 h is held by the runs with 1 h + R * 36000 * ln 5 >= 36000 s: R >= 0.559 K/W, one of 3
    assert exact(column(share, "share of runs [-]"))[0] == pytest.approx(1 / 3)


def test_sweep_refuses_a_bad_report_name_before_running(cli, block, tmp_path, no_run):
    before = sorted(os.listdir(tmp_path))
    one_line_refusal(cli("sweep", block, "--vary", "links.skin.resistance=0.4..0.6:3",
                         "--executor", "serial", "--report", tmp_path / "s.pdf"),
                     "--report", ".html")
    assert sorted(os.listdir(tmp_path)) == before


def test_sweep_csv_table_has_no_float_noise_and_reads_back_exactly(tmp_path):
    from rcsim.sweep import read_table, write_table

    values = np.array([0.03, 0.1 + 0.2, 1 / 3, 2.5e-7, 123456.789, -0.0, 1e300])
    table = pd.DataFrame({"links.skin.resistance": values, "max.block": values * 7.0,
                          "error": [""] * values.size},
                         index=pd.RangeIndex(values.size, name="run"))
    path = write_table(table, tmp_path / "t.csv")
    text = open(path, encoding="utf-8").read()
    assert "0.03," in text and "0.029999999999999999" not in text
    for line in text.splitlines()[1:]:
        for cell in line.split(",")[1:3]:
            assert cell == repr(float(cell))          # the shortest round-trip text
    back = read_table(path)
    assert np.array_equal(back["links.skin.resistance"].to_numpy(), values)
    assert np.array_equal(back["max.block"].to_numpy(), values * 7.0)


# a cold box in a warm room: the hold time to 8 degC from 5 degC in 25 degC is
# t = R C ln((25 - 5)/(25 - 8)) (lumped capacitance, closed form), so a 20 h hold needs
# C = 72000 s / (0.1 K/W ln(20/17))
BOX = """# a cold box in a warm room (invented)
[simulation]
duration = "40 h"
step = "1 min"
[nodes.box]
capacity = "400 kJ/K"
initial = "5 degC"
[boundaries.room]
temperature = "25 degC"
[links.wall]
between = ["box", "room"]
resistance = "0.1 K/W"
[limits.box]
max = "8 degC"
"""
NEEDED = 72000.0 / (0.1 * math.log(20.0 / 17.0))


def test_size_report_shows_the_answer_the_command_prints(cli, tmp_path):
    path = tmp_path / "box.toml"
    path.write_text(BOX, encoding="utf-8")
    out = tmp_path / "size.html"
    r = cli("size", path, "--vary", "nodes.box.capacity=1000kJ/K..8000kJ/K", "--require",
            "hold_time.box >= 20 h", "--tolerance", "1 kJ/K", "--report", out)
    assert r.exit_code == 0, r.output
    assert f"wrote {out}" in r.output
    t = tables(valid(out))
    answer = exact(column(t["sizing-answer"], "answer"))[0]
    assert answer == pytest.approx(NEEDED, abs=1000.0)       # within the 1 kJ/K tolerance
    printed = next(x for x in r.output.splitlines() if "answer:" in x)
    assert column(t["sizing-answer"], "written into the sized scenario")[0][0] == \
        printed.split("=")[1].split("(")[0].strip()
    achieved = exact(column(t["sizing-requirements"], "achieved at the answer"))[0]
    assert achieved * 3600.0 >= 72000.0


def test_size_refuses_a_bad_report_name_before_sizing(cli, tmp_path, no_run):
    path = tmp_path / "box.toml"
    path.write_text(BOX, encoding="utf-8")
    one_line_refusal(cli("size", path, "--vary", "nodes.box.capacity=1000kJ/K..8000kJ/K",
                         "--require", "hold_time.box >= 20 h", "--report", tmp_path / "s.txt"),
                     "--report", ".html")
    assert sorted(os.listdir(tmp_path)) == ["box.toml"]
