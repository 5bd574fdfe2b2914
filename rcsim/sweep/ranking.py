"""One at a time: each input alone at the low and high end of its range (a tornado ranking).

The range of a grid is its smallest and largest value; of a distribution its 5th and 95th
percentiles. The other inputs keep the scenario's own values, except keys given a single value,
which hold that value in every run. Inputs are ranked by the swing of each output.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from ..errors import InputError
from .design import check_key, scenario_of
from .executors import check_executor, relay_warnings, run_rows
from .grammar import as_spec
from .tables import unit_of
from .worker import make_job, output_layout

__all__ = ["one_at_a_time"]

_COLUMNS = ["output", "input", "low", "high", "at_low", "at_high", "base", "swing"]


def _ranges(sc, vary):
    """({key: (low, high, kind)} of the keys with a range, {key: value} of single-valued ones)."""
    ranges, fixed = {}, {}
    for key, value in vary.items():
        kind = check_key(sc, key)
        where = f"vary {key}"
        spec = as_spec(value, where).bind(kind, where)
        low, high = spec.ends()
        if low < high:
            ranges[key] = (low, high, kind)
        else:
            fixed[key] = low
    if not ranges:
        raise InputError("one-at-a-time needs at least one key with a range", "vary",
                         "give two or more values or a distribution")
    return ranges, fixed


def _runs(sc, ranges, fixed) -> np.ndarray:
    """Row 0: the base; then, per input with a range, the base with that input low, then high."""
    keys = list(ranges) + list(fixed)
    base = np.array([fixed[k] if k in fixed else sc.si_value(k) for k in keys])
    rows = [base.copy()]
    for i, k in enumerate(ranges):
        for end in (0, 1):
            r = base.copy()
            r[i] = ranges[k][end]
            rows.append(r)
    return np.vstack(rows)


def _records(cols, ranges, out, errors, duration) -> list[dict]:
    recs = []
    for j, c in enumerate(cols):
        for i, k in enumerate(ranges):
            lo, hi = out[1 + 2 * i, j], out[2 + 2 * i, j]
            a, b = lo, hi
            if c.startswith("hold_time.") and duration and not (errors[1 + 2 * i]
                                                                 or errors[2 + 2 * i]):
                # never left the band: the hold time is at least the duration (a lower bound)
                a, b = (duration if math.isnan(v) else v for v in (lo, hi))
            recs.append({"output": c, "input": k, "low": ranges[k][0], "high": ranges[k][1],
                         "at_low": lo, "at_high": hi, "base": out[0, j],
                         "swing": abs(b - a) if np.isfinite(a) and np.isfinite(b) else np.nan})
    return recs


def one_at_a_time(scenario, vary, *, executor="processes", workers=None, scheduler=None,
                  dask_workers=None, nodes=None, progress=None) -> pd.DataFrame:
    """Tornado ranking: each input at the low and high end of its range, the others as written.

    The range of a grid is its smallest and largest value; of a distribution its 5th and 95th
    percentiles. The base run uses the scenario's own values, except for keys given a single
    value, which hold that value in every run.

    Returns
    -------
    DataFrame
        One row per (output, input): ``output``, ``input``, ``low``, ``high`` (SI input values),
        ``at_low``, ``at_high``, ``base`` (output values; NaN where a run failed or a hold time
        was not reached) and ``swing`` = |at_high - at_low|, sorted by output then by swing,
        largest first. For a hold time not reached within the run the swing takes the run
        duration in its place (so it is a lower bound). ``attrs['errors']`` lists runs that
        failed; ``attrs['duration']`` is the run duration [s].
    """
    sc = scenario_of(scenario)
    ranges, fixed = _ranges(sc, vary)
    keys = list(ranges) + list(fixed)
    layout = output_layout(sc, nodes)
    cols = layout.columns
    values = _runs(sc, ranges, fixed)
    info = check_executor(executor, workers, scheduler, dask_workers)
    found = run_rows(lambda ship: make_job(sc, keys, layout, ship), values, len(cols), info,
                     scheduler=scheduler, progress=progress)
    relay_warnings(found.warnings, found.finished)
    if found.interrupted:
        raise KeyboardInterrupt
    duration = sc.settings.duration
    table = pd.DataFrame(_records(cols, ranges, found.outputs, found.errors, duration),
                         columns=_COLUMNS)
    order = {c: j for j, c in enumerate(cols)}
    table["_o"] = table["output"].map(order)
    table = table.sort_values(["_o", "swing"], ascending=[True, False], na_position="last",
                              kind="stable").drop(columns="_o").reset_index(drop=True)
    kinds = {k: ranges[k][2] for k in ranges}
    table.attrs["units"] = {c: unit_of(c, kinds) for c in list(ranges) + cols}
    table.attrs["errors"] = [f"run {i}: {e}" for i, e in enumerate(found.errors) if e]
    table.attrs["scenario"] = sc.name
    table.attrs["duration"] = duration
    return table
