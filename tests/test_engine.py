"""The engine's records and state: a run leaves its network as it was; caches are explicit;
run records read back from old files; the trajectory entry point for fits."""

from __future__ import annotations

import copy
import math

import h5py
import numpy as np
import pytest

import rcsim
from rcsim.profiles import Constant
from rcsim.statespace import state_space
from rcsim.transient import EXACT_LIMIT, trajectory
from rcsim.transient.exact_path import exact_declines


def _room_with_heater(control="on-off"):
    net = rcsim.Network()
    net.add_node("room", capacity=2e5, initial=19.0)
    net.add_boundary("out", temperature=rcsim.Sine(mean=5, amplitude=4, period="24 h"))
    net.add_link("room", "out", resistance=0.05)
    net.add_thermostat("heater", "room", setpoint="20 degC", band="1 K", power="900 W",
                       control=control)
    return net


@pytest.mark.parametrize("solver", ["piecewise", "stiff"])
def test_running_twice_gives_the_same_result_and_leaves_the_network_as_it_was(solver):
    net = _room_with_heater()
    settings = copy.deepcopy(net.thermostats)
    asm = net.assemble()
    fields = set(vars(asm))
    first = net.simulate("12 h", "10 min", solver=solver)
    assert net.thermostats == settings                 # the settings the user wrote
    assert net.assemble() is asm and set(vars(asm)) == fields   # nothing attached at run time
    second = net.simulate("12 h", "10 min", solver=solver)
    np.testing.assert_array_equal(first.temperatures.to_numpy(),
                                  second.temperatures.to_numpy())
    assert first.thermostats.equals(second.thermostats)
    assert first.thermostats["switches"].iloc[0] > 5


def test_thermostat_settings_cannot_be_changed_by_a_run():
    t = _room_with_heater().thermostats["heater"]
    with pytest.raises(AttributeError):
        t.setpoint = 25.0            # frozen: a run works on its own ThermostatState


def test_a_copy_with_other_inputs_shares_the_modal_decomposition():
    net = rcsim.Network()
    net.add_node("x", capacity=8400.0, initial=5.0)
    net.add_boundary("amb", temperature=25.0)
    net.add_link("x", "amb", resistance=2.5)
    asm = net.assemble()
    other = asm.with_inputs([Constant(40.0).bind("temperature", "amb")])
    assert other.cache.structure is asm.cache.structure
    assert other.cache is not asm.cache          # input-dependent results are kept apart
    assert state_space(other) is state_space(asm)
    # and a copy made by dataclasses.replace starts with an empty cache of its own
    import dataclasses

    assert dataclasses.replace(asm).cache.structure is not asm.cache.structure


def test_one_threshold_decides_exact_or_not():
    # EXACT_LIMIT states are taken, one more is not (a layer between two boundaries, sliced)
    def layer(slices):
        net = rcsim.Network()
        net.add_boundary("a", temperature=0.0)
        net.add_boundary("b", temperature=1.0)
        net.add_link("a", "b", name="w", parts=[{"conduction": {
            "k": 1.0, "thickness": 1.0, "area": 1.0, "density": 1000.0, "specific_heat": 1000.0,
            "slices": slices}}])
        return net.assemble()

    assert exact_declines(layer(EXACT_LIMIT)) is None
    assert f"up to {EXACT_LIMIT} states" in exact_declines(layer(EXACT_LIMIT + 1))
    assert "linear" in exact_declines(_room_with_heater().assemble(),
                                      tuple(_room_with_heater().thermostats.values()))


def test_run_records_of_files_written_before_them_still_read(tmp_path):
    # a result file whose stats attribute holds the older keys (units in the key, the piecewise
    # path's reason on its own)
    net = _room_with_heater()
    res = net.simulate("6 h", "10 min", solver="stiff")
    path = tmp_path / "old.h5"
    res.save(path)
    with h5py.File(path, "r+") as h5:
        h5.attrs["stats"] = ('{"steps": 120, "events": 3, "wall_time [s]": 0.25, "states": 1, '
                             '"piecewise_declined": "too many samples for the piecewise path"}')
    back = rcsim.Result.load(path)
    assert back.meta["stats"]["steps"] == 120              # a dict, as in memory
    info = back.run_info
    assert info.path == "stiff" and info.wall_time == 0.25 and info.states == 1
    assert info.stats.steps == 120 and info.stats.events == 3
    assert info.declined == {"piecewise": "too many samples for the piecewise path"}


def test_meta_stats_is_the_same_dict_in_memory_and_after_loading(tmp_path, heated_box):
    res = heated_box().simulate("1 d", "10 min")
    res.save(tmp_path / "r.h5")
    back = rcsim.Result.load(tmp_path / "r.h5")
    assert back.meta["stats"] == res.meta["stats"] == res.stats
    assert back.meta["energy_terms"] == res.meta["energy_terms"]
    assert "wall_time" in res.stats and "piecewise_declined" not in res.stats


# -- the trajectory entry point ------------------------------------------------------------------
def _log_times(seed=3, n=400, span=86400.0):
    rng = np.random.default_rng(seed)
    return np.concatenate([[0.0], np.sort(rng.uniform(0, span, n))])


def test_trajectory_follows_the_closed_form_at_any_times(single_node):
    # Newton cooling: T = Tinf + (Ti - Tinf) exp(-t/RC), at irregular times (a logger's)
    C, R = 8400.0, 2.5
    t = _log_times()
    T = trajectory(single_node(C, R), t, ["x"])
    assert T.shape == (t.size, 1)
    np.testing.assert_allclose(T[:, 0], 25.0 - 20.0 * np.exp(-t / (R * C)), atol=1e-10)


def test_trajectory_with_other_inputs_and_starting_temperatures(single_node):
    # the ambient swapped for 40 degC and the start for 12 degC, through a copy of the assembly:
    # T = 40 + (12 - 40) exp(-t/RC) (closed form), with one modal decomposition for both runs
    C, R = 8400.0, 2.5
    net = single_node(C, R)
    asm = net.assemble()
    t = _log_times(n=50)
    trajectory(net, t, [0])
    modes = asm.cache.structure.modes
    other = asm.with_inputs([Constant(40.0).bind("temperature", "amb")])
    T = trajectory(net, t, [0], assembled=other, initial={"x": 12.0})
    np.testing.assert_allclose(T[:, 0], 40.0 - 28.0 * np.exp(-t / (R * C)), atol=1e-10)
    assert other.cache.structure.modes is modes
    # from the steady state nothing moves
    np.testing.assert_allclose(trajectory(net, t, ["x"], assembled=other, initial="steady"),
                               40.0, atol=1e-10)


@pytest.mark.parametrize("solver", ["auto", "piecewise", "stiff"])
def test_trajectory_is_what_a_run_gives_on_the_same_path(solver):
    # a nonlinear network (a heater switching) and a linear one: the same numbers as a run at
    # the same times, on the path a run would take
    t = _log_times(n=200, span=43200.0)
    for net in (_room_with_heater("proportional"), _room_with_heater()):
        res = net.simulate(t[-1], t[-1], times=t, solver=solver, record=["room"])
        T = trajectory(net, t, ["room"], solver=solver)
        np.testing.assert_allclose(T[:, 0], res.temperatures["room"].to_numpy(), atol=1e-12)


def test_trajectory_of_a_linear_network_matches_a_run(heated_box):
    net = heated_box()
    t = _log_times(n=300, span=2 * 86400.0)
    res = net.simulate(t[-1], 600.0, times=t)
    assert res.run_info.path == "exact"
    T = trajectory(net, t, ["air", "payload"])
    np.testing.assert_allclose(T, res.temperatures[["air", "payload"]].to_numpy(), atol=1e-10)


def test_trajectory_refuses_bad_times(single_node):
    net = single_node()
    for bad in ([], [0.0, 5.0, 5.0], [-1.0, 3.0], [0.0, math.nan]):
        with pytest.raises(rcsim.InputError, match="times"):
            trajectory(net, bad, ["x"])
    with pytest.raises(rcsim.InputError, match="unknown node"):
        trajectory(net, [0.0, 10.0], ["y"])
