"""The figure of a sizing: each required output against the value sized, with the requirement
and the answer marked.

Drawn from the result only (never runs a solver). One panel per required output: the values
tried (points, joined in order of value), the required value (a dashed line), the answer (a
vertical line and a ring on its point). With uncertain inputs, every draw's output is shown
faintly behind, the line joins the output met by the required share of the draws at each value,
and the median of the draws is drawn dotted. Hold times and times out of band are in hours;
temperatures in degC; the value sized in the unit the range or the scenario used.
"""

from __future__ import annotations

import os

import numpy as np

from ..atomic import make_folder
from ..plotting.style import styled

__all__ = ["plot_sizing", "sizing_figures"]


def _panels(n, axes):
    import matplotlib.pyplot as plt

    if axes is not None:
        axes = list(np.ravel(axes))
        if len(axes) < n:
            from ..errors import InputError

            raise InputError(f"the sizing needs {n} axes, got {len(axes)}", "axes")
        return axes[0].figure, axes[:n]
    fig, ax = plt.subplots(n, 1, figsize=(6.4, 3.4 + 2.4 * (n - 1)), squeeze=False,
                           layout="constrained")
    return fig, list(ax[:, 0])


@styled()
def plot_sizing(result, axes=None) -> dict:
    """Draw ``result`` (a :class:`~rcsim.sizing.result.SizingResult`).

    Returns ``{"figure", "axes", "lines" {output: Line2D of the values tried}, "targets"
    {output: Line2D}, "answer" {output: Line2D}, "x" {output: plotted values}, "y" {output:
    plotted outputs}}``.
    """
    from ..plotting.sweeps import output_label, output_scale
    from ..plotting.style import PALETTE

    outs = list(dict.fromkeys(r.output for r in result.requirements))
    fig, axes = _panels(len(outs), axes)
    sized = result.sized
    factor, unit = sized.units[0]
    cands = sorted(result.candidates, key=lambda c: c.x)
    x = np.array([c.values[0] for c in cands]) * factor
    drawn = {"figure": fig, "axes": axes, "lines": {}, "targets": {}, "answer": {}, "x": {},
             "y": {}}
    for ax, out in zip(axes, outs):
        i = next(k for k, r in enumerate(result.requirements) if r.output == out)
        scale, _ = output_scale(out)
        y = _plotted(np.array([c.achieved[i] for c in cands]), out, result.duration) * scale
        if result.confidence is not None:
            _draws(ax, result, cands, out, factor, scale)
        label = ("met by the required share of draws" if result.confidence is not None
                 else "values tried")
        drawn["lines"][out] = ax.plot(x, y, color=PALETTE[0], marker="o", markersize=4,
                                      linewidth=1.6, label=label)[0]
        for r in result.requirements:
            if r.output == out:
                drawn["targets"][out] = ax.axhline(r.target * scale, color=PALETTE[2],
                                                   linestyle="--", linewidth=1.4,
                                                   label=f"required {r.describe_target()}")
        ans_y = _plotted(np.array([result.achieved[out]]), out, result.duration)[0] * scale
        drawn["answer"][out] = ax.axvline(result.value * factor, color=PALETTE[1],
                                          linestyle=(0, (6, 2.2)), linewidth=1.4,
                                          label=f"answer {result.value_text}")
        ax.plot([result.value * factor], [ans_y], marker="o", markersize=10, fillstyle="none",
                color=PALETTE[1], linestyle="none")
        ax.set_ylabel(output_label(out))
        ax.legend(loc="best", fontsize="small")
        drawn["x"][out], drawn["y"][out] = x, y
    axes[-1].set_xlabel(f"{sized.key} [{unit}]" if unit else sized.key)
    title = "; ".join(r.text for r in result.requirements)
    if result.confidence is not None:
        title += f" in {100 * result.confidence:g} % of {result.samples} draws"
    axes[0].set_title(title, fontsize="medium")
    return drawn


def _plotted(values, output, duration):
    """Hold times beyond the run are drawn at the run's length (a lower bound)."""
    values = np.asarray(values, dtype=float)
    if output.startswith("hold_time."):
        return np.where(np.isnan(values), duration, values)
    return values


def _draws(ax, result, cands, out, factor, scale):
    """Every draw's output at each value tried, faint; and their median, dotted."""
    from ..plotting.style import PALETTE

    runs = result.runs
    key = result.sized.key
    ok = runs["error"].astype(str) == ""
    xs = runs.loc[ok, key].to_numpy(dtype=float) * factor
    ys = _plotted(runs.loc[ok, out].to_numpy(dtype=float), out, result.duration) * scale
    ax.plot(xs, ys, linestyle="none", marker=".", markersize=2.5, color=PALETTE[5], alpha=0.5,
            label="each draw")
    med = [np.median(_plotted(runs.loc[ok & (runs["candidate"] == c.index), out]
                              .to_numpy(dtype=float), out, result.duration)) * scale
           for c in cands]
    ax.plot([c.values[0] * factor for c in cands], med, color=PALETTE[3],
            linestyle=(0, (1.2, 1.8)), linewidth=1.4, label="median of the draws")


def sizing_figures(result, folder, stem: str = "sizing") -> list[str]:
    """Write the sizing figure into ``folder`` (created if needed) as ``<stem>-sizing.png``;
    returns the paths written."""
    import matplotlib.pyplot as plt

    from ..plotting.save import save_figure

    folder = os.fspath(folder)
    make_folder(folder)
    drawn = plot_sizing(result)
    try:
        path = save_figure(drawn["figure"], os.path.join(folder, f"{stem}-sizing.png"))
    finally:
        plt.close(drawn["figure"])
    return [path]
