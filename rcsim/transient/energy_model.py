"""The network in energy form: the state every nonlinear path works on.

The state is the stored energy of each massive node, H [J] (C*T for a sensible node, the enthalpy
for a phase-change node), followed by the cumulative energy that entered through each boundary
link, from each source and from each thermostat. Because the right-hand side is conservative
(every flow leaves one node and enters another), ``sum(H) - energy in`` stays constant, and the
energy balance of a run measures exactly that.

:class:`EnergyModel` gives the right-hand side and its analytic sparse Jacobian (the stiff path),
and the structure the piecewise-exact path builds its regimes from (K, E, C, the maps of the
boundary links' energies).
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from ..statespace import state_space

__all__ = ["EnergyModel", "StiffModel", "jump_times", "DENSE_STATES"]

#: Up to this many solver states the model works with dense matrices.
DENSE_STATES = 120


def jump_times(profiles, t0: float, t1: float) -> np.ndarray:
    """Times in (t0, t1) where some input jumps (left and right values differ)."""
    out = []
    for p in profiles:
        k = p.knots(t0, t1)
        if k.size:
            jumps = k[np.abs(p.value(k) - p.value_left(k)) > 0]
            out.append(jumps)
    if not out:
        return np.empty(0)
    return np.unique(np.concatenate(out))


class EnergyModel:
    """Right-hand side and Jacobian of the reduced network in energy form.

    Nonlinear physics plugs in through ``terms``: objects with ``flows(Tm, w) -> q`` (W into each
    state) and ``jacobian(Tm, w) -> sparse (n x n)`` (d q / d Tm), plus optional ``link_energy``
    contributions. Phase-change nodes plug in through ``phase`` (state index -> PhaseChange).
    """

    def __init__(self, asm, terms=(), phase=None, controllers=()):
        self.asm = asm
        ss = state_space(asm)
        self.ss = ss
        self.n = ss.n
        self.C = ss.C
        self.K = ss.K.tocsr()
        self.E = ss.E.tocsr()
        self.profiles = list(asm.boundary_profiles) + list(asm.source_profiles)
        self.M = asm.n_boundaries
        self.S = len(asm.source_profiles)
        self.terms = list(terms)
        self.phase = dict(phase or {})           # state index -> PhaseChange
        self.controllers = list(controllers)
        self.phase_idx = np.asarray(sorted(self.phase), dtype=np.int64)
        self.boundary_links = asm.boundary_segments().links
        self._setup_link_energy()
        self.nb = len(self.boundary_links)
        self.nc = len(self.controllers)
        self.ny = self.n + self.nb + self.S + self.nc
        self._static_jac = None
        self.nfev = 0      # right-hand side evaluations
        self.njev = 0      # Jacobian evaluations
        # small systems: dense arrays beat sparse bookkeeping (and BDF then uses dense LU)
        self.dense = self.ny <= DENSE_STATES
        self.K_sparse, self.A_end_sparse, self.to_links_sparse = self.K, self.A_end, self.to_links
        if self.dense:
            self.K = self.K.toarray()
            self.E = self.E.toarray()
            self.A_end = self.A_end.toarray()
            self.to_links = self.to_links.toarray()

    # -- structure ---------------------------------------------------------------------------
    def _setup_link_energy(self):
        """Maps giving, per boundary segment, g*(u_b - T_node), summed into its link."""
        asm, ss = self.asm, self.ss
        bseg = asm.boundary_segments()
        seg_col, nodes, bnd, g = bseg.link_column, bseg.node, bseg.boundary, bseg.conductance
        pos_m, pos_z = ss.state_of, ss.eliminated_of
        n_seg = seg_col.size
        rows, cols, vals = [], [], []
        D_end = np.zeros((n_seg, len(self.profiles)))
        for r, node in enumerate(nodes.tolist()):
            if node in pos_m:
                rows.append(r)
                cols.append(pos_m[node])
                vals.append(1.0)
            else:
                Rq = ss.R[pos_z[node]]
                nz = np.flatnonzero(Rq)
                rows.extend([r] * nz.size)
                cols.extend(nz.tolist())
                vals.extend(Rq[nz].tolist())
                D_end[r] = ss.D[pos_z[node]]
        self.A_end = sp.csr_matrix((vals, (rows, cols)), shape=(n_seg, self.n))
        self.D_end = D_end
        self.g_end = g
        self.bcol = bnd
        self.to_links = sp.csr_matrix((np.ones(n_seg), (seg_col, np.arange(n_seg))),
                                      shape=(len(self.boundary_links), n_seg))

    # -- state <-> temperature ---------------------------------------------------------------
    def temperatures(self, H: np.ndarray):
        """Temperatures of the states and dT/dH."""
        T = H / self.C
        dTdH = 1.0 / self.C
        if self.phase:
            T = T.copy()
            dTdH = dTdH.copy()
            for i in self.phase_idx:
                T[i], dTdH[i] = self.phase[i].temperature(H[i])
        return T, dTdH

    def energy_of(self, Tm: np.ndarray) -> np.ndarray:
        H = self.C * Tm
        for i in self.phase_idx:
            H[i] = self.phase[i].enthalpy(Tm[i])
        return H

    def inputs(self, t: float) -> np.ndarray:
        return np.array([p.value(t) for p in self.profiles]) if self.profiles else np.zeros(0)

    def y0(self, Tm0: np.ndarray) -> np.ndarray:
        return np.concatenate([self.energy_of(Tm0), np.zeros(self.nb + self.S + self.nc)])

    # -- dynamics ----------------------------------------------------------------------------
    def rhs(self, t, y):
        self.nfev += 1
        n = self.n
        H = y[:n]
        Tm, _ = self.temperatures(H)
        w = self.inputs(t)
        dH = -(self.K @ Tm) + self.E @ w
        link_extra = np.zeros(self.nb)
        for term in self.terms:
            q, e_links = term.flows(Tm, w)
            dH += q
            if e_links is not None:
                link_extra += e_links
        out = np.empty(self.ny)
        for k, ctl in enumerate(self.controllers):
            p = ctl.sign * ctl.power_now(Tm)
            dH[ctl.node_idx] += p
            out[n + self.nb + self.S + k] = p
        out[:n] = dH
        if self.nb:
            u = w[:self.M]
            t_end = self.A_end @ Tm + self.D_end @ w
            out[n:n + self.nb] = self.to_links @ (self.g_end * (u[self.bcol] - t_end)) + link_extra
        out[n + self.nb:n + self.nb + self.S] = w[self.M:]
        return out

    def _jac_dense(self, t, y):
        """The same Jacobian as :meth:`jac`, assembled as a dense array (small systems)."""
        n, nb, S = self.n, self.nb, self.S
        Tm, dTdH = self.temperatures(y[:n])
        w = self.inputs(t)
        dq = -self.K.copy()
        e_block = -(self.to_links * self.g_end[None, :]) @ self.A_end if nb else np.zeros((0, n))
        for term in self.terms:
            jq, je = term.jacobian(Tm, w)
            dq += jq.toarray()
            if je is not None:
                e_block = e_block + je.toarray()
        J = np.zeros((self.ny, self.ny))
        for k, ctl in enumerate(self.controllers):
            entry = ctl.jacobian_entry(Tm)
            if entry is not None:
                dq[ctl.node_idx, entry[1]] += entry[2]
                J[n + nb + S + k, entry[1]] = entry[2] * dTdH[entry[1]]
        J[:n, :n] = dq * dTdH[None, :]
        if nb:
            J[n:n + nb, :n] = e_block * dTdH[None, :]
        return J

    @property
    def is_static(self) -> bool:
        return not self.terms and not self.phase and not any(
            c.control == "proportional" for c in self.controllers)

    def jac(self, t, y):
        self.njev += 1
        if self.is_static and self._static_jac is not None:
            return self._static_jac
        if self.dense:
            J = self._jac_dense(t, y)
            if self.is_static:
                self._static_jac = J
            return J
        n = self.n
        Tm, dTdH = self.temperatures(y[:n])
        w = self.inputs(t)
        dq = -self.K_sparse
        e_rows = None
        for term in self.terms:
            jq, je = term.jacobian(Tm, w)
            dq = dq + jq
            if je is not None:
                e_rows = je if e_rows is None else e_rows + je
        c_rows, c_cols, c_vals = [], [], []
        for k, ctl in enumerate(self.controllers):
            entry = ctl.jacobian_entry(Tm)
            if entry is not None:
                c_rows.append(k)
                c_cols.append(entry[1])
                c_vals.append(entry[2])
        J_c = sp.csr_matrix((c_vals, (c_rows, c_cols)), shape=(self.nc, n))
        if c_vals:  # the controller's power enters the node it heats
            node_rows = [self.controllers[k].node_idx for k in c_rows]
            dq = dq + sp.csr_matrix((c_vals, (node_rows, c_cols)), shape=(n, n))
        scale = sp.diags(dTdH)
        J_hh = (dq @ scale).tocsr()
        e_block = -(self.to_links_sparse @ sp.diags(self.g_end) @ self.A_end_sparse)
        if e_rows is not None:
            e_block = e_block + e_rows
        J_eh = (e_block @ scale).tocsr() if self.nb else sp.csr_matrix((0, n))
        zeros_right = sp.csr_matrix((self.ny, self.ny - n))
        left = sp.vstack([J_hh, J_eh, sp.csr_matrix((self.S, n)), (J_c @ scale).tocsr()],
                         format="csr")
        J = sp.hstack([left, zeros_right], format="csc")
        if self.dense:
            J = J.toarray()
        if self.is_static:
            self._static_jac = J
        return J


#: the name the model had when only the stiff path used it
StiffModel = EnergyModel
