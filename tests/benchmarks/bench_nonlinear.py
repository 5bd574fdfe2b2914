"""Benchmark of the nonlinear stiff path (issue: nonlinear physics).

The bundled insulated shipper (two phase-change packs, radiation inside, a correlation film and
radiation outside), 72 h under a daily sine. rcsim against the same model integrated by scipy's
solve_ivp (BDF) with a finite-difference Jacobian (target >= 5x faster), two ways:

1. the model written out by hand link by link, as one would without rcsim (scalar Python, the
   Churchill-Chu correlation from the `ht` library); this also checks rcsim's physics
   independently: the hold-time difference is printed;
2. rcsim's own vectorised right-hand side with the Jacobian left to finite differences, which
   isolates what the analytic Jacobian is worth (little at 6 states: BDF re-uses its Jacobian).

Run:  python tests/benchmarks/bench_nonlinear.py
"""

from __future__ import annotations

import os
import sys
import time

import numpy as np
from scipy.integrate import solve_ivp

import rcsim
from rcsim.limits import excursion_stats
from rcsim.transient.stiff import StiffModel
from rcsim.nonlinear import build_terms

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, ".."))
from shipper_by_hand import hand_written_box  # noqa: E402  (tests/shipper_by_hand.py)
SCENARIO = os.path.join(HERE, "..", "..", "scenarios", "cold-box.toml")


def best_of(repeats, func):
    func()
    times, out = [], None
    for _ in range(repeats):
        t0 = time.perf_counter()
        out = func()
        times.append(time.perf_counter() - t0)
    return min(times), out


def main():
    sc = rcsim.load(SCENARIO)
    net = sc.network
    t_rcsim, res = best_of(3, sc.run)
    hold_rcsim = res.limits.set_index("kind").loc["max", "hold_time [s]"]

    asm = net.assemble()
    terms, phase, ctrl = build_terms(net, asm, [])
    model = StiffModel(asm, terms, phase, ctrl)
    T0 = asm.initial[model.ss.massive]
    y0 = model.y0(T0)
    t_eval = res.time
    atol = np.concatenate([1e-6 * model.C, np.full(model.ny - model.n, 1e-6 * model.C.sum())])

    def run_fd():
        return solve_ivp(model.rhs, (0.0, t_eval[-1]), y0, method="BDF", t_eval=t_eval,
                         rtol=1e-6, atol=atol)

    t_fd, sol = best_of(1, run_fd)
    Tm = np.column_stack([model.temperatures(y[:model.n])[0] for y in sol.y.T]).T
    k = list(asm.node_names).index("payload")
    pos = list(model.ss.massive).index(k)
    hold_fd = excursion_stats(sol.t, Tm[:, pos], 8.0, "max")["hold_time [s]"]
    rhs, y_hand, c_pay = hand_written_box()
    scale = np.array([c_pay, 4000, 4000, 100, 2500, 1200.0])
    t_hand, sol_hand = best_of(1, lambda: solve_ivp(rhs, (0.0, t_eval[-1]), y_hand, method="BDF",
                                                    t_eval=t_eval, rtol=1e-6, atol=1e-6 * scale))
    hold_hand = excursion_stats(sol_hand.t, sol_hand.y[0] / c_pay, 8.0, "max")["hold_time [s]"]
    print(f"insulated shipper, 72 h at 5 min output, {model.n} states, phase change + radiation + "
          "correlation film")
    print(f"  the model by hand, solve_ivp BDF + finite-difference Jacobian {t_hand:7.3f} s   "
          f"hold time {hold_hand / 3600:.4f} h")
    print(f"  -> ratio {t_hand / t_rcsim:.1f}x (target >= 5x); hold-time difference "
          f"{abs(hold_hand - hold_rcsim):.1f} s (an independent check of the physics)")
    print(f"  rcsim stiff (analytic sparse Jacobian)   {t_rcsim:7.3f} s   hold time "
          f"{hold_rcsim / 3600:.4f} h")
    print(f"  rcsim's own right-hand side, solve_ivp BDF + finite-difference Jacobian {t_fd:7.3f} s"
          f"   hold time {hold_fd / 3600:.4f} h   (status {sol.status})")
    print(f"  -> ratio {t_fd / t_rcsim:.1f}x (what the analytic Jacobian alone is worth here); "
          f"hold-time difference "
          f"{abs(hold_fd - hold_rcsim):.1f} s; max |dT| payload "
          f"{np.abs(Tm[:, pos] - res.temperatures['payload'].to_numpy()).max():.2e} K")


if __name__ == "__main__":
    main()
