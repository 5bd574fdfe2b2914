"""A link whose conductance varies in time (rcsim.varying): both nonlinear paths against closed
forms and an independent integration; the exact path declines naming the link.

Sources: the single-node step response C dT/dt = G (T_a - T) solved by hand on each piece of
constant G (closed form derived here); a two-node network with a sinusoidal conductance
integrated by scipy's solve_ivp (DOP853, tight tolerances) from equations written here; the
steady state of a series divider (closed form).
"""

import numpy as np
import pytest
from scipy.integrate import solve_ivp

import rcsim
from rcsim.errors import InputError, NetworkError, SolverError
from rcsim.profiles import Sine, Steps, Table

PATHS = ["piecewise", "stiff"]


def single_node_with_a_vent(conductance):
    net = rcsim.Network()
    net.add_node("box", capacity=1000.0, initial=0.0)
    net.add_boundary("room", temperature=10.0)
    net.add_link("box", "room", conductance=conductance, name="vent")
    return net


@pytest.mark.parametrize("solver", PATHS)
def test_a_step_of_conductance_follows_the_closed_form(solver):
    # closed form (derived here): tau = C/G on each piece, T continuous at the step at 500 s
    net = single_node_with_a_vent(Steps([0.0, 500.0], [1.0, 4.0]))
    res = net.simulate(2000, 10, solver=solver)
    t = res.time
    T = res.temperatures["box"].to_numpy()
    at_step = 10.0 * (1 - np.exp(-500.0 / 1000.0))
    expected = np.where(t < 500, 10.0 * (1 - np.exp(-t / 1000.0)),
                        10.0 + (at_step - 10.0) * np.exp(-(t - 500.0) / 250.0))
    np.testing.assert_allclose(T, expected, atol=5e-5)
    # the recorded flow is G(t) (T - T_room), positive from box to room: against the closed
    # form within G times the temperatures' tolerance; the stiff path computes its flows from
    # temperatures corrected towards the stored-energy rates, the others from the recorded ones
    g = np.where(t < 500, 1.0, 4.0)
    q = res.heat_flows["vent"].to_numpy()
    np.testing.assert_allclose(q, g * (expected - 10.0), atol=4 * 5e-5)
    if solver != "stiff":
        np.testing.assert_allclose(q, g * (T - 10.0), atol=1e-9)
    # energy: what came in through the vent is what the box stored
    assert res.energy_balance < 1e-9
    stored = res.energy["stored"].to_numpy()[-1]
    assert stored == pytest.approx(1000.0 * T[-1], rel=1e-6)


def test_the_exact_path_declines_naming_the_link():
    net = single_node_with_a_vent(Steps([0.0, 500.0], [1.0, 4.0]))
    res = net.simulate(1000, 100)
    assert res.run_info.path in ("piecewise", "stiff")
    reason = res.run_info.declined["exact"]
    assert "'vent'" in reason and "varies in time" in reason
    with pytest.raises(InputError) as err:
        net.simulate(1000, 100, solver="exact")
    assert "'vent'" in str(err.value)


@pytest.mark.parametrize("solver", PATHS)
def test_a_sinusoidal_conductance_against_an_independent_integration(solver):
    # two nodes joined by G(t) = 2 + 1.5 sin(2 pi t / 1 h), the second tied to a boundary that
    # swings with a 2 h period; the same equations written here and integrated by solve_ivp
    C1, C2, R, P = 2000.0, 500.0, 1.0, 3600.0
    net = rcsim.Network()
    net.add_node("a", capacity=C1, initial=30.0)
    net.add_node("b", capacity=C2, initial=0.0)
    net.add_boundary("amb", temperature=Sine(mean=10, amplitude=5, period=7200))
    net.add_link("a", "b", conductance=Sine(mean=2.0, amplitude=1.5, period=P), name="v")
    net.add_link("b", "amb", resistance=R, name="r")
    res = net.simulate(3 * P, 60, solver=solver, rtol=1e-8, atol=1e-8)

    def rhs(t, y):
        g = 2.0 + 1.5 * np.sin(2 * np.pi * t / P)
        amb = 10.0 + 5.0 * np.sin(2 * np.pi * t / 7200)
        q = g * (y[0] - y[1])
        return [-q / C1, (q - (y[1] - amb) / R) / C2]

    ref = solve_ivp(rhs, (0, 3 * P), [30.0, 0.0], t_eval=res.time, method="DOP853",
                    rtol=1e-11, atol=1e-11)
    np.testing.assert_allclose(res.temperatures[["a", "b"]].to_numpy(), ref.y.T, atol=1e-5)
    assert res.energy_balance < 1e-9


def test_series_parts_and_the_steady_state_at_a_time():
    # closed form: G_eff = 1/(R + 1/G); at t the steady divider T = (G_eff T_a + T_b / R_b) /
    # (G_eff + 1 / R_b)
    net = rcsim.Network()
    net.add_node("n", capacity=100.0, initial=20.0)
    net.add_boundary("hot", temperature=50.0)
    net.add_boundary("cold", temperature=0.0)
    vent = Table([0.0, 100.0, 200.0], [1.0, 3.0, 3.0], outside="hold")
    net.add_link("hot", "n", parts=[{"resistance": 0.25}, {"conductance": vent}], name="vent")
    net.add_link("n", "cold", resistance=0.5, name="wall")
    for at, g in ((0.0, 1.0), (50.0, 2.0), (150.0, 3.0)):
        g_eff = 1.0 / (0.25 + 1.0 / g)
        expected = (g_eff * 50.0) / (g_eff + 2.0)
        assert float(net.steady(at=at).temperatures["n"]) == pytest.approx(expected, rel=1e-12)
    # a run that starts steady starts at the t = 0 divider and ends at the late one
    res = net.simulate(400, 5, initial="steady", solver="stiff")
    g_end = 1.0 / (0.25 + 1.0 / 3.0)
    assert res.temperatures["n"].iloc[0] == pytest.approx((0.8 * 50.0) / 2.8, rel=1e-9)
    assert res.temperatures["n"].iloc[-1] == pytest.approx(g_end * 50.0 / (g_end + 2.0),
                                                           abs=1e-4)
    flows = res.heat_flows["vent"].to_numpy()
    T = res.temperatures["n"].to_numpy()
    g_t = 1.0 / (0.25 + 1.0 / vent.value(res.time))
    # G_eff(t) at each sample; the stiff path's flows come from temperatures corrected towards
    # the stored-energy rates, within G times this run's temperature tolerance (1e-4 K above)
    # of the recorded ones (a wrong G_eff would be 10 W off)
    np.testing.assert_allclose(flows, g_t * (50.0 - T), rtol=0, atol=1e-4 * g_t.max())


def test_a_periodic_start_repeats_itself():
    # the periodic regime: one period later the state is back where it started (definition)
    net = rcsim.Network()
    net.add_node("n", capacity=5000.0)
    net.add_boundary("out", temperature=Sine(mean=20, amplitude=8, period=86400, peak=54000))
    net.add_link("n", "out", conductance=Sine(mean=1.0, amplitude=0.6, period=43200,
                                              peak=50000), name="film")
    for solver in PATHS:
        res = net.simulate("48 h", "30 min", initial="periodic", solver=solver)
        T = res.temperatures["n"].to_numpy()
        assert T[48] == pytest.approx(T[0], abs=2e-4)      # 24 h later
        assert T[96] == pytest.approx(T[0], abs=2e-4)


def test_a_conductance_profile_in_a_scenario_file(write):
    text = """
[simulation]
duration = "2000 s"
step = "10 s"
[nodes.box]
capacity = "1 kJ/K"
initial = "0 degC"
[boundaries.room]
temperature = "10 degC"
[links.vent]
between = ["box", "room"]
conductance = { steps = { at = ["0 s", "500 s"], values = ["1 W/K", "4 W/K"] } }
"""
    res = rcsim.load(write("vent.toml", text)).run()
    # closed form as above, at the end: 10 + (T(500) - 10) exp(-1500/250)
    expected = 10.0 + (10.0 * (1 - np.exp(-0.5)) - 10.0) * np.exp(-6.0)
    assert res.temperatures["box"].iloc[-1] == pytest.approx(expected, abs=5e-5)


def test_bad_varying_conductances_are_refused(write):
    with pytest.raises(InputError, match="positive at t = 0"):
        single_node_with_a_vent(Steps([0.0, 10.0], [0.0, 1.0]))
    net = single_node_with_a_vent(Steps([0.0, 10.0], [1.0, -1.0]))
    with pytest.raises(InputError, match="stay positive"):
        net.simulate(100, 1)
    net = rcsim.Network()
    net.add_node("junction", capacity=0.0)
    net.add_boundary("a", temperature=0.0)
    net.add_boundary("b", temperature=10.0)
    net.add_link("junction", "a", conductance=Steps([0.0, 10.0], [1.0, 2.0]))
    net.add_link("junction", "b", resistance=1.0)
    net.add_node("other", capacity=10.0, initial=0.0)
    net.add_link("other", "a", resistance=1.0)
    with pytest.raises(NetworkError, match="no heat capacity"):
        net.simulate(100, 1, solver="stiff")
    text = """
[nodes.box]
capacity = "1 kJ/K"
[boundaries.room]
temperature = "10 degC"
[links.vent]
between = ["box", "room"]
conductance = { steps = { at = ["0 s"], values = ["1 degC"] } }
"""
    with pytest.raises(InputError) as err:
        rcsim.load(write("bad.toml", text))
    assert "links.vent.conductance" in str(err.value) and "\n" not in str(err.value)
    with pytest.raises((InputError, SolverError)):
        single_node_with_a_vent(Steps([0.0, 10.0], [1.0, 2.0])).simulate(100, 1, solver="exact")
