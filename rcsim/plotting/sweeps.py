"""Figures of a sweep table (see :mod:`rcsim.sweep`): distributions, scatter, tornado.

They draw from the table only (never run a solver). Each function takes ``ax=None`` (or
``axes=None``) and returns what it drew (a dict with the axes and the artists). Hold times and
times out of band are drawn in hours; temperatures in degC; inputs in the SI units of the table.
A table is a DataFrame from ``rcsim.sweep`` or ``read_table``, or a ``SweepTable``.
"""

from __future__ import annotations

import math
import os

import numpy as np
import pandas as pd

from ..atomic import make_folder
from ..sweep.tables import SweepTable, open_balance_mask, succeeded, trusted
from .save import save_figure
from .style import PALETTE, styled

__all__ = ["output_scale", "output_label", "plot_distribution", "plot_tornado", "plot_scatter",
           "sweep_figures"]

_WORDS = {"min": "lowest temperature", "max": "highest temperature", "hold_time": "hold time",
          "time_outside_band": "time outside the band", "time_out": "time outside the band"}


def _frame(table) -> pd.DataFrame:
    return table.to_frame() if isinstance(table, SweepTable) else table


def output_scale(output: str) -> tuple[float, str]:
    """(factor from table values to plotted values, unit) of an output column.

    >>> output_scale("hold_time.payload"), output_scale("max.payload")
    ((0.0002777777777777778, 'h'), (1.0, 'degC'))
    """
    prefix = output.split(".", 1)[0]
    if prefix in ("hold_time", "time_outside_band", "time_out"):
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


def _within(table) -> str:
    """`` within 72 h`` (the run duration), or nothing when the table does not say it."""
    dur = table.attrs.get("duration")
    return f" within {dur / 3600:g} h" if dur else ""


def _left_out(table) -> int:
    """Runs that did not fail but are left out of the figures for an open energy balance."""
    return int((succeeded(table) & open_balance_mask(table)).sum())


@styled()
def plot_distribution(table: pd.DataFrame, output: str, ax=None, bins="auto",
                      target_hold=None) -> dict:
    """Histogram of one output over the runs that did not fail and whose energy balance closes
    (the others are counted in the title), with its limit marked.

    ``min.<node>`` / ``max.<node>`` get a line at the node's lower / upper limit; hold times get a
    line at ``target_hold`` [s] when given, and the runs that never left the band are counted in
    the title (they have no hold time within the run).

    Returns ``{"ax", "values" (plotted), "counts", "edges", "limit" (Line2D or None),
    "never" (int)}``.
    """
    table = _frame(table)
    ax = _sweep_axes(ax)
    scale, unit = output_scale(output)
    y = table[output].to_numpy(dtype=float)[trusted(table)]
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
        title += f"; {never} more never left the band{_within(table)}"
    if _left_out(table):
        title += f"; {_left_out(table)} with an open energy balance left out"
    ax.set_title(title, fontsize="medium")
    return {"ax": ax, "values": values, "counts": np.asarray(counts), "edges": np.asarray(edges),
            "limit": line, "never": never}


def _tornado_values(oat, rows, output):
    """(at low, at high, base, never reached) of a tornado; hold times never reached are drawn at
    the run duration."""
    lo = rows["at_low"].to_numpy(dtype=float)
    hi = rows["at_high"].to_numpy(dtype=float)
    base = float(rows["base"].iloc[0])
    duration = oat.attrs.get("duration")
    never = np.zeros(len(rows), dtype=bool)
    if output.startswith("hold_time.") and duration:
        never_lo, never_hi = np.isnan(lo), np.isnan(hi)
        lo, hi = np.where(never_lo, duration, lo), np.where(never_hi, duration, hi)
        base = duration if math.isnan(base) else base
        never = never_lo | never_hi
    return lo, hi, base, never


@styled()
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
    lo, hi, base, never = _tornado_values(oat, rows, output)
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
        title += f"; hatched: never left the band within {oat.attrs.get('duration') / 3600:g} h"
    ax.set_title(title, fontsize="medium")
    ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.16), ncol=2, fontsize="small",
              frameon=False)
    return {"ax": ax, "inputs": list(rows["input"])[::-1], "low_bars": low_bars,
            "high_bars": high_bars, "base": base_line}


def _scatter_inputs(table) -> list[str]:
    inputs = [c for c in table.attrs.get("inputs", []) if c in table.columns]
    if not inputs:
        outs = set(table.attrs.get("outputs", []))
        inputs = [c for c in table.columns if c not in outs and c != "error"
                  and "." in c and c.split(".", 1)[0] not in _WORDS]
    return inputs


def _panels(n):
    """A figure of ``n`` panels, three to a row; the spare ones hidden."""
    import matplotlib.pyplot as plt

    ncol = min(3, max(1, n))
    nrow = math.ceil(n / ncol)
    _, axs = plt.subplots(nrow, ncol, figsize=(4.2 * ncol, 3.4 * nrow), squeeze=False,
                          layout="constrained")
    axes = list(axs.ravel())
    for extra in axes[n:]:
        extra.set_visible(False)
    return axes


@styled()
def plot_scatter(table: pd.DataFrame, output: str, inputs=None, axes=None) -> dict:
    """Output against each input (one panel per input), runs that did not fail and whose energy
    balance closes (the others are counted in the figure's title).

    ``min.<node>`` / ``max.<node>`` panels get a horizontal line at the node's limit. Returns
    ``{"axes", "points" ({input: PathCollection}), "limits" (list of Line2D)}``.
    """
    table = _frame(table)
    inputs = list(_scatter_inputs(table) if inputs is None else inputs)
    axes = list(np.ravel(_panels(len(inputs)) if axes is None else axes))
    ok = trusted(table)
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
    said = [f"{never} runs never left the band{_within(table)}"] if never else []
    if _left_out(table):
        said.append(f"{_left_out(table)} with an open energy balance")
    if said and axes:
        axes[0].figure.suptitle("; ".join(said) + " (not shown)", fontsize="medium")
    return {"axes": axes[:len(inputs)], "points": points, "limits": limits}


def _varies(table, output) -> bool:
    y = table[output].to_numpy(dtype=float)[trusted(table)]
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

    table = _frame(table)
    folder = os.fspath(folder)
    make_folder(folder)
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
