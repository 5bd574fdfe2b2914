"""Evaluating candidates: run the scenario at a value (with every draw), and judge the runs.

A *candidate* is a point ``x`` of the search coordinate (see :class:`~rcsim.sizing.variable.Sized`).
:class:`Evaluator` runs the scenario at each new candidate through a sweep executor (a
:class:`~rcsim.sweep.executors.RowRunner`: this process, local processes or Dask; the job
travels once), with the same draws of the uncertain inputs at every candidate, and keeps every
run for the evaluations table. A candidate evaluated once is never run again.

Per candidate (:class:`Candidate`): each requirement's slack divided by its scale
(:attr:`Requirement.scale <rcsim.sizing.requirement.Requirement.scale>`), per run; the run's
smallest over the requirements; and the *statistic* the search works on: that smallest slack
(one run), or its M-th largest over the draws (``M = ceil(confidence N)``, see
:mod:`~rcsim.sizing.uncertain`). The candidate meets the requirements when the statistic is zero
or more.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..errors import InputError, SolverError
from .uncertain import needed_count, order_statistic

__all__ = ["Candidate", "Evaluator", "INPUT_ERRORS"]

#: Error types a failed run's text may start with that mean the value was refused.
INPUT_ERRORS = ("InputError", "ScenarioError", "UnitError", "NetworkError", "ProfileError",
                "DataError")

#: A statistic never goes below this (a failed draw counts as far from met, but finite).
_FLOOR = -1e6


@dataclass
class Candidate:
    """One evaluated value.

    Attributes
    ----------
    x : float
        Search coordinate.
    index : int
        Order of evaluation (0, 1, ...).
    values : ndarray
        The sized keys' values (SI).
    stat : float
        The statistic (>= 0: met).
    met : bool
    slack : ndarray
        Per requirement: its slack over its scale (one run), or the M-th largest over the draws.
    achieved : ndarray
        Per requirement: its output (one run), or the output met by M of the draws (the M-th
        best); NaN for a hold time not reached within the run.
    n_met, n_runs, n_failed : int
        Runs meeting every requirement, runs, runs that failed.
    rows : slice
        This candidate's rows of the evaluations table.
    """

    x: float
    index: int
    values: np.ndarray
    stat: float
    met: bool
    slack: np.ndarray
    achieved: np.ndarray
    n_met: int
    n_runs: int
    n_failed: int
    rows: slice

    @property
    def share(self) -> float:
        """Share of the runs meeting every requirement."""
        return self.n_met / self.n_runs if self.n_runs else float("nan")


class Evaluator:
    """Runs and judges candidates; keeps every run.

    Parameters
    ----------
    sized : Sized
    requirements : list of Requirement
    layout : OutputLayout
        The outputs each run reports (:func:`rcsim.sweep.worker.output_layout`).
    runner : RowRunner
        Runs rows of ``keys``.
    keys : list of str
        The job's keys: the sized keys, then the uncertain ones, then ``simulation.duration``
        when runs are lengthened.
    draws : ndarray (samples, uncertain keys) or None
    duration : float
        Length of each run [s] (for hold times not reached within it).
    confidence : float or None
    progress : callable(evaluator) or None
        Called after each batch of candidates.
    """

    def __init__(self, sized, requirements, layout, runner, keys, draws, duration, confidence,
                 progress=None):
        self.sized, self.requirements, self.layout = sized, requirements, layout
        self.runner, self.keys, self.duration = runner, list(keys), float(duration)
        self.draws = None if draws is None else np.asarray(draws, dtype=float)
        self.confidence = confidence
        self.progress = progress
        self.columns = [layout.columns.index(r.output) for r in requirements]
        self.candidates: list[Candidate] = []
        self._by_x: dict = {}
        self._blocks: list = []
        self.warning_counts: dict = {}
        self.lengthened = "simulation.duration" in self.keys

    @property
    def n_draws(self) -> int:
        return 1 if self.draws is None else len(self.draws)

    @property
    def n_runs(self) -> int:
        return sum(c.n_runs for c in self.candidates)

    def __call__(self, xs) -> list[Candidate]:
        """The candidates at ``xs`` (new ones run together, in one batch)."""
        xs = [float(x) for x in xs]
        new = [x for x in dict.fromkeys(xs) if x not in self._by_x]
        if new:
            self._run(new)
            if self.progress is not None:
                self.progress(self)
        return [self._by_x[x] for x in xs]

    def _rows(self, xs) -> np.ndarray:
        n = self.n_draws
        blocks = []
        for x in xs:
            block = np.tile(self.sized.at(x), (n, 1))
            if self.draws is not None:
                block = np.hstack([block, self.draws])
            if self.lengthened:
                block = np.hstack([block, np.full((n, 1), self.duration)])
            blocks.append(block)
        return np.vstack(blocks)

    def _run(self, xs) -> None:
        values = self._rows(xs)
        found = self.runner.run(values)
        for text, count in found.warnings.items():
            self.warning_counts[text] = self.warning_counts.get(text, 0) + count
        n = self.n_draws
        start = sum(len(b[0]) for b in self._blocks)
        self._blocks.append((values, found.outputs, found.errors))
        for i, x in enumerate(xs):
            part = slice(i * n, (i + 1) * n)
            cand = self._judge(x, found.outputs[part], found.errors[part],
                               slice(start + i * n, start + (i + 1) * n))
            self.candidates.append(cand)
            self._by_x[x] = cand

    def _judge(self, x, outputs, errors, rows) -> Candidate:
        failed = np.asarray([bool(e) for e in errors])
        if self.draws is None and failed.any():
            self._raise_failed(x, errors[0])
        per_req = []
        for req, col in zip(self.requirements, self.columns):
            s = req.slack(outputs[:, col], self.duration) / req.scale
            per_req.append(np.where(failed, -np.inf, s))
        per_req = np.array(per_req)  # (requirements, runs)
        per_run = per_req.min(axis=0)
        met_runs = per_run >= 0.0
        m = 1 if self.draws is None else needed_count(self.confidence, len(per_run))
        stat = float(order_statistic(per_run, m))
        slack = np.array([float(order_statistic(s, m)) for s in per_req])
        achieved = np.array([self._achieved(req, outputs[~failed, col], m)
                             for req, col in zip(self.requirements, self.columns)])
        return Candidate(float(x), len(self.candidates), self.sized.at(x),
                         max(stat, _FLOOR), stat >= 0.0, slack, achieved, int(met_runs.sum()),
                         len(per_run), int(failed.sum()), rows)

    def _achieved(self, req, values, m) -> float:
        """The output that ``m`` of the runs meet (a hold time beyond the run ranks as longest;
        failed runs, left out of ``values``, rank last)."""
        if m < 1 or m > len(values):
            return float("nan")
        v = np.asarray(values, dtype=float)
        if req.prefix == "hold_time":
            v = np.where(np.isnan(v), np.inf, v)
        ranked = np.sort(v)  # ascending
        best = ranked[len(ranked) - m] if req.op == ">=" else ranked[m - 1]
        return float("nan") if np.isinf(best) else float(best)

    def _raise_failed(self, x, error) -> None:
        shown = ", ".join(f"{k} = {self.sized.format(i, v)}"
                          for i, (k, v) in enumerate(zip(self.sized.keys, self.sized.at(x))))
        if str(error).startswith(INPUT_ERRORS):
            raise InputError(f"the run at {shown} failed: {error}", f"vary {self.sized.key}")
        raise SolverError(f"the run at {shown} failed: {error}",
                          hint="narrow the range, or run the scenario at that value to see why")

    def failed_errors(self) -> list[str]:
        """Error texts of the runs that failed, in order."""
        return [e for _, _, errors in self._blocks for e in errors if e]

    def table(self, output_columns) -> pd.DataFrame:
        """Every run made: index ``run``; ``candidate`` (order of evaluation), ``draw`` (with
        uncertain inputs), the job's keys (SI; degC for temperatures), the outputs, ``met`` (every
        requirement met by this run) and ``error``."""
        if not self._blocks:
            return pd.DataFrame()
        values = np.vstack([b[0] for b in self._blocks])
        outputs = np.vstack([b[1] for b in self._blocks])
        errors = np.concatenate([b[2] for b in self._blocks])
        n = len(values)
        data = {"candidate": np.repeat([c.index for c in self.candidates], self.n_draws)}
        if self.draws is not None:
            data["draw"] = np.tile(np.arange(self.n_draws), len(self.candidates))
        data.update({k: values[:, i] for i, k in enumerate(self.keys)})
        data.update({c: outputs[:, j] for j, c in enumerate(self.layout.columns)
                     if c in output_columns})
        met = np.ones(n, dtype=bool)
        for req, col in zip(self.requirements, self.columns):
            met &= req.met(outputs[:, col], self.duration)
        data["met"] = met & (errors == "")
        frame = pd.DataFrame(data, index=pd.RangeIndex(n, name="run"))
        frame["error"] = pd.Series(errors, index=frame.index, dtype=object)
        return frame
