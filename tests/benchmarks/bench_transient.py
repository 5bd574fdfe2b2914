"""Benchmark of the linear transient paths, measured as a user runs them (issue 14).

1. **The year-long wall.** A 50-node wall (films, 200 mm of sliced concrete, 120 mm of sliced
   mineral wool) between a room at 20 degC and an outdoor temperature given as an hourly
   ``Table`` for a year (a daily and a yearly sine sampled every hour), 10-minute output, every
   node recorded, default settings. rcsim's time covers building the network through the API
   (the table bound, the network assembled) and the run, and reading ``res.temperatures``.
   Baselines on the same system, measured in the same run with the machine's default BLAS
   threads: ``scipy.signal.lsim`` (first-order hold) and a hand-written exact solver
   (eigen-decomposition, first-order-hold factors per mode, one ``scipy.signal.lfilter`` per
   mode, back to node temperatures; no heat flows, no energy balance). Both baselines are
   timed from the assembled matrices and include building their input array from the table.
   Targets: >= 10x lsim, within 1.5x of the hand-written solver. The largest temperature
   difference to each is printed.
2. **The same at 10, 200 and 1,000 nodes** (shorter runs as the baselines slow down).
3. **Large networks** (``--large``): a chain of N nodes with a skin link to a daily sine every
   100 nodes and a heater stepping on at 1 h, one day at one-minute output: 3 nodes recorded,
   and every node streamed to an HDF5 file; each in a child process: wall time, CPU time and peak
   memory (VmHWM). The cost exponent in N from 10,000 to 100,000 is printed. Targets: exponent
   <= 1.15; 100,000 nodes recording 3 nodes under 30 s and 1 GB, all nodes streamed under 2 GB.
   Also a one-million-row CSV column read as a profile (time and peak memory).
4. **The threads policy** (``--threads``): each workload in its own child process under
   ``RCSIM_THREADS=1`` (the default) and ``RCSIM_THREADS=<all cores>``, the two settings
   alternated round after round (so a burst of load elsewhere hits both), best and median of
   each printed with the load average: the wall at 10/50/200/1,000 nodes (as above), a serial
   sweep of 50 runs of ``scenarios/cold-box.toml`` (many small nonlinear runs in one process),
   a 10,000-node chain over a day recording 3 nodes (the large-linear path) and the fit of
   ``bench_fit.py`` (heated block, three days of one-minute rows). This is the measurement
   behind the default of :mod:`rcsim.threads`.

Run:  python tests/benchmarks/bench_transient.py [--quick] [--large] [--threads] [--repeats 5]
Ratios are measured in one run on the same machine; absolute times are only indicative (the
load average is printed: other processes share the cores).
"""

from __future__ import annotations

import argparse
import json
import math
import os
import subprocess
import sys
import time

import numpy as np

from timing import best_of  # tests/benchmarks/timing.py

HERE = os.path.dirname(os.path.abspath(__file__))


def wall_network(n_concrete=30, n_insulation=18, days=365):
    """The wall, built through the API as a user would; n_concrete + n_insulation + 2 nodes."""
    import rcsim

    hours = np.arange(0, days * 24 + 2) * 3600.0
    outdoor = (8 + 6 * np.sin(2 * np.pi * (hours / 86400.0 - 0.4))
               + 5 * np.sin(2 * np.pi * hours / (365 * 86400.0)))
    net = rcsim.Network()
    net.add_boundary("outdoor", temperature=rcsim.Table(hours, outdoor))
    net.add_boundary("indoor", temperature=20.0)
    net.add_node("inner_surface", capacity=2000.0, initial=18.0)
    net.add_node("outer_surface", capacity=2000.0, initial=8.0)
    net.add_link("indoor", "inner_surface", parts=[{"convection": {"h": 7.7, "area": 10}}],
                 name="film_in")
    net.add_link("inner_surface", "outer_surface", name="wall", parts=[
        {"conduction": {"material": "concrete-medium", "thickness": 0.2, "area": 10,
                        "slices": n_concrete}},
        {"conduction": {"material": "mineral-wool", "thickness": 0.12, "area": 10,
                        "slices": n_insulation}},
    ])
    net.add_link("outer_surface", "outdoor", parts=[{"convection": {"h": 25, "area": 10}}],
                 name="film_out")
    return net


def hand_written(asm, t, X0):
    """Exact first-order-hold modal solver written out by hand: node temperatures (N, n)."""
    import scipy.linalg as la
    import scipy.signal as sig

    C, K, B = asm.capacity, asm.K.toarray(), asm.B.toarray()
    s = 1.0 / np.sqrt(C)
    lam, Q = la.eigh(K * s[:, None] * s[None, :])
    V = Q * s[:, None]
    U = np.column_stack([p.value(t) for p in asm.boundary_profiles])
    F = np.asfortranarray(U @ (V.T @ B).T)                       # modal forcing at the samples
    h = float(t[1] - t[0])
    x = lam * h
    e0 = np.exp(-x)
    e1 = -np.expm1(-x) / x
    e2 = (1.0 - e1) / x
    b0, b1 = h * (e1 - e2), h * e2                               # z[k+1] = e0 z[k] + b0 f[k] + b1 f[k+1]
    z0 = V.T @ (C * X0)
    Z = np.empty((lam.size, t.size))
    Z[:, 0] = z0
    for j in range(lam.size):
        Z[j, 1:], _ = sig.lfilter([b1[j], b0[j]], [1.0, -e0[j]], F[1:, j],
                                  zi=[e0[j] * z0[j] + b0[j] * F[0, j]])
    return (V @ Z).T


def lsim_baseline(asm, t, X0):
    import scipy.signal as sig

    n = asm.n_nodes
    cinv = 1.0 / asm.capacity
    A = -cinv[:, None] * asm.K.toarray()
    B = cinv[:, None] * asm.B.toarray()
    U = np.column_stack([p.value(t) for p in asm.boundary_profiles])
    return sig.lsim((A, B, np.eye(n), np.zeros((n, B.shape[1]))), U, t, X0=X0, interp=True)[2]


def bench_wall(n_concrete, n_insulation, days, repeats, label=None):
    """One row: rcsim against lsim and the hand-written solver on one wall."""
    def user_run():
        net = wall_network(n_concrete, n_insulation, days)
        res = net.simulate(f"{days} d", "10 min")
        return net, res, res.temperatures

    t_rcsim, (net, res, frame) = best_of(repeats, user_run)
    T = frame.to_numpy()
    asm = net.assemble()
    t, X0 = res.time, T[0]
    t_hand, T_hand = best_of(repeats, lambda: hand_written(asm, t, X0))
    t_lsim, T_lsim = best_of(max(1, repeats // 2), lambda: lsim_baseline(asm, t, X0))
    return {"label": label or f"{asm.n_nodes} nodes", "nodes": asm.n_nodes, "days": days,
            "samples": t.size, "rcsim": t_rcsim, "hand": t_hand, "lsim": t_lsim,
            "dT_hand": float(np.abs(T_hand - T).max()), "dT_lsim": float(np.abs(T_lsim - T).max()),
            "balance": res.energy_balance, "path": res.run_info.path}


def print_rows(rows):
    print(f"  {'network':<12} {'days':>4} {'samples':>8} {'rcsim':>8} {'hand':>8} {'lsim':>8} "
          f"{'x lsim':>7} {'/ hand':>7} {'|dT| hand':>10} {'|dT| lsim':>10} {'balance':>8}")
    for r in rows:
        print(f"  {r['label']:<12} {r['days']:>4} {r['samples']:>8} {r['rcsim']:8.3f} "
              f"{r['hand']:8.3f} {r['lsim']:8.3f} {r['lsim'] / r['rcsim']:7.1f} "
              f"{r['rcsim'] / r['hand']:7.2f} {r['dT_hand']:10.1e} {r['dT_lsim']:10.1e} "
              f"{r['balance']:8.0e}")


CHILD = r"""
import json, os, resource, sys, tempfile, time
import numpy as np
import rcsim
n, mode = int(sys.argv[1]), sys.argv[2]
sys.path.insert(0, sys.argv[3])
from bench_large import chain       # the chain network, built through the API
net = chain(n)
net.assemble()
cpu0 = resource.getrusage(resource.RUSAGE_SELF).ru_utime
t0 = time.perf_counter()
out = {"solver": "", "balance": 0.0}
if mode == "record3":
    res = net.simulate("1 d", "1 min", record=["n0", f"n{n // 2}", f"n{n - 1}"])
    assert res.temperatures.shape == (1441, 3)
    out = {"solver": res.run_info.path, "balance": res.energy_balance}
elif mode == "h5":
    folder = tempfile.mkdtemp()
    path = os.path.join(folder, "all.h5")
    res = net.simulate("1 d", "1 min", output=path)
    out = {"solver": res.run_info.path, "balance": res.energy_balance,
           "file_mb": os.path.getsize(path) / 1e6}
    os.remove(path)
wall = time.perf_counter() - t0
cpu = resource.getrusage(resource.RUSAGE_SELF).ru_utime - cpu0
# VmHWM belongs to this address space (ru_maxrss would carry the parent's peak across exec)
peak = next(int(line.split()[1]) for line in open("/proc/self/status")
            if line.startswith("VmHWM")) / 1024.0
print(json.dumps({"wall": wall, "cpu": cpu, "peak_mb": peak, **out}))
"""


def large(n: int, mode: str) -> dict:
    p = subprocess.run([sys.executable, "-c", CHILD, str(n), mode, HERE], capture_output=True,
                       text=True)
    if p.returncode:
        return {"error": p.stderr.strip().splitlines()[-1] if p.stderr else "failed"}
    return json.loads(p.stdout.strip().splitlines()[-1])


def bench_large(sizes):
    print("large networks: a chain with skins to a daily sine, a heater on at 1 h; 1 day at "
          "1 min output; child processes (peak = VmHWM)")
    print(f"  {'nodes':>7} {'recorded':<12} {'path':<13} {'wall [s]':>9} {'cpu [s]':>8} "
          f"{'peak [MB]':>10} {'build [MB]':>11} {'balance':>8}")
    table = {}
    for n in sizes:
        base = large(n, "build")
        for mode, label in (("record3", "3 nodes"), ("h5", "all to HDF5")):
            r = large(n, mode)
            table[(n, mode)] = r
            if "error" in r:
                print(f"  {n:>7} {label:<12} failed: {r['error']}")
                continue
            print(f"  {n:>7} {label:<12} {r['solver']:<13} {r['wall']:9.2f} {r['cpu']:8.2f} "
                  f"{r['peak_mb']:10.0f} {base.get('peak_mb', math.nan):11.0f} "
                  f"{r['balance']:8.0e}")
    for mode, label in (("record3", "3 nodes"), ("h5", "all nodes to HDF5")):
        a, b = table.get((10_000, mode)), table.get((100_000, mode))
        if a and b and "error" not in a and "error" not in b:
            for key in ("wall", "cpu"):
                k = math.log(b[key] / a[key]) / math.log(10.0)
                print(f"  cost exponent in N from 10,000 to 100,000 ({label}, {key} time): "
                      f"{k:.2f} (target <= 1.15)")
    r3, rh = table.get((100_000, "record3")), table.get((100_000, "h5"))
    if r3 and "error" not in r3:
        print(f"  100,000 nodes, 3 recorded: {r3['wall']:.1f} s wall ({r3['cpu']:.1f} s CPU), "
              f"{r3['peak_mb']:.0f} MB (targets < 30 s, < 1024 MB)")
    if rh and "error" not in rh:
        print(f"  100,000 nodes, all streamed to HDF5 ({rh['file_mb']:.0f} MB file): "
              f"{rh['wall']:.1f} s wall, {rh['peak_mb']:.0f} MB (target < 2048 MB)")


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



THREADS_CHILD = r"""
import json, os, sys, time, warnings
sys.path.insert(0, sys.argv[3])
warnings.simplefilter("ignore")
import numpy as np
import rcsim
work, repeats = sys.argv[1], int(sys.argv[2])
if work.startswith("wall"):
    from bench_transient import wall_network
    nc, ni, days = {"wall10": (4, 4, 365), "wall50": (30, 18, 365), "wall200": (120, 78, 30),
                    "wall1000": (600, 398, 7)}[work]
    def job():
        net = wall_network(nc, ni, days)
        return net.simulate(f"{days} d", "10 min").temperatures
elif work == "sweep":
    from bench_sweep import COLD_BOX, VARY
    sc = rcsim.load(COLD_BOX)
    def job():
        return rcsim.sweep(sc, VARY, samples=50, seed=1, executor="serial")
elif work == "large":
    from bench_large import chain
    n = 10_000
    net = chain(n)
    net.assemble()
    def job():
        return net.simulate("1 d", "1 min", record=["n0", f"n{n // 2}", f"n{n - 1}"])
elif work == "fit":
    from bench_fit import FREE, heated_block_log
    sc, log = heated_block_log(3.0)
    def job():
        return rcsim.fit(sc, log, FREE, starts=1)
job()
times = []
for _ in range(repeats):
    t0 = time.perf_counter()
    job()
    times.append(time.perf_counter() - t0)
print(json.dumps({"times": times, "threads": rcsim.threads.current()}))
"""

THREAD_WORKLOADS = {"wall10": ("10-node wall, 365 d", 5), "wall50": ("50-node wall, 365 d", 5),
                    "wall200": ("200-node wall, 30 d", 5), "wall1000": ("1000-node wall, 7 d", 3),
                    "sweep": ("serial sweep, 50 runs", 2), "large": ("10,000 nodes, 1 d", 3),
                    "fit": ("fit, 3 d of 1-min rows", 3)}


def bench_threads(rounds: int):
    """The default threads against all cores, per workload, alternated in child processes."""
    here = os.path.dirname(os.path.abspath(__file__))
    cores = os.cpu_count() or 1
    settings = ("1", str(cores))
    times = {(w, s): [] for w in THREAD_WORKLOADS for s in settings}
    loads = []
    for _ in range(rounds):
        for work, (_, repeats) in THREAD_WORKLOADS.items():
            for setting in settings:
                env = dict(os.environ, RCSIM_THREADS=setting)
                p = subprocess.run([sys.executable, "-c", THREADS_CHILD, work, str(repeats), here],
                                   capture_output=True, text=True, env=env)
                if p.returncode:
                    raise SystemExit(f"{work} with RCSIM_THREADS={setting} failed: "
                                     f"{p.stderr.strip().splitlines()[-1]}")
                times[(work, setting)] += json.loads(p.stdout.strip().splitlines()[-1])["times"]
                loads.append(os.getloadavg()[0])
    print(f"threads of rcsim's kernels: RCSIM_THREADS=1 (default) against {cores} (all cores), "
          f"{rounds} alternated rounds in child processes; load average {min(loads):.2f}-"
          f"{max(loads):.2f} (times in ms)")
    print(f"  {'workload':<24} {'best 1':>8} {'best ' + settings[1]:>8} {'x':>5} "
          f"{'median 1':>9} {'median ' + settings[1]:>9} {'x':>5} {'worst 1':>8} "
          f"{'worst ' + settings[1]:>8}")
    for work, (label, _) in THREAD_WORKLOADS.items():
        a, b = (np.array(times[(work, s)]) * 1e3 for s in settings)
        print(f"  {label:<24} {a.min():8.1f} {b.min():8.1f} {a.min() / b.min():5.2f} "
              f"{np.median(a):9.1f} {np.median(b):9.1f} {np.median(a) / np.median(b):5.2f} "
              f"{a.max():8.1f} {b.max():8.1f}")
    print("  x: time with one thread / time with all cores (above 1: all cores faster)")


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="a month instead of a year")
    ap.add_argument("--large", action="store_true", help="also 1,000 to 100,000 nodes")
    ap.add_argument("--repeats", type=int, default=5)
    ap.add_argument("--threads", action="store_true",
                    help="only the threads measurement (one thread against all cores)")
    ap.add_argument("--rounds", type=int, default=3, help="rounds of --threads")
    args = ap.parse_args(argv)
    if args.threads:
        bench_threads(args.rounds)
        return 0
    from threadpoolctl import threadpool_info

    import rcsim

    try:
        from rcsim.threads import current as kernel_threads
    except ImportError:                 # an rcsim before thread control (for before/after)
        def kernel_threads():
            return "the library's default"
    blas = [f"{p['internal_api']} {p['num_threads']} threads" for p in threadpool_info()
            if p["user_api"] == "blas"]
    print(f"rcsim from {os.path.dirname(rcsim.__file__)}; BLAS: {', '.join(blas)} "
          f"(baselines run with these); rcsim's kernels: {kernel_threads()} thread(s); "
          f"load average {os.getloadavg()[0]:.2f}")
    days = 30 if args.quick else 365
    wall = bench_wall(30, 18, days, args.repeats, "50-node wall")
    print(f"year-long wall: {wall['nodes']} nodes, {wall['days']} days at 10 min "
          f"({wall['samples']} samples), hourly table, all nodes recorded, path {wall['path']}")
    print_rows([wall])
    ok_lsim = wall["lsim"] / wall["rcsim"] >= 10
    ok_hand = wall["rcsim"] / wall["hand"] <= 1.5
    print(f"  targets: >= 10x lsim {'ok' if ok_lsim else 'MISSED'}; within 1.5x of the "
          f"hand-written solver {'ok' if ok_hand else 'MISSED'}")
    rows = [bench_wall(4, 4, days, args.repeats, "10 nodes"),
            bench_wall(120, 78, 30 if not args.quick else 7, max(1, args.repeats // 2),
                       "200 nodes"),
            bench_wall(600, 398, 7 if not args.quick else 2, 1, "1000 nodes")]
    print("the same wall at other sizes (times in s)")
    print_rows(rows)
    print(f"load average {os.getloadavg()[0]:.2f} after")
    if args.large:
        bench_large([1_000, 10_000, 100_000])
        bench_million_rows()


if __name__ == "__main__":
    sys.exit(main())
