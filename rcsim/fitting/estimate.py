"""The fit procedure: scenario and log in, :class:`FitResult` out (read and check the log, free
the values, build the model, search from several starts, summarise, warn)."""

from __future__ import annotations

import time as _time
import warnings

import numpy as np

from ..errors import DataError, InputError
from ..scenario import Scenario, load
from .logs import gap_notes, read_log
from .model import Model
from .notes import Notes
from .parameters import make_parameters
from .problem import Problem, column_weights, search
from .result import FitResult
from .summary import summarise

__all__ = ["fit"]


def fit(scenario, data, free, *, columns=None, ignore=(), bounds=None, sigma=None, time=None,
        time_unit=None, max_gap=None, starts=4, solver="auto", seed=0) -> FitResult:
    """Fit freed values of a scenario to a logged record.

    Parameters
    ----------
    scenario : rcsim.Scenario or path
        The model; its values are the starting guesses.
    data : path or pandas.DataFrame
        The log (see :func:`read_log`).
    free : list of str
        Key paths of the values to fit, e.g. ``["nodes.block.capacity",
        "links.skin.resistance", "nodes.block.initial"]``.
    columns : dict, optional
        ``{"log column": "node or boundary"}`` for columns not named after one.
    ignore : sequence of str
        Log columns to leave out.
    bounds : dict, optional
        ``{key: (low, high)}``, numbers (SI) or strings with units; None for an open side.
    sigma : float or dict, optional
        Measurement standard deviation [K], one for all columns or per column; sets the
        relative weights. By default each column is weighted by the spread of its residuals
        after a first fit.
    time, time_unit, max_gap : optional
        See :func:`read_log`.
    starts : int
        Number of starts (the scenario's values, then points spread around them or inside the
        bounds). Only values that need a rebuild are varied; the others enter linearly.
    solver : 'auto', 'exact', 'piecewise' or 'stiff'
        'auto' uses the exact modal path where it applies.
    seed : int
        Seed of the spread of starts.

    Returns
    -------
    FitResult

    Raises
    ------
    InputError
        Bad scenario, log, key path or bound (the message names the file, key, column or line);
        a log that cannot be placed against ``simulation.start`` (see
        :func:`rcsim.fitting.model.log_offset`).
    """
    wall0 = _time.perf_counter()
    sc = scenario if isinstance(scenario, Scenario) else load(scenario)
    if not isinstance(starts, int) or isinstance(starts, bool) or starts < 1:
        raise InputError(f"starts must be a positive whole number, got {starts!r}", "starts")
    asm = sc.network.assemble()
    log = read_log(data, asm.node_names, asm.boundary_names, columns=columns, ignore=ignore,
                   time=time, time_unit=time_unit, max_gap=max_gap)
    params = make_parameters(sc, free, bounds, log)
    notes = Notes()
    notes.extend(gap_notes(log))
    model = Model(sc, log, params, solver)
    Y = log.values[log.measured].to_numpy(dtype=float)
    mask = np.isfinite(Y)
    n_points = int(mask.sum())
    if n_points <= len(params):
        raise DataError(f"{n_points} measured values cannot determine {len(params)} free "
                        "values", log.name, "log more data or free fewer values")
    weights = column_weights(sigma, log)
    notes.extend(params.start_from_log(log, Y))
    problem = Problem(model, params, Y, mask, weights)
    found = search(problem, starts, seed, reweight=sigma is None and len(log.measured) > 1)
    result = summarise(problem, found, log, sc, notes)
    result.wall_time = _time.perf_counter() - wall0
    for text, category in zip(result.warnings, result._categories):
        warnings.warn(text, category, stacklevel=2)
    return result
