"""Heat flows through stiff links on the stiff path, against closed forms.

A link whose conductance G is large against the capacity it feeds (C/G of milliseconds) carries
a flow G*dT across a temperature difference far below the solver's tolerance on stored energy:
read as G times the recorded difference it would carry the tolerance times G as error. The
stiff path reads such flows from the balance of the node they feed instead.
"""

import numpy as np
import pytest

import rcsim

MEAN, AMPLITUDE, PERIOD, PEAK = 25.0, 7.0, 86400.0, 15 * 3600.0


def first_order(t, C, G, P, T0):
    """Node C [J/K] linked by G [W/K] to MEAN + AMPLITUDE*cos(w (t - PEAK)), heated by P [W],
    starting at T0: temperature and the link's flow from node to boundary.

    Source: analytic, first-order linear ODE (C dT/dt = G (Tb - T) + P; periodic part by the
    complex amplitude 1/(1 + i w tau), transient exp(-t/tau))."""
    tau, w = C / G, 2 * np.pi / PERIOD
    periodic = lambda s: MEAN + P / G + AMPLITUDE * np.real(  # noqa: E731
        np.exp(1j * w * (s - PEAK)) / (1 + 1j * w * tau))
    T = periodic(t) + (T0 - periodic(0.0)) * np.exp(-t / tau)
    Tb = MEAN + AMPLITUDE * np.cos(w * (t - PEAK))
    return T, G * (T - Tb)


def stiff_node(C, G, P, T0):
    net = rcsim.Network()
    net.add_node("payload", capacity=C, initial=T0)
    net.add_boundary("outdoor", temperature=rcsim.Sine(mean=MEAN, amplitude=AMPLITUDE,
                                                       period=PERIOD, peak=PEAK))
    net.add_link("payload", "outdoor", conductance=G, name="film")
    net.add_source("payload", power=P)
    return net


@pytest.mark.parametrize("tau", [1e-3, 1e-2])
def test_stiff_link_flow_follows_the_closed_form(tau):
    C, P, T0 = 1000.0, 100.0, 25.0
    G = C / tau
    res = stiff_node(C, G, P, T0).simulate(duration=86400, step=600, solver="stiff")
    t = res.heat_flows.index.values
    T_ref, q_ref = first_order(t, C, G, P, T0)   # analytic, first-order linear ODE
    q = res.heat_flows["film"].values
    # the flow's swing about P is C*A*w/|1 + i w tau| ~ 0.51 W (analytic, as above): the error
    # must be small against that swing, not only against the 100 W mean
    swing = C * AMPLITUDE * (2 * np.pi / PERIOD)
    assert np.max(np.abs(q - q_ref)) < 0.01 * swing
    assert np.max(np.abs(res.temperatures["payload"].values - T_ref)) < 1e-4
    assert res.energy_balance < 1e-9


def test_two_stiff_links_in_series_and_a_slow_one():
    """A node held between two stiff links (boundary - a - b) with a slow link from b to a
    second boundary: every flow from the steady state of a constant case plus the sine
    (solved as linear ODEs by complex amplitudes: analytic, first-order linear ODE system)."""
    C, P = 1000.0, 50.0
    G1, G2, G3 = 1e6, 1e6, 10.0
    net = rcsim.Network()
    net.add_node("a", capacity=C, initial=0.0)
    net.add_node("b", capacity=C, initial=0.0)
    net.add_boundary("out", temperature=rcsim.Sine(mean=MEAN, amplitude=AMPLITUDE,
                                                   period=PERIOD, peak=PEAK))
    net.add_boundary("room", temperature=20.0)
    net.add_link("out", "a", conductance=G1, name="l1")
    net.add_link("a", "b", conductance=G2, name="l2")
    net.add_link("b", "room", conductance=G3, name="l3")
    net.add_source("b", power=P)
    res = net.simulate(duration=4 * 86400, step=900, solver="stiff")
    t = res.heat_flows.index.values
    # the linear system C dT/dt = -K T + e: steady part + periodic part (complex amplitudes);
    # the transient (slowest time constant C/(G3) ~ 100 s with the stiff pair ~ 200 s) has died
    # after 1 day, so only later samples are compared
    K = np.array([[G1 + G2, -G2], [-G2, G2 + G3]])
    steady = np.linalg.solve(K, [G1 * MEAN, G3 * 20.0 + P])
    w = 2 * np.pi / PERIOD
    amp = np.linalg.solve(K + 1j * w * C * np.eye(2), [G1 * AMPLITUDE, 0.0])
    ph = np.exp(1j * w * (t - PEAK))
    Ta = steady[0] + np.real(amp[0] * ph)
    Tb = steady[1] + np.real(amp[1] * ph)
    Tout = MEAN + AMPLITUDE * np.cos(w * (t - PEAK))
    ref = {"l1": G1 * (Tout - Ta), "l2": G2 * (Ta - Tb), "l3": G3 * (Tb - 20.0)}
    late = t > 86400
    swing = C * AMPLITUDE * w      # the stored-energy rate's swing of one node [W]
    for name, q_ref in ref.items():
        err = np.max(np.abs(res.heat_flows[name].values[late] - q_ref[late]))
        assert err < 0.02 * swing, (name, err)
    assert res.energy_balance < 1e-9
