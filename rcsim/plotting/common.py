"""What every figure of a result shares: the :class:`Drawn` it returns, its axes and time axis,
the nodes it shows by default, its legend and notes, and how it writes times and temperatures."""

from __future__ import annotations

from dataclasses import dataclass, field

from ..base import suggest
from ..errors import InputError
from .style import MAX_SERIES, SIZE_ONE
from .timeaxis import TimeAxis

__all__ = ["Drawn", "new_figure", "begin", "end_time_axis", "check_names", "is_internal",
           "result_title", "note", "fmt_clock", "fmt_temp", "default_nodes", "legend"]


@dataclass
class Drawn:
    """What a plot function drew.

    Attributes
    ----------
    figure, axes : the matplotlib figure and its axes (``axes[0]`` is the main one; ``ax`` too)
    kind : ``"history"``, ``"response"``, ``"flows"``, ``"energy"`` or ``"fit"``
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


def new_figure(size, rows: int = 1):
    """A figure with ``rows`` axes sharing x; pyplot-managed so it shows in notebooks."""
    import matplotlib.pyplot as plt

    fig, axes = plt.subplots(rows, 1, figsize=size, sharex=True, squeeze=False,
                             layout="constrained")
    return fig, list(axes[:, 0])


def begin(res, ax, kind: str, dates: bool):
    """The axes to draw on (a new figure when ``ax`` is None), the time axis and an empty Drawn.

    Returns ``(drawn, ax, time_axis, x, own)``; ``x`` are the result's times on the axis and
    ``own`` says whether the figure is ours (then the legend goes below the axes).
    """
    own = ax is None
    if own:
        fig, axes = new_figure(SIZE_ONE)
        ax = axes[0]
    else:
        fig, axes = ax.figure, [ax]
    ta = TimeAxis(res.time, res.start_time, dates)
    drawn = Drawn(fig, axes, kind, time_unit=ta.unit, time_scale=ta.scale)
    return drawn, ax, ta, ta.x(res.time), own


def end_time_axis(ax, ta, x) -> None:
    """Limit the x axis to the drawn times and format it."""
    if len(x):
        ax.set_xlim(x[0], x[-1])
    ta.format(ax)


def check_names(requested, valid, what: str, where: str) -> list[str]:
    """``requested`` names (one or a list), each checked against ``valid``, without repeats;
    None stays None."""
    if requested is None:
        return None
    if isinstance(requested, str):
        requested = [requested]
    out = []
    for r in requested:
        if r not in valid:
            raise InputError(f"unknown {what} {r!r}", where, suggest(r, valid))
        if r not in out:
            out.append(r)
    if not out:
        raise InputError(f"no {what} given", where)
    return out


def is_internal(name: str, links) -> bool:
    """Whether ``name`` is an internal node of a massive layer (``<link>.<i>``)."""
    base, _, index = name.rpartition(".")
    return bool(base) and index.isdigit() and base in links


def result_title(res) -> str:
    """The title of a result's figures (its scenario's title)."""
    return str(res.meta.get("title") or "") or "rcsim result"


def note(ax, notes, loc="lower left") -> None:
    """Write ``notes`` in a box in a corner of ``ax``."""
    if not notes:
        return
    y, va = (0.015, "bottom") if loc.startswith("lower") else (0.985, "top")
    ax.text(0.01 if loc.endswith("left") else 0.99, y, "\n".join(notes), transform=ax.transAxes,
            fontsize=7.5, color="#333333", va=va, ha="left" if loc.endswith("left") else "right",
            bbox={"boxstyle": "round,pad=0.3", "fc": "white", "ec": "#cccccc", "alpha": 0.9})


def fmt_clock(seconds: float) -> str:
    """A span as a person says it: "47 min", "8 h 47 min", "5 d 3 h".

    >>> fmt_clock(31592.8), fmt_clock(2820.0), fmt_clock(445000.0), fmt_clock(42.0)
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


def fmt_temp(value: float) -> str:
    """A temperature for a label: ``"5.2 °C"``."""
    return f"{value:.3g} °C" if abs(value) < 100 else f"{value:.0f} °C"


def default_nodes(res, limited) -> tuple[list[str], list[str]]:
    """Nodes a figure shows when none are named, and a note on those left out.

    Limited nodes first, then the others in result order, at most eight; internal nodes of massive
    layers (``<link>.<i>``) only when there is nothing else to show.
    """
    cols = list(res.temperatures.columns)
    links = set(res.heat_flows.columns)
    inner = [c for c in cols if is_internal(c, links)]
    ordered = [c for c in cols if c in limited] + \
        [c for c in cols if c not in limited and c not in inner]
    if not ordered:
        ordered, inner = inner, []
    notes = []
    if len(ordered) > MAX_SERIES:
        notes.append(f"showing {MAX_SERIES} of {len(ordered)} nodes")
    if inner:
        notes.append(f"{len(inner)} internal layer node(s) not shown")
    return ordered[:MAX_SERIES], notes


def legend(ax, own: bool, columns: int = 3) -> None:
    """Below the axes on a figure of our own (it hides no data there); inside on a given axes."""
    handles, labels = ax.get_legend_handles_labels()
    if not handles:
        return
    if own:
        ax.figure.legend(handles, labels, loc="outside lower center",
                         ncols=min(columns, len(handles)))
    else:
        ax.legend(handles, labels, loc="best")
