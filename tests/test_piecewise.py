"""The piecewise-exact path for nonlinear networks (events, waveform relaxation), checked against
independent integrations and analytic solutions; the same checks on the stiff path."""

from __future__ import annotations

import functools
import math
import os

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

import rcsim
from shipper_by_hand import hand_written_box   # tests/: an independent statement of the shipper
from test_invariants import networks

HERE = os.path.dirname(os.path.abspath(__file__))
SHIPPER = os.path.join(HERE, "..", "scenarios", "cold-box.toml")
SIGMA = 5.670374419e-8   # CODATA 2018
K0 = 273.15


@functools.lru_cache(maxsize=1)
def _shipper_piecewise():
    return rcsim.load(SHIPPER).run(solver="piecewise")


def test_shipper_against_an_independent_integration():
    # the bundled shipper written out by hand (tests/shipper_by_hand.py: Churchill-Chu from the
    # `ht` library, the gel pack's enthalpy curve, radiation inside and out) and integrated by
    # scipy's Radau method at rtol 1e-10: payload temperatures and the 8 degC hold time. This
    # checks the integration, so the hand-written model is given rcsim's air properties (the
    # same equations; the properties themselves are checked against the textbook table in
    # test_nonlinear.py, and the next test takes the table's air)
    from rcsim.correlations import air_properties

    res = _shipper_piecewise()
    assert res.meta["solver"].startswith("piecewise")
    rhs, y0, c_pay = hand_written_box(air=air_properties)
    scale = np.array([c_pay, 4000, 4000, 100, 2500, 1200.0])
    sol = solve_ivp(rhs, (0.0, res.time[-1]), y0, method="Radau", t_eval=res.time, rtol=1e-10,
                    atol=1e-10 * scale, dense_output=True)
    payload = res.temperatures["payload"].to_numpy()
    assert np.abs(payload - sol.y[0] / c_pay).max() < 1e-4
    k = int(np.argmax(sol.y[0] / c_pay > 8.0))
    t_cross = brentq(lambda t: sol.sol(t)[0] / c_pay - 8.0, res.time[k - 1], res.time[k],
                     xtol=1e-6)
    hold = res.limits.set_index("kind").loc["max", "hold_time [s]"]
    assert hold == pytest.approx(t_cross, abs=1.0)
    assert res.energy_balance < 1e-9


def test_shipper_against_the_hand_written_model_with_textbook_air():
    # the same hand-written shipper with air from the textbook table (tests/air_table.py:
    # Incropera et al., 6th ed., Table A.4, interpolated): an independent statement of the
    # physics. The table's kinematic viscosity is ~1.5 % above rcsim's ideal-gas value near
    # 300 K, which changes the outside film by ~0.5 %: the payload moves by ~1.4 mK and the hold
    # time by ~12 s of 47 h (measured); the bounds below are twice that
    res = _shipper_piecewise()
    rhs, y0, c_pay = hand_written_box()
    scale = np.array([c_pay, 4000, 4000, 100, 2500, 1200.0])
    sol = solve_ivp(rhs, (0.0, res.time[-1]), y0, method="Radau", t_eval=res.time, rtol=1e-10,
                    atol=1e-10 * scale, dense_output=True)
    payload = res.temperatures["payload"].to_numpy()
    assert np.abs(payload - sol.y[0] / c_pay).max() < 3e-3
    k = int(np.argmax(sol.y[0] / c_pay > 8.0))
    t_cross = brentq(lambda t: sol.sol(t)[0] / c_pay - 8.0, res.time[k - 1], res.time[k],
                     xtol=1e-6)
    assert res.limits.set_index("kind").loc["max", "hold_time [s]"] == \
        pytest.approx(t_cross, abs=25.0)


def test_auto_takes_the_piecewise_path_and_agrees_with_the_stiff_one():
    # two integrations of one model by different methods; tolerance from the stiff path's rtol
    # (1e-9 on temperatures of tens of degC, global error below 1e-4 K: common practice)
    sc = rcsim.load(SHIPPER)
    auto = sc.run()
    stiff = sc.network.simulate("72 h", "5 min", solver="stiff", rtol=1e-9, atol=1e-9)
    assert auto.meta["solver"].startswith("piecewise")
    for node in ("payload", "pack_a", "shell"):
        assert np.abs(auto.temperatures[node].to_numpy()
                      - stiff.temperatures[node].to_numpy()).max() < 1e-4


def _radiating_body(step):
    C, eps, A, Ts = 2000.0, 0.8, 0.1, 20.0
    net = rcsim.Network()
    net.add_node("body", capacity=C, initial=300.0)
    net.add_boundary("walls", temperature=Ts)
    net.add_link("body", "walls", parts=[{"radiation": {"emissivity": eps, "area": A}}])
    return net, (C, eps, A, Ts)


@pytest.mark.parametrize("solver, step", [("piecewise", "1 min"), ("piecewise", "1 h"),
                                          ("stiff", "1 min")])
def test_radiative_cooling_at_any_output_step(solver, step):
    # C dT/dt = -e sigma A (T^4 - Ts^4): scipy's solve_ivp (DOP853, rtol 1e-12) of the scalar
    # equation. With a 1 h output step the piecewise path must refine its own grid where the
    # fourth power bends: the error stays at the tolerance's level, not the step's
    net, (C, eps, A, Ts) = _radiating_body(step)
    res = net.simulate("6 h", step, solver=solver)

    def f(t, T):
        return -eps * SIGMA * A * ((T + K0) ** 4 - (Ts + K0) ** 4) / C

    ref = solve_ivp(f, (0.0, res.time[-1]), [300.0], method="DOP853", t_eval=res.time,
                    rtol=1e-12, atol=1e-12)
    err = np.abs(res.temperatures["body"].to_numpy() - ref.y[0]).max()
    assert err < 2e-3      # of a 280 K fall: 1e-5 relative (BDF at rtol 1e-6 is near 1e-3 K)
    assert res.energy_balance < 1e-9 if solver == "piecewise" else res.energy_balance < 1e-6


@pytest.mark.parametrize("solver", ["piecewise", "stiff"])
def test_ice_melting_on_both_paths(solver):
    # piecewise analytic solution of a lumped ice mass behind a resistance R in air at Tinf:
    # t1 = R m cs ln((Tinf - Ti)/Tinf) to reach 0 degC, t2 = m L R / Tinf to melt at 0 degC,
    # t3 = R m cl ln(Tinf/(Tinf - 8)) for the water to reach 8 degC. Latent heat of fusion of
    # water 333.6 kJ/kg (common handbook value, from memory; only an input); zero-width melting
    # range (a pure substance). 1 s of ~1e5 s: event location at rtol 1e-8 (common practice)
    m, L, cs, cl, R, Tinf, Ti = 2.0, 333.6e3, 2050.0, 4180.0, 0.5, 25.0, -10.0
    net = rcsim.Network()
    net.add_node("pack", mass=m, initial=Ti, phase_change={
        "latent_heat": "333.6 kJ/kg", "melting": ["0 degC", "0 degC"],
        "specific_heat_solid": "2.05 kJ/(kg*K)", "specific_heat_liquid": "4.18 kJ/(kg*K)"})
    net.add_boundary("air", temperature=Tinf)
    net.add_link("pack", "air", resistance=R)
    net.add_limit("pack", max=8.0)
    res = net.simulate("3 d", "1 min", solver=solver, rtol=1e-8, atol=1e-8)
    t1 = R * m * cs * math.log((Tinf - Ti) / Tinf)
    t2 = m * L * R / Tinf
    t3 = R * m * cl * math.log(Tinf / (Tinf - 8))
    assert res.limits["hold_time [s]"].iloc[0] == pytest.approx(t1 + t2 + t3, abs=1.0)
    t_half = np.interp(0.5, res.liquid_fraction["pack"].to_numpy(), res.time)
    assert t_half == pytest.approx(t1 + 0.5 * t2, abs=1.0)
    assert res.energy_balance < 1e-8


def test_proportional_heater_sensing_another_node():
    # a heater in a tank controlled by the temperature of a pipe fed from it: in the band
    # P = Pmax (sp + band/2 - Tpipe)/band; the steady state solves three linear equations
    # (tank: P + (Ta - Tt)/R1 + (Tp - Tt)/R2 = 0, pipe: (Tt - Tp)/R2 + (Ta - Tp)/R3 = 0)
    R1, R2, R3, Ta, sp, band, Pmax = 0.2, 0.05, 0.1, 10.0, 40.0, 4.0, 2000.0
    net = rcsim.Network()
    net.add_node("tank", capacity=4e5, initial=30.0)
    net.add_node("pipe", capacity=2e4, initial=30.0)
    net.add_boundary("room", temperature=Ta)
    net.add_link("tank", "room", resistance=R1)
    net.add_link("tank", "pipe", resistance=R2)
    net.add_link("pipe", "room", resistance=R3)
    net.add_thermostat("heater", "tank", sensor="pipe", setpoint=sp, band=band, power=Pmax,
                       control="proportional")
    k = Pmax / band
    A = np.array([[-1 / R1 - 1 / R2, 1 / R2 - k], [1 / R2, -1 / R2 - 1 / R3]])
    b = np.array([-Ta / R1 - k * (sp + band / 2), -Ta / R3])
    Tt, Tp = np.linalg.solve(A, b)
    res = net.simulate("5 d", "10 min")
    # 5 d are many time constants of the controlled loop: settled to 0.1 mK (common practice)
    assert res.temperatures["pipe"].iloc[-1] == pytest.approx(Tp, abs=1e-4)
    assert res.temperatures["tank"].iloc[-1] == pytest.approx(Tt, abs=1e-4)
    assert res.energy_balance < 1e-6


def test_piecewise_on_request_refuses_what_it_cannot_take():
    # more states than the piecewise path takes: asked for by name, it says so and what to use
    net = rcsim.Network()
    net.add_node("a", capacity=1e4, initial=20.0)
    net.add_node("b", capacity=1e4, initial=20.0)
    net.add_boundary("out", temperature=0.0)
    net.add_link("a", "b", name="wall", parts=[{"conduction": {
        "k": 0.04, "thickness": 0.1, "area": 1.0, "density": 30.0, "specific_heat": 1400.0,
        "slices": 250}}])
    net.add_link("b", "out", parts=[{"radiation": {"emissivity": 0.9, "area": 1.0}}])
    with pytest.raises(rcsim.SolverError, match="piecewise") as err:
        net.simulate("1 h", "10 min", solver="piecewise")
    assert "stiff" in str(err.value)
    res = net.simulate("1 h", "10 min")          # auto falls back and says why
    assert res.meta["solver"].startswith("stiff")
    assert "states" in res.meta["stats"]["piecewise_declined"]


@pytest.mark.parametrize("solver", ["piecewise", "stiff"])
def test_a_heater_started_on_above_its_cut_out_switches_off(solver):
    # a room at 25 degC with a heater set to 20 degC +- 0.5 K, told to start "on": a thermostat
    # above its cut-out is off, so the room cools freely: T = Tinf + (T0 - Tinf) exp(-t/RC)
    # (Newton's law of cooling) until it falls to the cut-in at 19.5 degC
    C, R, Tinf, T0 = 2e5, 0.05, 5.0, 25.0
    net = rcsim.Network()
    net.add_node("room", capacity=C, initial=T0)
    net.add_boundary("out", temperature=Tinf)
    net.add_link("room", "out", resistance=R)
    net.add_thermostat("heater", "room", setpoint="20 degC", band="1 K", power="900 W",
                       initially="on")
    res = net.simulate("4 h", "1 min", solver=solver)
    t = res.time
    free = t < R * C * math.log((T0 - Tinf) / (19.5 - Tinf))      # before the first cut-in
    expected = Tinf + (T0 - Tinf) * np.exp(-t[free] / (R * C))
    assert np.abs(res.temperatures["room"].to_numpy()[free] - expected).max() < 1e-4
    assert res.temperatures["room"].max() <= T0 + 1e-9


def _switching_room_by_hand(C, R, P, mean, amp, period, peak, T0, low, high, t_end):
    """Switching times and temperature function of a room heated on/off under a sine outdoor
    temperature, in closed form: tau T' + T = mean + R P_on + amp cos(w (t - peak)) has the
    periodic solution Tp = mean + R P_on + amp cos(w (t - peak) - atan(w tau)) / sqrt(1 +
    (w tau)^2), and T = Tp + (T(t0) - Tp(t0)) exp(-(t - t0)/tau) after each switch (a
    first-order linear equation); each switch is where T meets the band's edge (brentq, after a
    1 s scan for the first sign change)."""
    tau, w = R * C, 2 * math.pi / period
    gain, lag = 1 / math.sqrt(1 + (w * tau) ** 2), math.atan(w * tau)

    def temperature(t, t0, T_0, on):
        def tp(x):
            return mean + R * P * on + amp * gain * np.cos(w * (x - peak) - lag)
        return tp(t) + (T_0 - tp(t0)) * np.exp(-(t - t0) / tau)

    pieces, t0, T_0, on = [], 0.0, T0, 0
    while t0 < t_end:
        level = high if on else low
        grid = np.arange(t0, t_end + 1.0, 1.0)
        f = temperature(grid, t0, T_0, on) - level
        cross = np.flatnonzero((f[1:] > 0) != (f[0] > 0) if f[0] != 0 else f[1:] != 0)
        if not cross.size:
            pieces.append((t0, t_end, T_0, on))
            break
        k = int(cross[0])
        t1 = brentq(lambda x: temperature(x, t0, T_0, on) - level, grid[k], grid[k + 1],
                    xtol=1e-9)
        pieces.append((t0, t1, T_0, on))
        t0, T_0, on = t1, level, 1 - on
    return pieces, temperature


@pytest.mark.parametrize("kept", [True, False])
def test_thermostat_switching_under_a_sine_is_located_to_the_closed_form(kept, monkeypatch):
    # event location where the regime's solution holds an exponential and a sine: a room heated
    # on/off through a day of sine weather switches 48 times in 6 h; its switching times come
    # from the closed form of the first-order equation between switches (see the helper above).
    # The path places each switch within 1e-6 of a grid interval (60 s here) past the crossing:
    # the on-time is the sum of 24 on-periods, each within 1.2e-4 s (bound 1e-2 s). A switch up
    # to 6e-5 s late shifts the room by up to 900 W x 6e-5 s / 2e5 J/K = 2.7e-7 K, and 48 of
    # them (decaying with tau = 1e4 s) by at most 1.3e-5 K: bound 2e-5 K. Both with the sine's
    # response kept per regime and grid and computed afresh (as for runs too large to keep it)
    if not kept:
        monkeypatch.setattr("rcsim.transient.piecewise.PARTICULAR_CACHE_ELEMENTS", 0)
    C, R, P = 2e5, 0.05, 900.0
    mean, amp, period, peak = 5.0, 6.0, 86400.0, 15 * 3600.0
    net = rcsim.Network()
    net.add_node("room", capacity=C, initial=20.0)
    net.add_boundary("out", temperature=rcsim.Sine(mean=mean, amplitude=amp, period=period,
                                                   peak=peak))
    net.add_link("room", "out", resistance=R)
    net.add_thermostat("heater", "room", setpoint="20 degC", band="1 K", power=P,
                       initially="off")
    res = net.simulate("6 h", "1 min", solver="piecewise")
    pieces, temperature = _switching_room_by_hand(C, R, P, mean, amp, period, peak, 20.0, 19.5,
                                                  20.5, 6 * 3600.0)
    on_time = sum(t1 - t0 for t0, t1, _, on in pieces if on)
    row = res.thermostats.iloc[0]
    assert row["switches"] == len(pieces) - 1 == 48
    assert abs(row["on_time [s]"] - on_time) < 1e-2
    t = res.time
    expected = np.empty_like(t)
    for t0, t1, T_0, on in pieces:
        inside = (t >= t0) & (t <= t1)
        expected[inside] = temperature(t[inside], t0, T_0, on)
    assert np.abs(res.temperatures["room"].to_numpy() - expected).max() < 2e-5


@pytest.mark.slow
@settings(max_examples=40, deadline=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
@given(networks(nonlinear=True))
def test_random_nonlinear_networks_agree_with_scipy_bdf(net):
    # random networks with radiation links, steps and sines: the piecewise path against scipy's
    # BDF integrating the same equations at rtol 1e-9 (the stiff path), on every node
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", rcsim.errors.LumpedWarning)
        try:
            res = net.simulate("6 h", "15 min")
        except rcsim.errors.NetworkError as err:
            assert "nonlinear" in str(err)   # radiation next to a massless node: refused
            return
        ref = net.simulate("6 h", "15 min", solver="stiff", rtol=1e-9, atol=1e-9)
    if res.meta["solver"].startswith("exact"):
        return                               # the draw holds no radiation link
    if not res.meta["solver"].startswith("piecewise"):
        assert res.meta["stats"]["piecewise_declined"]
        return
    T, T_ref = res.temperatures.to_numpy(), ref.temperatures.to_numpy()
    scale = 1.0 + np.abs(T_ref).max()
    assert np.abs(T - T_ref).max() <= 2e-5 * scale
    assert res.energy_balance < 1e-9


def test_a_fast_transient_before_the_first_step_of_an_input_is_resolved():
    # a small shell tightly coupled to a core (time constant 7 s) that radiates to a sky which
    # steps at 794.6 s, sampled every 15 min: the first grid interval lies between the start and
    # the step, with no neighbour to estimate the remainder's curvature from; the fast settling
    # inside it must still be resolved. Reference: scipy's Radau (rtol 1e-11) on the same two
    # equations written out here, C dT/dt = flows, restarted at the step
    C1, C2, R, eps, A = 500.0, 6600.0, 0.015, 0.8, 1.0
    t_step, u0, u1 = 794.6, 2.9, -4.0
    net = rcsim.Network()
    net.add_node("shell", capacity=C1, initial=-1.2)
    net.add_node("core", capacity=C2, initial=11.1)
    net.add_boundary("sky", temperature=rcsim.Steps([0.0, t_step], [u0, u1]))
    net.add_link("shell", "core", resistance=R)
    net.add_link("core", "sky", parts=[{"radiation": {"emissivity": eps, "area": A}}])
    res = net.simulate("6 h", "15 min", solver="piecewise")

    def f(t, y):
        u = u0 if t < t_step else u1
        q = (y[0] - y[1]) / R
        return [-q / C1, (q - eps * SIGMA * A * ((y[1] + K0) ** 4 - (u + K0) ** 4)) / C2]

    t = res.time
    a = solve_ivp(f, (0, t_step), [-1.2, 11.1], method="Radau", rtol=1e-11, atol=1e-11,
                  dense_output=True)
    b = solve_ivp(f, (t_step, t[-1]), a.y[:, -1], method="Radau", rtol=1e-11, atol=1e-11,
                  dense_output=True)
    ref = np.array([a.sol(x) if x <= t_step else b.sol(x) for x in t])
    # the path's tolerance is atol + rtol |T|max, about 1.2e-5 K here
    assert np.abs(res.temperatures[["shell", "core"]].to_numpy() - ref).max() < 3e-5
    assert res.energy_balance < 1e-9


def _radiating_box():
    net = rcsim.Network()
    net.add_node("inside", capacity=4e4, initial=10.0)
    net.add_node("shell", capacity=5e3, initial=10.0)
    net.add_boundary("yard", temperature=rcsim.Sine(mean=25.0, amplitude=8.0, period="24 h",
                                                    peak="15 h"))
    net.add_link("inside", "shell", resistance=0.5)
    net.add_link("shell", "yard", parts=[{"radiation": {"emissivity": 0.9, "area": 1.5}}])
    net.add_link("shell", "yard", name="film", parts=[{"convection": {
        "correlation": "vertical-plate", "height": "0.6 m", "area": "1.5 m^2"}}])
    return net


@functools.lru_cache(maxsize=None)
def _radiating_box_last_day():
    # scipy's BDF (the stiff path) from an arbitrary start for 15 days (the slowest time
    # constant is near 7 h): the last day is the periodic regime
    long = _radiating_box().simulate("15 d", "10 min", solver="stiff", rtol=1e-9, atol=1e-9)
    return long.temperatures.iloc[-145:].to_numpy()


@pytest.mark.slow
@pytest.mark.parametrize("solver", ["auto", "stiff"])
def test_periodic_start_of_a_network_grounded_only_through_radiation(solver):
    # a box whose shell reaches its surroundings only by radiation and a correlation film (no
    # linear path, so no linear steady state to start from), under a daily sine: the periodic
    # start must give the day that a long integration settles into
    res = _radiating_box().simulate("24 h", "10 min", initial="periodic", solver=solver)
    last_day = _radiating_box_last_day()
    # 0.2 mK: what 15 days leave of the slowest mode (exp(-15 d / 7 h), negligible) plus the BDF
    # reference's own error at its tolerance (common practice)
    np.testing.assert_allclose(res.temperatures.to_numpy(), last_day, atol=2e-4)
    # periodic: the day ends where it began (closed form of periodicity; 0.1 mK, the periodic
    # search's tolerance)
    T = res.temperatures.to_numpy()
    assert np.abs(T[-1] - T[0]).max() < 1e-4
