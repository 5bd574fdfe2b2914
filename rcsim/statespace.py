"""State-space form of an assembled network, with massless nodes eliminated.

Nodes split into *massive* ones (C > 0, the states) and *massless* junctions (C = 0). The massless
temperatures follow algebraically from the states and the inputs, so they are eliminated exactly
(a Schur complement, often called Kron reduction)::

    C_m dT_m/dt = -K_eff T_m + E w(t),      w = [u (boundaries); s (sources)]
    T_z = R T_m + D w

with ``K_eff = K_mm - K_mz K_zz^-1 K_zm`` and ``E = [B_m | P_m] - K_mz K_zz^-1 [B_z | P_z]``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from .errors import NetworkError

__all__ = ["StateSpace", "state_space"]


@dataclass
class StateSpace:
    """Reduced linear system. Indices refer to ``asm.node_names``."""

    massive: np.ndarray          # node indices of the states
    massless: np.ndarray         # node indices eliminated
    C: np.ndarray                # capacities of the states [J/K]
    K: sp.csr_matrix             # K_eff (n_m x n_m)
    E: sp.csr_matrix             # input matrix (n_m x (M + S))
    R: np.ndarray | sp.spmatrix  # massless temperatures from states (n_z x n_m), dense
    D: np.ndarray                # massless temperatures from inputs (n_z x (M + S))
    n_inputs: int

    @property
    def n(self) -> int:
        return self.massive.size

    @property
    def state_of(self) -> dict:
        """{node index: position among the states} for the massive nodes."""
        return {int(i): p for p, i in enumerate(self.massive)}

    @property
    def eliminated_of(self) -> dict:
        """{node index: row of R and D} for the massless nodes."""
        return {int(i): q for q, i in enumerate(self.massless)}

    def node_temperatures(self, Tm: np.ndarray, w: np.ndarray, n_nodes: int) -> np.ndarray:
        """Full node temperatures (..., N) from states (..., n_m) and inputs (..., M+S)."""
        out = np.empty(Tm.shape[:-1] + (n_nodes,))
        out[..., self.massive] = Tm
        if self.massless.size:
            out[..., self.massless] = Tm @ self.R.T + w @ self.D.T
        return out


def state_space(asm) -> StateSpace:
    """Build the reduced system of ``asm`` (kept in its cache, ``asm.cache.structure``)."""
    cached = asm.cache.structure.state_space
    if cached is not None:
        return cached
    cap = asm.capacity
    massive = np.flatnonzero(cap > 0)
    massless = np.flatnonzero(cap == 0)
    if massive.size == 0:
        raise NetworkError("no node has a heat capacity, so nothing changes with time", None,
                           "give nodes a capacity (or use the steady state)")
    K = asm.K.tocsr()
    # B and P side by side (no sources: B alone, without scipy's ~40 us of stacking)
    BP = sp.hstack([asm.B, asm.P], format="csr") if asm.P.shape[1] else asm.B.tocsr(copy=True)
    n_in = BP.shape[1]
    if massless.size:
        Kmm = K[massive][:, massive]
        Em = BP[massive]
    else:                   # every node a state: no selection (~60 us of scipy indexing)
        Kmm, Em = K.copy(), BP
    if massless.size:
        for idx in asm.phase_change:
            if idx in set(massless.tolist()):  # pragma: no cover - phase nodes have mass
                raise NetworkError("a phase-change node needs a mass", None)
        Kzz = K[massless][:, massless].tocsc()
        Kzm = K[massless][:, massive]
        Kmz = K[massive][:, massless]
        Ez = BP[massless]
        _check_massless(asm, Kzz, massless)
        lu = spla.splu(Kzz)
        # R = -Kzz^-1 Kzm ; D = Kzz^-1 Ez  (dense: massless junctions are few in practice)
        R = -lu.solve(Kzm.toarray()) if Kzm.shape[1] else np.zeros((massless.size, 0))
        D = lu.solve(Ez.toarray()) if n_in else np.zeros((massless.size, 0))
        K_eff = (Kmm + sp.csr_matrix(Kmz @ R)).tocsr()
        E = (Em - sp.csr_matrix(Kmz @ D)).tocsr()
        K_eff = 0.5 * (K_eff + K_eff.T)  # symmetric in exact arithmetic; remove rounding
        K_eff.eliminate_zeros()
    else:
        R = np.zeros((0, massive.size))
        D = np.zeros((0, n_in))
        K_eff, E = Kmm.tocsr(), Em.tocsr()
    ss = StateSpace(massive, massless, cap[massive].copy(), K_eff, E, R, D, n_in)
    asm.cache.structure.state_space = ss
    return ss


def _check_massless(asm, Kzz, massless) -> None:
    """Every group of massless nodes must touch a massive node or a boundary."""
    from scipy.sparse.csgraph import connected_components

    ncomp, labels = connected_components(abs(Kzz), directed=False)
    diag = Kzz.diagonal()
    in_group = np.asarray(abs(Kzz).sum(axis=1)).ravel() - np.abs(diag)
    # a massless node leaks out of its group when its total conductance exceeds its couplings
    # inside the group (the rest goes to massive neighbours or boundaries)
    leak = diag - in_group > 1e-12 * np.maximum(diag, 1e-300)
    leaks_per_group = np.bincount(labels, weights=leak.astype(float), minlength=ncomp)
    closed = np.flatnonzero(leaks_per_group == 0)
    if closed.size:
        members = np.flatnonzero(labels == closed[0])
        names = [asm.node_names[massless[i]] for i in members[:5]]
        raise NetworkError(f"massless node(s) {', '.join(map(repr, names))} have no path to a "
                           "node with capacity or a boundary", None,
                           "give one of them a capacity or link it")
