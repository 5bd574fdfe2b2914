"""The bundled scenarios: each runs through the CLI, and its key figure is checked against an
independent estimate made here."""

import glob
import math
import os

import numpy as np
import pytest
from scipy.constants import Stefan_Boltzmann as SIGMA
from scipy.optimize import brentq

import rcsim
from conftest import SCENARIOS

K0 = 273.15
ALL = sorted(glob.glob(os.path.join(SCENARIOS, "*.toml")))


def path(name):
    return os.path.join(SCENARIOS, name)


@pytest.mark.parametrize("scenario", ALL, ids=[os.path.basename(p) for p in ALL])
def test_every_scenario_runs_through_the_cli(cli, scenario, tmp_path):
    r = cli("run", scenario, "-o", tmp_path / "r.h5", "--csv", tmp_path / "r.csv")
    assert r.exit_code == 0, r.output
    assert "caution" in r.output and "balance error" in r.output
    assert (tmp_path / "r.h5").exists() and (tmp_path / "r.csv").exists()


# -- the room: a day of outdoor swing -----------------------------------------------------------
def test_room_daily_mean_is_the_steady_state_at_mean_inputs():
    # for a linear network the mean of the periodic regime is the steady state under the mean
    # inputs: outdoor 18 degC and gains (30 W x 14 h + 300 W x 10 h)/24 h = 142.5 W
    sc = rcsim.load(path("room-day.toml"))
    res = sc.run()
    means = res.periodic_response()["mean [degC]"]
    text = sc.text.replace(
        'temperature = { sine = { mean = "18 degC", amplitude = "6 K", period = "24 h", peak = "15 h" } }',
        'temperature = "18 degC"').replace(
        'power = { steps = { at = ["0 h", "8 h", "18 h"], values = ["30 W", "300 W", "30 W"], repeat = "24 h" } }',
        'power = "142.5 W"')
    assert text != sc.text
    steady = rcsim.loads(text).network.steady()
    for node in ("room_air", "furniture", "wall_surface"):
        assert means[node] == pytest.approx(steady.temperatures[node], abs=1e-6)


def test_room_csv_daily_mean_is_the_steady_state_at_the_mean_of_the_day():
    sc = rcsim.load(path("room-day-csv.toml"))
    res = sc.run()
    import pandas as pd

    day = pd.read_csv(path("outdoor-day.csv"))
    # mean of the piecewise-linear hourly day: trapezoid over 24 h (exact for straight segments)
    mean_out = float(np.trapezoid(day["t_out"], day["hour"]) / 24.0)
    text = sc.text.replace(
        'temperature = { csv = { file = "outdoor-day.csv", column = "t_out", time = "hour", time_unit = "h", repeat = "24 h" } }',
        f'temperature = "{mean_out} degC"').replace(
        'power = { steps = { at = ["0 h", "8 h", "18 h"], values = ["30 W", "300 W", "30 W"], repeat = "24 h" } }',
        'power = "142.5 W"')
    steady = rcsim.loads(text).network.steady()
    means = res.periodic_response()["mean [degC]"]
    assert means["room_air"] == pytest.approx(steady.temperatures["room_air"], abs=1e-6)


def _layer_matrix(k, rho, cp, d, omega):
    # periodic conduction through a homogeneous layer (the complex-amplitude "transfer matrix",
    # as in ISO 13786): [T, q] at the inner face = M [T, q] at the outer face, q per area
    if rho is None:  # no storage: a pure resistance
        return np.array([[1, d / k], [0, 1]], dtype=complex)
    kk = np.sqrt(1j * omega * rho * cp / k)
    return np.array([[np.cosh(kk * d), np.sinh(kk * d) / (k * kk)],
                     [k * kk * np.sinh(kk * d), np.cosh(kk * d)]])


def test_room_wall_decrement_and_lag_against_the_complex_amplitude_solution():
    # the same room solved at the daily frequency with the wall as continuous layers (no
    # slices); rcsim's sliced wall must give the inside surface the same amplitude and phase
    P = 86400.0
    w = 2 * math.pi / P
    A_w = 8.8
    M = np.eye(2, dtype=complex)
    for layer in [(1.35, 2000.0, 1000.0, 0.20),      # concrete-medium (material table)
                  (0.035, 30.0, 1030.0, 0.12),       # mineral-wool (material table)
                  (0.8, None, None, 0.010),          # render, no storage in the scenario
                  (1.0, None, None, 1 / 25.0)]:      # outside film, Rse = 0.04
        M = M @ _layer_matrix(layer[0], layer[1], layer[2], layer[3], w)
    (a, b), (c, d) = M
    # flux into the wall at its inside face per area, with outdoor amplitude To:
    # q_s = (d Ts - To)/b (det M = 1)
    u_out = 6.0 * np.exp(-1j * w * 15 * 3600)        # outdoor: 18 + 6 cos(w (t - 15 h))
    # first harmonic of the gains (steps 30 / 300 / 30 W): (2/P) sum g (e^{-iwa} - e^{-iwb})/(iw)
    g_hat = 2 / P * sum(g * (np.exp(-1j * w * lo) - np.exp(-1j * w * hi)) / (1j * w)
                        for g, lo, hi in ((30, 0, 8 * 3600), (300, 8 * 3600, 18 * 3600),
                                          (30, 18 * 3600, P)))
    C_air = 32.4 * 1.1614 * 1007.0                    # air row of the material table
    C_f = 400e3
    h_i, G_win, G_vent, G_f = 7.69 * A_w, 2.6, 21.7, 3.0 * 20
    # unknowns: air, furniture, surface (massless)
    A = np.array([
        [1j * w * C_air + h_i + G_win + G_vent + G_f, -G_f, -h_i],
        [-G_f, 1j * w * C_f + G_f, 0],
        [-h_i, 0, h_i + A_w * d / b],
    ])
    rhs = np.array([(G_win + G_vent) * u_out + g_hat, 0, A_w * u_out / b])
    t_air, t_f, t_s = np.linalg.solve(A, rhs)
    res = rcsim.load(path("room-day.toml")).run()
    pr = res.periodic_response(reference="outdoor")
    dec = abs(t_s) / abs(u_out)
    lag = ((np.angle(u_out) - np.angle(t_s)) / w) % P
    # the sliced wall (10 + 4 slices) against the continuous layers: 0.5 % and 2 min
    assert pr.loc["wall_surface", "decrement [-]"] == pytest.approx(dec, rel=0.005)
    assert pr.loc["wall_surface", "lag [s]"] == pytest.approx(lag, abs=120.0)
    assert pr.loc["room_air", "decrement [-]"] == pytest.approx(abs(t_air) / abs(u_out), rel=0.005)


# -- the cold box -------------------------------------------------------------------------------
def test_cold_box_hold_time_against_an_energy_budget():
    # sensible + latent heat the contents take up until the payload reaches 8 degC, over the mean
    # heat leak through the foam and the outside films (values from cold-box.toml and the
    # gel-pack row of the material table):
    m, cs, cl, L, lo = 2.0, 2000.0, 3600.0, 300e3, -1.5
    packs = 2 * (m * cs * (lo - (-3.0)) + m * (cs * (0.0 - lo) + L) + m * cl * (8.0 - 0.0))
    rest = (6 * 3600.0 + 2500.0 + 100.0) * (8.0 - 5.0)  # payload, liner, air from 5 to 8 degC
    energy = packs + rest
    r_foam = 0.05 / (0.025 * 1.05) + 0.004 / (0.065 * 1.2)
    # outside: natural convection ~2.5 W/(m2 K) and linearised radiation ~6 W/(m2 K) over 1.3 m2
    # (common practice for a few kelvin of difference near 25 degC)
    r_out = 1 / ((2.5 + 6.0) * 1.3)
    # the liner averages between 5 and 10 degC while the packs melt: that range is the spread;
    # the daily swing averages out over whole days (+-7 K around 25 degC)
    leak_hi = (25.0 - 5.0) / (r_foam + r_out)
    leak_lo = (25.0 - 10.0) / (r_foam + r_out)
    t_lo, t_hi = energy / leak_hi, energy / leak_lo
    res = rcsim.load(path("cold-box.toml")).run()
    hold = res.limits.set_index("kind").loc["max", "hold_time [s]"]
    assert t_lo < hold < t_hi, (t_lo / 3600, hold / 3600, t_hi / 3600)
    # the packs are liquid by then, and both melted
    assert res.liquid_fraction.max().min() == pytest.approx(1.0)


def test_cold_box_edges_hold_time_against_an_energy_budget():
    # the shipper as a box: the foam's conductance by hand from the shape-factor table (Incropera
    # Table 4.1: walls A/L, edges 0.54 D, corners 0.15 L) for 442 x 342 x 342 mm inside, 50 mm
    k, L, (a, b, c) = 0.025, 0.05, (0.442, 0.342, 0.342)
    walls = 2 * (a * b + b * c + a * c) / L
    extra = 0.54 * 4 * (a + b + c) + 8 * 0.15 * L
    r_walls = 1 / (k * (walls + extra)) + 0.004 / (0.065 * 1.2)
    # outside: convection ~2.5 and radiation ~6 W/(m2 K) over 1.3 m2 (common practice), the
    # radiation seeing the bay (mean 25 degC) 0.8 and the roof (mean 30 degC) 0.2
    r_out = 1 / ((2.5 + 6.0) * 1.3)
    t_out = (2.5 * 25.0 + 6.0 * (0.8 * 25.0 + 0.2 * 30.0)) / 8.5
    # heat the contents take up until the payload reaches 8 degC (gel-pack row of the table)
    m, cs, cl, latent, lo = 4.0, 2000.0, 3600.0, 300e3, -1.5
    packs = m * cs * (lo + 3.0) + m * (cs * (0.0 - lo) + latent) + m * cl * 8.0
    energy = packs + (6 * 3600.0 + 2500.0 + 50.0) * (8.0 - 5.0)
    # the liner sits between the melting packs (0 degC) and the payload (5 degC): the spread
    t_lo = energy / ((t_out - 0.0) / (r_walls + r_out))
    t_hi = energy / ((t_out - 5.0) / (r_walls + r_out))
    sc = rcsim.load(path("cold-box-edges.toml"))
    res = sc.run()
    lim = res.limits.set_index("kind")
    hold = lim.loc["max", "hold_time [s]"]
    assert t_lo < hold < t_hi, (t_lo / 3600, hold / 3600, t_hi / 3600)
    assert math.isnan(lim.loc["min", "hold_time [s]"])      # the packs do not freeze it
    assert res.liquid_fraction["packs"].iloc[-1] == pytest.approx(1.0)
    box = sc.network.links["foam"].parts[0].box
    assert box.edge_corner_ratio == pytest.approx(extra / walls, rel=1e-12)


def test_winter_cold_box_freezes_the_payload_first():
    # frozen packs on a cold dock: the lower limit is the risk; a lumped first estimate of the
    # time to 2 degC: the payload, liner and air (24.2 kJ/K) lose heat to the packs (two paths of
    # 0.48 + 0.25 W/K each, packs near -2 degC) and to the dock through the walls (~2.05 K/W,
    # -6 degC), from 5 degC: an exponential approach to their weighted mean
    C = 6 * 3600.0 + 2500.0 + 100.0
    G_packs, G_walls = 2 * (0.48 + 0.25), 1 / 2.05
    T_eq = (G_packs * -2.0 + G_walls * -6.0) / (G_packs + G_walls)
    tau = C / (G_packs + G_walls)
    t_est = -tau * math.log((2.0 - T_eq) / (5.0 - T_eq))
    res = rcsim.load(path("cold-box-winter.toml")).run()
    lim = res.limits.set_index("kind")
    assert math.isnan(lim.loc["max", "hold_time [s]"])
    assert 0.5 * t_est < lim.loc["min", "hold_time [s]"] < 2.0 * t_est


# -- the enclosure ------------------------------------------------------------------------------
def test_enclosure_peak_is_near_the_full_load_steady_state():
    ht = pytest.importorskip("ht")
    from rcsim.correlations import air_properties

    room, Q, A = 35.0, 45.0, 0.33

    def loss(ts):  # outside: Churchill-Chu vertical plate (ht) plus grey radiation, eps 0.9
        p = air_properties(0.5 * (ts + room))
        gr = 9.80665 * float(p["beta"]) * (ts - room) * 0.4 ** 3 / float(p["nu"]) ** 2
        h = ht.Nu_vertical_plate_Churchill(float(p["Pr"]), gr) * float(p["k"]) / 0.4
        return h * A * (ts - room) + 0.9 * SIGMA * A * ((ts + K0) ** 4 - (room + K0) ** 4)

    ts = brentq(lambda x: loss(x) - Q, room + 1e-6, room + 100)
    # inside, linear: module, plate, air with the shell held at ts
    r_pad = 0.5e-3 / (1.5 * 30e-4) + 1e-4 / 30e-4
    g_pad, g_mount = 1 / r_pad, 1 / 0.6
    g_ma, g_pa, g_as = 5 * 60e-4, 4 * 0.05, 3 * 0.45
    G = np.array([[g_pad + g_ma, -g_pad, -g_ma],
                  [-g_pad, g_pad + g_mount + g_pa, -g_pa],
                  [-g_ma, -g_pa, g_ma + g_pa + g_as]])
    T = np.linalg.solve(G, [Q, g_mount * ts, g_as * ts])
    res = rcsim.load(path("enclosure.toml")).run()
    peak = res.nodes.set_index("node").loc["module", "max [degC]"]
    # twelve hours at full load are many time constants: the peak is the steady state
    assert peak == pytest.approx(T[0], abs=0.01)
    assert res.limits.iloc[0]["margin [K]"] == pytest.approx(85.0 - T[0], abs=0.01)


# -- the fit ------------------------------------------------------------------------------------
def test_fit_example_recovers_the_values_that_made_the_log(cli):
    # fit-block-log.csv was generated with C = 1794 J/K, R = 1.5 K/W, T0 = 6 degC (see the file)
    import warnings

    sc = rcsim.load(path("fit-block.toml"))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fit = rcsim.fit(sc, path("fit-block-log.csv"),
                        free=["nodes.block.capacity", "links.skin.resistance",
                              "nodes.block.initial"])
    est = fit.estimates
    for key, true in (("nodes.block.capacity", 1794.0), ("links.skin.resistance", 1.5),
                      ("nodes.block.initial", 6.0)):
        assert est.loc[key, "ci_low"] <= true <= est.loc[key, "ci_high"], key
    r = cli("fit", path("fit-block.toml"), path("fit-block-log.csv"), "--free",
            "nodes.block.capacity", "--free", "links.skin.resistance", "--free",
            "nodes.block.initial")
    assert r.exit_code == 0, r.output
