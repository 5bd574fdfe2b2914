"""Figures (rcsim.plotting, `rcsim plot`, the gallery), headless: what is drawn is the result's data.

Expected values come from closed forms of a single RC node (T = T_b + (T_0 - T_b) exp(-t/RC);
a constant source P into it stores C*P*R*(1 - exp(-t/RC)) and brings in P*t), from the result's
own tables where the check is that the figure shows them unchanged (line data, limits, hold
times), and from the colour-vision simulation matrices of Machado, Oliveira and Fernandes (2009).
"""

import glob
import itertools
import math
import os
import shutil

import matplotlib
import numpy as np
import pandas as pd
import pytest

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402

import rcsim  # noqa: E402
from rcsim import plotting  # noqa: E402
from rcsim.errors import InputError  # noqa: E402

from conftest import ROOT, SCENARIOS  # noqa: E402

COLD_BOX = os.path.join(SCENARIOS, "cold-box.toml")
# the figures are tested on a fixed linear box that warms up and settles (tests/data), so that
# the bundled examples can change without changing these checks
WARMUP_BOX = os.path.join(os.path.dirname(os.path.abspath(__file__)), "data", "warmup-box.toml")
R, C = 2.5, 8400.0          # K/W, J/K: tau = RC = 21000 s
TAU = R * C


@pytest.fixture(autouse=True)
def _close_figures():
    yield
    plt.close("all")


@pytest.fixture(scope="module")
def box():
    return rcsim.load(WARMUP_BOX).run()


def single_node(duration, step, start=None, boundary=25.0, source=None, initial=5.0):
    net = rcsim.Network()
    net.add_node("mass", capacity=C, initial=initial)
    net.add_boundary("room", temperature=boundary)
    net.add_link("mass", "room", resistance=R, name="wall")
    if source is not None:
        net.add_source("mass", power=source, name="heater")
    return net.simulate(duration, step, start_time=start)


def seconds(drawn, line):
    return np.asarray(line.get_xdata(), dtype=float) * drawn.time_scale


def assert_time_axis(drawn, line, t):
    """The line's x values are the result's times in the axis unit (to rounding)."""
    np.testing.assert_allclose(line.get_xdata(), t / drawn.time_scale, rtol=1e-15, atol=0)


# -- history -------------------------------------------------------------------------------------
def test_history_lines_are_the_result_data(box):
    d = box.plot()  # Result.plot hands off to plotting.plot_result
    assert d.kind == "history"
    for node in ("payload", "box_air"):
        assert_time_axis(d, d.lines[node], box.time)
        np.testing.assert_array_equal(d.lines[node].get_ydata(), box.temperatures[node].to_numpy())
    bay = d.lines["bay"]
    np.testing.assert_array_equal(bay.get_ydata(), box.boundary_temperatures["bay"].to_numpy())
    # boundaries are drawn apart from nodes: grey, thinner, labelled as boundaries
    assert "(boundary)" in bay.get_label()
    assert bay.get_color() not in {d.lines[n].get_color() for n in ("payload", "box_air")}
    assert bay.get_linewidth() < min(d.lines[n].get_linewidth() for n in ("payload", "box_air"))
    assert d.ax.get_xlabel() == "time [h]"
    assert d.ax.get_ylabel() == "temperature [°C]"


def test_history_band_limits_and_hold_time_marker(box):
    d = plotting.plot_history(box)
    lim = box.limits.set_index("kind")
    lo, hi = lim.loc["min", "limit [degC]"], lim.loc["max", "limit [degC]"]
    band = d.bands["payload"]
    assert band.get_y() == lo and band.get_y() + band.get_height() == pytest.approx(hi, abs=1e-12)
    assert list(d.limit_lines["payload:min"].get_ydata()) == [lo, lo]
    assert list(d.limit_lines["payload:max"].get_ydata()) == [hi, hi]
    # the marker sits at the hold time of res.limits (the first excursion: above 8 degC) ...
    hold = lim.loc["max", "hold_time [s]"]
    marker = d.markers["payload"]
    assert seconds(d, marker)[0] == pytest.approx(hold, rel=1e-12)
    assert marker.get_ydata()[0] == hi
    # ... which is on the drawn payload curve: the hold time is located on the solution itself
    # (limits.py), the curve is drawn straight between samples, so they meet within the chord's
    # sag over one 5-minute sample (a few 1e-5 K here)
    line = d.lines["payload"]
    assert np.interp(hold, seconds(d, line), line.get_ydata()) == pytest.approx(hi, abs=1e-3)
    labels = [t.get_text() for t in d.ax.texts]
    assert any("hold time 8 h 47 min" in s for s in labels), labels  # 31592.8 s = 8 h 46.5 min


def test_history_nodes_validated_with_suggestion(box):
    with pytest.raises(InputError, match=r"unknown node 'paylod' .*did you mean 'payload'"):
        plotting.plot_history(box, nodes=["paylod"])
    d = plotting.plot_history(box, nodes=["payload", "bay"])
    assert set(d.lines) == {"payload", "bay"}


def test_history_into_existing_axes_and_from_file(box, tmp_path):
    path = tmp_path / "r.h5"
    box.save(path)
    loaded = rcsim.Result.load(path)
    fig, ax = plt.subplots()
    d = loaded.plot("history", ax=ax, nodes=["payload"])
    assert d.ax is ax and d.figure is fig
    np.testing.assert_array_equal(d.lines["payload"].get_ydata(),
                                  box.temperatures["payload"].to_numpy())
    assert seconds(d, d.markers["payload"])[0] == pytest.approx(box.limits["hold_time [s]"].iloc[1],
                                                                rel=1e-12)


@pytest.mark.parametrize("duration, step, unit", [
    ("2 h", "1 min", "min"),       # a 2 h run is read in minutes
    ("72 h", "10 min", "h"),       # three days in hours
    ("30 d", "1 h", "d"),          # a month in days
    ("90 s", "1 s", "s"),
])
def test_time_axis_unit_follows_the_span(duration, step, unit):
    res = single_node(duration, step)
    d = plotting.plot_history(res)
    assert d.time_unit == unit and d.ax.get_xlabel() == f"time [{unit}]"
    scale = {"s": 1.0, "min": 60.0, "h": 3600.0, "d": 86400.0}[unit]
    np.testing.assert_allclose(d.lines["mass"].get_xdata(), res.time / scale, rtol=0, atol=1e-12)
    for kind in ("flows", "response"):
        assert res.plot(kind).axes[-1].get_xlabel() == f"time [{unit}]"


def test_dates_when_the_run_has_a_start_time():
    res = single_node("3 d", "1 h", start="2026-07-01T06:00:00")
    d = plotting.plot_history(res)
    assert d.time_unit == "date"
    assert d.ax.get_xlabel() == "date and time [from 2026-07-01 06:00]"
    x = pd.to_datetime(d.lines["mass"].get_xdata())
    assert x[0] == pd.Timestamp("2026-07-01 06:00") and x[-1] == pd.Timestamp("2026-07-04 06:00")
    assert plotting.plot_history(res, dates=False).ax.get_xlabel() == "time [h]"
    # the response is about elapsed time, never dates
    assert res.plot("response").ax.get_xlabel() == "time [h]"


# -- response ------------------------------------------------------------------------------------
def test_response_of_one_rc_node_matches_the_closed_form():
    res = single_node("4 d", "1 min")
    d = plotting.plot_response(res, final=25.0)
    t = res.time
    # closed form of one RC node to a constant boundary: theta = exp(-t/RC)
    exact = np.exp(-t / TAU)
    assert_time_axis(d, d.lines["mass"], t)
    # (T is exact to ~1e-13 K, so theta to ~1e-14 absolute)
    np.testing.assert_allclose(d.lines["mass"].get_ydata(), exact, rtol=1e-9, atol=1e-12)
    tau_line = d.markers["tau"]
    assert d.values["tau"] == pytest.approx(TAU, rel=1e-9) and d.values["tau_source"] == "result"
    np.testing.assert_allclose(tau_line.get_ydata(), exact, rtol=1e-9)
    # the 63.2 % point of a single node is at t = RC (linear interpolation over 60 s steps)
    assert seconds(d, d.markers["mass"])[0] == pytest.approx(TAU, rel=1e-4)
    assert d.markers["mass"].get_ydata()[0] == pytest.approx(math.exp(-1))
    texts = " ".join(t.get_text() for t in d.ax.texts)
    assert "τ₁ = 5.833 h" in texts     # 21000 s, the time constants listed on the figure
    assert d.ax.get_yscale() == "log"
    assert "[–]" in d.ax.get_ylabel() and d.ax.get_xlabel() == "time [h]"


def test_response_estimates_tau_when_the_result_stores_none():
    res = single_node("2 d", "1 min")
    res.meta["time_constants"] = []        # as a nonlinear run would leave it
    d = plotting.plot_response(res, final=25.0)
    assert d.values["tau_source"] == "estimated"
    # the slope of ln theta of one RC node is -1/RC (closed form)
    assert d.values["tau"] == pytest.approx(TAU, rel=1e-6)
    assert any("estimated from the slope of ln θ" in n for n in d.notes)
    assert any("estimated" in t.get_text() for t in d.ax.texts)


def test_response_fitted_final_of_a_run_that_has_not_settled():
    res = single_node("6 h", "1 min")          # ends at about one time constant
    d = plotting.plot_response(res, final="fit")
    assert d.values["final"]["mass"] == pytest.approx(25.0, abs=1e-6)  # the boundary (closed form)
    d_last = plotting.plot_response(res)                                 # last sample (default)
    assert d_last.values["final"]["mass"] == res.temperatures["mass"].iloc[-1]
    res.meta["time_constants"] = []
    d_free = plotting.plot_response(res, final="fit")  # tau and T_final found together
    assert d_free.values["tau"] == pytest.approx(TAU, rel=1e-3)
    assert d_free.values["final"]["mass"] == pytest.approx(25.0, abs=1e-2)


def test_response_skips_nodes_that_do_not_move():
    net = rcsim.Network()
    net.add_node("mass", capacity=C, initial=5.0)
    net.add_node("still", capacity=C, initial=25.0)   # starts at its boundary's temperature
    net.add_boundary("room", temperature=25.0)
    net.add_link("mass", "room", resistance=R)
    net.add_link("still", "room", resistance=R)
    res = net.simulate("2 d", "10 min")
    d = plotting.plot_response(res)
    assert set(d.lines) == {"mass"}
    assert any("skipped" in n and "still" in n for n in d.notes)
    with pytest.raises(InputError, match="no warm-up or cool-down"):
        plotting.plot_response(res, nodes=["still"])
    with pytest.raises(InputError, match="final must be 'last', 'fit' or a temperature"):
        plotting.plot_response(res, final="settled")
    with pytest.raises(InputError, match="expected a temperature, got '3 W'"):
        plotting.plot_response(res, final={"mass": "3 W"})
    # 77 degF is (77 - 32) * 5/9 = 25 degC by the definition of the Fahrenheit scale
    f = plotting.plot_response(res, nodes=["mass"], final="77 degF")
    assert f.values["final"]["mass"] == pytest.approx(25.0, abs=1e-12)


# -- flows and energy ----------------------------------------------------------------------------
def test_flows_and_energy_against_closed_forms():
    P = 5.0
    res = single_node("1 d", "5 min", boundary=25.0, source=P, initial=25.0)
    d = res.plot("flows")
    t = res.time
    assert_time_axis(d, d.lines["wall"], t)
    np.testing.assert_array_equal(d.lines["wall"].get_ydata(), res.heat_flows["wall"].to_numpy())
    assert d.axes[0].get_ylabel() == "heat flow [W]"
    scale = d.values["energy_scale"]
    assert d.axes[1].get_ylabel() == f"energy [{d.values['energy_unit']}]" == "energy [kJ]"
    # constant source into one RC node from equilibrium: in P*t, stored C*P*R*(1 - exp(-t/RC)),
    # out = stored - in
    stored = C * P * R * (1.0 - np.exp(-t / TAU))
    np.testing.assert_allclose(d.lines["energy:in"].get_ydata() * scale, P * t, rtol=1e-9)
    np.testing.assert_allclose(d.lines["energy:stored"].get_ydata() * scale, stored,
                               rtol=1e-8, atol=1e-6)
    np.testing.assert_allclose(d.lines["energy:out"].get_ydata() * scale, stored - P * t,
                               rtol=1e-8, atol=1e-6)


def test_flows_axes_choices(box):
    fig, ax = plt.subplots()
    one = plotting.plot_result(box, "flows", ax=ax, links=["walls"])
    assert one.axes == [ax] and set(one.lines) == {"walls"}
    assert one.lines["walls"].get_label() == "walls (box_air → bay)"   # ends from the scenario
    fig, (a1, a2) = plt.subplots(2, 1)
    two = plotting.plot_result(box, "flows", ax=(a1, a2))
    assert two.axes == [a1, a2] and "energy:stored" in two.lines
    with pytest.raises(InputError, match="unknown link 'wall'.*did you mean 'walls'"):
        plotting.plot_result(box, "flows", links=["wall"])
    with pytest.raises(InputError, match="use links="):
        plotting.plot_result(box, "flows", nodes=["payload"])
    with pytest.raises(InputError, match="unknown plot kind 'flow'.*did you mean 'flows'"):
        box.plot("flow")


# -- files ---------------------------------------------------------------------------------------
@pytest.mark.parametrize("fmt, magic", [("png", b"\x89PNG"), ("svg", b"<?xml"), ("pdf", b"%PDF")])
def test_every_format_is_written(box, tmp_path, fmt, magic):
    d = box.plot("response", final="fit")
    path = tmp_path / f"fig.{fmt}"
    assert plotting.save_figure(d.figure, path) == str(path)
    assert path.read_bytes().startswith(magic)
    assert os.listdir(tmp_path) == [f"fig.{fmt}"]      # no temporary file left


def test_unknown_format_is_refused_without_a_file(box, tmp_path):
    d = box.plot()
    with pytest.raises(InputError, match="use .png, .svg or .pdf"):
        plotting.save_figure(d.figure, tmp_path / "fig.jpg")
    assert os.listdir(tmp_path) == []


def test_standard_figures(box, tmp_path):
    paths = plotting.standard_figures(box, tmp_path, "cold-box", formats=("png", "pdf"))
    names = sorted(os.path.basename(p) for p in paths)
    assert names == sorted(f"cold-box-{k}.{f}" for k in ("history", "response", "flows")
                           for f in ("png", "pdf"))
    assert sorted(os.listdir(tmp_path)) == names
    assert plt.get_fignums() == []                       # every figure closed
    # a run that starts steady has no warm-up to show
    steady = single_node("1 d", "10 min", boundary=rcsim.Sine(mean=20, amplitude=5, period=86400))
    steady.meta["initial"] = "steady"
    assert plotting.warmup_nodes(steady) == []


def test_plots_never_run_a_solver(box, tmp_path, monkeypatch):
    path = tmp_path / "r.h5"
    box.save(path)

    def refuse(*args, **kwargs):
        raise AssertionError("a plot ran a solver")

    monkeypatch.setattr(rcsim.Network, "simulate", refuse)
    monkeypatch.setattr(rcsim.Network, "steady", refuse)
    monkeypatch.setattr(rcsim.Scenario, "run", refuse)
    written = plotting.standard_figures(rcsim.Result.load(path), tmp_path, "x")
    assert len(written) == 3


# -- look ----------------------------------------------------------------------------------------
# Machado, Oliveira & Fernandes (2009), "A physiologically-based model for simulation of color
# vision deficiency", IEEE TVCG 15(6): matrices for severity 1.0, applied to linear RGB.
_CVD = {
    "protan": [[0.152286, 1.052583, -0.204868], [0.114503, 0.786281, 0.099216],
               [-0.003882, -0.048116, 1.051998]],
    "deutan": [[0.367322, 0.860646, -0.227968], [0.280085, 0.672501, 0.047413],
               [-0.011820, 0.042940, 0.968881]],
    "tritan": [[1.255528, -0.076749, -0.178779], [-0.078411, 0.930809, 0.147602],
               [0.004733, 0.691367, 0.303900]],
}


def _lab(linear_rgb):
    """CIE L*a*b* (D65) of a linear sRGB colour (IEC 61966-2-1 matrix, CIE 1976 formulas)."""
    xyz = np.array([[0.4124, 0.3576, 0.1805], [0.2126, 0.7152, 0.0722],
                    [0.0193, 0.1192, 0.9505]]) @ linear_rgb / np.array([0.95047, 1.0, 1.08883])
    f = np.where(xyz > 0.008856, np.cbrt(xyz), 7.787 * xyz + 16 / 116)
    return np.array([116 * f[1] - 16, 500 * (f[0] - f[1]), 200 * (f[1] - f[2])])


def _linear(hex_colour):
    c = np.array([int(hex_colour[i:i + 2], 16) / 255 for i in (1, 3, 5)])
    return np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)


def test_palette_stays_apart_for_colour_blind_readers_and_in_grey():
    colours = [_linear(h) for h in plotting.PALETTE]
    for name, m in [("normal", np.eye(3))] + [(k, np.array(v)) for k, v in _CVD.items()]:
        labs = [_lab(np.clip(m @ c, 0, 1)) for c in colours]
        for i, j in itertools.combinations(range(len(labs)), 2):
            # CIE76 difference; 15 is well above the ~2.3 just-noticeable difference (common
            # practice for telling plot lines apart)
            assert np.linalg.norm(labs[i] - labs[j]) >= 15, (name, plotting.PALETTE[i],
                                                             plotting.PALETTE[j])
    lightness = [_lab(c)[0] for c in colours]
    # neighbours in the order differ in lightness, so they differ in grey-scale print
    assert all(abs(a - b) >= 20 for a, b in zip(lightness, lightness[1:]))
    # every series of the first twelve has its own colour, style and marker combination
    styles = [plotting.series_style(i) for i in range(12)]
    combos = {(s["color"], str(s["linestyle"]), s.get("marker")) for s in styles}
    assert len(combos) == 12 and len({str(s["linestyle"]) for s in styles[:6]}) == 6


def test_importing_plotting_imports_no_matplotlib_and_every_name_resolves():
    import subprocess
    import sys

    # the command line's fast start needs `import rcsim.plotting` to stay light; names load when
    # first used (matplotlib itself only when something is drawn)
    script = ("import sys, rcsim.plotting as p; p.PALETTE, p.KINDS, p.save_figure, p.plot_history; "
              "print('matplotlib' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                         check=True).stdout
    assert out.strip().splitlines()[-1] == "False"
    for name in plotting.__all__:
        assert getattr(plotting, name) is not None, name
    with pytest.raises(AttributeError, match="no attribute 'plot_nothing'"):
        plotting.plot_nothing  # noqa: B018


# -- the command ---------------------------------------------------------------------------------
@pytest.fixture(scope="module")
def result_file(tmp_path_factory):
    path = tmp_path_factory.mktemp("plot") / "box.h5"
    rcsim.load(WARMUP_BOX).run(output=str(path))
    return path


def test_cli_plot_writes_each_kind_and_format(cli, result_file, tmp_path):
    r = cli("plot", result_file)
    assert r.exit_code == 0, r.output
    default = str(result_file)[:-3] + "-history.png"
    assert os.path.exists(default) and f"wrote {default}" in r.output
    for kind, fmt, magic in (("response", "svg", b"<?xml"), ("flows", "pdf", b"%PDF"),
                             ("history", "png", b"\x89PNG")):
        out = tmp_path / f"{kind}.{fmt}"
        r = cli("plot", result_file, "--kind", kind, "-o", out)
        assert r.exit_code == 0, r.output
        assert out.read_bytes().startswith(magic)
    r = cli("plot", result_file, "--kind", "response", "--nodes", "payload", "--final", "25 degC",
            "-o", tmp_path / "given.png")
    assert r.exit_code == 0, r.output


@pytest.mark.parametrize("args, message", [
    (["--nodes", "paylod"], "error: --nodes: unknown node 'paylod' (did you mean 'payload'?)"),
    (["--nodes", "payload,box_ai"], "error: --nodes: unknown node 'box_ai' (did you mean "
                                    "'box_air'?)"),
    (["--kind", "histroy"], "error: --kind: unknown kind 'histroy' (did you mean 'history'?)"),
    (["-o", "{tmp}/fig.jpg"], "error: --output: '{tmp}/fig.jpg' should end with .png or .svg or "
                              ".pdf"),
    (["-o", "{tmp}/nofolder/fig.png"], "error: --output: folder '{tmp}/nofolder' does not exist "
                                       "(create it first)"),
    (["--kind", "flows", "--links", "wall"], "error: --links: unknown link 'wall' (did you mean "
                                             "'walls'?)"),
    (["--kind", "flows", "--nodes", "payload"], "error: --nodes: --nodes chooses nodes of history "
                                                "and response figures (use --links for a flows "
                                                "figure)"),
    (["--final", "fit"], "error: --final: --final applies to response figures (use --kind "
                         "response)"),
    (["--kind", "response", "--final", "7 W"], "error: --final: final must be 'last', 'fit' or a "
                                               "temperature; expected a temperature"),
])
def test_cli_plot_bad_options_exit_2_with_one_line(cli, result_file, tmp_path, args, message):
    args = [a.replace("{tmp}", str(tmp_path)) for a in args]
    r = cli("plot", result_file, *args)
    assert r.exit_code == 2, r.output
    lines = r.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(message.replace("{tmp}", str(tmp_path))), lines
    assert glob.glob(str(tmp_path / "*")) == []        # nothing written, not even a temp file


def test_cli_plot_missing_or_foreign_file(cli, tmp_path):
    r = cli("plot", tmp_path / "none.h5")
    assert r.exit_code == 2 and r.output.strip() == "error: none.h5: file not found"
    junk = tmp_path / "junk.h5"
    junk.write_bytes(b"not hdf5")
    r = cli("plot", junk)
    assert r.exit_code == 2 and r.output.startswith("error: junk.h5: cannot be read as HDF5")


def test_cli_run_writes_the_standard_set(cli, tmp_path):
    r = cli("run", WARMUP_BOX, "--plots", tmp_path / "figs", "--quiet")
    assert r.exit_code == 0, r.output
    assert sorted(os.listdir(tmp_path / "figs")) == ["warmup-box-flows.png",
                                                    "warmup-box-history.png",
                                                    "warmup-box-response.png"]
    # a run that never settles (the bundled shipper under a daily swing) has no response figure
    r = cli("run", COLD_BOX, "--plots", tmp_path / "figs2", "--quiet")
    assert r.exit_code == 0, r.output
    assert sorted(os.listdir(tmp_path / "figs2")) == ["cold-box-flows.png", "cold-box-history.png"]


# -- the gallery ---------------------------------------------------------------------------------
def test_gallery_holds_the_figures_of_every_scenario():
    scenarios = sorted(glob.glob(os.path.join(SCENARIOS, "*.toml")))
    assert scenarios
    for path in scenarios:
        stem = os.path.splitext(os.path.basename(path))[0]
        for kind in ("history", "flows"):
            fig = os.path.join(ROOT, "plots", f"{stem}-{kind}.png")
            assert os.path.exists(fig), f"{fig} missing: run `python -m rcsim.gallery`"
            assert os.path.getsize(fig) < 200_000
        index = open(os.path.join(ROOT, "plots", "README.md"), encoding="utf-8").read()
        assert f"({stem}-history.png)" in index


def test_gallery_build_picks_up_scenarios_and_drops_stale_figures(tmp_path):
    from rcsim.gallery import build_gallery

    src = tmp_path / "scenarios"
    src.mkdir()
    shutil.copy(WARMUP_BOX, src / "shipper.toml")
    out = tmp_path / "plots"
    out.mkdir()
    (out / "gone-history.png").write_bytes(b"old")
    written = build_gallery(str(src), str(out))
    assert sorted(os.listdir(out)) == ["README.md", "shipper-flows.png", "shipper-history.png",
                                       "shipper-response.png"]
    assert written[-1] == str(out / "README.md")
    assert "![shipper response](shipper-response.png)" in (out / "README.md").read_text()
    empty = tmp_path / "empty"
    empty.mkdir()
    with pytest.raises(InputError, match="no \\*.toml scenario in"):
        build_gallery(str(empty), str(out))


def test_no_response_figure_for_a_node_that_swings_about_its_final_value():
    # the winter shipper's payload cools, dips past its final value and climbs back with the daily
    # swing: a response figure would misread that as a decay with one time constant
    res = rcsim.load(os.path.join(SCENARIOS, "cold-box-winter.toml")).run()
    assert plotting.warmup_nodes(res) == []
    # the switch-on of the enclosure is a warm-up of every node
    res = rcsim.load(os.path.join(SCENARIOS, "enclosure-warmup.toml")).run()
    assert set(plotting.warmup_nodes(res)) == {"module", "plate", "inner_air", "shell"}


# -- fonts: names in any script are drawn, or one warning says which font to install ----------
CJK_NAME = "冷藏箱"     # invented demo name: "cold box"


def _fonts_with(char):
    """Families fontconfig (fc-list, independent of matplotlib) knows with a glyph for
    ``char``; None when fc-list is not installed."""
    if shutil.which("fc-list") is None:
        return None
    import subprocess

    out = subprocess.run(["fc-list", f":charset={ord(char):x}", "family"], capture_output=True,
                         text=True, timeout=60).stdout
    return [line for line in out.splitlines() if line.strip()]


def _font_warnings(caught):
    return [str(w.message) for w in caught if "font" in str(w.message)]


def test_the_font_list_starts_with_the_default_and_adds_only_fonts_with_the_missing_glyphs():
    from matplotlib import font_manager
    from matplotlib.ft2font import FT2Font

    from rcsim.plotting import style

    families = style.font_families()
    assert families[0] == style.DEFAULT_FONT == matplotlib.rcParamsDefault["font.sans-serif"][0]
    assert plotting.STYLE["font.family"] == list(families)
    for family in families:            # each one a font matplotlib finds, not a wish
        path = font_manager.findfont(font_manager.FontProperties(family=family),
                                     fallback_to_default=False)
        if family != families[0]:      # and each added one has a glyph the default lacks
            charmap = FT2Font(path).get_charmap()
            assert any(ord(c) in charmap for c in style.CJK_PROBES), family
    default = FT2Font(font_manager.findfont(style.DEFAULT_FONT)).get_charmap()
    assert not any(ord(c) in default for c in style.CJK_PROBES)
    if _fonts_with(CJK_NAME[0]):       # fontconfig knows a font with the ideograph: it is used
        assert len(families) > 1
        assert style.missing_glyphs(CJK_NAME) == []
    assert style.missing_glyphs("T_out −5 °C ≤ τ₁") == []     # the default font has these


def test_a_name_in_cjk_script_is_drawn_with_a_font_that_has_it(tmp_path):
    if not _fonts_with(CJK_NAME[0]):
        pytest.skip("no font with CJK glyphs installed (Debian: fonts-noto-cjk)")
    import warnings

    net = rcsim.Network()
    net.add_node(CJK_NAME, capacity=8000.0, initial=5.0)
    net.add_boundary("外気", temperature=25.0)
    net.add_link(CJK_NAME, "外気", resistance=2.0)
    res = net.simulate(duration=3600.0, step=600.0)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        for drawn in (plotting.plot_history(res), plotting.plot_result(res, "flows")):
            plotting.save_figure(drawn.figure, tmp_path / f"{drawn.kind}.png")
    # matplotlib warns for every glyph none of a text's fonts has (its own check): none here
    assert _font_warnings(caught) == []


def test_without_a_font_for_the_script_one_warning_names_the_package(tmp_path, monkeypatch):
    # as on a machine without such a font: the figure is written, matplotlib's warning for every
    # glyph is replaced by one line, given once per process, naming the package to install
    import warnings

    from rcsim.errors import RcsimWarning
    from rcsim.plotting import style

    monkeypatch.setattr(style, "font_families", lambda: (style.DEFAULT_FONT,))
    monkeypatch.setattr(style, "_WARNED", [False])
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        for i in range(2):
            fig, ax = plt.subplots()
            ax.plot([0, 1], [5, 6], label=f"{CJK_NAME} {i}")
            ax.set_title("외벽")
            ax.legend()
            plotting.save_figure(fig, tmp_path / f"f{i}.png")
    said = _font_warnings(caught)
    assert len(said) == 1, said
    assert caught[[str(w.message) for w in caught].index(said[0])].category is RcsimWarning
    assert "'冷' (U+51B7)" in said[0] and "fonts-noto-cjk" in said[0]
    assert (tmp_path / "f0.png").stat().st_size > 0 and (tmp_path / "f1.png").exists()
    assert style.missing_glyphs("plain ASCII, 5 °C") == []


# -- every figure rcsim draws is made and written in the style (its font list included) -------
CJK_BOX = f"""title = "{CJK_NAME}"
[simulation]
duration = "6 h"
step = "10 min"
[nodes."{CJK_NAME}"]
capacity = "8 kJ/K"
initial = "5 degC"
[boundaries."外気"]
temperature = "25 degC"
[links."壁"]
between = ["{CJK_NAME}", "外気"]
resistance = "2 K/W"
[limits."{CJK_NAME}"]
max = "8 degC"
"""


def _cjk_log(path):
    """The box's log: 25 - 20 exp(-t / 16000 s) (its single RC, 8 kJ/K x 2 K/W), every 10 min,
    with a small invented ripple so the fit has residuals."""
    t = np.arange(0.0, 6 * 3600.0 + 1, 600.0)
    values = 25.0 - 20.0 * np.exp(-t / 16000.0) + 0.02 * np.sin(t / 777.0)
    pd.DataFrame({"time [s]": t, CJK_NAME: values}).to_csv(path, index=False)
    return path


def _cjk_texts(fig):
    from matplotlib.text import Text

    return [t for t in fig.findobj(Text) if any(c in t.get_text() for c in CJK_NAME + "外壁")]


def _glyph_warnings(caught):
    return [str(w.message) for w in caught if "missing from font" in str(w.message)]


def test_every_figure_rcsim_draws_takes_the_font_list(tmp_path):
    # with or without a CJK font: the texts of the network picture, the fit, sizing and sweep
    # figures and the report's small figures are set in the style's font list (matplotlib's own
    # default is ["sans-serif"], which falls back to nothing)
    import warnings

    from rcsim.drawing import draw_network
    from rcsim.fitting.figures import plot_candidates
    from rcsim.plotting import style
    from rcsim.report.figures import profile_figures
    from rcsim.sizing.figures import plot_sizing

    want = list(style.font_families())
    path = tmp_path / "box.toml"
    path.write_text(CJK_BOX, encoding="utf-8")
    sc = rcsim.load(path)
    figures = {"network": draw_network(sc).figure}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fit = rcsim.fit(str(path), str(_cjk_log(tmp_path / "log.csv")),
                        free=[f"nodes.{CJK_NAME}.capacity"], starts=1)
        sized = rcsim.size(str(path), vary={f"nodes.{CJK_NAME}.capacity": ("4 kJ/K", "40 kJ/K")},
                           require=f"hold_time.{CJK_NAME} >= 1 h")
    # the fitted capacity: the log's 8 kJ/K (its single RC above), within the ripple's effect
    assert fit.estimates["value"].iloc[0] == pytest.approx(8000.0, rel=0.01)
    figures["fit"] = plot_candidates({"one": fit}).figure
    figures["sizing"] = plot_sizing(sized)["figure"]
    table = pd.DataFrame({"k": [1.0, 2.0, 3.0], f"max.{CJK_NAME}": [6.0, 7.0, 9.0]})
    table.attrs.update(inputs=["k"], outputs=[f"max.{CJK_NAME}"])
    figures["distribution"] = plotting.plot_distribution(table, f"max.{CJK_NAME}")["ax"].figure
    figures["scatter"] = plotting.plot_scatter(table, f"max.{CJK_NAME}")["axes"][0].figure
    for name, fig in figures.items():
        texts = _cjk_texts(fig)
        assert texts, name
        for t in texts:
            assert list(t.get_fontfamily()) == want, (name, t.get_text())
    plt.close("all")
    # the report's small figures are made in the style too: their titles name the boundary
    drawn = profile_figures(sc, 6 * 3600.0)
    assert len(drawn) == 1 and "外気" in drawn[0].caption


def test_cjk_names_drawn_in_every_written_figure(cli, tmp_path):
    # `rcsim draw` (PNG and SVG), `rcsim fit --plot`, `rcsim size --plots` and `rcsim report`
    # with names in Chinese script: matplotlib (its own check) warns of no glyph missing from the
    # fonts of a text; before, the network picture and the report drew them as empty boxes
    if not _fonts_with(CJK_NAME[0]):
        pytest.skip("no font with CJK glyphs installed (Debian: fonts-noto-cjk)")
    import warnings

    path = tmp_path / "box.toml"
    path.write_text(CJK_BOX, encoding="utf-8")
    log = _cjk_log(tmp_path / "log.csv")
    runs = [("draw", path, "-o", tmp_path / "net.png"),
            ("draw", path, "-o", tmp_path / "net.svg"),
            ("fit", path, log, "--free", f"nodes.{CJK_NAME}.capacity", "--starts", "1",
             "--plot", tmp_path / "fit.png"),
            ("size", path, "--vary", f"nodes.{CJK_NAME}.capacity=4kJ/K..40kJ/K", "--require",
             f"hold_time.{CJK_NAME}>=1h", "--plots", tmp_path / "plots"),
            ("report", path, "-o", tmp_path / "r.html")]
    for args in runs:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            r = cli(*args)
        assert r.exit_code == 0, (args[0], r.output)
        assert _glyph_warnings(caught) == [] and "missing from font" not in r.output, args[0]
    svg = (tmp_path / "net.svg").read_text(encoding="utf-8")
    assert "NotoSansCJK" in svg or "NotoSerifCJK" in svg     # the glyphs' ids name their font
    assert os.listdir(tmp_path / "plots")
