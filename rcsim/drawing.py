"""A picture of a network: nodes with their capacities, boundaries with their profiles, links with
their resistances and part kinds, sources.

The layout is layered by graph distance from the boundaries (networkx: a multi-source
breadth-first search gives each point its layer, ``multipartite_layout`` places the layers):
boundaries in the top row, then the points one link further in, and so on, so a wall or a ladder
reads as a ladder, from the outside in. Within a layer, points are ordered by the mean place of
their neighbours in the layer above (one sweep down and one back up), which keeps links from
crossing where it can. A layer with ``slices`` (internal nodes ``<link>.<i>``) is one labelled block
unless ``expand_layers=True`` asks for each slice.

Symbols (our own drawing): a node is a circle beside a capacitor (two plates to a ground bar); a
massless junction is a small dot; a phase-change node has a double ring; a boundary is a shaded
square; a linear link carries a zig-zag resistor, a temperature-dependent one (radiation, a film
correlation) the same zig-zag crossed by an arrow; a source is an arrow into its node. Drawn with
matplotlib, written as SVG, PNG or PDF.
"""

from __future__ import annotations

import math
import os
import textwrap
from dataclasses import dataclass, field

import numpy as np

from .errors import InputError

__all__ = ["network_graph", "network_layout", "draw_network", "save_network_picture",
           "network_svg", "Picture", "FORMATS"]

FORMATS = ("svg", "png", "pdf")
_DX, _DY = 2.7, 1.75            # inches between points in a layer, between layers
_INK, _PAPER, _SOFT = "#1f2a36", "#ffffff", "#5b6672"
_NODE_FILL, _BOUNDARY_FILL, _BLOCK_FILL = "#dbe7f5", "#e8e1cf", "#efe9dc"
_NONLINEAR = "#8e1f4f"
_FONT = 7.5
#: The picture's own settings on top of the figures' style (its SVG ids, the hatch of a boundary).
_LOOK = {"svg.hashsalt": "rcsim-network", "hatch.linewidth": 0.5, "hatch.color": _SOFT}


@dataclass
class Picture:
    """What :func:`draw_network` drew: the figure, the graph, positions [in] and labels."""

    figure: object
    graph: object
    positions: dict
    labels: dict = field(default_factory=dict)
    orientation: str = "down"


def _si_text(value: float, unit: str) -> str:
    """``21600, "J/K"`` -> ``"21.6 kJ/K"``: a short value with a decimal prefix."""
    if value is None or not math.isfinite(value):
        return "-"
    if value == 0:
        return f"0 {unit}"
    prefixes = [(1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m")]
    for size, p in prefixes:
        if abs(value) >= size:
            return f"{value / size:.4g} {p}{unit}"
    return f"{value:.3g} {unit}"


def _short(text: str, width: int = 26) -> str:
    return "\n".join(textwrap.wrap(text, width)[:3]) if text else ""


# -- graph ------------------------------------------------------------------------------------------
def _chain(link):
    """The sliced link's series chain: [(resistance before, nonlinear?), internal node C, ...]."""
    steps, acc, nonlinear, k = [], 0.0, False, 0
    for part in link.parts:
        if part.is_nonlinear:
            nonlinear = True
        elif not part.is_massive:
            acc += part.resistance
        else:
            inner, outer, capacity = part.ladder()   # equal slices, or radial/box shells
            for i in range(part.slices):
                k += 1
                steps.append(("edge", acc + float(inner[i]), nonlinear))
                steps.append(("node", f"{link.name}.{k}", float(capacity[i])))
                acc, nonlinear = float(outer[i]), False
    steps.append(("edge", acc, nonlinear))
    return steps


def network_graph(network, *, expand_layers: bool = False):
    """The network as a ``networkx.MultiGraph`` of points and links.

    Graph nodes are ``("node", name)``, ``("boundary", name)``, ``("layer", link)`` (a sliced
    layer kept as one block) and ``("internal", "<link>.<i>")`` (a slice, with
    ``expand_layers``); attributes ``kind``, ``label``. Edges carry ``link`` (its name),
    ``resistance`` [K/W] (NaN when it depends on the temperatures), ``kinds`` (the part kinds),
    ``nonlinear`` and ``role`` (``"link"``; ``"connector"`` for the two sides of a block;
    ``"slice"`` for a step of an expanded layer, labelled with its resistance only).
    Sources are kept in ``graph.graph["sources"]`` as (name, node, profile text).
    """
    import networkx as nx

    net = getattr(network, "network", network)
    g = nx.MultiGraph()
    for n in net.nodes.values():
        pc = n.phase_change
        extra = f"\nlatent {_si_text(pc.latent_heat * pc.mass, 'J')}" if pc is not None else ""
        text = f"C {_si_text(n.capacity, 'J/K')}{extra}" if n.capacity > 0 else "massless"
        g.add_node(("node", n.name), kind="node", label=n.name, detail=text,
                   capacity=float(n.capacity), phase_change=pc is not None)
    for b in net.boundaries.values():
        g.add_node(("boundary", b.name), kind="boundary", label=b.name,
                   detail=_short(b.profile.describe() + " (degC)"))
    for link in net.links.values():
        a, b = (_point(net, link.a), _point(net, link.b))
        kinds = " + ".join(p.kind for p in link.parts)
        massive = any(p.is_massive for p in link.parts)
        if not massive:
            g.add_edge(a, b, link=link.name, resistance=float(link.resistance), kinds=kinds,
                       nonlinear=link.is_nonlinear, role="link")
        elif not expand_layers:
            block = ("layer", link.name)
            slices = sum(p.slices for p in link.parts)
            g.add_node(block, kind="layer", label=link.name,
                       detail=f"{slices} slices, C {_si_text(link.capacity, 'J/K')}\n"
                              f"R {link.resistance:.4g} K/W")
            for end in (a, b):
                g.add_edge(end, block, link=link.name, resistance=math.nan, kinds=kinds,
                           nonlinear=link.is_nonlinear, role="connector")
        else:
            prev, pending = a, (math.nan, False)
            for step in _chain(link):
                if step[0] == "edge":
                    pending = step[1:]
                    continue
                point = ("internal", step[1])
                g.add_node(point, kind="internal", label=step[1],
                           detail=f"C {_si_text(step[2], 'J/K')}", capacity=step[2],
                           phase_change=False)
                g.add_edge(prev, point, link=link.name, resistance=float(pending[0]),
                           kinds=kinds, nonlinear=pending[1], role="slice")
                prev = point
            g.add_edge(prev, b, link=link.name, resistance=float(pending[0]), kinds=kinds,
                       nonlinear=pending[1], role="slice")
    g.graph["sources"] = [(s.name, s.node, _short(s.profile.describe() + " (W)", 22))
                          for s in net.sources.values()]
    g.graph["thermostats"] = [(name, getattr(th, "node", "")) for name, th
                              in getattr(net, "thermostats", {}).items()]
    return g


def _point(net, name):
    return ("boundary", name) if name in net.boundaries else ("node", name)


# -- layout -----------------------------------------------------------------------------------------
def _layers(g) -> dict:
    """Layer of each point: its link distance from the nearest boundary (networkx BFS)."""
    import networkx as nx

    layer: dict = {}
    sources = [p for p, d in g.nodes(data=True) if d["kind"] == "boundary"]
    base = 0
    for comp in nx.connected_components(g):
        starts = [p for p in sources if p in comp] or [min(comp, key=list(g.nodes).index)]
        dist = nx.multi_source_dijkstra_path_length(g.subgraph(comp), starts, weight=None)
        offset = 0 if any(p in comp for p in sources) else base
        for p, d in dist.items():
            layer[p] = int(d) + offset
        base = max(layer.values()) + 1
    return layer


def _ordered(g, layer) -> dict:
    """Layers as ordered lists: by the mean place of neighbours in the layer above, then below."""
    order = list(g.nodes)
    rows: dict[int, list] = {}
    for p in order:
        rows.setdefault(layer[p], []).append(p)
    keys = sorted(rows)

    def sweep(seq, ref_of):
        for k_prev, k in zip(seq, seq[1:]):
            place = {p: i for i, p in enumerate(rows[k_prev])}
            def centre(p, place=place):
                near = [place[q] for q in g.neighbors(p) if q in place]
                return (sum(near) / len(near)) if near else math.inf
            rows[k].sort(key=lambda p: (centre(p), order.index(p)))
    sweep(keys, None)
    sweep(keys[::-1], None)
    return {k: rows[k] for k in keys}


def network_layout(g, orientation: str = "down") -> dict:
    """Positions [in] of the graph's points: layers along y (``"down"``) or x (``"right"``)."""
    import networkx as nx

    if len(g) == 0:
        return {}
    rows = _ordered(g, _layers(g))
    pos = nx.multipartite_layout(g, subset_key=rows, align="vertical", scale=1.0)
    # multipartite_layout spaces layers and the points of a layer by one unit, then scales
    # both alike: measure that unit between two layers, or two points of the one layer
    keys = list(rows)
    first = [rows[k][0] for k in keys]
    if len(keys) > 1:
        unit = abs(pos[first[1]][0] - pos[first[0]][0])
    elif len(rows[keys[0]]) > 1:
        unit = abs(pos[rows[keys[0]][1]][1] - pos[rows[keys[0]][0]][1])
    else:
        unit = 1.0
    out = {}
    for p, (x, y) in pos.items():
        across, along = y / unit, x / unit
        out[p] = (across * _DX, -along * _DY) if orientation == "down" else (along * _DX,
                                                                            -across * _DY)
    return out


# -- symbols ------------------------------------------------------------------------------------------
def _curve(p0, p1, bend: float, n: int = 160) -> np.ndarray:
    """Points of a quadratic curve from p0 to p1 bowed sideways by ``bend`` [in]."""
    p0, p1 = np.asarray(p0, float), np.asarray(p1, float)
    mid = 0.5 * (p0 + p1)
    d = p1 - p0
    normal = np.array([-d[1], d[0]]) / (np.hypot(*d) or 1.0)
    ctrl = mid + 2.0 * bend * normal
    s = np.linspace(0.0, 1.0, n)[:, None]
    return (1 - s) ** 2 * p0 + 2 * (1 - s) * s * ctrl + s ** 2 * p1


def _zigzag(points: np.ndarray, at: float = 0.5, length: float = 0.42, amp: float = 0.075,
            teeth: int = 6):
    """The curve with a zig-zag of ``length`` [in] centred at the fraction ``at`` of its length
    (the resistor symbol); also the centre, the tangent and the normal there."""
    seg = np.hypot(*np.diff(points, axis=0).T)
    s = np.concatenate([[0.0], np.cumsum(seg)])
    total = s[-1]
    lo, hi = at * total - 0.5 * length, at * total + 0.5 * length
    tangent = np.gradient(points, axis=0)
    tangent /= np.maximum(np.hypot(*tangent.T), 1e-12)[:, None]
    normal = np.column_stack([-tangent[:, 1], tangent[:, 0]])
    # sample the teeth at their corners so they stay sharp; a -1..1 triangle wave across
    corners = lo + (np.arange(2 * teeth + 1) * 0.5) * (length / teeth)
    s_all = np.union1d(s, corners[(corners > 0) & (corners < total)])
    xy = np.column_stack([np.interp(s_all, s, points[:, 0]), np.interp(s_all, s, points[:, 1])])
    nrm = np.column_stack([np.interp(s_all, s, normal[:, 0]), np.interp(s_all, s, normal[:, 1])])
    ph = (s_all - lo) / (length / teeth)
    tri = np.where((s_all > lo) & (s_all < hi),
                   -(2.0 * np.abs(2.0 * (ph - np.floor(ph + 0.5))) - 1.0) * amp, 0.0)
    mid_index = int(np.argmin(np.abs(s - at * total)))
    return xy + tri[:, None] * nrm, points[mid_index], tangent[mid_index], normal[mid_index]


def _capacitor(ax, x, y, r):
    """A capacitor to a ground bar beside a node at (x, y) of radius r [in]."""
    x0 = x + r
    kw = dict(color=_INK, lw=0.9, solid_capstyle="butt", zorder=3)
    ax.plot([x0, x0 + 0.16], [y, y], **kw)
    for dx in (0.16, 0.22):
        ax.plot([x0 + dx, x0 + dx], [y - 0.09, y + 0.09], color=_INK, lw=1.6, zorder=3)
    ax.plot([x0 + 0.22, x0 + 0.34], [y, y], **kw)
    for i, w in enumerate((0.09, 0.06, 0.03)):
        ax.plot([x0 + 0.34 + 0.035 * i] * 2, [y - w, y + w], color=_INK, lw=0.9, zorder=3)


def _draw_point(ax, p, data, xy):
    from matplotlib.patches import Circle, FancyBboxPatch

    x, y = xy
    kind = data["kind"]
    detail_y, detail_va = y - 0.26, "top"
    if kind == "boundary":   # boundaries sit in the top row: their profile goes above them
        detail_y, detail_va = y + 0.42, "bottom"
        ax.add_patch(FancyBboxPatch((x - 0.2, y - 0.2), 0.4, 0.4, boxstyle="square,pad=0",
                                    fc=_BOUNDARY_FILL, ec=_INK, lw=1.1, hatch="////", zorder=4))
    elif kind == "layer":
        ax.add_patch(FancyBboxPatch((x - 0.42, y - 0.16), 0.84, 0.32,
                                    boxstyle="round,pad=0,rounding_size=0.04", fc=_BLOCK_FILL,
                                    ec=_INK, lw=1.0, hatch="..", zorder=4))
        detail_y = y - 0.22
    elif data.get("capacity", 0.0) > 0:
        r = 0.15 if kind == "node" else 0.09
        ax.add_patch(Circle((x, y), r, fc=_NODE_FILL, ec=_INK, lw=1.1, zorder=4))
        if data.get("phase_change"):
            ax.add_patch(Circle((x, y), r * 0.68, fc="none", ec=_INK, lw=0.8, zorder=5))
        _capacitor(ax, x, y, r)
        detail_y = y - r - 0.08
    else:
        ax.add_patch(Circle((x, y), 0.05, fc=_INK, ec=_INK, lw=0.8, zorder=4))
        detail_y = y - 0.12
    ax.text(x - 0.02 if kind != "layer" else x, y + (0.24 if kind != "layer" else 0.2),
            data["label"], ha="center", va="bottom", fontsize=_FONT + 0.5, fontweight="bold",
            color=_INK, zorder=6)
    ax.text(x, detail_y, data.get("detail", ""), ha="center", va=detail_va, fontsize=_FONT - 0.5,
            color=_SOFT, zorder=6, linespacing=1.15)


def _edge_label(d) -> str:
    r = d["resistance"]
    value = "R depends on T" if d["nonlinear"] and not math.isfinite(r) else f"R {r:.4g} K/W"
    if d["role"] == "slice":
        return value
    return f"{d['link']}\n{value}\n{_short(d['kinds'], 24)}"


def _free_place(pts, placed) -> float:
    """Where along a link its symbol goes: the middle, unless another symbol sits near it."""
    best, best_gap = 0.5, -1.0
    for at in (0.5, 0.34, 0.66, 0.25, 0.75):
        xy = pts[int(at * (len(pts) - 1))]
        gap = min((math.dist(xy, q) for q in placed), default=math.inf)
        if gap > 0.7:
            return at
        if gap > best_gap:
            best, best_gap = at, gap
    return best


def _draw_edges(ax, g, pos, labels):
    placed: list = []
    groups: dict = {}
    for a, b, k, d in g.edges(keys=True, data=True):
        groups.setdefault(frozenset((a, b)), []).append((a, b, d))
    for edges in groups.values():
        m = len(edges)
        for i, (a, b, d) in enumerate(edges):
            bend = (i - (m - 1) / 2) * 0.8
            pts = _curve(pos[a], pos[b], bend)
            if d["role"] == "connector":
                ax.plot(pts[:, 0], pts[:, 1], color=_INK, lw=1.0, zorder=2)
                continue
            path, mid, tangent, normal = _zigzag(pts, _free_place(pts, placed))
            placed.append(tuple(mid))
            colour = _NONLINEAR if d["nonlinear"] else _INK
            ax.plot(path[:, 0], path[:, 1], color=colour, lw=1.1, zorder=2,
                    solid_joinstyle="miter")
            if d["nonlinear"]:
                diag = 0.22 * (tangent + 1.3 * normal) / np.hypot(*(tangent + 1.3 * normal))
                ax.annotate("", xy=mid + diag, xytext=mid - diag, zorder=3,
                            arrowprops=dict(arrowstyle="-|>", color=colour, lw=0.9,
                                            mutation_scale=7, shrinkA=0, shrinkB=0))
            # the label on the outer side of a bowed link, else to the right
            side = np.sign(bend) * normal if bend else (normal if normal[0] >= 0 else -normal)
            text = _edge_label(d)
            labels[("link", d["link"], i)] = text
            ha = "left" if side[0] > 0.2 else ("right" if side[0] < -0.2 else "center")
            ax.text(*(mid + side * 0.2), text, ha=ha,
                    va="center", fontsize=_FONT - 0.5, color=colour, zorder=6, linespacing=1.1,
                    bbox=dict(boxstyle="round,pad=0.1", fc=_PAPER, ec="none", alpha=0.75))


def _draw_sources(ax, g, pos, labels):
    count: dict = {}
    kinds = [("source", s) for s in g.graph.get("sources", [])] + \
            [("thermostat", (n, node, "thermostat")) for n, node in g.graph.get("thermostats", [])]
    for what, (name, node, text) in kinds:
        p = ("node", node)
        if p not in pos:
            continue
        k = count.get(p, 0)
        count[p] = k + 1
        x, y = pos[p]
        start = (x - 0.62 - 0.0 * k, y + 0.38 + 0.3 * k)
        ax.annotate("", xy=(x - 0.13, y + 0.09), xytext=start, zorder=3,
                    arrowprops=dict(arrowstyle="-|>", color=_INK, lw=1.1, mutation_scale=9,
                                    shrinkA=0, shrinkB=0))
        ax.text(start[0] - 0.04, start[1], f"{name}\n{text}", ha="right", va="center",
                fontsize=_FONT - 0.5, color=_INK, zorder=6, linespacing=1.1)
        labels[(what, name)] = f"{name}: {text}"


def draw_network(network, *, expand_layers: bool = False, orientation: str = "down",
                 title: str | None = None) -> Picture:
    """Draw ``network`` (a Network or a Scenario) and return a :class:`Picture`.

    The figure's size follows the network (about 2.7 in between points in a row and 1.75 in
    between rows), so labels stay legible however many points there are; scale it on the page.
    ``orientation``: ``"down"`` (boundaries on top) or ``"right"`` (boundaries on the left).
    """
    if orientation not in ("down", "right"):
        raise InputError(f"orientation must be 'down' or 'right', got {orientation!r}",
                         "orientation")
    from matplotlib.figure import Figure

    g = network_graph(network, expand_layers=expand_layers)
    pos = network_layout(g, orientation)
    xy = np.array(list(pos.values())) if pos else np.zeros((1, 2))
    x0, y0 = xy.min(axis=0) - np.array([1.45, 0.85])
    x1, y1 = xy.max(axis=0) + np.array([1.55, 0.75])
    head = 0.35 if title else 0.0
    from .plotting.style import styled

    with styled(_LOOK):
        fig = Figure(figsize=(x1 - x0, y1 - y0 + head))
        ax = fig.add_axes((0, 0, 1, (y1 - y0) / (y1 - y0 + head)))
        ax.set_xlim(x0, x1)
        ax.set_ylim(y0, y1)
        ax.set_aspect("equal")
        ax.axis("off")
        labels: dict = {}
        _draw_edges(ax, g, pos, labels)
        for p, d in g.nodes(data=True):
            _draw_point(ax, p, d, pos[p])
            labels[p] = f"{d['label']}: {d.get('detail', '')}"
        _draw_sources(ax, g, pos, labels)
        if title:
            fig.text(0.02, 1 - 0.2 / (y1 - y0 + head), title, ha="left", va="center",
                     fontsize=_FONT + 2, fontweight="bold", color=_INK)
    return Picture(fig, g, pos, labels, orientation)


def network_svg(network, **kwargs) -> str:
    """The network picture as SVG text (see :func:`draw_network` for the keywords)."""
    import io

    from .plotting.save import write_figure

    picture = draw_network(network, **kwargs)
    buf = io.StringIO()
    write_figure(picture.figure, buf, "svg", rc=_LOOK, bbox_inches="tight", pad_inches=0.08)
    return buf.getvalue()


def save_network_picture(network, path, **kwargs) -> str:
    """Write the picture of ``network`` to ``path`` (.svg, .png or .pdf), atomically."""
    from .atomic import atomic_path
    from .plotting.save import write_figure

    path = os.fspath(path)
    fmt = os.path.splitext(path)[1].lower().lstrip(".")
    if fmt not in FORMATS:
        raise InputError(f"cannot draw a network as {fmt or 'a file without suffix'!r}", path,
                         "use .svg, .png or .pdf")
    picture = draw_network(network, **kwargs)
    with atomic_path(path, f".{fmt}.tmp") as tmp:
        write_figure(picture.figure, tmp, fmt, rc=_LOOK, bbox_inches="tight", pad_inches=0.08)
    return path
