"""The fit with process noise, start to end: the stochastic problem from the deterministic
optimum, the searches from one or two noise starts, the results (see
:mod:`rcsim.fitting.stochastic` for the model and :mod:`rcsim.fitting.stochastic_result` for
the uncertainty and tables)."""

from __future__ import annotations

import numpy as np

from ..errors import SolverError
from .notes import Notes
from .parameters import ParameterSet
from .record import Record
from .stochastic import PENALTY, StochasticProblem, noise_start
from .stochastic_result import stochastic_results
from ..threads import kernels

__all__ = ["fit_stochastic", "single_record"]


def single_record(sc, log, params, model, Y, mask, holdout) -> Record:
    """The one record of a fit of one log."""
    return Record(sc.name, sc, log, model, params, np.arange(len(params)), Y, mask, holdout)


def fit_stochastic(records: list, params: ParameterSet, x_phys, notes: Notes, *, sigma=None,
                   starts=1, lags=None, iterations=400, final=True):
    """Maximum-likelihood fit of the stochastic model to ``records`` from the deterministic
    optimum ``x_phys``; a :class:`FitResult` for one record, a :class:`JointFit` for several.

    ``iterations`` caps each L-BFGS-B run. Without ``final`` the Hessian is not computed (no
    intervals); the result's ``_refine()`` computes them later (for the one structure of many
    that is kept).
    """
    with kernels():  # small matrices: threads only cost
        return _fit_stochastic(records, params, x_phys, notes, sigma, starts, lags, iterations,
                               final)


def _fit_stochastic(records, params, x_phys, notes, sigma, starts, lags, iterations, final):
    sigma_fixed = None
    if sigma is not None:
        from .problem import column_weights

        sigma_fixed = 1.0 / column_weights(sigma, records[0].log)
    problem = StochasticProblem(records, params, x_phys, sigma_fixed)
    scales = (0.5, 0.05) if starts > 1 else (0.5,)
    runs = []
    for scale in scales:
        x0 = np.concatenate([x_phys, noise_start(problem, x_phys, scale)])
        runs.append(problem.solve(x0, iterations))
    best = min(runs, key=lambda r: r.fun)
    if not np.isfinite(best.fun) or best.fun >= PENALTY:
        raise SolverError("the stochastic fit found no value at which the Kalman filter runs")
    if not best.success:
        notes.add(f"the fit with process noise did not converge ({best.message}); the estimates "
                  "are uncertain")
    x = np.asarray(best.x, dtype=float)
    if final:
        return stochastic_results(problem, x, best.search_bounds, notes, lags=lags)
    kept = Notes(list(notes.texts), list(notes.categories))
    result = stochastic_results(problem, x, best.search_bounds, notes, lags=lags,
                                uncertainty=False)

    def refine():
        with kernels():
            return stochastic_results(problem, x, best.search_bounds, kept, lags=lags)

    result._refine = refine
    return result
