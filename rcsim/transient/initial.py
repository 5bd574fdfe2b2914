"""Initial node temperatures: given, steady, or (resolved by the solvers) periodic."""

from __future__ import annotations

import numpy as np

from ..errors import InputError, NetworkError
from ..materials import suggest
from ..units import to_si

__all__ = ["given_temperatures", "resolve_initial_option"]


def resolve_initial_option(initial):
    """Split the ``initial`` argument into (mode, overrides dict)."""
    if initial is None or initial == "given":
        return "given", {}
    if isinstance(initial, str):
        if initial in ("steady", "periodic"):
            return initial, {}
        raise InputError(f"initial must be 'given', 'steady', 'periodic' or a mapping of node "
                         f"temperatures, got {initial!r}", "initial")
    if isinstance(initial, dict):
        return "given", dict(initial)
    raise InputError(f"initial must be 'given', 'steady', 'periodic' or a mapping, got "
                     f"{type(initial).__name__}", "initial")


def given_temperatures(network, asm, overrides: dict, u0: np.ndarray) -> np.ndarray:
    """Node temperatures at t = 0 from the nodes' ``initial`` values (and overrides).

    Internal nodes of massive layers without a value are interpolated along their link's
    resistance between the two ends (the steady profile through the layer). Massless nodes do not
    need one. A massive user node without a value is an error.
    """
    T = asm.initial.copy()
    for name, value in overrides.items():
        if name in asm.node_names:
            T[asm.node_names.index(name)] = to_si(value, "temperature", f"initial.{name}")
        else:
            raise InputError(f"unknown node {name!r}", "initial",
                             suggest(name, asm.node_names))
    n_user = len(network.nodes)
    n = asm.n_nodes
    missing = [i for i in range(n_user) if np.isnan(T[i]) and asm.capacity[i] > 0]
    if missing:
        name = asm.node_names[missing[0]]
        raise NetworkError(f"node {name!r} has no initial temperature", f"nodes.{name}.initial",
                           "give initial = '...' or start from initial = 'steady' or 'periodic'")
    # internal nodes: interpolate along each link's chain of segments
    for li, lname in enumerate(asm.link_names):
        s0, s1 = int(asm.link_first_seg[li]), int(asm.link_last_seg[li])
        if s1 == s0:
            continue
        inner = asm.seg_b[s0:s1]                       # internal node of each segment but the last
        if not np.isnan(T[inner]).any():
            continue
        a, b = int(asm.seg_a[s0]), int(asm.seg_b[s1])
        ta = T[a] if a < n else u0[a - n]
        tb = T[b] if b < n else u0[b - n]
        if np.isnan(ta) or np.isnan(tb):
            ta = tb if np.isnan(ta) else ta
            tb = ta if np.isnan(tb) else tb
        if np.isnan(ta):
            raise NetworkError(f"cannot set the initial temperatures inside link {lname!r}: "
                               "neither end has one", f"links.{lname}",
                               "give its end nodes an initial temperature")
        r = 1.0 / asm.seg_g[s0:s1 + 1]
        frac = np.cumsum(r)[:-1] / r.sum()
        fill = np.isnan(T[inner])
        T[inner[fill]] = (ta + (tb - ta) * frac)[fill]
    # massless nodes get their algebraic value later; keep NaN out of the arrays
    T[np.isnan(T)] = 0.0
    return T
