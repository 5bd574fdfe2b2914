"""The look of every figure: colours, line styles, sizes and the matplotlib settings.

Colours are our own set of six (:data:`PALETTE`), checked to stay apart under simulated protan,
deutan and tritan vision (``tests/test_plotting.py``); each series also gets its own line style
(:data:`LINE_STYLES`), so curves stay apart in grey-scale print. Boundaries are grey; limit bands
are pale tints of their node's colour. Nothing here imports matplotlib.
"""

from __future__ import annotations

__all__ = ["PALETTE", "LINE_STYLES", "MARKERS", "BOUNDARY_COLOURS", "BOUNDARY_STYLES", "STYLE",
           "NODE_WIDTH", "BOUNDARY_WIDTH", "SIZE_ONE", "SIZE_TWO", "DPI", "MAX_SERIES",
           "series_style"]

#: Line colours, in the order series take them: ink blue, amber, wine, sea green, umber, sky.
#: Dark and light alternate so that neighbours in the order also differ in grey-scale.
PALETTE = ("#1d3f8f", "#e3871a", "#8e1f4f", "#3aa394", "#6b4e16", "#8fbde6")
#: Line styles, in the same order as the colours (solid, dashed, dotted, dash-dot, ...).
LINE_STYLES = ("-", (0, (6, 2.2)), (0, (1.2, 1.8)), (0, (7, 2, 1.5, 2)), (0, (3, 1.5, 1, 1.5, 1, 1.5)),
               (0, (10, 3)))
#: Markers added from the seventh series on, when colours and styles start again.
MARKERS = ("o", "s", "^", "D", "v", "P")
#: Boundary lines: greys and their own dash patterns.
BOUNDARY_COLOURS = ("#6f6f6f", "#9c9c9c", "#4a4a4a")
BOUNDARY_STYLES = ((0, (5, 1.5, 1, 1.5)), (0, (2, 1.5)), (0, (8, 2)))

#: Line widths [pt] of nodes and of boundaries.
NODE_WIDTH = 1.9
BOUNDARY_WIDTH = 1.1
#: Figure sizes [in]: one axes, two stacked axes (a print column at 1:1, a screen at 150 dpi).
SIZE_ONE = (7.0, 4.3)
SIZE_TWO = (7.0, 6.4)
#: Resolution of PNG files [dots per inch].
DPI = 150
#: Most series a figure draws when none are named.
MAX_SERIES = 8

#: matplotlib settings every figure is drawn and saved with (``matplotlib.rc_context(STYLE)``).
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
    "savefig.dpi": DPI,
    "pdf.fonttype": 42,
    "ps.fonttype": 42,
    "svg.hashsalt": "rcsim",
}


def series_style(i: int) -> dict:
    """Colour, line style and (from the seventh series) marker of series ``i``.

    >>> series_style(0)["color"] == PALETTE[0], "marker" in series_style(6)
    (True, True)
    """
    out = {"color": PALETTE[i % len(PALETTE)], "linestyle": LINE_STYLES[i % len(LINE_STYLES)]}
    if i >= len(PALETTE):
        out.update(marker=MARKERS[(i - len(PALETTE)) % len(MARKERS)], markevery=0.1,
                   markersize=4, markerfacecolor="white")
    return out
