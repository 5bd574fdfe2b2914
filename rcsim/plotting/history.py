"""The history figure: node temperatures against time, boundaries, limit bands and hold times,
and the sol-air temperature of exposed surfaces beside their nodes."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from .common import (Drawn, begin, check_names, default_nodes, end_time_axis, fmt_clock, legend,
                     note, result_title)
from .style import (BOUNDARY_COLOURS, BOUNDARY_STYLES, BOUNDARY_WIDTH, NODE_WIDTH, figure_style,
                    series_style)

#: Line style and width of a sol-air curve: thin and solid, under its node's own (thicker,
#: styled) curve, in the node's colour
SOL_AIR_STYLE = "-"
SOL_AIR_WIDTH = 0.9

__all__ = ["plot_history"]


def _series(res, nodes, boundaries, limited) -> tuple[list, list, list]:
    """(nodes, boundaries, notes) a history draws."""
    temps = res.temperatures
    bnd = res.boundary_temperatures
    notes = []
    if nodes is None:
        node_list, notes = default_nodes(res, limited)
        bnd_list = list(bnd.columns) if boundaries is True else \
            (check_names(boundaries, list(bnd.columns), "boundary", "boundaries")
             if boundaries else [])
    else:
        valid = list(temps.columns) + list(bnd.columns)
        chosen = check_names(nodes, valid, "node", "nodes")
        node_list = [n for n in chosen if n in temps.columns]
        extra = [n for n in chosen if n in bnd.columns]
        if boundaries is True:
            bnd_list = extra or list(bnd.columns)
        elif boundaries:
            bnd_list = list(dict.fromkeys(
                extra + check_names(boundaries, list(bnd.columns), "boundary", "boundaries")))
        else:
            bnd_list = extra
    return node_list, bnd_list[:len(BOUNDARY_COLOURS) * 2], notes


def _draw_lines(ax, drawn, x, temps, bnd, node_list, bnd_list) -> dict:
    """Node and boundary curves; returns {node: colour}."""
    colour = {}
    for i, name in enumerate(node_list):
        st = series_style(i)
        colour[name] = st["color"]
        (line,) = ax.plot(x, temps[name].to_numpy(), lw=NODE_WIDTH, label=name, zorder=3, **st)
        drawn.lines[name] = line
    for j, name in enumerate(bnd_list):
        (line,) = ax.plot(x, bnd[name].to_numpy(), lw=BOUNDARY_WIDTH,
                          color=BOUNDARY_COLOURS[j % len(BOUNDARY_COLOURS)],
                          linestyle=BOUNDARY_STYLES[j % len(BOUNDARY_STYLES)],
                          label=f"{name} (boundary)", zorder=2)
        drawn.lines[name] = line
    return colour


def _draw_sol_air(ax, drawn, x, res, node_list, colour) -> list:
    """The sol-air temperature of each exposed surface whose node is drawn, thin, in the node's
    colour; returns the values drawn."""
    sol = res.sol_air
    drawn_values = []
    for surface, node in res.surfaces.items():
        if node not in node_list or surface not in sol.columns:
            continue
        values = sol[surface].to_numpy()
        (line,) = ax.plot(x, values, lw=SOL_AIR_WIDTH, color=colour[node], alpha=0.85,
                          linestyle=SOL_AIR_STYLE, label=f"{surface} sol-air", zorder=2)
        drawn.lines[f"{surface}:sol-air"] = line
        drawn_values.append(values)
    return drawn_values


def _y_range(ax, values, lim_rows) -> tuple[float, float]:
    """Set the y range from what is drawn and the limits that apply to it."""
    finite = [v[np.isfinite(v)] for v in values if v.size]
    lo = min([v.min() for v in finite if v.size] + list(lim_rows.get("limit [degC]", [])) or [0.0])
    hi = max([v.max() for v in finite if v.size] + list(lim_rows.get("limit [degC]", [])) or [1.0])
    pad = 0.06 * (hi - lo) if hi > lo else 1.0
    ylo, yhi = lo - pad, hi + pad
    ax.set_ylim(ylo, yhi)
    return ylo, yhi


def _band(ax, drawn, node, rows, colour, ylo, yhi) -> None:
    """The limit band of ``node`` (shaded) and its limit lines."""
    from matplotlib.patches import Rectangle

    vmin = rows.loc[rows["kind"] == "min", "limit [degC]"]
    vmax = rows.loc[rows["kind"] == "max", "limit [degC]"]
    b_lo = float(vmin.iloc[0]) if len(vmin) else ylo
    b_hi = float(vmax.iloc[0]) if len(vmax) else yhi
    text = (f"{node} band {b_lo:g}–{b_hi:g} °C" if len(vmin) and len(vmax) else
            f"{node} ≥ {b_lo:g} °C" if len(vmin) else f"{node} ≤ {b_hi:g} °C")
    rect = Rectangle((0.0, b_lo), 1.0, b_hi - b_lo, transform=ax.get_yaxis_transform(),
                     facecolor=colour, alpha=0.11, edgecolor="none", zorder=0, label=text)
    ax.add_patch(rect)
    drawn.bands[node] = rect
    for kind, v in (("min", vmin), ("max", vmax)):
        if len(v):
            drawn.limit_lines[f"{node}:{kind}"] = ax.axhline(
                float(v.iloc[0]), color=colour, lw=0.9, alpha=0.75, zorder=1)


def _hold_marker(ax, drawn, ta, t0, node, rows, colour, res=None) -> None:
    """Mark and label the first excursion of ``node`` from its band (its hold time; on a run
    that started in its periodic regime, the clock time of the first crossing)."""
    holds = rows[np.isfinite(rows["hold_time [s]"].to_numpy(dtype=float))]
    if not len(holds):
        drawn.values[f"hold:{node}"] = math.nan
        return
    first = holds.iloc[int(np.argmin(holds["hold_time [s]"].to_numpy(dtype=float)))]
    th, tl = float(first["hold_time [s]"]), float(first["limit [degC]"])
    drawn.values[f"hold:{node}"] = th
    xh = ta.x(th)
    ax.axvline(xh, color=colour, lw=0.9, linestyle=(0, (1, 1.5)), zorder=1)
    (mark,) = ax.plot([xh], [tl], marker="D", markersize=7, color=colour,
                      markeredgecolor="black", markeredgewidth=0.8, linestyle="none",
                      zorder=5, clip_on=False)
    drawn.markers[node] = mark
    word = "below" if first["kind"] == "min" else "above"
    label = (f"{node} {word} {tl:g} °C from the start" if th <= t0 else
             f"{node} hold time {fmt_clock(th - t0)}\n(first {word} {tl:g} °C)")
    if res is not None and res.period is not None and th > t0:   # no start: a time of day
        from ..units import format_clock_time

        clock = format_clock_time(th, res.period, res.start_time)
        label = f"{node} first {word} {tl:g} °C\nat {clock}"
    up = first["kind"] == "max"
    ax.annotate(label, (xh, tl), xytext=(10, 14 if up else -14), textcoords="offset points",
                fontsize=8.5, va="bottom" if up else "top", ha="left", zorder=6,
                bbox={"boxstyle": "round,pad=0.25", "fc": "white", "ec": colour, "alpha": 0.95},
                arrowprops={"arrowstyle": "-", "color": colour, "lw": 0.8})


def plot_history(res, nodes=None, *, boundaries=True, limits=True, ax=None, title=None,
                 dates=True, sol_air=True) -> Drawn:
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
    sol_air : bool
        Draw the sol-air temperature of each exposed surface whose node is drawn (thin and solid,
        in the node's colour; ``drawn.lines["<surface>:sol-air"]``).
    """
    temps = res.temperatures
    bnd = res.boundary_temperatures
    lim = res.limits if limits and len(res.limits) else pd.DataFrame(columns=["node"])
    limited = list(dict.fromkeys(str(n) for n in lim["node"]))
    node_list, bnd_list, notes = _series(res, nodes, boundaries, limited)

    import matplotlib as mpl

    with mpl.rc_context(figure_style()):
        drawn, ax, ta, x, own = begin(res, ax, "history", dates)
        colour = _draw_lines(ax, drawn, x, temps, bnd, node_list, bnd_list)
        values = [temps[n].to_numpy() for n in node_list] + [bnd[n].to_numpy() for n in bnd_list]
        if sol_air:
            values += _draw_sol_air(ax, drawn, x, res, node_list, colour)
        lim_rows = lim[lim["node"].isin(node_list)] if len(lim) else lim
        ylo, yhi = _y_range(ax, values, lim_rows)
        for node in dict.fromkeys(lim_rows["node"] if len(lim_rows) else []):
            rows = lim_rows[lim_rows["node"] == node]
            _band(ax, drawn, node, rows, colour[node], ylo, yhi)
            _hold_marker(ax, drawn, ta, res.time[0], node, rows, colour[node], res)
        end_time_axis(ax, ta, x)
        ax.set_ylabel("temperature [°C]")
        ax.set_title(title if title is not None else result_title(res), loc="left")
        legend(ax, own, 4)
        note(ax, notes, "lower right")
        drawn.notes = notes
        return drawn
