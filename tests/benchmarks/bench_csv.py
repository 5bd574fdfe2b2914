"""Reading a large CSV time series: numbers first against the text pass (as before), in one run.

A file of 6,000,000 rows (a time column in seconds and one temperature column, 4,000 days at
57.6 s) is written to a temporary folder and read as a user reads it, each read in a fresh
process (peak memory is the process's VmHWM):

* ``Table.from_csv(path, "t_out").bind("temperature")`` (the API), and
* ``rcsim.load(scenario)`` of a scenario whose boundary is ``{ csv = { file = ..., column =
  ... } }`` (what ``rcsim run`` reads before it runs),

with the numbers-first parse (the default) and with the text pass alone
(``rcsim.profiles.numeric_csv.ENABLED = False``: every cell read as text first, as rcsim read
CSV files before). Ratios are text pass / numbers first. A process that only imports rcsim and
pandas is the memory baseline.

The file of timestamps is read numbers first twice more: its stamps read from their bytes (the
default, ``rcsim.clock._fixed_shape_stamps``) and read as text pieces by pandas
(``_fixed_shape_stamps`` switched off: ``rcsim.clock.split_stamps`` and
``pandas.to_datetime(format="ISO8601")``, as before); ratios are text / bytes.

    python tests/benchmarks/bench_csv.py                 # 6,000,000 and 1,000,000 rows, and
                                                         # 1,000,000 rows of timestamps
    python tests/benchmarks/bench_csv.py --rows 1000000  # one size only
    python tests/benchmarks/bench_csv.py --rows 0        # the file of timestamps alone
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile

import numpy as np

CHILD = r"""
import json, sys, time
import pandas, rcsim
from rcsim.profiles import Table, numeric_csv
what, path, fast = sys.argv[1], sys.argv[2], sys.argv[3] != "text"
numeric_csv.ENABLED = fast
if sys.argv[3] == "stamps-as-text":
    import rcsim.clock
    rcsim.clock._fixed_shape_stamps = lambda text: None
t0 = time.perf_counter()
if what == "api":
    n = Table.from_csv(path, "t_out").bind("temperature", "outdoor").times.size
elif what == "scenario":
    n = rcsim.load(path).network.assemble().profiles[0].times.size
else:
    n = 0
wall = time.perf_counter() - t0
peak = next(int(line.split()[1]) for line in open("/proc/self/status")
            if line.startswith("VmHWM")) / 1024.0
print(json.dumps({"wall": wall, "peak_mb": peak, "rows": int(n)}))
"""

SCENARIO = """title = "a long record at the boundary"
[simulation]
duration = "4000 d"
step = "1 h"
[nodes.room]
capacity = "5 MJ/K"
initial = "20 degC"
[boundaries.outdoor]
temperature = {{ csv = {{ file = "{file}", column = "t_out" }} }}
[links.wall]
between = ["room", "outdoor"]
resistance = "0.01 K/W"
"""


def write_record(path: str, rows: int, days: float = 4000.0, stamps: bool = False) -> None:
    """``rows`` rows of time [s] (or ISO-8601 timestamps with a UTC offset, one a minute) and an
    invented outdoor temperature over ``days``."""
    t = np.arange(rows) * (days * 86400.0 / rows if not stamps else 60.0)
    temp = 12.0 + 8.0 * np.sin(2 * np.pi * t / (365.25 * 86400)) + 5.0 * np.sin(2 * np.pi * t / 86400)
    if stamps:
        import pandas as pd

        clock = pd.Timestamp("2026-01-01T00:00") + pd.to_timedelta(t, unit="s")
        times = list(clock.strftime("%Y-%m-%dT%H:%M:%S+01:00"))
    with open(path, "w") as fh:
        fh.write("time,t_out\n")
        for a in range(0, rows, 500_000):
            b = min(rows, a + 500_000)
            first = times[a:b] if stamps else [f"{x:.2f}" for x in t[a:b].tolist()]
            fh.write("\n".join(f"{x},{y:.4f}" for x, y in zip(first, temp[a:b].tolist())))
            fh.write("\n")


def child(what: str, path: str, fast) -> dict:
    mode = fast if isinstance(fast, str) else ("fast" if fast else "text")
    out = subprocess.run([sys.executable, "-c", CHILD, what, path, mode],
                         capture_output=True, text=True)
    if out.returncode != 0:
        return {"error": out.stderr.strip().splitlines()[-1]}
    return json.loads(out.stdout.strip().splitlines()[-1])


def best(what, path, fast, repeats) -> dict:
    runs = [child(what, path, fast) for _ in range(repeats)]
    ok = [r for r in runs if "error" not in r]
    if not ok:
        return runs[0]
    return {"wall": min(r["wall"] for r in ok), "peak_mb": min(r["peak_mb"] for r in ok),
            "rows": ok[0]["rows"]}


def bench(rows: int, repeats: int, stamps: bool = False) -> None:
    folder = tempfile.mkdtemp(prefix="rcsim-bench-csv-")
    csv = os.path.join(folder, "outdoor.csv")
    write_record(csv, rows, stamps=stamps)
    scenario = os.path.join(folder, "long.toml")
    with open(scenario, "w") as fh:
        fh.write(SCENARIO.format(file="outdoor.csv"))
    size_mb = os.path.getsize(csv) / 1e6
    base = best("import", csv, True, 1)["peak_mb"]
    print(f"{rows:,} rows{' of timestamps' if stamps else ''}, {size_mb:.0f} MB on disk; "
          f"a process importing rcsim and pandas "
          f"peaks at {base:.0f} MB (subtracted in 'above import')")
    print(f"  {'read':<10}{'pass':<15}{'wall s':>8}{'peak MB':>9}{'x file':>8}"
          f"{'above import':>14}{'x file':>8}")
    for what in ("api", "scenario"):
        results = {}
        for fast in (True, False):
            r = best(what, csv if what == "api" else scenario, fast, repeats if fast else 1)
            results[fast] = r
            name = "numbers first" if fast else "text pass"
            if "error" in r:
                print(f"  {what:<10}{name:<15}failed: {r['error']}")
                continue
            assert r["rows"] == rows, r
            above = r["peak_mb"] - base
            print(f"  {what:<10}{name:<15}{r['wall']:8.2f}{r['peak_mb']:9.0f}"
                  f"{r['peak_mb'] / size_mb:8.2f}{above:14.0f}{above / size_mb:8.2f}")
        f, s = results[True], results[False]
        if "error" not in f and "error" not in s:
            print(f"  {what}: the text pass takes {s['wall'] / f['wall']:.1f}x the time and "
                  f"{s['peak_mb'] / f['peak_mb']:.1f}x the peak memory "
                  f"({(s['peak_mb'] - base) / max(f['peak_mb'] - base, 1):.1f}x above import); "
                  f"numbers first peaks at {f['peak_mb'] / size_mb:.2f}x the file's size, "
                  f"{(f['peak_mb'] - base) / size_mb:.2f}x above import (target < 3x)")
    if stamps:
        print(f"  {'read':<10}{'stamps':<15}{'wall s':>8}{'peak MB':>9}{'x file':>8}"
              f"{'above import':>14}{'x file':>8}")
        for what in ("api", "scenario"):
            results = {}
            for mode, name in (("fast", "from bytes"), ("stamps-as-text", "as text")):
                r = best(what, csv if what == "api" else scenario, mode, repeats)
                results[mode] = r
                if "error" in r:
                    print(f"  {what:<10}{name:<15}failed: {r['error']}")
                    continue
                above = r["peak_mb"] - base
                print(f"  {what:<10}{name:<15}{r['wall']:8.2f}{r['peak_mb']:9.0f}"
                      f"{r['peak_mb'] / size_mb:8.2f}{above:14.0f}{above / size_mb:8.2f}")
            f, s = results["fast"], results["stamps-as-text"]
            if "error" not in f and "error" not in s:
                print(f"  {what}: stamps as text take {s['wall'] / f['wall']:.1f}x the time and "
                      f"{s['peak_mb'] / f['peak_mb']:.1f}x the peak memory "
                      f"({(s['peak_mb'] - base) / max(f['peak_mb'] - base, 1):.1f}x above "
                      "import)")
    for name in (csv, scenario):
        os.remove(name)
    os.rmdir(folder)


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rows", type=int, action="append",
                    help="rows of the file (repeatable; default 6,000,000 and 1,000,000; 0: "
                    "none)")
    ap.add_argument("--stamps", type=int, default=1_000_000,
                    help="rows of a file of timestamps also read (0: none), its stamps also "
                    "read as text pieces, as before")
    ap.add_argument("--repeats", type=int, default=3,
                    help="reads with numbers first, best kept (the text pass: one)")
    args = ap.parse_args(argv)
    print(f"load average {os.getloadavg()[0]:.2f} before")
    for rows in args.rows if args.rows is not None else [6_000_000, 1_000_000]:
        if rows > 0:     # --rows 0: the file of timestamps alone
            bench(rows, args.repeats)
    if args.stamps:
        bench(args.stamps, args.repeats, stamps=True)
    print(f"load average {os.getloadavg()[0]:.2f} after")


if __name__ == "__main__":
    main()
