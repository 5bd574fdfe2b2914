"""Benchmark of the nonlinear paths (issue: nonlinear physics).

The bundled insulated shipper (two phase-change packs, radiation inside, a correlation film and
radiation outside), 72 h at 5 min under a daily sine. rcsim against the same model integrated by
scipy's solve_ivp (BDF) with a finite-difference Jacobian (target >= 5x faster):

1. rcsim's own right-hand side of the model (the network in energy form, vectorised numpy) given
   to solve_ivp with the Jacobian left to finite differences: the same model, the same code for
   the physics, a general-purpose integrator. This is the ratio the target is read against.
2. the model written out by hand link by link (tests/shipper_by_hand.py: scalar Python, `ht`'s
   Churchill-Chu), as one would without rcsim: the leanest Python right-hand side there is for
   six states. Printed too, with the hold-time difference (an independent check of the physics).

rcsim runs the default path for a nonlinear network (piecewise-exact: closed form between events,
waveform relaxation for radiation and films) and, for reference, its stiff path. Accuracy of all
against the hand-written model integrated by Radau at rtol 1e-10. A second case slices the foam
into 10 layers (24 states), where the hand-written form no longer exists.

Run:  python tests/benchmarks/bench_nonlinear.py
"""

from __future__ import annotations

import os
import sys

import numpy as np
from scipy.integrate import solve_ivp

import rcsim
from rcsim.limits import excursion_stats
from rcsim.nonlinear import build_terms
from rcsim.transient.energy_model import EnergyModel
from rcsim.transient.initial import given_temperatures

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, ".."))
from shipper_by_hand import hand_written_box  # noqa: E402  (tests/shipper_by_hand.py)
from timing import best_of  # noqa: E402  (tests/benchmarks/timing.py)

SCENARIO = os.path.join(HERE, "..", "..", "scenarios", "cold-box.toml")




def own_rhs_fd(net, t_eval, rtol=1e-6, atol=1e-6):
    """rcsim's right-hand side of ``net`` integrated by solve_ivp BDF, finite-difference Jacobian.

    Returns (seconds, payload temperatures, status)."""
    asm = net.assemble()
    model = EnergyModel(asm, *build_terms(net, asm, []))
    T0 = given_temperatures(net, asm, {}, asm.boundary_values(0.0))   # as rcsim starts a run
    y0 = model.y0(T0[model.ss.massive])
    atol_v = np.concatenate([atol * model.C, np.full(model.ny - model.n, atol * model.C.sum())])

    def run():
        return solve_ivp(model.rhs, (0.0, t_eval[-1]), y0, method="BDF", t_eval=t_eval,
                         rtol=rtol, atol=atol_v)

    seconds, sol = best_of(3, run)
    pos = list(model.ss.massive).index(list(asm.node_names).index("payload"))
    Tm = np.array([model.temperatures(y[:model.n])[0][pos] for y in sol.y.T])
    return seconds, Tm, sol.status


def hold(t, T):
    return excursion_stats(t, T, 8.0, "max")["hold_time [s]"]


def main():
    sc = rcsim.load(SCENARIO)
    t_pw, res = best_of(5, sc.run)
    t_st, res_st = best_of(3, lambda: sc.run(solver="stiff"))
    assert res.meta["solver"].startswith("piecewise"), res.meta["solver"]
    t = res.time
    # reference: the hand-written model, Radau at rtol 1e-10
    rhs, y_hand, c_pay = hand_written_box()
    scale = np.array([c_pay, 4000, 4000, 100, 2500, 1200.0])
    ref = solve_ivp(rhs, (0.0, t[-1]), y_hand, method="Radau", t_eval=t, rtol=1e-10,
                    atol=1e-10 * scale)
    T_ref = ref.y[0] / c_pay
    h_ref = hold(t, T_ref)
    t_own, T_own, status = own_rhs_fd(sc.network, t)
    t_hand, sol_hand = best_of(3, lambda: solve_ivp(rhs, (0.0, t[-1]), y_hand, method="BDF",
                                                    t_eval=t, rtol=1e-6, atol=1e-6 * scale))
    T_hand = sol_hand.y[0] / c_pay
    info = res.run_info
    print(f"insulated shipper, 72 h at 5 min output, {info.states} states: two phase-change "
          "packs, radiation inside and out, a correlation film (rtol = atol = 1e-6 throughout)")
    print(f"  {'':58s} {'time':>8s}   {'hold time':>11s}   {'max |dT| payload':>16s}")

    def row(label, sec, T):
        print(f"  {label:58s} {sec:7.3f}s   {hold(t, T) / 3600:9.4f} h   "
              f"{np.abs(T - T_ref).max():12.2e} K")

    row("rcsim, piecewise-exact path (the default here)", t_pw,
        res.temperatures["payload"].to_numpy())
    row("rcsim, stiff path (BDF, analytic sparse Jacobian)", t_st,
        res_st.temperatures["payload"].to_numpy())
    row(f"same model (rcsim's RHS), solve_ivp BDF + FD Jacobian [{status}]", t_own, T_own)
    row("model written by hand, solve_ivp BDF + FD Jacobian", t_hand, T_hand)
    print(f"  reference: the hand-written model, Radau rtol 1e-10: hold time {h_ref / 3600:.4f} h")
    print(f"  -> piecewise vs the same model in solve_ivp + FD Jacobian: {t_own / t_pw:5.1f}x "
          "(target >= 5x)")
    print(f"  -> piecewise vs the model written by hand in solve_ivp:     {t_hand / t_pw:5.1f}x")
    print(f"  -> piecewise vs rcsim's stiff path:                         {t_st / t_pw:5.1f}x")
    print(f"     piecewise: {info.stats.sweeps} sweeps, {info.stats.events} events, "
          f"{info.stats.grid_points} grid "
          f"points, energy balance {res.energy_balance:.1e}")
    # at equal accuracy: tighten the baseline until its error is no larger than rcsim's
    err_pw = np.abs(res.temperatures["payload"].to_numpy() - T_ref).max()
    for tol in (1e-7, 3e-8, 1e-8, 3e-9):
        t_eq, T_eq, _ = own_rhs_fd(sc.network, t, rtol=tol, atol=tol)
        err_eq = np.abs(T_eq - T_ref).max()
        if err_eq <= err_pw:
            break
    print(f"  -> at equal accuracy (the same model in solve_ivp at rtol = atol = {tol:.0e}: "
          f"{t_eq:.3f}s, max |dT| {err_eq:.1e} K): {t_eq / t_pw:.1f}x")

    with open(SCENARIO, encoding="utf-8") as fh:
        text = fh.read()
    old = 'thickness = "50 mm", area = "1.05 m^2" }'
    assert old in text
    sliced = rcsim.scenario.loads(text.replace(old, old[:-2] + ", slices = 10 }"),
                                  name="cold-box-sliced.toml", base_dir=os.path.dirname(SCENARIO))
    t_pw2, res2 = best_of(3, sliced.run)
    t_own2, T_own2, status2 = own_rhs_fd(sliced.network, t)
    T2 = res2.temperatures["payload"].to_numpy()
    print(f"\nthe same shipper with its foam in 10 slices: {res2.run_info.states} states")
    print(f"  rcsim, piecewise-exact path {t_pw2:7.3f}s   hold {hold(t, T2) / 3600:.4f} h")
    print(f"  same model, solve_ivp BDF + FD Jacobian {t_own2:7.3f}s   hold "
          f"{hold(t, T_own2) / 3600:.4f} h   max |dT| payload {np.abs(T2 - T_own2).max():.1e} K "
          f"[{status2}]")
    print(f"  -> ratio {t_own2 / t_pw2:.1f}x (target >= 5x)")


if __name__ == "__main__":
    main()
