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
    result = cli("run", path)
    assert result.exit_code == 0, result.output
    assert sum(line.startswith("warning: ") for line in result.output.splitlines()) == 2
    assert "  warnings (2)" in result.output          # the summary lists them too


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
