"""The figure of a comparison: the measured record with every candidate's fitted curve overlaid,
and each candidate's residuals below; the held-out span shaded.

Drawn with matplotlib from the fits' own tables; never runs a model. Its colours, line
styles and time-axis unit are those of rcsim's other figures (:mod:`rcsim.plotting.style`,
:mod:`rcsim.plotting.timeaxis`).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from ..plotting.style import LINE_STYLES, PALETTE
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


def _single(fit):
    """A FitResult (the first record of a fit of several logs)."""
    return next(iter(fit.records.values())) if hasattr(fit, "records") else fit


def plot_candidates(fits: dict, *, selected: str | None = None, column: str | None = None,
                    ax=None, time_unit: str | None = None) -> CandidatesFigure:
    """Measured (dots) with each candidate's fitted curve, residuals below.

    Parameters
    ----------
    fits : dict
        Candidate name -> FitResult (of a fit of several logs, the first record is drawn).
    selected : str, optional
        Drawn last and thicker.
    column : str, optional
        The measured column drawn (default the first).
    ax : pair of Axes, optional
        Upper and lower axes to draw into (default a new figure).
    time_unit : 's', 'min', 'h' or 'd', optional
    """
    import matplotlib.pyplot as plt

    if not fits:
        raise InputError("no fit to draw", "fits")
    order = [k for k in fits if k != selected] + ([selected] if selected in fits else [])
    first = _single(fits[order[0]])
    columns = list(first.measured.columns)
    col = columns[0] if column is None else column
    if col not in columns:
        raise InputError(f"no measured column {col!r}", "column", ", ".join(columns))
    t = first.time
    unit, scale = _unit(float(t[-1] - t[0]) if t.size else 0.0, time_unit)
    if ax is None:
        fig, axes = plt.subplots(2, 1, figsize=(7.0, 6.4), sharex=True,
                                 gridspec_kw={"height_ratios": [2.2, 1.0]})
    else:
        axes = list(ax)
        fig = axes[0].figure
    upper, lower = axes
    out = CandidatesFigure(fig, [upper, lower], time_unit=unit)
    meas = first.measured[col]
    out.lines[f"measured:{col}"] = upper.plot(t / scale, meas.to_numpy(), ".", ms=2.5,
                                              color="#6f6f6f", label=f"measured {col}")[0]
    for i, name in enumerate(order):
        fit = _single(fits[name])
        style = dict(color=PALETTE[i % len(PALETTE)], ls=LINE_STYLES[i % len(LINE_STYLES)],
                     lw=2.2 if name == selected else 1.4)
        curve = fit.curve[col]
        label = f"{name} (selected)" if name == selected else name
        out.lines[f"fit:{name}"] = upper.plot(curve.index.to_numpy() / scale, curve.to_numpy(),
                                              label=label, **style)[0]
        res = fit.residuals[col]
        out.lines[f"residual:{name}"] = lower.plot(res.index.to_numpy() / scale,
                                                   res.to_numpy(), **style)[0]
        if fit.holdout_residuals is not None:
            held = fit.holdout_residuals[col]
            out.lines[f"held-out:{name}"] = lower.plot(
                held.index.to_numpy() / scale, held.to_numpy(), alpha=0.55, **style)[0]
    span = getattr(first, "holdout", None)
    if span is not None:
        for a in (upper, lower):
            out.spans.append(a.axvspan(span.start / scale, span.end / scale, color="#e2e2e2",
                                       alpha=0.6, lw=0, label="held out" if a is upper else None))
    lower.axhline(0.0, color="#4a4a4a", lw=0.8)
    upper.set_ylabel(f"{col} [degC]")
    lower.set_ylabel("measured - model [K]")
    lower.set_xlabel(f"time [{unit}]")
    upper.legend(loc="best", fontsize=8)
    title = "candidates compared" if len(order) > 1 else order[0]
    upper.set_title(title)
    if np.isfinite(t).all():
        lower.set_xlim(t[0] / scale, t[-1] / scale)
    return out
