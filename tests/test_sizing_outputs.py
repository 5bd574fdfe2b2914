"""Sizing: the search on functions with known roots, the `rcsim size` body, the files it writes
(sized scenario, evaluations table, figure) and its one-line errors."""

import math
import os

import numpy as np
import pytest

from rcsim.errors import InputError
from rcsim.scenario import load
from rcsim.sizing import size, size_command
from rcsim.sizing.evaluate import Candidate
from rcsim.sizing.figures import plot_sizing
from rcsim.sizing.requirement import parse_requirement
from rcsim.sizing.result import HEADER_FIRST
from rcsim.sizing.search import search_continuous, search_discrete
from rcsim.sweep import read_table

LOG_RATIO = math.log(20.0 / 17.0)  # ln((T_a - T_i)/(T_a - T_max)) of the box below

BOX = """# a cold box in a warm room (invented)
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
resistance = "0.1 K/W"  # foam and films

[limits.box]
max = "8 degC"          # the band's upper edge
"""


class Known:
    """An evaluator of a known function (slack = f(x)), as the search sees a scenario."""

    def __init__(self, f):
        self.f, self.candidates, self.seen = f, [], {}

    def __call__(self, xs):
        for x in xs:
            if x not in self.seen:
                s = float(self.f(x))
                c = Candidate(x, len(self.candidates), np.array([x]), s, s >= 0, np.array([s]),
                              np.array([s]), int(s >= 0), 1, 0, slice(0, 1))
                self.candidates.append(c)
                self.seen[x] = c
        return [self.seen[x] for x in xs]


def _search(f, xtol=1e-4, **kw):
    ev = Known(f)
    low, high = ev([0.0, 1.0])
    return ev, search_continuous(ev, low, high, xtol, **kw)


def test_search_closes_on_a_known_root_in_few_evaluations():
    # x^3 = 0.2 at x = 0.2^(1/3) (closed form); bisection alone would need 14 evaluations to 1e-4
    root = 0.2 ** (1 / 3)
    ev, out = _search(lambda x: x**3 - 0.2, checks=0)
    assert root <= out.answer.x <= root + 1e-4 and out.other.x < root
    assert out.direction == "at least" and out.monotone
    assert len(ev.candidates) <= 12
    # met at the low end: the answer is the largest value meeting it (0.3 - x >= 0, x <= 0.3)
    ev, out = _search(lambda x: 0.3 - x)
    assert 0.3 - 1e-4 <= out.answer.x <= 0.3 and out.direction == "at most"


def test_search_scans_a_response_that_is_not_monotone():
    # -cos(5 pi x) >= 0 on [0.1, 0.3], [0.5, 0.7] and [0.9, 1]: five changes (at 0.1, 0.3, ...,
    # 0.9, closed form); from the end that meets it, everything from 0.9 up meets it. The first
    # secant step lands on the root at 0.5 and the search closes there; a check point at 0.875
    # (-cos(4.375 pi) < 0) shows the response is not monotone.
    ev, out = _search(lambda x: -math.cos(5 * math.pi * x))
    assert not out.monotone and out.scanned
    assert len(out.crossings) == 5
    assert 0.9 <= out.answer.x <= 0.9 + 1e-4


def test_choices_bisect_and_a_slack_that_turns_back_is_scanned():
    # slacks by choice (invented): monotone -> the first choice meeting it, in 2 + 2 evaluations
    # and one check (the choice between the answer and the last)
    slacks = [-3.0, -2.0, -1.0, 0.5, 1.0, 2.0]
    ev = Known(lambda i: slacks[int(i)])
    low, high = ev([0.0, 5.0])
    out = search_discrete(ev, low, high, 6)
    assert out.answer.x == 3 and out.other.x == 2 and len(ev.candidates) == 5
    # the slack at the third choice is above the last one's: not monotone, so every choice is
    # run, and the answer is the first of the choices that all meet it from the top (index 4)
    slacks = [-1.0, 2.0, 3.0, -0.5, 0.5, 1.0]
    ev = Known(lambda i: slacks[int(i)])
    low, high = ev([0.0, 5.0])
    out = search_discrete(ev, low, high, 6)
    assert not out.monotone and out.answer.x == 4 and len(ev.candidates) == 6


@pytest.mark.parametrize("text, output, op, target", [
    ("hold_time.box >= 72 h", "hold_time.box", ">=", 72 * 3600.0),
    ("max.box<=85 degC", "max.box", "<=", 85.0),
    ("min.box ≥ 64.4 degF", "min.box", ">=", 18.0),            # (64.4 - 32) / 1.8 = 18
    ("time_outside_band.box <= 30 min", "time_outside_band.box", "<=", 1800.0),
    # the former name is still accepted and read as the current one (issue 15)
    ("time_out.box < 30 min", "time_outside_band.box", "<=", 1800.0),
])
def test_requirements_are_read_with_their_units(text, output, op, target):
    req = parse_requirement(text, ["box"], ["box"])
    assert (req.output, req.op) == (output, op)
    assert req.target == pytest.approx(target)


def test_the_command_body_prints_the_answer_and_writes_what_was_asked(tmp_path):
    path = tmp_path / "box.toml"
    path.write_text(BOX, encoding="utf-8")
    sized, table, figs = tmp_path / "sized.toml", tmp_path / "runs.csv", tmp_path / "figs"
    text = size_command(str(path), ["nodes.box.capacity=1000kJ/K..8000kJ/K"],
                        ["hold_time.box >= 20 h"], write_scenario=str(sized), output=str(table),
                        plots_dir=str(figs))
    assert "answer: nodes.box.capacity = " in text and "(at least)" in text
    assert "margin" in text and "values tried" in text and "runs" in text
    assert "sizing supports, and never replaces, qualification testing" in text
    assert f"wrote {sized}" in text and os.path.exists(figs / "box-sizing.png")
    # the sized scenario: the user's text with the value changed, comments kept, read back
    written = sized.read_text(encoding="utf-8")
    assert written.startswith(HEADER_FIRST)
    for comment in ("# contents", "# foam and films", "# the band's upper edge"):
        assert comment in written
    back = load(str(sized))
    capacity = back.si_value("nodes.box.capacity")
    # the written value holds 20 h: an independent run against the closed form R C ln(20/17)
    assert capacity >= 72000.0 / (0.1 * LOG_RATIO) * (1 - 1e-9)
    hold = back.run(record=["box"]).limits["hold_time [s]"].iloc[0]
    assert hold >= 72000.0
    runs = read_table(table)
    assert "met" in runs.columns and len(runs) == int(text.split(" runs,")[0].split()[-1])
    # sizing the sized scenario again keeps one header
    size_command(str(sized), ["nodes.box.capacity=1000kJ/K..8000kJ/K"],
                 ["hold_time.box >= 10 h"], write_scenario=str(sized))
    assert sized.read_text(encoding="utf-8").count(HEADER_FIRST) == 1


def test_the_evaluations_table_and_the_figure_show_the_runs(tmp_path):
    path = tmp_path / "box.toml"
    path.write_text(BOX, encoding="utf-8")
    calls = []
    res = size(str(path), vary={"nodes.box.capacity": ("1000 kJ/K", "8000 kJ/K")},
               require="hold_time.box >= 20 h", progress=lambda f, d: calls.append((f, d)))
    # progress: the share of the bracket closed (log scale), 1 once it is within the tolerance
    fractions = [f for f, _ in calls]
    assert all(0.0 <= f <= 1.0 for f in fractions) and max(fractions) == 1.0
    assert calls[-1][1].startswith(f"{res.n_runs} runs")
    out = res.write_runs(tmp_path / "runs.h5")
    back = read_table(out)
    assert back.attrs["requirements"] == ["hold_time.box >= 20 h"]
    assert np.allclose(back["nodes.box.capacity"], res.runs["nodes.box.capacity"])
    drawn = plot_sizing(res)
    # x in kJ/K (the range's unit), y in h; the required line at 20 h, the answer at the value
    x = np.sort(res.runs["nodes.box.capacity"].to_numpy()) / 1000.0
    assert np.allclose(drawn["x"]["hold_time.box"], x)
    assert drawn["targets"]["hold_time.box"].get_ydata()[0] == pytest.approx(20.0)
    assert drawn["answer"]["hold_time.box"].get_xdata()[0] == pytest.approx(res.value / 1000.0)
    import matplotlib.pyplot as plt

    plt.close(drawn["figure"])


@pytest.mark.parametrize("kwargs, words", [
    (dict(vary_items=["nodes.box.capacity"]), "expected KEY=VALUES"),
    (dict(output="runs.txt"), "should end with .csv, .h5 or .parquet"),
    (dict(write_scenario="missing/sized.toml"), "does not exist"),
    (dict(confidence=0.9), "a confidence needs uncertain inputs"),
    (dict(require_items=[]), "nothing is required"),
    (dict(vary_uncertain_items=["boundaries.room.temperature=normal(25degC,2K)"]),
     "distributions need a number of samples"),
    (dict(samples=10), "samples given but nothing is uncertain"),
])
def test_the_command_body_refuses_bad_options_in_one_line(tmp_path, kwargs, words):
    path = tmp_path / "box.toml"
    path.write_text(BOX, encoding="utf-8")
    options = dict(vary_items=["nodes.box.capacity=1000kJ/K..8000kJ/K"],
                   require_items=["hold_time.box >= 20 h"])
    options.update(kwargs)
    for key in ("output", "write_scenario"):
        if key in options:
            options[key] = str(tmp_path / options[key])
    vary_items, require_items = options.pop("vary_items"), options.pop("require_items")
    with pytest.raises(InputError) as err:
        size_command(str(path), vary_items, require_items, **options)
    assert words in str(err.value) and "\n" not in str(err.value)
    assert sorted(os.listdir(tmp_path)) == ["box.toml"]  # nothing written


def test_the_size_command_answers_and_refuses_through_the_command_line(tmp_path):
    """`rcsim size` through click: the answer against the lumped-capacitance closed form
    t = R C ln((T_a - T_i)/(T_a - T_max)) (standard heat-transfer texts), and exit 2 with one
    line when neither end of the range meets the requirement."""
    from click.testing import CliRunner

    from rcsim.cli import main

    path = tmp_path / "box.toml"
    path.write_text(BOX, encoding="utf-8")
    runner = CliRunner()
    ok = runner.invoke(main, ["size", str(path), "--vary", "nodes.box.capacity=1000kJ/K..8000kJ/K",
                              "--require", "hold_time.box >= 20 h", "--tolerance", "1 kJ/K"])
    assert ok.exit_code == 0, ok.output
    line = next(x for x in ok.output.splitlines() if "answer:" in x)
    value_kj = float(line.split("=")[1].split()[0])
    assert value_kj == pytest.approx(72000.0 / (0.1 * LOG_RATIO) / 1e3, abs=1.0)
    bad = runner.invoke(main, ["size", str(path), "--vary", "nodes.box.capacity=1kJ/K..2kJ/K",
                               "--require", "hold_time.box >= 20 h"])
    assert bad.exit_code == 2
    assert len(bad.output.strip().splitlines()) == 1 and "Traceback" not in bad.output


def test_a_sized_scenario_written_elsewhere_runs_with_no_option(tmp_path):
    """The box's room read from a CSV beside its scenario; the sized scenario written into
    another folder gets a copy of the CSV (said on stdout) and `rcsim run` reads it with no
    option; its hold time holds, against the closed form R C ln(20/17) (standard heat-transfer
    texts, lumped capacitance)."""
    from click.testing import CliRunner

    from rcsim.cli import main
    from rcsim.results import Result

    src, out = tmp_path / "src", tmp_path / "out"
    src.mkdir()
    out.mkdir()
    (src / "box.toml").write_text(BOX.replace(
        'temperature = "25 degC"', 'temperature = { csv = { file = "room.csv", column = "T" } }'),
        encoding="utf-8")
    (src / "room.csv").write_text("time [h],T [degC]\n0,25\n40,25\n", encoding="utf-8")
    sized = out / "sized.toml"
    runner = CliRunner()
    ok = runner.invoke(main, ["size", str(src / "box.toml"), "--vary",
                              "nodes.box.capacity=1000kJ/K..8000kJ/K", "--require",
                              "hold_time.box >= 20 h", "--write-scenario", str(sized)])
    assert ok.exit_code == 0, ok.output
    assert f"copied {os.path.realpath(src / 'room.csv')} to {out / 'room.csv'}" in ok.output
    assert (out / "room.csv").read_bytes() == (src / "room.csv").read_bytes()
    h5 = out / "run.h5"
    run = runner.invoke(main, ["run", str(sized), "-o", str(h5)])
    assert run.exit_code == 0, run.output
    capacity = load(str(sized)).si_value("nodes.box.capacity")
    assert capacity >= 72000.0 / (0.1 * LOG_RATIO) * (1 - 1e-9)
    assert capacity <= 72000.0 / (0.1 * LOG_RATIO) + 0.002 * 7e6   # default tolerance 0.1 %
    hold = Result.load(str(h5)).limits["hold_time [s]"].iloc[0]
    assert hold >= 72000.0
    # sized again into the same folder: the copy there is the same file, reused, not copied
    again = runner.invoke(main, ["size", str(src / "box.toml"), "--vary",
                                 "nodes.box.capacity=1000kJ/K..8000kJ/K", "--require",
                                 "hold_time.box >= 20 h", "--write-scenario", str(sized)])
    assert again.exit_code == 0 and "an identical copy" in again.output
    assert sorted(os.listdir(out)) == ["room.csv", "run.h5", "sized.toml"]
