"""Temperature bands and excursions: hold time, time out of band, worst excursion, degree-hours.

Between two samples a temperature is taken to vary linearly, so crossing times are interpolated.
Statistics are accumulated chunk by chunk (:class:`ExcursionTracker`), so a long run streamed to a
file never needs its whole history in memory.

For a limit ``max`` the excursion is ``T - max`` (out of band when positive); for ``min`` it is
``min - T``. Per limit:

* ``hold_time [s]``: first time the node leaves the band (0 if it starts outside; NaN if never);
* ``time_out [s]``: total time outside;
* ``worst [K]``: largest excursion (0 if never outside);
* ``degree_hours [K*h]``: integral of the excursion while outside;
* ``margin [K]``: smallest distance to the limit (negative when it was exceeded).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

__all__ = ["ExcursionTracker", "excursion_stats", "LIMIT_COLUMNS"]

LIMIT_COLUMNS = ["node", "kind", "limit [degC]", "hold_time [s]", "time_out [s]", "worst [K]",
                 "degree_hours [K*h]", "margin [K]"]


def _interval_stats(t0, t1, e0, e1):
    """Per-interval time out and integral of positive excursion, linear between samples."""
    h = t1 - t0
    p0 = np.maximum(e0, 0.0)
    p1 = np.maximum(e1, 0.0)
    both = (e0 > 0) & (e1 > 0)
    none = (e0 <= 0) & (e1 <= 0)
    span = np.abs(e1 - e0)
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = np.where(span > 0, np.maximum(p0, p1) / span, 0.0)
    time_out = np.where(both, h, np.where(none, 0.0, frac * h))
    area = np.where(both, 0.5 * h * (e0 + e1),
                    np.where(none, 0.0, 0.5 * frac * h * np.maximum(p0, p1)))
    return time_out, area


class ExcursionTracker:
    """Streaming excursion statistics for several limits at once.

    Parameters
    ----------
    nodes : list of str
    kinds : list of {'min', 'max'}
    values : array of limit temperatures [degC]
    """

    def __init__(self, nodes, kinds, values):
        self.nodes = list(nodes)
        self.kinds = list(kinds)
        self.values = np.asarray(values, dtype=float)
        self.sign = np.array([1.0 if k == "max" else -1.0 for k in self.kinds])
        m = len(self.nodes)
        self.hold = np.full(m, np.nan)
        self.time_out = np.zeros(m)
        self.area = np.zeros(m)
        self.worst = np.full(m, -np.inf)
        self._t_last = None
        self._e_last = None

    def update(self, t: np.ndarray, T: np.ndarray) -> None:
        """Add samples: ``t`` (c,) and ``T`` (c, n_limits), one column per limit."""
        if t.size == 0 or not self.nodes:
            return
        e = (T - self.values[None, :]) * self.sign[None, :]
        if self._t_last is None:
            first_out = e[0] > 0
            self.hold[first_out] = t[0]
            tt, ee = t, e
        else:
            tt = np.concatenate([[self._t_last], t])
            ee = np.vstack([self._e_last[None, :], e])
        self.worst = np.maximum(self.worst, e.max(axis=0))
        if tt.size >= 2:
            t0, t1 = tt[:-1, None], tt[1:, None]
            e0, e1 = ee[:-1], ee[1:]
            tout, area = _interval_stats(t0, t1, e0, e1)
            self.time_out += tout.sum(axis=0)
            self.area += area.sum(axis=0)
            # first crossing into the excursion region
            crossing = (e0 <= 0) & (e1 > 0)
            pending = np.isnan(self.hold)
            if pending.any():
                has = crossing.any(axis=0) & pending
                if has.any():
                    k = np.argmax(crossing, axis=0)
                    cols = np.flatnonzero(has)
                    kk = k[cols]
                    a, b = e0[kk, cols], e1[kk, cols]
                    ta = tt[:-1][kk]
                    tb = tt[1:][kk]
                    self.hold[cols] = ta + (tb - ta) * (-a) / (b - a)
        self._t_last = float(t[-1])
        self._e_last = e[-1].copy()

    def table(self) -> pd.DataFrame:
        """One row per limit with the columns of :data:`LIMIT_COLUMNS`."""
        worst = np.where(np.isfinite(self.worst), self.worst, np.nan)
        return pd.DataFrame({
            "node": self.nodes,
            "kind": self.kinds,
            "limit [degC]": self.values,
            "hold_time [s]": self.hold,
            "time_out [s]": self.time_out,
            "worst [K]": np.maximum(worst, 0.0),
            "degree_hours [K*h]": self.area / 3600.0,
            "margin [K]": -worst,
        }, columns=LIMIT_COLUMNS)


def excursion_stats(times, temperatures, limit: float, kind: str = "max") -> dict:
    """Excursion statistics of one temperature history against one limit (convenience)."""
    tr = ExcursionTracker(["x"], [kind], [limit])
    tr.update(np.asarray(times, dtype=float), np.asarray(temperatures, dtype=float)[:, None])
    row = tr.table().iloc[0]
    return {k: (row[k] if not isinstance(row[k], float) or not math.isnan(row[k]) else math.nan)
            for k in LIMIT_COLUMNS[3:]}
