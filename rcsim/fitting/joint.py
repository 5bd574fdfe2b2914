"""What a fit of several logs found (:class:`JointFit`), and how it is put together from each
record's result and the uncertainty of all the free values."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..errors import InputError
from .diagnostics import information_criteria
from .notes import Notes, labelled
from .result import display_unit, write_text_atomic
from .statistics import (Uncertainty, correlation_matrix, correlation_warnings, estimate_warnings,
                         estimates_table)

__all__ = ["JointFit", "joint_result"]


@dataclass
class JointFit:
    """What a fit of several records found.

    ``estimates`` (index: the shared key paths, then ``<key>@<record>`` for the values of each
    record), ``correlation``, ``covariance`` (of the fitted coordinates), ``records`` (record
    name -> its :class:`FitResult`), the joint ``log_likelihood``, ``n_parameters``, ``aic``,
    ``bic``, ``n_points`` and ``rmse`` [K], ``warnings``, ``noise`` and, with process noise,
    ``noise_estimates``.
    """

    estimates: pd.DataFrame
    correlation: pd.DataFrame
    covariance: pd.DataFrame
    records: dict
    log_likelihood: float
    n_parameters: int
    aic: float
    bic: float
    n_points: int
    rmse: float
    warnings: list
    noise: str = "measurement"
    noise_estimates: pd.DataFrame | None = None
    units: dict = field(default_factory=dict)
    label: str = ""
    wall_time: float = 0.0
    _categories: list = field(default_factory=list, repr=False)

    @property
    def residuals(self) -> pd.DataFrame:
        """Every record's residuals, index (record, time [s])."""
        return pd.concat({k: r.residuals for k, r in self.records.items()},
                         names=["record", "time [s]"])

    @property
    def whiteness(self) -> pd.DataFrame:
        """The Ljung-Box test of each record's columns, index (record, column)."""
        return pd.concat({k: r.whiteness for k, r in self.records.items()},
                         names=["record", "column"])

    @property
    def whiteness_p(self) -> float:
        return float(np.nanmin([r.whiteness_p for r in self.records.values()]))

    @property
    def holdout_rmse(self) -> float:
        """RMS of every record's held-out residuals [K] (NaN without a held-out span)."""
        held = [r.holdout_residuals.to_numpy(dtype=float).ravel() for r in self.records.values()
                if r.holdout_residuals is not None]
        if not held:
            return float("nan")
        v = np.concatenate(held)
        v = v[np.isfinite(v)]
        return float(np.sqrt(np.mean(v ** 2))) if v.size else float("nan")

    @property
    def simulation_rmse(self) -> float:
        sq = [(r.simulation_rmse ** 2, r.n_points) for r in self.records.values()]
        return float(np.sqrt(sum(a * n for a, n in sq) / max(1, sum(n for _, n in sq))))

    @property
    def n_states(self) -> int:
        return next(iter(self.records.values())).n_states

    @property
    def fitted_scenario(self):
        """The scenario with the shared values and the first record's own values written in
        (:meth:`scenario_for` gives another record's)."""
        return next(iter(self.records.values())).fitted_scenario

    def scenario_for(self, record: str):
        """The fitted scenario of one record (shared values and its own)."""
        return self._record(record).fitted_scenario

    def _record(self, record):
        if record not in self.records:
            from ..base import suggest

            raise InputError(f"no record {record!r}", "record",
                             suggest(str(record), list(self.records)))
        return self.records[record]

    def table(self) -> pd.DataFrame:
        out = self.estimates.copy()
        out["unit"] = [display_unit(self.units.get(k.split("@", 1)[0], "")) for k in out.index]
        return out

    def to_csv(self, path) -> str:
        """Write :meth:`table` to a CSV file (temporary name, renamed when complete)."""
        return write_text_atomic(path, self.table().to_csv(index_label="key"))

    def write_scenario(self, path, record: str | None = None) -> str:
        """Write a record's fitted scenario (default the first) to ``path``."""
        rec = next(iter(self.records.values())) if record is None else self._record(record)
        return rec.write_scenario(path)

    def plot(self, record: str | None = None, **kwargs):
        """One record's figure (measured vs fitted, residuals), or every record's as a dict."""
        if record is not None:
            return self._record(record).plot(**kwargs)
        return {k: r.plot(**kwargs) for k, r in self.records.items()}

    def report(self, path=None, *, scenario=None, **options):
        """A self-contained HTML report of the fit of every log (see :mod:`rcsim.report`): the
        shared and per-log estimates, then a section per log. Written to ``path`` (.html; the
        path is returned), or its text when ``path`` is None.

        ``scenario``: the scenario before the fit (default: the fitted one); ``options`` go to
        :func:`rcsim.report.build_fit_report` (``log_path``: the log files, ``warnings``,
        ``figures``, ``title``).
        """
        from ..report.dispatch import report_page  # the report sits beside fitting; hand-off

        return report_page(self, path, scenario, **options)


def joint_result(records, params, x, cov, se, results, loglik, k, n, notes: Notes, noise,
                 noise_estimates=None, t_quantile=1.96) -> JointFit:
    """The JointFit of per-record results and the global uncertainty of the free values."""
    values = params.values(x)
    unc = Uncertainty(cov, np.where(np.isnan(se), np.inf, se), n, max(n - k, 1), 1.0, t_quantile)
    est = estimates_table(params, x, values, unc)
    corr = correlation_matrix(unc)
    notes.extend(estimate_warnings(params, est, unc))
    notes.extend(correlation_warnings(params, corr))
    for rec, res in zip(records, results):
        # a log's own warnings name it once; one the whole fit already gives is not repeated,
        # and the same text about two logs is given for each
        for text, category in zip(res.warnings, res._categories):
            text_of_log = labelled(rec.label, text, rec.log.name)
            if text not in notes.texts and text_of_log not in notes.texts:
                notes.add(text_of_log, category)
    aic, bic = information_criteria(loglik, k, n)
    squares = np.concatenate([r.residuals.to_numpy(dtype=float).ravel() for r in results])
    squares = squares[np.isfinite(squares)] ** 2
    keys = params.keys
    units = {}
    for rec in records:
        units.update({p.key: p.kind for p in rec.params})
    return JointFit(estimates=est, correlation=pd.DataFrame(corr, index=keys, columns=keys),
                    covariance=pd.DataFrame(cov, index=keys, columns=keys),
                    records={r.label: res for r, res in zip(records, results)},
                    log_likelihood=loglik, n_parameters=int(k), aic=aic, bic=bic, n_points=n,
                    rmse=float(np.sqrt(np.mean(squares))) if squares.size else float("nan"),
                    warnings=notes.texts, noise=noise, noise_estimates=noise_estimates,
                    units=units, _categories=notes.categories)
