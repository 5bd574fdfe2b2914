"""The fit figure: measured (dots) and fitted (lines) temperatures of a fit, residuals below."""

from __future__ import annotations

import numpy as np

from ..base import suggest
from ..errors import InputError
from .common import Drawn, check_names
from .style import (BOUNDARY_COLOURS, BOUNDARY_STYLES, BOUNDARY_WIDTH, LINE_STYLES, PALETTE,
                    SIZE_TWO, figure_style)
from .timeaxis import UNIT_SECONDS, time_unit_for

__all__ = ["plot_fit"]


def _time_unit(t, time_unit) -> tuple[str, float]:
    span = float(t[-1] - t[0]) if t.size else 0.0
    if time_unit is None:
        return time_unit_for(span)
    if time_unit in UNIT_SECONDS:
        return time_unit, UNIT_SECONDS[time_unit]
    raise InputError(f"unknown time unit {time_unit!r}", "time_unit",
                     suggest(time_unit, UNIT_SECONDS))


def _label(result, column) -> str:
    node = result.targets.get(column, column)
    return column if node == column else f"{column} ({node})"


def _draw_columns(drawn, ax_t, ax_r, result, cols, x, scale) -> None:
    """Measured dots, fitted line and residual dots of each measured column."""
    many = result.time.size > 400
    for i, c in enumerate(cols):
        label = _label(result, c)
        colour = PALETTE[i % len(PALETTE)]
        drawn.lines[f"measured:{c}"] = ax_t.plot(
            x, result.measured[c].to_numpy(), linestyle="none", marker=".",
            markersize=3 if many else 5, alpha=0.55, color=colour,
            label=f"{label}, measured")[0]
        drawn.lines[f"fitted:{c}"] = ax_t.plot(
            result.curve.index.to_numpy() / scale, result.curve[c].to_numpy(), color=colour,
            linestyle=LINE_STYLES[i % len(LINE_STYLES)], lw=1.6, zorder=3,
            label=f"{label}, fitted")[0]
        drawn.lines[f"residual:{c}"] = ax_r.plot(
            x, result.residuals[c].to_numpy(), linestyle="none", marker=".",
            markersize=2.5 if many else 5, color=colour, label=label)[0]


def _draw_inputs(drawn, ax_t, result, x) -> None:
    """The log columns that drove boundaries, as thin grey lines."""
    for j, c in enumerate(result.inputs.columns):
        drawn.lines[f"input:{c}"] = ax_t.plot(
            x, result.inputs[c].to_numpy(), color=BOUNDARY_COLOURS[j % 3],
            linestyle=BOUNDARY_STYLES[j % 3], lw=BOUNDARY_WIDTH,
            label=f"{_label(result, c)}, measured (drives the model)")[0]


def plot_fit(result, *, ax=None, columns=None, time_unit=None, show_inputs=True) -> Drawn:
    """Measured (dots) and fitted (lines) temperatures of a fit, measured - fitted below.

    The fitted line is ``result.curve`` (the model on an even grid, right across gaps of the
    log); the residuals are at the log's times. Never runs a solver.

    Parameters
    ----------
    result : rcsim.fitting.FitResult
    ax : pair of matplotlib Axes, optional
        Upper (temperatures) and lower (residuals); by default a new figure with both.
    columns : list of str, optional
        Measured log columns to draw (default all).
    time_unit : {'s', 'min', 'h', 'd'}, optional
        Unit of the time axis (default from the span of the log).
    show_inputs : bool
        Also draw the log columns that drove boundaries (thin grey lines).

    Returns
    -------
    Drawn
        kind ``"fit"``; ``lines`` keyed ``measured:<col>``, ``fitted:<col>``,
        ``residual:<col>`` and ``input:<col>``; ``axes`` = [upper, lower].
    """
    import matplotlib as mpl

    t = result.time
    unit, scale = _time_unit(t, time_unit)
    cols = check_names(columns, list(result.measured.columns), "measured column", "columns") \
        or list(result.measured.columns)
    with mpl.rc_context(figure_style()):
        if ax is None:
            import matplotlib.pyplot as plt

            fig, (ax_t, ax_r) = plt.subplots(2, 1, sharex=True, figsize=SIZE_TWO,
                                             layout="constrained",
                                             gridspec_kw={"height_ratios": [3, 1]})
        else:
            ax_t, ax_r = ax
            fig = ax_t.figure
        drawn = Drawn(fig, [ax_t, ax_r], "fit", time_unit=unit, time_scale=scale)
        x = t / scale
        _draw_columns(drawn, ax_t, ax_r, result, cols, x, scale)
        if show_inputs:
            _draw_inputs(drawn, ax_t, result, x)
        ax_r.axhline(0.0, color="#999999", lw=0.8)
        since = "" if result.start_time is None else f" from {result.start_time}"
        ax_r.set_xlabel(f"time{since} [{unit}]")
        ax_t.set_ylabel("temperature [°C]")
        ax_r.set_ylabel("measured − fitted [K]")
        ax_t.set_title(f"fit to {result.log_name}: RMSE {result.rmse:.3g} K", loc="left")
        ax_t.legend(loc="best")
        finite = result.residuals[cols].to_numpy()
        finite = finite[np.isfinite(finite)]
        if finite.size:
            lim = float(np.max(np.abs(finite))) * 1.1 or 1.0
            ax_r.set_ylim(-lim, lim)
        drawn.values["rmse"] = float(result.rmse)
        return drawn
