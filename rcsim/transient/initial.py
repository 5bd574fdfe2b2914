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


#: Up to this many nodes the start's linear system is solved dense; above, sparse. Measured on
#: walls of sliced layers: dense 23 / 38 / 88 / 331 us at 10 / 50 / 100 / 200 nodes, sparse
#: 121 / 132 / 146 / 166 us (scipy's row and column selection costs ~100 us by itself).
DENSE_START = 120


def given_temperatures(network, asm, overrides: dict, u0: np.ndarray) -> np.ndarray:
    """Node temperatures at t = 0 [degC] from the nodes' ``initial`` values (and ``overrides``,
    {node name: temperature}), with boundary temperatures ``u0`` [degC]. ``network`` is not
    used (kept for older callers); everything comes from the assembly ``asm``.

    Every node without a given value — internal nodes of massive layers, massless junctions —
    starts on the steady profile between the given ones: with the nodes that have a value held
    there and the boundaries at their t = 0 values, the rest solve K_UU T_U = -K_UK T_K + B_U u0.
    A massive user node without a value is an error, and so is a group of such nodes tied to no
    given node and no boundary (K_UU is then singular: :func:`_check_tied`).
    """
    T = asm.initial.copy()
    for name, value in overrides.items():
        if name in asm.node_names:
            T[asm.node_names.index(name)] = to_si(value, "temperature", f"initial.{name}")
        else:
            raise InputError(f"unknown node {name!r}", "initial",
                             suggest(name, asm.node_names))
    n_user = asm.n_user_nodes
    missing = np.flatnonzero(np.isnan(T[:n_user]) & (asm.capacity[:n_user] > 0))
    if missing.size:
        name = asm.node_names[int(missing[0])]
        raise NetworkError(f"node {name!r} has no initial temperature", f"nodes.{name}.initial",
                           "give initial = '...' or start from initial = 'steady' or 'periodic'")
    given = ~np.isnan(T) & (asm.capacity != 0)
    unknown = np.flatnonzero(~given)
    if unknown.size == 0:
        return T
    _check_tied(asm, given)
    K = asm.K
    rhs = (asm.B @ u0 - K @ np.where(given, T, 0.0))[unknown]
    if asm.n_nodes <= DENSE_START:
        Kuu = K.toarray()[np.ix_(unknown, unknown)]
        sol = np.linalg.solve(Kuu, rhs) if unknown.size > 1 else rhs / Kuu[0, 0]
    else:
        import scipy.sparse.linalg as spla

        Kuu = K.tocsr()[unknown][:, unknown].tocsc()
        try:
            sol = spla.spsolve(Kuu, rhs) if unknown.size > 1 else rhs / Kuu[0, 0]
        except RuntimeError:             # pragma: no cover - ruled out by _check_tied
            sol = np.full(unknown.size, np.nan)
    sol = np.atleast_1d(np.asarray(sol, dtype=float))
    if not np.all(np.isfinite(sol)):     # pragma: no cover - ruled out by _check_tied
        _loose(asm, int(unknown[int(np.argmax(~np.isfinite(sol)))]))
    T[unknown] = sol
    return T


def _check_tied(asm, given: np.ndarray) -> None:
    """NetworkError when a connected group of nodes without a given temperature has no link to
    a node with one or to a boundary: K_UU is then singular (a Laplacian block with no tie),
    while a tie in every group makes it irreducibly diagonally dominant, hence regular.

    Such a group touches no given node, so it is a whole connected group of the network with no
    boundary: one of ``asm.floating_groups()`` (found once per assembly, on the links
    themselves, not left to the rounding of a factorisation)."""
    for group in asm.floating_groups():
        if not given[group].any():
            _loose(asm, group[0])


def _loose(asm, node: int):
    raise NetworkError(f"cannot set the initial temperature of {asm.node_names[node]!r}: it is "
                       "linked to no node with a given temperature and no boundary", None,
                       "give a neighbouring node an initial temperature")
