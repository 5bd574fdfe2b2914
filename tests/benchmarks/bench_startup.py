"""Benchmark of start-up (issue 13): how long the command takes before it does anything.

Every figure is the best wall time of several fresh processes, measured in this run on this
machine against a bare interpreter and a bare ``import numpy``:

1. ``python -c pass``                      the interpreter alone (floor)
2. ``python -c "import numpy"``            the baseline of the target
3. ``rcsim --help``                        target: at most 3 times the numpy import
4. ``rcsim run scenarios/cold-box.toml``   the bundled shipper, end to end
5. the share of that run spent importing, from ``python -X importtime`` (the sum of every
   module's self time over the wall time of the same process; importtime itself adds a little
   to both), and the packages that cost most.
6. one unit converted in a fresh process: a unit written most ("50 mm", from
   ``rcsim.units.COMMON_UNITS``, no pint) against one that needs pint's registry ("2 yd":
   pint imported, its definitions parsed, no disk cache), the cost a scenario pays for a
   unit outside the common list.

Run:  python tests/benchmarks/bench_startup.py [--repeats N]
Ratios are measured in one run on the same machine; absolute times are only indicative.
"""

from __future__ import annotations

import argparse
import os
import re
import shutil
import subprocess
import sys
import time

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
COLD_BOX = os.path.join(ROOT, "scenarios", "cold-box.toml")
#: the command as a user types it: the console script beside this interpreter, else the module
SCRIPT = shutil.which("rcsim", path=os.path.dirname(sys.executable))
RCSIM = [SCRIPT] if SCRIPT else [sys.executable, "-c",
                                 "import sys; from rcsim.cli import main; sys.exit(main())"]


def wall(command: list[str], repeats: int) -> float:
    """Best wall time [s] of ``repeats`` fresh processes (after one untimed warm-up)."""
    best = float("inf")
    for i in range(repeats + 1):
        t0 = time.perf_counter()
        subprocess.run(command, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                       cwd=ROOT)
        elapsed = time.perf_counter() - t0
        if i:
            best = min(best, elapsed)
    return best


_LINE = re.compile(r"^import time:\s+(\d+)\s+\|\s+(\d+)\s+\|( *)(\S+)")


def import_share(command: list[str]) -> tuple[float, float, list[tuple[float, str]]]:
    """(seconds importing, wall seconds, [(seconds, package)] largest first) of one run of
    ``command`` under ``-X importtime``; a package's seconds are the self times of all its
    modules (``rcsim.sweep`` counts under ``rcsim``, ``scipy.sparse`` under ``scipy``)."""
    if command[0] != sys.executable:
        command = [sys.executable, "-c", "import sys; from rcsim.cli import main; "
                   "sys.exit(main())"] + command[1:]
    command = [command[0], "-X", "importtime"] + command[1:]
    t0 = time.perf_counter()
    done = subprocess.run(command, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                          text=True, cwd=ROOT)
    elapsed = time.perf_counter() - t0
    total, by_package = 0.0, {}
    for line in done.stderr.splitlines():
        match = _LINE.match(line)
        if not match:
            continue
        self_time = int(match.group(1)) * 1e-6
        total += self_time
        package = match.group(4).split(".", 1)[0]
        by_package[package] = by_package.get(package, 0.0) + self_time
    top = sorted(((s, p) for p, s in by_package.items()), reverse=True)
    return total, elapsed, top


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=7, help="fresh processes per figure")
    args = parser.parse_args()
    n = args.repeats
    python = [sys.executable]
    bare = wall(python + ["-c", "pass"], n)
    numpy = wall(python + ["-c", "import numpy"], n)
    help_ = wall(RCSIM + ["--help"], n)
    run_help = wall(RCSIM + ["run", "--help"], n)
    run = wall(RCSIM + ["run", COLD_BOX], max(2, n // 2))
    importing, traced, top = import_share(RCSIM + ["run", COLD_BOX])
    unit = "import rcsim.units as u; u.to_si({!r}, 'length')"
    common = wall(python + ["-c", unit.format("50 mm")], n)
    registry = wall(python + ["-c", unit.format("2 yd")], n)
    print(f"start-up, best of {n} fresh processes ({'console script' if SCRIPT else 'python -c'})")
    print(f"  python -c pass              {bare * 1e3:8.0f} ms")
    print(f"  python -c 'import numpy'    {numpy * 1e3:8.0f} ms")
    print(f"  rcsim --help                {help_ * 1e3:8.0f} ms   {help_ / numpy:5.2f} x numpy "
          f"import (target <= 3)")
    print(f"  rcsim run --help            {run_help * 1e3:8.0f} ms   {run_help / numpy:5.2f} x "
          f"numpy import")
    print(f"  rcsim run cold-box.toml     {run * 1e3:8.0f} ms   {run / numpy:5.2f} x numpy import")
    print(f"  of which importing (-X importtime): {importing * 1e3:.0f} ms of {traced * 1e3:.0f} ms"
          f" = {100 * importing / traced:.0f} % of the run")
    print(f"  one unit, fresh process: '50 mm' {common * 1e3:.0f} ms, '2 yd' (pint's registry) "
          f"{registry * 1e3:.0f} ms")
    print("  heaviest packages imported by the run (self time of their modules):")
    for seconds, name in top[:10]:
        print(f"    {seconds * 1e3:7.0f} ms  {name}")


if __name__ == "__main__":
    main()
