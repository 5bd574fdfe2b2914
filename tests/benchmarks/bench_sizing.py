"""Benchmark of sizing (issue: sizing, answer the design question directly).

On the bundled cold-box shipper:

1. **Thickness for a 72 h hold** (no uncertainty, this process): ``rcsim.sizing.size`` to its
   default tolerance (0.1 % of the range, 0.06 mm) against the baseline a user would otherwise
   run, a grid sweep of the same range at 1 mm steps (61 runs, run as long as the sizing's runs)
   read for the first thickness that holds. Target: the sizing needs a few tens of runs at most
   and fewer than the grid, for an answer 17 times finer.
2. **Pack mass for a 72 h hold in 95 % of N draws** (bay temperature and inner films uncertain,
   2 local processes): the sizing, whose executor stays open between the values it tries (one
   pool, the job sent once), against the same values each run as a separate sweep (a new pool per
   value). Target: the kept executor at least 1.2x faster when N is small.

Run:  python tests/benchmarks/bench_sizing.py [--samples 100] [--quick]
Ratios are measured in one run on the same machine; absolute times are only indicative.
"""

from __future__ import annotations

import argparse
import os
import time
import warnings

HERE = os.path.dirname(os.path.abspath(__file__))
COLD_BOX = os.path.join(os.path.dirname(os.path.dirname(HERE)), "scenarios", "cold-box.toml")
THICKNESS = "links.foam.parts[0].conduction.thickness"
UNCERTAIN = {"boundaries.bay.temperature.sine.mean": "normal(25 degC, 2 K)",
             "links.liner_air.parts[0].convection.h": "lognormal(2.5 W/(m^2*K), 1.3)",
             "links.payload_air.parts[0].convection.h": "lognormal(2.5 W/(m^2*K), 1.3)"}


def thickness(sc):
    import numpy as np

    import rcsim
    from rcsim.sizing import size

    t0 = time.perf_counter()
    res = size(sc, vary={THICKNESS: ("30 mm", "90 mm")}, require="hold_time.payload >= 72 h")
    t_size = time.perf_counter() - t0
    grid = np.linspace(0.030, 0.090, 61)
    t0 = time.perf_counter()
    table = rcsim.sweep(sc, {THICKNESS: list(grid), "simulation.duration": [res.duration]},
                        executor="serial")
    t_grid = time.perf_counter() - t0
    hold = table["hold_time.payload"].to_numpy()
    holds = (hold >= 72 * 3600.0) | np.isnan(hold)
    first = grid[np.argmax(holds)] if holds.any() else float("nan")
    print("1. thickness for a 72 h hold, 30..90 mm, this process")
    print(f"   sizing : {res.value * 1e3:8.3f} mm (tolerance {res.tolerance * 1e3:.3f} mm), "
          f"{res.n_runs:3d} runs, {t_size:6.2f} s")
    print(f"   grid   : {first * 1e3:8.3f} mm (step 1 mm)           , {len(grid):3d} runs, "
          f"{t_grid:6.2f} s")
    print(f"   runs grid/sizing {len(grid) / res.n_runs:.1f}x, time grid/sizing "
          f"{t_grid / t_size:.1f}x (target: sizing <= a few tens of runs, fewer than the grid)")


def packs(sc, samples):
    import rcsim
    from rcsim.sizing import size

    vary = {"nodes.pack_a.mass": ("2 kg", "6 kg"), "nodes.pack_b.mass": ("2 kg", "6 kg")}
    t0 = time.perf_counter()
    res = size(sc, vary=vary, require="hold_time.payload >= 72 h", vary_uncertain=UNCERTAIN,
               samples=samples, seed=42, executor="processes", workers=2)
    t_size = time.perf_counter() - t0
    t0 = time.perf_counter()
    for cand in res.candidates:  # the same values, a new sweep (and pool) for each
        at = sc.with_values({"nodes.pack_a.mass": float(cand.values[0]),
                             "nodes.pack_b.mass": float(cand.values[1]),
                             "simulation.duration": res.duration})
        rcsim.sweep(at, UNCERTAIN, samples=samples, seed=42, executor="processes", workers=2)
    t_sweeps = time.perf_counter() - t0
    lo, hi = res.share_interval
    print(f"2. pack mass for a 72 h hold in 95 % of {samples} draws, 2 local processes")
    print(f"   answer {res.value_text} per pack; share met {100 * res.share:.1f} % "
          f"(Wilson 95 % {100 * lo:.1f}..{100 * hi:.1f} %); {res.evaluations} values, "
          f"{res.n_runs} runs")
    print(f"   executor kept open : {t_size:6.2f} s")
    print(f"   a sweep per value  : {t_sweeps:6.2f} s   ratio {t_sweeps / t_size:.2f}x "
          "(target >= 1.2x)")


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--samples", type=int, default=100)
    ap.add_argument("--quick", action="store_true", help="40 draws")
    args = ap.parse_args(argv)
    samples = 40 if args.quick else args.samples
    import rcsim

    warnings.simplefilter("ignore")
    sc = rcsim.load(COLD_BOX)
    print(f"load average {os.getloadavg()[0]:.2f} on {os.cpu_count()} cores")
    thickness(sc)
    packs(sc, samples)


if __name__ == "__main__":
    main()
