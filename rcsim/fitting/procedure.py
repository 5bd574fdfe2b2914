"""The procedure of one fit: a scenario and a log ready, the search, the result.

Shared by :func:`rcsim.fit` (:mod:`rcsim.fitting.estimate`), the comparison of candidates, the
fits of several logs and identification, which sit above it.
"""

from __future__ import annotations

import time as _time
import warnings

import numpy as np

from ..errors import DataError, InputError
from ..scenario import Scenario
from .candidates import NOISE_KINDS, FitSpec
from .holdout import parse_holdout
from .logs import Log, gap_notes, read_log
from .model import Model
from .notes import Notes
from .parameters import ParameterSet, make_parameters
from .problem import Problem, column_weights, search
from .result import FitResult
from .summary import summarise

__all__ = ["fit_scenario", "fit_prepared", "issue_warnings", "check_starts", "check_noise",
           "model_for", "read_for", "as_tuple"]


def as_tuple(value):
    if value is None:
        return None
    return (value,) if isinstance(value, str) else tuple(value)


def check_starts(starts) -> None:
    if not isinstance(starts, int) or isinstance(starts, bool) or starts < 1:
        raise InputError(f"starts must be a positive whole number, got {starts!r}", "starts")


def check_noise(noise) -> str:
    noise = noise or "measurement"
    if noise not in NOISE_KINDS:
        raise InputError(f"noise must be one of {', '.join(map(repr, NOISE_KINDS))}, got "
                         f"{noise!r}", "noise",
                         "'process' fits process noise on the states with a Kalman filter")
    return noise


def read_for(sc: Scenario, data, spec: FitSpec, time=None, time_unit=None, max_gap=None) -> Log:
    """The log ``data`` read and matched to the scenario's nodes, boundaries and sources."""
    asm = sc.network.assemble()
    return read_log(data, asm.node_names, asm.boundary_names, columns=spec.columns,
                    ignore=spec.ignore or (), time=time, time_unit=time_unit, max_gap=max_gap,
                    sources=asm.source_names)


def fit_scenario(sc: Scenario, data, spec: FitSpec, *, time=None, time_unit=None, max_gap=None,
                 starts=4, solver="auto", seed=0, holdout=None, lags=None) -> FitResult:
    """One scenario fitted to one log, as ``spec`` says (no warnings issued)."""
    wall0 = _time.perf_counter()
    check_starts(starts)
    noise = check_noise(spec.noise)
    if spec.per_record:
        raise InputError("per_record values need several logs", "per_record",
                         "give a list of logs, or free the values as shared ones")
    log = read_for(sc, data, spec, time, time_unit, max_gap)
    params = make_parameters(sc, spec.free, spec.bounds, log)
    model = model_for(sc, log, params, solver, noise)
    result = fit_prepared(sc, log, params, model, holdout=parse_holdout(holdout, log.time),
                          sigma=spec.sigma, starts=starts, seed=seed, noise=noise, lags=lags)
    result.wall_time = _time.perf_counter() - wall0
    return result


def model_for(sc: Scenario, log: Log, params: ParameterSet, solver: str, noise: str):
    """The model of a fit: the engine's (:class:`Model`); with process noise, whose likelihood
    needs many more model runs, the direct linear model where the scenario qualifies (the same
    numbers, see :mod:`rcsim.fitting.linear`)."""
    if noise == "process":
        from .linear import direct_model

        fast = direct_model(sc, log, params, solver)
        if fast is not None:
            return fast
    return Model(sc, log, params, solver)


def fit_prepared(sc: Scenario, log: Log, params: ParameterSet, model, *, holdout=None,
                 sigma=None, starts=4, seed=0, noise="measurement", lags=None,
                 points=None, options=None, screen=None, final=True) -> FitResult:
    """The fit of a scenario whose log, free values and model are ready.

    ``points``: starting points in the fitted coordinates (instead of ``starts`` points made
    from the scenario's values); ``options`` of
    :func:`rcsim.fitting.problem.run_least_squares`; ``screen``: see
    :func:`rcsim.fitting.problem.search`; without ``final`` a fit with process noise gives no
    intervals yet (see :func:`rcsim.fitting.stochastic.fit_stochastic`). Warnings are gathered
    in the result, not issued.
    """
    if noise == "process" and not getattr(model, "fast", False):
        model.state_matrices(params.values(params.x_start()))  # raises the clear error
    notes = Notes()
    notes.extend(gap_notes(log))
    Y = log.values[log.measured].to_numpy(dtype=float)
    mask = np.isfinite(Y)
    if holdout is not None:
        rows = holdout.mask(log.time)
        if not (mask & rows[:, None]).any():
            raise DataError(f"no measured value lies in the held-out span ({holdout.describe()})",
                            log.name, "hold out a span with measurements")
        mask &= ~rows[:, None]
    n_points = int(mask.sum())
    if n_points <= len(params):
        raise DataError(f"{n_points} measured values cannot determine {len(params)} free "
                        "values", log.name, "log more data, hold out less or free fewer values")
    weights = column_weights(sigma, log)
    notes.extend(params.start_from_log(log, Y))
    problem = Problem(model, params, Y, mask, weights)
    problem.options = dict(options or {})
    found = search(problem, starts, seed, reweight=sigma is None and len(log.measured) > 1,
                   points=points, screen=screen)
    if noise == "process":
        from .stochastic_fit import fit_stochastic, single_record

        record = single_record(sc, log, params, model, Y, mask, holdout)
        return fit_stochastic([record], params, found.best.x, notes, sigma=sigma,
                              starts=starts if final else 1, lags=lags, final=final,
                              iterations=400 if final else 150)
    return summarise(problem, found, log, sc, notes, holdout=holdout,
                     sigma_known=sigma is not None, lags=lags)


def issue_warnings(result, stacklevel: int = 2) -> None:
    """Issue the warnings a fit gathered (each once, with its category)."""
    for text, category in zip(result.warnings, result._categories):
        warnings.warn(text, category, stacklevel=stacklevel + 1)
