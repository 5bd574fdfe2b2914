"""Resistances of nonlinear links as printed and computed: "nonlinear" where no state is given
(check), the secant value of the steady state where one is (steady, equivalent resistance),
never NaN (issue 15 item 14)."""

import math

import pytest

import rcsim
from rcsim.steady import link_resistances

SIGMA = 5.670374419e-8        # Stefan-Boltzmann constant, W/(m^2 K^4) (CODATA 2018)


def _hot_plate(power=100.0):
    """A 1 kJ/K plate heated by ``power`` in large surroundings at 20 degC, losing heat only by
    radiation (emissivity 0.8, 0.5 m^2)."""
    net = rcsim.Network()
    net.add_node("plate", capacity=1000.0, initial=20.0)
    net.add_boundary("room", temperature=20.0)
    net.add_link("plate", "room", parts=[{"radiation": {"emissivity": 0.8, "area": 0.5}}],
                 name="glow")
    net.add_source("plate", power=power)
    return net


def _plate_closed_form(power=100.0):
    """Steady plate temperature [K] and the secant resistance [K/W]: P = eps sigma A (T^4 -
    T_inf^4) (small body in large surroundings, Incropera 6th ed. eq. 1.7), solved for T."""
    t_inf = 293.15
    t = (t_inf ** 4 + power / (0.8 * SIGMA * 0.5)) ** 0.25
    return t, (t - t_inf) / power


def test_secant_resistance_of_a_radiating_plate():
    net = _hot_plate()
    res = net.steady()
    t, r_sec = _plate_closed_form()
    assert res.temperatures["plate"] + 273.15 == pytest.approx(t, rel=1e-9)
    r = link_resistances(net, res)
    assert r["glow"] == pytest.approx(r_sec, rel=1e-8)
    # the equivalent resistance plate-room is that one link, at the same state
    assert net.equivalent_resistance("plate", "room") == pytest.approx(r_sec, rel=1e-8)


def test_with_no_temperature_difference_the_tangent_is_taken():
    # no power: the plate sits at 20 degC; the secant's limit is the tangent
    # 1 / (4 eps sigma A T^3) (derivative of the law above)
    net = _hot_plate(power=0.0)
    r = link_resistances(net, net.steady())
    assert r["glow"] == pytest.approx(1.0 / (4 * 0.8 * SIGMA * 0.5 * 293.15 ** 3), rel=1e-9)


SCENARIO = """
[nodes.plate]
capacity = "1 kJ/K"
initial = "20 degC"
[boundaries.room]
temperature = "20 degC"
[links.glow]
between = ["plate", "room"]
parts = [{ radiation = { emissivity = 0.8, area = "0.5 m^2" } }]
[sources.lamp]
node = "plate"
power = "100 W"
"""


def test_check_and_steady_print_no_nan(cli, tmp_path):
    path = tmp_path / "plate.toml"
    path.write_text(SCENARIO)
    r = cli("check", path)
    assert r.exit_code == 0, r.output
    assert "nan" not in r.output.lower()
    assert "plate -> room  R nonlinear (depends on the temperatures)" in r.output
    r = cli("steady", path, "--between", "plate", "room")
    assert r.exit_code == 0, r.output
    assert "nan" not in r.output.lower()
    _, r_sec = _plate_closed_form()
    line = next(ln for ln in r.output.splitlines() if ln.strip().startswith("glow"))
    assert f"{r_sec:9.5g}*" in line
    assert "*: nonlinear link (radiation, film correlation): its secant resistance" in r.output
    assert f"equivalent resistance plate - room: {r_sec:.6g} K/W (nonlinear links" in r.output
    assert math.isfinite(r_sec)
