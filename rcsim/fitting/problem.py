"""The least-squares problem: weighted residuals, their Jacobian, and the search from many starts.

Residuals ``r_i = (T_measured(t_i) - T_model(t_i; theta)) / sigma_column`` over every finite
measured value, in the fitted coordinates x (the logarithm of positive values, the value itself
for temperatures and powers); minimised by :func:`scipy.optimize.least_squares` (trust-region
reflective) within the coordinates' bounds.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..base import suggest
from ..errors import InputError
from ..units import to_si
from .logs import Log
from .model import Model
from .parameters import ParameterSet

__all__ = ["Problem", "Run", "Search", "column_weights", "search", "run_least_squares"]

#: Residual [K/sigma] given to a trial value the model cannot run.
PENALTY = 1e6


@dataclass
class Run:
    """One least-squares run: where it ended (x, cost = sum of squared weighted residuals),
    scipy's status and message, model evaluations, and where it started."""

    x: np.ndarray
    cost: float
    status: int
    message: str
    nfev: int
    x0: np.ndarray


@dataclass
class Search:
    """The runs from every start (and the reweighted refinement, last when there is one), the
    best, and how many others ended elsewhere with about as good a fit."""

    best: Run
    runs: list
    rivals: int


@dataclass
class _Evaluation:
    """The last residuals computed, kept for the Jacobian that follows at the same x."""

    x: np.ndarray
    residuals: np.ndarray


class Problem:
    """Weighted residuals and their Jacobian in the fitted coordinates x."""

    def __init__(self, model: Model, params: ParameterSet, Y, mask, weights):
        self.model, self.params, self.Y, self.mask = model, params, Y, mask
        self.weights = np.asarray(weights, dtype=float)
        self._last: _Evaluation | None = None
        self.options: dict = {}  # of run_least_squares (tolerances, evaluations per value)

    def set_weights(self, weights) -> None:
        self.weights = np.asarray(weights, dtype=float)
        self._last = None

    def values(self, x) -> list[float]:
        return self.params.values(x)

    def residual_matrix(self, x) -> np.ndarray:
        """Measured - model (n_times, n_columns), unweighted."""
        return self.Y - self.model.outputs(self.values(x))

    def residuals(self, x) -> np.ndarray:
        x = np.asarray(x, dtype=float)
        if self._last is not None and np.array_equal(self._last.x, x):
            return self._last.residuals
        r = self._eval(x)
        self._last = _Evaluation(x.copy(), r)
        return r

    def jacobian(self, x, central: bool = False) -> np.ndarray:
        """d residuals / d x.

        Values entering the output linearly get exact columns (in closed form when the model
        gives them, else exact differences). The others get forward
        differences while searching (one model run each; the model is exact to rounding, so a
        step of 1e-7 loses about half the digits) and central differences (step 1e-4, error
        of order 1e-8) for the covariance at the optimum. A model run by a tolerance-controlled
        integrator (not the exact path) is noisier, so its steps are larger (1e-4 and 1e-3).
        """
        h_fwd, h_ctr = (1e-7, 1e-4) if self.model.fast else (1e-4, 1e-3)
        x = np.asarray(x, dtype=float)
        r0 = self.residuals(x)
        J = np.empty((r0.size, x.size))
        exact = self._linear_columns(x)
        for i, p in enumerate(self.params):
            if i in exact:
                J[:, i] = exact[i]
            elif p.linear:
                step = 1.0  # linear in the output: any step is exact
                xp = x.copy()
                xp[i] += step
                J[:, i] = (self._eval(xp) - r0) / step
            elif central:
                step = h_ctr * (1.0 if p.log else max(1.0, abs(x[i])))
                xp, xm = x.copy(), x.copy()
                xp[i] += step
                xm[i] -= step
                J[:, i] = (self._eval(xp) - self._eval(xm)) / (2 * step)
            else:
                step = h_fwd * (1.0 if p.log else max(1.0, abs(x[i])))
                xp = x.copy()
                xp[i] += step
                J[:, i] = (self._eval(xp) - r0) / step
        return J

    def _linear_columns(self, x) -> dict:
        """Exact Jacobian columns of the linear values when the model gives them in closed
        form (:meth:`rcsim.fitting.linear.LinearModel.linear_jacobian`)."""
        hook = getattr(self.model, "linear_jacobian", None)
        linear = [i for i, p in enumerate(self.params) if p.linear]
        if hook is None or not linear:
            return {}
        cols = hook(self.values(x), linear)
        return {i: (-c * self.weights[None, :])[self.mask] for i, c in cols.items()}

    def _eval(self, x) -> np.ndarray:
        with np.errstate(over="raise", invalid="raise"):
            try:
                r = (self.residual_matrix(x) * self.weights[None, :])[self.mask]
            except (FloatingPointError, InputError):
                # a trial value the model refuses (or that overflows): far from any fit
                return np.full(int(self.mask.sum()), PENALTY)
        return np.where(np.isfinite(r), r, PENALTY)

    def solve(self, x0) -> Run:
        return run_least_squares(self, x0, **self.options)

    def reweight(self, x) -> None:
        """Weight each column by the spread of its own residuals at ``x`` (1 / RMS)."""
        r = self.residual_matrix(x)
        spread = np.sqrt(np.nanmean(np.where(self.mask, r, np.nan) ** 2, axis=0))
        self.set_weights(1.0 / np.maximum(spread, 1e-12))


def run_least_squares(problem, x0, ftol=1e-12, xtol=1e-10, evaluations=100) -> Run:
    """One trust-region reflective run of ``problem`` (residuals, jacobian, params) from x0,
    with at most ``evaluations`` * (1 + free values) evaluations."""
    from scipy.optimize import least_squares

    lo, hi = problem.params.x_limits()
    x0 = np.clip(np.asarray(x0, dtype=float), lo, hi)
    res = least_squares(problem.residuals, x0, jac=problem.jacobian, bounds=(lo, hi),
                        method="trf", x_scale="jac", ftol=ftol, xtol=xtol, gtol=1e-10,
                        max_nfev=evaluations * (1 + x0.size))
    return Run(np.asarray(res.x, dtype=float), float(np.sum(res.fun ** 2)), int(res.status),
               str(res.message), int(res.nfev), x0)


def search(problem, starts: int, seed, reweight: bool, points=None, screen=None) -> Search:
    """Solve from each starting point and keep the best. With ``reweight`` (no sigma given and
    several columns), each column is then weighted by the spread of its own residuals at the
    optimum and the fit refined from there. ``points`` (fitted coordinates) replace the
    starting points made from the scenario's values when given. With ``screen`` (options of
    :func:`run_least_squares`, a small budget), every start first runs under it and only the
    best goes on to the end."""
    if points is None:
        points = problem.params.starting_points(starts, seed)
    if screen is not None and len(points) > 1:
        trial = [run_least_squares(problem, x0, **screen) for x0 in points]
        lead = min(trial, key=lambda r: r.cost)
        runs = [r for r in trial if r is not lead] + [problem.solve(lead.x)]
        runs[-1].x0 = lead.x0
    else:
        runs = [problem.solve(x0) for x0 in points]
    best = min(runs, key=lambda r: r.cost)
    # other starts that ended elsewhere with about as good a fit (compared under one weighting)
    rivals = sum(1 for rn in runs if rn is not best and rn.cost <= best.cost * 1.01 + 1e-300
                 and np.max(np.abs(rn.x - best.x)) > 0.1)
    if reweight:
        problem.reweight(best.x)
        best = problem.solve(best.x)
        runs.append(best)
    return Search(best, runs, rivals)


def column_weights(sigma, log: Log) -> np.ndarray:
    """1 / sigma per measured column (1 when no sigma is given).

    Raises
    ------
    InputError
        A sigma for a column that is not measured, or a sigma that is not positive.
    """
    cols = log.measured
    if sigma is None:
        return np.ones(len(cols))
    if isinstance(sigma, dict):
        for c in sigma:
            if c not in cols:
                raise InputError(f"sigma is given for {c!r}, which is no measured column",
                                 "sigma", suggest(c, cols))
        vals = [to_si(sigma.get(c, 1.0), "temperature_difference", f"sigma.{c}") for c in cols]
    else:
        vals = [to_si(sigma, "temperature_difference", "sigma")] * len(cols)
    vals = np.asarray(vals, dtype=float)
    if (vals <= 0).any():
        raise InputError("sigma must be positive", "sigma")
    return 1.0 / vals
