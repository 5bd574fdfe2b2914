"""How good a fit is, as numbers: Gaussian log-likelihood, AIC and BIC, and residual whiteness.

**Log-likelihood of a deterministic fit (output error).** The residuals of measured column j are
taken as independent Gaussian with a variance of their own. When the variance is estimated (no
``sigma`` given), it is the maximum-likelihood value sigma_j^2 = RSS_j / n_j, and the
log-likelihood is the concentrated one::

    l = sum_j -n_j / 2 * (ln(2 pi RSS_j / n_j) + 1)

with one estimated variance per column counted as a parameter. With a known sigma_j::

    l = sum_j -1/2 * (n_j ln(2 pi sigma_j^2) + RSS_j / sigma_j^2)

(A stochastic fit's log-likelihood comes from its Kalman filter instead, see
:mod:`rcsim.fitting.kalman`.)

**Information criteria** (Akaike 1974; Schwarz 1978), with k the number of estimated values
(free values plus noise parameters) and n the number of measured values fitted::

    AIC = 2 k - 2 l,     BIC = k ln(n) - 2 l

Lower is better; only differences between fits of the same data mean anything.

**Whiteness: the Ljung-Box portmanteau test** (Ljung & Box, Biometrika 65 (1978) 297-303). With
r_k the lag-k autocorrelation of the n successive available residuals e_t (mean removed)::

    r_k = sum_{t=k+1}^{n} e_t e_{t-k} / sum_{t=1}^{n} e_t^2
    Q   = n (n + 2) sum_{k=1}^{h} r_k^2 / (n - k)

Under the hypothesis of white residuals Q follows a chi-square distribution with h degrees of
freedom (no model is fitted to the residuals themselves), so the p-value is the chi-square
survival function at Q. By default h = min(10, n // 5) (a common rule of thumb for series
without a season: Hyndman & Athanasopoulos, *Forecasting: principles and practice*, 2nd ed.,
sec. 3.3). A small p-value says the residuals follow each other: the model misses a dynamic of
the data and the intervals of a deterministic fit are then too narrow.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pandas as pd

__all__ = ["Whiteness", "ljung_box", "default_lags", "whiteness_table", "output_error_likelihood",
           "information_criteria", "WHITE_P"]

#: p-value of the Ljung-Box test below which residuals are called not white.
WHITE_P = 0.05


@dataclass
class Whiteness:
    """The Ljung-Box test of one residual series: Q, lags h, p-value, number of residuals."""

    statistic: float
    lags: int
    p_value: float
    n: int


def default_lags(n: int) -> int:
    """h = min(10, n // 5), at least 1 (see the module's docstring).

    >>> default_lags(1000), default_lags(30), default_lags(3)
    (10, 6, 1)
    """
    return max(1, min(10, int(n) // 5))


def ljung_box(residuals, lags: int | None = None) -> Whiteness:
    """The Ljung-Box test of the successive finite values of ``residuals``.

    Missing values (NaN) are skipped: the series is the residuals that exist, in order. Fewer
    than 3 values, or a series without spread, give NaN statistics.

    >>> w = ljung_box([1.0, -1.0, 1.0, -1.0, 1.0, -1.0, 1.0, -1.0, 1.0, -1.0], lags=1)
    >>> round(w.statistic, 4), w.lags
    (10.8, 1)
    """
    from scipy import stats

    e = np.asarray(residuals, dtype=float).ravel()
    e = e[np.isfinite(e)]
    n = e.size
    h = default_lags(n) if lags is None else int(lags)
    if n < 3 or h < 1:
        return Whiteness(math.nan, h, math.nan, n)
    h = min(h, n - 1)
    x = e - e.mean()
    den = float(x @ x)
    if den <= 0.0:
        return Whiteness(math.nan, h, math.nan, n)
    r = np.array([float(x[k:] @ x[:-k]) for k in range(1, h + 1)]) / den  # loop over lags
    q = float(n * (n + 2) * np.sum(r ** 2 / (n - np.arange(1, h + 1))))
    return Whiteness(q, h, float(stats.chi2.sf(q, h)), n)


def whiteness_table(residuals: pd.DataFrame, lags: int | None = None) -> pd.DataFrame:
    """The Ljung-Box test of each column: index column, columns ``statistic``, ``lags``,
    ``p_value``, ``n``."""
    rows = [ljung_box(residuals[c].to_numpy(), lags) for c in residuals.columns]
    return pd.DataFrame([[w.statistic, w.lags, w.p_value, w.n] for w in rows],
                        index=pd.Index(list(residuals.columns), name="column"),
                        columns=["statistic", "lags", "p_value", "n"])


def output_error_likelihood(residuals: np.ndarray, sigma=None) -> tuple[float, int]:
    """Gaussian log-likelihood of output-error residuals (n_times, n_columns), NaN = missing.

    ``sigma``: None (each column's variance estimated), or the known standard deviation of each
    column (n_columns,). Returns (log-likelihood, number of variances estimated).
    """
    r = np.asarray(residuals, dtype=float)
    if r.ndim == 1:
        r = r[:, None]
    ok = np.isfinite(r)
    n = ok.sum(axis=0)
    rss = (np.where(ok, r, 0.0) ** 2).sum(axis=0)
    if sigma is None:
        with np.errstate(divide="ignore"):
            s2 = rss / np.maximum(n, 1)
            ll = -0.5 * n * (np.log(2 * math.pi * s2) + 1.0)
        return float(np.sum(ll[n > 0])), int(np.count_nonzero(n))
    s2 = np.asarray(sigma, dtype=float) ** 2
    ll = -0.5 * (n * np.log(2 * math.pi * s2) + rss / s2)
    return float(np.sum(ll[n > 0])), 0


def information_criteria(log_likelihood: float, k: int, n: int) -> tuple[float, float]:
    """(AIC, BIC) for a log-likelihood with ``k`` estimated values from ``n`` data.

    >>> aic, bic = information_criteria(-10.0, 2, 100)
    >>> aic, round(bic, 6)    # 2 * 2 + 20, 2 ln(100) + 20
    (24.0, 29.21034)
    """
    return 2.0 * k - 2.0 * log_likelihood, k * math.log(n) - 2.0 * log_likelihood
