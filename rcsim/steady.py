"""Steady state of a network: node temperatures, link heat flows, equivalent resistance.

The linear steady state solves the sparse system ``K T = B u + P s`` (boundaries and sources at
their values at the chosen time). Networks with nonlinear elements are solved by Newton's method
(:mod:`rcsim.nonlinear`), starting from the linear solution. The linear solve itself lives in
:mod:`rcsim.steady_linear` (re-exported here).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from .base import suggest
from .errors import NetworkError
from .nonlinear import steady_newton
from .steady_linear import check_grounded, steady_temperatures

__all__ = ["SteadyResult", "solve_steady", "steady_temperatures", "equivalent_resistance",
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
    asm = network.assemble()
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


def equivalent_resistance(network, a: str, b: str) -> float:
    """Equivalent resistance [K/W] between two points (nodes or boundaries).

    Defined as the temperature difference between ``a`` and ``b`` per watt injected at ``a`` and
    drawn at ``b``, with every other boundary and source disconnected (other boundaries become
    plain junctions). For a wall between an inside and an outside boundary it is the total series
    resistance; parallel paths combine as 1/R = sum(1/R_i).
    """
    asm = network.assemble()
    names = asm.node_names + asm.boundary_names
    index = {n: i for i, n in enumerate(names)}
    for p in (a, b):
        if p not in index:
            raise NetworkError(f"unknown node or boundary {p!r}", None, suggest(p, names))
    if a == b:
        raise NetworkError("the two points are the same", None)
    n = len(names)
    g = asm.seg_g
    rows = np.concatenate([asm.seg_a, asm.seg_b, asm.seg_a, asm.seg_b])
    cols = np.concatenate([asm.seg_a, asm.seg_b, asm.seg_b, asm.seg_a])
    vals = np.concatenate([g, g, -g, -g])
    lap = sp.csr_matrix((vals, (rows, cols)), shape=(n, n))
    ia, ib = index[a], index[b]
    from scipy.sparse.csgraph import connected_components

    _, labels = connected_components(abs(lap), directed=False)
    if labels[ia] != labels[ib]:
        raise NetworkError(f"no path between {a!r} and {b!r}", None)
    keep = np.flatnonzero(labels == labels[ia])
    keep = keep[keep != ib]
    sub = lap[keep][:, keep].tocsc()
    rhs = np.zeros(keep.size)
    pos = int(np.flatnonzero(keep == ia)[0])
    rhs[pos] = 1.0
    t = spla.spsolve(sub, rhs) if keep.size > 1 else rhs / sub.toarray()[0, 0]
    return float(np.atleast_1d(t)[pos])


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
        init = "-" if node.initial is None else f"{node.initial:g} degC"
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
        u = link.u_value
        u_text = f"  U = {u:.4g} W/(m^2*K)" if u is not None else ""
        c_text = f"  C = {link.capacity:.4g} J/K" if link.capacity else ""
        lines.append(f"  {name:<{width}}  {link.a} -> {link.b}  R = {link.resistance:.5g} K/W"
                     f"{u_text}{c_text}")
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
