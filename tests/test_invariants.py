"""Physical sanity as invariants over random networks (hypothesis):

* equal boundaries and initial temperatures and no source: nothing moves;
* without sources no temperature leaves the range of its inputs (maximum principle);
* doubling every capacity doubles every time constant;
* the energy balance closes.
"""

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

import rcsim

SET = settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@st.composite
def networks(draw, level=None, nonlinear=False, sources=False, equal=False):
    n = draw(st.integers(1, 8))
    m = draw(st.integers(1, 3))
    rng = np.random.default_rng(draw(st.integers(0, 2**32 - 1)))
    net = rcsim.Network()
    base = draw(st.floats(-20, 60)) if level is None else level
    for i in range(n):
        massless = i > 0 and rng.random() < 0.2
        net.add_node(f"n{i}", capacity=0.0 if massless else float(10 ** rng.uniform(2, 6)),
                     initial=base if equal else float(base + rng.uniform(-15, 15)))
    for j in range(m):
        if equal:
            prof = base
        else:
            kind = rng.integers(0, 3)
            if kind == 0:
                prof = float(base + rng.uniform(-15, 15))
            elif kind == 1:
                prof = rcsim.Sine(mean=float(base), amplitude=float(rng.uniform(0, 10)),
                                  period=float(rng.uniform(3600, 86400)))
            else:
                prof = rcsim.Steps([0.0, float(rng.uniform(100, 20000))],
                                   [float(base + rng.uniform(-10, 10)),
                                    float(base + rng.uniform(-10, 10))])
        net.add_boundary(f"b{j}", temperature=prof)
    # a spanning chain so that every node reaches a boundary, then random extra links
    for i in range(1, n):
        net.add_link(f"n{i - 1}", f"n{i}", resistance=float(10 ** rng.uniform(-2, 1)))
    net.add_link(f"n{n - 1}", "b0", resistance=float(10 ** rng.uniform(-2, 1)))
    for k in range(int(rng.integers(0, n + 2))):
        a = f"n{rng.integers(0, n)}"
        b = f"n{rng.integers(0, n)}" if rng.random() < 0.6 else f"b{rng.integers(0, m)}"
        if a == b:
            continue
        if rng.random() < 0.25:
            net.add_link(a, b, name=f"layer{k}", parts=[
                {"convection": {"h": float(rng.uniform(2, 30)), "area": 1.0}},
                {"conduction": {"k": float(rng.uniform(0.05, 2)), "thickness": 0.1, "area": 1.0,
                                "density": 1000.0, "specific_heat": 1000.0,
                                "slices": int(rng.integers(1, 4))}}])
        elif nonlinear and rng.random() < 0.5:
            net.add_link(a, b, name=f"rad{k}", parts=[
                {"radiation": {"emissivity": float(rng.uniform(0.1, 1)), "area": 1.0}}])
        else:
            net.add_link(a, b, name=f"x{k}", resistance=float(10 ** rng.uniform(-2, 1)))
    if sources:
        net.add_source("n0", power=float(rng.uniform(0, 200)))  # a draw could cool below 0 K
    return net


def _run(net, solver):
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", rcsim.errors.LumpedWarning)
        net.assemble()
        try:
            return net.simulate("6 h", "15 min", solver=solver)
        except rcsim.errors.NetworkError as err:
            # a nonlinear part next to a massless node is refused on the transient path
            assert "nonlinear" in str(err)
            return None


@SET
@given(networks(level=17.5, equal=True), st.sampled_from(["auto", "stiff"]))
def test_nothing_moves_at_equilibrium(net, solver):
    res = _run(net, solver)
    np.testing.assert_allclose(res.temperatures.to_numpy(), 17.5, atol=1e-9)
    np.testing.assert_allclose(res.heat_flows.to_numpy(), 0.0, atol=1e-8)


@SET
@given(networks(nonlinear=True), st.sampled_from(["auto", "stiff"]))
def test_maximum_principle(net, solver):
    res = _run(net, solver)
    if res is None:
        return
    # the inputs' true range (a sine peaks between output samples): profiles on a dense grid
    fine = np.linspace(0.0, res.time[-1], 200_001)
    inputs = np.concatenate([b.profile.value(fine) for b in net.boundaries.values()])
    initial = np.array([node.initial for node in net.nodes.values() if node.capacity > 0])
    lo = min(inputs.min(), initial.min())
    hi = max(inputs.max(), initial.max())
    T = res.temperatures.to_numpy()
    tol = 1e-6 * max(1.0, abs(hi), abs(lo)) + (2e-3 if res.solver.startswith("stiff") else 0)
    assert T.min() >= lo - tol and T.max() <= hi + tol


@SET
@given(networks())
def test_doubling_capacities_doubles_time_constants(net):
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", rcsim.errors.LumpedWarning)
        tau = net.time_constants()
        for node in net.nodes.values():
            node.capacity *= 2
        for link in net.links.values():
            for part in link.parts:
                part.capacity *= 2
        net.mark_changed()
        tau2 = net.time_constants()
    np.testing.assert_allclose(tau2, 2 * tau, rtol=1e-8)


@pytest.mark.slow
@SET
@given(networks(sources=True, nonlinear=True), st.sampled_from(["auto", "stiff"]))
def test_energy_balance_closes(net, solver):
    res = _run(net, solver)
    if res is None:
        return
    limit = 1e-9 if res.solver.startswith("exact") else 1e-6
    assert res.energy_balance < limit
