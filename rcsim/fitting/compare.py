"""Candidate structures compared: several scenarios fitted to the same log, one table.

Each candidate is a scenario with its own free values (a ``[fit]`` section, see
:mod:`rcsim.fitting.candidates`, or the ``free`` given to :func:`compare`). All are fitted to the
same measured values, so their likelihoods compare. The table has, per candidate: the number of
states (nodes with a capacity), free values and estimated values (free values plus noise
parameters), the Gaussian log-likelihood, AIC and BIC (:mod:`rcsim.fitting.diagnostics`), the
RMSE of the deterministic run over the fitted span and over the held-out span, and the Ljung-Box
test of the residuals (its statistic, lags and p-value; the smallest p-value over the measured
columns). The selected candidate has the lowest BIC (``select="bic"``, the default), the lowest
AIC (``"aic"``) or the lowest held-out RMSE (``"holdout"``), or is the one forward selection by
likelihood-ratio tests keeps (``"lr"``: from the candidate with the fewest estimated values up,
each larger one is kept when LR = 2 (l_larger - l_current) is significant against the chi-square
distribution with the difference in values as degrees of freedom, at the 5 % level; the search
stops at the first extension that is not, as in the forward selection of Bacher & Madsen,
*Energy and Buildings* 43 (2011) 1511-1522; the test assumes each candidate contains the smaller
ones). The reason says by how much, and what its held-out error and residuals say.

Differences of BIC above about 10 are read as very strong evidence (Kass & Raftery, *Journal of
the American Statistical Association* 90 (1995) 773-795); of AIC above about 10 as essentially no
support for the worse model (Burnham & Anderson, *Model selection and multimodel inference*,
2nd ed., 2002, sec. 2.6).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..errors import InputError
from .candidates import FitSpec, given_over, read_candidate
from .diagnostics import WHITE_P

__all__ = ["compare", "Comparison", "SELECT"]

SELECT = ("bic", "aic", "holdout", "lr")
#: level of the likelihood-ratio tests of ``select="lr"``
LR_SIGNIFICANCE = 0.05


@dataclass
class Comparison:
    """Candidates fitted to one log (or one set of logs), compared.

    Attributes
    ----------
    table : DataFrame
        Index ``candidate``; columns ``states``, ``free_values``, ``parameters``, ``points``,
        ``log_likelihood``, ``aic``, ``bic``, ``delta_aic``, ``delta_bic``, ``rmse_fit`` [K],
        ``rmse_holdout`` [K], ``ljung_box_q``, ``ljung_box_lags``, ``whiteness_p``, ``noise``,
        ``selected``.
    fits : dict
        Candidate -> its FitResult (or JointFit for several logs).
    selected : str
        The selected candidate.
    reason : str
        Why, in words.
    criterion : str
        'bic', 'aic', 'holdout' or 'lr'.
    """

    table: pd.DataFrame
    fits: dict
    selected: str
    reason: str
    criterion: str
    warnings: list = field(default_factory=list)

    @property
    def selected_fit(self):
        return self.fits[self.selected]

    @property
    def selected_scenario(self):
        """The selected candidate with its fitted values."""
        return self.fits[self.selected].fitted_scenario

    def to_csv(self, path) -> str:
        """Write :attr:`table` to a CSV file (temporary name, renamed when complete)."""
        from .result import write_text_atomic

        return write_text_atomic(path, self.table.to_csv(index_label="candidate"))

    def write_selected(self, path) -> str:
        """Write the selected candidate's fitted scenario (TOML), checked by reading it back."""
        return self.fits[self.selected].write_scenario(path)

    def plot(self, **kwargs):
        """The measured record with every candidate's fit overlaid
        (:func:`rcsim.fitting.figures.plot_candidates`)."""
        from .figures import plot_candidates

        return plot_candidates(self.fits, selected=self.selected, **kwargs)


def compare(candidates, data, free=None, *, columns=None, ignore=None, bounds=None, sigma=None,
            time=None, time_unit=None, max_gap=None, starts=4, solver="auto", seed=0,
            holdout=None, noise=None, per_record=None, select="bic", lags=None,
            spec: FitSpec | None = None) -> Comparison:
    """Fit each candidate scenario to ``data`` and compare them in one table.

    Parameters
    ----------
    candidates : list
        Scenarios, paths of scenario files (a ``[fit]`` section gives a candidate's own free
        values, bounds, ...), ``(scenario, {fit table})`` pairs or
        :class:`rcsim.fitting.candidates.Candidate`.
    data : path or DataFrame, or a list of them
        The log (or logs, fitted at once by each candidate).
    free, columns, ignore, bounds, sigma, noise, per_record : optional
        For every candidate: they override what its ``[fit]`` section (or the table of a
        ``(scenario, {fit table})`` pair) says, with a :class:`FitWarning` naming what was
        overridden, as ``rcsim fit`` does with its options (see :func:`rcsim.fit`).
    select : 'bic', 'aic', 'holdout' or 'lr'
        The rule that selects a candidate ('holdout' needs ``holdout``; 'lr': forward selection
        by likelihood-ratio tests over candidates that contain one another).
    other arguments
        As for :func:`rcsim.fit`.

    Raises
    ------
    InputError
        No candidate, a candidate with nothing freed, an unknown rule, candidates that do not
        measure the same values (their likelihoods would not compare).
    """
    from .procedure import fit_scenario, issue_warnings
    from .records import fit_records

    if select not in SELECT:
        from ..base import suggest

        raise InputError(f"select must be one of {', '.join(map(repr, SELECT))}, got "
                         f"{select!r}", "select", suggest(str(select), list(SELECT)))
    if select == "holdout" and holdout is None:
        raise InputError("selecting by the held-out error needs a held-out span", "select",
                         "give holdout= (e.g. 0.2) or select='bic'")
    if spec is None:
        spec = FitSpec(free=_tuple(free), bounds=bounds, per_record=_tuple(per_record),
                       columns=columns, ignore=_tuple(ignore), sigma=sigma, noise=noise)
    pool = [read_candidate(c) for c in candidates]
    if not pool:
        raise InputError("no candidate to compare", "candidates")
    settings = dict(time=time, time_unit=time_unit, max_gap=max_gap, starts=starts,
                    solver=solver, seed=seed, holdout=holdout, lags=lags)
    labels, specs = [], []
    for cand in pool:
        labels.append(_unique_label(cand.label, labels))
        specs.append(given_over(cand, spec, stacklevel=2))
        if not specs[-1].free and not specs[-1].per_record:
            raise InputError(f"candidate {labels[-1]!r} frees no value", "free",
                             "give free= or a [fit] section with free = [...] in its file")
    if not isinstance(data, (list, tuple)):  # fail before fitting: the same measured columns
        from .procedure import read_for

        _check_comparable({label: read_for(cand.scenario, data, own, time, time_unit, max_gap)
                           for label, cand, own in zip(labels, pool, specs)})
    fits = {}
    for label, cand, own in zip(labels, pool, specs):
        if isinstance(data, (list, tuple)):
            res = fit_records(cand.scenario, list(data), own, **settings)
        else:
            res = fit_scenario(cand.scenario, data, own, **settings)
        res.label = label
        fits[label] = res
    _check_comparable(fits)
    table = comparison_table(fits)
    selected, reason = choose(table, select)
    table["selected"] = table.index == selected
    out = Comparison(table, fits, selected, reason, select)
    chosen = fits[selected]
    out.warnings = [f"{selected}: {w}" for w in chosen.warnings]
    issue_warnings(chosen, stacklevel=2)
    return out


def _tuple(value):
    if value is None:
        return None
    return (value,) if isinstance(value, str) else tuple(value)


def _unique_label(label: str, taken: list) -> str:
    name, i = label, 2
    while name in taken:
        name = f"{label} ({i})"
        i += 1
    return name


def _measured(fit) -> tuple:
    """(measured columns, number of values) of a fit, a fit of several logs, or a log."""
    if hasattr(fit, "records"):
        return tuple((k, tuple(r.measured.columns)) for k, r in fit.records.items()), \
            fit.n_points
    if hasattr(fit, "targets") and hasattr(fit, "values") and hasattr(fit, "time"):
        Y = fit.values[fit.measured].to_numpy(dtype=float)
        return tuple(fit.measured), int(np.isfinite(Y).sum())
    return tuple(fit.measured.columns), fit.n_points


def _check_comparable(fits: dict) -> None:
    """Every candidate fits the same measured values (same columns, same number)."""
    items = list(fits.items())
    first_label, first = items[0]
    (cols0, n0) = _measured(first)
    for label, fit in items[1:]:
        cols, n = _measured(fit)
        if cols != cols0 or n != n0:
            raise InputError(f"candidates {first_label!r} and {label!r} fit different measured "
                             f"values ({n0} in {cols0} against {n} in {cols}), so their "
                             "likelihoods do not compare", "candidates",
                             "name the same nodes after the log's columns (or map them with "
                             "columns=) in every candidate")


def comparison_table(fits: dict) -> pd.DataFrame:
    """One row per candidate (see :class:`Comparison`)."""
    rows = []
    for label, fit in fits.items():
        white = fit.whiteness
        if white is not None and len(white) and np.isfinite(white["p_value"]).any():
            worst = white.iloc[int(np.nanargmin(white["p_value"].to_numpy(dtype=float)))]
            q, lags, p = float(worst["statistic"]), int(worst["lags"]), float(worst["p_value"])
        else:
            q, lags, p = math.nan, 0, math.nan
        rows.append({"candidate": label, "states": fit.n_states,
                     "free_values": len(fit.estimates), "parameters": fit.n_parameters,
                     "points": fit.n_points, "log_likelihood": fit.log_likelihood,
                     "aic": fit.aic, "bic": fit.bic, "rmse_fit": fit.simulation_rmse,
                     "rmse_holdout": fit.holdout_rmse, "ljung_box_q": q, "ljung_box_lags": lags,
                     "whiteness_p": p, "noise": fit.noise})
    table = pd.DataFrame(rows).set_index("candidate")
    table.insert(table.columns.get_loc("bic") + 1, "delta_aic", table["aic"] - table["aic"].min())
    table.insert(table.columns.get_loc("delta_aic") + 1, "delta_bic",
                 table["bic"] - table["bic"].min())
    return table


def choose(table: pd.DataFrame, select: str) -> tuple[str, str]:
    """The selected candidate and the reason, in words."""
    if select == "lr":
        best, parts = _forward_lr(table)
        return best, "; ".join(parts + _verdicts(table, best, select))
    column = {"bic": "bic", "aic": "aic", "holdout": "rmse_holdout"}[select]
    values = table[column].astype(float)
    if not np.isfinite(values).any():
        raise InputError(f"no candidate has a finite {column}", "select")
    best = str(values.idxmin())
    name = {"bic": "BIC", "aic": "AIC", "holdout": "held-out RMSE"}[select]
    parts = []
    others = values.drop(best)
    unit = " K" if select == "holdout" else ""
    if len(others) and np.isfinite(others).any():
        second = str(others.idxmin())
        gap = float(others.min() - values[best])
        text = (f"lowest {name} ({values[best]:.6g}{unit}), {gap:.4g}{unit} below {second!r}, "
                "the next best")
        if select != "holdout":
            text += " (a difference above about 10 is very strong evidence)" if gap > 10 else \
                " (a difference below about 2 is hardly any evidence)" if gap < 2 else ""
        parts.append(text)
    else:
        parts.append(f"the only candidate ({name} {values[best]:.6g}{unit})")
    return best, "; ".join(parts + _verdicts(table, best, select))


def _forward_lr(table: pd.DataFrame) -> tuple[str, list]:
    """Forward selection by likelihood-ratio tests over the candidates, fewest values first
    (at each number of values the most likely candidate is the one tested)."""
    from scipy import stats

    ll = table["log_likelihood"].astype(float)
    if not np.isfinite(ll).all():
        raise InputError("a candidate has no finite log-likelihood", "select",
                         "select by 'bic' or 'aic'")
    k = table["parameters"].astype(int)
    levels = sorted(set(k))
    best_at = {n: str(ll[k == n].idxmax()) for n in levels}
    current = best_at[levels[0]]
    if len(levels) == 1:
        return current, [f"every candidate estimates {levels[0]} values, so none extends another "
                         f"and no likelihood-ratio test applies: the most likely ({current!r}, "
                         f"log-likelihood {ll[current]:.6g})"]
    tests = []
    for n in levels[1:]:
        other = best_at[n]
        lr = 2.0 * (ll[other] - ll[current])
        df = int(n - k[current])
        p = float(stats.chi2.sf(lr, df)) if lr > 0 else 1.0
        keep = p < LR_SIGNIFICANCE
        p_text = "p < 1e-12" if p < 1e-12 else f"p = {p:.3g}"
        tests.append(f"{other!r} over {current!r}: LR {lr:.4g} on {df} df, {p_text}, "
                     + ("kept" if keep else "not significant, stop"))
        if not keep:
            break
        current = other
    return current, [f"forward selection by likelihood-ratio tests at {LR_SIGNIFICANCE:g} "
                     f"(each candidate taken to contain the smaller ones): " + "; ".join(tests)]


def _verdicts(table: pd.DataFrame, best: str, select: str) -> list:
    """What the held-out error and the residuals of the selected candidate say."""
    parts = []
    row = table.loc[best]
    held = table["rmse_holdout"].astype(float)
    if select != "holdout" and np.isfinite(held).any():
        best_held = str(held.idxmin())
        if best_held == best:
            parts.append(f"its held-out RMSE {held[best]:.4g} K is the lowest too")
        else:
            parts.append(f"its held-out RMSE is {held[best]:.4g} K against {held[best_held]:.4g} K "
                         f"for {best_held!r}")
    p = float(row["whiteness_p"])
    if np.isfinite(p):
        if p >= WHITE_P:
            parts.append(f"its residuals pass the Ljung-Box test (p = {p:.3g})")
        else:
            hint = "" if row["noise"] == "process" else "; its intervals are then too narrow " \
                "(noise='process' gives honest ones)"
            parts.append(f"its residuals are not white (Ljung-Box p = {p:.2g}): it still misses "
                         f"a dynamic of the data{hint}")
    return parts
