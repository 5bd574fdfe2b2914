"""What a sweep table says: percentiles of each output and first-order sensitivity indices.

Nothing here runs a model; both read a table (a DataFrame from ``rcsim.sweep`` or
:func:`~rcsim.sweep.read_table`, or a :class:`~rcsim.sweep.SweepTable`). Failed runs are left
out, and so are runs whose energy balance is open (``energy_balance`` above 1e-3,
:func:`~rcsim.sweep.tables.trusted`): their outputs are not to be trusted, so they stay in the
table but count in no statistic; each result says how many were left out. A hold time of NaN
means the node never left its band within the run: it ranks above every finite hold time
(percentiles), or stands in as the run duration, a lower bound (indices).

:func:`first_order_indices` estimates variance-based first-order (Sobol) indices
S_i = Var(E[Y | X_i]) / Var(Y) by the correlation ratio over equal-count bins of each input
(Plischke, Borgonovo & Smith, "Global sensitivity measures from given data", European Journal of
Operational Research 226 (2013) 536-550), with Kelley's (1935) correction of the between-bin
variance for the finite number of runs per bin.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from ..base import suggest
from ..errors import InputError
from .tables import (SweepTable, input_columns, open_balance_mask, output_columns, succeeded,
                     trusted)

__all__ = ["percentiles", "percentile_text", "first_order_indices"]


def _frame(table) -> pd.DataFrame:
    return table.to_frame() if isinstance(table, SweepTable) else table


def percentiles(table: pd.DataFrame, q=(5, 50, 95)) -> pd.DataFrame:
    """Percentiles of each output over the runs that did not fail and whose energy balance
    closes.

    A hold time of NaN (never left the band within the run) counts as longer than any finite one,
    so a percentile that falls among such runs is ``inf`` here: a number that sorts and compares
    as "more than the run's duration". It is for computing with; wherever rcsim shows or writes
    it, it is text giving the run length (:func:`percentile_text`: ``"> 24 h"``), and
    ``attrs["inf"]`` says what it means for whoever saves the frame. A run whose energy balance
    is open (``energy_balance`` above 1e-3) is left out: its outputs are not to be trusted.

    Returns a DataFrame indexed by output with one column per percentile (``"5 %"``...) and
    ``runs`` (runs used), ``never`` (runs that never left the band) and ``open_balance`` (runs
    that did not fail but were left out for an open energy balance; also
    ``attrs["open_balance"]``); ``attrs["duration"]`` is the run length [s] where the table
    says it.

    >>> t = pd.DataFrame({"hold_time.x": [1.0, 2.0, 3.0, np.nan]})
    >>> percentiles(t, q=(50, 90))[["50 %", "90 %", "never"]].to_dict("records")
    [{'50 %': 2.5, '90 %': inf, 'never': 1}]
    >>> t["energy_balance"] = [0.0, 0.0, 0.0, 0.5]        # run 3 open: left out
    >>> percentiles(t, q=(50,))[["50 %", "runs", "never", "open_balance"]].to_dict("records")
    [{'50 %': 2.0, 'runs': 3, 'never': 0, 'open_balance': 1}]
    """
    table = _frame(table)
    ok = trusted(table)
    left_out = int((succeeded(table) & open_balance_mask(table)).sum())
    rows = {}
    for c in output_columns(table):
        x = table[c].to_numpy(dtype=float)[ok]
        never = 0
        if c.startswith("hold_time."):
            never = int(np.isnan(x).sum())
            x = np.where(np.isnan(x), np.inf, x)
        else:
            x = x[np.isfinite(x)]
        row = {}
        for p in q:
            if x.size == 0:
                row[f"{p:g} %"] = math.nan
                continue
            with np.errstate(invalid="ignore"):
                v = float(np.percentile(np.sort(x), p))
            row[f"{p:g} %"] = math.inf if math.isnan(v) else v
        row["runs"] = int(x.size)
        row["never"] = never
        row["open_balance"] = left_out
        rows[c] = row
    out = pd.DataFrame.from_dict(rows, orient="index")
    out.attrs["open_balance"] = left_out
    duration = table.attrs.get("duration")
    out.attrs["duration"] = duration
    out.attrs["inf"] = ("inf: more than the run's duration"
                        + (f" ({float(duration):g} s)" if duration else "")
                        + "; the node had not left its band at that percentile")
    return out


def percentile_text(value: float, duration=None, *, unit: str = "h") -> str:
    """A hold-time percentile as a practitioner reads it: the value [s] in ``unit``
    (``"s"``, ``"min"``, ``"h"`` or ``"d"``), or, where it is ``inf`` (the runs never left the
    band), ``"> <duration> <unit>"``: more than the run's length (``"> the run"`` where the
    duration is not known). NaN (no run to count) is ``"-"``.

    >>> percentile_text(5400.0), percentile_text(math.inf, 86400.0), percentile_text(math.inf)
    ('1.5 h', '> 24 h', '> the run')
    """
    size = {"s": 1.0, "min": 60.0, "h": 3600.0, "d": 86400.0}[unit]
    if math.isnan(value):
        return "-"
    if math.isinf(value):
        return f"> {float(duration) / size:.4g} {unit}" if duration else "> the run"
    return f"{value / size:.4g} {unit}"


def _bins_of(x: np.ndarray, bins: int) -> np.ndarray:
    """Bin label per value: distinct values when there are few, else equal-count bins."""
    uniq, inverse = np.unique(x, return_inverse=True)
    if uniq.size <= bins:
        return inverse
    order = np.argsort(x, kind="stable")
    labels = np.empty(x.size, dtype=np.int64)
    labels[order] = (np.arange(x.size) * bins) // x.size
    return labels


def _correlation_ratio(x: np.ndarray, y: np.ndarray, bins: int, ss_total: float) -> float:
    """Kelley-corrected share of the sum of squares of ``y`` between bins of ``x``."""
    labels = _bins_of(x, bins)
    m = int(labels.max()) + 1
    counts = np.bincount(labels, minlength=m).astype(float)
    sums = np.bincount(labels, weights=y, minlength=m)
    used = counts > 0
    means = sums[used] / counts[used]
    ss_between = float((counts[used] * (means - y.mean()) ** 2).sum())
    ss_within = ss_total - ss_between
    m_used = int(used.sum())
    n = y.size
    if n > m_used:
        ss_between -= (m_used - 1) * ss_within / (n - m_used)
    return max(0.0, ss_between / ss_total)


def first_order_indices(table: pd.DataFrame, inputs=None, outputs=None, bins=None) -> pd.DataFrame:
    """Variance-based first-order indices S_i = Var(E[Y|X_i]) / Var(Y) from sampled runs.

    Estimated for each input by the correlation ratio over ``bins`` equal-count bins of that input
    (Plischke, Borgonovo & Smith 2013, see the module notes); an input with at most ``bins``
    distinct values (a grid) is binned by value. The between-bin sum of squares is corrected for
    the finite bin sizes as in Kelley's epsilon-squared (Kelley 1935):
    S = (SS_between - (M - 1) SS_within / (N - M)) / SS_total, clipped at 0.

    The inputs must be independent (as drawn by :func:`rcsim.sweep`). Hold times never reached are
    taken as the run duration (a lower bound) for this purpose. Failed runs are left out, and
    so are runs whose energy balance is open (their number: ``attrs["open_balance"]``).
    ``bins`` defaults to round(sqrt(N)) between 2 and 50.

    Returns
    -------
    DataFrame
        Rows: inputs; columns: outputs. A column whose output does not vary is NaN.

    >>> rng = np.random.default_rng(1)
    >>> x1, x2 = rng.uniform(size=4000), rng.uniform(size=4000)
    >>> t = pd.DataFrame({"a": x1, "b": x2, "max.y": 2 * x1 + x2})
    >>> s = first_order_indices(t, inputs=["a", "b"], outputs=["max.y"])
    >>> round(float(s.at["a", "max.y"]), 1), round(float(s.at["b", "max.y"]), 1)  # 0.8, 0.2
    (0.8, 0.2)
    """
    table = _frame(table)
    ok = trusted(table)
    inputs = list(inputs) if inputs is not None else input_columns(table)
    outputs = list(outputs) if outputs is not None else output_columns(table)
    for c in inputs + outputs:
        if c not in table.columns:
            raise InputError(f"no column {c!r} in the table", "first_order_indices",
                             suggest(c, list(table.columns)))
    duration = table.attrs.get("duration")
    result = pd.DataFrame(index=pd.Index(inputs, name="input"), columns=outputs, dtype=float)
    for c in outputs:
        y = table[c].to_numpy(dtype=float)[ok]
        if c.startswith("hold_time.") and duration:
            y = np.where(np.isnan(y), float(duration), y)
        keep = np.isfinite(y)
        y = y[keep]
        n = y.size
        if n < 4:
            continue
        ss_total = float(((y - y.mean()) ** 2).sum())
        if ss_total <= 1e-24 * max(1.0, float(np.abs(y).max())) ** 2 * n:
            continue
        m_bins = bins or int(min(50, max(2, round(math.sqrt(n)))))
        for k in inputs:
            x = table[k].to_numpy(dtype=float)[ok][keep]
            result.at[k, c] = _correlation_ratio(x, y, m_bins, ss_total)
    result.attrs["open_balance"] = int((succeeded(table) & open_balance_mask(table)).sum())
    return result
