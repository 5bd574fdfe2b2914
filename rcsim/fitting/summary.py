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
from .diagnostics import information_criteria, output_error_likelihood, whiteness_table
from .statistics import (autocorrelation_warnings, correlation_matrix, correlation_warnings,
                         estimate_warnings, estimates_table, lag1, uncertainty)

__all__ = ["summarise", "build_result", "FitTables", "fit_tables", "fit_scores", "holdout_scores",
           "fitted_scenario", "curve_grid"]

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


def summarise(problem: Problem, found: Search, log: Log, sc: Scenario, notes: Notes, *,
              holdout=None, sigma_known: bool = False, lags=None) -> FitResult:
    """The estimates at ``found.best`` with their uncertainty, the fit's tables and warnings
    (added to ``notes``), and the scenario with the estimates written in.

    ``holdout`` (a :class:`rcsim.fitting.holdout.Holdout`) scores the prediction on the rows the
    fit left out; ``sigma_known`` says the weights are 1 / sigma of each column (the
    log-likelihood then uses them instead of estimating the variances); ``lags`` of the
    Ljung-Box test (default: see :func:`rcsim.fitting.diagnostics.default_lags`).
    """
    best = found.best
    unc = uncertainty(problem.jacobian(best.x, central=True), problem.residuals(best.x))
    return build_result(problem, found, log, sc, notes, unc, holdout=holdout,
                        sigma_known=sigma_known, lags=lags)


def build_result(problem: Problem, found: Search, log: Log, sc: Scenario, notes: Notes,
                 unc, *, holdout=None, sigma_known: bool = False, lags=None) -> FitResult:
    """A FitResult at ``found.best`` with the uncertainty ``unc`` of its coordinates (of this
    fit alone, or the part of a joint fit's that concerns this record's values)."""
    params = problem.params
    keys = params.keys
    best = found.best
    values = problem.values(best.x)
    est = estimates_table(params, best.x, values, unc)
    corr = correlation_matrix(unc)
    tables = fit_tables(problem, values, log)
    scores = fit_scores(tables, problem, holdout, sigma_known, lags, len(params))

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
        gaps=log.gaps, time_constants=tau, _categories=notes.categories,
        n_states=int(np.count_nonzero(fitted_sc.network.assemble().capacity > 0)),
        label=sc.name, **scores)


def fit_scores(tables: FitTables, problem: Problem, holdout, sigma_known: bool, lags,
               n_free: int) -> dict:
    """Log-likelihood, information criteria, whiteness and held-out scores of a deterministic
    fit, as FitResult fields."""
    sigma = 1.0 / problem.weights if sigma_known else None
    loglik, n_var = output_error_likelihood(tables.residuals.to_numpy(dtype=float), sigma)
    k = n_free + n_var
    n = int(problem.mask.sum())
    aic, bic = information_criteria(loglik, k, n)
    out = dict(noise="measurement", log_likelihood=loglik, n_parameters=k, aic=aic, bic=bic,
               whiteness=whiteness_table(tables.residuals, lags), simulation_rmse=tables.rmse)
    if holdout is not None:
        rows = holdout.mask(tables.measured.index.to_numpy(dtype=float))
        held = (tables.measured - tables.fitted).where(
            pd.DataFrame(np.repeat(rows[:, None], tables.measured.shape[1], axis=1),
                         index=tables.measured.index, columns=tables.measured.columns))
        out.update(holdout_scores(held, holdout))
    return out


def holdout_scores(held: pd.DataFrame, holdout) -> dict:
    """RMSE of the held-out residuals ``held`` (NaN outside the span), as FitResult fields."""
    squares = held.to_numpy(dtype=float) ** 2
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # a column without held-out values
        by_column = np.sqrt(np.nanmean(squares, axis=0))
        total = float(np.sqrt(np.nanmean(squares)))
    return dict(holdout=holdout, holdout_rmse=total, holdout_residuals=held,
                holdout_rmse_by_column=pd.Series(by_column, index=held.columns,
                                                 name="held-out rmse [K]"))


def fit_tables(problem: Problem, values, log: Log) -> FitTables:
    """The fit's tables at the optimum ``values`` (see :class:`FitTables`)."""
    model = problem.model
    t = log.time
    index = pd.Index(t, name="time [s]")
    measured = pd.DataFrame(problem.Y, index=index, columns=log.measured)
    fitted = pd.DataFrame(model.outputs(values), index=index, columns=log.measured)
    resid = (measured - fitted).where(problem.mask)
    # the fitted model on an even grid too, so that a figure shows it across the log's gaps
    grid = curve_grid(t)
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


def curve_grid(t) -> np.ndarray:
    """The log's times joined with an even grid over its span (at most CURVE_POINTS points), on
    which a fitted curve is drawn across the log's gaps."""
    t = np.asarray(t, dtype=float)
    step = float(np.median(np.diff(t)))
    n_grid = min(CURVE_POINTS, int(t[-1] / step) + 1)
    grid = np.union1d(t, np.linspace(0.0, float(t[-1]), max(n_grid, 2)))
    return t if grid.size > 2 * CURVE_POINTS else grid


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
