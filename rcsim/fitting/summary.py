"""From the optimum to a :class:`FitResult`: estimates, tables of the fit, warnings, the fitted
scenario written with the unit each value was given in."""

from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..errors import InputError, RcsimWarning
from ..scenario import Scenario
from .logs import Log
from .notes import Notes
from .parameters import in_original_unit
from .problem import Problem, Search
from .result import FitResult
from .statistics import (autocorrelation_warnings, correlation_matrix, correlation_warnings,
                         estimate_warnings, estimates_table, lag1, uncertainty)

__all__ = ["summarise", "FitTables"]

#: Points of the even grid on which the fitted curve is drawn across the log's gaps (at most).
CURVE_POINTS = 200_000


@dataclass
class FitTables:
    """Measured, fitted and residual temperatures at the log's times, the fitted model on an
    even grid, the driving log columns, and the residuals' RMSE and lag-1 autocorrelation."""

    measured: pd.DataFrame
    fitted: pd.DataFrame
    residuals: pd.DataFrame
    curve: pd.DataFrame
    inputs: pd.DataFrame
    rmse: float
    rmse_by_column: pd.Series
    autocorrelation: pd.Series


def summarise(problem: Problem, found: Search, log: Log, sc: Scenario, notes: Notes) -> FitResult:
    """The estimates at ``found.best`` with their uncertainty, the fit's tables and warnings
    (added to ``notes``), and the scenario with the estimates written in."""
    params = problem.params
    keys = params.keys
    best = found.best
    values = problem.values(best.x)
    unc = uncertainty(problem.jacobian(best.x, central=True), problem.residuals(best.x))
    est = estimates_table(params, best.x, values, unc)
    corr = correlation_matrix(unc)
    tables = fit_tables(problem, values, log)

    if best.status <= 0:
        notes.add(f"the fit did not converge ({best.message}); the estimates are uncertain")
    notes.extend(estimate_warnings(params, est, unc))
    notes.extend(correlation_warnings(params, corr))
    notes.extend(autocorrelation_warnings(tables.residuals, tables.autocorrelation))
    if found.rivals:
        notes.add(f"{found.rivals} other start(s) ended at different values with nearly the "
                  "same fit; the data may not decide between them")
    fitted_sc = fitted_scenario(sc, params, values, notes)
    try:
        tau = fitted_sc.network.time_constants()
    except InputError:  # pragma: no cover - networks too large for the dense decomposition
        tau = None
    start_rows = [dict(zip(keys, [float(f"{v:.12g}") for v in problem.values(rn.x0)]),
                       cost=rn.cost, status=rn.status, evaluations=rn.nfev) for rn in found.runs]
    model = problem.model
    return FitResult(
        estimates=est, correlation=pd.DataFrame(corr, index=keys, columns=keys),
        covariance=pd.DataFrame(unc.covariance, index=keys, columns=keys), rmse=tables.rmse,
        rmse_by_column=tables.rmse_by_column, autocorrelation=tables.autocorrelation,
        warnings=notes.texts, residuals=tables.residuals, measured=tables.measured,
        fitted=tables.fitted, curve=tables.curve, inputs=tables.inputs,
        fitted_scenario=fitted_sc, starts=pd.DataFrame(start_rows),
        units={p.key: p.kind for p in params}, targets=dict(log.targets), log_name=log.name,
        start_time=log.start_time, n_points=unc.n_points, dof=unc.dof, solver=model.solver,
        n_evaluations=model.stats.evaluations, n_decompositions=model.stats.decompositions,
        gaps=log.gaps, time_constants=tau, _categories=notes.categories)


def fit_tables(problem: Problem, values, log: Log) -> FitTables:
    """The fit's tables at the optimum ``values`` (see :class:`FitTables`)."""
    model = problem.model
    t = log.time
    index = pd.Index(t, name="time [s]")
    measured = pd.DataFrame(problem.Y, index=index, columns=log.measured)
    fitted = pd.DataFrame(model.outputs(values), index=index, columns=log.measured)
    resid = (measured - fitted).where(problem.mask)
    # the fitted model on an even grid too, so that a figure shows it across the log's gaps
    step = float(np.median(np.diff(t)))
    n_grid = min(CURVE_POINTS, int(t[-1] / step) + 1)
    grid = np.union1d(t, np.linspace(0.0, float(t[-1]), max(n_grid, 2)))
    if grid.size > 2 * CURVE_POINTS:
        grid = t
    curve = pd.DataFrame(model.outputs(values, times=grid), index=pd.Index(grid, name="time [s]"),
                         columns=log.measured)
    squares = resid.to_numpy() ** 2
    inputs = log.values[log.inputs].copy()
    inputs.index = index
    return FitTables(
        measured=measured, fitted=fitted, residuals=resid, curve=curve, inputs=inputs,
        rmse=float(np.sqrt(np.nanmean(squares))),
        rmse_by_column=pd.Series(np.sqrt(np.nanmean(squares, axis=0)), index=log.measured,
                                 name="rmse [K]"),
        autocorrelation=pd.Series([lag1(resid[c].to_numpy()) for c in log.measured],
                                  index=log.measured, name="lag-1 autocorrelation"))


def fitted_scenario(sc: Scenario, params, values, notes: Notes) -> Scenario:
    """``sc`` with the estimates written in the unit each was given in; warnings the new
    scenario raises (e.g. a Biot number now above 0.1) are added to ``notes``."""
    subst = {p.key: in_original_unit(v, p) for p, v in zip(params, values)}
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        fitted = sc.with_values(subst)
    for w in caught:
        if issubclass(w.category, RcsimWarning) and str(w.message) not in notes:
            notes.add(f"fitted scenario: {w.message}", w.category)
    return fitted
