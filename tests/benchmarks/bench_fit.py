"""Benchmark of fitting (issue 9): three days of one-minute data, two or three free values.

1. A heated block in a room whose air temperature is logged (drives the model); capacity,
   skin resistance and starting temperature free. rcsim.fit (exact modal path, decomposition
   reused for the starting temperature) against a naive fit written here: the same
   least_squares problem whose every evaluation rebuilds the scenario with
   ``Scenario.with_values(...)`` and runs ``network.simulate`` (target: a few seconds for
   rcsim, and faster than the naive fit).
2. Newton cooling toward a constant ambient (closed form): rcsim.fit of the resistance, ambient
   and start against scipy's curve_fit on the closed-form exponential (the floor: no model run
   at all). Both must agree.
3. The Kalman filter of a one-node record (issue 20): rcsim's filter (covariances jumped over
   once settled, state estimates by one recurrence) against the textbook scalar recursion in
   plain Python floats, on the same rows; both give the same log-likelihood.
4. A fit with process noise (Kalman filter, maximum likelihood) against the deterministic fit
   of the same record.
5. Identification: one model run of a two-node structure by the direct linear model against
   the engine's exact path (the same numbers), and a whole forward selection.

Run:  python tests/benchmarks/bench_fit.py [--quick]
Ratios are measured in one run on the same machine; absolute times are only indicative.
"""

from __future__ import annotations

import argparse
import warnings

import numpy as np
import pandas as pd
import scipy.signal as sig
from scipy.optimize import curve_fit, least_squares

import rcsim
from timing import best_of  # tests/benchmarks/timing.py

BLOCK = """
[nodes.block]
capacity = "1.2 kJ/K"
initial = "10 degC"
[boundaries.room]
temperature = "20 degC"
[links.skin]
between = ["block", "room"]
resistance = "1 K/W"
[sources.resistor]
node = "block"
power = {{ steps = {{ at = {at}, values = {values}, repeat = "24 h" }} }}
"""
C, R, T0 = 1794.0, 1.5, 6.0


def heated_block_log(days: float):
    t = np.arange(0.0, days * 86400.0 + 1.0, 60.0)
    room = 20.0 + 2.0 * np.sin(2 * np.pi * t / 86400.0)
    at, values = [0.0, 3 * 3600.0, 7 * 3600.0], [0.0, 8.0, 0.0]
    # reference by scipy.signal.lsim on a 10-s grid, the heater as held steps
    tf = np.arange(0.0, t[-1] + 1.0, 10.0)
    P = np.where((tf % 86400.0 >= at[1]) & (tf % 86400.0 < at[2]), 8.0, 0.0)
    roomf = 20.0 + 2.0 * np.sin(2 * np.pi * tf / 86400.0)
    system = sig.StateSpace([[-1 / (R * C)]], [[1 / (R * C), 1 / C]], [[1.0]], [[0.0, 0.0]])
    _, y, _ = sig.lsim(system, np.column_stack([roomf, P]), tf, X0=[T0], interp=False)
    y = y[::6]
    y = y + np.random.default_rng(0).normal(0.0, 0.05, y.size)
    sc = rcsim.loads(BLOCK.format(at=at, values=values))
    return sc, pd.DataFrame({"time": t, "block": y, "room": room})


FREE = ["nodes.block.capacity", "links.skin.resistance", "nodes.block.initial"]


def naive_fit(sc, log):
    """least_squares where every evaluation is with_values(...) + simulate (no reuse)."""
    t = log["time"].to_numpy()
    y = log["block"].to_numpy()
    table = {"table": {"times": t.tolist(), "values": log["room"].tolist()}}

    def model(x):
        c, r, t0 = np.exp(x[0]), np.exp(x[1]), x[2]
        s = sc.with_values({"nodes.block.capacity": c, "links.skin.resistance": r,
                            "nodes.block.initial": t0, "boundaries.room.temperature": table})
        res = s.network.simulate(float(t[-1]), 60.0, record=["block"])
        return res.temperatures["block"].to_numpy() - y

    x0 = [np.log(1200.0), np.log(1.0), float(y[0])]
    out = least_squares(model, x0, method="trf", x_scale="jac")
    return np.exp(out.x[0]), np.exp(out.x[1]), out.x[2], out.nfev + out.njev * 3




def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="one day instead of three")
    args = ap.parse_args()
    days = 1.0 if args.quick else 3.0
    warnings.simplefilter("ignore")

    sc, log = heated_block_log(days)
    print(f"1. heated block, {len(log)} one-minute rows ({days:g} days), free: "
          + ", ".join(FREE))
    t_fit1, res1 = best_of(2, lambda: rcsim.fit(sc, log, FREE, starts=1), warmup=False)
    t_fit4, res4 = best_of(1, lambda: rcsim.fit(sc, log, FREE, starts=4), warmup=False)
    t_naive, naive = best_of(1, lambda: naive_fit(sc, log), warmup=False)
    est = res1.estimates["value"]
    print(f"   rcsim.fit, 1 start : {t_fit1:7.2f} s  ({res1.n_evaluations} model runs, "
          f"{res1.n_decompositions} decompositions)")
    print(f"   rcsim.fit, 4 starts: {t_fit4:7.2f} s  ({res4.n_evaluations} model runs)")
    print(f"   naive with_values + simulate per evaluation: {t_naive:7.2f} s  "
          f"(~{naive[3]} model runs)")
    print(f"   speed-up of rcsim.fit (1 start) over the naive fit: {t_naive / t_fit1:6.1f}x")
    print(f"   estimates rcsim C={est.iloc[0]:.2f} J/K R={est.iloc[1]:.5f} K/W "
          f"T0={est.iloc[2]:.4f} degC; naive C={naive[0]:.2f} R={naive[1]:.5f} "
          f"T0={naive[2]:.4f}; truth C={C} R={R} T0={T0}")

    # 2. closed form, constant ambient
    t = log["time"].to_numpy()
    Ta = 22.0
    y = Ta + (60.0 - Ta) * np.exp(-t / (R * C)) + np.random.default_rng(1).normal(0, 0.05,
                                                                                  t.size)
    sc2 = rcsim.loads(BLOCK.format(at=[0.0], values=[0.0]).replace('capacity = "1.2 kJ/K"',
                                                                    f"capacity = {C}"))
    free2 = ["links.skin.resistance", "boundaries.room.temperature", "nodes.block.initial"]
    log2 = pd.DataFrame({"time": t, "block": y})
    t_r, res2 = best_of(3, lambda: rcsim.fit(sc2, log2, free2, starts=1), warmup=False)

    def closed(tt, r, ta, t0):
        return ta + (t0 - ta) * np.exp(-tt / (r * C))

    t_c, (p, _) = best_of(3, lambda: curve_fit(closed, t, y, p0=[1.0, 20.0, 55.0]), warmup=False)
    print(f"2. Newton cooling, {len(t)} rows, free: " + ", ".join(free2))
    print(f"   rcsim.fit: {t_r:.3f} s ({res2.n_evaluations} model runs, "
          f"{res2.n_decompositions} decompositions);  curve_fit on the closed form: {t_c:.4f} s;"
          f"  ratio rcsim/closed form {t_r / t_c:.0f}x")
    d = np.max(np.abs(res2.estimates["value"].to_numpy() - p) / np.abs(p))
    print(f"   largest relative difference of the estimates: {d:.1e}")


def scalar_filter(r, t, a, sigma2, s2, P0):
    """The textbook scalar filter in floats (the baseline of part 3)."""
    import math

    x, P, loglik = 0.0, P0, 0.0
    for k in range(len(r)):
        S = P + s2
        e = r[k] - x
        gain = P / S
        loglik += -0.5 * (math.log(2 * math.pi * S) + e * e / S)
        x, P = x + gain * e, (1 - gain) * P
        if k < len(r) - 1:
            phi = math.exp(a * (t[k + 1] - t[k]))
            x, P = phi * x, phi * P * phi + sigma2 * (1 - phi * phi) / (-2 * a)
    return loglik


def kalman_parts(days: float) -> None:
    from rcsim.fitting.kalman import kalman_filter

    t = np.arange(0.0, days * 86400.0 + 1.0, 60.0)
    r = np.random.default_rng(3).normal(0.0, 0.3, t.size)
    a, sigma2, s2 = -1.0 / 3000.0, 1e-4, 0.01
    args = (r[:, None], np.ones((t.size, 1), bool), t, np.array([[a]]), np.array([[1.0]]),
            np.array([sigma2]), np.array([s2]), np.array([[0.05]]))
    t_k, out = best_of(5, lambda: kalman_filter(*args))
    t_s, ll = best_of(2, lambda: scalar_filter(r, t, a, sigma2, s2, 0.05))
    print(f"3. Kalman filter, one node, {t.size} rows: rcsim {t_k * 1e3:.2f} ms, scalar loop "
          f"{t_s * 1e3:.1f} ms, ratio {t_s / t_k:.1f}x; log-likelihoods differ by "
          f"{abs(out.log_likelihood - ll):.1e}")


def process_noise_part(days: float) -> None:
    sc, log = heated_block_log(days)
    t_d, det = best_of(1, lambda: rcsim.fit(sc, log, FREE, starts=1), warmup=False)
    t_p, sto = best_of(1, lambda: rcsim.fit(sc, log, FREE, starts=1, noise="process"),
                       warmup=False)
    print(f"4. heated block, {len(log)} rows: deterministic fit {t_d:.2f} s, with process noise "
          f"{t_p:.2f} s ({t_p / t_d:.1f}x); capacity {det.estimates.iloc[0]['value']:.1f} and "
          f"{sto.estimates.iloc[0]['value']:.1f} J/K")


def identification_part() -> None:
    import sys
    import os

    sys.path.insert(0, os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
    from test_identify import truth_log  # the synthetic two-node room of the tests

    from rcsim.fitting.candidates import FitSpec
    from rcsim.fitting.procedure import read_for
    from rcsim.fitting.linear import LinearModel
    from rcsim.fitting.model import Model
    from rcsim.fitting.parameters import make_parameters

    log = truth_log(2, seed=0)
    res = rcsim.identify(log, measured="indoor", drivers=["heater [W]"], ambient="outdoor",
                         max_nodes=3)
    sc = res.selected
    lg = read_for(sc, log, FitSpec(columns=res.columns))
    params = make_parameters(sc, res.free, None, lg)
    fast, engine = LinearModel(sc, lg, params), Model(sc, lg, params, "auto")
    values = list(res.fit.estimates["value"] * 1.01)  # a value set neither has cached
    t_f, _ = best_of(20, lambda: fast.outputs(values))
    bumps = iter(range(1, 1000))
    t_e, _ = best_of(5, lambda: engine.outputs([v * (1 + 1e-6 * next(bumps)) for v in values]),
                     warmup=False)
    diff = np.abs(fast.outputs(values) - engine.outputs(values)).max()
    t_i, _ = best_of(1, lambda: rcsim.identify(log, measured="indoor", drivers=["heater [W]"],
                                               ambient="outdoor", max_nodes=3), warmup=False)
    print(f"5. two-node room, {len(log)} rows: one model run with new capacities, direct model "
          f"{t_f * 1e3:.2f} ms, engine (rebuild and decomposition) {t_e * 1e3:.2f} ms, ratio "
          f"{t_e / t_f:.1f}x (largest difference {diff:.0e} K);"
          f" identify ({len(res.steps)} structures) {t_i:.2f} s")


if __name__ == "__main__":
    main()
    quick = "--quick" in __import__("sys").argv
    kalman_parts(1.0 if quick else 3.0)
    process_noise_part(0.5 if quick else 1.0)
    identification_part()
