"""From the optimum of a stochastic fit to results: the observed-information covariance, the
estimates, the noise estimates, and each record's tables (one-step-ahead predictions and their
errors, the deterministic run, held-out predictions, whiteness)."""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd

from ..errors import InputError
from .diagnostics import WHITE_P, information_criteria, whiteness_table
from .joint import joint_result
from .notes import Notes
from .result import FitResult
from .statistics import (Uncertainty, autocorrelation_warnings, correlation_matrix,
                         correlation_warnings, estimate_warnings, estimates_table, lag1)
from .stochastic import Z_95, StochasticProblem
from .summary import curve_grid, fitted_scenario, holdout_scores

__all__ = ["stochastic_results", "observed_information"]

#: A noise coordinate whose curvature is below this fraction of the largest is held (not given
#: an interval): the noise has shrunk to where the data do not feel it.
FLAT = 1e-9


def observed_information(problem: StochasticProblem, x, bounds) -> tuple[np.ndarray, np.ndarray]:
    """(covariance, standard errors) of all coordinates from the inverse Hessian of the negative
    log-likelihood. Coordinates at a bound of the search (``bounds``, pairs with None for an
    open side) are held (NaN); directions the likelihood does not curve along get an infinite
    standard error."""
    size = problem.size
    lo = np.array([-np.inf if b[0] is None else b[0] for b in bounds])
    hi = np.array([np.inf if b[1] is None else b[1] for b in bounds])
    at_bound = (np.abs(x - lo) < 1e-6) | (np.abs(x - hi) < 1e-6)
    free = [i for i in range(size) if not at_bound[i]]
    cov = np.full((size, size), np.nan)
    se = np.full(size, np.nan)
    if not free:
        return cov, se
    Hm = problem.hessian(x, free)
    Hm = 0.5 * (Hm + Hm.T)
    # a noise value that has shrunk to where the likelihood no longer feels it is held too
    diag = np.diag(Hm)
    flat = [a for a, i in enumerate(free) if i >= problem.p and
            not diag[a] > FLAT * float(np.max(np.abs(diag)))]
    keep = [a for a in range(len(free)) if a not in flat]
    free = [free[a] for a in keep]
    Hm = Hm[np.ix_(keep, keep)]
    if not free:
        return cov, se
    w, V = np.linalg.eigh(Hm)
    good = w > 1e-10 * max(float(np.max(np.abs(w))), 1e-300)
    inv = np.where(good, 1.0 / np.where(good, w, 1.0), 0.0)
    sub = (V * inv) @ V.T
    sub_se = np.sqrt(np.maximum(np.diag(sub), 0.0))
    if not good.all():  # values that take part in a direction the likelihood is flat along
        touched = (np.abs(V[:, ~good]) > 1e-3).any(axis=1)
        sub_se = np.where(touched, np.inf, sub_se)
    cov[np.ix_(free, free)] = sub
    se[free] = sub_se
    return cov, se


def noise_table(problem: StochasticProblem, x, se) -> pd.DataFrame:
    """The noise estimates: value, std_error, ci_low, ci_high (log-scale intervals)."""
    keys = [f"process.{g}" for g in problem.groups] + \
        ([f"measurement.{c}" for c in problem.columns] if problem.m else [])
    xs = np.asarray(x[problem.p:], dtype=float)
    ses = np.asarray(se[problem.p:], dtype=float)
    rows = []
    for xi, si in zip(xs, ses):
        v = float(np.exp(xi))
        if np.isfinite(si):
            with np.errstate(over="ignore"):  # an undetermined noise: the interval reaches inf
                rows.append([v, v * si, float(np.exp(xi - Z_95 * si)),
                             float(np.exp(xi + Z_95 * si))])
        else:
            rows.append([v, si, np.nan if np.isnan(si) else 0.0,
                         np.nan if np.isnan(si) else np.inf])
    return pd.DataFrame(rows, index=pd.Index(keys, name="key"),
                        columns=["value", "std_error", "ci_low", "ci_high"])


def stochastic_results(problem: StochasticProblem, x, bounds, notes: Notes, *, lags=None,
                       uncertainty: bool = True):
    """A FitResult per record (the one result for one record; a JointFit for several).
    Without ``uncertainty`` the Hessian is not computed and no interval is given."""
    if uncertainty:
        cov, se = observed_information(problem, x, bounds)
    else:
        cov, se = np.full((problem.size, problem.size), np.nan), np.full(problem.size, np.nan)
    outs = problem.filters(x)
    noise_est = noise_table(problem, x, se)
    for key, row in noise_est.iterrows():
        if uncertainty and np.isnan(row["std_error"]):
            what = "process noise" if key.startswith("process.") else "measurement noise"
            notes.add(f"{what} {key.split('.', 1)[1]!r} is negligible ({row['value']:.3g}) or "
                      "at the end of its range: the data show hardly any; its interval is not "
                      "given")
    results = []
    for i, rec in enumerate(problem.records):
        local_notes = Notes(list(notes.texts), list(notes.categories)) \
            if len(problem.records) > 1 else notes
        results.append(_record_result(problem, i, x, cov, se, outs[i], noise_est, local_notes,
                                      lags, uncertainty))
    if len(results) == 1:
        return results[0]
    loglik = float(sum(o.log_likelihood for o in outs))
    n = int(sum(o.n_observed for o in outs))
    return joint_result(problem.records, problem.params, x[:problem.p], cov[:problem.p, :problem.p],
                        se[:problem.p], results, loglik, problem.size, n, notes, "process",
                        noise_estimates=noise_est, t_quantile=Z_95)


def _record_result(problem, i, x, cov, se, out, noise_est, notes, lags, uncertainty) -> FitResult:
    rec = problem.records[i]
    params, log, model = rec.params, rec.log, rec.model
    idx = rec.index
    x_local = rec.local(x[:problem.p])
    values = params.values(x_local)
    n_obs = int(out.n_observed)
    k = len(params) + problem.g + problem.m
    unc = Uncertainty(cov[np.ix_(idx, idx)], se[idx], n_obs, max(n_obs - k, 1), 1.0, Z_95)
    unc.std_errors = np.where(np.isnan(unc.std_errors), np.inf, unc.std_errors)
    est = estimates_table(params, x_local, values, unc)
    corr = correlation_matrix(unc)
    index = pd.Index(log.time, name="time [s]")
    cols = log.measured
    y_det, _ = problem.deterministic(i, x)
    measured = pd.DataFrame(rec.Y, index=index, columns=cols)
    fitted = pd.DataFrame(y_det + out.predictions, index=index, columns=cols)
    resid = pd.DataFrame(out.innovations, index=index, columns=cols)
    standard = pd.DataFrame(out.standardised, index=index, columns=cols)
    simulated = np.where(rec.mask, rec.Y - y_det, np.nan)
    grid = curve_grid(log.time)
    curve = pd.DataFrame(model.outputs(values, times=grid), index=pd.Index(grid, name="time [s]"),
                         columns=cols)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        sq = resid.to_numpy() ** 2
        rmse = float(np.sqrt(np.nanmean(sq)))
        by_col = pd.Series(np.sqrt(np.nanmean(sq, axis=0)), index=cols, name="rmse [K]")
        sim_rmse = float(np.sqrt(np.nanmean(simulated ** 2)))
    ac = pd.Series([lag1(resid[c].to_numpy()) for c in cols], index=cols,
                   name="lag-1 autocorrelation")
    white = whiteness_table(standard, lags)
    loglik = float(out.log_likelihood)
    aic, bic = information_criteria(loglik, k, n_obs)
    if rec.holdout is not None:
        rows = rec.holdout_rows()
        held = (measured - fitted).where(pd.DataFrame(np.repeat(rows[:, None], len(cols), axis=1),
                                                      index=index, columns=cols))
        scores = holdout_scores(held, rec.holdout)
    else:
        scores = {}
    if uncertainty:
        notes.extend(estimate_warnings(params, est, unc))
        notes.extend(correlation_warnings(params, corr))
    notes.extend(autocorrelation_warnings(resid, ac))
    for c, row in white.iterrows():
        if np.isfinite(row["p_value"]) and row["p_value"] < WHITE_P / 5:
            notes.add(f"one-step-ahead residuals of column {c!r} are not white (Ljung-Box Q = "
                      f"{row['statistic']:.4g} over {int(row['lags'])} lags, p = "
                      f"{row['p_value']:.2g}): the structure misses a dynamic of the data")
    fitted_sc = fitted_scenario(rec.scenario, params, values, notes)
    try:
        tau = fitted_sc.network.time_constants()
    except InputError:  # pragma: no cover - networks too large for the dense decomposition
        tau = None
    keys = params.keys
    starts = pd.DataFrame([dict(zip(keys, values), cost=-2.0 * loglik, status=1,
                                evaluations=problem.evaluations)])
    return FitResult(
        estimates=est, correlation=pd.DataFrame(corr, index=keys, columns=keys),
        covariance=pd.DataFrame(unc.covariance, index=keys, columns=keys), rmse=rmse,
        rmse_by_column=by_col, autocorrelation=ac, warnings=notes.texts, residuals=resid,
        measured=measured, fitted=fitted, curve=curve, inputs=_inputs(log, index),
        fitted_scenario=fitted_sc, starts=starts, units={p.key: p.kind for p in params},
        targets=dict(log.targets), log_name=log.name, start_time=log.start_time,
        n_points=n_obs, dof=max(n_obs - k, 0), solver=model.solver,
        n_evaluations=model.stats.evaluations, n_decompositions=model.stats.decompositions,
        gaps=log.gaps, time_constants=tau, _categories=notes.categories, noise="process",
        log_likelihood=loglik, n_parameters=k, aic=aic, bic=bic, whiteness=white,
        simulation_rmse=sim_rmse, noise_estimates=noise_est, label=rec.label,
        n_states=int(np.count_nonzero(fitted_sc.network.assemble().capacity > 0)), **scores)


def _inputs(log, index) -> pd.DataFrame:
    inputs = log.values[log.inputs].copy()
    inputs.index = index
    return inputs

