"""Uncertainty at the optimum: covariance, intervals, correlations, and what they warn about.

From the Jacobian J of the weighted residuals at the optimum (the usual linearisation, as in
:func:`scipy.optimize.curve_fit` with ``absolute_sigma=False``)::

    cov = s^2 (J^T J)^-1,     s^2 = sum(r^2) / (n - p)

computed through the singular value decomposition of J (directions J cannot see get an infinite
standard error). The standard error of a log-scale value x = ln(theta) gives
std_error(theta) = theta * se(x) (the delta method) and the interval exp(x +- t_{0.975,n-p} se(x)),
which stays positive.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from .parameters import ParameterSet

__all__ = ["Uncertainty", "Estimate", "uncertainty", "estimates_table", "correlation_matrix",
           "lag1", "estimate_warnings", "correlation_warnings", "autocorrelation_warnings"]

#: Lag-1 autocorrelation of residuals above which the model is called too simple (common
#: practice: a Durbin-Watson statistic below about 1, i.e. r1 above about 0.5).
AUTOCORRELATION_LIMIT = 0.5
#: |correlation| between two estimates above which they are reported as not separable.
CORRELATION_LIMIT = 0.95
#: A log-scale estimate whose 95 % interval spans more than this factor is called not identifiable.
WIDE_FACTOR = 4.0
#: A temperature estimate whose 95 % half-width exceeds this [K] is called not identifiable.
WIDE_KELVIN = 2.0


@dataclass
class Uncertainty:
    """The linearised uncertainty of the fitted coordinates.

    ``covariance`` (p, p) of the coordinates; ``std_errors`` (p,) their standard errors
    (infinite where the data do not determine a coordinate); ``n_points`` residuals,
    ``dof = n_points - p``, ``variance`` s^2, ``t_quantile`` t_{0.975, dof}.
    """

    covariance: np.ndarray
    std_errors: np.ndarray
    n_points: int
    dof: int
    variance: float
    t_quantile: float


@dataclass
class Estimate:
    """One estimate in SI (degC for temperatures): value, standard error, 95 % interval."""

    value: float
    std_error: float
    ci_low: float
    ci_high: float


def uncertainty(J: np.ndarray, r: np.ndarray) -> Uncertainty:
    """Covariance and standard errors from the Jacobian ``J`` and residuals ``r`` at the optimum."""
    from scipy import stats

    m, n = J.shape
    dof = m - n
    s2 = float(r @ r) / dof
    _, s, Vt = np.linalg.svd(J, full_matrices=False)
    tol = np.finfo(float).eps * max(J.shape) * (s[0] if s.size else 0.0)
    good = s > tol
    inv = np.where(good, 1.0 / np.where(good, s, 1.0) ** 2, 0.0)
    cov = (Vt.T * inv) @ Vt * s2
    se_x = np.sqrt(np.maximum(np.diag(cov), 0.0))
    if not good.all():
        null = Vt[~good]
        touched = (np.abs(null) > 1e-6).any(axis=0)
        se_x = np.where(touched, np.inf, se_x)
    return Uncertainty(cov, se_x, m, dof, s2, float(stats.t.ppf(0.975, dof)))


def estimate(p, x: float, value: float, se: float, q: float) -> Estimate:
    """The estimate of one parameter from its coordinate ``x`` and that coordinate's error."""
    if p.log:
        std = value * se
        with np.errstate(over="ignore", under="ignore"):
            lo, hi = (float(np.exp(x - q * se)), float(np.exp(x + q * se))) \
                if np.isfinite(se) else (0.0, np.inf)
    else:
        std = se
        lo, hi = (value - q * se, value + q * se) if np.isfinite(se) else (-np.inf, np.inf)
    return Estimate(value, std, lo, hi)


def estimates_table(params: ParameterSet, x, values, unc: Uncertainty) -> pd.DataFrame:
    """Index: key path; columns ``value``, ``std_error``, ``ci_low``, ``ci_high``."""
    rows = [estimate(p, xi, v, se, unc.t_quantile)
            for p, xi, v, se in zip(params, x, values, unc.std_errors)]
    return pd.DataFrame([[e.value, e.std_error, e.ci_low, e.ci_high] for e in rows],
                        index=pd.Index(params.keys, name="key"),
                        columns=["value", "std_error", "ci_low", "ci_high"])


def correlation_matrix(unc: Uncertainty) -> np.ndarray:
    """Correlations of the coordinates; NaN for a coordinate the data do not determine."""
    cov, se_x = unc.covariance, unc.std_errors
    with np.errstate(invalid="ignore", divide="ignore"):
        d = np.sqrt(np.diag(cov))
        corr = cov / np.outer(d, d)
    corr[~np.isfinite(corr)] = np.nan
    np.fill_diagonal(corr, 1.0)
    for i in range(se_x.size):
        if not np.isfinite(se_x[i]):
            corr[i, :] = corr[:, i] = np.nan
            corr[i, i] = 1.0
    return corr


def lag1(r: np.ndarray) -> float:
    """Lag-1 autocorrelation of successive available residuals."""
    r = r[np.isfinite(r)]
    if r.size < 3:
        return float("nan")
    r = r - r.mean()
    den = float(r @ r)
    return float(r[1:] @ r[:-1]) / den if den > 0 else 0.0


def estimate_warnings(params: ParameterSet, est: pd.DataFrame, unc: Uncertainty) -> list[str]:
    """Estimates the data do not identify, identify poorly, or push against a bound."""
    out = []
    for p, se, (k, row) in zip(params, unc.std_errors, est.iterrows()):
        with np.errstate(over="ignore", divide="ignore"):
            out.extend(_estimate_warnings(p, se, k, row))
    return out


def _estimate_warnings(p, se, k, row) -> list[str]:
    """The warnings of one estimate (see :func:`estimate_warnings`)."""
    out = []
    v = row["value"]
    if not np.isfinite(se) or (p.log and not (row["ci_low"] > 0 and np.isfinite(row["ci_high"]))):
        out.append(f"{k} is not identifiable from the data (the fit does not depend on it "
                   "in a way it can separate from the other values)")
    elif p.log and row["ci_high"] / row["ci_low"] > WIDE_FACTOR:
        out.append(f"{k} is poorly identified: its 95 % interval {row['ci_low']:.4g} .. "
                   f"{row['ci_high']:.4g} spans a factor {row['ci_high'] / row['ci_low']:.3g}")
    elif not p.log and (row["ci_high"] - row["ci_low"]) / 2 > (
            WIDE_KELVIN if p.kind.startswith("temperature") else 0.5 * abs(v)):
        out.append(f"{k} is poorly identified: its 95 % interval is {row['ci_low']:.4g} .. "
                   f"{row['ci_high']:.4g}")
    at_lo = np.isfinite(p.lo) and v <= p.lo * (1 + 1e-6) + 1e-12
    at_hi = np.isfinite(p.hi) and v >= p.hi * (1 - 1e-6) - 1e-12
    if at_lo or at_hi:
        out.append(f"{k} ended at its {'lower' if at_lo else 'upper'} bound ({v:.6g}); the "
                   "data want it beyond, and its interval is not reliable")
    return out


def correlation_warnings(params: ParameterSet, corr: np.ndarray) -> list[str]:
    """Pairs of estimates whose correlation says the data fix mainly a combination of them."""
    out = []
    keys = params.keys
    n = len(keys)
    for i in range(n):
        for j in range(i + 1, n):
            c = corr[i, j]
            if np.isfinite(c) and abs(c) > CORRELATION_LIMIT:
                if params[i].log and params[j].log:
                    what = "their product" if c < 0 else "their ratio"
                else:
                    what = "a combination of them"
                out.append(f"{keys[i]} and {keys[j]} are strongly correlated (r = {c:+.3f}): "
                           f"the data fix mainly {what}; fix one of them, or log data that "
                           "separate them (e.g. with a known heat input)")
    return out


def autocorrelation_warnings(residuals: pd.DataFrame, ac: pd.Series) -> list[str]:
    """Columns whose residuals follow each other: the model is likely too simple."""
    out = []
    for c in residuals.columns:
        n_ok = int(np.isfinite(residuals[c].to_numpy()).sum())
        if n_ok >= 20 and ac[c] > AUTOCORRELATION_LIMIT:
            out.append(f"residuals of column {c!r} are strongly autocorrelated (lag-1 r = "
                       f"{ac[c]:.2f}): the model is likely too simple for the data (e.g. one "
                       "node where the body needs two); the intervals are then too narrow")
    return out
