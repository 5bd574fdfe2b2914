"""Sizing under uncertainty: the draws, the share of draws meeting a requirement, its interval.

Uncertain inputs are given in the sweep grammar (``{"boundaries.bay.temperature.sine.mean":
"normal(25 degC, 2 K)"}``, see :mod:`rcsim.sweep.grammar`) and drawn ``samples`` times, once, up
front, from ``numpy.random.default_rng(seed)`` one key after the other (as a sweep draws them).
Every candidate value of the search is run with the **same draws** (common random numbers), so
the share of draws meeting the requirement changes with the candidate only, and the search sees a
smooth response instead of sampling noise.

A candidate meets the requirement at confidence ``c`` when at least ``M = ceil(c N)`` of the
``N`` draws meet it. With each draw's slack ``s_j`` (its smallest slack over the requirements,
each divided by its scale), that is: the M-th largest ``s_j`` is zero or more. The search runs on
that order statistic, which is as continuous in the candidate as the slacks themselves.

The share met at the answer, ``k/N``, has a binomial sampling uncertainty; its 95 % interval is
Wilson's score interval (E. B. Wilson, "Probable inference, the law of succession, and
statistical inference", J. Am. Stat. Assoc. 22 (1927) 209-212), from
``scipy.stats.binomtest(k, N).proportion_ci(method="wilson")``.
"""

from __future__ import annotations

import math
import numbers

import numpy as np

from ..errors import InputError
from ..sweep.design import Design, check_design_values, make_design
from ..sweep.grammar import Distribution

__all__ = ["draw_uncertain", "check_confidence", "needed_count", "order_statistic",
           "wilson_interval"]


def check_confidence(confidence, uncertain: bool) -> float | None:
    """The confidence as a share in (0, 1) (0.95 by default when something is uncertain)."""
    if not uncertain:
        if confidence is not None:
            raise InputError("a confidence needs uncertain inputs", "confidence",
                             "give vary_uncertain (--vary-uncertain KEY=normal(...)) and samples")
        return None
    if confidence is None:
        return 0.95
    if isinstance(confidence, str):
        text = confidence.strip()
        try:
            confidence = float(text[:-1]) / 100.0 if text.endswith("%") else float(text)
        except ValueError:
            raise InputError(f"cannot read the confidence {text!r}", "confidence",
                             "give a share such as 0.95 (or 95%)") from None
    if isinstance(confidence, bool) or not isinstance(confidence, numbers.Real) \
            or not 0.0 < float(confidence) < 1.0:
        raise InputError(f"the confidence must be between 0 and 1, got {confidence!r}",
                         "confidence", "e.g. 0.95 for 95 % of the draws")
    return float(confidence)


def draw_uncertain(sc, vary_uncertain, samples, seed, sized_keys) -> Design | None:
    """The draws of the uncertain inputs (a sweep :class:`~rcsim.sweep.design.Design` with
    ``values`` of shape (samples, keys)), checked; None when nothing is uncertain."""
    if not vary_uncertain:
        if samples is not None:
            raise InputError("samples given but nothing is uncertain", "samples",
                             "give vary_uncertain (--vary-uncertain KEY=normal(...)), or leave "
                             "samples out")
        return None
    if not isinstance(vary_uncertain, dict):
        raise InputError("vary_uncertain is a dict {key path: distribution}", "vary_uncertain",
                         "e.g. {'boundaries.bay.temperature.sine.mean': 'normal(25 degC, 2 K)'}")
    both = [k for k in vary_uncertain if k in sized_keys]
    if both:
        raise InputError(f"{both[0]!r} is both sized and uncertain", "vary_uncertain",
                         "a key is either the value sized (vary) or an uncertain input")
    design = make_design(sc, vary_uncertain, samples, seed)
    for key, spec in zip(design.keys, design.specs):
        if not isinstance(spec, Distribution):
            raise InputError("an uncertain input needs a distribution", f"vary_uncertain {key}",
                             "e.g. normal(25degC,2K), uniform(2,4), lognormal(2.5,1.3), "
                             "triangular(1,2,4)")
    check_design_values(sc, design)
    return design


def needed_count(confidence: float, n: int) -> int:
    """Draws that must meet the requirement: ``ceil(confidence * n)`` (at least 1).

    >>> needed_count(0.95, 200), needed_count(0.95, 10), needed_count(0.9, 10)
    (190, 10, 9)
    """
    return max(1, min(n, math.ceil(confidence * n - 1e-9)))


def order_statistic(values, m: int) -> np.ndarray:
    """The ``m``-th largest of ``values`` along axis 0 (NaN sorted as the smallest).

    >>> float(order_statistic([3.0, 1.0, 2.0, 5.0], 2))
    3.0
    """
    v = np.asarray(values, dtype=float)
    v = np.where(np.isnan(v), -np.inf, v)
    return np.sort(v, axis=0)[v.shape[0] - m]


def wilson_interval(k: int, n: int, level: float = 0.95) -> tuple[float, float]:
    """Wilson's score interval of a share ``k/n`` at ``level`` (scipy.stats.binomtest)."""
    from scipy import stats

    ci = stats.binomtest(int(k), int(n)).proportion_ci(confidence_level=level, method="wilson")
    return float(ci.low), float(ci.high)
