"""Best-of timing shared by the benchmark scripts (run as scripts: their folder is on sys.path)."""

from __future__ import annotations

import time


def best_of(repeats, func, warmup: bool = True):
    """Best wall time of ``repeats`` calls (after one untimed warm-up call unless ``warmup`` is
    False) and the last result."""
    if warmup:
        func()
    times, out = [], None
    for _ in range(repeats):
        t0 = time.perf_counter()
        out = func()
        times.append(time.perf_counter() - t0)
    return min(times), out
