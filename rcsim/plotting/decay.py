"""The numbers of a warm-up or cool-down: T_initial, T_final, the dominant time constant τ₁ and
the 63.2 % point, as the response figure states them (no drawing here).

θ = (T − T_final)/(T_initial − T_final) of a single time constant is exp(−t/τ₁). T_final is the
last sample, a given temperature, or a least-squares asymptote of T_final + A·exp(−t/τ₁) over the
part of the run past the faster modes; τ₁ is the longest stored time constant, or, for results
that store none (nonlinear runs), fitted together with T_final or taken from the slope of ln θ.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError, UnitError
from .common import check_names, default_nodes

__all__ = ["fit_asymptote", "fit_tau_and_asymptote", "slope_tau", "crossing", "ResponseSetup",
           "response_setup"]


def fit_asymptote(t, y, tau, t_from):
    """Least-squares T_final of ``y ≈ T_final + A exp(-t/tau)`` over ``t >= t_from``.

    Returns (T_final, residual sum of squares).
    """
    keep = t >= t_from
    if keep.sum() < 3:
        keep = np.ones_like(t, dtype=bool)
    basis = np.column_stack([np.ones(keep.sum()), np.exp(-(t[keep] - t[0]) / tau)])
    coef, *_ = np.linalg.lstsq(basis, y[keep], rcond=None)
    resid = y[keep] - basis @ coef
    return float(coef[0]), float(resid @ resid)


def fit_tau_and_asymptote(t, y, t_from):
    """Dominant τ and T_final of ``y ≈ T_final + A exp(-t/τ)`` (one-dimensional search on log τ)."""
    from scipy.optimize import minimize_scalar

    span = max(float(t[-1] - t[0]), 1e-9)
    out = minimize_scalar(lambda lt: fit_asymptote(t, y, math.exp(lt), t_from)[1],
                          bounds=(math.log(span / 1000.0), math.log(100.0 * span)),
                          method="bounded", options={"xatol": 1e-4})
    tau = math.exp(out.x)
    return tau, fit_asymptote(t, y, tau, t_from)[0]


def slope_tau(t, theta):
    """τ from the slope of ln θ where 0.05 ≤ θ ≤ 0.6 (past the fast modes, above the noise)."""
    for lo, hi in ((0.05, 0.6), (1e-3, 0.9)):
        keep = np.isfinite(theta) & (theta >= lo) & (theta <= hi)
        if keep.sum() >= 3 and np.ptp(t[keep]) > 0:
            slope = np.polyfit(t[keep], np.log(theta[keep]), 1)[0]
            if slope < 0:
                return -1.0 / slope
    return math.nan


def crossing(t, theta, level):
    """First time θ falls to ``level``, linear between samples (NaN if it never does).

    >>> crossing(np.array([0.0, 10.0]), np.array([1.0, 0.0]), 0.25)
    7.5
    """
    below = np.flatnonzero(theta <= level)
    if not below.size:
        return math.nan
    k = int(below[0])
    if k == 0:
        return float(t[0])
    a, b = theta[k - 1], theta[k]
    return float(t[k - 1] + (t[k] - t[k - 1]) * (a - level) / (a - b))


def _temperature(value) -> float:
    """T_final given as a number [degC] or a string with units."""
    from ..units import to_si

    try:
        return to_si(value, "temperature", "final")
    except UnitError as err:
        raise InputError(f"final must be 'last', 'fit' or a temperature; {err.message}", "final",
                         "write e.g. '25 degC'") from None


@dataclass
class ResponseSetup:
    """What a response figure normalises by.

    Attributes
    ----------
    time : ndarray
        The result's times [s].
    candidates, shown, skipped : list of str
        Nodes asked for (or chosen by default); those that move (T_initial and T_final differ by
        more than 0.01 K) and are drawn; those that do not.
    initials, finals : dict
        ``{node: degC}``.
    tau : float
        τ₁ [s] from the result (NaN when it stores none: estimated later from the curves).
    tau_source : str
        ``"result"`` or ``"estimated"``.
    final_how : str
        ``"last sample"``, ``"fitted asymptote"`` or ``"given"``.
    fitted_taus : list of float
        τ [s] fitted with each T_final when the result stores no time constants.
    """

    time: np.ndarray
    candidates: list
    shown: list
    skipped: list
    initials: dict
    finals: dict
    tau: float
    tau_source: str
    final_how: str
    fitted_taus: list


def _final_rule(final):
    """``final`` read: None/"last", "fit", {node: degC} or degC."""
    if isinstance(final, dict):
        return {k: _temperature(v) for k, v in final.items()}
    if final not in (None, "last", "fit"):
        return _temperature(final)
    return final


def _finals(temps, t, candidates, final, taus, tau, t_from):
    """({node: T_initial}, {node: T_final}, fitted τ per node when none is stored)."""
    finals, initials, fitted_taus = {}, {}, []
    for n in candidates:
        y = temps[n].to_numpy()
        initials[n] = float(y[0])
        if final in (None, "last"):
            finals[n] = float(y[-1])
        elif final == "fit":
            if taus.size:
                finals[n] = fit_asymptote(t, y, tau, t_from)[0]
            else:
                tau_n, finals[n] = fit_tau_and_asymptote(t, y, t_from)
                fitted_taus.append(tau_n)
        elif isinstance(final, dict):
            if n not in final:
                raise InputError(f"no final temperature given for node {n!r}", "final")
            finals[n] = float(final[n])
        else:
            finals[n] = float(final)
    return initials, finals, fitted_taus


def response_setup(res, nodes, final) -> ResponseSetup:
    """Nodes, T_initial, T_final, τ and how they were found, for a response figure."""
    temps = res.temperatures
    t = res.time
    if t.size < 3:
        raise InputError("a response plot needs at least three samples", "result")
    taus = res.time_constants
    taus = taus[np.isfinite(taus) & (taus > 0)]
    span = float(t[-1] - t[0])
    if nodes is None:
        limited = list(dict.fromkeys(str(n) for n in res.limits.get("node", [])))
        candidates, _ = default_nodes(res, limited)
    else:
        candidates = check_names(nodes, list(temps.columns), "node", "nodes")
    final = _final_rule(final)
    how = "last sample" if final in (None, "last") else "fitted asymptote" if final == "fit" \
        else "given"
    tau, tau_source = (float(taus[0]), "result") if taus.size else (math.nan, "estimated")
    t_from = min(5.0 * float(taus[1]), 0.5 * span) + t[0] if taus.size >= 2 else \
        (t[0] if taus.size == 1 else t[0] + 0.2 * span)
    initials, finals, fitted_taus = _finals(temps, t, candidates, final, taus, tau, t_from)
    shown = [n for n in candidates if abs(initials[n] - finals[n]) > 0.01 + 1e-9 * abs(finals[n])]
    skipped = [n for n in candidates if n not in shown]
    return ResponseSetup(t, candidates, shown, skipped, initials, finals, tau, tau_source, how,
                         fitted_taus)
