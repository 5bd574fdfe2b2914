"""Benchmark of the transient engine (issue: transient engine).

1. A 50-node wall (sliced concrete and insulation between films), one year at 10-minute output,
   daily outdoor sine. rcsim's exact path against scipy.signal.lsim (target >= 3x faster) and
   against solve_ivp BDF with a sparse Jacobian at rtol 1e-6 (target >= 50x faster); the largest
   temperature difference between them is printed.
2. A 10,000-node network, one day at 1-minute output, recording 3 nodes: wall time and peak memory
   of a child process (target under 1 GB), against the same child that only builds the network.

Run:  python tests/benchmarks/bench_transient.py [--quick]
Ratios are measured in one run on the same machine; absolute times are only indicative.
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys

import numpy as np

from timing import best_of  # tests/benchmarks/timing.py


def wall_network(n_slices_concrete=30, n_slices_insulation=18):
    import rcsim

    net = rcsim.Network()
    net.add_boundary("outdoor", temperature=rcsim.Sine(mean=8, amplitude=6, period=86400,
                                                       peak=15 * 3600))
    net.add_boundary("indoor", temperature=20.0)
    net.add_node("inner_surface", capacity=2000.0, initial=18.0)
    net.add_node("outer_surface", capacity=2000.0, initial=8.0)
    net.add_link("indoor", "inner_surface", parts=[{"convection": {"h": 7.7, "area": 10}}],
                 name="film_in")
    net.add_link("inner_surface", "outer_surface", name="wall", parts=[
        {"conduction": {"material": "concrete-medium", "thickness": 0.2, "area": 10,
                        "slices": n_slices_concrete}},
        {"conduction": {"material": "mineral-wool", "thickness": 0.12, "area": 10,
                        "slices": n_slices_insulation}},
    ])
    net.add_link("outer_surface", "outdoor", parts=[{"convection": {"h": 25, "area": 10}}],
                 name="film_out")
    return net




def bench_wall(quick: bool):
    import scipy.sparse as sp
    import scipy.signal as sig
    from scipy.integrate import solve_ivp

    import rcsim  # noqa: F401

    net = wall_network()
    asm = net.assemble()
    n = asm.n_nodes
    duration = (30 if quick else 365) * 86400.0
    step = 600.0
    init = {f"wall.{i + 1}": 14.0 for i in range(48)}

    t_rcsim, res = best_of(3, lambda: net.simulate(duration, step, initial=init, solver="exact"))
    T_rcsim = res.temperatures.to_numpy()
    T0 = T_rcsim[0]

    K = asm.K.toarray()
    cinv = 1.0 / asm.capacity
    A = -cinv[:, None] * K
    B = cinv[:, None] * asm.B.toarray()
    t = res.time
    U = np.column_stack([p.value(t) for p in asm.boundary_profiles])
    t_lsim, (_, _, x) = best_of(3, lambda: sig.lsim((A, B, np.eye(n), np.zeros((n, B.shape[1]))),
                                                    U, t, X0=T0, interp=True))

    As = sp.csr_matrix(A)
    Bs = B
    profs = asm.boundary_profiles

    def f(tt, y):
        return As @ y + Bs @ np.array([p.value(tt) for p in profs])

    t_ivp, sol = best_of(1 if not quick else 2, lambda: solve_ivp(
        f, (0, duration), T0, method="BDF", jac=As, t_eval=t, rtol=1e-6, atol=1e-6))
    print(f"50-node wall ({n} nodes), {duration / 86400:.0f} days at {step:.0f} s output "
          f"({t.size} samples)")
    print(f"  rcsim exact        {t_rcsim:8.3f} s")
    print(f"  scipy.signal.lsim  {t_lsim:8.3f} s   ratio {t_lsim / t_rcsim:6.1f}x (target >= 3x)   "
          f"max |dT| {np.abs(x - T_rcsim).max():.2e} K (lsim takes the sine as chords)")
    print(f"  solve_ivp BDF      {t_ivp:8.3f} s   ratio {t_ivp / t_rcsim:6.1f}x (target >= 50x)  "
          f"max |dT| {np.abs(sol.y.T - T_rcsim).max():.2e} K")
    print(f"  energy balance {res.energy_balance:.1e}")


CHILD = r"""
import json, sys, time
import numpy as np
import rcsim
n = int(sys.argv[1]); run = sys.argv[2] == "run"
rng = np.random.default_rng(0)
net = rcsim.Network()
net.add_boundary("amb", temperature=rcsim.Sine(mean=20, amplitude=5, period=86400))
for i in range(n):
    net.add_node(f"n{i}", capacity=float(rng.uniform(1e3, 1e4)), initial=20.0)
for i in range(n - 1):
    net.add_link(f"n{i}", f"n{i+1}", resistance=float(rng.uniform(0.01, 0.1)))
for i in range(0, n, 100):
    net.add_link(f"n{i}", "amb", resistance=1.0, name=f"skin{i}")
net.add_source(f"n{n // 2}", power=rcsim.Steps([0, 3600], [0.0, 200.0]))
net.assemble()
t0 = time.perf_counter()
if run:
    res = net.simulate("1 d", "1 min", record=["n0", f"n{n // 2}", f"n{n - 1}"])
    assert res.temperatures.shape == (1441, 3)
wall = time.perf_counter() - t0
# VmHWM belongs to this address space (ru_maxrss would carry the parent's peak across exec)
peak = next(int(line.split()[1]) for line in open("/proc/self/status")
            if line.startswith("VmHWM")) / 1024.0
print(json.dumps({"wall": wall, "peak_mb": peak,
                  "solver": res.solver if run else "", "balance": res.energy_balance if run else 0}))
"""


def bench_large(quick: bool, n: int | None = None):
    n = n if n is not None else (2000 if quick else 10_000)
    out = {}
    for mode in ("build", "run"):
        p = subprocess.run([sys.executable, "-c", CHILD, str(n), mode], capture_output=True,
                           text=True, check=True)
        out[mode] = json.loads(p.stdout.strip().splitlines()[-1])
    base, run = out["build"], out["run"]
    print(f"{n}-node network, 1 day at 1 min output, 3 nodes recorded, solver {run['solver']}")
    print(f"  wall time {run['wall']:.2f} s; peak memory {run['peak_mb']:.0f} MB "
          f"(building the network alone: {base['peak_mb']:.0f} MB; ratio "
          f"{run['peak_mb'] / base['peak_mb']:.2f}x; target under 1024 MB)")
    print(f"  energy balance {run['balance']:.1e}")


CSV_CHILD = r"""
import json, sys, time
import numpy as np
from rcsim.profiles import Table
path, read = sys.argv[1], sys.argv[2] == "read"
t0 = time.perf_counter()
if read:
    p = Table.from_csv(path, "t_amb").bind("temperature", "log")
    assert p.times.size == 1_000_000
wall = time.perf_counter() - t0
peak = next(int(line.split()[1]) for line in open("/proc/self/status")
            if line.startswith("VmHWM")) / 1024.0
print(json.dumps({"wall": wall, "peak_mb": peak}))
"""


def bench_million_rows():
    import os
    import tempfile

    folder = tempfile.mkdtemp()
    path = os.path.join(folder, "log.csv")
    t = np.arange(1_000_000) * 60.0
    np.savetxt(path, np.column_stack([t, 20 + 5 * np.sin(t / 86400 * 2 * np.pi)]), delimiter=",",
               header="time,t_amb", comments="", fmt=["%.0f", "%.4f"])
    out = {}
    for mode in ("import", "read"):
        p = subprocess.run([sys.executable, "-c", CSV_CHILD, path, mode], capture_output=True,
                           text=True, check=True)
        out[mode] = json.loads(p.stdout.strip().splitlines()[-1])
    size = os.path.getsize(path) / 1e6
    print(f"a 1,000,000-row CSV column ({size:.0f} MB) read as a profile: "
          f"{out['read']['wall']:.2f} s, peak memory {out['read']['peak_mb']:.0f} MB "
          f"(importing rcsim alone: {out['import']['peak_mb']:.0f} MB)")


if __name__ == "__main__":
    ap = argparse.ArgumentParser()
    ap.add_argument("--quick", action="store_true", help="shorter runs for a smoke test")
    ap.add_argument("--large", action="store_true", help="also the 100,000-node network and a "
                    "one-million-row CSV")
    args = ap.parse_args()
    bench_wall(args.quick)
    bench_large(args.quick)
    if args.large:
        bench_large(False, n=100_000)
        bench_million_rows()
