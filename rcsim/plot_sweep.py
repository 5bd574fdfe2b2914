"""Figures of a sweep table (see :mod:`rcsim.sweep`): distributions, tornado, scatter.

Matplotlib only; every function takes ``ax=None`` (or ``axes=None``), draws, and returns what it
drew (a dict with the axes and the artists), never runs a solver. Hold times and times out of band
are drawn in hours; temperatures in degC; inputs in the SI units of the table.
"""

from __future__ import annotations

import math
import os

import numpy as np
import pandas as pd

__all__ = ["plot_distribution", "plot_tornado", "plot_scatter", "sweep_figures", "output_label",
           "output_scale"]

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


def _ok(table) -> np.ndarray:
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


def _axes(ax):
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
    ax = _axes(ax)
    scale, unit = output_scale(output)
    y = table[output].to_numpy(dtype=float)[_ok(table)]
    never = int(np.isnan(y).sum()) if output.startswith("hold_time.") else 0
    values = y[np.isfinite(y)] * scale
    counts, edges, _ = ax.hist(values, bins=bins, color="tab:blue", alpha=0.8,
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
        line = ax.axvline(limit_value, color="tab:red", linestyle="--", linewidth=1.5, label=label)
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
    ax = _axes(ax)
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
                       color="tab:blue", label="input at low end")
    high_bars = ax.barh(ypos, hi - base, left=base, height=0.6,
                        color="tab:orange", alpha=0.85, label="input at high end")
    for bars, flags in ((low_bars, np.isnan(rows["at_low"].to_numpy(dtype=float))),
                        (high_bars, np.isnan(rows["at_high"].to_numpy(dtype=float)))):
        for patch, flag in zip(bars, flags & never):
            if flag:
                patch.set_hatch("//")
    base_line = ax.axvline(base, color="black", linewidth=1.0)
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
    ok = _ok(table)
    scale, _ = output_scale(output)
    y = table[output].to_numpy(dtype=float)[ok] * scale
    limit_value = _limit_of(table, output)
    points, limits = {}, []
    for ax, key in zip(axes, inputs):
        x = table[key].to_numpy(dtype=float)[ok]
        keep = np.isfinite(y)
        points[key] = ax.scatter(x[keep], y[keep], s=10, alpha=0.6, color="tab:blue",
                                 edgecolors="none")
        if limit_value is not None:
            limits.append(ax.axhline(limit_value, color="tab:red", linestyle="--",
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
    y = table[output].to_numpy(dtype=float)[_ok(table)]
    y = y[np.isfinite(y)]
    return y.size > 1 and float(y.max() - y.min()) > 1e-9 * max(1.0, float(np.abs(y).max()))


def sweep_figures(table: pd.DataFrame, folder, stem: str = "sweep", oat=None,
                  target_hold=None, dpi=110) -> list[str]:
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
        fig.savefig(path, dpi=dpi)
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
