"""Figures from results: histories, warm-up and cool-down, heat flows and energy.

Everything here reads a :class:`rcsim.Result` (in memory or loaded from HDF5) and draws it with
matplotlib; nothing here runs a solver. Each ``plot_*`` function takes ``ax=None`` (draw into a new
figure) or an existing axes, and returns a :class:`Drawn` holding the artists it made, so a caller
or a test can check what is on the figure against the result's data.

Kinds
-----
``history``
    Node temperatures against time, boundaries in grey and thinner, limit bands shaded, the first
    excursion from a band (the hold time) marked and labelled.
``response``
    The normalised response θ = (T − T_final)/(T_initial − T_final) on a logarithmic axis, the line
    θ = exp(−t/τ₁) implied by the dominant time constant τ₁, the 63.2 % point of each curve, and the
    network's time constants listed.
``flows``
    Link heat flows over time, and below them the cumulative energy in and out of the network
    against the change of stored energy.

Time axes are in s, min, h or d chosen from the span (:func:`time_unit_for`), or dates when the
result has a start time. Every axis label carries its unit in brackets.

Look
----
Colours are our own set of six (:data:`PALETTE`), checked to stay apart under simulated protan,
deutan and tritan vision; each series also gets its own line style (:data:`LINE_STYLES`), so curves
stay apart in grey-scale print. Boundaries are grey; limit bands are pale tints of their node's
colour.
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from .errors import InputError
from .units import format_duration

__all__ = ["Drawn", "plot_result", "plot_history", "plot_response", "plot_flows", "plot_energy",
           "standard_figures", "warmup_nodes", "save_figure", "time_unit_for", "PALETTE", "LINE_STYLES",
           "KINDS", "FORMATS"]

KINDS = ("history", "response", "flows")
FORMATS = ("png", "svg", "pdf")

#: Line colours, in the order series take them: ink blue, amber, wine, sea green, umber, sky.
#: Dark and light alternate so that neighbours in the order also differ in grey-scale.
PALETTE = ("#1d3f8f", "#e3871a", "#8e1f4f", "#3aa394", "#6b4e16", "#8fbde6")
#: Line styles, in the same order as the colours (solid, dashed, dotted, dash-dot, ...).
LINE_STYLES = ("-", (0, (6, 2.2)), (0, (1.2, 1.8)), (0, (7, 2, 1.5, 2)), (0, (3, 1.5, 1, 1.5, 1, 1.5)),
               (0, (10, 3)))
#: Markers added from the seventh series on, when colours and styles start again.
MARKERS = ("o", "s", "^", "D", "v", "P")
BOUNDARY_COLOURS = ("#6f6f6f", "#9c9c9c", "#4a4a4a")
BOUNDARY_STYLES = ((0, (5, 1.5, 1, 1.5)), (0, (2, 1.5)), (0, (8, 2)))

_NODE_WIDTH = 1.9
_BOUNDARY_WIDTH = 1.1
_SIZE_ONE = (7.0, 4.3)   # inches: a print column at 1:1, a screen at 150 dpi
_SIZE_TWO = (7.0, 6.4)
_DPI = 150
_MAX_SERIES = 8

STYLE = {
    "font.size": 9.5,
    "axes.titlesize": 10.5,
    "axes.labelsize": 10,
    "xtick.labelsize": 9,
    "ytick.labelsize": 9,
    "legend.fontsize": 8.5,
    "legend.framealpha": 0.92,
    "legend.edgecolor": "#bbbbbb",
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.grid": True,
    "grid.color": "#e2e2e2",
    "grid.linewidth": 0.6,
    "axes.axisbelow": True,
    "axes.edgecolor": "#444444",
    "savefig.dpi": _DPI,
    "pdf.fonttype": 42,
    "ps.fonttype": 42,
    "svg.hashsalt": "rcsim",
}


# -- what a plot function returns --------------------------------------------------------------
@dataclass
class Drawn:
    """What a plot function drew.

    Attributes
    ----------
    figure, axes : the matplotlib figure and its axes (``axes[0]`` is the main one; ``ax`` too)
    kind : ``"history"``, ``"response"``, ``"flows"`` or ``"energy"``
    lines : {name: Line2D} of the data curves (node, boundary, link or energy term names)
    bands : {node: Rectangle} limit bands (y in degC, x across the axes)
    limit_lines : {"node:min" | "node:max": Line2D}
    markers : {name: Line2D} hold-time markers (history, by node), 63.2 % points (response, by
        node), ``"tau"`` for the dominant time-constant line
    time_unit : ``"s"``, ``"min"``, ``"h"``, ``"d"`` or ``"date"``
    time_scale : seconds per unit of the time axis (1.0 for dates)
    values : numbers the figure states (hold times, T_final per node, τ, energy scale, ...)
    notes : sentences written on the figure (skipped nodes, estimated τ, ...)
    """

    figure: object
    axes: list
    kind: str
    lines: dict = field(default_factory=dict)
    bands: dict = field(default_factory=dict)
    limit_lines: dict = field(default_factory=dict)
    markers: dict = field(default_factory=dict)
    time_unit: str = "s"
    time_scale: float = 1.0
    values: dict = field(default_factory=dict)
    notes: list = field(default_factory=list)

    @property
    def ax(self):
        return self.axes[0]


# -- time axis ---------------------------------------------------------------------------------
def time_unit_for(span: float) -> tuple[str, float]:
    """The time unit for an axis spanning ``span`` seconds, and its length in seconds.

    Up to 3 min in s, up to 3 h in min, up to 4 d in h, beyond in d.

    >>> time_unit_for(2 * 3600), time_unit_for(72 * 3600), time_unit_for(30 * 86400)
    (('min', 60.0), ('h', 3600.0), ('d', 86400.0))
    """
    if span <= 180.0:
        return "s", 1.0
    if span <= 3 * 3600.0:
        return "min", 60.0
    if span <= 4 * 86400.0:
        return "h", 3600.0
    return "d", 86400.0


class _TimeAxis:
    """Maps result times [s] to axis values and labels the axis."""

    # tick spacings that land on round numbers of each unit (15 min, 6 h, a week, ...)
    _STEPS = {"s": (1, 2, 5, 10, 15, 30, 60), "min": (1, 2, 5, 10, 15, 30, 60),
              "h": (1, 2, 3, 6, 12, 24, 48, 72), "d": (1, 2, 7, 14, 28, 56, 91, 182, 365)}

    def __init__(self, t: np.ndarray, start=None, dates: bool = True):
        self.span = float(t[-1] - t[0]) if t.size else 0.0
        self.start = _naive(start) if (dates and start is not None) else None
        if self.start is not None:
            self.unit, self.scale = "date", 1.0
        else:
            self.unit, self.scale = time_unit_for(self.span)

    def x(self, seconds):
        """Axis values of times [s]: numbers in the unit, or datetime64 from the start."""
        seconds = np.asarray(seconds, dtype=float)
        if self.start is None:
            return seconds / self.scale
        stamps = (self.start + pd.to_timedelta(np.atleast_1d(seconds), unit="s")).to_numpy()
        return stamps if seconds.ndim else stamps[0]

    @property
    def label(self) -> str:
        if self.start is not None:
            return f"date and time [from {self.start:%Y-%m-%d %H:%M}]"
        return f"time [{self.unit}]"

    def format(self, ax) -> None:
        from matplotlib import dates as mdates
        from matplotlib.ticker import MaxNLocator, MultipleLocator

        ax.set_xlabel(self.label)
        if self.start is not None:
            locator = mdates.AutoDateLocator(minticks=4, maxticks=9)
            ax.xaxis.set_major_locator(locator)
            ax.xaxis.set_major_formatter(mdates.ConciseDateFormatter(locator))
            return
        span = self.span / self.scale
        step = next((s for s in self._STEPS[self.unit] if span / s <= 8.5), None)
        ax.xaxis.set_major_locator(MultipleLocator(step) if step else MaxNLocator(nbins=8))


def _naive(start):
    ts = pd.Timestamp(start)
    return ts.tz_localize(None) if ts.tzinfo is not None else ts


# -- helpers -----------------------------------------------------------------------------------
def _style(i: int) -> dict:
    """Colour, line style and (from the seventh series) marker of series ``i``."""
    out = {"color": PALETTE[i % len(PALETTE)], "linestyle": LINE_STYLES[i % len(LINE_STYLES)]}
    if i >= len(PALETTE):
        out.update(marker=MARKERS[(i - len(PALETTE)) % len(MARKERS)], markevery=0.1,
                   markersize=4, markerfacecolor="white")
    return out


def _new_figure(size, rows: int = 1):
    """A figure with ``rows`` axes sharing x; pyplot-managed so it shows in notebooks."""
    import matplotlib.pyplot as plt

    fig, axes = plt.subplots(rows, 1, figsize=size, sharex=True, squeeze=False,
                             layout="constrained")
    return fig, list(axes[:, 0])


def _begin(res, ax, kind: str, dates: bool):
    """The axes to draw on (a new figure when ``ax`` is None), the time axis and an empty Drawn.

    Returns ``(drawn, ax, time_axis, x, own)``; ``x`` are the result's times on the axis and
    ``own`` says whether the figure is ours (then the legend goes below the axes).
    """
    own = ax is None
    if own:
        fig, axes = _new_figure(_SIZE_ONE)
        ax = axes[0]
    else:
        fig, axes = ax.figure, [ax]
    ta = _TimeAxis(res.time, res.start_time, dates)
    drawn = Drawn(fig, axes, kind, time_unit=ta.unit, time_scale=ta.scale)
    return drawn, ax, ta, ta.x(res.time), own


def _end_time_axis(ax, ta, x) -> None:
    if len(x):
        ax.set_xlim(x[0], x[-1])
    ta.format(ax)


def _suggest(name, valid) -> str:
    from .materials import suggest

    return suggest(name, valid)


def _check_names(requested, valid, what: str, where: str) -> list[str]:
    if requested is None:
        return None
    if isinstance(requested, str):
        requested = [requested]
    out = []
    for r in requested:
        if r not in valid:
            raise InputError(f"unknown {what} {r!r}", where, _suggest(r, valid))
        if r not in out:
            out.append(r)
    if not out:
        raise InputError(f"no {what} given", where)
    return out


def _internal(name: str, links) -> bool:
    """Whether ``name`` is an internal node of a massive layer (``<link>.<i>``)."""
    base, _, index = name.rpartition(".")
    return bool(base) and index.isdigit() and base in links


def _title(res) -> str:
    return str(res.meta.get("title") or "") or "rcsim result"


def _note(ax, notes, loc="lower left") -> None:
    if not notes:
        return
    y, va = (0.015, "bottom") if loc.startswith("lower") else (0.985, "top")
    ax.text(0.01 if loc.endswith("left") else 0.99, y, "\n".join(notes), transform=ax.transAxes,
            fontsize=7.5, color="#333333", va=va, ha="left" if loc.endswith("left") else "right",
            bbox={"boxstyle": "round,pad=0.3", "fc": "white", "ec": "#cccccc", "alpha": 0.9})


def _fmt_clock(seconds: float) -> str:
    """A span as a person says it: "47 min", "8 h 47 min", "5 d 3 h".

    >>> _fmt_clock(31592.8), _fmt_clock(2820.0), _fmt_clock(445000.0), _fmt_clock(42.0)
    ('8 h 47 min', '47 min', '5 d 4 h', '42 s')
    """
    if seconds < 120:
        return f"{seconds:.3g} s"
    minutes = int(round(seconds / 60.0))
    if minutes < 60:
        return f"{minutes} min"
    if seconds < 4 * 86400:
        h, m = divmod(minutes, 60)
        return f"{h} h {m} min" if m else f"{h} h"
    hours = int(round(seconds / 3600.0))
    d, h = divmod(hours, 24)
    return f"{d} d {h} h" if h else f"{d} d"


def _fmt_temp(value: float) -> str:
    return f"{value:.3g} °C" if abs(value) < 100 else f"{value:.0f} °C"


def _default_nodes(res, limited) -> tuple[list[str], list[str]]:
    """Nodes a figure shows when none are named, and a note on those left out.

    Limited nodes first, then the others in result order, at most eight; internal nodes of massive
    layers (``<link>.<i>``) only when there is nothing else to show.
    """
    cols = list(res.temperatures.columns)
    links = set(res.heat_flows.columns)
    inner = [c for c in cols if _internal(c, links)]
    ordered = [c for c in cols if c in limited] + \
        [c for c in cols if c not in limited and c not in inner]
    if not ordered:
        ordered, inner = inner, []
    notes = []
    if len(ordered) > _MAX_SERIES:
        notes.append(f"showing {_MAX_SERIES} of {len(ordered)} nodes")
    if inner:
        notes.append(f"{len(inner)} internal layer node(s) not shown")
    return ordered[:_MAX_SERIES], notes


def _legend(ax, own: bool, columns: int = 3) -> None:
    """Below the axes on a figure of our own (it hides no data there); inside on a given axes."""
    handles, labels = ax.get_legend_handles_labels()
    if not handles:
        return
    if own:
        ax.figure.legend(handles, labels, loc="outside lower center",
                         ncols=min(columns, len(handles)))
    else:
        ax.legend(handles, labels, loc="best")


# -- history -----------------------------------------------------------------------------------
def plot_history(res, nodes=None, *, boundaries=True, limits=True, ax=None, title=None,
                 dates=True) -> Drawn:
    """Node temperatures against time, with boundaries, limit bands and hold times.

    Parameters
    ----------
    res : Result
    nodes : list of str, optional
        Nodes (or boundaries) to draw; default: nodes with limits first, then the others, at most
        eight (internal nodes of massive layers last).
    boundaries : bool or list of str
        Draw every boundary (True), none (False) or the named ones.
    limits : bool
        Shade limit bands and mark the first excursion (hold time) of each drawn node.
    ax : matplotlib Axes, optional
    title : str, optional
    dates : bool
        Use dates on the time axis when the result has a start time.
    """
    temps = res.temperatures
    bnd = res.boundary_temperatures
    lim = res.limits if limits and len(res.limits) else pd.DataFrame(columns=["node"])
    limited = list(dict.fromkeys(str(n) for n in lim["node"]))
    notes = []
    if nodes is None:
        node_list, notes = _default_nodes(res, limited)
        bnd_list = list(bnd.columns) if boundaries is True else \
            (_check_names(boundaries, list(bnd.columns), "boundary", "boundaries")
             if boundaries else [])
    else:
        valid = list(temps.columns) + list(bnd.columns)
        chosen = _check_names(nodes, valid, "node", "nodes")
        node_list = [n for n in chosen if n in temps.columns]
        extra = [n for n in chosen if n in bnd.columns]
        if boundaries is True:
            bnd_list = extra or list(bnd.columns)
        elif boundaries:
            bnd_list = list(dict.fromkeys(
                extra + _check_names(boundaries, list(bnd.columns), "boundary", "boundaries")))
        else:
            bnd_list = extra
    bnd_list = bnd_list[:len(BOUNDARY_COLOURS) * 2]

    import matplotlib as mpl
    from matplotlib.patches import Rectangle

    with mpl.rc_context(STYLE):
        drawn, ax, ta, x, own = _begin(res, ax, "history", dates)
        t = res.time
        colour = {}
        for i, name in enumerate(node_list):
            st = _style(i)
            colour[name] = st["color"]
            (line,) = ax.plot(x, temps[name].to_numpy(), lw=_NODE_WIDTH, label=name, zorder=3, **st)
            drawn.lines[name] = line
        for j, name in enumerate(bnd_list):
            (line,) = ax.plot(x, bnd[name].to_numpy(), lw=_BOUNDARY_WIDTH,
                              color=BOUNDARY_COLOURS[j % len(BOUNDARY_COLOURS)],
                              linestyle=BOUNDARY_STYLES[j % len(BOUNDARY_STYLES)],
                              label=f"{name} (boundary)", zorder=2)
            drawn.lines[name] = line

        # y range from what is drawn and the limits that apply to it
        values = [temps[n].to_numpy() for n in node_list] + [bnd[n].to_numpy() for n in bnd_list]
        lim_rows = lim[lim["node"].isin(node_list)] if len(lim) else lim
        finite = [v[np.isfinite(v)] for v in values if v.size]
        lo = min([v.min() for v in finite if v.size] + list(lim_rows.get("limit [degC]", [])) or [0.0])
        hi = max([v.max() for v in finite if v.size] + list(lim_rows.get("limit [degC]", [])) or [1.0])
        pad = 0.06 * (hi - lo) if hi > lo else 1.0
        ylo, yhi = lo - pad, hi + pad
        ax.set_ylim(ylo, yhi)

        # limit bands, lines and the first excursion of each limited node
        for node in dict.fromkeys(lim_rows["node"] if len(lim_rows) else []):
            rows = lim_rows[lim_rows["node"] == node]
            vmin = rows.loc[rows["kind"] == "min", "limit [degC]"]
            vmax = rows.loc[rows["kind"] == "max", "limit [degC]"]
            b_lo = float(vmin.iloc[0]) if len(vmin) else ylo
            b_hi = float(vmax.iloc[0]) if len(vmax) else yhi
            text = (f"{node} band {b_lo:g}–{b_hi:g} °C" if len(vmin) and len(vmax) else
                    f"{node} ≥ {b_lo:g} °C" if len(vmin) else f"{node} ≤ {b_hi:g} °C")
            rect = Rectangle((0.0, b_lo), 1.0, b_hi - b_lo, transform=ax.get_yaxis_transform(),
                             facecolor=colour[node], alpha=0.11, edgecolor="none", zorder=0,
                             label=text)
            ax.add_patch(rect)
            drawn.bands[node] = rect
            for kind, v in (("min", vmin), ("max", vmax)):
                if len(v):
                    drawn.limit_lines[f"{node}:{kind}"] = ax.axhline(
                        float(v.iloc[0]), color=colour[node], lw=0.9, alpha=0.75, zorder=1)
            holds = rows[np.isfinite(rows["hold_time [s]"].to_numpy(dtype=float))]
            if not len(holds):
                drawn.values[f"hold:{node}"] = math.nan
                continue
            first = holds.iloc[int(np.argmin(holds["hold_time [s]"].to_numpy(dtype=float)))]
            th, tl = float(first["hold_time [s]"]), float(first["limit [degC]"])
            drawn.values[f"hold:{node}"] = th
            xh = ta.x(th)
            ax.axvline(xh, color=colour[node], lw=0.9, linestyle=(0, (1, 1.5)), zorder=1)
            (mark,) = ax.plot([xh], [tl], marker="D", markersize=7, color=colour[node],
                              markeredgecolor="black", markeredgewidth=0.8, linestyle="none",
                              zorder=5, clip_on=False)
            drawn.markers[node] = mark
            word = "below" if first["kind"] == "min" else "above"
            label = (f"{node} {word} {tl:g} °C from the start" if th <= t[0] else
                     f"{node} hold time {_fmt_clock(th - t[0])}\n(first {word} {tl:g} °C)")
            up = first["kind"] == "max"
            ax.annotate(label, (xh, tl), xytext=(10, 14 if up else -14), textcoords="offset points",
                        fontsize=8.5, va="bottom" if up else "top", ha="left", zorder=6,
                        bbox={"boxstyle": "round,pad=0.25", "fc": "white", "ec": colour[node],
                              "alpha": 0.95},
                        arrowprops={"arrowstyle": "-", "color": colour[node], "lw": 0.8})

        _end_time_axis(ax, ta, x)
        ax.set_ylabel("temperature [°C]")
        ax.set_title(title if title is not None else _title(res), loc="left")
        _legend(ax, own, 4)
        _note(ax, notes, "lower right")
        drawn.notes = notes
        return drawn


# -- warm-up and cool-down ----------------------------------------------------------------------
def _fit_asymptote(t, y, tau, t_from):
    """Least-squares T_final of ``y ≈ T_final + A exp(-t/tau)`` over ``t >= t_from``."""
    keep = t >= t_from
    if keep.sum() < 3:
        keep = np.ones_like(t, dtype=bool)
    basis = np.column_stack([np.ones(keep.sum()), np.exp(-(t[keep] - t[0]) / tau)])
    coef, *_ = np.linalg.lstsq(basis, y[keep], rcond=None)
    resid = y[keep] - basis @ coef
    return float(coef[0]), float(resid @ resid)


def _fit_tau_and_asymptote(t, y, t_from):
    """Dominant τ and T_final of ``y ≈ T_final + A exp(-t/τ)`` (one-dimensional search on log τ)."""
    from scipy.optimize import minimize_scalar

    span = max(float(t[-1] - t[0]), 1e-9)
    out = minimize_scalar(lambda lt: _fit_asymptote(t, y, math.exp(lt), t_from)[1],
                          bounds=(math.log(span / 1000.0), math.log(100.0 * span)),
                          method="bounded", options={"xatol": 1e-4})
    tau = math.exp(out.x)
    return tau, _fit_asymptote(t, y, tau, t_from)[0]


def _slope_tau(t, theta):
    """τ from the slope of ln θ where 0.05 ≤ θ ≤ 0.6 (past the fast modes, above the noise)."""
    for lo, hi in ((0.05, 0.6), (1e-3, 0.9)):
        keep = np.isfinite(theta) & (theta >= lo) & (theta <= hi)
        if keep.sum() >= 3 and np.ptp(t[keep]) > 0:
            slope = np.polyfit(t[keep], np.log(theta[keep]), 1)[0]
            if slope < 0:
                return -1.0 / slope
    return math.nan


def _crossing(t, theta, level):
    """First time θ falls to ``level``, linear between samples (NaN if it never does)."""
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
    from .errors import UnitError
    from .units import to_si

    try:
        return to_si(value, "temperature", "final")
    except UnitError as err:
        raise InputError(f"final must be 'last', 'fit' or a temperature; {err.message}", "final",
                         "write e.g. '25 degC'") from None


def _response_setup(res, nodes, final):
    """Nodes, T_initial, T_final, τ and how they were found, for a response plot."""
    temps = res.temperatures
    t = res.time
    if t.size < 3:
        raise InputError("a response plot needs at least three samples", "result")
    taus = res.time_constants
    taus = taus[np.isfinite(taus) & (taus > 0)]
    span = float(t[-1] - t[0])
    if nodes is None:
        limited = list(dict.fromkeys(str(n) for n in res.limits.get("node", [])))
        candidates, _ = _default_nodes(res, limited)
    else:
        candidates = _check_names(nodes, list(temps.columns), "node", "nodes")
    if isinstance(final, dict):
        final = {k: _temperature(v) for k, v in final.items()}
    elif final not in (None, "last", "fit"):
        final = _temperature(final)
    how = "last sample" if final in (None, "last") else "fitted asymptote" if final == "fit" \
        else "given"
    tau, tau_source = (float(taus[0]), "result") if taus.size else (math.nan, "estimated")
    t_from = min(5.0 * float(taus[1]), 0.5 * span) + t[0] if taus.size >= 2 else \
        (t[0] if taus.size == 1 else t[0] + 0.2 * span)
    finals, initials = {}, {}
    fitted_taus = []
    for n in candidates:
        y = temps[n].to_numpy()
        initials[n] = float(y[0])
        if final in (None, "last"):
            finals[n] = float(y[-1])
        elif final == "fit":
            if taus.size:
                finals[n] = _fit_asymptote(t, y, tau, t_from)[0]
            else:
                tau_n, finals[n] = _fit_tau_and_asymptote(t, y, t_from)
                fitted_taus.append(tau_n)
        elif isinstance(final, dict):
            if n not in final:
                raise InputError(f"no final temperature given for node {n!r}", "final")
            finals[n] = float(final[n])
        else:
            finals[n] = float(final)
    shown = [n for n in candidates if abs(initials[n] - finals[n]) > 0.01 + 1e-9 * abs(finals[n])]
    skipped = [n for n in candidates if n not in shown]
    return t, candidates, shown, skipped, initials, finals, tau, tau_source, how, fitted_taus


def plot_response(res, nodes=None, *, final=None, ax=None, title=None) -> Drawn:
    """Warm-up or cool-down: θ = (T − T_final)/(T_initial − T_final) on a logarithmic axis.

    Parameters
    ----------
    res : Result
    nodes : list of str, optional
        Nodes to draw (default: as for the history). Nodes whose initial and final temperatures
        differ by 0.01 K or less are skipped, and the figure says so.
    final : None, "last", "fit", a temperature, or {node: temperature}
        T_final (degC, or a string with units such as "77 degF"): the last sample of the run (default), a least-squares asymptote
        T_final + A·exp(−t/τ₁) over the part of the run past the faster modes (``"fit"``, for runs
        that end before they settle), one temperature for every node, or one per node.
    ax : matplotlib Axes, optional
    title : str, optional

    The dominant time constant τ₁ is the longest of ``res.time_constants``; when the result has
    none (a nonlinear network), it is estimated from the slope of ln θ and the figure says so.
    The straight line drawn is θ = exp(−(t − t₀)/τ₁), which passes 1/e (the 63.2 % point) at τ₁.
    """
    (t, candidates, shown, skipped, initials, finals, tau, tau_source, how,
     fitted_taus) = _response_setup(res, nodes, final)
    if not shown:
        raise InputError("no chosen node changes between its initial and final temperature, so "
                         "there is no warm-up or cool-down to normalise", "nodes",
                         "choose other nodes or give the final temperature")
    temps = res.temperatures
    notes = []
    if skipped:
        notes.append("skipped (T_initial ≈ T_final): " + ", ".join(skipped))
    theta = {n: (temps[n].to_numpy() - finals[n]) / (initials[n] - finals[n]) for n in shown}
    tt = t - t[0]
    if tau_source == "estimated":
        if fitted_taus:
            tau = float(np.median(fitted_taus))
            notes.append(f"τ₁ = {format_duration(tau)} estimated by fitting T_final + A·exp(−t/τ); "
                         "the result stores no time constants")
        else:
            ests = [v for v in (_slope_tau(tt, theta[n]) for n in shown) if math.isfinite(v)]
            tau = float(np.median(ests)) if ests else math.nan
            notes.append(f"τ₁ = {format_duration(tau)} estimated from the slope of ln θ; the result "
                         "stores no time constants" if ests else
                         "no time constant: the result stores none and θ gives no slope")

    import matplotlib as mpl
    from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter

    rising = [finals[n] > initials[n] for n in shown]
    what = "warm-up" if all(rising) else "cool-down" if not any(rising) else "warm-up and cool-down"
    with mpl.rc_context(STYLE):
        drawn, ax, ta, x, own = _begin(res, ax, "response", False)
        ax.set_yscale("log")
        hidden = False
        for i, n in enumerate(candidates):
            if n not in theta:
                continue
            th = theta[n]
            positive = np.where(th > 0, th, np.nan)
            hidden |= bool(np.any(th[1:-1] <= 0))
            t63 = _crossing(tt, th, math.exp(-1.0))
            drawn.values[f"t63:{n}"] = t63
            label = f"{n}: {_fmt_temp(initials[n])} → {_fmt_temp(finals[n])}"
            if math.isfinite(t63):
                label += f", 63.2 % at {format_duration(t63)}"
            (line,) = ax.plot(x, positive, lw=_NODE_WIDTH, label=label, zorder=3, **_style(i))
            drawn.lines[n] = line
            if math.isfinite(t63):
                (m,) = ax.plot([ta.x(t63 + t[0])], [math.exp(-1.0)], marker="o", markersize=7,
                               markerfacecolor="white", markeredgecolor=_style(i)["color"],
                               markeredgewidth=1.6, linestyle="none", zorder=5)
                drawn.markers[n] = m
        if hidden:
            notes.append("θ ≤ 0 (overshoot or swing past T_final) cannot be shown on a log axis")
        if math.isfinite(tau):
            (tl,) = ax.plot(x, np.exp(-tt / tau), color="black", lw=1.0, linestyle=(0, (4, 2)),
                            zorder=4, label=f"exp(−t/τ₁), τ₁ = {format_duration(tau)}")
            drawn.markers["tau"] = tl
            if tt[-1] >= tau:
                ax.axvline(ta.x(tau + t[0]), color="#777777", lw=0.8, linestyle=(0, (1, 2)),
                           zorder=1)
                ax.text(ta.x(tau + t[0]), 1.0, " τ₁", transform=ax.get_xaxis_transform(),
                        fontsize=8.5, color="#444444", va="top", ha="left")
        ax.axhline(math.exp(-1.0), color="#777777", lw=0.8, linestyle=(0, (1, 2)), zorder=1)
        ax.text(0.995, math.exp(-1.0), "1/e: 63.2 % of the change done", fontsize=7.5,
                transform=ax.get_yaxis_transform(), va="bottom", ha="right", color="#555555",
                clip_on=True)
        drawn.values.update(tau=tau, tau_source=tau_source, final=finals, initial=initials,
                            final_how=how)

        # y range: from 1e-3 (or the smallest drawn θ) to a little above 1
        pos = np.concatenate([v[np.isfinite(v) & (v > 0)] for v in theta.values()] or [[1.0]])
        low = min(0.2, max(1e-3, 10 ** math.floor(math.log10(max(float(pos.min()), 1e-300)))))
        ax.set_ylim(low, max(1.3, min(10.0, float(pos.max()) * 1.15)))
        ax.yaxis.set_major_locator(LogLocator(base=10.0, subs=(1.0, 2.0, 5.0)))
        ax.yaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:g}"))
        ax.yaxis.set_minor_formatter(NullFormatter())
        _end_time_axis(ax, ta, x)
        ax.set_ylabel("θ = (T − T_final)/(T_initial − T_final) [–]")
        ax.set_title(title if title is not None else f"{_title(res)}: {what}",
                     loc="left")
        how_text = {"last sample": "T_final = last sample of the run",
                    "fitted asymptote": "T_final = asymptote fitted with τ₁ (the run ends at "
                                        f"{tt[-1] / tau:.2g} τ₁)" if math.isfinite(tau) else
                                        "T_final = fitted asymptote",
                    "given": "T_final as given"}[how]
        notes.insert(0, how_text)
        taus = res.time_constants
        if taus.size:
            listed = "\n".join(f"τ{_sub(k + 1)} = {format_duration(v)}"
                               for k, v in enumerate(taus[:6]))
            if taus.size > 6:
                listed += f"\n… {taus.size - 6} more"
            ax.text(0.99, 0.985, "time constants\n" + listed, transform=ax.transAxes, fontsize=8,
                    va="top", ha="right", family="DejaVu Sans Mono",
                    bbox={"boxstyle": "round,pad=0.35", "fc": "white", "ec": "#bbbbbb"}, zorder=7)
        _legend(ax, own, 2)
        _note(ax, notes, "lower left")
        drawn.notes = notes
        return drawn


def _sub(k: int) -> str:
    return str(k).translate(str.maketrans("0123456789", "₀₁₂₃₄₅₆₇₈₉"))


# -- heat flows and energy ---------------------------------------------------------------------
def _link_ends(res) -> dict:
    """{link: (a, b)} read from the scenario text stored with the result, where there is one."""
    text = res.scenario
    if not text:
        return {}
    try:
        import tomllib

        links = tomllib.loads(text).get("links", {})
        return {str(k): (str(v["between"][0]), str(v["between"][1])) for k, v in links.items()
                if isinstance(v, dict) and len(v.get("between", [])) == 2}
    except Exception:  # noqa: BLE001 - a label is a courtesy; a result without one still plots
        return {}


def _energy_scale(values) -> tuple[str, float]:
    top = max([float(np.nanmax(np.abs(v))) for v in values if np.size(v)] + [0.0])
    for unit, scale in (("GJ", 1e9), ("MJ", 1e6), ("kJ", 1e3)):
        if top >= 2 * scale:
            return unit, scale
    return "J", 1.0


def plot_flows(res, links=None, *, ax=None, title=None, dates=True) -> Drawn:
    """Link heat flows against time (positive from a link's first point to its second)."""
    flows = res.heat_flows
    notes = []
    if links is None:
        names = list(flows.columns)
        if len(names) > _MAX_SERIES:
            rms = {c: float(np.sqrt(np.mean(flows[c].to_numpy() ** 2))) for c in names}
            names = sorted(names, key=lambda c: -rms[c])[:_MAX_SERIES]
            notes.append(f"the {_MAX_SERIES} largest of {len(flows.columns)} links")
    else:
        names = _check_names(links, list(flows.columns), "link", "links")
    ends = _link_ends(res)

    import matplotlib as mpl

    with mpl.rc_context(STYLE):
        drawn, ax, ta, x, own = _begin(res, ax, "flows", dates)
        ax.axhline(0.0, color="#999999", lw=0.8, zorder=1)
        for i, name in enumerate(names):
            label = f"{name} ({ends[name][0]} → {ends[name][1]})" if name in ends else name
            (line,) = ax.plot(x, flows[name].to_numpy(), lw=1.6, label=label, zorder=3,
                              **_style(i))
            drawn.lines[name] = line
        _end_time_axis(ax, ta, x)
        ax.set_ylabel("heat flow [W]")
        ax.set_title(title if title is not None else
                     "heat flow through each link, positive from its first point to its second",
                     loc="left")
        if names:
            _legend(ax, own, 2)
        else:
            notes.append("no link heat flows in this result")
        _note(ax, notes, "lower right")
        drawn.notes = notes
        return drawn


def _in_out(energy: pd.DataFrame) -> tuple[np.ndarray, np.ndarray]:
    """Cumulative energy in and out [J], summed over every boundary link and source.

    Each term's cumulative net energy is split sample by sample into its rises (in) and falls
    (out); a term that changes sign within one output step is netted over that step.
    """
    terms = [c for c in energy.columns if c != "stored"]
    n = len(energy)
    if not terms or n == 0:
        return np.zeros(n), np.zeros(n)
    e = energy[terms].to_numpy()
    d = np.diff(e, axis=0, prepend=e[:1])
    return np.cumsum(np.maximum(d, 0.0).sum(axis=1)), np.cumsum(np.minimum(d, 0.0).sum(axis=1))


def plot_energy(res, *, ax=None, title=None, dates=True) -> Drawn:
    """Cumulative energy into and out of the network against the change of stored energy."""
    energy = res.energy
    e_in, e_out = _in_out(energy)
    stored = energy["stored"].to_numpy() if "stored" in energy else np.zeros(len(energy))
    unit, scale = _energy_scale([e_in, e_out, stored])

    import matplotlib as mpl

    with mpl.rc_context(STYLE):
        drawn, ax, ta, x, own = _begin(res, ax, "energy", dates)
        ax.axhline(0.0, color="#999999", lw=0.8, zorder=1)
        drawn.lines["in"] = ax.plot(x, e_in / scale, lw=1.6, color=PALETTE[1],
                                    linestyle=LINE_STYLES[1], label="in (links and sources)",
                                    zorder=4)[0]
        drawn.lines["out"] = ax.plot(x, e_out / scale, lw=1.6, color=PALETTE[3],
                                     linestyle=LINE_STYLES[3], label="out (negative)", zorder=4)[0]
        drawn.lines["stored"] = ax.plot(x, stored / scale, lw=2.2, color=PALETTE[0],
                                        linestyle="-", label="stored (change since start)",
                                        zorder=3)[0]
        drawn.lines["net"] = ax.plot(x, (e_in + e_out) / scale, linestyle="none", marker="o",
                                     markevery=0.05, markersize=4.5, markerfacecolor="none",
                                     markeredgecolor=PALETTE[2], markeredgewidth=1.1,
                                     label="in + out (lies on stored when energy balances)",
                                     zorder=5)[0]
        drawn.values.update(energy_unit=unit, energy_scale=scale)
        _end_time_axis(ax, ta, x)
        ax.set_ylabel(f"energy [{unit}]")
        bal = res.energy_balance
        ax.set_title(title if title is not None else
                     f"cumulative energy; balance error {bal:.1e}" if math.isfinite(bal) else
                     "cumulative energy", loc="left")
        _legend(ax, own, 2)
        return drawn


def _plot_flows_and_energy(res, links=None, ax=None, title=None, dates=True) -> Drawn:
    if ax is not None and not isinstance(ax, (list, tuple, np.ndarray)):
        return plot_flows(res, links, ax=ax, title=title, dates=dates)
    own = ax is None
    if own:
        import matplotlib as mpl

        with mpl.rc_context(STYLE):
            fig, axes = _new_figure((_SIZE_TWO[0] + 3.0, _SIZE_TWO[1]), rows=2)
    else:
        axes = list(ax)
        if len(axes) != 2:
            raise InputError(f"flows draws into one axes or two, got {len(axes)}", "ax")
        fig = axes[0].figure
    top = plot_flows(res, links, ax=axes[0], title=title, dates=dates)
    bottom = plot_energy(res, ax=axes[1], dates=dates)
    axes[0].set_xlabel("")
    if own:  # on our own figure the legends go beside the axes, where they hide no curve
        for a in axes:
            legend = a.get_legend()
            if legend is not None:
                handles, labels = a.get_legend_handles_labels()
                legend.remove()
                a.legend(handles, labels, loc="upper left", bbox_to_anchor=(1.01, 1.0),
                         borderaxespad=0.0)
    if title is None:
        fig.suptitle(_title(res), x=0.01, ha="left", fontsize=STYLE["axes.titlesize"] + 0.5,
                     fontweight="bold")
    drawn = Drawn(fig, axes, "flows", lines=dict(top.lines), time_unit=top.time_unit,
                  time_scale=top.time_scale, notes=top.notes)
    drawn.lines.update({f"energy:{k}": v for k, v in bottom.lines.items()})
    drawn.values.update(bottom.values)
    return drawn


# -- fits ---------------------------------------------------------------------------------------
_UNIT_SECONDS = {"s": 1.0, "min": 60.0, "h": 3600.0, "d": 86400.0}


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
    span = float(t[-1] - t[0]) if t.size else 0.0
    if time_unit is None:
        unit, scale = time_unit_for(span)
    elif time_unit in _UNIT_SECONDS:
        unit, scale = time_unit, _UNIT_SECONDS[time_unit]
    else:
        raise InputError(f"unknown time unit {time_unit!r}", "time_unit",
                         _suggest(time_unit, _UNIT_SECONDS))
    cols = _check_names(columns, list(result.measured.columns), "measured column", "columns") \
        or list(result.measured.columns)
    with mpl.rc_context(STYLE):
        if ax is None:
            import matplotlib.pyplot as plt

            fig, (ax_t, ax_r) = plt.subplots(2, 1, sharex=True, figsize=_SIZE_TWO,
                                             layout="constrained",
                                             gridspec_kw={"height_ratios": [3, 1]})
        else:
            ax_t, ax_r = ax
            fig = ax_t.figure
        drawn = Drawn(fig, [ax_t, ax_r], "fit", time_unit=unit, time_scale=scale)
        x = t / scale
        many = t.size > 400
        for i, c in enumerate(cols):
            node = result.targets.get(c, c)
            label = c if node == c else f"{c} ({node})"
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
        if show_inputs:
            for j, c in enumerate(result.inputs.columns):
                node = result.targets.get(c, c)
                label = c if node == c else f"{c} ({node})"
                drawn.lines[f"input:{c}"] = ax_t.plot(
                    x, result.inputs[c].to_numpy(), color=BOUNDARY_COLOURS[j % 3],
                    linestyle=BOUNDARY_STYLES[j % 3], lw=_BOUNDARY_WIDTH,
                    label=f"{label}, measured (drives the model)")[0]
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


# -- sweeps -------------------------------------------------------------------------------------
# Figures of a sweep table (see rcsim.sweep): distributions, tornado, scatter. Each function takes
# ax=None (or axes=None) and returns what it drew (a dict with the axes and the artists). Hold
# times and times out of band are drawn in hours; temperatures in degC; inputs in the SI units
# of the table.
_WORDS = {"min": "lowest temperature", "max": "highest temperature", "hold_time": "hold time",
          "time_out": "time out of band"}


def output_scale(output: str) -> tuple[float, str]:
    """(factor from table values to plotted values, unit) of an output column."""
    prefix = output.split(".", 1)[0]
    if prefix in ("hold_time", "time_out"):
        return 1.0 / 3600.0, "h"
    return 1.0, "degC"


def output_label(output: str) -> str:
    """Axis label of an output: ``"hold time, payload [h]"``."""
    prefix, _, node = output.partition(".")
    _, unit = output_scale(output)
    return f"{_WORDS.get(prefix, prefix)}, {node} [{unit}]"


def _input_label(table_or_attrs, key) -> str:
    attrs = getattr(table_or_attrs, "attrs", table_or_attrs) or {}
    unit = attrs.get("units", {}).get(key, "")
    return f"{key} [{unit}]" if unit else key


def _run_ok(table) -> np.ndarray:
    if "error" not in table.columns:
        return np.ones(len(table), dtype=bool)
    return table["error"].fillna("").astype(str).to_numpy() == ""


def _limit_of(table, output):
    """The limit temperature that bounds ``min.<node>`` / ``max.<node>``, or None."""
    prefix, _, node = output.partition(".")
    lim = (table.attrs.get("limits") or {}).get(node) or {}
    if prefix in ("min", "max"):
        return lim.get(prefix)
    return None


def _sweep_axes(ax):
    import matplotlib.pyplot as plt

    if ax is None:
        _, ax = plt.subplots(figsize=(6.4, 4.0), layout="constrained")
    return ax


def plot_distribution(table: pd.DataFrame, output: str, ax=None, bins="auto",
                      target_hold=None) -> dict:
    """Histogram of one output over the runs that did not fail, with its limit marked.

    ``min.<node>`` / ``max.<node>`` get a line at the node's lower / upper limit; hold times get a
    line at ``target_hold`` [s] when given, and the runs that never left the band are counted in
    the title (they have no hold time within the run).

    Returns ``{"ax", "values" (plotted), "counts", "edges", "limit" (Line2D or None),
    "never" (int)}``.
    """
    ax = _sweep_axes(ax)
    scale, unit = output_scale(output)
    y = table[output].to_numpy(dtype=float)[_run_ok(table)]
    never = int(np.isnan(y).sum()) if output.startswith("hold_time.") else 0
    values = y[np.isfinite(y)] * scale
    counts, edges, _ = ax.hist(values, bins=bins, color=PALETTE[0], alpha=0.8,
                               edgecolor="white", linewidth=0.5) if values.size else (np.zeros(0), np.zeros(0),
                                                                       None)
    limit_value = _limit_of(table, output)
    label = None
    if limit_value is not None:
        label = f"{output.split('.')[0]} limit {limit_value:g} degC"
    elif output.startswith("hold_time.") and target_hold is not None:
        limit_value = target_hold * scale
        label = f"required {limit_value:g} h"
    line = None
    if limit_value is not None:
        line = ax.axvline(limit_value, color=PALETTE[2], linestyle="--", linewidth=1.5, label=label)
        ax.legend(loc="best", fontsize="small")
    ax.set_xlabel(output_label(output))
    ax.set_ylabel("runs")
    title = f"{len(values)} runs"
    if never:
        dur = table.attrs.get("duration")
        within = f" within {dur / 3600:g} h" if dur else ""
        title += f"; {never} more never left the band{within}"
    ax.set_title(title, fontsize="medium")
    return {"ax": ax, "values": values, "counts": np.asarray(counts), "edges": np.asarray(edges),
            "limit": line, "never": never}


def plot_tornado(oat: pd.DataFrame, output: str, ax=None) -> dict:
    """Tornado of one output from :func:`rcsim.sweep.one_at_a_time`, largest swing on top.

    Each input gets two bars from the base value: to the output at the input's low end and at its
    high end. Returns ``{"ax", "inputs" (top to bottom), "low_bars", "high_bars", "base"}``.
    """
    ax = _sweep_axes(ax)
    scale, _ = output_scale(output)
    rows = oat[oat["output"] == output].copy()
    if rows.empty:
        raise KeyError(f"no output {output!r} in the one-at-a-time table")
    rows["_swing"] = rows["swing"].fillna(-1.0)
    rows = rows.sort_values("_swing", ascending=True, kind="stable")  # barh draws bottom-up
    lo = rows["at_low"].to_numpy(dtype=float)
    hi = rows["at_high"].to_numpy(dtype=float)
    base = float(rows["base"].iloc[0])
    duration = oat.attrs.get("duration")
    never = np.zeros(len(rows), dtype=bool)
    if output.startswith("hold_time.") and duration:
        # a hold time not reached within the run is drawn at the run duration, hatched
        never_lo, never_hi = np.isnan(lo), np.isnan(hi)
        lo, hi = np.where(never_lo, duration, lo), np.where(never_hi, duration, hi)
        base = duration if math.isnan(base) else base
        never = never_lo | never_hi
    lo, hi, base = lo * scale, hi * scale, base * scale
    ypos = np.arange(len(rows))
    units = oat.attrs.get("units", {})
    labels = [f"{k}\n{a:.4g} .. {b:.4g} {units.get(k, '')}".rstrip()
              for k, a, b in zip(rows["input"], rows["low"], rows["high"])]
    low_bars = ax.barh(ypos, lo - base, left=base, height=0.6,
                       color=PALETTE[0], label="input at low end")
    high_bars = ax.barh(ypos, hi - base, left=base, height=0.6,
                        color=PALETTE[1], alpha=0.85, label="input at high end")
    for bars, flags in ((low_bars, np.isnan(rows["at_low"].to_numpy(dtype=float))),
                        (high_bars, np.isnan(rows["at_high"].to_numpy(dtype=float)))):
        for patch, flag in zip(bars, flags & never):
            if flag:
                patch.set_hatch("//")
    base_line = ax.axvline(base, color="#333333", linewidth=1.0)
    ax.set_yticks(ypos, labels, fontsize="small")
    ax.set_xlabel(output_label(output))
    title = f"one at a time, base {base:.4g} {output_scale(output)[1]}"
    if never.any():
        title += f"; hatched: never left the band within {duration / 3600:g} h"
    ax.set_title(title, fontsize="medium")
    ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.16), ncol=2, fontsize="small",
              frameon=False)
    return {"ax": ax, "inputs": list(rows["input"])[::-1], "low_bars": low_bars,
            "high_bars": high_bars, "base": base_line}


def plot_scatter(table: pd.DataFrame, output: str, inputs=None, axes=None) -> dict:
    """Output against each input (one panel per input), runs that did not fail.

    ``min.<node>`` / ``max.<node>`` panels get a horizontal line at the node's limit. Returns
    ``{"axes", "points" ({input: PathCollection}), "limits" (list of Line2D)}``.
    """
    import matplotlib.pyplot as plt

    if inputs is None:
        inputs = [c for c in table.attrs.get("inputs", []) if c in table.columns]
        if not inputs:
            outs = set(table.attrs.get("outputs", []))
            inputs = [c for c in table.columns if c not in outs and c != "error"
                      and "." in c and c.split(".", 1)[0] not in _WORDS]
    inputs = list(inputs)
    if axes is None:
        ncol = min(3, max(1, len(inputs)))
        nrow = math.ceil(len(inputs) / ncol)
        _, axs = plt.subplots(nrow, ncol, figsize=(4.2 * ncol, 3.4 * nrow), squeeze=False,
                              layout="constrained")
        axes = list(axs.ravel())
        for extra in axes[len(inputs):]:
            extra.set_visible(False)
    axes = list(np.ravel(axes))
    ok = _run_ok(table)
    scale, _ = output_scale(output)
    y = table[output].to_numpy(dtype=float)[ok] * scale
    limit_value = _limit_of(table, output)
    points, limits = {}, []
    for ax, key in zip(axes, inputs):
        x = table[key].to_numpy(dtype=float)[ok]
        keep = np.isfinite(y)
        points[key] = ax.scatter(x[keep], y[keep], s=10, alpha=0.6, color=PALETTE[0],
                                 edgecolors="none")
        if limit_value is not None:
            limits.append(ax.axhline(limit_value, color=PALETTE[2], linestyle="--",
                                     linewidth=1.2, label=f"limit {limit_value:g} degC"))
        ax.set_xlabel(_input_label(table, key), fontsize="small")
        ax.set_ylabel(output_label(output), fontsize="small")
    if limits:
        axes[0].legend(loc="best", fontsize="small")
    never = int(np.isnan(y).sum()) if output.startswith("hold_time.") else 0
    if never and axes:
        dur = table.attrs.get("duration")
        within = f" within {dur / 3600:g} h" if dur else ""
        axes[0].figure.suptitle(f"{never} runs never left the band{within} (not shown)",
                                fontsize="medium")
    return {"axes": axes[:len(inputs)], "points": points, "limits": limits}


def _varies(table, output) -> bool:
    y = table[output].to_numpy(dtype=float)[_run_ok(table)]
    y = y[np.isfinite(y)]
    return y.size > 1 and float(y.max() - y.min()) > 1e-9 * max(1.0, float(np.abs(y).max()))


def sweep_figures(table: pd.DataFrame, folder, stem: str = "sweep", oat=None,
                  target_hold=None) -> list[str]:
    """Write the figures of a sweep into ``folder``; returns the paths written.

    Per output that varies: ``<stem>-distribution-<output>.png``, ``<stem>-scatter-<output>.png``
    and, with a one-at-a-time table ``oat``, ``<stem>-tornado-<output>.png``. Outputs that are
    the same in every run (e.g. a minimum equal to the starting temperature) are left out.
    """
    import matplotlib.pyplot as plt

    folder = os.fspath(folder)
    os.makedirs(folder, exist_ok=True)
    outputs = [c for c in table.attrs.get("outputs", []) if c in table.columns]
    written = []

    def save(fig, kind, output):
        path = os.path.join(folder, f"{stem}-{kind}-{output}.png")
        try:
            save_figure(fig, path)
        finally:
            plt.close(fig)
        written.append(path)

    for output in outputs:
        if not _varies(table, output):
            continue
        drawn = plot_distribution(table, output, target_hold=target_hold)
        save(drawn["ax"].figure, "distribution", output)
        drawn = plot_scatter(table, output)
        if drawn["axes"]:
            save(drawn["axes"][0].figure, "scatter", output)
        if oat is not None and (oat["output"] == output).any() \
                and np.isfinite(oat.loc[oat["output"] == output, "swing"]).any():
            drawn = plot_tornado(oat, output)
            save(drawn["ax"].figure, "tornado", output)
    return written


# -- entry points ------------------------------------------------------------------------------
def plot_result(res, kind: str = "history", nodes=None, ax=None, **kwargs) -> Drawn:
    """Draw ``res`` as a ``history``, ``response`` or ``flows`` figure; returns a :class:`Drawn`.

    ``nodes`` chooses nodes (history, response); other keywords go to :func:`plot_history`,
    :func:`plot_response` or :func:`plot_flows` (``links=`` for flows; ``ax`` may then be one axes
    for the flows alone or two for flows and energy).
    """
    if kind not in KINDS:
        raise InputError(f"unknown plot kind {kind!r}", "kind", _suggest(kind, KINDS))
    if kind == "history":
        return plot_history(res, nodes, ax=ax, **kwargs)
    if kind == "response":
        return plot_response(res, nodes, ax=ax, **kwargs)
    if nodes is not None:
        raise InputError("nodes= chooses nodes for history and response plots", "nodes",
                         "use links= to choose the links of a flows plot")
    return _plot_flows_and_energy(res, ax=ax, **kwargs)


def save_figure(fig, path) -> str:
    """Write ``fig`` to ``path`` (.png, .svg or .pdf) under a temporary name, then rename."""
    path = os.fspath(path)
    fmt = os.path.splitext(path)[1].lower().lstrip(".")
    if fmt not in FORMATS:
        raise InputError(f"cannot write a figure as {fmt or 'a file without suffix'!r}", path,
                         "use .png, .svg or .pdf")
    import matplotlib as mpl

    from .atomic import atomic_path

    meta = {"png": {"Software": None}, "svg": {"Date": None}, "pdf": {"CreationDate": None}}[fmt]
    with atomic_path(path, f".{fmt}.tmp") as tmp, mpl.rc_context(STYLE):
        fig.savefig(tmp, format=fmt, dpi=_DPI, metadata=meta)
        if fmt == "png":
            _palette_png(tmp)
    return path


def _palette_png(path) -> None:
    """Re-save a PNG with a 256-colour palette: line figures look the same at a third the size."""
    from PIL import Image

    with Image.open(path) as im:
        small = im.convert("RGB").quantize(colors=256, method=Image.Quantize.MEDIANCUT, dither=0)
    small.save(path, format="PNG", optimize=True)


def warmup_nodes(res) -> list[str]:
    """Nodes of ``res`` whose history is a warm-up or cool-down worth a response figure.

    The run starts from given temperatures (not a steady or periodic start); the node moves by
    0.1 K or more from its initial temperature to T_final (as :func:`standard_figures` takes it),
    and its θ stays between −0.05 and 1.1 for 95 % of the run, so the approach to T_final is
    not buried under swings; nor may it rebound: θ never climbs back by more than 0.05 above
    the lowest value it has reached (a warm-up or cool-down approaches T_final, it does not swing
    about it).
    """
    if str(res.meta.get("initial", "given")) not in ("given", "") or res.time.size < 3:
        return []
    try:
        _, _, shown, _, initials, finals, *_ = _response_setup(res, None, _auto_final(res))
    except InputError:
        return []
    temps = res.temperatures
    out = []
    for n in shown:
        change = finals[n] - initials[n]
        theta = (temps[n].to_numpy() - finals[n]) / -change
        rebound = float(np.max(theta - np.minimum.accumulate(theta))) if theta.size else 0.0
        if abs(change) >= 0.1 and np.mean((theta > -0.05) & (theta < 1.1)) >= 0.95 \
                and rebound <= 0.05:
            out.append(n)
    return out


def _auto_final(res):
    """``"fit"`` when the run ends before 5 τ₁ (it has not settled), else the last sample."""
    taus = res.time_constants
    span = float(res.time[-1] - res.time[0]) if res.time.size else 0.0
    return "fit" if taus.size and span < 5.0 * float(taus[0]) else None


def standard_figures(res, folder, stem: str, formats=("png",)) -> list[str]:
    """Write the standard figures of ``res`` into ``folder``; return the paths written.

    ``<stem>-history``, ``<stem>-response`` (of the nodes :func:`warmup_nodes` finds, when there
    are any; T_final is the fitted asymptote when the run ends before 5 τ₁) and ``<stem>-flows`` (heat flows and
    energy), in each of ``formats``.
    """
    import matplotlib.pyplot as plt

    for fmt in formats:
        if fmt not in FORMATS:
            raise InputError(f"unknown figure format {fmt!r}", "formats", _suggest(fmt, FORMATS))
    jobs = [("history", lambda: plot_history(res))]
    moving = warmup_nodes(res)
    if moving:
        jobs.append(("response", lambda: plot_response(res, moving, final=_auto_final(res))))
    jobs.append(("flows", lambda: _plot_flows_and_energy(res)))
    written = []
    for name, job in jobs:
        drawn = job()
        try:
            for fmt in formats:
                written.append(save_figure(drawn.figure,
                                           os.path.join(os.fspath(folder), f"{stem}-{name}.{fmt}")))
        finally:
            plt.close(drawn.figure)
    return written
