"""The flows figure: the heat flow through each link against time, and below it the cumulative
energy in and out of the network against the change of stored energy."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from ..errors import InputError
from .common import Drawn, begin, check_names, end_time_axis, legend, new_figure, note, result_title
from .style import LINE_STYLES, MAX_SERIES, PALETTE, SIZE_TWO, figure_style, series_style

__all__ = ["plot_flows", "plot_energy", "plot_flows_and_energy", "energy_in_out"]


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
    """The unit (J, kJ, MJ, GJ) in which the largest value reads 2 or more, and its size [J]."""
    top = max([float(np.nanmax(np.abs(v))) for v in values if np.size(v)] + [0.0])
    for unit, scale in (("GJ", 1e9), ("MJ", 1e6), ("kJ", 1e3)):
        if top >= 2 * scale:
            return unit, scale
    return "J", 1.0


def _chosen_links(flows, links) -> tuple[list, list]:
    """(links to draw, notes): the named ones, or all (the eight largest by RMS when more)."""
    notes = []
    if links is None:
        names = list(flows.columns)
        if len(names) > MAX_SERIES:
            rms = {c: float(np.sqrt(np.mean(flows[c].to_numpy() ** 2))) for c in names}
            names = sorted(names, key=lambda c: -rms[c])[:MAX_SERIES]
            notes.append(f"the {MAX_SERIES} largest of {len(flows.columns)} links")
    else:
        names = check_names(links, list(flows.columns), "link", "links")
    return names, notes


def plot_flows(res, links=None, *, ax=None, title=None, dates=True) -> Drawn:
    """Link heat flows against time (positive from a link's first point to its second)."""
    flows = res.heat_flows
    names, notes = _chosen_links(flows, links)
    ends = _link_ends(res)

    import matplotlib as mpl

    with mpl.rc_context(figure_style()):
        drawn, ax, ta, x, own = begin(res, ax, "flows", dates)
        ax.axhline(0.0, color="#999999", lw=0.8, zorder=1)
        for i, name in enumerate(names):
            label = f"{name} ({ends[name][0]} → {ends[name][1]})" if name in ends else name
            (line,) = ax.plot(x, flows[name].to_numpy(), lw=1.6, label=label, zorder=3,
                              **series_style(i))
            drawn.lines[name] = line
        end_time_axis(ax, ta, x)
        ax.set_ylabel("heat flow [W]")
        ax.set_title(title if title is not None else
                     "heat flow through each link, positive from its first point to its second",
                     loc="left")
        if names:
            legend(ax, own, 2)
        else:
            notes.append("no link heat flows in this result")
        note(ax, notes, "lower right")
        drawn.notes = notes
        return drawn


def energy_in_out(energy: pd.DataFrame) -> tuple[np.ndarray, np.ndarray]:
    """Cumulative energy in and out [J], summed over every boundary link and source.

    Each term's cumulative net energy is split sample by sample into its rises (in) and falls
    (out); a term that changes sign within one output step is netted over that step.

    >>> e = pd.DataFrame({"stored": [0.0, 0.0, 0.0], "wall": [0.0, 5.0, 2.0]})
    >>> [v.tolist() for v in energy_in_out(e)]
    [[0.0, 5.0, 5.0], [0.0, 0.0, -3.0]]
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
    e_in, e_out = energy_in_out(energy)
    stored = energy["stored"].to_numpy() if "stored" in energy else np.zeros(len(energy))
    unit, scale = _energy_scale([e_in, e_out, stored])

    import matplotlib as mpl

    with mpl.rc_context(figure_style()):
        drawn, ax, ta, x, own = begin(res, ax, "energy", dates)
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
        end_time_axis(ax, ta, x)
        ax.set_ylabel(f"energy [{unit}]")
        bal = res.energy_balance_error
        ax.set_title(title if title is not None else
                     f"cumulative energy; balance error {bal:.1e}" if math.isfinite(bal) else
                     "cumulative energy", loc="left")
        legend(ax, own, 2)
        return drawn


def _legends_beside(axes) -> None:
    """Move each axes' legend beside it (on a figure of our own, where it hides no curve)."""
    for a in axes:
        old = a.get_legend()
        if old is not None:
            handles, labels = a.get_legend_handles_labels()
            old.remove()
            a.legend(handles, labels, loc="upper left", bbox_to_anchor=(1.01, 1.0),
                     borderaxespad=0.0)


def plot_flows_and_energy(res, links=None, ax=None, title=None, dates=True) -> Drawn:
    """The flows figure: :func:`plot_flows` above :func:`plot_energy` (``ax``: None for a new
    figure, two axes for both, or one axes for the flows alone)."""
    if ax is not None and not isinstance(ax, (list, tuple, np.ndarray)):
        return plot_flows(res, links, ax=ax, title=title, dates=dates)
    own = ax is None
    if own:
        import matplotlib as mpl

        with mpl.rc_context(figure_style()):
            fig, axes = new_figure((SIZE_TWO[0] + 3.0, SIZE_TWO[1]), rows=2)
    else:
        axes = list(ax)
        if len(axes) != 2:
            raise InputError(f"flows draws into one axes or two, got {len(axes)}", "ax")
        fig = axes[0].figure
    top = plot_flows(res, links, ax=axes[0], title=title, dates=dates)
    bottom = plot_energy(res, ax=axes[1], dates=dates)
    axes[0].set_xlabel("")
    if own:
        _legends_beside(axes)
    if title is None:
        fig.suptitle(result_title(res), x=0.01, ha="left", fontsize=figure_style()["axes.titlesize"] + 0.5,
                     fontweight="bold")
    drawn = Drawn(fig, axes, "flows", lines=dict(top.lines), time_unit=top.time_unit,
                  time_scale=top.time_scale, notes=top.notes)
    drawn.lines.update({f"energy:{k}": v for k, v in bottom.lines.items()})
    drawn.values.update(bottom.values)
    return drawn
