"""A fit with process noise: the stochastic grey-box model by maximum likelihood.

The model (Kristensen, Madsen & Joergensen, *Automatica* 40 (2004) 225-237) is the linear
network with white process noise on each state and Gaussian measurement noise; its likelihood
comes from the continuous-discrete Kalman filter of :mod:`rcsim.fitting.kalman`, run on the
deviations of the log from the deterministic run of the same network.

Estimated together: the free values of the scenario (in the fitted coordinates of the
deterministic fit: logarithms of positive values), one process-noise intensity per *state
group* (each node with a capacity; the internal nodes of a sliced layer share their link's),
sigma_g [K/s^0.5], and one measurement standard deviation per measured column, s_j [K] (fixed
when ``sigma`` is given). Noise values are fitted as logarithms. The search starts from the
deterministic fit's optimum, with s_j half the RMS of its residuals and sigma_g such that the
process noise alone would move a state with time constant tau_g = C_i / K_ii by the same
amount, (s / 2) sqrt(2 / tau_g); a second start gives the measurement noise the whole residual.
The negative log-likelihood is minimised by L-BFGS-B (:func:`scipy.optimize.minimize`) with
central-difference gradients.

Uncertainty: the covariance of the fitted coordinates is the inverse of the Hessian of the
negative log-likelihood at the optimum (the observed information), by central second
differences; intervals are +-1.96 standard errors (normal, asymptotic), on the log scale for
positive values. Values that end at a bound of the search are held there (their interval is
not given).

Linear networks on the exact path only (:meth:`rcsim.fitting.model.Model.state_matrices`
refuses others with a clear error). The filter works on many small matrices, for which BLAS
threads cost more than they give (and much more on a busy machine), so the fit runs with one
BLAS thread (:mod:`threadpoolctl`).
"""

from __future__ import annotations

import math
from collections import OrderedDict

import numpy as np

from ..errors import InputError
from .kalman import kalman_filter
from .parameters import ParameterSet

__all__ = ["StochasticProblem", "noise_start", "Z_95"]

#: Two-sided 95 % quantile of the normal distribution.
Z_95 = 1.959963984540054
#: Negative log-likelihood given to trial values the model cannot run.
PENALTY = 1e15
#: Model runs kept per record (the noise values do not change the deterministic run).
CACHED_RUNS = 64


class StochasticProblem:
    """The negative log-likelihood of all records as a function of the coordinates
    x = [free values (global) | ln sigma_g | ln s_j (unless fixed)]."""

    def __init__(self, records: list, params: ParameterSet, x_phys, sigma_fixed=None):
        self.records, self.params = records, params
        self.columns = list(records[0].log.measured)
        first = records[0]
        sm = first.model.state_matrices(first.params.values(first.local(x_phys)))
        self.groups = list(dict.fromkeys(sm.groups))
        self.state_group = np.array([self.groups.index(g) for g in sm.groups])
        self.p, self.g = len(params), len(self.groups)
        self.sigma_fixed = None if sigma_fixed is None else np.asarray(sigma_fixed, float)
        self.m = 0 if sigma_fixed is not None else len(self.columns)
        self._cache = [OrderedDict() for _ in records]
        self._last = None
        self.evaluations = 0

    @property
    def size(self) -> int:
        return self.p + self.g + self.m

    def noise(self, x):
        """(process intensities per state [K^2/s], measurement variances per column [K^2])."""
        x = np.asarray(x, dtype=float)
        sig_p = np.exp(x[self.p:self.p + self.g])
        sig_m = self.sigma_fixed if self.m == 0 else np.exp(x[self.p + self.g:])
        return sig_p[self.state_group] ** 2, np.asarray(sig_m, float) ** 2

    def deterministic(self, i: int, x):
        """(deterministic outputs at the log's times, state matrices) of record i at x."""
        rec = self.records[i]
        values = rec.params.values(rec.local(np.asarray(x)[:self.p]))
        key = tuple(values)
        cache = self._cache[i]
        if key in cache:
            cache.move_to_end(key)
            return cache[key]
        out = (rec.model.outputs(values), rec.model.state_matrices(values))
        cache[key] = out
        if len(cache) > CACHED_RUNS:
            cache.popitem(last=False)
        return out

    def filters(self, x) -> list:
        """The Kalman filter's output on each record at x."""
        q, rv = self.noise(x)
        out = []
        for i, rec in enumerate(self.records):
            y_det, sm = self.deterministic(i, x)
            out.append(kalman_filter(rec.Y - y_det, rec.mask, rec.log.time, sm.A, sm.H, q, rv))
        return out

    def negloglik(self, x) -> float:
        x = np.asarray(x, dtype=float)
        if self._last is not None and np.array_equal(self._last[0], x):
            return self._last[1]
        self.evaluations += 1
        try:
            with np.errstate(over="raise", invalid="raise", divide="raise"):
                value = -sum(k.log_likelihood for k in self.filters(x))
        except (FloatingPointError, np.linalg.LinAlgError, InputError, ValueError):
            value = PENALTY  # a trial value the model or the filter cannot take
        value = value if math.isfinite(value) else PENALTY
        self._last = (x.copy(), value)
        return value

    def steps(self, x) -> np.ndarray:
        """Difference steps of each coordinate (relative on log scales, else scaled)."""
        x = np.asarray(x, dtype=float)
        h = np.full(x.size, 1.0)
        for i, prm in enumerate(self.params):
            if not prm.log:
                h[i] = max(1.0, abs(x[i]))
        return h

    def gradient(self, x) -> np.ndarray:
        """Forward differences (step 1e-6 of each coordinate's scale; the likelihood is exact to
        rounding, so the error is of the order of the step times the curvature)."""
        x = np.asarray(x, dtype=float)
        h = 1e-6 * self.steps(x)
        f0 = self.negloglik(x)
        g = np.empty(x.size)
        for i in range(x.size):  # a loop over coordinates, each a full likelihood
            xp = x.copy()
            xp[i] += h[i]
            g[i] = (self.negloglik(xp) - f0) / h[i]
        self._last = (x.copy(), f0)
        return g

    def hessian(self, x, free) -> np.ndarray:
        """Central second differences of the negative log-likelihood over the coordinates
        ``free`` (indices), step 1e-3 of each coordinate's scale."""
        x = np.asarray(x, dtype=float)
        h = 1e-3 * self.steps(x)
        f0 = self.negloglik(x)
        k = len(free)
        Hm = np.empty((k, k))
        plus, minus = {}, {}
        for a, i in enumerate(free):
            xp, xm = x.copy(), x.copy()
            xp[i] += h[i]
            xm[i] -= h[i]
            plus[i], minus[i] = self.negloglik(xp), self.negloglik(xm)
            Hm[a, a] = (plus[i] - 2 * f0 + minus[i]) / h[i] ** 2
        for a, i in enumerate(free):
            for b in range(a + 1, k):
                j = free[b]
                vals = []
                for si, sj in ((1, 1), (1, -1), (-1, 1), (-1, -1)):
                    xx = x.copy()
                    xx[i] += si * h[i]
                    xx[j] += sj * h[j]
                    vals.append(self.negloglik(xx))
                Hm[a, b] = Hm[b, a] = (vals[0] - vals[1] - vals[2] + vals[3]) / (4 * h[i] * h[j])
        return Hm

    def bounds(self, x0) -> list:
        lo, hi = self.params.x_limits()
        out = list(zip(lo.tolist(), hi.tolist()))
        out = [(None if not np.isfinite(a) else a, None if not np.isfinite(b) else b)
               for a, b in out]
        for v in np.asarray(x0)[self.p:]:  # noise: 14 e-folds down, 9 up from its start
            out.append((float(v) - 14.0, float(v) + 9.0))
        return out

    def solve(self, x0, iterations: int = 400):
        from scipy.optimize import minimize

        x0 = np.asarray(x0, dtype=float)
        bounds = self.bounds(x0)
        res = minimize(self.negloglik, x0, jac=self.gradient, method="L-BFGS-B", bounds=bounds,
                       options={"maxiter": iterations, "ftol": 1e-9, "gtol": 1e-5,
                                "maxls": 40})
        res.search_bounds = bounds
        return res


def noise_start(problem: StochasticProblem, x_phys, spread_scale=0.5) -> np.ndarray:
    """Starting noise coordinates from the deterministic fit at ``x_phys`` (see the module's
    docstring): [ln sigma_g | ln s_j]."""
    resid = []
    taus = None
    for i, rec in enumerate(problem.records):
        y_det, sm = problem.deterministic(i, np.concatenate([x_phys, np.zeros(problem.size -
                                                                              problem.p)]))
        resid.append(np.where(rec.mask, rec.Y - y_det, np.nan))
        taus = sm.time_constants if taus is None else taus
    r = np.concatenate(resid, axis=0)
    with np.errstate(invalid="ignore"):
        s_col = np.sqrt(np.nanmean(r ** 2, axis=0))
    s_col = np.where(np.isfinite(s_col) & (s_col > 0), s_col, 1e-3)
    s = float(np.mean(s_col))
    tau_g = np.array([np.min(taus[problem.state_group == g]) for g in range(problem.g)])
    sig_p = spread_scale * s * np.sqrt(2.0 / np.maximum(tau_g, 1e-9))
    out = [np.log(sig_p)]
    if problem.m:
        out.append(np.log(s_col * (1.0 - spread_scale) + 1e-12))
    return np.concatenate(out)
