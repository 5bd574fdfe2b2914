"""Transient solutions against the series solution of a slab and scipy.signal.lsim; time
constants; recording choices.

The closed forms every registered path must meet are in tests/test_paths.py.
"""

import math

import numpy as np
import pytest
import scipy.signal as sig
from scipy.optimize import brentq

import rcsim
from conftest import make_single_node as single_node, make_slab_wall

from rcsim.errors import NetworkError, RcsimWarning
from rcsim.transient.registry import PATHS


def test_periodic_start_needs_periodic_inputs():
    net = single_node()
    net.boundaries["amb"].profile = rcsim.Table([0, 1e6], [0, 1]).bind("temperature", "b")
    net.mark_changed()
    with pytest.raises(rcsim.InputError, match="periodic"):
        net.simulate("1 h", "1 min", initial="periodic")


def _slab_series(bi, fo, x_star=0.0, terms=60):
    # plane wall of half-thickness L with convection on both faces (Incropera et al., 6th ed.,
    # section 5.5.1, the exact series solution):
    # theta* = sum C_n exp(-zeta_n^2 Fo) cos(zeta_n x*), zeta_n tan zeta_n = Bi,
    # C_n = 4 sin(zeta_n) / (2 zeta_n + sin(2 zeta_n))
    total = 0.0
    for n in range(terms):
        lo = n * math.pi + 1e-12
        hi = n * math.pi + math.pi / 2 - 1e-12
        z = brentq(lambda s: s * math.tan(s) - bi, lo, hi)
        cn = 4 * math.sin(z) / (2 * z + math.sin(2 * z))
        total += cn * math.exp(-z * z * fo) * math.cos(z * x_star)
    return total


@pytest.mark.parametrize("solver", PATHS)
def test_slab_converges_to_series_solution(solver):
    h, k, L, rho, cp, Ti = 10.0, 1.0, 0.1, 2000.0, 1000.0, 100.0
    alpha = k / (rho * cp)
    bi = h * L / k
    times = np.array([0.2, 0.5, 1.0, 2.0]) * L * L / alpha
    exact = np.array([_slab_series(bi, alpha * t / L ** 2) for t in times]) * Ti
    errors = []
    for slices in (5, 15, 45):
        net, init = make_slab_wall(slices, h, k, L, rho, cp, Ti)
        res = net.simulate(times[-1], times[0] / 4, initial=init, solver=solver)
        centre = res.temperatures[f"wall.{(slices + 1) // 2}"]
        got = np.interp(times, res.time, centre.to_numpy())
        errors.append(np.abs(got - exact).max())
    # second-order convergence in the slice width (a ladder is the central-difference
    # discretisation of the heat equation, error ~ dx^2: closed form of its truncation error):
    # the error shrinks ~9x per tripling of slices; 5 leaves room for the higher-order terms
    assert errors[0] > errors[1] > errors[2]
    assert errors[2] < 0.02  # K, on an initial difference of 100 K (0.02 %: common practice)
    assert errors[0] / errors[1] > 5


def _random_network(n=20, seed=3):
    rng = np.random.default_rng(seed)
    net = rcsim.Network()
    for i in range(n):
        net.add_node(f"n{i}", capacity=float(rng.uniform(1e3, 1e5)),
                     initial=float(rng.uniform(0, 30)))
    net.add_boundary("a", temperature=rcsim.Table([0, 3600, 7200, 21600, 86400],
                                                  [0, 10, 5, 30, 20]))
    net.add_boundary("b", temperature=rcsim.Steps([0, 36000], [15.0, 5.0]))
    net.add_link("a", "n0", resistance=float(rng.uniform(0.05, 1)))
    for i in range(n - 1):
        net.add_link(f"n{i}", f"n{i + 1}", resistance=float(rng.uniform(0.01, 1)))
    for _ in range(n // 2):
        i, j = rng.choice(n, 2, replace=False)
        net.add_link(f"n{i}", f"n{j}", resistance=float(rng.uniform(0.1, 3)),
                     name=f"x{i}-{j}")
    net.add_link(f"n{n - 1}", "b", resistance=float(rng.uniform(0.05, 1)))
    net.add_link("n7", "b", resistance=0.7, name="extra")
    net.add_source("n10", power=rcsim.Table([0, 86400], [0, 50]))
    return net


def test_phi_functions_of_tiny_and_ordinary_arguments_together():
    # a mode so slow that lambda*h is subnormal (a layer 1e153 m thick did it) next to an
    # ordinary one: 0.5/x overflowed in the branch the series replaces. Expected: the limits
    # E1, E2, E3 -> 1, 1/2, 1/6 as x -> 0 (Taylor series of (1 - e^-x)/x etc.) and the closed
    # forms E1 = (1 - e^-x)/x, E2 = (1 - E1)/x, E3 = (1/2 - E2)/x at x = 2, evaluated with math.
    from rcsim.transient.exact import phi_functions

    e0, e1, e2, e3 = phi_functions(np.array([1e-310, 2.0]))
    c1 = (1 - math.exp(-2.0)) / 2.0
    c2 = (1 - c1) / 2.0
    c3 = (0.5 - c2) / 2.0
    assert e0 == pytest.approx([1.0, math.exp(-2.0)], rel=1e-15)
    assert e1 == pytest.approx([1.0, c1], rel=1e-14)
    assert e2 == pytest.approx([0.5, c2], rel=1e-14)
    assert e3 == pytest.approx([1 / 6, c3], rel=1e-13)


def test_exact_path_matches_lsim_to_1e9():
    # scipy.signal.lsim with interp=True (first-order hold: inputs linear between samples) on the
    # same state-space matrices. The boundary step at 36000 s falls on a sample; lsim sees it as a
    # ramp over one sample, so the comparison uses a fine grid and the step moved to a ramp there.
    net = _random_network()
    dt = 60.0
    res = net.simulate("24 h", dt, solver="exact")
    asm = net.assemble()
    n = asm.n_nodes
    K = asm.K.toarray()
    cinv = 1 / asm.capacity
    A = -cinv[:, None] * K
    B = cinv[:, None] * np.hstack([asm.B.toarray(), asm.P.toarray()])
    t = res.time
    U = np.column_stack([p.value(t) for p in asm.boundary_profiles + asm.source_profiles])
    # lsim holds the value linearly between samples; give it the step's exact ramp-free form by
    # splitting at the step: simulate up to 36000 s, then restart from the state there
    k = int(np.searchsorted(t, 36000.0))
    U1 = U[:k + 1].copy()
    U1[-1, 1] = asm.boundary_profiles[1].value_left(36000.0)
    _, _, x1 = sig.lsim((A, B, np.eye(n), np.zeros((n, B.shape[1]))), U1, t[:k + 1],
                        X0=asm.initial, interp=True)
    _, _, x2 = sig.lsim((A, B, np.eye(n), np.zeros((n, B.shape[1]))), U[k:], t[k:] - t[k],
                        X0=x1[-1], interp=True)
    x = np.vstack([x1, x2[1:]])
    assert np.abs(x - res.temperatures.to_numpy()).max() < 1e-9


@pytest.mark.parametrize("length", [5, 37, 304, 10_000])
def test_exact_path_in_chunks_of_any_length_matches_lsim(monkeypatch, length):
    # The exact path scans each chunk in blocks of 16 samples, pads a chunk that is not a
    # multiple of 16 and chains block ends one level up (two levels past 256 samples, three past
    # 4096). Chunks of 5 (one short block), 37 (padded), 304 (two levels) and one chunk of the
    # whole run must all give scipy.signal.lsim's first-order-hold solution (independent
    # library) to 1e-9 K, and close the energy balance to rounding. Inputs: tables only (linear
    # between samples, which is what lsim assumes), knots on the output grid.
    from rcsim.transient.exact import ExactPropagator

    monkeypatch.setattr(ExactPropagator, "chunk_length", lambda self: length)
    rng = np.random.default_rng(5)
    net = rcsim.Network()
    for i in range(12):
        net.add_node(f"n{i}", capacity=float(rng.uniform(1e3, 1e5)), initial=float(20 + i))
    hours = np.arange(0, 9) * 3600.0
    net.add_boundary("a", temperature=rcsim.Table(hours, rng.uniform(-5, 35, hours.size)))
    net.add_boundary("b", temperature=12.0)
    net.add_link("a", "n0", resistance=0.2)
    for i in range(11):
        net.add_link(f"n{i}", f"n{i + 1}", resistance=float(rng.uniform(0.01, 0.5)))
    net.add_link("n11", "b", resistance=0.3)
    net.add_source("n6", power=rcsim.Table([0, 28800], [0.0, 80.0]))
    res = net.simulate("8 h", "50 s", solver="exact")
    asm = net.assemble()
    n = asm.n_nodes
    A = -(1 / asm.capacity)[:, None] * asm.K.toarray()
    B = (1 / asm.capacity)[:, None] * np.hstack([asm.B.toarray(), asm.P.toarray()])
    t = res.time
    U = np.column_stack([p.value(t) for p in asm.boundary_profiles + asm.source_profiles])
    _, _, x = sig.lsim((A, B, np.eye(n), np.zeros((n, B.shape[1]))), U, t,
                       X0=asm.initial, interp=True)
    assert t.size == 577
    assert np.abs(x - res.temperatures.to_numpy()).max() < 1e-9
    assert res.energy_balance < 1e-12


@pytest.mark.parametrize("solver, tol", [("stiff", 1e-4), ("piecewise", 1e-9)])
def test_other_paths_match_the_exact_path(solver, tol):
    # a 20-node network with a ramp, a step and a source: the stiff path to its tolerance (rtol
    # and atol 1e-8 on temperatures of tens of degC: 1e-4 K is common practice for the global
    # error of a BDF run), the piecewise path (closed form between events, none here) to
    # rounding
    net = _random_network()
    a = net.simulate("24 h", "5 min", solver="exact")
    b = net.simulate("24 h", "5 min", solver=solver, rtol=1e-8, atol=1e-8)
    assert np.abs(a.temperatures.to_numpy() - b.temperatures.to_numpy()).max() < tol
    np.testing.assert_allclose(a.heat_flows.to_numpy(), b.heat_flows.to_numpy(), atol=10 * tol)


def test_energy_balance_closes():
    net = _random_network()
    exact = net.simulate("24 h", "5 min", solver="exact")
    stiff = net.simulate("24 h", "5 min", solver="stiff")
    # exact path: stored and exchanged energies from independent closed-form kernels agree to
    # rounding; stiff path: to its default tolerances (rtol 1e-6, common practice)
    assert exact.energy_balance < 1e-9
    assert stiff.energy_balance < 1e-6
    # the energy table agrees with itself: stored = in through links + sources at every sample
    e = exact.energy
    inflow = e.filter(like="link:").sum(axis=1) + e.filter(like="source:").sum(axis=1)
    scale = np.abs(e["stored"]).max()
    assert np.abs(e["stored"] - inflow).max() < 1e-9 * scale


def test_step_off_the_output_grid_is_taken_at_its_time():
    # a power step at 1000 s with 600 s outputs; analytic single-node response to a delayed step
    C, R, Q, t0 = 3000.0, 2.0, 10.0, 1000.0
    net = single_node(C, R, Ti=0.0, ambient=0.0, power=rcsim.Steps([0, t0], [0.0, Q]))
    res = net.simulate("3 h", "10 min", solver="exact")
    t = res.time
    expected = np.where(t > t0, Q * R * (1 - np.exp(-(t - t0) / (R * C))), 0.0)
    np.testing.assert_allclose(res.temperatures["x"], expected, atol=1e-10)


def test_massless_node_is_eliminated_exactly():
    # a massless junction between two resistances acts as their sum
    a = rcsim.Network()
    a.add_node("x", capacity=1000.0, initial=0.0)
    a.add_node("j", capacity=0.0)
    a.add_boundary("amb", temperature=10.0)
    a.add_link("x", "j", resistance=1.0)
    a.add_link("j", "amb", resistance=3.0)
    res = a.simulate("2 h", "1 min")
    t = res.time
    T = 10 * (1 - np.exp(-t / (4.0 * 1000.0)))
    np.testing.assert_allclose(res.temperatures["x"], T, atol=1e-10)
    # the junction sits at the resistance-weighted point between x and amb
    np.testing.assert_allclose(res.temperatures["j"], T + (10 - T) * 1 / 4, atol=1e-10)


def test_steady_initial_state_does_not_move():
    # the steady state solves K T = B u + P s, so dT/dt = 0 at t = 0 (closed form): the first
    # sample is the steady state to rounding
    net = _random_network()
    res = net.simulate("10 min", "1 min", initial="steady")
    st = net.steady()
    np.testing.assert_allclose(res.temperatures.iloc[0], st.temperatures, atol=1e-9)


def test_time_constants():
    # single node: tau = RC
    assert single_node(8400.0, 2.5).time_constants()[0] == pytest.approx(21000.0, rel=1e-12)
    # two nodes in a chain to ground: eigenvalues of C^-1 K from the quadratic formula
    C1, C2, R1, R2 = 1000.0, 3000.0, 0.5, 2.0
    net = rcsim.Network()
    net.add_node("a", capacity=C1, initial=0)
    net.add_node("b", capacity=C2, initial=0)
    net.add_boundary("g", temperature=0)
    net.add_link("a", "g", resistance=R1)
    net.add_link("a", "b", resistance=R2)
    k11, k12, k22 = 1 / R1 + 1 / R2, -1 / R2, 1 / R2
    a11, a12, a21, a22 = k11 / C1, k12 / C1, k12 / C2, k22 / C2
    tr, det = a11 + a22, a11 * a22 - a12 * a21
    lam = np.array([(tr - math.sqrt(tr * tr - 4 * det)) / 2, (tr + math.sqrt(tr * tr - 4 * det)) / 2])
    np.testing.assert_allclose(net.time_constants(), 1 / lam, rtol=1e-12)
    table = net.modes()
    assert list(table.columns) == ["time_constant [s]", "time_constant [h]", "nodes"]
    assert table["nodes"].iloc[0].startswith("b")  # the slow mode lives in the big capacity


def test_doubling_capacities_doubles_time_constants():
    # tau scales with C for fixed K (the eigenproblem K v = lambda C v)
    net = _random_network()
    tau = net.time_constants()
    for node in net.nodes.values():
        node.capacity *= 2
    net.mark_changed()
    # lambda -> lambda / 2 exactly; 1e-9 allows for the eigensolver's rounding (common practice)
    np.testing.assert_allclose(net.time_constants(), 2 * tau, rtol=1e-9)


def test_floating_group_conserves_heat():
    # two nodes with no boundary and a 10 W source: mean temperature rises at Q / (C1 + C2)
    net = rcsim.Network()
    net.add_node("a", capacity=1000.0, initial=10.0)
    net.add_node("b", capacity=3000.0, initial=30.0)
    net.add_link("a", "b", resistance=0.5)
    net.add_source("a", power=10.0)
    for solver in PATHS:
        with pytest.warns(RcsimWarning, match="no path to any boundary"):   # issue 15
            res = net.simulate("1 h", "1 min", solver=solver)
        T = res.temperatures
        mean = (1000 * T["a"] + 3000 * T["b"]) / 4000
        # start (1000 * 10 + 3000 * 30) / 4000 = 25 degC (closed form); 1e-6 K covers the stiff
        # path's tolerance (common practice)
        np.testing.assert_allclose(mean, 25.0 + 10.0 * res.time / 4000, atol=1e-6)
        assert np.isinf(net.time_constants()[0])


def test_biot_warning_suggests_slices():
    # Bi = h L / k = 25 * 0.2 / 1.35 = 3.7 > 0.1: a lumped layer is not justified (the criterion
    # of Incropera et al., 6th ed., section 5.1)
    net = rcsim.Network()
    net.add_node("room", capacity=1e5, initial=20)
    net.add_boundary("out", temperature=0)
    net.add_link("room", "out", name="wall", parts=[
        {"convection": {"h": 8, "area": 10}},
        {"conduction": {"material": "concrete-medium", "thickness": "0.2 m", "area": 10,
                        "slices": 1}},
        {"convection": {"h": 25, "area": 10}},
    ])
    with pytest.warns(rcsim.errors.LumpedWarning, match="slices"):
        net.assemble()


def test_record_subset_and_duration_not_a_multiple_of_step():
    net = _random_network()
    res = net.simulate(1000.0, 300.0, record=["n3", "n4"])
    assert list(res.temperatures.columns) == ["n3", "n4"]
    # every 300 s from 0, and the end of the run (closed form of the grid)
    assert res.time.tolist() == [0.0, 300.0, 600.0, 900.0, 1000.0]
    assert list(res.heat_flows.columns) == ["n3-n4"]
    full = net.simulate(1000.0, 300.0)
    np.testing.assert_allclose(res.temperatures["n3"], full.temperatures["n3"], atol=1e-12)


def test_irregular_grid_with_steps_matches_regular_grid():
    net = _random_network()
    regular = net.simulate("6 h", "1 min")
    rng = np.random.default_rng(11)
    times = np.unique(np.concatenate([rng.uniform(0, 21600, 500), regular.time[::7]]))
    irregular = net.simulate("6 h", "1 min", times=times)
    common = np.intersect1d(regular.time, irregular.time)
    a = regular.temperatures.loc[common].to_numpy()
    b = irregular.temperatures.loc[common].to_numpy()
    # the exact path is a closed form at any time: the same values to rounding
    assert np.abs(a - b).max() < 1e-9
    assert irregular.energy_balance < 1e-9


def test_time_constants_travel_with_the_result(tmp_path):
    net = single_node(8400.0, 2.5)
    res = net.simulate("1 h", "1 min")
    # tau = RC (lumped node)
    assert res.time_constants[0] == pytest.approx(21000.0)
    res.save(tmp_path / "r.h5")
    assert rcsim.Result.load(tmp_path / "r.h5").time_constants[0] == pytest.approx(21000.0)


def test_changing_a_history_frame_leaves_the_result_as_it_was():
    # res.temperatures hands out the run's history without copying it up front (pandas copies
    # on the first write): a caller's change must not reach the Result or later frames
    net = single_node(8400.0, 2.5)
    res = net.simulate("1 h", "1 min")
    first = res.temperatures
    before = first.to_numpy().copy()
    first.iloc[3, 0] = 1e6
    first["x"] += 5.0
    np.testing.assert_array_equal(res.temperatures.to_numpy(), before)
    flows = res.heat_flows
    flows.iloc[:, 0] = 0.0
    assert np.abs(res.heat_flows.to_numpy()).max() > 0


@pytest.mark.parametrize("knot", [False, True])
def test_exact_path_input_integrals_of_a_very_slow_sine(knot):
    """A source sine of period 1e9 s whose peak lies a quarter period away (the run sits at its
    zero crossing, where the two cosines of the antiderivative are both near +-1): each output
    interval's source energy against the integral by adaptive quadrature (scipy.integrate.quad,
    an independent library). The difference of cosines lost about 3e-6 of it; the product of
    sines keeps the digits. With a step input whose knot splits an interval (``knot``) the
    path takes its general formula on any grid; without, the uniform one."""
    from scipy.integrate import quad

    period, amplitude, peak = 1e9, 100.0, 2.5e8
    net = rcsim.Network()
    net.add_node("n", capacity=1e5, initial=20.0)
    net.add_boundary("b", temperature=20.0)
    net.add_link("n", "b", conductance=10.0)
    net.add_source("n", power=rcsim.Sine(mean=0.0, amplitude=amplitude, period=period,
                                         peak=peak), name="slow")
    if knot:
        net.add_source("n", power=rcsim.Steps([0.0, 1000.5], [0.0, 1.0]), name="step")
    res = net.simulate(duration=2 * 86400, step=600, solver="exact")
    w = 2 * np.pi / period
    t = res.energy.index.values
    got = np.diff(res.energy["source:slow"].values)
    ref = np.array([quad(lambda s: amplitude * np.cos(w * (s - peak)), a, b, epsabs=0,
                         epsrel=1e-13)[0] for a, b in zip(t[:-1], t[1:])])
    assert np.max(np.abs(got - ref) / np.abs(ref)) < 1e-9


@pytest.mark.parametrize("knot", [False, True])
def test_exact_path_state_integrals_of_a_very_slow_sine(knot):
    """The same node under a source sine of period 1e9 s at its zero crossing: the heat out
    through the link over each interval, G times the integral of T - T_b, against adaptive
    quadrature (scipy.integrate.quad) of the closed form of a first-order lag driven by a sine
    from rest (textbook, e.g. Ogata, Modern Control Engineering, forced response):
    theta(t) = (A/C) Im(e^(i phi) (e^(i w t) - e^(-t/tau)) / (1/tau + i w)).
    The factors (e^(iwh) - 1)/(iw) lost about 1.5e-4 of the imaginary part of the state
    integral's factor (energy balance 1e-9); written without cancelling differences the
    balance closes to 1e-13 and each interval's heat to 1e-9 of it."""
    from scipy.integrate import quad

    period, amplitude, peak, C, G = 1e9, 100.0, 2.5e8, 1e5, 10.0
    net = rcsim.Network()
    # at 0 degC: the heat is G times the integral of T_b - T, both of which would otherwise
    # carry 20 degC x 600 s and leave rounding of 1e-12 of that in a heat of 2e-3 J
    net.add_node("n", capacity=C, initial=0.0)
    net.add_boundary("b", temperature=0.0)
    net.add_link("n", "b", conductance=G, name="g")
    net.add_source("n", power=rcsim.Sine(mean=0.0, amplitude=amplitude, period=period,
                                         peak=peak), name="slow")
    if knot:       # a step off the grid: the general formula on any grid
        net.add_source("n", power=rcsim.Steps([0.0, 1000.5], [0.0, 1e-300]), name="step")
    res = net.simulate(duration=2 * 86400, step=600, solver="exact")
    w, tau = 2 * np.pi / period, C / G
    phi = np.pi / 2 - w * peak                  # A cos(w (t - peak)) = A sin(w t + phi)

    def theta(s):
        # e^(iwt) - e^(-t/tau) = (cos wt - 1) + (1 - e^(-t/tau)) + i sin wt, no cancellation
        rise = -2 * np.sin(0.5 * w * s) ** 2 - np.expm1(-s / tau) + 1j * np.sin(w * s)
        return (amplitude / C) * (np.exp(1j * phi) * rise / (1 / tau + 1j * w)).imag

    t = res.energy.index.values
    got = np.diff(res.energy["link:g"].values)
    ref = np.array([-G * quad(theta, a, b, epsabs=0, epsrel=1e-13)[0]
                    for a, b in zip(t[:-1], t[1:])])
    assert np.max(np.abs(got - ref) / np.abs(ref)) < 1e-9
    assert res.energy_balance < 1e-13


@pytest.mark.parametrize("dense_start", [120, 0])   # the dense and the sparse solve of the start
def test_unset_slices_start_on_the_steady_profile_between_given_nodes(monkeypatch, dense_start):
    import rcsim.transient.initial as initial

    monkeypatch.setattr(initial, "DENSE_START", dense_start)
    net = rcsim.Network()
    net.add_boundary("out", temperature=-5.0)
    net.add_node("a", capacity=1e4, initial=20.0)
    net.add_node("b", capacity=1e4, initial=0.0)
    net.add_link("b", "out", resistance=0.5)
    net.add_link("a", "b", parts=[{"conduction": {"material": "concrete-medium",
                                                  "thickness": 0.2, "area": 1, "slices": 4}}])
    res = net.simulate("1 h", "10 min")
    # steady conduction through a uniform layer (Fourier's law, textbook): the temperature falls
    # linearly with the resistance crossed; equal slices of R/4 with each node at its slice's
    # middle sit at (i + 1/2)/4 of the way from a (20 degC) to b (0 degC)
    start = res.temperatures.iloc[0]
    for i in range(4):
        assert start[f"a-b.{i + 1}"] == pytest.approx(20.0 - 20.0 * (i + 0.5) / 4, abs=1e-12)


def test_a_group_tied_to_no_given_node_and_no_boundary_cannot_start():
    # two massless nodes joined by a sliced layer and linked to nothing else: nothing fixes
    # their temperatures (K_UU is singular: a Laplacian block with no tie); they used to start
    # at 0 degC without a word beyond the floating-nodes warning
    net = rcsim.Network()
    net.add_boundary("out", temperature=10.0)
    net.add_node("m", capacity=1000.0, initial=20.0)
    net.add_link("m", "out", resistance=1.0)
    net.add_node("a", capacity=0.0)
    net.add_node("b", capacity=0.0)
    net.add_link("a", "b", parts=[{"conduction": {"material": "concrete-medium",
                                                  "thickness": 0.2, "area": 1, "slices": 3}}])
    with pytest.raises(NetworkError, match="cannot set the initial temperature of 'a'"):
        net.simulate("1 h", "10 min")


@pytest.mark.parametrize("scan_rows", [None, 10_000])
@pytest.mark.parametrize("length", [1, 3, 37, None])
def test_fast_modes_folded_into_the_outputs_keep_the_closed_form(monkeypatch, length, scan_rows):
    """Modes that decay below 1e-20 within J output intervals are not scanned: their states are
    their last J forcings, folded into the output products, with the start state's decay over
    the first J samples of each chunk. Independent nodes on one ramping boundary (time constants
    5 s to 400 s at 600 s outputs) against the closed form of a first-order lag on a ramp with a
    power step (textbook, e.g. Ogata, Modern Control Engineering, ramp response of a first-order
    system): T(t) = r (t - tau) + (T0 + r tau) e^(-t/tau) + R P (1 - e^(-(t - t1)/tau)) after
    t1. The cost rule takes two taps here; with scanning made dear (``scan_rows``) it takes
    eight, so modes with e^(-h/tau) up to 3e-3 are folded and their start state weighs in for
    several samples. Chunks of 1 and 3 intervals (shorter than the taps), 37 and the default.
    Stored energy against sum C (T - T0) of the closed form; a band crossed long after the
    start (hold time 30/r + tau); a node starting at 80 degC dips below 0.7 degC for a while
    (both crossings by brentq on the closed form, the second one between the samples where a
    folded mode's start state still counts)."""
    import rcsim.transient.exact_chunks as chunks
    from rcsim.transient.exact import ExactPropagator

    if length is not None:
        monkeypatch.setattr(ExactPropagator, "chunk_length", lambda self: length)
    if scan_rows is not None:
        monkeypatch.setattr(chunks, "SCAN_ROWS", scan_rows)
    tau = np.append(np.geomspace(5.0, 400.0, 24), 100.0)
    T0 = np.append(5.0 + np.arange(24), 80.0)
    rate, power, t1 = 1e-3, 50.0, 3600.0
    net = rcsim.Network()
    net.add_boundary("amb", temperature=rcsim.Table([0.0, 86400.0], [0.0, 86.4]))
    for i, (ti, t0) in enumerate(zip(tau, T0)):
        net.add_node(f"n{i}", capacity=float(ti), initial=float(t0))
        net.add_link("amb", f"n{i}", resistance=1.0)
    net.add_source("n7", power=rcsim.Steps([0.0, t1], [0.0, power]))
    net.add_limit("n3", max=30.0)
    net.add_limit("n8", max=30.0)
    net.add_limit("n24", min=0.7)
    res = net.simulate("1 d", "10 min", solver="exact")

    def closed_form(t):
        t = np.asarray(t, dtype=float)[:, None]
        T = rate * (t - tau) + (T0 + rate * tau) * np.exp(-t / tau)
        T[:, 7] += np.where(t[:, 0] >= t1, power * -np.expm1(-np.clip(t[:, 0] - t1, 0, None)
                                                              / tau[7]), 0.0)
        return T

    ref = closed_form(res.time)
    # rounding of temperatures of tens of degC: a few 1e-14 K (a fast mode's start state left
    # out of its first samples shows as 3e-10 K with two taps)
    assert np.abs(res.temperatures.to_numpy() - ref).max() < 1e-12
    assert res.energy_balance < 1e-13
    stored = (tau * (ref - T0)).sum(axis=1)                    # C = tau (R = 1 K/W)
    scale = np.abs(stored).max()
    assert np.abs(res.energy["stored"].to_numpy() - stored).max() < 1e-12 * scale
    limits = res.limits.set_index("node")
    assert limits.loc["n3", "hold_time [s]"] == pytest.approx(30.0 / rate + tau[3], abs=1e-6)
    assert limits.loc["n8", "hold_time [s]"] == pytest.approx(30.0 / rate + tau[8], abs=1e-6)
    dip = lambda t: closed_form([t])[0, 24] - 0.7                # noqa: E731
    down, up = brentq(dip, 0.0, 670.0, xtol=1e-12), brentq(dip, 670.0, 1200.0, xtol=1e-12)
    assert 600.0 < up                                           # the second interval
    assert limits.loc["n24", "hold_time [s]"] == pytest.approx(down, abs=1e-6)
    assert limits.loc["n24", "time_out [s]"] == pytest.approx(up - down, abs=1e-6)
    # the run took the fast modes this test is about: two taps (eight when scanning is dear),
    # some modes scanned
    J, fast = chunks.fast_taps(np.exp(-600.0 / tau), 4, 2 * tau.size + 1)
    assert J == (2 if scan_rows is None else 8) and 0 < fast.sum() < tau.size
    assert fast[24] == (scan_rows is not None)


def test_a_table_denser_than_the_output_keeps_chunks_bounded_and_the_answer_exact():
    # A CSV or table sampled every 0.5 s under 60 s output: the exact path's general closed form
    # works on every sub-interval, so a chunk must count the knots inside its intervals (each
    # 60 s interval holds 119 of them: 120 pieces), not only its output intervals.
    from rcsim.transient.problem import build_problem
    from rcsim.transient.exact_chunks import ModalRunner

    tau = 300.0                                    # C R of one node against the table
    t_tab = np.arange(0.0, 3 * 3600.0 + 0.5, 0.5)
    u = 20.0 + 5.0 * np.sin(2 * np.pi * t_tab / 3600.0)
    net = rcsim.Network()
    net.add_boundary("out", temperature=rcsim.Table(t_tab, u))
    net.add_node("n", capacity=tau, initial=20.0)
    net.add_link("out", "n", resistance=1.0)
    problem = build_problem(net, "3 h", "1 min", initial="given")
    prop = problem.propagator
    runner = ModalRunner(prop, np.eye(1), np.zeros((1, 1)), np.eye(1), np.zeros((1, 1)),
                         np.ones(1))
    runner.plan(problem.times)
    assert runner.chunk_end(0, 1200) == 10         # 10 intervals x 120 pieces = 1200
    assert runner.chunk_end(0, 100) == 1           # never less than one interval
    assert runner.chunk_end(170, 1200) == 180      # the run ends at interval 180
    # the run itself against scipy.signal.lsim on the table's own grid (first-order hold is
    # exact for a piecewise-linear input: independent reference)
    res = net.simulate("3 h", "1 min", initial="given")
    _, y, _ = sig.lsim(([-1.0 / tau], [1.0 / tau], [1.0], [0.0]), u, t_tab, X0=[20.0],
                       interp=True)
    assert np.abs(res.temperatures["n"].to_numpy() - y[::120]).max() < 1e-9
