"""Run watchers (rcsim.run_warnings): what the correlation-range watcher costs a run.

Runs a bundled nonlinear scenario with films from correlations through the public API
(``rcsim.load(...).run()``, default settings and threads), once as a user runs it and once with
the watchers left out of the recording plan (the baseline, measured in the same run), and prints
the ratio. Also times the watchers' own work alone on the recorded samples.

    python tests/benchmarks/bench_warnings.py [--quick]
"""
from __future__ import annotations

import argparse
import os
import sys
import warnings

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

from timing import best_of  # noqa: E402

HERE = os.path.dirname(os.path.abspath(__file__))
SCENARIOS = os.path.join(HERE, "..", "..", "scenarios")


def main() -> None:
    import rcsim
    import rcsim.transient.problem as problem

    parser = argparse.ArgumentParser()
    parser.add_argument("--quick", action="store_true", help="fewer repeats")
    args = parser.parse_args()
    repeats = 2 if args.quick else 5
    original = problem.run_watchers
    for name, step in (("cold-box.toml", None), ("cold-box.toml", "10 s"),
                       ("enclosure-warmup.toml", None)):
        sc = rcsim.load(os.path.join(SCENARIOS, name))
        if step is not None:
            sc = sc.with_values({"simulation.step": step})

        def run():
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                return sc.run()

        res = run()
        problem.run_watchers = lambda network, asm: []
        try:
            bare, _ = best_of(repeats, run)
        finally:
            problem.run_watchers = original
        watched, _ = best_of(repeats, run)
        spent = _watcher_time(run)
        print(f"{name}{'' if step is None else ' at step ' + step}: {len(res.time)} samples, solver {res.solver}")
        print(f"  the correlation watcher's own time in a run: {1e3 * spent:.1f} ms")
        print(f"  run with the watchers {watched:.3f} s, without {bare:.3f} s: "
              f"ratio {watched / bare:.3f} (watchers {1e3 * (watched - bare):.1f} ms)")


def _watcher_time(run) -> float:
    """Seconds spent in CorrelationWatch.observe during one call of ``run`` (best of 3)."""
    import time

    from rcsim.run_warnings import CorrelationWatch

    original = CorrelationWatch.observe
    spent = [0.0]

    def timed(self, *args, **kwargs):
        t0 = time.perf_counter()
        try:
            return original(self, *args, **kwargs)
        finally:
            spent[0] += time.perf_counter() - t0

    best = float("inf")
    CorrelationWatch.observe = timed
    try:
        for _ in range(3):
            spent[0] = 0.0
            run()
            best = min(best, spent[0])
    finally:
        CorrelationWatch.observe = original
    return best


if __name__ == "__main__":
    main()
