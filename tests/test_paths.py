"""The contract of the transient paths: every registered path (rcsim.transient.registry.PATHS)
gives the same closed forms on linear networks, closes the energy balance and reports itself in
the run's records. A new path joins this suite by being registered (and given a tolerance)."""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.signal as sig

import rcsim
from rcsim.runinfo import RunInfo, RunStats
from rcsim.transient.base import TransientPath
from rcsim.transient.registry import PATHS, SOLVERS, check_solver, load_path, solver_help

NAMES = list(PATHS)
# largest deviation from a closed form [K] per path: the exact and piecewise paths are closed
# forms themselves on linear networks (rounding only); the stiff path integrates to rtol/atol
TOL = {"exact": 1e-9, "piecewise": 1e-9, "stiff": 2e-4}
# energy balance per path (relative closure error)
BALANCE = {"exact": 1e-9, "piecewise": 1e-9, "stiff": 1e-6}


@pytest.fixture(params=NAMES)
def path(request):
    if request.param not in TOL:
        pytest.fail(f"path {request.param!r} is registered but has no tolerance in test_paths")
    return request.param


def test_every_registered_path_is_a_transient_path():
    assert SOLVERS == ("auto", *PATHS)
    for name, entry in PATHS.items():
        impl = load_path(name)
        assert isinstance(impl, TransientPath) and impl.name == name
        assert impl.summary == entry.summary and impl.description
        assert f"'{name}'" in solver_help()


def test_a_misspelt_solver_gets_a_suggestion():
    with pytest.raises(rcsim.InputError, match="did you mean 'piecewise'"):
        check_solver("piecewize")
    with pytest.raises(rcsim.InputError, match="did you mean 'stiff'"):
        rcsim.loads('[simulation]\nduration = "1 h"\nstep = "1 min"\nsolver = "stif"\n'
                    '[nodes.a]\ncapacity = 1\ninitial = 0\n')


def test_step_response(path, single_node):
    # Newton cooling of a lumped body: T = Tinf + (Ti - Tinf) exp(-t/tau), tau = RC
    C, R = 8400.0, 2.5
    res = single_node(C, R).simulate("24 h", "10 min", solver=path)
    t = res.time
    expected = 25.0 + (5.0 - 25.0) * np.exp(-t / (R * C))
    np.testing.assert_allclose(res.temperatures["x"], expected, atol=TOL[path])
    assert res.run_info.path == path and res.solver == load_path(path).description


def test_constant_heat_input_and_the_flow_it_drives(path, single_node):
    # lumped node with a source Q: T = Tinf + Q R + (Ti - Tinf - Q R) exp(-t/RC), and the flow
    # through the skin is (T - Tinf)/R (closed form of the same first-order equation)
    C, R, Q = 5000.0, 1.2, 8.0
    res = single_node(C, R, Ti=20.0, ambient=20.0, power=Q).simulate("6 h", "1 min",
                                                                      solver=path)
    t = res.time
    expected = 20.0 + Q * R * (1 - np.exp(-t / (R * C)))
    np.testing.assert_allclose(res.temperatures["x"], expected, atol=TOL[path])
    np.testing.assert_allclose(res.heat_flows["skin"], (expected - 20.0) / R, atol=TOL[path])


def _sine_node(C=20000.0, R=3.0, P=86400.0):
    net = rcsim.Network()
    net.add_node("x", capacity=C, initial=20.0)
    net.add_boundary("amb", temperature=rcsim.Sine(mean=20, amplitude=6, period=P, peak=0.0))
    net.add_link("x", "amb", resistance=R)
    return net


def test_sine_periodic_amplitude_and_phase(path):
    # first-order low-pass once periodic: amplitude ratio 1/sqrt(1 + (w tau)^2), lag
    # atan(w tau)/w (the textbook frequency response of an RC element)
    C, R, P = 20000.0, 3.0, 86400.0
    w, tau = 2 * math.pi / P, R * C
    res = _sine_node(C, R, P).simulate(2 * P, 300, initial="periodic", solver=path)
    t = res.time
    expected = 20 + 6 / math.sqrt(1 + (w * tau) ** 2) * np.cos(w * (t - math.atan(w * tau) / w))
    np.testing.assert_allclose(res.temperatures["x"], expected, atol=10 * TOL[path])


def test_sine_at_irregular_times_with_a_knot_between_them(path):
    # irregular sampling (as in a logger file) and a zero step off the grid (a knot): the same
    # closed form as above
    rng = np.random.default_rng(7)
    times = np.sort(rng.uniform(0, 86400, 300))
    C, R, P = 20000.0, 3.0, 86400.0
    w, tau = 2 * math.pi / P, R * C
    net = _sine_node(C, R, P)
    net.add_source("x", power=rcsim.Repeat(rcsim.Steps([0, 30000.5], [0.0, 0.0]), P))
    res = net.simulate(P, 600, times=times, initial="periodic", solver=path)
    assert res.time.size == times.size + 2
    t = res.time
    expected = 20 + 6 / math.sqrt(1 + (w * tau) ** 2) * np.cos(w * t - math.atan(w * tau))
    np.testing.assert_allclose(res.temperatures["x"], expected, atol=10 * TOL[path])
    assert res.energy_balance < BALANCE[path]


def test_two_nodes_in_series_against_lsim(path):
    # two capacities in series to a boundary that ramps (a table: linear between its points),
    # with a source stepping on a sample: scipy.signal.lsim with first-order hold is exact for
    # inputs linear between samples, on the same matrices written out here by hand
    C1, C2, R1, R2 = 4000.0, 12000.0, 0.8, 1.5
    net = rcsim.Network()
    net.add_node("a", capacity=C1, initial=12.0)
    net.add_node("b", capacity=C2, initial=4.0)
    net.add_boundary("out", temperature=rcsim.Table([0, 7200, 14400, 21600], [0, 30, 10, 18]))
    net.add_link("out", "a", resistance=R1)
    net.add_link("a", "b", resistance=R2)
    net.add_source("b", power=rcsim.Table([0, 10800, 21600], [0.0, 40.0, 5.0]))
    res = net.simulate("6 h", "2 min", solver=path)
    A = np.array([[-(1 / R1 + 1 / R2) / C1, 1 / (R2 * C1)],
                  [1 / (R2 * C2), -1 / (R2 * C2)]])
    B = np.array([[1 / (R1 * C1), 0.0], [0.0, 1 / C2]])
    t = res.time
    u = np.column_stack([np.interp(t, [0, 7200, 14400, 21600], [0, 30, 10, 18]),
                         np.interp(t, [0, 10800, 21600], [0.0, 40.0, 5.0])])
    _, _, x = sig.lsim((A, B, np.eye(2), np.zeros((2, 2))), u, t, X0=[12.0, 4.0], interp=True)
    got = res.temperatures[["a", "b"]].to_numpy()
    assert np.abs(got - x).max() < max(TOL[path], 1e-8)


def test_energy_balance_closes(path, heated_box):
    # stored = heat in through the boundary links + source energy, at every sample (the first
    # law), on a network with a sine, a step and a source
    res = heated_box().simulate("2 d", "5 min", solver=path)
    assert res.energy_balance < BALANCE[path]
    e = res.energy
    inflow = e.filter(like="link:").sum(axis=1) + e.filter(like="source:").sum(axis=1)
    scale = np.abs(e["stored"]).max()
    assert np.abs(e["stored"] - inflow).max() < 10 * BALANCE[path] * scale
    # the fan's energy: 5 W from 1 h on (closed form of the step's integral)
    assert e["source:fan"].iloc[-1] == pytest.approx(5.0 * (2 * 86400 - 3600), rel=BALANCE[path])


def test_the_run_records_its_path_and_what_it_counted(path, tmp_path, single_node):
    res = single_node().simulate("2 h", "1 min", solver=path)
    info = res.run_info
    assert isinstance(info, RunInfo) and isinstance(info.stats, RunStats)
    assert info.path == path and info.states == 1 and info.wall_time > 0
    assert info.declined == {}                  # asked for by name: nothing else considered
    assert res.stats == info.as_dict() and res.stats["path"] == path
    res.save(tmp_path / "r.h5")
    back = rcsim.Result.load(tmp_path / "r.h5")
    assert isinstance(back.meta["stats"], dict)             # not JSON text after loading
    assert back.run_info == info


@pytest.mark.parametrize("name, build, fragment, error", [
    ("exact", "radiating", "needs a linear network", rcsim.InputError),
    ("piecewise", "large", "states", rcsim.SolverError),
])
def test_a_path_asked_for_by_name_that_declines_says_why(name, build, fragment, error):
    net = rcsim.Network()
    net.add_node("a", capacity=1e4, initial=20.0)
    net.add_boundary("out", temperature=0.0)
    net.add_link("a", "out", parts=[{"radiation": {"emissivity": 0.9, "area": 1.0}}])
    if build == "large":
        net.add_link("a", "out", name="wall", parts=[{"conduction": {
            "k": 0.04, "thickness": 0.1, "area": 1.0, "density": 30.0, "specific_heat": 1400.0,
            "slices": 250}}])
    with pytest.raises(error, match=fragment) as err:
        net.simulate("1 h", "10 min", solver=name)
    assert "stiff" in str(err.value)            # what to use instead
    # 'auto' keeps the reason of every path that declined and runs on the next
    res = net.simulate("1 h", "10 min")
    assert fragment in res.run_info.declined[name]
    assert res.run_info.path not in res.run_info.declined


def test_auto_takes_the_exact_path_for_a_linear_network(heated_box):
    res = heated_box().simulate("1 d", "10 min")
    assert res.run_info.path == "exact" and res.run_info.declined == {}


def test_progress_only_grows_and_reaches_one(path, heated_box):
    seen = []
    heated_box().simulate("2 d", "5 min", solver=path, progress=seen.append)
    assert seen and seen[-1] == 1.0
    assert all(b > a for a, b in zip(seen, seen[1:])) and 0.0 < seen[0]
