"""Initial node temperatures: given, steady, or (resolved by the solvers) periodic."""

from __future__ import annotations

import numpy as np

from ..base import suggest
from ..errors import InputError, NetworkError
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
    """Node temperatures at t = 0 [degC] from the nodes' ``initial`` values (and ``overrides``,
    {node name: temperature}), with boundary temperatures ``u0`` [degC]. ``network`` is not
    used (kept for older callers); everything comes from the assembly ``asm``.

    Every node without a given value — internal nodes of massive layers, massless junctions —
    starts on the steady profile between the given ones: with the nodes that have a value held
    there and the boundaries at their t = 0 values, the rest solve K_UU T_U = -K_UK T_K + B_U u0.
    A massive user node without a value is an error.
    """
    import scipy.sparse.linalg as spla

    T = asm.initial.copy()
    for name, value in overrides.items():
        if name in asm.node_names:
            T[asm.node_names.index(name)] = to_si(value, "temperature", f"initial.{name}")
        else:
            raise InputError(f"unknown node {name!r}", "initial",
                             suggest(name, asm.node_names))
    n_user = asm.n_user_nodes
    missing = [i for i in range(n_user) if np.isnan(T[i]) and asm.capacity[i] > 0]
    if missing:
        name = asm.node_names[missing[0]]
        raise NetworkError(f"node {name!r} has no initial temperature", f"nodes.{name}.initial",
                           "give initial = '...' or start from initial = 'steady' or 'periodic'")
    massless = asm.capacity == 0
    given = ~np.isnan(T) & ~massless
    unknown = np.flatnonzero(~given)
    if unknown.size == 0:
        return T
    known = np.flatnonzero(given)
    K = asm.K.tocsr()
    rhs = asm.B[unknown] @ u0 - K[unknown][:, known] @ T[known]
    Kuu = K[unknown][:, unknown].tocsc()
    try:
        sol = spla.spsolve(Kuu, rhs) if unknown.size > 1 else rhs / Kuu.toarray()[0, 0]
    except RuntimeError:
        sol = np.full(unknown.size, np.nan)
    sol = np.atleast_1d(np.asarray(sol, dtype=float))
    if not np.all(np.isfinite(sol)):
        # a group of such nodes touches neither a given node nor a boundary
        bad = asm.node_names[int(unknown[int(np.argmax(~np.isfinite(sol)))])]
        raise NetworkError(f"cannot set the initial temperature of {bad!r}: it is linked to no "
                           "node with a given temperature and no boundary", None,
                           "give a neighbouring node an initial temperature")
    T[unknown] = sol
    return T
