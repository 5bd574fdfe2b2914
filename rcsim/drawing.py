"""A picture of a network: nodes with their capacities, boundaries with their profiles, links with
their resistances and part kinds, sources.

The layout is layered by graph distance from the boundaries (networkx: a multi-source
breadth-first search gives each point its layer, ``multipartite_layout`` places the layers):
boundaries in the top row, then the points one link further in, and so on, so a wall or a ladder
reads as a ladder, from the outside in. A point linked to three or more points of its own layer
(the air inside a cabinet, linked to each of its panels, all one link from the outdoor air) is
moved a layer further in, and the layers beyond it with it, so links run between rows rather than
along one. Within a layer, points are ordered by the mean place of their neighbours in the
nearest layer above that holds any (one sweep down and one back up), which keeps links from
crossing where it can. Where more than two links per point run between two layers, the rows
are set further apart (up to twice) to leave their labels room. A layer with ``slices`` (internal nodes ``<link>.<i>``) is one labelled block
unless ``expand_layers=True`` asks for each slice.

Labels are placed, not merely put: each name, detail and link label has a few candidate places
(beside its point; along its link on either side, nearest its zig-zag first) and takes the
cheapest, where overlapping another label or a symbol costs most and a line under the text costs
by its length; the boxes are the renderer's own extents of the texts. A link whose straight line
would pass through another point is bowed round it; a zig-zag avoids crossings and other
zig-zags; a capacitor turns away from the links at its node.

Symbols (our own drawing): a node is a circle beside a capacitor (two plates to a ground bar); a
massless junction is a small dot; a phase-change node has a double ring; a boundary is a shaded
square; a linear link carries a zig-zag resistor, a temperature-dependent one (radiation, a film
correlation) the same zig-zag crossed by an arrow; a source is an arrow into its node, from the
side freest of lines. Drawn with
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


def _short(text: str, width: int = 26, lines: int = 4) -> str:
    """``text`` wrapped to ``width`` characters, at most ``lines`` lines; a text cut short ends
    with an ellipsis (a profile's whole description is in the scenario)."""
    wrapped = textwrap.wrap(text, width) if text else []
    if len(wrapped) > lines:
        wrapped = wrapped[:lines]
        wrapped[-1] = wrapped[-1][:width - 1].rstrip() + "\u2026"
    return "\n".join(wrapped)


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
    """Layer of each point: its link distance from the nearest boundary, then a point linked to
    three or more points of its own layer (a hub, such as the air inside a cabinet between its
    panels) moved one layer further in, so its links run between layers, not along a row."""
    floor: dict = {}
    layer = _distances(g, floor)
    for _ in range(len(g)):
        hub = _row_hub(g, layer)
        if hub is None:
            break
        floor[hub] = layer[hub] + 1
        layer = _distances(g, floor)
    return layer


def _distances(g, floor) -> dict:
    """Link distance of each point from the nearest boundary (a point with no boundary in its
    part of the network counts from its first point), never less than its ``floor``: a
    breadth-first search with lower bounds (Dijkstra's order on whole layers)."""
    import heapq

    import networkx as nx

    order = {p: i for i, p in enumerate(g.nodes)}
    layer: dict = {}
    base = 0
    for comp in nx.connected_components(g):
        comp = sorted(comp, key=order.get)
        starts = [p for p in comp if g.nodes[p]["kind"] == "boundary"]
        offset = 0 if starts else base
        heap = [(offset, order[p], p) for p in (starts or comp[:1])]
        heapq.heapify(heap)
        while heap:
            d, _, p = heapq.heappop(heap)
            if p in layer:
                continue
            layer[p] = d
            for q in g.neighbors(p):
                if q not in layer:
                    heapq.heappush(heap, (max(d + 1, floor.get(q, 0)), order[q], q))
        base = max(layer.values()) + 1
    return layer


def _row_hub(g, layer):
    """The point (no boundary) linked to most points of its own layer, when three or more (two
    are a row of a grid, drawn as it is); the first such in the nearest layer; else None."""
    best, best_key = None, None
    for i, p in enumerate(g.nodes):
        if g.nodes[p]["kind"] == "boundary":
            continue
        same = {q for q in g.neighbors(p) if q != p and layer[q] == layer[p]}
        if len(same) >= 3:
            key = (layer[p], -len(same), i)
            if best_key is None or key < best_key:
                best, best_key = p, key
    return best


def _ordered(g, layer) -> dict:
    """Layers as ordered lists: by the mean place of neighbours in the layers above (the nearest
    of them that has any; places counted from each layer's centre, as drawn), then below."""
    order = list(g.nodes)
    rows: dict[int, list] = {}
    for p in order:
        rows.setdefault(layer[p], []).append(p)
    keys = sorted(rows)

    def sweep(seq):
        for n, k in enumerate(seq[1:], 1):
            done = seq[:n][::-1]        # the layers already ordered, nearest first
            place = [{p: i - 0.5 * (len(rows[j]) - 1) for i, p in enumerate(rows[j])}
                     for j in done]

            def centre(p):
                for at in place:
                    near = [at[q] for q in g.neighbors(p) if q in at]
                    if near:
                        return sum(near) / len(near)
                return math.inf
            rows[k].sort(key=lambda p: (centre(p), order.index(p)))
    sweep(keys)
    sweep(keys[::-1])
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
    # layers one step apart, more where many links run between two of them
    steps = _layer_steps(g, rows)
    layer_of = {q: k for k in rows for q in rows[k]}
    out = {}
    for p, (x, y) in pos.items():
        across, along = y / unit, steps[layer_of[p]]
        out[p] = (across * _DX, -along * _DY) if orientation == "down" else (along * _DX,
                                                                            -across * _DY)
    return out


def _layer_steps(g, rows) -> dict:
    """Place of each layer along the picture, in steps between layers: 1 per band between two
    layers, or half its links per point of its wider layer where that is more (room for their
    labels: more than two links per point), at most 2."""
    keys = list(rows)
    layer = {q: k for k in keys for q in rows[k]}
    spans = [tuple(sorted((layer[a], layer[b]))) for a, b in g.edges() if a != b]
    steps, at = {keys[0]: 0.0}, 0.0
    for k0, k1 in zip(keys, keys[1:]):
        across = sum(1 for lo, hi in spans if lo <= k0 and hi >= k1)
        wider = max(len(rows[k0]), len(rows[k1]))
        at += min(2.0, max(1.0, 0.5 * across / wider))
        steps[k1] = at
    return steps


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


def _capacitor(ax, x, y, r, lines) -> tuple:
    """A capacitor to a ground bar beside a node at (x, y) of radius r [in], pointing the way
    of the fewest lines (right if free, else the nearest free direction); returns its box."""
    pts = np.concatenate(lines) if lines else np.zeros((0, 2))
    best, best_cost = (1.0, 0.0), math.inf
    # eighths of a turn from the right: right, left, then the diagonals, then down and up
    for k, turn in enumerate((0, 4, -1, 1, -3, 3, -2, 2)):
        u = np.array([math.cos(turn * math.pi / 4), math.sin(turn * math.pi / 4)])
        rel = pts - (x, y)
        along, across = rel @ u, np.abs(rel @ np.array([-u[1], u[0]]))
        hits = np.count_nonzero((along > r) & (along < r + 0.44) & (across < 0.1))
        cost = hits + 0.1 * k
        if cost < best_cost:
            best, best_cost = u, cost
    u = np.asarray(best)
    v = np.array([-u[1], u[0]])
    c = np.array([x, y]) + r * u

    def seg(a, b, across_a, across_b, **kw):
        p, q = c + a * u + across_a * v, c + b * u + across_b * v
        ax.plot([p[0], q[0]], [p[1], q[1]], zorder=3, **kw)

    kw = dict(color=_INK, lw=0.9, solid_capstyle="butt")
    seg(0.0, 0.16, 0.0, 0.0, **kw)
    for d in (0.16, 0.22):
        seg(d, d, -0.09, 0.09, color=_INK, lw=1.6)
    seg(0.22, 0.34, 0.0, 0.0, **kw)
    for i, w in enumerate((0.09, 0.06, 0.03)):
        seg(0.34 + 0.035 * i, 0.34 + 0.035 * i, -w, w, color=_INK, lw=0.9)
    corners = np.array([c + a * u + s * v for a in (0.0, 0.42) for s in (-0.1, 0.1)])
    return (*corners.min(axis=0), *corners.max(axis=0))


def _point_candidates(x, y, half, kind, below: bool):
    """Places of a point's name (``below=False``) or detail beside its symbol of half-size
    ``half`` [in]: the usual place first (name above, detail below; a boundary's detail above
    its name), then the sides."""
    if kind == "boundary":
        if below:
            return [(x, y + half + 0.22, "center", "bottom", 0.0),
                    (x - half - 0.1, y, "right", "center", 0.6),
                    (x + half + 0.1, y, "left", "center", 0.6)]
        return [(x, y + half + 0.04, "center", "bottom", 0.0),
                (x - half - 0.08, y + half, "right", "bottom", 0.5),
                (x + half + 0.08, y + half, "left", "bottom", 0.5)]
    if below:
        return [(x, y - half - 0.08, "center", "top", 0.0),
                (x - 0.06, y - half - 0.06, "right", "top", 0.3),
                (x + 0.06, y - half - 0.06, "left", "top", 0.3),
                (x - half - 0.08, y - 0.04, "right", "top", 0.5),
                (x + 0.1, y - half - 0.24, "left", "top", 0.8),
                (x - 0.1, y - half - 0.24, "right", "top", 0.8)]
    return [(x - 0.02, y + half + 0.09, "center", "bottom", 0.0),
            (x - 0.08, y + half + 0.04, "right", "bottom", 0.3),
            (x + 0.08, y + half + 0.04, "left", "bottom", 0.3),
            (x - half - 0.08, y + 0.04, "right", "bottom", 0.5),
            (x + 0.1, y + half + 0.2, "left", "bottom", 0.8),
            (x - 0.1, y + half + 0.2, "right", "bottom", 0.8)]


def _draw_point(ax, p, data, xy, labels, boxes, lines):
    """Draw a point's symbol (its box goes to ``boxes``) and ask for its two labels."""
    from matplotlib.patches import Circle, FancyBboxPatch

    x, y = xy
    kind = data["kind"]
    if kind == "boundary":
        half = 0.2
        ax.add_patch(FancyBboxPatch((x - 0.2, y - 0.2), 0.4, 0.4, boxstyle="square,pad=0",
                                    fc=_BOUNDARY_FILL, ec=_INK, lw=1.1, hatch="////", zorder=4))
        boxes.append((x - 0.2, y - 0.2, x + 0.2, y + 0.2))
    elif kind == "layer":
        half = 0.16
        ax.add_patch(FancyBboxPatch((x - 0.42, y - 0.16), 0.84, 0.32,
                                    boxstyle="round,pad=0,rounding_size=0.04", fc=_BLOCK_FILL,
                                    ec=_INK, lw=1.0, hatch="..", zorder=4))
        boxes.append((x - 0.42, y - 0.16, x + 0.42, y + 0.16))
    elif data.get("capacity", 0.0) > 0:
        half = 0.15 if kind == "node" else 0.09
        ax.add_patch(Circle((x, y), half, fc=_NODE_FILL, ec=_INK, lw=1.1, zorder=4))
        if data.get("phase_change"):
            ax.add_patch(Circle((x, y), half * 0.68, fc="none", ec=_INK, lw=0.8, zorder=5))
        boxes.append((x - half, y - half, x + half, y + half))
        boxes.append(_capacitor(ax, x, y, half, lines))
    else:
        half = 0.05
        ax.add_patch(Circle((x, y), 0.05, fc=_INK, ec=_INK, lw=0.8, zorder=4))
        boxes.append((x - half, y - half, x + half, y + half))
    name = ax.text(x, y, data["label"], fontsize=_FONT + 0.5, fontweight="bold", color=_INK,
                   zorder=6)
    labels.append(_Label(name, _point_candidates(x, y, half, kind, below=False)))
    if data.get("detail"):
        detail = ax.text(x, y, data["detail"], fontsize=_FONT - 0.5, color=_SOFT, zorder=6,
                         linespacing=1.15, ha="center", multialignment="center")
        labels.append(_Label(detail, _point_candidates(x, y, half, kind, below=True)))


def _edge_label(d) -> str:
    r = d["resistance"]
    value = "R depends on T" if d["nonlinear"] and not math.isfinite(r) else f"R {r:.4g} K/W"
    if d["role"] == "slice":
        return value
    return f"{d['link']}\n{value}\n{_short(d['kinds'], 24)}"


def _free_place(pts, lines, marks) -> float:
    """Where along a link its symbol goes: the middle unless another link crosses it there or
    another symbol sits near; then the nearest free fraction of its length."""
    others = np.concatenate(lines) if lines else np.zeros((0, 2))
    best, best_cost = 0.5, math.inf
    for at in (0.5, 0.42, 0.58, 0.34, 0.66, 0.27, 0.73):
        xy = pts[int(at * (len(pts) - 1))]
        near = np.count_nonzero(np.hypot(*(others - xy).T) < 0.3) if len(others) else 0
        gap = min((math.dist(xy, q) for q in marks), default=math.inf)
        cost = abs(at - 0.5) + 0.2 * near + (2.0 if gap < 0.7 else 0.0)
        if cost < best_cost:
            best, best_cost = at, cost
    return best


def _edge_candidates(pts, at, side_first):
    """Places of a link's label: beside its symbol on either side, then further along."""
    seg = np.hypot(*np.diff(pts, axis=0).T)
    total = float(seg.sum()) or 1.0
    tangent = np.gradient(pts, axis=0)
    tangent /= np.maximum(np.hypot(*tangent.T), 1e-12)[:, None]
    out = []
    for shift in (0.0, -0.1, 0.1, -0.2, 0.2, -0.3, 0.3, -0.4, 0.4):
        t = at + shift * min(1.0, 1.75 / total)
        if not 0.1 <= t <= 0.9:
            continue
        i = int(round(t * (len(pts) - 1)))
        normal = np.array([-tangent[i, 1], tangent[i, 0]])
        for k, side in enumerate((side_first, -side_first)):
            n = side * normal
            ha, va = _aligned(n)
            for off in (0.16, 0.28, 0.42):
                x, y = pts[i] + n * off
                out.append((float(x), float(y), ha, va,
                            2.0 * abs(shift) + 0.25 * k + 1.5 * (off - 0.16)))
    return out


def _detour(pos, a, b, m, drawn) -> float:
    """How far [in] the links between a and b bow so they pass no other point and run along no
    link already drawn: 0 (straight, the usual) when they can."""
    others = np.array([q for p, q in pos.items() if p not in (a, b)] or np.zeros((0, 2)))
    earlier = np.concatenate(drawn) if drawn else np.zeros((0, 2))
    best, best_cost = 0.0, math.inf
    for base in (0.0, 0.4, -0.4, 0.7, -0.7, 1.0, -1.0, 1.4, -1.4):
        cost = 0.5 * abs(base)
        for i in range(m):
            pts = _curve(pos[a], pos[b], base + (i - (m - 1) / 2) * 0.8, n=60)
            if len(others):
                gap = np.min(np.hypot(*(pts[:, None, :] - others[None, :, :]).T), axis=0)
                cost += 10.0 * np.count_nonzero(gap < 0.35)
            if len(earlier):
                near = np.min(np.hypot(*(pts[:, None, :] - earlier[None, ::4, :]).T), axis=0)
                cost += 0.5 * np.count_nonzero(near[6:-6] < 0.08)
        if cost < best_cost:
            best, best_cost = base, cost
    return best


def _draw_edges(ax, g, pos, labels, lines, texts):
    groups: dict = {}
    for a, b, k, d in g.edges(keys=True, data=True):
        groups.setdefault(frozenset((a, b)), []).append((a, b, d))
    curves = []
    # links that pass no other point straight are drawn first, so the detours avoid them too
    clear = {key: _detour(pos, *edges[0][:2], len(edges), []) == 0.0
             for key, edges in groups.items()}
    drawn = [_sampled(_curve(pos[e[0][0]], pos[e[0][1]], 0.0)) for key, e in groups.items()
             if clear[key] and len(e) == 1]
    for key, edges in groups.items():
        m = len(edges)
        a, b = edges[0][0], edges[0][1]
        base = 0.0 if clear[key] else _detour(pos, a, b, m, drawn)
        for i, (a, b, d) in enumerate(edges):
            bend = base + (i - (m - 1) / 2) * 0.8
            pts = _curve(pos[a], pos[b], bend)
            curves.append((i, bend, d, pts))
            drawn.append(_sampled(pts))
    sampled = [_sampled(pts) for _, _, _, pts in curves]
    marks: list = []
    for j, (i, bend, d, pts) in enumerate(curves):
        if d["role"] == "connector":
            ax.plot(pts[:, 0], pts[:, 1], color=_INK, lw=1.0, zorder=2)
            lines.append(sampled[j])
            continue
        at = _free_place(pts, sampled[:j] + sampled[j + 1:], marks)
        path, mid, tangent, normal = _zigzag(pts, at)
        marks.append(tuple(mid))
        lines.append(_sampled(path))
        colour = _NONLINEAR if d["nonlinear"] else _INK
        ax.plot(path[:, 0], path[:, 1], color=colour, lw=1.1, zorder=2,
                solid_joinstyle="miter")
        if d["nonlinear"]:
            diag = 0.22 * (tangent + 1.3 * normal) / np.hypot(*(tangent + 1.3 * normal))
            ax.annotate("", xy=mid + diag, xytext=mid - diag, zorder=3,
                        arrowprops=dict(arrowstyle="-|>", color=colour, lw=0.9,
                                        mutation_scale=7, shrinkA=0, shrinkB=0))
            lines.append(_sampled([mid - diag, mid + diag]))
        # the label first tried on the outer side of a bowed link, else on the right
        side = np.sign(bend) if bend else (1.0 if normal[0] >= 0 else -1.0)
        text = _edge_label(d)
        texts[("link", d["link"], i)] = text
        artist = ax.text(*mid, text, fontsize=_FONT - 0.5, color=colour, zorder=6,
                         linespacing=1.1,
                         bbox=dict(boxstyle="round,pad=0.1", fc=_PAPER, ec="none", alpha=0.75))
        labels.append(_Label(artist, _edge_candidates(pts, at, side)))


#: Directions [deg] a source's arrow may come from, in the order preferred: from the upper left
#: (the usual place), the other diagonals, the sides, then straight above or below.
_SOURCE_TURNS = (135, 45, 225, 315, 180, 0, 90, 270)


def _source_direction(xy, pts, others, taken) -> np.ndarray:
    """The unit vector from a node at ``xy`` to the tail of a source's arrow: the preferred
    direction (:data:`_SOURCE_TURNS`) whose arrow crosses fewest lines ``pts`` and whose
    label's neighbourhood holds fewest lines and points ``others``; not one ``taken``."""
    xy = np.asarray(xy, float)
    best, best_cost = None, math.inf
    for k, turn in enumerate(_SOURCE_TURNS):
        if turn in taken:
            continue
        u = np.array([math.cos(math.radians(turn)), math.sin(math.radians(turn))])
        rel = pts - xy
        along, across = rel @ u, np.abs(rel @ np.array([-u[1], u[0]]))
        on_arrow = np.count_nonzero((along > 0.15) & (along < 0.8) & (across < 0.1))
        zone = xy + 1.3 * u             # about where its label goes, beyond the tail
        near = np.count_nonzero(np.hypot(*(pts - zone).T) < 0.65)
        crowd = np.count_nonzero(np.hypot(*(others - zone).T) < 0.6) if len(others) else 0
        cost = 5.0 * on_arrow + near + 60.0 * crowd + 3.0 * k
        if cost < best_cost:
            best, best_cost = (turn, u), cost
    return best


def _source_candidates(tail, u) -> list:
    """Places of a source's label at its arrow's tail (the arrow coming from ``u``): beyond the
    tail first, then above and below it."""
    sx, sy = tail
    side = "right" if u[0] < -0.1 else ("left" if u[0] > 0.1 else "center")
    dx = {"right": -0.04, "left": 0.04, "center": 0.0}[side]
    first_v = "bottom" if u[1] > 0.1 else ("top" if u[1] < -0.1 else "center")
    dy = {"bottom": 0.05, "top": -0.05, "center": 0.0}[first_v]
    return [(sx + dx, sy + (0.0 if side != "center" else dy), side,
             "center" if side != "center" else first_v, 0.0),
            (sx, sy + 0.05, "center", "bottom", 0.4),
            (sx, sy - 0.05, "center", "top", 0.4),
            (sx + dx, sy + 0.05, side, "bottom", 0.5),
            (sx + dx, sy - 0.05, side, "top", 0.5),
            (sx - dx, sy + 0.05, {"right": "left", "left": "right"}.get(side, "center"),
             "bottom", 0.7)]


def _draw_sources(ax, g, pos, texts, lines, labels):
    """An arrow into its node for each source (and each thermostat), from the side freest of
    lines and other points, its label at the arrow's tail."""
    taken: dict = {}
    kinds = [("source", s) for s in g.graph.get("sources", [])] + \
            [("thermostat", (n, node, "thermostat")) for n, node in g.graph.get("thermostats", [])]
    for what, (name, node, text) in kinds:
        p = ("node", node)
        if p not in pos:
            continue
        x, y = pos[p]
        pts = np.concatenate(lines) if lines else np.zeros((0, 2))
        others = np.array([q for r, q in pos.items() if r != p]).reshape(-1, 2)
        turn, u = _source_direction((x, y), pts, others, taken.setdefault(p, set()))
        taken[p].add(turn)
        tail, head = (x + 0.73 * u[0], y + 0.73 * u[1]), (x + 0.16 * u[0], y + 0.16 * u[1])
        ax.annotate("", xy=head, xytext=tail, zorder=3,
                    arrowprops=dict(arrowstyle="-|>", color=_INK, lw=1.1, mutation_scale=9,
                                    shrinkA=0, shrinkB=0))
        lines.append(_sampled([tail, head]))
        artist = ax.text(*tail, f"{name}\n{text}", fontsize=_FONT - 0.5, color=_INK,
                         zorder=6, linespacing=1.1)
        labels.append(_Label(artist, _source_candidates(tail, u)))
        texts[(what, name)] = f"{name}: {text}"


def draw_network(network, *, expand_layers: bool = False, orientation: str = "down",
                 title: str | None = None) -> Picture:
    """Draw ``network`` (a Network or a Scenario) and return a :class:`Picture`.

    The figure's size follows the network (about 2.7 in between points in a row and 1.75 in
    between rows), so labels stay legible however many points there are; scale it on the page.
    Every label takes the free place nearest its point or its link's symbol (see
    ``_place_labels``). ``orientation``: ``"down"`` (boundaries on top) or ``"right"``
    (boundaries on the left).
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
        texts: dict = {}
        labels: list = []
        lines: list = []
        boxes: list = []
        _draw_edges(ax, g, pos, labels, lines, texts)
        source_labels: list = []
        _draw_sources(ax, g, pos, texts, lines, source_labels)
        point_labels: list = []
        for p, d in g.nodes(data=True):     # after the lines: a capacitor turns away from them
            _draw_point(ax, p, d, pos[p], point_labels, boxes, lines)
            texts[p] = f"{d['label']}: {d.get('detail', '')}"
        # the points' names and details first (each has its usual place), the sources', the links'
        _place_labels(ax, point_labels + source_labels + labels, boxes, lines, ((x0, x1), (y0, y1)))
        if title:
            fig.text(0.02, 1 - 0.2 / (y1 - y0 + head), title, ha="left", va="center",
                     fontsize=_FONT + 2, fontweight="bold", color=_INK)
    return Picture(fig, g, pos, texts, orientation)


# -- label placement ------------------------------------------------------------------------
# Every label has a few candidate places (beside its point, or along its link on either side);
# they are taken greedily, each at the cheapest place: overlapping a label already placed or a
# symbol costs most, a line running under it costs by the length covered, a place away from
# the preferred one costs a little. The boxes are the renderer's own extents of the texts.
# (Force-directed repelling moves a label off its link and adds leader lines; a library that
# places texts around points knows nothing of our symbols; hence this small search.)
_STEP = 0.02            # [in] spacing of the points a line is sampled at for the placement
_PAD = 0.03             # [in] clearance kept around a label


@dataclass
class _Label:
    """A text to place: its artist (made once, moved to the place chosen) and its candidates
    ``(x, y, ha, va, cost)`` in inches."""

    artist: object
    candidates: list


def _sampled(points) -> np.ndarray:
    """A polyline resampled every :data:`_STEP` inches (a count of points in a box is then a
    length)."""
    points = np.asarray(points, float)
    seg = np.hypot(*np.diff(points, axis=0).T)
    s = np.concatenate([[0.0], np.cumsum(seg)])
    if s[-1] == 0:
        return points[:1]
    at = np.linspace(0.0, s[-1], max(int(s[-1] / _STEP), 1) + 1)
    return np.column_stack([np.interp(at, s, points[:, 0]), np.interp(at, s, points[:, 1])])


def _box(x, y, ha, va, w, h) -> tuple:
    """The box (x0, y0, x1, y1) of a text of size w x h anchored at (x, y) with ha/va."""
    x0 = x - w if ha == "right" else (x - 0.5 * w if ha == "center" else x)
    y0 = y - h if va == "top" else (y - 0.5 * h if va == "center" else y)
    return (x0 - _PAD, y0 - _PAD, x0 + w + _PAD, y0 + h + _PAD)


def _aligned(direction) -> tuple:
    """Alignment of a text set off from its anchor towards ``direction`` (a unit vector)."""
    dx, dy = direction
    if abs(dx) >= 0.38:
        return ("left" if dx > 0 else "right"), "center"
    return "center", ("bottom" if dy > 0 else "top")


def _place_labels(ax, labels, boxes, lines, limits, rounds: int = 3) -> None:
    """Move each label's artist to its cheapest candidate (see the comment above): taken
    greedily in order, then each label placed again among all the others while that lowers the
    total (at most ``rounds`` times over)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    from .plotting.style import fallback_fonts

    fig = ax.figure
    renderer = FigureCanvasAgg(fig).get_renderer()
    with fallback_fonts(fig):
        extents = [lab.artist.get_window_extent(renderer) for lab in labels]
    pts = np.concatenate(lines) if lines else np.zeros((0, 2))
    fixed = np.asarray(boxes, dtype=float).reshape(-1, 4)
    (lx0, lx1), (ly0, ly1) = limits
    options = []          # per label: (fixed cost of each candidate, its box) as arrays
    for lab, ext in zip(labels, extents):
        w, h = ext.width / fig.dpi, ext.height / fig.dpi
        b = np.array([_box(x, y, ha, va, w, h) for x, y, ha, va, _ in lab.candidates])
        cost = np.array([c[4] for c in lab.candidates], dtype=float) + _clash(b, fixed)
        inside = ((pts[None, :, 0] > b[:, None, 0]) & (pts[None, :, 0] < b[:, None, 2])
                  & (pts[None, :, 1] > b[:, None, 1]) & (pts[None, :, 1] < b[:, None, 3]))
        cost += 8.0 * _STEP * inside.sum(axis=1)             # [in] of line under the text
        cost += 2.0 * (np.maximum(0.0, lx0 - b[:, 0]) + np.maximum(0.0, b[:, 2] - lx1)
                       + np.maximum(0.0, ly0 - b[:, 1]) + np.maximum(0.0, b[:, 3] - ly1))
        options.append((cost, b))
    chosen = np.full(len(labels), -1)
    for sweep in range(rounds + 1):
        moved = False
        for i, (cost, b) in enumerate(options):
            others = np.array([options[j][1][c] for j, c in enumerate(chosen)
                               if c >= 0 and j != i]).reshape(-1, 4)
            costs = cost + _clash(b, others)
            best = int(np.argmin(costs))
            if chosen[i] < 0 or costs[best] < costs[chosen[i]] - 1e-9:
                moved = moved or chosen[i] >= 0
                chosen[i] = best
        if sweep and not moved:
            break
    for lab, c in zip(labels, chosen):
        x, y, ha, va, _ = lab.candidates[c]
        lab.artist.set_position((x, y))
        lab.artist.set_ha(ha)
        lab.artist.set_va(va)


def _clash(candidates: np.ndarray, placed: np.ndarray) -> np.ndarray:
    """What overlapping the boxes ``placed`` (m x 4) costs each of the boxes ``candidates``
    (k x 4): a fixed price per box touched, and more by the area [in^2] covered."""
    if not len(placed):
        return np.zeros(len(candidates))
    c, q = candidates[:, None, :], placed[None, :, :]
    area = (np.clip(np.minimum(c[..., 2], q[..., 2]) - np.maximum(c[..., 0], q[..., 0]), 0, None)
            * np.clip(np.minimum(c[..., 3], q[..., 3]) - np.maximum(c[..., 1], q[..., 1]), 0,
                      None))
    return (np.where(area > 0, 60.0 + 400.0 * area, 0.0)).sum(axis=1)


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
