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
