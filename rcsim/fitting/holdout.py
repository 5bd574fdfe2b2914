"""A held-out span of a log: rows the fit does not see, on which its prediction is scored.

Written as

* a fraction of the log's span at its end: ``0.2``, ``"0.2"``, ``"20 %"`` (the rows in the last
  20 % of the time from the first to the last row);
* a time range from the log's first row: ``"20 h..24 h"``, ``"20h.."`` (to the end), ``"..4 h"``
  (from the start), or a pair ``("20 h", "24 h")`` / ``(72000, 86400)`` (seconds); both ends
  belong to the span.

The fit leaves the measured values of the span out of its residuals; the model still runs
through it (driven by the log's inputs), and its error there is the *held-out* RMSE. For a
stochastic fit the Kalman filter makes no update in the span, so its prediction there is the
open-loop prediction from the state it had estimated when the span began.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..units import to_si

__all__ = ["Holdout", "parse_holdout"]


@dataclass(frozen=True)
class Holdout:
    """The held-out span [start, end] in seconds from the log's first row."""

    start: float
    end: float
    text: str = ""

    def mask(self, t) -> np.ndarray:
        """True for the rows (times ``t`` [s]) inside the span."""
        t = np.asarray(t, dtype=float)
        return (t >= self.start - 1e-9) & (t <= self.end + 1e-9)

    def describe(self) -> str:
        from .logs import fmt_span

        return f"{self.text} ({fmt_span(self.start)} to {fmt_span(self.end)} after the first row)"


_FRACTION = re.compile(r"^\s*([0-9]*\.?[0-9]+(?:[eE][-+]?\d+)?)\s*(%?)\s*$")


def parse_holdout(spec, t, where: str = "holdout") -> Holdout | None:
    """The span of ``spec`` on a log with row times ``t`` [s from the first row] (None: none).

    >>> parse_holdout(0.25, [0.0, 100.0, 200.0, 300.0, 400.0])
    Holdout(start=300.0, end=400.0, text='the last 25 %')
    >>> parse_holdout("100 s..", [0.0, 100.0, 200.0]).start
    100.0

    Raises
    ------
    InputError
        A fraction outside (0, 1), a range that is not LOW..HIGH with times, an empty span or
        one that lies outside the log.
    """
    if spec is None:
        return None
    t = np.asarray(t, dtype=float)
    span = float(t[-1] - t[0])
    fraction = _as_fraction(spec, where)
    if fraction is not None:
        if not 0.0 < fraction < 1.0:
            raise InputError(f"a held-out fraction must lie between 0 and 1, got {spec!r}", where,
                             "e.g. 0.2 holds out the last 20 % of the log")
        start = float(t[-1]) - fraction * span
        return Holdout(start, float(t[-1]), f"the last {fraction * 100:.3g} %")
    low, high = _as_range(spec, where)
    lo = float(t[0]) if low is None else to_si(low, "time", f"{where} (start)")
    hi = float(t[-1]) if high is None else to_si(high, "time", f"{where} (end)")
    if not lo < hi:
        raise InputError(f"the held-out span {spec!r} is empty (its end is not after its start)",
                         where, "write LOW..HIGH with LOW < HIGH, e.g. 20h..24h")
    if hi < t[0] or lo > t[-1]:
        from .logs import fmt_span

        raise InputError(f"the held-out span {spec!r} lies outside the log, which covers "
                         f"0 to {fmt_span(span)}", where)
    return Holdout(lo, hi, f"the span {spec if isinstance(spec, str) else tuple(spec)!s}")


def _as_fraction(spec, where) -> float | None:
    if isinstance(spec, bool):
        raise InputError(f"holdout must be a fraction or a time range, got {spec!r}", where)
    if isinstance(spec, (int, float)):
        if not math.isfinite(spec):
            raise InputError(f"holdout must be a finite fraction, got {spec!r}", where)
        return float(spec)
    if isinstance(spec, str):
        m = _FRACTION.match(spec)
        if m:
            value = float(m.group(1))
            return value / 100.0 if m.group(2) else value
    return None


def _as_range(spec, where):
    if isinstance(spec, str):
        if ".." not in spec:
            raise InputError(f"holdout {spec!r} is neither a fraction nor a time range", where,
                             "write e.g. 0.2 (the last 20 %) or 20h..24h")
        low, high = spec.split("..", 1)
        return low.strip() or None, high.strip() or None
    if isinstance(spec, (tuple, list)) and len(spec) == 2:
        return spec[0], spec[1]
    raise InputError(f"holdout must be a fraction or a time range, got {spec!r}", where,
                     "write e.g. 0.2 (the last 20 %) or 20h..24h")
