"""One scenario fitted to several logs at once (the same box on different days, several heating
tests): values shared across the records, and values fitted once per record.

``free`` lists the shared values, ``per_record`` those each record gets its own value of (its
starting temperatures, say, or the ambient of a day)::

    fit = rcsim.fit(sc, ["day1.csv", "day2.csv"], free=["nodes.box.capacity",
                    "links.wall.resistance"], per_record=["nodes.box.initial"])
    fit.estimates        # nodes.box.capacity, links.wall.resistance,
                         # nodes.box.initial@day1.csv, nodes.box.initial@day2.csv
    fit.records["day2.csv"].residuals; fit.records["day2.csv"].plot()

The residuals of all records are minimised together (each record's columns weighted by their
own spread after a first fit, unless ``sigma`` is given); the covariance of all values comes
from the joint Jacobian, so a shared value's interval uses every record. Each record also gets a
:class:`FitResult` of its own (its tables, residuals, figure, its scenario with the shared values
and its own ones written in). The log-likelihood of the joint fit is the sum of the records'.
"""

from __future__ import annotations

import copy
import os
import time as _time
import numpy as np

from ..errors import DataError, InputError
from .candidates import FitSpec
from .holdout import parse_holdout
from .joint import JointFit, joint_result
from .logs import gap_notes
from .notes import Notes, labelled
from .parameters import ParameterSet, make_parameters
from .problem import Problem, Run, Search, column_weights, run_least_squares, search
from .procedure import check_noise, check_starts, model_for, read_for
from .record import Record
from .statistics import Uncertainty, uncertainty
from .stochastic_fit import fit_stochastic

__all__ = ["JointProblem", "fit_records", "record_labels", "prepare_records", "JointFit"]


def record_labels(datas) -> list[str]:
    """A name for each log: its file name, or ``record <i>`` for a table; made unique."""
    labels = []
    for i, d in enumerate(datas, 1):
        if isinstance(d, (str, os.PathLike)):
            name = os.path.basename(os.fspath(d)) or f"record {i}"
        else:
            name = f"record {i}"
        while name in labels:
            name = f"{name} ({i})"
        labels.append(name)
    return labels


class JointProblem:
    """The stacked weighted residuals of several records and their Jacobian in the global
    coordinates (the interface :func:`rcsim.fitting.problem.search` needs)."""

    def __init__(self, records: list, problems: list, params: ParameterSet):
        self.records, self.problems, self.params = records, problems, params

    def values(self, x) -> list[float]:
        return self.params.values(x)

    def residuals(self, x) -> np.ndarray:
        return np.concatenate([pr.residuals(rec.local(x))
                               for rec, pr in zip(self.records, self.problems)])

    def jacobian(self, x, central: bool = False) -> np.ndarray:
        blocks = []
        for rec, pr in zip(self.records, self.problems):
            local = pr.jacobian(rec.local(x), central=central)
            J = np.zeros((local.shape[0], len(self.params)))
            J[:, rec.index] = local
            blocks.append(J)
        return np.vstack(blocks)

    def solve(self, x0) -> Run:
        return run_least_squares(self, x0)

    def reweight(self, x) -> None:
        for rec, pr in zip(self.records, self.problems):
            pr.reweight(rec.local(x))


def prepare_records(sc, datas, spec: FitSpec, read_settings: dict, solver: str, holdout,
                    model_of=None) -> tuple[list, ParameterSet, Notes]:
    """Read each log, free its values, build its model; the global free values (shared, then
    each record's own) and the notes gathered (gaps, starts moved)."""
    shared = list(spec.free or [])
    own = list(spec.per_record or [])
    both = sorted(set(shared) & set(own))
    if both:
        raise InputError(f"{both[0]!r} is listed both as shared (free) and per record",
                         "per_record", "list each value in one of them")
    if not datas:
        raise InputError("no log to fit", "data")
    labels = record_labels(datas)
    notes = Notes()
    records, shared_items, own_items = [], [], []
    for r, (label, data) in enumerate(zip(labels, datas)):
        log = read_for(sc, data, spec, **read_settings)
        params = make_parameters(sc, shared + own, spec.bounds, log)
        model = model_of(sc, log, params) if model_of else \
            model_for(sc, log, params, solver, spec.noise or "measurement")
        Y = log.values[log.measured].to_numpy(dtype=float)
        mask = np.isfinite(Y)
        span = parse_holdout(holdout, log.time)
        if span is not None:
            mask &= ~span.mask(log.time)[:, None]
        notes.extend(labelled(label, n, log.name)
                     for n in gap_notes(log) + params.start_from_log(log, Y))
        index = np.concatenate([np.arange(len(shared)),
                                len(shared) + r * len(own) + np.arange(len(own))]).astype(int)
        records.append(Record(label, sc, log, model, params, index, Y, mask, span))
        if r == 0:
            shared_items = [copy.copy(p) for p in params.items[:len(shared)]]
        for p in params.items[len(shared):]:
            item = copy.copy(p)
            item.key = f"{p.key}@{label}"
            own_items.append(item)
    columns = records[0].log.measured
    for rec in records[1:]:
        if rec.log.measured != columns:
            raise DataError(f"measures columns {rec.log.measured}, the first log "
                            f"{columns}", rec.label, "give every log the same measured columns")
    return records, ParameterSet(shared_items + own_items), notes


def fit_records(sc, datas, spec: FitSpec, *, time=None, time_unit=None, max_gap=None, starts=4,
                solver="auto", seed=0, holdout=None, lags=None, model_of=None,
                points=None) -> JointFit:
    """Fit ``sc`` to several logs at once (see the module's docstring)."""
    wall0 = _time.perf_counter()
    check_starts(starts)
    noise = check_noise(spec.noise)
    records, params, notes = prepare_records(
        sc, datas, spec, dict(time=time, time_unit=time_unit, max_gap=max_gap), solver, holdout,
        model_of)
    n_points = int(sum(rec.mask.sum() for rec in records))
    if n_points <= len(params):
        raise DataError(f"{n_points} measured values cannot determine {len(params)} free values",
                        records[0].label, "log more data or free fewer values")
    problems = [Problem(rec.model, rec.params, rec.Y, rec.mask,
                        column_weights(spec.sigma, rec.log)) for rec in records]
    joint = JointProblem(records, problems, params)
    found = search(joint, starts, seed, reweight=spec.sigma is None, points=points)
    if noise == "process":
        result = fit_stochastic(records, params, found.best.x, notes, sigma=spec.sigma,
                                starts=starts, lags=lags)
    else:
        result = _deterministic_result(joint, found, notes, spec.sigma is not None, lags)
    result.wall_time = _time.perf_counter() - wall0
    return result


def _deterministic_result(joint: JointProblem, found: Search, notes: Notes, sigma_known: bool,
                          lags) -> JointFit:
    from .summary import build_result

    x = found.best.x
    unc = uncertainty(joint.jacobian(x, central=True), joint.residuals(x))
    results = []
    for rec, pr in zip(joint.records, joint.problems):
        idx = rec.index
        unc_r = Uncertainty(unc.covariance[np.ix_(idx, idx)], unc.std_errors[idx],
                            int(rec.mask.sum()), unc.dof, unc.variance, unc.t_quantile)
        best = found.best
        local = Search(Run(rec.local(x), best.cost, best.status, best.message, best.nfev,
                           rec.local(best.x0)), [Run(rec.local(r.x), r.cost, r.status,
                                                     r.message, r.nfev, rec.local(r.x0))
                                                 for r in found.runs], found.rivals)
        results.append(build_result(pr, local, rec.log, rec.scenario, Notes(), unc_r,
                                    holdout=rec.holdout, sigma_known=sigma_known, lags=lags))
        results[-1].label = rec.label
    loglik = float(sum(r.log_likelihood for r in results))
    k = len(joint.params) + sum(r.n_parameters - len(rec.params)
                                for r, rec in zip(results, joint.records))
    return joint_result(joint.records, joint.params, x, unc.covariance, unc.std_errors, results,
                        loglik, k, unc.n_points, notes, "measurement",
                        t_quantile=unc.t_quantile)
