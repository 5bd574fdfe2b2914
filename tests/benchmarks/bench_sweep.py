"""Benchmark of sweeps (issue: sweeps, Monte Carlo and sensitivity).

200 sampled runs of the bundled cold-box scenario (wall thickness, payload mass and mean bay
temperature drawn from normals), through

* the serial executor (1 worker, in this process) — the baseline;
* local processes, 1 and 2 workers (one BLAS thread each: rcsim.threads);
* local processes, 2 workers with the BLAS library's own threads (``RCSIM_THREADS=auto``: what
  sweeps did before thread control);
* with ``--dask``, a Dask LocalCluster of 2 worker processes (started once, outside the timing).

Targets: >= 1.7x from 1 to 2 local workers (on a quiet machine: the load average is printed);
Dask overhead under 20 % of the local-process time with the same number of workers. Serial is timed first on its own (the Dask scheduler runs in
this process); the others are timed in ``--repeats`` interleaved rounds
and the best of each is kept (the machine is shared and noisy; the load average is printed); the
start-up of the Dask cluster is printed apart. The tables of all executors are checked to be
identical.

Run:  python tests/benchmarks/bench_sweep.py [--runs 1000] [--repeats 3] [--quick]
Ratios are measured in one run on the same machine; absolute times are only indicative.
"""

from __future__ import annotations

import argparse
import os
import sys
import time

HERE = os.path.dirname(os.path.abspath(__file__))
COLD_BOX = os.path.join(os.path.dirname(os.path.dirname(HERE)), "scenarios", "cold-box.toml")
VARY = {"links.foam.parts[0].conduction.thickness": "normal(50 mm, 5 mm)",
        "nodes.payload.mass": "normal(6 kg, 0.5 kg)",
        "boundaries.bay.temperature.sine.mean": "normal(25 degC, 2 K)"}


def timed(repeats, func):
    """Best wall time of ``repeats`` calls and the last result."""
    best, out = float("inf"), None
    for _ in range(repeats):
        t0 = time.perf_counter()
        out = func()
        best = min(best, time.perf_counter() - t0)
    return best, out


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--runs", type=int, default=200)
    ap.add_argument("--dask", action="store_true", help="also a Dask LocalCluster")
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--quick", action="store_true", help="100 runs, 1 repeat")
    args = ap.parse_args(argv)
    runs, repeats = (100, 1) if args.quick else (args.runs, args.repeats)

    import rcsim

    sc = rcsim.load(COLD_BOX)

    def go(**kw):
        return rcsim.sweep(sc, VARY, samples=runs, seed=1, **kw)

    def auto_threads(**kw):
        previous = os.environ.get("RCSIM_THREADS")
        os.environ["RCSIM_THREADS"] = "auto"        # workers inherit it: library's threads
        try:
            return go(**kw)
        finally:
            if previous is None:
                del os.environ["RCSIM_THREADS"]
            else:
                os.environ["RCSIM_THREADS"] = previous

    go(executor="serial")  # warm-up: imports, caches
    load0 = os.getloadavg()[0]
    print(f"{runs} runs of {os.path.basename(COLD_BOX)}, best of {repeats} interleaved rounds, "
          f"{os.cpu_count()} cores, load average {load0:.2f} before")
    # serial first, on its own: the Dask scheduler started below runs an event loop in this
    # process, which would slow a sweep that runs here
    t_serial, ref = timed(repeats, lambda: go(executor="serial"))
    configs = {
        "processes, 1 worker": lambda: go(executor="processes", workers=1),
        "processes, 2 workers": lambda: go(executor="processes", workers=2),
        "2 workers, library's BLAS threads": lambda: auto_threads(executor="processes",
                                                                  workers=2),
    }
    client = cluster = None
    t_start = None
    if args.dask:
        from dask.distributed import Client, LocalCluster

        t0 = time.perf_counter()
        cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                               dashboard_address=None)
        client = Client(cluster)
        t_start = time.perf_counter() - t0
        go(executor="dask", scheduler=client)  # warm-up: workers import rcsim
        configs["Dask LocalCluster, 2 workers"] = lambda: go(executor="dask", scheduler=client)
    best = {name: float("inf") for name in configs}
    tables = {"serial (in this process)": ref}
    try:
        for _ in range(repeats):  # interleaved, so a burst of load elsewhere hits all alike
            for name, run in configs.items():
                t, tables[name] = timed(1, run)
                best[name] = min(best[name], t)
    finally:
        if client is not None:
            client.close()
            cluster.close()
    best = {"serial (in this process)": t_serial, **best}
    for name, t in best.items():
        print(f"  {name:<32} {t:8.2f} s  {runs / t:8.1f} runs/s")
    if t_start is not None:
        print(f"  (Dask cluster start-up, not in the time above: {t_start:.2f} s)")
    print(f"  load average {os.getloadavg()[0]:.2f} after")
    same = all(t.equals(ref) for t in tables.values())
    print(f"  tables identical across executors: {same}")
    t_p1, t_p2 = best["processes, 1 worker"], best["processes, 2 workers"]
    speedup = t_p1 / t_p2
    t_auto = best["2 workers, library's BLAS threads"]
    print(f"speed-up from 1 to 2 local workers: {speedup:.2f}x ({t_serial / t_p2:.2f}x against "
          f"serial) (target >= 1.7x on a quiet machine): {'ok' if speedup >= 1.7 else 'MISSED'}"
          f"; with the library's BLAS threads: "
          f"{t_p1 / t_auto:.2f}x")
    if "Dask LocalCluster, 2 workers" in best:
        overhead = best["Dask LocalCluster, 2 workers"] / t_p2 - 1.0
        print(f"Dask overhead against local processes, 2 workers each: {100 * overhead:+.1f} % "
              f"(target < 20 %): {'ok' if overhead < 0.2 else 'MISSED'}")
    return 0 if same else 1


if __name__ == "__main__":
    sys.exit(main())
