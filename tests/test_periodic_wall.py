"""Periodic thermal characteristics of a layered wall (ISO 13786) against the standard's method
written out here independently: its real-valued layer matrix (clause 6), the matrix product and
the characteristics of clause 7, with plain floats (no complex functions)."""

from __future__ import annotations

import math
import os

import pytest

import rcsim
from conftest import SCENARIOS
from rcsim.periodic_wall import Layer, layers_of_link, periodic_characteristics

DAY = 86400.0


# -- ISO 13786 written out with real numbers: a complex number is a pair (re, im) ----------------
def _mul(a, b):
    return (a[0] * b[0] - a[1] * b[1], a[0] * b[1] + a[1] * b[0])


def _add(a, b):
    return (a[0] + b[0], a[1] + b[1])


def _div(a, b):
    n = b[0] ** 2 + b[1] ** 2
    return ((a[0] * b[0] + a[1] * b[1]) / n, (a[1] * b[0] - a[0] * b[1]) / n)


def _iso_layer(lam, rho, c, d, T):
    """ISO 13786 clause 6: the elements of a homogeneous layer's heat transfer matrix."""
    delta = math.sqrt(lam * T / (math.pi * rho * c))
    xi = d / delta
    ch, sh, co, si = math.cosh(xi), math.sinh(xi), math.cos(xi), math.sin(xi)
    z11 = (ch * co, sh * si)
    z12 = (-delta / (2 * lam) * (sh * co + ch * si), -delta / (2 * lam) * (ch * si - sh * co))
    z21 = (-lam / delta * (sh * co - ch * si), -lam / delta * (sh * co + ch * si))
    return [[z11, z12], [z21, z11]]


def _iso_resistance(r):
    return [[(1.0, 0.0), (-r, 0.0)], [(0.0, 0.0), (1.0, 0.0)]]


def _iso_product(a, b):
    return [[_add(_mul(a[i][0], b[0][j]), _mul(a[i][1], b[1][j])) for j in range(2)]
            for i in range(2)]


def _iso_characteristics(layers, T, rs1, rs2):
    """Clause 7: Y11, Y22, Y12, f, the lag of Y12 and kappa1, kappa2 from Z = Zs2 ZN..Z1 Zs1."""
    z = _iso_resistance(rs1)
    for lam, rho, c, d in layers:
        layer = _iso_layer(lam, rho, c, d, T) if rho else _iso_resistance(d / lam)
        z = _iso_product(layer, z)
    z = _iso_product(_iso_resistance(rs2), z)
    minus_one = (-1.0, 0.0)
    y11 = _div(_mul(minus_one, z[0][0]), z[0][1])
    y22 = _div(_mul(minus_one, z[1][1]), z[0][1])
    y12 = _div(minus_one, z[0][1])
    u = 1 / (rs1 + rs2 + sum(d / lam for lam, _, _, d in layers))
    modulus = math.hypot(*y12)
    lag = (-math.atan2(y12[1], y12[0])) % (2 * math.pi) * T / (2 * math.pi)
    k1 = T / (2 * math.pi) * math.hypot(*_div(_add(z[0][0], minus_one), z[0][1]))
    k2 = T / (2 * math.pi) * math.hypot(*_div(_add(z[1][1], minus_one), z[0][1]))
    return {"Y11": math.hypot(*y11), "Y22": math.hypot(*y22), "Y12": modulus, "f": modulus / u,
            "lag": lag, "kappa1": k1, "kappa2": k2, "U": u}


# the office wall of scenarios/room-day.toml, inside first: concrete 200 mm, mineral wool 120 mm,
# render 10 mm (no heat capacity given in the scenario); ISO 6946 surface resistances
OFFICE = [(1.35, 2000.0, 1000.0, 0.20), (0.035, 30.0, 1030.0, 0.12), (0.8, 0.0, 0.0, 0.010)]


def _ours(layers, T=DAY, rs1=0.13, rs2=0.04):
    return periodic_characteristics([Layer(d, lam, rho or None, c or None)
                                     for lam, rho, c, d in layers], T, rs1, rs2)


@pytest.mark.parametrize("layers, period", [
    (OFFICE, DAY),
    (list(reversed(OFFICE)), DAY),                                # outside first
    ([(0.72, 1920.0, 835.0, 0.1), (0.04, 30.0, 1000.0, 0.1), (0.72, 1920.0, 835.0, 0.1)], DAY),
    ([(1.35, 2000.0, 1000.0, 0.20)], 7 * DAY),
])
def test_the_characteristics_follow_the_standards_method(layers, period):
    expected = _iso_characteristics(layers, period, 0.13, 0.04)
    got = _ours(layers, period)
    assert got.u_value == pytest.approx(expected["U"], rel=1e-12)
    assert abs(got.admittance_1) == pytest.approx(expected["Y11"], rel=1e-10)
    assert abs(got.admittance_2) == pytest.approx(expected["Y22"], rel=1e-10)
    assert abs(got.transmittance) == pytest.approx(expected["Y12"], rel=1e-10)
    assert got.decrement_factor == pytest.approx(expected["f"], rel=1e-10)
    assert got.time_shift == pytest.approx(expected["lag"], abs=1e-6 * period)
    assert got.areal_heat_capacity_1 == pytest.approx(expected["kappa1"], rel=1e-10)
    assert got.areal_heat_capacity_2 == pytest.approx(expected["kappa2"], rel=1e-10)


def test_a_wall_without_heat_capacity_has_no_decrement_and_no_shift():
    # closed form: every matrix is [[1, -R], [0, 1]], so Z12 = -R_total and Y12 = 1/R_total = U,
    # f = 1, no lag, and Z11 = Z22 = 1 make both areal heat capacities zero
    got = _ours([(0.04, 0.0, 0.0, 0.1), (0.8, 0.0, 0.0, 0.02)])
    assert got.decrement_factor == pytest.approx(1.0, rel=1e-12)
    assert got.time_shift == pytest.approx(0.0, abs=1e-9)
    assert got.areal_heat_capacity_1 == pytest.approx(0.0, abs=1e-9)
    assert got.u_value == pytest.approx(1 / (0.13 + 0.04 + 0.1 / 0.04 + 0.02 / 0.8), rel=1e-12)


def test_a_thin_layer_stores_its_own_heat_capacity():
    # a layer much thinner than its penetration depth (xi << 1) between no surface resistances:
    # with x = (1 + i) d / delta, cosh x ~ 1 + x^2/2 and sinh x ~ x, so (Z11 - 1)/Z12 ~
    # -lambda k^2 d / 2 = -i pi rho c d / T and kappa1 = kappa2 ~ rho c d / 2 (derived here; the
    # next terms are of relative order xi^2 ~ 1e-5)
    lam, rho, c, d = 50.0, 7800.0, 450.0, 0.002        # 2 mm of steel: xi ~ 2e-3
    got = _ours([(lam, rho, c, d)], rs1=0.0, rs2=0.0)
    assert got.areal_heat_capacity_1 + got.areal_heat_capacity_2 == \
        pytest.approx(rho * c * d, rel=1e-5)


def test_a_link_of_the_office_scenario_gives_its_layers_and_its_film():
    sc = rcsim.load(os.path.join(SCENARIOS, "room-day.toml"))
    layers, r_first, r_last = layers_of_link(sc.network.links["wall"])
    assert r_first is None and r_last == pytest.approx(1 / 25.0)   # its outside film, h = 25
    assert [(lay.conductivity, lay.thickness) for lay in layers] == \
        [(1.35, 0.2), (0.035, 0.12), (0.8, 0.01)]
    got = periodic_characteristics(layers, DAY, 0.13, r_last)
    expected = _iso_characteristics(OFFICE, DAY, 0.13, 0.04)
    assert got.decrement_factor == pytest.approx(expected["f"], rel=1e-10)
    text = got.report()
    assert "decrement factor" in text and "ISO 13786" in text and "not a node's amplitude" in text


def test_what_is_not_a_plane_construction_is_refused():
    net = rcsim.Network()
    net.add_node("a", capacity=1.0, initial=0.0)
    net.add_boundary("b", temperature=0.0)
    net.add_link("a", "b", name="rad", parts=[{"radiation": {"emissivity": 0.9, "area": 1.0}}])
    with pytest.raises(rcsim.InputError, match="no place in a plane construction"):
        layers_of_link(net.links["rad"])
