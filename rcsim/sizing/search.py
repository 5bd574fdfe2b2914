"""Finding where a requirement starts to be met: bracketing, root finding, monotonicity checks.

The search works on the statistic of :mod:`~rcsim.sizing.evaluate` (zero or more: met) over the
search coordinate x of :class:`~rcsim.sizing.variable.Sized`.

Over a range (:func:`search_continuous`): the two ends are evaluated first (the caller refuses a
range met at both ends or at neither). Brent's method (``scipy.optimize.brentq``: inverse
quadratic interpolation and secant steps, safeguarded by bisection, R. P. Brent, *Algorithms for
Minimization without Derivatives*, 1973, ch. 4) then closes the bracket on the statistic, and
bisection finishes it if needed, until the last value not meeting the requirement and the first
meeting it are no further apart than the tolerance. The answer is the one meeting it, so the
requirement holds at the value reported.

Over choices (:func:`search_discrete`): bisection on the index of the sorted choices, assuming
the response is monotone: the answer is the first choice meeting the requirement next to one
that does not.

Both then run a few *check points* between the answer and the end of the range that meets the
requirement (a quarter, half and three quarters of the way; for choices, up to three of the
choices in between), all at once, and check everything evaluated (:func:`monotonicity`): every
requirement's slack should move one way only as the value grows, and met and not met should
change over once. If not, the whole range is scanned on a grid (every choice, for choices), and
the answer is the value past which every value run meets the requirement (the *last* change from
not met to met, seen from the end that meets it); the caller warns and lists where the changes
are. The check sees only the values run: a narrow dip between them goes unseen (a sweep over the
range shows the whole response).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import SolverError

__all__ = ["SearchOutcome", "ends_direction", "last_crossing", "monotonicity",
           "search_continuous", "search_discrete", "SCAN_POINTS", "CHECK_POINTS"]

#: Points of the scan over the range when the response is not monotone.
SCAN_POINTS = 17
#: Check points between the answer and the end of the range that meets the requirement.
CHECK_POINTS = 3
#: Most candidates a search may evaluate.
MAX_EVALUATIONS = 120
#: A slack may go back by this much (relative to its spread, plus this absolute amount in its
#: scale) before it counts as not monotone: the solvers' own tolerances (1e-6) leave noise.
_NOISE_RELATIVE, _NOISE_ABSOLUTE = 1e-5, 1e-4


@dataclass
class SearchOutcome:
    """Where a search ended.

    Attributes
    ----------
    answer : Candidate
        The value reported (meets every requirement).
    other : Candidate
        The nearest value evaluated on the other side (does not meet them).
    direction : {"at least", "at most"}
        Met at the high end (values from the answer up meet it) or at the low end.
    not_monotone : list of int
        Requirements whose slack was not monotone in the values evaluated.
    flips : bool
        Met and not met changed over more than once among the values evaluated.
    crossings : list of (Candidate, Candidate)
        After a scan: every pair of neighbouring values where met and not met change over.
    scanned : bool
        The range was scanned because the response was not monotone.
    """

    answer: object
    other: object
    direction: str
    not_monotone: list = field(default_factory=list)
    flips: bool = False
    crossings: list = field(default_factory=list)
    scanned: bool = False

    @property
    def monotone(self) -> bool:
        return not self.not_monotone and not self.flips


def ends_direction(low, high) -> str | None:
    """``"at least"`` when only the high end meets the requirement, ``"at most"`` when only the
    low end does, None otherwise (both or neither)."""
    if high.met and not low.met:
        return "at least"
    if low.met and not high.met:
        return "at most"
    return None


def last_crossing(candidates, direction):
    """(not met, met): the met candidate past which every evaluated one meets the requirement
    (seen from the end that meets it), and its neighbour that does not."""
    ordered = sorted(candidates, key=lambda c: c.x)
    if direction == "at most":
        ordered = ordered[::-1]
    i = len(ordered) - 1
    while i > 0 and ordered[i - 1].met:
        i -= 1
    if i == 0 or not ordered[i].met:  # pragma: no cover - the ends were checked
        raise SolverError("the search lost its bracket")
    return ordered[i - 1], ordered[i]


def _monotone(seq) -> bool:
    seq = np.asarray(seq, dtype=float)
    if len(seq) < 3:
        return True
    seq = np.where(np.isfinite(seq), seq, np.sign(seq) * 1e6)
    d = np.diff(seq)
    noise = _NOISE_RELATIVE * float(seq.max() - seq.min()) + _NOISE_ABSOLUTE
    return bool(np.all(d >= -noise) or np.all(d <= noise))


def monotonicity(candidates, n_requirements, direction) -> tuple[list, bool]:
    """(requirements whose slack is not monotone, whether met / not met flips more than once)
    over the candidates evaluated."""
    ordered = sorted(candidates, key=lambda c: c.x)
    bad = [i for i in range(n_requirements) if not _monotone([c.slack[i] for c in ordered])]
    met = [c.met for c in ordered]
    if direction == "at most":
        met = met[::-1]
    flips = any(a and not b for a, b in zip(met, met[1:]))
    counts = [c.n_met for c in ordered]
    if direction == "at most":
        counts = counts[::-1]
    if any(b < a for a, b in zip(counts, counts[1:])):  # with draws: each draw monotone?
        flips = True
    return bad, flips


def crossings(candidates) -> list:
    """Neighbouring pairs (by value) where met and not met change over."""
    ordered = sorted(candidates, key=lambda c: c.x)
    return [(a, b) for a, b in zip(ordered, ordered[1:]) if a.met != b.met]


def _brent(evaluate, a, b, xtol) -> None:
    """Close the bracket [a, b] (opposite signs) with scipy's brentq; the evaluations are kept
    by ``evaluate``, so the bracket is read from them afterwards."""
    from scipy.optimize import brentq

    def f(x):
        return evaluate([x])[0].stat

    try:
        brentq(f, a, b, xtol=xtol, rtol=4 * np.finfo(float).eps, maxiter=60)
    except RuntimeError:  # not converged in maxiter: bisection below finishes it
        pass


def _narrow(evaluate, direction, xtol, count) -> tuple:
    """Bisect the last crossing until it is no wider than ``xtol``; returns (not met, met)."""
    while True:
        other, answer = last_crossing(evaluate.candidates, direction)
        if abs(answer.x - other.x) <= xtol * (1 + 1e-9):
            return other, answer
        if count() >= MAX_EVALUATIONS:
            raise SolverError(f"the search did not settle in {MAX_EVALUATIONS} evaluations",
                              hint="give a coarser tolerance or a narrower range")
        evaluate([0.5 * (answer.x + other.x)])


def _check_points(answer, end, checks) -> list[float]:
    return [answer + (end - answer) * (k + 1) / (checks + 1) for k in range(checks)]


def search_continuous(evaluate, low, high, xtol, scan_points=SCAN_POINTS,
                      checks=CHECK_POINTS) -> SearchOutcome:
    """Search the range [0, 1] of the search coordinate; ``low`` and ``high`` are the evaluated
    ends (one meets the requirements, the other does not); ``xtol`` the tolerance in x;
    ``checks`` the check points run after the search.

    ``evaluate(xs)`` returns the candidates at ``xs`` and keeps them in ``evaluate.candidates``.
    """
    direction = ends_direction(low, high)
    count = lambda: len(evaluate.candidates)  # noqa: E731
    _brent(evaluate, low.x, high.x, xtol)
    other, answer = _narrow(evaluate, direction, xtol, count)
    if checks:
        met_end = high.x if direction == "at least" else low.x
        evaluate(_check_points(answer.x, met_end, checks))
    n_req = len(answer.slack)
    bad, flips = monotonicity(evaluate.candidates, n_req, direction)
    outcome = SearchOutcome(answer, other, direction, bad, flips)
    if outcome.monotone:
        return outcome
    evaluate(list(np.linspace(low.x, high.x, scan_points)))
    other, answer = last_crossing(evaluate.candidates, direction)
    if abs(answer.x - other.x) > xtol:
        lo_x, hi_x = sorted((other.x, answer.x))
        _brent(evaluate, lo_x, hi_x, xtol)
        other, answer = _narrow(evaluate, direction, xtol, count)
    bad2, flips2 = monotonicity(evaluate.candidates, n_req, direction)
    return SearchOutcome(answer, other, direction, sorted(set(bad) | set(bad2)), flips or flips2,
                         crossings(evaluate.candidates), True)


def search_discrete(evaluate, low, high, n, checks=CHECK_POINTS) -> SearchOutcome:
    """Bisect the choices 0..n-1 (``low``, ``high``: the evaluated first and last), then run up
    to ``checks`` of the choices between the answer and the end that meets the requirement."""
    direction = ends_direction(low, high)
    other, answer = (low, high) if direction == "at least" else (high, low)
    while abs(answer.x - other.x) > 1:
        mid = evaluate([float((int(answer.x) + int(other.x)) // 2)])[0]
        if mid.met:
            answer = mid
        else:
            other = mid
    if checks:
        met_end = high.x if direction == "at least" else low.x
        between = sorted({round(x) for x in _check_points(answer.x, met_end, checks)}
                         - {answer.x, met_end})
        evaluate([float(i) for i in between])
    n_req = len(answer.slack)
    bad, flips = monotonicity(evaluate.candidates, n_req, direction)
    outcome = SearchOutcome(answer, other, direction, bad, flips)
    if outcome.monotone:
        return outcome
    evaluate([float(i) for i in range(n)])
    other, answer = last_crossing(evaluate.candidates, direction)
    bad2, flips2 = monotonicity(evaluate.candidates, n_req, direction)
    return SearchOutcome(answer, other, direction, sorted(set(bad) | set(bad2)), flips or flips2,
                         crossings(evaluate.candidates), True)
