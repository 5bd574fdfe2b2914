"""Steady state against ISO 6946 and a hand-calculated series-parallel wall."""

import numpy as np
import pytest

import rcsim
from rcsim.errors import NetworkError

# ISO 6946:2017, Table 7: surface resistances for horizontal heat flow
RSI, RSE = 0.13, 0.04  # m2 K / W

# An invented four-layer external wall: (thickness m, conductivity W/(m K))
LAYERS = [(0.0125, 0.21), (0.10, 0.035), (0.20, 1.35), (0.02, 0.80)]


def _iso6946_wall(area=10.0):
    net = rcsim.Network()
    net.add_boundary("inside", temperature="20 degC")
    net.add_boundary("outside", temperature="0 degC")
    net.add_node("surf_in", capacity=0)
    net.add_node("surf_out", capacity=0)
    net.add_link("inside", "surf_in", parts=[{"convection": {"h": 1 / RSI, "area": area}}],
                 name="film_in")
    net.add_link("surf_in", "surf_out", name="layers", parts=[
        {"conduction": {"k": k, "thickness": d, "area": area}} for d, k in LAYERS])
    net.add_link("surf_out", "outside", parts=[{"convection": {"h": 1 / RSE, "area": area}}],
                 name="film_out")
    return net


def test_iso6946_u_value_and_surface_temperatures():
    # ISO 6946 clause 6.7: R_T = Rsi + sum(d/lambda) + Rse; U = 1/R_T
    r_total = RSI + sum(d / k for d, k in LAYERS) + RSE
    u = 1.0 / r_total
    area = 10.0
    net = _iso6946_wall(area)
    res = net.steady()
    q = u * area * (20.0 - 0.0)
    # surface temperatures from the flux through each surface resistance
    assert res.temperatures["surf_in"] == pytest.approx(20.0 - q / area * RSI, abs=1e-10)
    assert res.temperatures["surf_out"] == pytest.approx(0.0 + q / area * RSE, abs=1e-10)
    assert res.heat_flows["layers"] == pytest.approx(q, rel=1e-12)
    r_eq = net.equivalent_resistance("inside", "outside")
    assert 1.0 / (r_eq * area) == pytest.approx(u, rel=1e-12)
    # U-value of a single link holding the whole construction
    net2 = rcsim.Network()
    net2.add_boundary("i", temperature=20)
    net2.add_node("x", capacity=1.0, initial=10)
    net2.add_link("x", "i", name="wall", parts=(
        [{"convection": {"h": 1 / RSI, "area": 1.0}}]
        + [{"conduction": {"k": k, "thickness": d, "area": 1.0}} for d, k in LAYERS]
        + [{"convection": {"h": 1 / RSE, "area": 1.0}}]))
    assert net2.links["wall"].u_value == pytest.approx(u, rel=1e-12)


def test_composite_series_parallel_wall():
    # An invented wall of 1 m2: layer A over the full area, then B (60 % of the area) beside C
    # (40 %), between an inside film h=8 and an outside film h=25. Hand calculation:
    Ti, To = 20.0, -5.0
    R_fi = 1 / (8 * 1.0)
    R_A = 0.10 / (1.0 * 1.0)
    R_B = 0.05 / (0.05 * 0.6)
    R_C = 0.05 / (0.5 * 0.4)
    R_fo = 1 / (25 * 1.0)
    R_BC = 1 / (1 / R_B + 1 / R_C)
    R_tot = R_fi + R_A + R_BC + R_fo
    q = (Ti - To) / R_tot
    T_si = Ti - q * R_fi
    T_AB = T_si - q * R_A
    T_so = To + q * R_fo
    q_B = (T_AB - T_so) / R_B
    q_C = (T_AB - T_so) / R_C

    text = f"""
title = "composite wall"
[nodes.surf_in]
capacity = 0
[nodes.mid]
capacity = 0
[nodes.surf_out]
capacity = 0
[boundaries.room]
temperature = "{Ti} degC"
[boundaries.air]
temperature = "{To} degC"
[links.film_in]
between = ["room", "surf_in"]
parts = [{{ convection = {{ h = "8 W/(m^2*K)", area = "1 m^2" }} }}]
[links.layer_a]
between = ["surf_in", "mid"]
parts = [{{ conduction = {{ k = "1.0 W/(m*K)", thickness = "100 mm", area = "1 m^2" }} }}]
[links.layer_b]
between = ["mid", "surf_out"]
parts = [{{ conduction = {{ k = "0.05 W/(m*K)", thickness = "50 mm", area = "0.6 m^2" }} }}]
[links.layer_c]
between = ["mid", "surf_out"]
parts = [{{ conduction = {{ k = "0.5 W/(m*K)", thickness = "50 mm", area = "0.4 m^2" }} }}]
[links.film_out]
between = ["surf_out", "air"]
parts = [{{ convection = {{ h = "25 W/(m^2*K)", area = "1 m^2" }} }}]
"""
    sc = rcsim.loads(text, name="composite.toml")
    res = sc.network.steady()
    assert res.temperatures["surf_in"] == pytest.approx(T_si, abs=1e-10)
    assert res.temperatures["mid"] == pytest.approx(T_AB, abs=1e-10)
    assert res.temperatures["surf_out"] == pytest.approx(T_so, abs=1e-10)
    assert res.heat_flows["film_in"] == pytest.approx(q, rel=1e-12)  # from room to surf_in
    assert res.heat_flows["layer_b"] == pytest.approx(q_B, rel=1e-12)
    assert res.heat_flows["layer_c"] == pytest.approx(q_C, rel=1e-12)
    assert sc.network.equivalent_resistance("room", "air") == pytest.approx(R_tot, rel=1e-12)


def test_sources_and_multiple_boundaries():
    # two nodes, a 10 W source; superposition by hand: node a between boundaries at 0 and 10 degC
    net = rcsim.Network()
    net.add_node("a", capacity=1.0)
    net.add_boundary("b0", temperature=0.0)
    net.add_boundary("b1", temperature=10.0)
    net.add_link("a", "b0", resistance=1.0)
    net.add_link("a", "b1", resistance=3.0)
    net.add_source("a", power=10.0)
    # (T - 0)/1 + (T - 10)/3 = 10  ->  T = (10 + 10/3) / (1 + 1/3) = 10
    assert net.steady().temperatures["a"] == pytest.approx(10.0, abs=1e-12)


def test_floating_group_is_an_error():
    net = rcsim.Network()
    net.add_node("a", capacity=1.0, initial=0)
    net.add_node("b", capacity=1.0, initial=0)
    net.add_boundary("o", temperature=0.0)
    net.add_node("c", capacity=1.0, initial=0)
    net.add_link("a", "b", resistance=1.0)
    net.add_link("c", "o", resistance=1.0)
    with pytest.raises(NetworkError, match="nodes 'a', 'b' have no path to any boundary"):
        net.steady()


def test_one_floating_node_is_named_in_the_singular():
    net = rcsim.Network()
    net.add_boundary("o", temperature=0.0)
    net.add_node("a", capacity=1.0, initial=0)
    net.add_node("c", capacity=1.0, initial=0)
    net.add_link("c", "o", resistance=1.0)
    with pytest.raises(NetworkError, match="node 'a' has no path to any boundary"):
        net.steady()


def test_massive_layer_does_not_change_steady_state():
    # a sliced layer stores heat but its steady resistance is L/(kA) all the same
    def build(slices):
        net = rcsim.Network()
        net.add_boundary("in", temperature=20)
        net.add_boundary("out", temperature=0)
        net.add_node("n", capacity=100.0)
        parts = [{"conduction": {"material": "concrete-medium", "thickness": "0.2 m",
                                 "area": "1 m^2", **({"slices": slices} if slices else {})}}]
        net.add_link("in", "n", parts=parts, name="wall")
        net.add_link("n", "out", resistance=0.5)
        return net

    a = build(None).steady()
    b = build(8).steady()
    assert b.temperatures["n"] == pytest.approx(a.temperatures["n"], abs=1e-10)
    # internal nodes lie on the straight steady profile through the layer
    r_slice = 0.2 / (1.35 * 1.0) / 8
    q = a.heat_flows["wall"]
    expected = [20.0 - q * r_slice * (i + 0.5) for i in range(8)]
    got = [b.temperatures[f"wall.{i + 1}"] for i in range(8)]
    np.testing.assert_allclose(got, expected, atol=1e-10)
