"""What a fit found (:class:`FitResult`), and writing it: the estimates as CSV, the fitted
scenario as TOML.

The fitted scenario is the user's own scenario text with the fitted values changed in place
(:func:`rcsim.tomlwrite.update`): comments, key order and layout stay, and a comment header gives
the estimates. It is read back before it is written (under a temporary name, renamed when
complete).
"""

from __future__ import annotations

import math
import os
import warnings
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..errors import DataError, SolverError
from ..scenario import Scenario
from ..units import si_unit, to_si
from .notes import FitWarning

__all__ = ["FitResult", "write_text_atomic", "display_unit", "scenario_text"]

#: First words of the comment header of a fitted scenario, and of its last line.
HEADER_FIRST = "# Fitted to "
HEADER_LAST = "# A fitted model supports, and never replaces, qualification testing and " \
              "professional judgement."


@dataclass
class FitResult:
    """What a fit found.

    Attributes
    ----------
    estimates : DataFrame
        Index: key path; columns ``value``, ``std_error``, ``ci_low``, ``ci_high`` (SI; degC for
        temperatures, K for their standard errors). The interval is 95 %.
    correlation : DataFrame
        Correlation matrix of the estimates.
    covariance : DataFrame
        Covariance of the fitted coordinates (log of positive values, the value itself for
        temperatures and powers).
    rmse : float
        Root mean square of measured - fitted over every measured value [K].
    rmse_by_column : Series
        The same per log column [K].
    autocorrelation : Series
        Lag-1 autocorrelation of the residuals per log column.
    warnings : list of str
        What the fit warned about (also issued as :class:`FitWarning`).
    residuals, measured, fitted : DataFrame
        Measured - fitted, measured and fitted temperatures at the log's times (index time [s],
        one column per measured log column).
    curve : DataFrame
        The fitted model on an even grid over the log's span (joined with the log's times), so
        that it can be drawn across gaps.
    inputs : DataFrame
        The log columns that drove boundaries.
    fitted_scenario : rcsim.Scenario
        The scenario with the estimates written in.
    starts : DataFrame
        Each start: its values, final cost and status.
    units : dict
        Key path -> quantity kind of the value.
    targets : dict
        Log column -> node or boundary.
    n_points, dof : int
        Measured values fitted, and degrees of freedom (n_points - free values).
    solver : str
        How the model ran ('exact' on the exact modal path).
    n_evaluations, n_decompositions : int
        Model evaluations, and eigen-decompositions computed.
    wall_time : float
        Seconds the fit took.
    gaps : DataFrame
        Spans of the log without values (see :class:`rcsim.fitting.Log`).
    time_constants : ndarray
        Time constants of the fitted network [s].
    noise : str
        ``"measurement"`` (deterministic model, independent measurement errors: output error)
        or ``"process"`` (stochastic model, Kalman filter; see :mod:`rcsim.fitting.kalman`).
        With process noise, ``residuals`` are the one-step-ahead prediction errors (the
        innovations), ``fitted`` the one-step-ahead predictions and ``rmse`` their RMS; ``curve``
        is the deterministic run of the fitted model and ``simulation_rmse`` its error.
    log_likelihood, n_parameters, aic, bic : float, int, float, float
        Gaussian log-likelihood of the fitted values, the number of values estimated (free
        values plus noise parameters) and the information criteria
        (:mod:`rcsim.fitting.diagnostics`).
    whiteness : DataFrame
        The Ljung-Box test of each column's residuals (standardised innovations with process
        noise): ``statistic``, ``lags``, ``p_value``, ``n``.
    holdout : rcsim.fitting.holdout.Holdout or None
        The held-out span, if any; ``holdout_rmse`` [K], ``holdout_rmse_by_column`` and
        ``holdout_residuals`` (measured - predicted on it, NaN elsewhere) score the prediction
        there.
    simulation_rmse : float
        RMS of measured - deterministic run over the fitted values [K] (equal to ``rmse``
        without process noise).
    noise_estimates : DataFrame or None
        With process noise: each noise parameter (``process.<state group>`` [K/s^0.5],
        ``measurement.<column>`` [K]) with ``value``, ``std_error``, ``ci_low``, ``ci_high``.
    n_states : int
        Number of states of the fitted network (nodes with a heat capacity).
    label : str
        Name of the scenario (or candidate) fitted.
    """

    estimates: pd.DataFrame
    correlation: pd.DataFrame
    covariance: pd.DataFrame
    rmse: float
    rmse_by_column: pd.Series
    autocorrelation: pd.Series
    warnings: list
    residuals: pd.DataFrame
    measured: pd.DataFrame
    fitted: pd.DataFrame
    curve: pd.DataFrame
    inputs: pd.DataFrame
    fitted_scenario: Scenario
    starts: pd.DataFrame
    units: dict = field(default_factory=dict)
    targets: dict = field(default_factory=dict)
    log_name: str = ""
    start_time: pd.Timestamp | None = None
    n_points: int = 0
    dof: int = 0
    solver: str = ""
    n_evaluations: int = 0
    n_decompositions: int = 0
    wall_time: float = 0.0
    gaps: pd.DataFrame | None = None
    time_constants: np.ndarray | None = None
    noise: str = "measurement"
    log_likelihood: float = float("nan")
    n_parameters: int = 0
    aic: float = float("nan")
    bic: float = float("nan")
    whiteness: pd.DataFrame | None = None
    holdout: object = None
    holdout_rmse: float = float("nan")
    holdout_rmse_by_column: pd.Series | None = None
    holdout_residuals: pd.DataFrame | None = None
    simulation_rmse: float = float("nan")
    noise_estimates: pd.DataFrame | None = None
    n_states: int = 0
    label: str = ""
    _categories: list = field(default_factory=list, repr=False)

    @property
    def whiteness_p(self) -> float:
        """The smallest Ljung-Box p-value over the measured columns (NaN without a test)."""
        if self.whiteness is None or not len(self.whiteness):
            return float("nan")
        return float(np.nanmin(self.whiteness["p_value"].to_numpy(dtype=float))) \
            if np.isfinite(self.whiteness["p_value"].to_numpy(dtype=float)).any() else float("nan")

    @property
    def time(self) -> np.ndarray:
        """Times of the log's rows [s] from the first row."""
        return self.measured.index.to_numpy(dtype=float)

    def value_counts(self) -> pd.DataFrame:
        """How many values of each measured column the log gave, the fit used and it held out.

        One row per measured column: ``measured`` (values in the log), ``fitted`` (in the
        residuals the fit minimised; ``n_points`` is their sum) and ``held out`` (in the
        held-out span, on which the prediction is scored; 0 without one). Every count rcsim
        prints or writes about a fit's values comes from here, so the headline and the
        per-column table agree.
        """
        columns = list(self.measured.columns)
        fitted = self.residuals.reindex(columns=columns).notna().sum()
        held = (self.holdout_residuals.reindex(columns=columns).notna().sum()
                if self.holdout_residuals is not None else pd.Series(0, index=columns))
        return pd.DataFrame({"measured": self.measured.notna().sum().astype(int),
                             "fitted": fitted.astype(int), "held out": held.astype(int)},
                            index=pd.Index(columns, name="column"))

    def values_text(self, columns: str = "") -> str:
        """The fit's values in words, with ``columns`` (e.g. the measured columns' names) in
        parentheses after the count: ``"678 measured values, all fitted"``, or with a held-out
        span ``"678 measured values: 498 fitted, 180 held out in the last 25 % (9 h to 12 h
        after the first row)"``."""
        counts = self.value_counts()
        total, fitted = int(counts["measured"].sum()), int(counts["fitted"].sum())
        head = f"{total} measured values" + (f" ({columns})" if columns else "")
        if self.holdout is None:
            return head + (", all fitted" if fitted == total else f", {fitted} fitted")
        return (f"{head}: {fitted} fitted, {int(counts['held out'].sum())} held out in "
                f"{self.holdout.describe()}")

    def table(self) -> pd.DataFrame:
        """The estimates with their display unit and the starting values (for printing/CSV)."""
        out = self.estimates.copy()
        out["unit"] = [_display_unit(self.units.get(k, "")) for k in out.index]
        out["start"] = self.starts.iloc[0][list(out.index)].to_numpy(dtype=float) \
            if len(self.starts) else np.nan
        return out

    def to_csv(self, path) -> str:
        """Write :meth:`table` to a CSV file (temporary name, renamed when complete)."""
        text = self.table().to_csv(index_label="key")
        return _write_text_atomic(path, text)

    def _header(self) -> str:
        """The comment lines that open a fitted scenario: the log, the estimates with their
        standard errors and intervals, the warnings."""
        lines = [f"{HEADER_FIRST}{self.log_name} by rcsim fit: {self.values_text()}, "
                 f"RMSE {self.rmse:.4g} K (over the fitted values).",
                 "# estimate +- standard error (95 % interval):"]
        if self.holdout is not None and math.isfinite(self.holdout_rmse):
            lines.insert(1, f"# held-out RMSE {self.holdout_rmse:.4g} K (the prediction over "
                            "the held-out values)")
        if self.noise == "process":
            lines.insert(1, "# with process noise (Kalman filter); the RMSE is that of the "
                            "one-step-ahead predictions")
        for k, row in self.estimates.iterrows():
            u = _display_unit(self.units.get(k, ""))
            lines.append(f"#   {k} = {row['value']:.6g} +- {row['std_error']:.3g} "
                         f"({row['ci_low']:.6g} .. {row['ci_high']:.6g}) {u}".rstrip())
        for w in self.warnings:
            lines.append(f"# warning: {w}")
        lines.append(HEADER_LAST)
        return "\n".join(lines)

    def to_toml(self) -> str:
        """The fitted scenario as TOML text, with a comment header giving the estimates.

        The scenario's own text with the fitted values changed in place: comments, key order
        and layout are kept (a header left by an earlier fit is replaced).
        """
        sc = self.fitted_scenario
        return _with_header(self._header(), scenario_text(sc, sc.data))

    def write_scenario(self, path) -> str:
        """Write the fitted scenario to ``path`` (TOML), checked by reading it back.

        The files it names are written relative to the new folder; one that would lie outside
        it is copied beside it (:func:`rcsim.tomlwrite.write_scenario`), so the written file
        reads back with no option. Returns the path (a :class:`rcsim.tomlwrite.Written`, whose
        ``copied`` lists the copies).
        """
        from ..tomlwrite import write_scenario

        sc = self.fitted_scenario

        def text_of(data):
            return _with_header(self._header(), scenario_text(sc, data))

        def check(back):
            for k, row in self.estimates.iterrows():
                got = to_si(back.value(k), self.units[k], k)
                if not math.isclose(got, row["value"], rel_tol=1e-9, abs_tol=1e-9):
                    raise SolverError(f"the written scenario reads back {k} = {got!r}, not "
                                      f"{row['value']!r}")  # pragma: no cover - a bug if reached

        return write_scenario(path, sc.data, sc.base_dir, text_of, check)

    def plot(self, **kwargs):
        """Measured vs fitted with residuals below (see :func:`rcsim.plotting.plot_fit`)."""
        from ..plotting import plot_fit

        return plot_fit(self, **kwargs)

    def report(self, path=None, *, scenario=None, **options):
        """A self-contained HTML report of the fit (see :mod:`rcsim.report`): written to ``path``
        (.html; the path is returned), or its text when ``path`` is None.

        ``scenario``: the scenario before the fit (default: the fitted one); ``options`` go to
        :func:`rcsim.report.build_fit_report` (``log_path``, ``warnings``, ``figures``, ``title``).
        """
        from ..report.dispatch import report_page  # the report sits beside fitting; hand-off

        return report_page(self, path, scenario, **options)


def scenario_text(sc: Scenario, data: dict) -> str:
    """TOML text that reads as ``data``: the scenario's own text edited (its comments, order
    and layout kept, a header of an earlier fit left out), or, when that text cannot be edited
    into ``data``, a new document (with a :class:`FitWarning`)."""
    from ..tomlwrite import dumps, update

    body = _without_header(sc.text or "")
    if body.strip():
        try:
            return update(body, data)
        except ValueError as exc:
            warnings.warn(f"{sc.name}: its text could not be edited ({exc}), so the fitted "
                          "scenario is written as a new document without its comments",
                          FitWarning, stacklevel=3)
    return dumps(data)


def _without_header(text: str) -> str:
    """``text`` without the comment header a fit put at its top (so a refit has one header)."""
    lines = text.splitlines(keepends=True)
    if not lines or not lines[0].startswith(HEADER_FIRST):
        return text
    for i, line in enumerate(lines):
        if not line.startswith("#"):
            return text  # not a header of ours: keep every line
        if line.rstrip("\r\n") == HEADER_LAST:
            rest = lines[i + 1:]
            while rest and not rest[0].strip():
                rest = rest[1:]
            return "".join(rest)
    return text


def _with_header(header: str, body: str) -> str:
    newline = "\r\n" if "\r\n" in body else "\n"
    return header.replace("\n", newline) + newline + newline + body


def display_unit(kind: str) -> str:
    """The unit a value of quantity ``kind`` is shown in (empty without a kind)."""
    return si_unit(kind, display=True) if kind else ""


_display_unit = display_unit


def write_text_atomic(path, text: str) -> str:
    """Write ``text`` to ``path`` under a temporary name, renamed when complete."""
    return _write_text_atomic(path, text)


def _write_text_atomic(path, text: str) -> str:
    from ..atomic import atomic_path

    try:
        with atomic_path(path) as tmp, open(tmp, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
    except OSError as exc:
        raise DataError(f"cannot write ({exc.strerror})", os.fspath(path)) from None
    return os.fspath(path)
