"""Temperature bands and excursions: hold time, time out of band, worst excursion, degree-hours.

Statistics are accumulated chunk by chunk (:class:`ExcursionTracker`), so a long run streamed to a
file never needs its whole history in memory.

**Crossing times are located on the solution itself.** A path hands the tracker, with each chunk
of samples, an *evaluator* of the tracked temperatures at any time inside the chunk (the closed
form of the exact and piecewise paths, the dense output of the stiff path). Where a temperature
crosses a band edge between two samples, the crossing time is found by a bracketing root search
(regula falsi with the Illinois modification, all crossings of a chunk at once) on that evaluator,
to 1e-9 of the sample interval, whatever the output step. Only intervals with a crossing cost
anything. Without an evaluator (:func:`excursion_stats` on a plain history) the temperature is
taken as linear between samples.

For a limit ``max`` the excursion is ``T - max`` (out of band when positive); for ``min`` it is
``min - T``. Per limit:

* ``hold_time [s]``: first time the node leaves the band (0 if it starts outside; NaN if never);
* ``time_out [s]``: total time outside, from the located crossings (an excursion that starts and
  ends between two samples is not seen);
* ``worst [K]``: largest excursion at the samples (0 if never outside);
* ``degree_hours [K*h]``: integral of the excursion while outside (trapezoids between the
  samples and the located crossings);
* ``margin [K]``: smallest distance to the limit at the samples (negative when exceeded).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

__all__ = ["ExcursionTracker", "excursion_stats", "LIMIT_COLUMNS", "locate_crossings"]

LIMIT_COLUMNS = ["node", "kind", "limit [degC]", "hold_time [s]", "time_out [s]", "worst [K]",
                 "degree_hours [K*h]", "margin [K]"]

#: Crossings are located to this fraction of their sample interval.
CROSSING_XTOL = 1e-9
_MAX_ITERATIONS = 100


def locate_crossings(g, lo, hi, g_lo, g_hi, xtol):
    """Roots of ``g`` in the brackets [lo, hi] (arrays), with g(lo) <= 0 < g(hi) per bracket.

    ``g(times, which)`` evaluates the functions of the brackets ``which`` (indices) at
    ``times``. Regula falsi with the Illinois modification (the value at the end that stays put
    twice in a row is halved, so both ends close in, superlinearly), all brackets together; a
    bracket is done when it is narrower than ``xtol`` (array) or a point hits zero. Returns the
    roots, each within ``xtol`` of the true one.

    >>> r = locate_crossings(lambda t, w: t ** 2 - 2.0, np.array([1.0]), np.array([2.0]),
    ...                      np.array([-1.0]), np.array([2.0]), np.array([1e-12]))
    >>> round(float(r[0]), 12)
    1.414213562373
    """
    lo, hi = np.array(lo, dtype=float), np.array(hi, dtype=float)
    g_lo, g_hi = np.array(g_lo, dtype=float), np.array(g_hi, dtype=float)
    root = 0.5 * (lo + hi)
    last = np.zeros(lo.size, dtype=np.int8)          # -1: lo moved last, +1: hi moved last
    hit = g_lo == 0                                  # a root found exactly
    root[hit] = lo[hit]
    active = np.flatnonzero((hi - lo > xtol) & ~hit)
    for _ in range(_MAX_ITERATIONS):
        if not active.size:
            break
        a, b, fa, fb = lo[active], hi[active], g_lo[active], g_hi[active]
        with np.errstate(divide="ignore", invalid="ignore"):
            x = a - fa * (b - a) / (fb - fa)
        bad = ~np.isfinite(x) | (x <= a) | (x >= b)
        x[bad] = 0.5 * (a[bad] + b[bad])
        fx = np.asarray(g(x, active), dtype=float)
        left = fx <= 0
        i_left, i_right = active[left], active[~left]
        lo[i_left], g_lo[i_left] = x[left], fx[left]
        hi[i_right], g_hi[i_right] = x[~left], fx[~left]
        # Illinois: the end that stayed put twice in a row has its value halved
        g_hi[i_left[last[i_left] == -1]] *= 0.5
        g_lo[i_right[last[i_right] == 1]] *= 0.5
        last[i_left], last[i_right] = -1, 1
        exact = fx == 0
        root[active[exact]] = x[exact]
        hit[active[exact]] = True
        active = active[~exact & (hi[active] - lo[active] > xtol[active])]
    return np.where(hit, root, 0.5 * (lo + hi))


def _interval_stats(t0, t1, e0, e1, tc=None):
    """Per-interval time out and integral of the positive excursion; linear between samples,
    or with the crossing times ``tc`` (NaN where an interval has no crossing) when given."""
    h = t1 - t0
    p0 = np.maximum(e0, 0.0)
    p1 = np.maximum(e1, 0.0)
    both = (e0 > 0) & (e1 > 0)
    none = (e0 <= 0) & (e1 <= 0)
    span = np.abs(e1 - e0)
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = np.where(span > 0, np.maximum(p0, p1) / span, 0.0)
        if tc is not None:
            # the part out of band: from the crossing to the end (going out) or from the start
            # to the crossing (coming back)
            out_part = np.where(e1 > 0, t1 - tc, tc - t0) / np.where(h > 0, h, 1.0)
            frac = np.where(np.isfinite(tc), out_part, frac)
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
        self.located = 0                     # crossings located on an evaluator
        self._t_last = None
        self._e_last = None

    def update(self, t: np.ndarray, T: np.ndarray, evaluate=None) -> None:
        """Add samples: ``t`` (c,) and ``T`` (c, n_limits), one column per limit.

        ``evaluate(times, columns)``, when given, returns the temperatures [degC] of limit
        columns ``columns`` at ``times`` (arrays of one length), for times between the previous
        sample and ``t[-1]``; crossings are then located on it.
        """
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
            up = (e0 <= 0) & (e1 > 0)
            tc = None
            if evaluate is not None:
                down = (e0 > 0) & (e1 <= 0)
                rows, cols = np.nonzero(up | down)
                if rows.size:
                    tc = np.full(e0.shape, np.nan)
                    tc[rows, cols] = self._locate(evaluate, tt, ee, rows, cols, up[rows, cols])
                    self.located += rows.size
            tout, area = _interval_stats(t0, t1, e0, e1, tc)
            self.time_out += tout.sum(axis=0)
            self.area += area.sum(axis=0)
            # first crossing into the excursion region
            pending = np.isnan(self.hold)
            if pending.any():
                has = up.any(axis=0) & pending
                if has.any():
                    k = np.argmax(up, axis=0)
                    cols = np.flatnonzero(has)
                    kk = k[cols]
                    if tc is not None:
                        self.hold[cols] = tc[kk, cols]
                    else:
                        a, b = e0[kk, cols], e1[kk, cols]
                        ta = tt[:-1][kk]
                        tb = tt[1:][kk]
                        self.hold[cols] = ta + (tb - ta) * (-a) / (b - a)
        self._t_last = float(t[-1])
        self._e_last = e[-1].copy()

    def _locate(self, evaluate, tt, ee, rows, cols, going_out):
        """Crossing times in intervals ``rows`` of limit columns ``cols``."""
        direction = np.where(going_out, 1.0, -1.0)     # g = direction * e rises through zero
        sign, values = self.sign[cols], self.values[cols]

        def g(times, which):
            T = np.asarray(evaluate(times, cols[which]), dtype=float)
            return direction[which] * sign[which] * (T - values[which])

        lo, hi = tt[rows], tt[rows + 1]
        g_lo = direction * ee[rows, cols]
        g_hi = direction * ee[rows + 1, cols]
        return locate_crossings(g, lo, hi, g_lo, g_hi, CROSSING_XTOL * (hi - lo))

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
    """Excursion statistics of one temperature history against one limit (convenience; the
    history is taken as linear between its samples)."""
    tr = ExcursionTracker(["x"], [kind], [limit])
    tr.update(np.asarray(times, dtype=float), np.asarray(temperatures, dtype=float)[:, None])
    row = tr.table().iloc[0]
    return {k: (row[k] if not isinstance(row[k], float) or not math.isnan(row[k]) else math.nan)
            for k in LIMIT_COLUMNS[3:]}
