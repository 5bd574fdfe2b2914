"""Modes of the linear network: the generalised symmetric eigenproblem K v = lambda C v.

Each mode decays as exp(-t/tau) with time constant tau = 1/lambda. With the eigenvectors scaled so
that V^T C V = I, the participation of node i in mode j, C_i V_ij^2, sums to one over the nodes:
it is the share of the mode's stored energy held by that node.

Groups of nodes with no path to a boundary give modes with lambda = 0 (tau = inf): their mean
temperature only changes with the heat put in.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np
import pandas as pd
import scipy.linalg as la

from .errors import NetworkError, RcsimError, RcsimWarning
from .nonlinear import linearised, steady_newton
from .statespace import state_space

__all__ = ["Modes", "modal_decomposition", "time_constants", "modes_table", "DENSE_LIMIT",
           "linear_assembled", "time_constants_at"]

#: Above this many states the dense eigen-decomposition is not attempted.
DENSE_LIMIT = 3000


@dataclass
class Modes:
    """Modal decomposition of the reduced linear system (see :mod:`rcsim.statespace`)."""

    eigenvalues: np.ndarray  # lambda [1/s], ascending (slowest first); exact zeros for floating
    V: np.ndarray            # (n, n) eigenvectors as columns, V^T C V = I
    n_floating: int

    @property
    def time_constants(self) -> np.ndarray:
        with np.errstate(divide="ignore"):
            return np.where(self.eigenvalues > 0, 1.0 / np.maximum(self.eigenvalues, 1e-300),
                            np.inf)


def modal_decomposition(asm) -> Modes:
    """Dense eigen-decomposition of the reduced system of ``asm`` (kept in its cache,
    ``asm.cache.structure``)."""
    cached = asm.cache.structure.modes
    if cached is not None:
        return cached
    ss = state_space(asm)
    if ss.n > DENSE_LIMIT:
        raise NetworkError(f"{ss.n} states are too many for the dense modal decomposition "
                           f"(limit {DENSE_LIMIT})", None, "use the stiff solver")
    inv_sqrt_c = 1.0 / np.sqrt(ss.C)
    S = ss.K.toarray() * inv_sqrt_c[:, None] * inv_sqrt_c[None, :]
    S = 0.5 * (S + S.T)
    lam, Q = la.eigh(S, check_finite=False)
    V = Q * inv_sqrt_c[:, None]
    n_float = len([g for g in asm.floating_groups() if any(asm.capacity[i] > 0 for i in g)])
    lam = np.maximum(lam, 0.0)
    lam[:n_float] = 0.0
    modes = Modes(lam, V, n_float)
    asm.cache.structure.modes = modes
    return modes


def linear_assembled(network):
    """The network's Assembled; a nonlinear one linearised about its steady state at t = 0."""
    asm = network.assemble()
    if asm.is_linear:
        return asm
    u = asm.boundary_values(0.0)
    T = steady_newton(asm, u, asm.source_values(0.0), list(network.thermostats.values()))
    return linearised(asm, T, u)


_linear_assembled = linear_assembled   # older name


def time_constants_at(asm, thermostats=(), t: float = 0.0):
    """Time constants [s] of the network, longest first; a nonlinear one linearised about the
    steady state under the inputs at time ``t`` [s] (what governs its approach to them), with
    its thermostats' settings. None when they cannot be computed (above :data:`DENSE_LIMIT`
    states, or no steady state).

    A pure function of the assembly, ``t`` and the thermostat settings: kept in the assembly's
    cache, so repeated runs of one network do not solve the same steady state again.
    """
    if state_space(asm).n > DENSE_LIMIT:
        return None
    if asm.is_linear:
        return modal_decomposition(asm).time_constants
    key = (float(t), tuple(thermostats))
    cache = asm.cache.time_constants
    if key in cache:
        return cache[key]
    try:
        u = asm.boundary_values(t)
        with warnings.catch_warnings():  # on/off thermostats are left off here; no news
            warnings.simplefilter("ignore", RcsimWarning)
            T = steady_newton(asm, u, asm.source_values(t), list(thermostats))
        tau = modal_decomposition(linearised(asm, T, u)).time_constants
    except (RcsimError, np.linalg.LinAlgError, ValueError):
        tau = None
    if len(cache) > 16:
        cache.clear()
    cache[key] = tau
    return tau


def time_constants(network) -> np.ndarray:
    """Time constants [s] of all modes, longest first (inf for floating groups).

    A nonlinear network (radiation, film correlations, phase change) is linearised about its
    steady state at t = 0. For networks above :data:`DENSE_LIMIT` states, only the 20 longest are
    computed (sparse shift-invert Lanczos).
    """
    asm = linear_assembled(network)
    ss = state_space(asm)
    if ss.n > DENSE_LIMIT:
        return _longest_sparse(ss, 20)
    return modal_decomposition(asm).time_constants


def _longest_sparse(ss, k: int) -> np.ndarray:
    import scipy.sparse as sp
    import scipy.sparse.linalg as spla

    M = sp.diags(ss.C)
    shift = -1e-9 * float(ss.K.diagonal().min() / ss.C.max())
    lam = spla.eigsh(ss.K.tocsc(), k=min(k, ss.n - 1), M=M.tocsc(), sigma=shift, which="LM",
                     return_eigenvectors=False)
    lam = np.sort(np.maximum(lam, 0.0))
    with np.errstate(divide="ignore"):
        return np.where(lam > 0, 1.0 / np.maximum(lam, 1e-300), np.inf)


def modes_table(network, top: int = 3) -> pd.DataFrame:
    """One row per mode, longest first: time constant and the nodes taking part most.

    Columns: ``time_constant [s]``, ``time_constant [h]``, ``nodes`` (up to ``top`` names with
    their share of the mode's energy, e.g. ``"payload 92%, wall.1 6%"``).
    """
    asm = linear_assembled(network)
    ss = state_space(asm)
    modes = modal_decomposition(asm)
    share = ss.C[:, None] * modes.V ** 2  # (n_states, n_modes), columns sum to 1
    names = np.asarray([asm.node_names[i] for i in ss.massive])
    order = np.argsort(-share, axis=0)[:top]  # top nodes per mode, vectorised
    rows = []
    for j in range(modes.eigenvalues.size):
        parts = [f"{names[i]} {100 * share[i, j]:.0f}%" for i in order[:, j]
                 if share[i, j] >= 0.005]
        rows.append(", ".join(parts))
    tau = modes.time_constants
    return pd.DataFrame({"time_constant [s]": tau, "time_constant [h]": tau / 3600.0,
                         "nodes": rows}, index=pd.RangeIndex(1, tau.size + 1, name="mode"))
