"""The response figure: a warm-up or cool-down as θ = (T − T_final)/(T_initial − T_final) on a
logarithmic axis, with the line θ = exp(−t/τ₁) of the dominant time constant, the 63.2 % point of
each curve and the network's time constants listed; and which nodes of a run deserve one."""

from __future__ import annotations

import math

import numpy as np

from ..errors import InputError
from ..units import format_duration
from .common import Drawn, begin, end_time_axis, fmt_temp, legend, note, result_title
from .decay import crossing, response_setup, slope_tau
from .style import NODE_WIDTH, figure_style, series_style

__all__ = ["plot_response", "warmup_nodes", "auto_final"]


def _sub(k: int) -> str:
    return str(k).translate(str.maketrans("0123456789", "₀₁₂₃₄₅₆₇₈₉"))


def _estimated_tau(setup, tt, theta, notes) -> float:
    """τ₁ when the result stores none: the median of the fitted ones, or of the slopes of ln θ."""
    if setup.fitted_taus:
        tau = float(np.median(setup.fitted_taus))
        notes.append(f"τ₁ = {format_duration(tau)} estimated by fitting T_final + A·exp(−t/τ); "
                     "the result stores no time constants")
        return tau
    ests = [v for v in (slope_tau(tt, theta[n]) for n in setup.shown) if math.isfinite(v)]
    tau = float(np.median(ests)) if ests else math.nan
    notes.append(f"τ₁ = {format_duration(tau)} estimated from the slope of ln θ; the result "
                 "stores no time constants" if ests else
                 "no time constant: the result stores none and θ gives no slope")
    return tau


def _draw_curves(ax, drawn, ta, x, t, tt, setup, theta) -> bool:
    """θ of each node with its 63.2 % point; returns whether some θ ≤ 0 could not be drawn."""
    hidden = False
    initials, finals = setup.initials, setup.finals
    for i, n in enumerate(setup.candidates):
        if n not in theta:
            continue
        th = theta[n]
        positive = np.where(th > 0, th, np.nan)
        hidden |= bool(np.any(th[1:-1] <= 0))
        t63 = crossing(tt, th, math.exp(-1.0))
        drawn.values[f"t63:{n}"] = t63
        label = f"{n}: {fmt_temp(initials[n])} → {fmt_temp(finals[n])}"
        if math.isfinite(t63):
            label += f", 63.2 % at {format_duration(t63)}"
        (line,) = ax.plot(x, positive, lw=NODE_WIDTH, label=label, zorder=3, **series_style(i))
        drawn.lines[n] = line
        if math.isfinite(t63):
            (m,) = ax.plot([ta.x(t63 + t[0])], [math.exp(-1.0)], marker="o", markersize=7,
                           markerfacecolor="white", markeredgecolor=series_style(i)["color"],
                           markeredgewidth=1.6, linestyle="none", zorder=5)
            drawn.markers[n] = m
    return hidden


def _draw_tau(ax, drawn, ta, x, t, tt, tau) -> None:
    """The line exp(−t/τ₁), τ₁ marked on the time axis, and the 1/e level."""
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


def _log_axis(ax, theta) -> None:
    """y from 1e-3 (or the smallest drawn θ) to a little above 1, labelled 0.1, 0.2, 0.5, 1..."""
    from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter

    pos = np.concatenate([v[np.isfinite(v) & (v > 0)] for v in theta.values()] or [[1.0]])
    low = min(0.2, max(1e-3, 10 ** math.floor(math.log10(max(float(pos.min()), 1e-300)))))
    ax.set_ylim(low, max(1.3, min(10.0, float(pos.max()) * 1.15)))
    ax.yaxis.set_major_locator(LogLocator(base=10.0, subs=(1.0, 2.0, 5.0)))
    ax.yaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:g}"))
    ax.yaxis.set_minor_formatter(NullFormatter())


def _how_text(how, tt, tau) -> str:
    return {"last sample": "T_final = last sample of the run",
            "fitted asymptote": "T_final = asymptote fitted with τ₁ (the run ends at "
                                f"{tt[-1] / tau:.2g} τ₁)" if math.isfinite(tau) else
                                "T_final = fitted asymptote",
            "given": "T_final as given"}[how]


def _list_time_constants(ax, taus) -> None:
    if not taus.size:
        return
    listed = "\n".join(f"τ{_sub(k + 1)} = {format_duration(v)}" for k, v in enumerate(taus[:6]))
    if taus.size > 6:
        listed += f"\n… {taus.size - 6} more"
    ax.text(0.99, 0.985, "time constants\n" + listed, transform=ax.transAxes, fontsize=8,
            va="top", ha="right", family="DejaVu Sans Mono",
            bbox={"boxstyle": "round,pad=0.35", "fc": "white", "ec": "#bbbbbb"}, zorder=7)


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
    setup = response_setup(res, nodes, final)
    if not setup.shown:
        raise InputError("no chosen node changes between its initial and final temperature, so "
                         "there is no warm-up or cool-down to normalise", "nodes",
                         "choose other nodes or give the final temperature")
    temps = res.temperatures
    t, initials, finals = setup.time, setup.initials, setup.finals
    notes = []
    if setup.skipped:
        notes.append("skipped (T_initial ≈ T_final): " + ", ".join(setup.skipped))
    theta = {n: (temps[n].to_numpy() - finals[n]) / (initials[n] - finals[n]) for n in setup.shown}
    tt = t - t[0]
    tau = setup.tau
    if setup.tau_source == "estimated":
        tau = _estimated_tau(setup, tt, theta, notes)

    import matplotlib as mpl

    rising = [finals[n] > initials[n] for n in setup.shown]
    what = "warm-up" if all(rising) else "cool-down" if not any(rising) else "warm-up and cool-down"
    with mpl.rc_context(figure_style()):
        drawn, ax, ta, x, own = begin(res, ax, "response", False)
        ax.set_yscale("log")
        if _draw_curves(ax, drawn, ta, x, t, tt, setup, theta):
            notes.append("θ ≤ 0 (overshoot or swing past T_final) cannot be shown on a log axis")
        _draw_tau(ax, drawn, ta, x, t, tt, tau)
        drawn.values.update(tau=tau, tau_source=setup.tau_source, final=finals, initial=initials,
                            final_how=setup.final_how)
        _log_axis(ax, theta)
        end_time_axis(ax, ta, x)
        ax.set_ylabel("θ = (T − T_final)/(T_initial − T_final) [–]")
        ax.set_title(title if title is not None else f"{result_title(res)}: {what}", loc="left")
        notes.insert(0, _how_text(setup.final_how, tt, tau))
        _list_time_constants(ax, res.time_constants)
        legend(ax, own, 2)
        note(ax, notes, "lower left")
        drawn.notes = notes
        return drawn


def auto_final(res):
    """``"fit"`` when the run ends before 5 τ₁ (it has not settled), else the last sample."""
    taus = res.time_constants
    span = float(res.time[-1] - res.time[0]) if res.time.size else 0.0
    return "fit" if taus.size and span < 5.0 * float(taus[0]) else None


def warmup_nodes(res) -> list[str]:
    """Nodes of ``res`` whose history is a warm-up or cool-down worth a response figure.

    The run starts from given temperatures (not a steady or periodic start); the node moves by
    0.1 K or more from its initial temperature to T_final (as
    :func:`~rcsim.plotting.standard_figures` takes it), and its θ stays between −0.05 and 1.1 for
    95 % of the run, so the approach to T_final is not buried under swings; nor may it rebound: θ
    never climbs back by more than 0.05 above the lowest value it has reached (a warm-up or
    cool-down approaches T_final, it does not swing about it).
    """
    if str(res.meta.get("initial", "given")) not in ("given", "") or res.time.size < 3:
        return []
    try:
        setup = response_setup(res, None, auto_final(res))
    except InputError:
        return []
    temps = res.temperatures
    out = []
    for n in setup.shown:
        change = setup.finals[n] - setup.initials[n]
        theta = (temps[n].to_numpy() - setup.finals[n]) / -change
        rebound = float(np.max(theta - np.minimum.accumulate(theta))) if theta.size else 0.0
        if abs(change) >= 0.1 and np.mean((theta > -0.05) & (theta < 1.1)) >= 0.95 \
                and rebound <= 0.05:
            out.append(n)
    return out
