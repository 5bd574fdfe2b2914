"""Nonlinear network terms and the nonlinear steady state.

* :class:`SegmentTerm` adds the flows of nonlinear link segments (radiation, correlation films;
  see :mod:`rcsim.laws`) to the energy-form model of the transient paths, with their exact sparse
  Jacobian pattern.
* :func:`build_terms` binds a network's nonlinear segments, phase-change nodes and thermostats
  (:mod:`rcsim.thermostat`, re-exported here) to the states of its reduced system.
* :func:`steady_newton` solves the steady state of a network with nonlinear elements by a damped
  Newton method started from a linearised solution.
* :func:`linearised` gives the linear network about a state (for time constants).
"""

from __future__ import annotations

import dataclasses
import warnings
from typing import NamedTuple

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from .assembly import conductance_matrices
from .errors import NetworkError, RcsimWarning, SolverError
from .statespace import state_space
from .steady_linear import check_grounded, steady_temperatures
from .thermostat import (THERMOSTAT_KEYS, Thermostat, ThermostatState,  # noqa: F401 (re-exported)
                         add_thermostats_from_scenario, make_thermostat)

__all__ = ["SegmentTerm", "Thermostat", "ThermostatState", "make_thermostat", "build_terms",
           "steady_newton", "add_thermostats_from_scenario", "THERMOSTAT_KEYS", "linearised",
           "segment_jacobian", "BoundTerms"]


# -- nonlinear segments on the stiff path ------------------------------------------------------
def segment_jacobian(a_is_node, ia, b_is_node, ib, da, db):
    """(rows, cols, values) of d(heat into each node)/dT for segments carrying q from a to b.

    Node a loses q and node b gains it; q depends on T_a (``da``) and T_b (``db``). Ends that
    are boundaries (``*_is_node`` False) contribute no row or column.
    """
    rows, cols, vals = [], [], []
    for mask_r, r_idx, sign in ((a_is_node, ia, -1.0), (b_is_node, ib, 1.0)):
        for mask_c, c_idx, d in ((a_is_node, ia, da), (b_is_node, ib, db)):
            m = mask_r & mask_c
            rows.append(r_idx[m])
            cols.append(c_idx[m])
            vals.append(sign * d[m])
    return np.concatenate(rows), np.concatenate(cols), np.concatenate(vals)


class SegmentTerm:
    """Flows of the nonlinear segments into the states, and their Jacobian."""

    def __init__(self, asm, boundary_links):
        ss = state_space(asm)
        nl = asm.nl
        self.nl = nl
        n_all = asm.n_nodes
        pos_m = ss.state_of
        self.n = ss.n
        a = asm.seg_a[nl.seg]
        b = asm.seg_b[nl.seg]
        for p in np.concatenate([a, b]):
            if p < n_all and int(p) not in pos_m:
                raise NetworkError(f"node {asm.node_names[int(p)]!r} has no heat capacity but "
                                   "touches a nonlinear part (radiation or a film correlation)",
                                   None, "give it a small capacity")
        self.a_is_node = a < n_all
        self.b_is_node = b < n_all
        self.a_idx = np.where(self.a_is_node, [pos_m.get(int(p), 0) for p in a], a - n_all)
        self.b_idx = np.where(self.b_is_node, [pos_m.get(int(p), 0) for p in b], b - n_all)
        # energy into the network through boundary links: +q when a is the boundary, -q when b is
        link_col = {li: c for c, li in enumerate(boundary_links)}
        seg_link = np.searchsorted(asm.link_last_seg, nl.seg)
        self.e_rows = []
        for k in range(len(nl)):
            li = int(seg_link[k])
            if li in link_col and (not self.a_is_node[k] or not self.b_is_node[k]):
                sign = 1.0 if not self.a_is_node[k] else -1.0
                self.e_rows.append((k, link_col[li], sign))
        self.nb = len(boundary_links)

    def ends(self, Tm, w):
        """Temperatures at the first and second ends of every segment, from state temperatures
        (or their integrals) ``Tm`` and inputs ``w`` (same leading shape)."""
        return self.gather(Tm, w, self.a_is_node, self.a_idx), \
            self.gather(Tm, w, self.b_is_node, self.b_idx)

    @staticmethod
    def gather(Tm, w, is_node, idx):
        """Temperatures at segment ends: a state (node) or an input (boundary) each."""
        out = np.empty(Tm.shape[:-1] + (idx.size,))
        out[..., is_node] = Tm[..., idx[is_node]]
        out[..., ~is_node] = w[..., idx[~is_node]]
        return out

    def flows(self, Tm, w):
        ta, tb = self.ends(Tm, w)
        q = self.nl.flows(ta, tb)
        dH = np.zeros(self.n)
        np.add.at(dH, self.a_idx[self.a_is_node], -q[self.a_is_node])
        np.add.at(dH, self.b_idx[self.b_is_node], q[self.b_is_node])
        e = np.zeros(self.nb)
        for k, col, sign in self.e_rows:
            e[col] += sign * q[k]
        return dH, (e if self.e_rows else None)

    def jacobian(self, Tm, w):
        ta, tb = self.ends(Tm, w)
        _, da, db = self.nl.solve(ta, tb)
        an, bn = self.a_is_node, self.b_is_node
        ia, ib = self.a_idx, self.b_idx
        rows, cols, vals = segment_jacobian(an, ia, bn, ib, da, db)
        J = sp.csr_matrix((vals, (rows, cols)), shape=(self.n, self.n))
        je = None
        if self.e_rows:
            er, ec, ev = [], [], []
            for k, col, sign in self.e_rows:
                if an[k]:
                    er.append(col), ec.append(ia[k]), ev.append(sign * da[k])
                if bn[k]:
                    er.append(col), ec.append(ib[k]), ev.append(sign * db[k])
            je = sp.csr_matrix((ev, (er, ec)), shape=(self.nb, self.n))
        return J, je


# -- binding to the states ------------------------------------------------------------------------
class BoundTerms(NamedTuple):
    """The nonlinear parts of a network bound to the states of its reduced system."""

    terms: list          # SegmentTerm of the nonlinear segments (empty without any)
    phase: dict          # state index -> PhaseChange
    controllers: list    # a fresh ThermostatState per thermostat


def build_terms(network, asm, thermostats=()) -> BoundTerms:
    """Nonlinear terms, phase-change map (state index -> PhaseChange) and fresh thermostat run
    states (:class:`ThermostatState`; the network's thermostats are not changed).

    ``network`` is not used (kept for older callers).
    """
    ss = state_space(asm)
    pos = ss.state_of
    phase = {pos[i]: pc for i, pc in asm.phase_change.items()}
    terms = []
    if asm.nl is not None:
        terms.append(SegmentTerm(asm, asm.boundary_segments().links))
    if asm.varying is not None:       # conductances that vary in time (a time-dependent term)
        from .varying import VaryingTerm

        terms.append(VaryingTerm(asm, asm.boundary_segments().links))
    return BoundTerms(terms, phase, [t.bind(asm, ss) for t in thermostats])


# -- steady state ----------------------------------------------------------------------------
#: Networks of up to this many nodes have their Newton steps solved with dense arrays.
DENSE_NEWTON = 200


def steady_newton(asm, u: np.ndarray, s: np.ndarray, thermostats=(), tol: float = 1e-10,
                  max_iterations: int = 100) -> np.ndarray:
    """Steady state with nonlinear segments (and proportional thermostats), by Newton's method.

    Works on every node (massless ones included). On/off thermostats have no steady state: they
    are left off, with a warning.
    """
    if asm.nl is None and not thermostats:
        return steady_temperatures(asm, u, s)
    check_grounded(asm)
    n = asm.n_nodes
    K = asm.K.tocsr()
    # a small network's Jacobian is solved as a dense array: building and factorising a sparse
    # matrix costs more than the whole dense solve there (measured: a 6-node shipper's steady
    # state 5x faster)
    K_dense = K.toarray() if n <= DENSE_NEWTON else None
    rhs0 = asm.B @ u + asm.P @ s
    nl = asm.nl
    ctrl = [t for t in thermostats if t.control == "proportional"]
    if len(ctrl) != len(thermostats):
        warnings.warn("on/off thermostats have no steady state; they are left off here",
                      RcsimWarning, stacklevel=3)
    idx = {nm: i for i, nm in enumerate(asm.node_names)}

    def residual_and_jacobian(T):
        F = -((K_dense if K_dense is not None else K) @ T) + rhs0
        rows, cols, vals = [np.empty(0, int)], [np.empty(0, int)], [np.empty(0)]
        if nl is not None:
            points = np.concatenate([T, u])
            a, b = asm.seg_a[nl.seg], asm.seg_b[nl.seg]
            q, da, db = nl.solve(points[a], points[b])
            an, bn = a < n, b < n
            np.add.at(F, a[an], -q[an])
            np.add.at(F, b[bn], q[bn])
            r, c, v = segment_jacobian(an, a, bn, b, da, db)
            rows.append(r), cols.append(c), vals.append(v)
        for t in ctrl:
            i, j = idx[t.node], idx[t.sensor]
            F[i] += t.sign * float(t.proportional_power(T[j]))
            d = t.slope(float(T[j]))
            if d is not None:
                rows.append(np.array([i])), cols.append(np.array([j])), vals.append(np.array([d]))
        rows, cols, vals = np.concatenate(rows), np.concatenate(cols), np.concatenate(vals)
        if K_dense is not None:
            J = -K_dense
            np.add.at(J, (rows, cols), vals)
            return F, J
        J = -K + sp.csr_matrix((vals, (rows, cols)), shape=(n, n))
        return F, J.tocsc()

    # first guess: nonlinear segments replaced by their conductance at the mean input temperature
    T = _linear_first_guess(asm, u, s)
    scale = max(1.0, float(np.abs(rhs0).max()) if rhs0.size else 1.0)
    F, J = residual_and_jacobian(T)
    norm = float(np.abs(F).max())
    for _ in range(max_iterations):
        if norm <= tol * scale:
            return T
        try:
            if K_dense is not None:
                dT = np.linalg.solve(J, -F)
            else:
                dT = spla.spsolve(J, -F) if n > 1 else -F / J.toarray()[0, 0]
        except (RuntimeError, np.linalg.LinAlgError):  # pragma: no cover - singular Jacobian
            break
        dT = np.atleast_1d(dT)
        step = 1.0
        while step > 1e-6:
            T_new = T + step * dT
            if np.all(T_new > -273.0):
                F_new, J_new = residual_and_jacobian(T_new)
                norm_new = float(np.abs(F_new).max())
                if norm_new < norm or norm_new <= tol * scale:
                    break
            step *= 0.5
        else:
            break
        T, F, J, norm = T_new, F_new, J_new, norm_new
    if norm <= 1e-6 * scale:
        return T
    worst = int(np.argmax(np.abs(F)))
    raise SolverError(f"the steady-state Newton iteration did not converge (largest heat "
                      f"imbalance {norm:.3g} W)", node=asm.node_names[worst],
                      hint="check the nonlinear parts' values, or simulate to the steady state")


def _linear_first_guess(asm, u, s):
    n = asm.n_nodes
    if asm.nl is None:
        return steady_temperatures(asm, u, s)
    t_ref = float(np.mean(u)) if u.size else 20.0
    nl = asm.nl
    ones = np.full(len(nl), t_ref)
    g = nl.linear_guess(ones + 0.5, ones - 0.5)
    seg_g = asm.seg_g.copy()
    seg_g[nl.seg] = g
    K, B = conductance_matrices(asm.seg_a, asm.seg_b, seg_g, n, asm.n_boundaries)
    rhs = B @ u + asm.P @ s
    T = spla.spsolve(K.tocsc(), rhs) if n > 1 else rhs / K.toarray()[0, 0]
    return np.atleast_1d(T)


def linearised(asm, T: np.ndarray, u: np.ndarray):
    """A linear copy of ``asm`` about node temperatures ``T`` and boundary temperatures ``u``.

    Each nonlinear segment becomes the conductance (dq/dT_a - dq/dT_b)/2 of its tangent there;
    each phase-change node gets the capacity dH/dT of its enthalpy curve at its temperature (a
    zero-width melting point counts as m * L per 0.01 K). Used for the time constants of a
    nonlinear network about a state; the copy shares nothing mutable with ``asm``.
    """
    seg_g = asm.seg_g.copy()
    if asm.nl is not None:
        points = np.concatenate([T, u])
        s = asm.nl.seg
        _, da, db = asm.nl.solve(points[asm.seg_a[s]], points[asm.seg_b[s]])
        seg_g[s] = np.maximum(0.5 * (da - db), 1e-12)
    cap = asm.capacity.copy()
    for i, pc in asm.phase_change.items():
        H = pc.enthalpy(float(T[i]))
        _, dTdH = pc.temperature(H)
        cap[i] = 1.0 / dTdH if dTdH > 0 else pc.mass * pc.latent_heat / 0.01
    K, B = conductance_matrices(asm.seg_a, asm.seg_b, seg_g, asm.n_nodes, asm.n_boundaries)
    return dataclasses.replace(asm, capacity=cap, seg_g=seg_g, K=K, B=B, phase_change={},
                               nl=None)
