"""A fast model for linear networks whose free values are entries of the matrices themselves.

Identification fits dozens of small structures (:mod:`rcsim.fitting.identify`); rebuilding a
scenario and its assembly at each trial value would cost most of the time. When every free value
is a node's ``capacity``, a link's ``resistance`` or ``conductance`` (a link of one part), a
starting temperature, or a constant boundary temperature or source power, and every input is a
constant or a log column, the network's matrices follow from the values directly::

    C dT/dt = -K T + B u(t) + P s(t)          (massless nodes eliminated exactly, Kron reduction)

and the inputs are linear between the log's samples, so the solution between two samples is
exact in the network's modes (C^-1/2 K C^-1/2 = U diag(lambda) U^T, z = U^T C^1/2 x), each a
first-order equation dz/dt = -lambda z + u(t) with u ramping from one sample to the next::

    z_k+1 = a z_k + (c0 - c1) u_k + c1 u_k+1,   a = exp(-lambda dt),
    c0 = (1 - a) / lambda,   c1 = (1 - c0 / dt) / lambda

(the first-order hold). The recurrence over the rows is solved at once
(:func:`rcsim.fitting.recurrence.linear_recurrence`). This is the same linear system the exact
modal path solves, with the same inputs; a test checks the two agree. :func:`direct_model` says whether a scenario qualifies (otherwise :class:`Model` runs it).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..scenario import Scenario, parse_key_path
from .logs import Log
from .model import ModelStats, StateMatrices
from .parameters import ParameterSet
from .recurrence import linear_recurrence

__all__ = ["LinearModel", "direct_model"]


@dataclass
class _Role:
    """Where a free value goes: 'capacity' (node index), 'conductance' (segment, reciprocal when
    given as a resistance), 'initial' (node index), 'boundary' or 'source' (input column)."""

    what: str
    index: int
    reciprocal: bool = False


def direct_model(sc: Scenario, log: Log, params: ParameterSet, solver: str = "auto"):
    """A :class:`LinearModel` when the scenario and its free values qualify, else None."""
    if solver not in ("auto", "exact"):
        return None
    try:
        return LinearModel(sc, log, params)
    except _NotDirect:
        return None


def _hold_coefficients(lam, steps):
    """Per mode (rate lam [1/s]) and step dt: a = exp(-lam dt) and the weights of the input at
    the two ends of a step over which it ramps linearly (first-order hold)::

        z_k+1 = a z_k + (c0 - c1) u_k + c1 u_k+1,
        c0 = (1 - a) / lam,   c1 = (1 - c0 / dt) / lam    (dt and dt / 2 as lam -> 0)
    """
    x = lam[None, :] * steps[:, None]
    dt = steps[:, None]
    a = np.exp(-x)
    small = x < 1e-4
    with np.errstate(divide="ignore", invalid="ignore"):
        c0 = np.where(small, dt * (1 - x / 2 + x * x / 6), -np.expm1(-x) / lam[None, :])
        c1 = np.where(small, dt * (0.5 - x / 6 + x * x / 24),
                      (1 - c0 / dt) / lam[None, :])
    return a, c0, c1


def decay_scan(a, v, z0) -> np.ndarray:
    """Z (K + 1, n) of z_k+1 = a z_k + v_k for every mode at once (a (n,) in [0, 1]).

    Within a block of L rows, z_s+j = a^j (z_s + sum_{i<j} a^-(i+1) v_s+i): one cumulative
    sum, with L small enough that a^-L stays below e^300. Modes that die out within a row
    (a < 1e-13) are z_k+1 = v_k + a v_k-1, exact in double precision.
    """
    K, n = v.shape
    Z = np.empty((K + 1, n))
    Z[0] = z0
    with np.errstate(divide="ignore"):
        rate = -np.log(a)
    fast = rate > 30.0
    if fast.any():
        f = np.flatnonzero(fast)
        Z[1:, f] = v[:, f]
        Z[2:, f] += a[f] * v[:-1, f]
        Z[1, f] += a[f] * z0[f]
    slow = np.flatnonzero(~fast)
    if slow.size:
        r = rate[slow]
        length = int(max(1, min(K, 300.0 // max(float(r.max()), 1e-300))))
        j = np.arange(1, length + 1)[:, None]
        grow, shrink = np.exp(r[None, :] * j), np.exp(-r[None, :] * j)
        for s in range(0, K, length):  # blocks of rows (one when the modes are slow)
            blk = v[s:s + length, slow]
            l = blk.shape[0]
            acc = np.cumsum(blk * grow[:l], axis=0)
            Z[s + 1:s + l + 1, slow] = shrink[:l] * (Z[s, slow] + acc)
    return Z


class _NotDirect(Exception):
    """The scenario or a free value does not map onto the matrices directly."""


class LinearModel:
    """Model temperatures at the log's times for the free values (SI), from the matrices.

    The interface of :class:`rcsim.fitting.model.Model`: ``outputs(values, times=None)``,
    ``state_matrices(values)``, ``fast``, ``stats``, ``solver``.
    """

    fast = True

    def __init__(self, sc: Scenario, log: Log, params: ParameterSet):
        net = sc.network
        asm = net.assemble()
        if not asm.is_linear or getattr(net, "thermostats", None) or \
                sc.settings.initial != "given" or asm.internal_of:
            raise _NotDirect
        self.sc, self.log, self.params = sc, log, params
        self.t = log.time
        self.n_nodes = asm.n_nodes
        self.node_names = list(asm.node_names)
        self.capacity = asm.capacity.astype(float).copy()
        self.initial = asm.initial.astype(float).copy()
        if np.isnan(self.initial[self.capacity > 0]).any():
            raise _NotDirect
        self.seg_a, self.seg_b = asm.seg_a.copy(), asm.seg_b.copy()
        self.seg_g = asm.seg_g.astype(float).copy()
        self.source_nodes = np.asarray(asm.source_nodes, dtype=np.int64)
        self.n_bound, self.n_src = asm.n_boundaries, len(asm.source_names)
        self.node_idx = np.array([asm.node_index(log.targets[c]) for c in log.measured])
        self._inputs = self._input_table(asm, log)
        knots = [times for kind, times, _ in self._inputs if kind == "log"]
        self._knots = np.unique(np.concatenate(knots)) if knots else np.zeros(0)
        self.roles = [self._role(asm, p) for p in params]
        self.stats = ModelStats("exact")
        points = self.n_nodes + self.n_bound
        segs = np.arange(self.seg_a.size)
        self._incidence = np.zeros((points, self.seg_a.size))
        self._incidence[self.seg_a, segs] = 1.0
        self._incidence[self.seg_b, segs] -= 1.0
        self._sources = np.zeros((self.n_nodes, self.n_bound + self.n_src))
        self._sources[self.source_nodes, self.n_bound + np.arange(self.n_src)] = 1.0
        self._w_key = None
        self._w = None
        self._steps_key = None
        self._steps = None
        self._last_E = None

    @property
    def solver(self) -> str:
        return self.stats.solver

    # -- set-up --------------------------------------------------------------------------------
    def _input_table(self, asm, log):
        """(times, values (n, M + S)) of the inputs: log columns at their finite samples, the
        scenario's constants; every input is linear between these times, held at the ends."""
        driven = {log.targets[c]: c for c in log.inputs + list(getattr(log, "powers", []))}
        columns = []
        for name, prof in list(zip(asm.boundary_names, asm.boundary_profiles)) + \
                list(zip(asm.source_names, asm.source_profiles)):
            if name in driven:
                vals = log.values[driven[name]].to_numpy(dtype=float)
                ok = np.isfinite(vals)
                columns.append(("log", log.time[ok], vals[ok]))
            elif prof.is_constant:
                columns.append(("constant", None, float(prof.value(0.0))))
            else:
                raise _NotDirect
        return columns

    def _role(self, asm, p) -> _Role:
        tokens = parse_key_path(p.key)
        data = self.sc.data
        if tokens[0] == "nodes" and len(tokens) == 3:
            i = asm.node_index(tokens[1])
            spec = data["nodes"][tokens[1]]
            if tokens[2] == "initial":
                return _Role("initial", i)
            if tokens[2] == "capacity" and set(spec) <= {"capacity", "initial"} and \
                    np.isclose(self.capacity[i], p.start, rtol=1e-12):
                return _Role("capacity", i)
        if tokens[0] == "links" and len(tokens) == 3 and tokens[2] in ("resistance", "conductance"):
            li = asm.link_names.index(tokens[1])
            seg = int(asm.link_first_seg[li])
            reciprocal = tokens[2] == "resistance"
            if seg == int(asm.link_last_seg[li]) and np.isclose(
                    self.seg_g[seg], 1.0 / p.start if reciprocal else p.start, rtol=1e-12):
                return _Role("conductance", seg, reciprocal)
        if p.tier == "constant" and tokens[0] == "boundaries":
            return _Role("boundary", asm.boundary_names.index(p.target))
        if p.tier == "constant" and tokens[0] == "sources":
            return _Role("source", self.n_bound + asm.source_names.index(p.target))
        raise _NotDirect

    # -- the model -----------------------------------------------------------------------------
    def _apply(self, values):
        cap, g, x0 = self.capacity.copy(), self.seg_g.copy(), self.initial.copy()
        consts = {}
        for role, v in zip(self.roles, values):
            if role.what == "capacity":
                cap[role.index] = v
            elif role.what == "conductance":
                g[role.index] = 1.0 / v if role.reciprocal else v
            elif role.what == "initial":
                x0[role.index] = v
            else:
                consts[role.index] = v
        return cap, g, x0, consts

    def _system(self, cap, g):
        """Reduced A (n, n), B (n, M + S), output maps of massless nodes, state indices."""
        N, M = self.n_nodes, self.n_bound
        Kfull = (self._incidence * g[None, :]) @ self._incidence.T  # sum of g (e_a - e_b)(..)^T
        K = Kfull[:N, :N]
        E = self._sources.copy()
        E[:, :M] = -Kfull[:N, N:]
        m = np.flatnonzero(cap > 0)
        z = np.flatnonzero(cap == 0)
        if z.size:
            Kzz_inv = np.linalg.inv(K[np.ix_(z, z)])
            R = -Kzz_inv @ K[np.ix_(z, m)]
            D = Kzz_inv @ E[z]
            Keff = K[np.ix_(m, m)] + K[np.ix_(m, z)] @ R
            Eeff = E[m] - K[np.ix_(m, z)] @ D
        else:
            R, D = np.zeros((0, m.size)), np.zeros((0, E.shape[1]))
            Keff, Eeff = K, E
        C = cap[m]
        self._last_E = Eeff
        return -Keff / C[:, None], Eeff / C[:, None], R, D, m, z, Keff, C

    def _input_values(self, t, consts) -> np.ndarray:
        key = (t.size, float(t[0]), float(t[-1]))
        if self._w_key != key:  # the inputs at these times, once (free constants set below)
            w = np.empty((t.size, len(self._inputs)))
            for j, (kind, times, vals) in enumerate(self._inputs):
                w[:, j] = vals if kind == "constant" else np.interp(t, times, vals)
            self._w, self._w_key = w, key
        if not consts:
            return self._w
        w = self._w.copy()
        for j, v in consts.items():
            w[:, j] = v
        return w

    def outputs(self, values, times=None) -> np.ndarray:
        """Model temperatures (n_times, n_measured) at the log's times (or ``times``)."""
        self.stats.evaluations += 1
        t = self.t if times is None else np.asarray(times, dtype=float)
        if times is not None and self._knots.size:
            # the inputs bend at the log's samples: run through them, report at ``times``
            inside = self._knots[(self._knots > t[0]) & (self._knots < t[-1])]
            t_run = np.union1d(t, inside)
            return self._run(values, t_run)[np.searchsorted(t_run, t)]
        return self._run(values, t)

    def _modes(self, cap, g):
        """The network's modes: C^-1/2 K C^-1/2 = U diag(lam) U^T, z = U^T C^1/2 x, so that
        dz/dt = -lam z + G w and x = back z; with the massless nodes' maps R, D."""
        _, _, R, D, m, z, Keff, C = self._system(cap, g)
        root = np.sqrt(C)
        lam, U = np.linalg.eigh(Keff / root[:, None] / root[None, :])
        lam = np.maximum(lam, 0.0)
        G = U.T @ (self._last_E / root[:, None])
        return lam, U, root, G, U / root[:, None], R, D, m, z

    def linear_jacobian(self, values, indices) -> dict:
        """Exact d outputs / d value (n_times, n_measured) at the log's times for the free
        values that enter linearly (starting temperatures, constant boundary temperatures and
        source powers), in closed form: a unit starting temperature decays as exp(-lam t) in
        each mode, a unit constant input rises as (1 - exp(-lam t)) / lam."""
        cap, g, _, _ = self._apply([float(v) for v in values])
        lam, U, root, G, back, R, D, m, z = self._modes(cap, g)
        t = self.t[:, None] - self.t[0]
        x = lam[None, :] * t
        decay = np.exp(-x)
        with np.errstate(divide="ignore", invalid="ignore"):
            rise = np.where(x < 1e-8, t * (1 - x / 2), -np.expm1(-x) / lam[None, :])
        where = {int(k): i for i, k in enumerate(m)}
        zwhere = {int(k): i for i, k in enumerate(z)}
        out = {}
        for i in indices:  # a loop over the linear free values
            role = self.roles[i]
            if role.what == "initial":
                if role.index not in where:
                    out[i] = np.zeros((t.size, self.node_idx.size))
                    continue
                p = where[role.index]
                X = (decay * (U[p] * root[p])[None, :]) @ back.T
                direct = np.zeros(D.shape[0])
            elif role.what in ("boundary", "source"):
                X = (rise * G[:, role.index][None, :]) @ back.T
                direct = D[:, role.index]
            else:
                continue
            cols = np.empty((t.size, self.node_idx.size))
            for col, node in enumerate(self.node_idx):
                if int(node) in where:
                    cols[:, col] = X[:, where[int(node)]]
                else:
                    k = zwhere[int(node)]
                    cols[:, col] = X @ R[k] + direct[k]
            out[i] = cols
        return out

    def _run(self, values, t) -> np.ndarray:
        cap, g, x0, consts = self._apply([float(v) for v in values])
        w = self._input_values(t, consts)
        lam, U, root, G, back, R, D, m, z = self._modes(cap, g)
        key = (t.size, float(t[0]), float(t[-1]))
        if self._steps_key != key:                    # the distinct steps of these times, once
            self._steps = np.unique(np.diff(t), return_inverse=True)
            self._steps_key = key
        steps, index = self._steps
        a, c0, c1 = _hold_coefficients(lam, steps)    # (u, n) each
        self.stats.decompositions += 1
        u = w @ G.T                                   # (N, n) modal forcing at the rows
        forcing = (c0 - c1)[index] * u[:-1] + c1[index] * u[1:]
        z0 = U.T @ (root * x0[m])
        if steps.size == 1:  # regular rows: each mode at once by a scaled cumulative sum
            Z = decay_scan(a[0], forcing, z0)
        else:
            F = np.zeros((steps.size, lam.size, lam.size))
            F[:, np.arange(lam.size), np.arange(lam.size)] = a
            Z = linear_recurrence(F, index, forcing, z0)
        X = Z @ back.T
        nodes = np.empty((t.size, self.node_idx.size))
        where = {int(k): i for i, k in enumerate(m)}
        zwhere = {int(k): i for i, k in enumerate(z)}
        for col, node in enumerate(self.node_idx):  # a loop over measured columns
            if int(node) in where:
                nodes[:, col] = X[:, where[int(node)]]
            else:
                i = zwhere[int(node)]
                nodes[:, col] = X @ R[i] + w @ D[i]
        return nodes

    def state_matrices(self, values) -> StateMatrices:
        """A and H of the reduced system at the free values (see :class:`StateMatrices`)."""
        cap, g, _, _ = self._apply([float(v) for v in values])
        A, _, R, _, m, z, Keff, C = self._system(cap, g)
        H = np.zeros((self.node_idx.size, m.size))
        where = {int(k): i for i, k in enumerate(m)}
        zwhere = {int(k): i for i, k in enumerate(z)}
        for row, node in enumerate(self.node_idx):
            if int(node) in where:
                H[row, where[int(node)]] = 1.0
            else:
                H[row] = R[zwhere[int(node)]]
        return StateMatrices(A, H, [self.node_names[i] for i in m],
                             C / np.maximum(np.diag(Keff), 1e-300))

