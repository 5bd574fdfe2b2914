"""The fit procedure: scenario and log in, :class:`FitResult` out (read and check the log, free
the values, build the model, search from several starts, summarise, warn).

:func:`fit` is also the door to the other fits: several candidate scenarios are compared
(:func:`rcsim.fitting.compare.compare`), several logs are fitted at once
(:func:`rcsim.fitting.records.fit_records`), and ``noise="process"`` fits a stochastic model by
a Kalman filter (:mod:`rcsim.fitting.stochastic`).
"""

from __future__ import annotations

from .candidates import FitSpec, given_over, read_candidate
from .compare import compare
from .procedure import as_tuple, fit_scenario, issue_warnings
from .records import fit_records

__all__ = ["fit"]


def fit(scenario, data, free=None, *, columns=None, ignore=None, bounds=None, sigma=None,
        time=None, time_unit=None, max_gap=None, starts=4, solver="auto", seed=0, holdout=None,
        noise=None, per_record=None, candidates=None, select="bic", lags=None):
    """Fit freed values of a scenario to a logged record (or several), or compare candidates.

    Parameters
    ----------
    scenario : rcsim.Scenario, path, or a list of them
        The model; its values are the starting guesses. A scenario file may carry a ``[fit]``
        section (:mod:`rcsim.fitting.candidates`) giving its free keys and bounds. A list (or
        ``candidates=``) compares several candidate scenarios and returns a
        :class:`rcsim.fitting.compare.Comparison`.
    data : path or pandas.DataFrame, or a list of them
        The log (see :func:`read_log`). Several logs are fitted at once, values shared across
        them except those in ``per_record``; the result is a
        :class:`rcsim.fitting.records.JointFit`.
    free : list of str, optional
        Key paths of the values to fit, e.g. ``["nodes.block.capacity",
        "links.skin.resistance", "nodes.block.initial"]`` (default: the ``[fit]`` section's).
        This and every other argument of the ``[fit]`` keys (``columns``, ``ignore``,
        ``bounds``, ``sigma``, ``noise``, ``per_record``) override what a scenario's ``[fit]``
        section says, as the options of ``rcsim fit`` do; a :class:`FitWarning` names what was
        overridden (``note: block.toml: the arguments override its [fit] section's free
        (free=)``). The section gives what the arguments leave out.
    columns : dict, optional
        ``{"log column": "node, boundary or source"}`` for columns not named after one.
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
    holdout : float or str or pair, optional
        A span the fit leaves out and scores its prediction on: a fraction at the end (``0.2``)
        or a time range from the first row (``"20h..24h"``); see :mod:`rcsim.fitting.holdout`.
    noise : 'measurement' or 'process', optional
        'measurement' (default): a deterministic model with independent measurement errors
        (weighted least squares). 'process': a stochastic model with process noise on the
        states, fitted by maximum likelihood with a Kalman filter (linear networks only; see
        :mod:`rcsim.fitting.stochastic`).
    per_record : list of str, optional
        With several logs: the free values fitted once per log (each record's starting
        temperature, say); the other free values are shared.
    candidates : list, optional
        More candidate scenarios to compare with ``scenario``.
    select : 'bic', 'aic', 'holdout' or 'lr'
        How a comparison selects its candidate (see :mod:`rcsim.fitting.compare`).
    lags : int, optional
        Lags of the Ljung-Box test of the residuals (default min(10, n // 5)).

    Returns
    -------
    FitResult, or JointFit (several logs), or Comparison (several candidates)

    Raises
    ------
    InputError
        Bad scenario, log, key path or bound (the message names the file, key, column or line);
        a log that cannot be placed against ``simulation.start`` (see
        :func:`rcsim.fitting.model.log_offset`).
    """
    caller = FitSpec(free=as_tuple(free), bounds=bounds, per_record=as_tuple(per_record),
                     columns=columns, ignore=as_tuple(ignore), sigma=sigma, noise=noise)
    settings = dict(time=time, time_unit=time_unit, max_gap=max_gap, starts=starts,
                    solver=solver, seed=seed, holdout=holdout, lags=lags)
    if candidates is not None or isinstance(scenario, (list, tuple)):
        pool = list(scenario) if isinstance(scenario, (list, tuple)) else [scenario]
        return compare(pool + list(candidates or []), data, spec=caller, select=select,
                       **settings)
    cand = read_candidate(scenario)
    spec = given_over(cand, caller, stacklevel=2)
    if isinstance(data, (list, tuple)):
        result = fit_records(cand.scenario, list(data), spec, **settings)
    else:
        result = fit_scenario(cand.scenario, data, spec, **settings)
        result.label = cand.label
    issue_warnings(result, stacklevel=2)
    return result
