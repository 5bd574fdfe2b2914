"""Figure of a fit: measured and fitted temperatures, with the residuals below.

matplotlib only; draws what a :class:`rcsim.fitting.FitResult` holds and never runs a solver.
To be folded into :mod:`rcsim.plotting`.
"""

from __future__ import annotations

import numpy as np

__all__ = ["plot_fit"]

_UNITS = {"s": 1.0, "min": 60.0, "h": 3600.0, "d": 86400.0}


def _time_unit(span: float) -> str:
    if span <= 2 * 3600:
        return "min"
    if span <= 4 * 86400:
        return "h"
    return "d"


def plot_fit(result, *, ax=None, columns=None, time_unit=None, show_inputs=True):
    """Measured (markers) and fitted (lines) temperatures; measured - fitted below.

    The fitted line is ``result.curve`` (the model on an even grid, so it is right across gaps
    of the log); the residuals are at the log's times.

    Parameters
    ----------
    result : rcsim.fitting.FitResult
    ax : sequence of two matplotlib Axes, optional
        Upper (temperatures) and lower (residuals) axes; by default a new figure with both,
        sharing the time axis.
    columns : list of str, optional
        Measured log columns to draw (default all).
    time_unit : {'s', 'min', 'h', 'd'}, optional
        Unit of the time axis (default from the span of the log).
    show_inputs : bool
        Also draw the log columns that drove boundaries (thin dashed lines).

    Returns
    -------
    dict
        ``figure``, ``axes`` (upper, lower), ``measured``, ``fitted``, ``residuals`` and
        ``inputs`` (dicts of column -> Line2D).
    """
    import matplotlib.pyplot as plt

    if ax is None:
        fig, (ax_t, ax_r) = plt.subplots(2, 1, sharex=True, figsize=(9, 6),
                                         gridspec_kw={"height_ratios": [3, 1]})
    else:
        ax_t, ax_r = ax
        fig = ax_t.figure
    t = result.time
    unit = time_unit or _time_unit(float(t[-1] - t[0]) if t.size else 0.0)
    if unit not in _UNITS:
        raise ValueError(f"time_unit must be one of {', '.join(_UNITS)}, got {unit!r}")
    x = t / _UNITS[unit]
    cols = list(result.measured.columns) if columns is None else list(columns)
    for c in cols:
        if c not in result.measured.columns:
            raise ValueError(f"{c!r} is not a measured column; measured: "
                             f"{', '.join(result.measured.columns)}")
    drawn = {"figure": fig, "axes": (ax_t, ax_r), "measured": {}, "fitted": {}, "residuals": {},
             "inputs": {}}
    many = t.size > 400
    for c in cols:
        node = result.targets.get(c, c)
        label = c if node == c else f"{c} ({node})"
        meas = result.measured[c].to_numpy()
        (m_line,) = ax_t.plot(x, meas, linestyle="none", marker=".",
                              markersize=3 if many else 5, alpha=0.5,
                              label=f"{label}, measured")
        curve = result.curve
        (f_line,) = ax_t.plot(curve.index.to_numpy() / _UNITS[unit], curve[c].to_numpy(),
                              color=m_line.get_color(),
                              linewidth=1.0, zorder=3, label=f"{label}, fitted")
        (r_line,) = ax_r.plot(x, result.residuals[c].to_numpy(), linestyle="none", marker=".",
                              markersize=2.5 if many else 5, color=m_line.get_color(),
                              label=label)
        drawn["measured"][c] = m_line
        drawn["fitted"][c] = f_line
        drawn["residuals"][c] = r_line
    if show_inputs:
        for c in result.inputs.columns:
            node = result.targets.get(c, c)
            label = c if node == c else f"{c} ({node})"
            (i_line,) = ax_t.plot(x, result.inputs[c].to_numpy(), color="0.45", linestyle="--",
                                  linewidth=1.0, label=f"{label}, measured (drives the model)")
            drawn["inputs"][c] = i_line
    ax_r.axhline(0.0, color="0.3", linewidth=0.8)
    since = "" if result.start_time is None else f" since {result.start_time}"
    ax_r.set_xlabel(f"time{since} [{unit}]")
    ax_t.set_ylabel("temperature [degC]")
    ax_r.set_ylabel("measured - fitted [K]")
    ax_t.set_title(f"fit to {result.log_name}: RMSE {result.rmse:.3g} K")
    ax_t.legend(loc="best", fontsize="small")
    ax_t.grid(True, alpha=0.3)
    ax_r.grid(True, alpha=0.3)
    finite = result.residuals.to_numpy()
    finite = finite[np.isfinite(finite)]
    if finite.size:
        lim = float(np.max(np.abs(finite))) * 1.1 or 1.0
        ax_r.set_ylim(-lim, lim)
    return drawn
