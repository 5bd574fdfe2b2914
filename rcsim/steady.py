"""Steady state of a network: node temperatures, link heat flows, equivalent resistance.

The linear steady state solves the sparse system ``K T = B u + P s`` (boundaries and sources at
their values at the chosen time). Networks with nonlinear elements are solved by Newton's method
(:mod:`rcsim.nonlinear`), starting from the linear solution. The linear solve itself lives in
:mod:`rcsim.steady_linear` (re-exported here).
"""

from __future__ import annotations

import heapq
import math
from dataclasses import dataclass

import numpy as np
import pandas as pd
import scipy.sparse as sp

from .base import suggest
from .errors import NetworkError
from .nonlinear import steady_newton
from .steady_linear import check_grounded, steady_temperatures
from .summaries import area_conductance_text, initial_text

__all__ = ["SteadyResult", "solve_steady", "steady_temperatures", "equivalent_resistance",
           "secant_conductances", "link_resistances",
           "network_summary", "check_grounded"]


@dataclass
class SteadyResult:
    """Steady-state temperatures and flows.

    Attributes
    ----------
    temperatures : pandas.Series
        Node temperatures [degC] (internal nodes of massive layers included).
    heat_flows : pandas.Series
        Heat flow at the first end of each link [W], positive from first to second point.
    boundary_temperatures : pandas.Series
        Boundary temperatures used [degC].
    source_powers : pandas.Series
        Source powers used [W].
    """

    temperatures: pd.Series
    heat_flows: pd.Series
    boundary_temperatures: pd.Series
    source_powers: pd.Series
    solver: str = "linear"

    def table(self) -> pd.DataFrame:
        """Temperatures of nodes and boundaries in one table."""
        rows = [(n, "node", t) for n, t in self.temperatures.items()]
        rows += [(n, "boundary", t) for n, t in self.boundary_temperatures.items()]
        return pd.DataFrame(rows, columns=["name", "kind", "temperature [degC]"]).set_index("name")


def solve_steady(network, at: float = 0.0) -> SteadyResult:
    """Steady state of ``network`` with boundaries and sources at their values at time ``at``."""
    asm = network.assemble().at_time(float(at))   # conductances that vary: their value at `at`
    u = asm.boundary_values(float(at))
    s = asm.source_values(float(at))
    solver = "linear"
    thermostats = list(network.thermostats.values())
    if asm.nl is None and not thermostats:
        temps = steady_temperatures(asm, u, s)
    else:
        temps = steady_newton(asm, u, s, thermostats)
        solver = "newton"
    flows = asm.link_flows(temps, u)
    return SteadyResult(
        temperatures=pd.Series(temps, index=asm.node_names, name="temperature [degC]"),
        heat_flows=pd.Series(flows, index=asm.link_names, name="heat flow [W]"),
        boundary_temperatures=pd.Series(u, index=asm.boundary_names, name="temperature [degC]"),
        source_powers=pd.Series(s, index=asm.source_names, name="power [W]"),
        solver=solver,
    )


def secant_conductances(asm, T: np.ndarray, u: np.ndarray) -> np.ndarray:
    """Conductance of every segment [W/K] at node temperatures ``T`` and boundary temperatures
    ``u``: a nonlinear segment (radiation, a film correlation, with the linear parts in series
    with it) at its *secant* value q / (T_a - T_b) there, its tangent where the two ends are
    within 1e-6 K of each other (where rounding would swamp q)."""
    seg_g = np.asarray(asm.seg_g, dtype=float).copy()
    if asm.nl is None:
        return seg_g
    points = np.concatenate([np.asarray(T, dtype=float), np.asarray(u, dtype=float)])
    s = asm.nl.seg
    ta, tb = points[asm.seg_a[s]], points[asm.seg_b[s]]
    q, da, db = asm.nl.solve(ta, tb)
    dT = ta - tb
    close = np.abs(dT) < 1e-6
    seg_g[s] = np.where(close, 0.5 * (da - db), q / np.where(close, 1.0, dT))
    return seg_g


def link_resistances(network, result: "SteadyResult", at: float = 0.0) -> pd.Series:
    """Resistance of every link [K/W] in the steady state ``result`` (boundaries at ``at`` [s]):
    its own for a linear link; for a link with a nonlinear part the sum over its segments of
    their *secant* resistances (T_a - T_b) / q in that state (:func:`secant_conductances`:
    the tangent where no temperature difference drives it)."""
    asm = network.assemble(check=False).at_time(float(at))
    T = result.temperatures.reindex(asm.node_names).to_numpy(dtype=float)
    u = result.boundary_temperatures.reindex(asm.boundary_names).to_numpy(dtype=float)
    seg_r = 1.0 / secant_conductances(asm, T, u)
    out = {}
    for k, name in enumerate(asm.link_names):
        link = network.links[name]
        out[name] = (float(np.sum(seg_r[asm.link_first_seg[k]:asm.link_last_seg[k] + 1]))
                     if link.is_nonlinear else link.resistance)
    return pd.Series(out, name="resistance [K/W]", dtype=float)


def equivalent_resistance(network, a: str, b: str, at: float = 0.0) -> float:
    """Equivalent resistance [K/W] between two points (nodes or boundaries).

    Defined as the temperature difference between ``a`` and ``b`` per watt injected at ``a`` and
    drawn at ``b``, with every other boundary and source disconnected (other boundaries become
    plain junctions). For a wall between an inside and an outside boundary it is the total series
    resistance; parallel paths combine as 1/R = sum(1/R_i).

    Every other point is eliminated in turn by the star-mesh transformation (a point k with
    conductances g_ki to its neighbours becomes conductances g_ki g_kj / sum_l g_kl between each
    pair of them; Kron reduction written on the conductances): only sums, products and quotients
    of positive numbers, no difference, so the result is exact to a few roundings however
    stiff some links are next to others (series and parallel links reduce to their closed forms).

    A nonlinear link (radiation, a film correlation) counts with its secant conductance
    q / (T_a - T_b) in the network's steady state with boundaries and sources at time ``at`` [s]
    (:func:`secant_conductances`); conductances that vary in time count with their value then.
    """
    asm = network.assemble(check=False).at_time(float(at))   # stiff links are no trouble here
    names = asm.node_names + asm.boundary_names
    index = {n: i for i, n in enumerate(names)}
    for p in (a, b):
        if p not in index:
            raise NetworkError(f"unknown node or boundary {p!r}", None, suggest(p, names))
    if a == b:
        raise NetworkError("the two points are the same", None)
    n = len(names)
    g = np.asarray(asm.seg_g, dtype=float)
    if asm.nl is not None:
        u = asm.boundary_values(float(at))
        T = steady_newton(asm, u, asm.source_values(float(at)),
                          list(network.thermostats.values()))
        g = secant_conductances(asm, T, u)
    use = np.isfinite(g) & (g > 0) & (asm.seg_a != asm.seg_b)
    lo = np.minimum(asm.seg_a, asm.seg_b)[use]
    hi = np.maximum(asm.seg_a, asm.seg_b)[use]
    pairs = sp.coo_matrix((g[use], (lo, hi)), shape=(n, n)).tocsr()   # parallel links summed
    pairs.sum_duplicates()
    from scipy.sparse.csgraph import connected_components

    _, labels = connected_components(pairs, directed=False)
    ia, ib = index[a], index[b]
    if labels[ia] != labels[ib]:
        raise NetworkError(f"no path between {a!r} and {b!r}", None)
    coo = pairs.tocoo()
    inside = labels[coo.row] == labels[ia]
    return 1.0 / _star_mesh_to_pair(coo.row[inside], coo.col[inside], coo.data[inside], ia, ib)


def _star_mesh_to_pair(rows, cols, values, ia: int, ib: int) -> float:
    """The conductance [W/K] left between ``ia`` and ``ib`` once every other point of the
    connected graph (edges ``rows``-``cols`` of conductances ``values``) is eliminated by the
    star-mesh transformation, the point with fewest neighbours first."""
    adj: dict[int, dict[int, float]] = {}
    for i, j, v in zip(rows.tolist(), cols.tolist(), values.tolist()):
        adj.setdefault(i, {})[j] = adj.get(i, {}).get(j, 0.0) + v
        adj.setdefault(j, {})[i] = adj.get(j, {}).get(i, 0.0) + v
    heap = [(len(nb), k) for k, nb in adj.items() if k not in (ia, ib)]
    heapq.heapify(heap)
    gone = set()
    while heap:
        degree, k = heapq.heappop(heap)
        if k in gone or degree != len(adj[k]):
            continue                                   # stale entry
        gone.add(k)
        star = adj.pop(k)
        total = math.fsum(star.values())
        items = list(star.items())
        for i, _ in items:
            del adj[i][k]
        for x, (i, gi) in enumerate(items):
            for j, gj in items[x + 1:]:
                w = gi * gj / total
                adj[i][j] = adj[i].get(j, 0.0) + w
                adj[j][i] = adj[j].get(i, 0.0) + w
        for i, _ in items:
            if i not in (ia, ib):
                heapq.heappush(heap, (len(adj[i]), i))
    return adj[ia][ib]


def network_summary(network) -> str:
    """Plain-text tables of nodes, boundaries, links and sources."""
    asm = network.assemble()
    lines = []
    title = network.title or "network"
    lines.append(f"{title}: {len(network.nodes)} node(s) "
                 f"(+{asm.n_nodes - len(network.nodes)} internal), "
                 f"{len(network.boundaries)} boundary(ies), {len(network.links)} link(s), "
                 f"{len(network.sources)} source(s)")
    lines.append("")
    lines.append("nodes")
    width = max([len(n) for n in asm.node_names] + [4])
    for name, node in network.nodes.items():
        init = initial_text(node)
        extra = "  phase change" if node.phase_change is not None else ""
        lines.append(f"  {name:<{width}}  C = {node.capacity:>12.5g} J/K  initial {init}{extra}")
    internal = asm.n_nodes - len(network.nodes)
    if internal:
        lines.append(f"  ({internal} internal nodes of massive layers, named <link>.<i>)")
    lines.append("")
    lines.append("boundaries")
    for name, b in network.boundaries.items():
        lines.append(f"  {name:<{width}}  {b.profile.describe()}")
    lines.append("")
    lines.append("links")
    for name, link in network.links.items():
        u_text = area_conductance_text(link)
        u_text = f"  {u_text}" if u_text else ""
        c_text = f"  C = {link.capacity:.4g} J/K" if link.capacity else ""
        r_text = ("R nonlinear (depends on the temperatures)" if link.is_nonlinear
                  else f"R = {link.resistance:.5g} K/W")
        lines.append(f"  {name:<{width}}  {link.a} -> {link.b}  {r_text}{u_text}{c_text}")
        if len(link.parts) > 1 or link.parts[0].kind not in ("resistance", "conductance"):
            for part in link.parts:
                lines.append(f"      {part.describe()}")
    if network.sources:
        lines.append("")
        lines.append("sources")
        for name, s in network.sources.items():
            lines.append(f"  {name:<{width}}  into {s.node}: {s.profile.describe()}")
    if network.limits:
        lines.append("")
        lines.append("limits")
        for name, lim in network.limits.items():
            lo = "-" if lim.min is None else f"{lim.min:g}"
            hi = "-" if lim.max is None else f"{lim.max:g}"
            lines.append(f"  {name:<{width}}  min {lo} degC, max {hi} degC")
    return "\n".join(lines)
