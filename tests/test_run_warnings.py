"""What a network or a run warns about (rcsim.run_warnings; issue 15 items 2 and 3, issue 18
item 5): nodes with no path to a boundary, a freezing point passed without latent heat, a
convection correlation outside the range of its source. Each warning names the scenario file,
is printed by `check`/`run` and kept in Result.warnings."""

import math
import warnings

import numpy as np
import pytest

import rcsim
from rcsim.run_warnings import FloatingNodesWarning

LONELY = """
[simulation]
duration = "2 h"
step = "10 min"
[nodes.a]
capacity = "1 kJ/K"
initial = "10 degC"
[nodes.lonely]
capacity = "1 kJ/K"
initial = "5 degC"
[nodes.b]
capacity = "2 kJ/K"
initial = "30 degC"
[nodes.c]
capacity = "2 kJ/K"
initial = "20 degC"
[boundaries.out]
temperature = "25 degC"
[links.wall]
between = ["a", "out"]
resistance = "1 K/W"
[links.gap]
between = ["b", "c"]
resistance = "2 K/W"
[sources.heater]
node = "b"
power = "2 W"
"""


def _write(tmp_path, name, text):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


# -- item 1: nodes with no path to a boundary ---------------------------------------------------
def test_nodes_without_a_boundary_warn_in_check_and_run(tmp_path, cli):
    path = _write(tmp_path, "floating.toml", LONELY)
    lonely = "floating.toml: nodes.lonely: node 'lonely' is linked to nothing"
    group = "floating.toml: nodes 'b', 'c' have no path to any boundary"
    result = cli("check", path)
    assert result.exit_code == 0, result.output
    warned = [line for line in result.output.splitlines() if line.startswith("warning:")]
    assert len(warned) == 2, result.output
    assert any(lonely in line for line in warned) and any(group in line for line in warned)
    assert "floating.toml: ok, 2 warning(s)" in result.output
    result = cli("run", path)
    assert result.exit_code == 0, result.output
    assert sum(line.startswith("warning: ") for line in result.output.splitlines()) == 2
    # each text printed once (the summary counts them and points at the 'warning:' lines)
    assert result.output.count(lonely) == 1 and result.output.count(group) == 1
    assert "  2 warning(s): see the lines starting with 'warning:'" in result.output
    # with --quiet there is no summary: the 'warning:' lines are still there, once each
    result = cli("run", path, "--quiet")
    assert result.exit_code == 0, result.output
    assert result.output.count(lonely) == 1 and result.output.count(group) == 1


def test_result_warnings_keep_them_and_the_physics_is_unchanged(tmp_path):
    sc = rcsim.load(_write(tmp_path, "floating.toml", LONELY))
    with pytest.warns(FloatingNodesWarning):
        res = sc.run()
    assert len(res.warnings) == 2 and all(w.startswith("floating.toml: ") for w in res.warnings)
    # closed forms: the lonely node keeps its initial temperature; the pair b, c stores all of
    # the heater's 2 W (mean temperature rising at P / (C_b + C_c)) and relaxes between
    # themselves with tau = R C_b C_c / (C_b + C_c) (closed form derived here)
    T = res.temperatures
    assert np.allclose(T["lonely"], 5.0)
    t = res.time
    mean = (2000 * T["b"] + 2000 * T["c"]) / 4000
    assert np.allclose(mean, 25.0 + 2.0 * t / 4000, atol=1e-9)
    tau = 2.0 * 2000 * 2000 / 4000
    # difference: d(Tb - Tc)/dt = P/C_b - (Tb - Tc)/tau -> steady P tau / C_b
    diff = 2.0 * tau / 2000 + (10.0 - 2.0 * tau / 2000) * np.exp(-t / tau)
    assert np.allclose(T["b"] - T["c"], diff, atol=1e-9)
    # kept in a result file
    out = tmp_path / "run.h5"
    res.save(out)
    assert rcsim.Result.load(out).warnings == res.warnings


def test_a_grounded_network_warns_nothing():
    net = rcsim.Network()
    net.add_node("a", capacity=1000.0, initial=10.0)
    net.add_boundary("out", temperature=25.0)
    net.add_link("a", "out", resistance=1.0)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        res = net.simulate("1 h", "10 min")
    assert res.warnings == []


def test_python_api_warns_without_a_file_name():
    net = rcsim.Network()
    net.add_node("a", capacity=1000.0, initial=10.0)
    net.add_node("b", capacity=1000.0, initial=10.0)
    net.add_boundary("out", temperature=25.0)
    net.add_link("a", "out", resistance=1.0)
    with pytest.warns(FloatingNodesWarning, match=r"^nodes.b: node 'b' is linked to nothing"):
        res = net.simulate("1 h", "10 min")
    assert res.warnings[0].startswith("nodes.b: ")


# -- item 2: a declared freezing point passed without latent heat -------------------------------
def _payload(T0, ambient, **node):
    net = rcsim.Network()
    net.add_node("payload", capacity=8400.0, initial=T0, **node)
    net.add_boundary("dock", temperature=ambient)
    net.add_link("payload", "dock", resistance=2.5)
    return net


def test_a_payload_passing_its_freezing_point_warns_once_with_the_time():
    # Newton's law of cooling (closed form): T = Ta + (T0 - Ta) exp(-t / RC) reaches 0 degC at
    # t = RC ln((T0 - Ta) / (0 - Ta)) = 21000 s * ln(11/6) = 3.536 h
    net = _payload(5.0, -6.0, freezes_at="0 degC")
    t_cross = 2.5 * 8400.0 * math.log(11.0 / 6.0)
    with pytest.warns(rcsim.run_warnings.FreezingWarning) as record:
        res = net.simulate("12 h", "5 min")
    assert len(record) == 1 and len(res.warnings) == 1
    text = res.warnings[0]
    assert text.startswith("nodes.payload: 'payload' falls below its freezing point 0 degC")
    # reported to 4 figures in hours; linear between 5-minute samples (error ~ 0.01 s here)
    assert f"t = {t_cross / 3600:.4g} h" in text
    # the lowest temperature, at the end: -6 + 11 exp(-12 h / RC) = -4.59 degC (same closed form)
    lowest = -6.0 + 11.0 * math.exp(-12 * 3600 / 21000.0)
    assert f"(lowest {lowest:.3g} degC) with no latent heat" in text


def _sine_payload(freezes_at):
    """A node of tau = RC = 1 h (1 K/W, 3.6 kJ/K) under 3 + 4 sin(w t) degC, w = 2 pi / 24 h,
    started in its periodic regime."""
    net = rcsim.Network()
    net.add_node("payload", capacity=3600.0, initial=3.0, freezes_at=freezes_at)
    net.add_boundary("dock", temperature=rcsim.Sine(mean=3.0, amplitude=4.0, period=86400.0))
    net.add_link("payload", "dock", resistance=1.0)
    return net


@pytest.mark.parametrize("solver", ["exact", "stiff"])
def test_a_freezing_point_passed_between_output_samples_is_found(solver):
    # first-order response to a sine (closed form): in the periodic regime
    # T = 3 + A' sin(w t - phi), A' = 4 / sqrt(1 + (w tau)^2), phi = atan(w tau); its lowest,
    # 3 - A' = -0.870 degC, falls at 18.98 h, between the 6-hourly samples (at 18 h it is
    # 3 - A' cos(phi) = -0.744 degC). A freezing point at -0.8 degC is passed and left again
    # between two samples: the samples alone never see it.
    w, tau = 2 * math.pi / 86400.0, 3600.0
    amp, phi = 4.0 / math.sqrt(1.0 + (w * tau) ** 2), math.atan(w * tau)
    lowest = 3.0 - amp
    first = (math.pi + math.asin((3.0 + 0.8) / amp) + phi) / w     # first t with T = -0.8
    res = _sine_payload("-0.8 degC").simulate("24 h", "6 h", initial="periodic", solver=solver,
                                              rtol=1e-9, atol=1e-9)
    assert res.temperatures["payload"].min() > -0.8                # every sample above
    assert len(res.warnings) == 1, res.warnings
    text = res.warnings[0]
    assert f"falls below its freezing point -0.8 degC at t = {first / 3600:.4g} h" in text
    assert f"(lowest {lowest:.3g} degC)" in text and "output samples" not in text
    # a point the solution never reaches between the samples: nothing
    quiet = _sine_payload("-0.9 degC").simulate("24 h", "6 h", initial="periodic",
                                                solver=solver)
    assert quiet.warnings == []


def test_a_limit_on_another_node_does_not_disturb_the_freezing_check():
    # the payload of the sine case above with a second node carrying a limit: the limit's
    # hold time and the freezing crossing are each what they are alone. The second node (1 K/W
    # to the same dock, 36 kJ/K: tau 10 h) starts at 3 degC in the periodic regime too.
    w, tau = 2 * math.pi / 86400.0, 3600.0
    amp, phi = 4.0 / math.sqrt(1.0 + (w * tau) ** 2), math.atan(w * tau)
    first = (math.pi + math.asin((3.0 + 0.8) / amp) + phi) / w
    net = _sine_payload("-0.8 degC")
    net.add_node("crate", capacity=36000.0, initial=3.0)
    net.add_link("crate", "dock", resistance=1.0)
    net.add_limit("crate", min=2.5)
    res = net.simulate("24 h", "6 h", initial="periodic")
    assert len(res.warnings) == 1
    assert f"at t = {first / 3600:.4g} h" in res.warnings[0]
    assert len(res.limits) == 1 and res.limits["node"].iloc[0] == "crate"


def test_without_the_solution_between_samples_the_warning_names_the_step():
    # a watcher fed samples alone (a path giving no solution between them): the crossing is
    # linear between the samples and the warning says the check was at the samples, every 6 h
    from rcsim.run_warnings import FreezingWatch

    watch = FreezingWatch(rcsim.Network(), [0], ["payload"], [0.0])
    t = np.arange(5) * 6 * 3600.0
    watch.observe(t[:1], np.array([[5.0]]), np.zeros((1, 0)))
    watch.observe(t[1:], np.array([[2.0], [-1.0], [1.0], [3.0]]), np.zeros((4, 0)))
    (text,) = watch.warnings()
    # linear between 2 degC at 6 h and -1 degC at 12 h: 0 degC at 10 h
    assert "falls below its freezing point 0 degC at t = 10 h (lowest -1 degC)" in text
    assert text.endswith("checked at the output samples only, every 6 h: a shorter step may "
                         "find it earlier")


def test_thawing_warns_too_and_nothing_warns_when_the_point_is_not_passed():
    net = _payload(-18.0, 25.0, freezes_at=-0.5)         # a frozen payload in a warm room
    with pytest.warns(rcsim.run_warnings.FreezingWarning, match="rises above its freezing "
                      r"point -0.5 degC .*highest .* degC\) with no latent heat"):
        net.simulate("24 h", "10 min")
    for net in (_payload(5.0, 2.0, freezes_at="0 degC"),        # stays above
                _payload(-18.0, -20.0, freezes_at="0 degC")):   # stays frozen
        with warnings.catch_warnings():
            warnings.simplefilter("error")
            assert net.simulate("24 h", "10 min").warnings == []


def test_a_node_with_a_phase_change_needs_no_warning():
    net = rcsim.Network()
    net.add_node("payload", mass=2.0, initial=5.0, freezes_at="0 degC", phase_change={
        "latent_heat": "333.6 kJ/kg", "melting": "0 degC",
        "specific_heat_solid": "2.05 kJ/(kg*K)", "specific_heat_liquid": "4.18 kJ/(kg*K)"})
    net.add_boundary("dock", temperature=-20.0)
    net.add_link("payload", "dock", resistance=0.5)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        res = net.simulate("3 d", "10 min")
    assert res.warnings == [] and res.liquid_fraction["payload"].iloc[-1] == 0.0


def test_freezes_at_is_a_scenario_key_and_the_winter_shipper_warns(tmp_path, cli):
    from conftest import SCENARIOS

    sc = rcsim.load(f"{SCENARIOS}/cold-box-winter.toml")
    assert sc.network.nodes["payload"].freezes_at == 0.0
    assert sc.si_value("nodes.payload.freezes_at") == 0.0
    # the wrong kind of quantity is refused naming the key
    bad = _write(tmp_path, "bad.toml", LONELY.replace('initial = "5 degC"',
                                                      'initial = "5 degC"\nfreezes_at = "0 K/W"'))
    result = cli("check", bad)
    assert result.exit_code == 2 and "bad.toml: nodes.lonely.freezes_at: expected" in result.output


def test_the_winter_shipper_warns_that_its_payload_freezes(cli):
    # README: the winter shipper's payload falls below 0 degC at 4.6 h, and the run says so
    from conftest import SCENARIOS

    result = cli("run", f"{SCENARIOS}/cold-box-winter.toml")
    assert result.exit_code == 0, result.output
    assert ("warning: cold-box-winter.toml: nodes.payload: 'payload' falls below its freezing "
            "point 0 degC at t = 4.6 h") in result.output
    assert result.output.count("falls below its freezing point") == 1     # once, not twice


# -- item 5 (issue 18): convection correlations outside the ranges of their sources -------------
def _ra_by_hand(ts, tf, length):
    # Ra = g beta dT L^3 / (nu alpha) = g beta dT L^3 Pr / nu^2, air from Incropera Table A.4
    # at the film temperature (tests/air_table.py; beta = 1/T of an ideal gas)
    from air_table import air

    p = air(0.5 * (ts + tf))
    return 9.80665 * p["beta"] * abs(ts - tf) * length ** 3 * p["Pr"] / p["nu"] ** 2


def test_rayleigh_and_reynolds_numbers_against_a_textbook_air_table():
    from air_table import air

    from rcsim.correlations import dimensionless_numbers

    n = dimensionless_numbers("vertical-plate", 40.0, 20.0, {"height": 0.3})
    # rcsim's Sutherland air has nu 1.4 % below Table A.4 here (test_nonlinear compares the
    # properties, about 1 %); Ra goes as 1/nu^2, so within 3 %, Re as 1/nu, within 1.5 %
    assert float(n["Ra"]) == pytest.approx(_ra_by_hand(40.0, 20.0, 0.3), rel=0.03)
    n = dimensionless_numbers("flat-plate-forced", 40.0, 20.0, {"length": 0.5, "velocity": 2.0})
    assert float(n["Re"]) == pytest.approx(2.0 * 0.5 / air(30.0)["nu"], rel=0.015)


def test_outside_validity_flags_the_samples_past_a_published_bound():
    from rcsim.correlations import outside_validity

    # a hot plate facing up: McAdams as in Incropera eqs. 9.30-9.31 holds for 1e4 <= Ra <= 1e11.
    # L = 0.05 m: Ra of 0.5 K is ~6e3 (below), of 30 K ~3e5 (inside) by the textbook table
    assert _ra_by_hand(20.5, 20.0, 0.05) < 0.9e4 and 2e4 < _ra_by_hand(50.0, 20.0, 0.05) < 1e10
    found = outside_validity("horizontal-plate-up", np.array([20.5, 50.0, 20.0]), 20.0,
                             {"length": 0.05})
    flagged = {(r.number, r.applies): m.tolist() for r, _, m in found}
    assert flagged[("Ra", "lifts")] == [True, False, False]     # equal temperatures: never
    # the same plate cold facing up has buoyancy pressing on it: eq. 9.32 (1e5..1e10)
    found = outside_validity("horizontal-plate-up", np.array([19.5, -10.0]), 20.0,
                             {"length": 0.05})
    assert {(r.number, r.applies): m.tolist() for r, _, m in found}[("Ra", "sinks")] == \
        [True, _ra_by_hand(-10.0, 20.0, 0.05) < 0.95e5]
    # laminar forced flow past the transition (Re_c = 5e5, Incropera eq. 7.30): v L / nu ~ 1.3e6
    found = outside_validity("flat-plate-forced", 30.0, 20.0,
                             {"length": 2.0, "velocity": 10.0, "regime": "laminar"})
    assert [(r.number, bool(m)) for r, _, m in found] == [("Re", True), ("Pr", False)]


def _plate_network(dT_source, ambient=20.0, correlation="horizontal-plate-up", **dims):
    net = rcsim.Network()
    net.add_node("lid", capacity=500.0, initial=ambient)
    net.add_boundary("air", temperature=ambient)
    net.add_source("lid", power=dT_source)
    part = {"correlation": correlation, "area": "0.01 m^2", **dims}
    net.add_link("lid", "air", name="film", parts=[{"convection": part}])
    return net


def test_a_film_below_its_range_warns_once_per_run(tmp_path, cli):
    # a 10 x 10 cm lid (L = A/P = 0.025 m) warmed by 2 mW sits ~0.05 K above the air: Ra ~ 10,
    # far below the 1e4 of the source, all run long
    net = _plate_network(0.002, length="0.025 m")
    with pytest.warns(rcsim.run_warnings.CorrelationRangeWarning) as record:
        res = net.simulate("6 h", "1 min")
    assert len(record) == 1 and len(res.warnings) == 1
    text = res.warnings[0]
    assert text.startswith("links.film.parts[0].convection: the horizontal-plate-up correlation "
                           "left its validity range: Ra down to ")
    assert "against 10000..1e+11" in text and "Incropera et al. [1] eqs. 9.30-9.31" in text
    # the first sample has the lid at the air temperature (not counted): the rest are outside
    assert "at 99.7 % of the output samples (carrying 100 % of its heat)" in text
    # in a scenario: the file and the part named, in the warnings and the run summary
    path = _write(tmp_path, "lid.toml", """
[simulation]
duration = "6 h"
step = "1 min"
[nodes.lid]
capacity = 500
initial = "20 degC"
[boundaries.air]
temperature = "20 degC"
[sources.heat]
node = "lid"
power = "2 mW"
[links.film]
between = ["lid", "air"]
parts = [{ convection = { correlation = "horizontal-plate-up", length = "0.025 m", area = "0.01 m^2" } }]
""")
    result = cli("run", path)
    assert result.exit_code == 0, result.output
    assert result.output.count("warning: lid.toml: links.film.parts[0].convection: the "
                               "horizontal-plate-up correlation left its validity range") == 1
    assert result.output.count("horizontal-plate-up correlation left its validity range") == 1
    assert "  1 warning(s): see the lines starting with 'warning:'" in result.output


def test_a_surface_passing_the_air_temperature_is_not_flagged():
    # a lid under a daily swing of the air passes the air temperature twice a day: Ra -> 0 there,
    # below the lower bounds of its source, but the film carries almost no heat then (the rule:
    # samples outside must carry 1 % of the film's heat)
    from rcsim.correlations import outside_validity

    net = rcsim.Network()
    net.add_node("lid", capacity=20e3, initial=20.0)
    net.add_boundary("air", temperature=rcsim.Sine(mean=20, amplitude=8, period="24 h"))
    net.add_link("lid", "air", parts=[{"convection": {"correlation": "horizontal-plate-up",
                                                      "length": "0.2 m", "area": "0.64 m^2"}}])
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        res = net.simulate("48 h", "1 min")
    assert res.warnings == []
    # ... though some samples are outside (the faces are the lid and the air themselves)
    found = outside_validity("horizontal-plate-up", res.temperatures["lid"].to_numpy(),
                             res.boundary_temperatures["air"].to_numpy(), {"length": 0.2})
    assert sum(int(m.sum()) for _, _, m in found) >= 4


def test_a_report_carries_the_run_warnings_without_being_told():
    net = _payload(5.0, -6.0, freezes_at="0 degC")
    with pytest.warns(rcsim.run_warnings.FreezingWarning):
        res = net.simulate("12 h", "5 min")
    page = res.report(scenario=net)          # the page's HTML text
    assert "falls below its freezing point 0 degC" in page
