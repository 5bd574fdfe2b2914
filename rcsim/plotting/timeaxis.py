"""Time axes: seconds shown in s, min, h or d chosen from the span, or as dates from a start."""

from __future__ import annotations

import numpy as np
import pandas as pd

__all__ = ["time_unit_for", "TimeAxis", "UNIT_SECONDS"]

#: Seconds in each unit a time axis may use.
UNIT_SECONDS = {"s": 1.0, "min": 60.0, "h": 3600.0, "d": 86400.0}


def time_unit_for(span: float) -> tuple[str, float]:
    """The time unit for an axis spanning ``span`` seconds, and its length in seconds.

    Up to 3 min in s, up to 3 h in min, up to 4 d in h, beyond in d.

    >>> time_unit_for(2 * 3600), time_unit_for(72 * 3600), time_unit_for(30 * 86400)
    (('min', 60.0), ('h', 3600.0), ('d', 86400.0))
    """
    if span <= 180.0:
        return "s", 1.0
    if span <= 3 * 3600.0:
        return "min", 60.0
    if span <= 4 * 86400.0:
        return "h", 3600.0
    return "d", 86400.0


def _naive(start):
    ts = pd.Timestamp(start)
    return ts.tz_localize(None) if ts.tzinfo is not None else ts


class TimeAxis:
    """Maps result times [s] to axis values and labels the axis."""

    # tick spacings that land on round numbers of each unit (15 min, 6 h, a week, ...)
    _STEPS = {"s": (1, 2, 5, 10, 15, 30, 60), "min": (1, 2, 5, 10, 15, 30, 60),
              "h": (1, 2, 3, 6, 12, 24, 48, 72), "d": (1, 2, 7, 14, 28, 56, 91, 182, 365)}

    def __init__(self, t: np.ndarray, start=None, dates: bool = True):
        self.span = float(t[-1] - t[0]) if t.size else 0.0
        self.start = _naive(start) if (dates and start is not None) else None
        if self.start is not None:
            self.unit, self.scale = "date", 1.0
        else:
            self.unit, self.scale = time_unit_for(self.span)

    def x(self, seconds):
        """Axis values of times [s]: numbers in the unit, or datetime64 from the start."""
        seconds = np.asarray(seconds, dtype=float)
        if self.start is None:
            return seconds / self.scale
        stamps = (self.start + pd.to_timedelta(np.atleast_1d(seconds), unit="s")).to_numpy()
        return stamps if seconds.ndim else stamps[0]

    @property
    def label(self) -> str:
        if self.start is not None:
            return f"date and time [from {self.start:%Y-%m-%d %H:%M}]"
        return f"time [{self.unit}]"

    def format(self, ax) -> None:
        """Label the x axis of ``ax`` and place its ticks on round numbers of the unit."""
        from matplotlib import dates as mdates
        from matplotlib.ticker import MaxNLocator, MultipleLocator

        ax.set_xlabel(self.label)
        if self.start is not None:
            locator = mdates.AutoDateLocator(minticks=4, maxticks=9)
            ax.xaxis.set_major_locator(locator)
            ax.xaxis.set_major_formatter(mdates.ConciseDateFormatter(locator))
            return
        span = self.span / self.scale
        step = next((s for s in self._STEPS[self.unit] if span / s <= 8.5), None)
        ax.xaxis.set_major_locator(MultipleLocator(step) if step else MaxNLocator(nbins=8))
