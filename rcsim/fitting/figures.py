"""The figure of a comparison: the measured record with every candidate's fitted curve overlaid,
and each candidate's residuals below; the held-out span shaded. Candidates fitted to several
logs at once get one such pair of panels per log, one under the other.

Drawn with matplotlib from the fits' own tables; never runs a model. Its colours, line
styles and time-axis unit are those of rcsim's other figures (:mod:`rcsim.plotting.style`,
:mod:`rcsim.plotting.timeaxis`).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from ..plotting.style import LINE_STYLES, PALETTE, styled
from ..plotting.timeaxis import UNIT_SECONDS, time_unit_for

__all__ = ["plot_candidates", "CandidatesFigure"]


@dataclass
class CandidatesFigure:
    """What was drawn: ``figure``, ``axes`` [upper, lower], ``lines`` keyed
    ``measured:<column>``, ``fit:<candidate>``, ``residual:<candidate>``,
    ``held-out:<candidate>``; ``spans`` (the held-out span, if shaded); ``time_unit``."""

    figure: object
    axes: list
    lines: dict = field(default_factory=dict)
    spans: list = field(default_factory=list)
    time_unit: str = "h"


def _unit(span: float, unit: str | None) -> tuple[str, float]:
    """The axis unit: the one asked for, else the one rcsim's time axes take for the span."""
    if unit is None:
        return time_unit_for(span)
    if unit not in UNIT_SECONDS:
        raise InputError(f"time_unit must be one of {', '.join(UNIT_SECONDS)}, got {unit!r}",
                         "time_unit")
    return unit, UNIT_SECONDS[unit]


def _records(fit) -> dict:
    """{record: FitResult} of a fit of several logs, {None: fit} of a fit of one."""
    return dict(fit.records) if hasattr(fit, "records") else {None: fit}


@styled()
def plot_candidates(fits: dict, *, selected: str | None = None, column: str | None = None,
                    ax=None, time_unit: str | None = None) -> CandidatesFigure:
    """Measured (dots) with each candidate's fitted curve, residuals below; with several logs,
    one such pair of panels per log (the log's name above it), the candidates in the same
    colours in every pair.

    Parameters
    ----------
    fits : dict
        Candidate name -> FitResult, or JointFit (a fit of several logs: every log is drawn).
    selected : str, optional
        Drawn last and thicker.
    column : str, optional
        The measured column drawn (default the first).
    ax : sequence of Axes, optional
        Upper and lower axes to draw into, a pair per log (default a new figure).
    time_unit : 's', 'min', 'h' or 'd', optional
        Default: from the span of the longest log.

    Returns
    -------
    CandidatesFigure
        With one log, ``lines`` keyed ``measured:<column>``, ``fit:<candidate>``,
        ``residual:<candidate>``, ``held-out:<candidate>`` and ``axes`` [upper, lower]; with
        several, each key ends in ``@<log>`` and ``axes`` holds a pair per log, in order.
    """
    import matplotlib.pyplot as plt

    if not fits:
        raise InputError("no fit to draw", "fits")
    order = [k for k in fits if k != selected] + ([selected] if selected in fits else [])
    records = list(_records(fits[order[0]]))
    for name in order:
        if list(_records(fits[name])) != records:
            raise InputError(f"candidate {name!r} was fitted to other logs than "
                             f"{order[0]!r}", "fits")
    first = _records(fits[order[0]])
    columns = list(first[records[0]].measured.columns)
    col = columns[0] if column is None else column
    for rec in records:
        if col not in first[rec].measured.columns:
            raise InputError(f"no measured column {col!r}" + (f" in log {rec!r}" if rec else ""),
                             "column", ", ".join(map(str, first[rec].measured.columns)))
    spans = [float(f.time[-1] - f.time[0]) if f.time.size else 0.0 for f in first.values()]
    unit, scale = _unit(max(spans), time_unit)
    n = len(records)
    if ax is None:
        fig, axes = plt.subplots(2 * n, 1, figsize=(7.0, 6.4 if n == 1 else 3.7 * n),
                                 gridspec_kw={"height_ratios": [2.2, 1.0] * n},
                                 layout="constrained" if n > 1 else None)
        axes = list(np.atleast_1d(axes))
        for i in range(n):
            axes[2 * i].sharex(axes[2 * i + 1])
            axes[2 * i].tick_params(labelbottom=False)
    else:
        axes = list(ax)
        if len(axes) != 2 * n:
            raise InputError(f"{len(axes)} axes given for {n} log(s)", "ax",
                             "give an upper and a lower axes per log")
        fig = axes[0].figure
    out = CandidatesFigure(fig, axes, time_unit=unit)
    for i, rec in enumerate(records):
        tag = "" if n == 1 else f"@{rec}"
        upper, lower = axes[2 * i], axes[2 * i + 1]
        _draw_log(out, upper, lower, {name: _records(fits[name])[rec] for name in order},
                  selected, col, scale, tag)
        lower.set_xlabel(f"time [{unit}]")
        upper.set_title(str(rec) if n > 1 else (
            "candidates compared" if len(order) > 1 else order[0]))
    axes[0].legend(loc="best", fontsize=8)
    if n > 1:
        fig.suptitle("candidates compared, one pair of panels per log" if len(order) > 1
                     else f"{order[0]}, one pair of panels per log")
    return out


def _draw_log(out, upper, lower, fits: dict, selected, col, scale, tag) -> None:
    """One log: the measured column, each candidate's curve, residuals below, the held-out
    span shaded."""
    first = next(iter(fits.values()))
    t = first.time
    meas = first.measured[col]
    out.lines[f"measured:{col}{tag}"] = upper.plot(t / scale, meas.to_numpy(), ".", ms=2.5,
                                                   color="#6f6f6f", label=f"measured {col}")[0]
    for i, (name, fit) in enumerate(fits.items()):
        style = dict(color=PALETTE[i % len(PALETTE)], ls=LINE_STYLES[i % len(LINE_STYLES)],
                     lw=2.2 if name == selected else 1.4)
        curve = fit.curve[col]
        label = f"{name} (selected)" if name == selected else name
        out.lines[f"fit:{name}{tag}"] = upper.plot(curve.index.to_numpy() / scale,
                                                   curve.to_numpy(), label=label, **style)[0]
        res = fit.residuals[col]
        out.lines[f"residual:{name}{tag}"] = lower.plot(res.index.to_numpy() / scale,
                                                        res.to_numpy(), **style)[0]
        if fit.holdout_residuals is not None:
            held = fit.holdout_residuals[col]
            out.lines[f"held-out:{name}{tag}"] = lower.plot(
                held.index.to_numpy() / scale, held.to_numpy(), alpha=0.55, **style)[0]
    span = getattr(first, "holdout", None)
    if span is not None:
        for a in (upper, lower):
            out.spans.append(a.axvspan(span.start / scale, span.end / scale, color="#e2e2e2",
                                       alpha=0.6, lw=0, label="held out" if a is upper else None))
    lower.axhline(0.0, color="#4a4a4a", lw=0.8)
    upper.set_ylabel(f"{col} [degC]")
    lower.set_ylabel("measured - model [K]")
    if t.size and np.isfinite(t).all():
        lower.set_xlim(t[0] / scale, t[-1] / scale)
