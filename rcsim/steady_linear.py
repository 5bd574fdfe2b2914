"""The linear steady state of an assembled network: ``K T = B u + P s``.

Solvers of every level use it: the steady state of a linear network, the first guess of the
Newton iteration for a nonlinear one, the starting temperatures of nodes without a given value.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse.linalg as spla

from .errors import NetworkError

__all__ = ["check_grounded", "steady_temperatures"]


def check_grounded(asm, what: str = "the steady state") -> None:
    """Raise when a group of nodes has no path to any boundary."""
    groups = asm.floating_groups()
    if groups:
        names = [asm.node_names[i] for i in groups[0]]
        shown = ", ".join(repr(n) for n in names[:6]) + (" ..." if len(names) > 6 else "")
        subject = f"nodes {shown} have" if len(names) > 1 else f"node {shown} has"
        raise NetworkError(f"{subject} no path to any boundary, so {what} is undefined",
                           None, "link them to a boundary, or start from given temperatures")


def steady_temperatures(asm, u: np.ndarray, s: np.ndarray) -> np.ndarray:
    """Solve K T = B u + P s for the node temperatures [degC] (linear part of the network),
    with boundary temperatures ``u`` [degC] and source powers ``s`` [W]."""
    check_grounded(asm)
    rhs = asm.B @ u + asm.P @ s
    if asm.n_nodes == 1:
        return np.atleast_1d(rhs / asm.K.toarray()[0, 0])
    return np.atleast_1d(spla.spsolve(asm.K.tocsc(), rhs))
