"""Nonlinear network terms: nonlinear segments, thermostats, and the nonlinear steady state.

* :class:`SegmentTerm` adds the flows of nonlinear link segments (radiation, correlation films;
  see :mod:`rcsim.laws`) to the stiff path, with their exact sparse Jacobian pattern.
* :class:`Thermostat` switches a heater or cooler on a sensed node's temperature: on/off with a
  dead band (switching located as events by the stiff driver, so it never chatters) or
  proportional with a limit.
* :func:`steady_newton` solves the steady state of a network with nonlinear elements by a damped
  Newton method started from a linearised solution.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from .errors import InputError, NetworkError, RcsimWarning, SolverError
from .materials import suggest
from .statespace import state_space
from .steady import check_grounded, steady_temperatures
from .units import to_si

__all__ = ["SegmentTerm", "Thermostat", "make_thermostat", "build_terms", "steady_newton",
           "add_thermostats_from_scenario", "THERMOSTAT_KEYS", "linearised"]

THERMOSTAT_KEYS = {"node", "sensor", "mode", "setpoint", "band", "power", "control", "initially"}


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
        pos_m = {int(i): p for p, i in enumerate(ss.massive)}
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

    def _ends(self, Tm, w):
        return self._gather(Tm, w, self.a_is_node, self.a_idx), \
            self._gather(Tm, w, self.b_is_node, self.b_idx)

    @staticmethod
    def _gather(Tm, w, is_node, idx):
        """Temperatures at segment ends: a state (node) or an input (boundary) each."""
        out = np.empty(Tm.shape[:-1] + (idx.size,))
        out[..., is_node] = Tm[..., idx[is_node]]
        out[..., ~is_node] = w[..., idx[~is_node]]
        return out

    def flows(self, Tm, w):
        ta, tb = self._ends(Tm, w)
        q = self.nl.flows(ta, tb)
        dH = np.zeros(self.n)
        np.add.at(dH, self.a_idx[self.a_is_node], -q[self.a_is_node])
        np.add.at(dH, self.b_idx[self.b_is_node], q[self.b_is_node])
        e = np.zeros(self.nb)
        for k, col, sign in self.e_rows:
            e[col] += sign * q[k]
        return dH, (e if self.e_rows else None)

    def jacobian(self, Tm, w):
        ta, tb = self._ends(Tm, w)
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


# -- thermostats -------------------------------------------------------------------------------
@dataclass
class Thermostat:
    """A heater or cooler switched on a sensed node's temperature.

    ``control='on-off'``: a heater comes on when the sensed temperature falls to
    ``setpoint - band/2`` and goes off when it rises to ``setpoint + band/2`` (a cooler the other
    way round). ``control='proportional'``: the power goes linearly from full at
    ``setpoint - band/2`` to zero at ``setpoint + band/2`` for a heater (reversed for a cooler),
    limited to [0, power]. Power in W, positive into the node for a heater, out of it for a cooler.
    """

    name: str
    node: str
    sensor: str
    mode: str
    setpoint: float
    band: float
    power: float
    control: str = "on-off"
    initially: str | None = None
    where: str = ""
    # runtime
    _node_idx: int = -1
    _sensor_idx: int = -1
    _n: int = 0
    on: bool = False
    _log_t: list = field(default_factory=list)
    _log_on: list = field(default_factory=list)

    @property
    def sign(self) -> float:
        return 1.0 if self.mode == "heat" else -1.0

    def bind(self, asm, ss) -> "Thermostat":
        pos_m = {int(i): p for p, i in enumerate(ss.massive)}
        for key, name in (("node", self.node), ("sensor", self.sensor)):
            i = asm.node_names.index(name)
            if i not in pos_m:
                raise NetworkError(f"thermostat {self.name!r}: {key} {name!r} has no heat capacity",
                                   self.where, "give the node a capacity")
        self._node_idx = pos_m[asm.node_names.index(self.node)]
        self._sensor_idx = pos_m[asm.node_names.index(self.sensor)]
        self._n = ss.n
        return self

    def _proportional(self, T):
        x = (self.setpoint + 0.5 * self.band - T) / self.band      # 1 at the low end, 0 at the top
        if self.mode == "cool":
            x = 1.0 - x
        return np.clip(x, 0.0, 1.0) * self.power

    def reset(self, t0: float, Tm) -> None:
        T = float(Tm[self._sensor_idx])
        if self.initially is not None:
            self.on = self.initially == "on"
        elif self.mode == "heat":
            self.on = T < self.setpoint
        else:
            self.on = T > self.setpoint
        # a state given with ``initially`` that the band already contradicts (a heater on above
        # its cut-out, off below its cut-in; a cooler the other way round) switches at once
        half = 0.5 * self.band
        if self.on and (T >= self.setpoint + half if self.mode == "heat"
                        else T <= self.setpoint - half):
            self.on = False
        elif not self.on and (T <= self.setpoint - half if self.mode == "heat"
                              else T >= self.setpoint + half):
            self.on = True
        self._log_t = [t0]
        self._log_on = [self.on]

    def power_now(self, Tm) -> float:
        if self.control == "proportional":
            return float(self._proportional(Tm[self._sensor_idx]))
        return self.power if self.on else 0.0

    def power_vector(self, t, Tm) -> np.ndarray:
        v = np.zeros(self._n)
        v[self._node_idx] = self.sign * self.power_now(Tm)
        return v

    def slope(self, T: float):
        """d(power into the node)/d(sensed temperature) [W/K]: nonzero only for the proportional
        law inside its band (None otherwise)."""
        if self.control != "proportional":
            return None
        if not (self.setpoint - 0.5 * self.band < T < self.setpoint + 0.5 * self.band):
            return None
        return self.sign * (-self.power if self.mode == "heat" else self.power) / self.band

    def jacobian_entry(self, Tm):
        """(row, col, dP/dT) in state indices, or None (see :meth:`slope`)."""
        d = self.slope(float(Tm[self._sensor_idx]))
        return None if d is None else (self._node_idx, self._sensor_idx, d)

    def event_value(self, t, Tm):
        """Switching function of the on/off law (None for proportional control)."""
        if self.control != "on-off":
            return None
        return float(Tm[self._sensor_idx]) - self.threshold()

    def threshold(self) -> float:
        """Sensed temperature [degC] at which the on/off law switches next: the top of the band
        for a heater that is on or a cooler that is off, the bottom otherwise."""
        rising = self.on == (self.mode == "heat")
        return self.setpoint + (0.5 if rising else -0.5) * self.band

    def switch(self, t: float, Tm) -> None:
        self.on = not self.on
        self._log_t.append(t)
        self._log_on.append(self.on)

    def power_history(self, t: np.ndarray, Tm_rows: np.ndarray) -> np.ndarray:
        """Power [W, positive into the node] at the sample times (rows of state temperatures)."""
        if self.control == "proportional":
            return self.sign * self._proportional(Tm_rows[:, self._sensor_idx])
        idx = np.searchsorted(np.asarray(self._log_t), t, side="right") - 1
        on = np.asarray(self._log_on)[np.clip(idx, 0, None)]
        return self.sign * self.power * on

    def switch_count(self) -> int:
        return max(0, len(self._log_t) - 1)


def make_thermostat(name, spec: dict, where: str, nodes) -> Thermostat:
    """Validate a thermostat description (scenario or API) into a :class:`Thermostat`."""
    from .parts import check_keys

    check_keys(spec, THERMOSTAT_KEYS, ["node", "setpoint", "band", "power"], where)
    node = spec["node"]
    if node not in nodes:
        raise NetworkError(f"unknown node {node!r}", f"{where}.node", suggest(node, list(nodes)))
    sensor = spec.get("sensor", node)
    if sensor not in nodes:
        raise NetworkError(f"unknown node {sensor!r}", f"{where}.sensor",
                           suggest(sensor, list(nodes)))
    mode = spec.get("mode", "heat")
    if mode not in ("heat", "cool"):
        raise InputError(f"mode must be 'heat' or 'cool', got {mode!r}", f"{where}.mode")
    control = spec.get("control", "on-off")
    if control not in ("on-off", "proportional"):
        raise InputError(f"control must be 'on-off' or 'proportional', got {control!r}",
                         f"{where}.control")
    setpoint = to_si(spec["setpoint"], "temperature", f"{where}.setpoint")
    band = to_si(spec["band"], "temperature_difference", f"{where}.band")
    if band <= 0:
        raise InputError(f"the band must be wider than zero, got {spec['band']!r}",
                         f"{where}.band", "an on/off thermostat needs a dead band, e.g. '1 K'")
    power = to_si(spec["power"], "power", f"{where}.power")
    if power <= 0:
        raise InputError("power must be positive (use mode = 'cool' for a cooler)",
                         f"{where}.power")
    initially = spec.get("initially")
    if initially not in (None, "on", "off"):
        raise InputError(f"initially must be 'on' or 'off', got {initially!r}",
                         f"{where}.initially")
    return Thermostat(name, node, sensor, mode, setpoint, band, power, control, initially, where)


def add_thermostats_from_scenario(net, table: dict) -> None:
    for name, spec in table.items():
        w = f"thermostats.{name}"
        if not isinstance(spec, dict):
            raise InputError("expected a table", w)
        net.add_thermostat(name, where=w, **spec)


# -- assembling the stiff model ------------------------------------------------------------------
def build_terms(network, asm, thermostats=()):
    """Nonlinear terms, phase-change map (state index -> PhaseChange) and bound controllers."""
    ss = state_space(asm)
    pos = {int(i): p for p, i in enumerate(ss.massive)}
    phase = {pos[i]: pc for i, pc in asm.phase_change.items()}
    terms = []
    if asm.nl is not None:
        terms.append(SegmentTerm(asm, asm.boundary_segments()[0]))
    controllers = [t.bind(asm, ss) for t in thermostats]
    return terms, phase, controllers


# -- steady state ----------------------------------------------------------------------------
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
    rhs0 = asm.B @ u + asm.P @ s
    nl = asm.nl
    ctrl = [t for t in thermostats if t.control == "proportional"]
    if len(ctrl) != len(thermostats):
        warnings.warn("on/off thermostats have no steady state; they are left off here",
                      RcsimWarning, stacklevel=3)
    idx = {nm: i for i, nm in enumerate(asm.node_names)}

    def residual_and_jacobian(T):
        F = -(K @ T) + rhs0
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
            F[i] += t.sign * float(t._proportional(T[j]))
            d = t.slope(float(T[j]))
            if d is not None:
                rows.append(np.array([i])), cols.append(np.array([j])), vals.append(np.array([d]))
        J = -K + sp.csr_matrix((np.concatenate(vals), (np.concatenate(rows),
                                                       np.concatenate(cols))), shape=(n, n))
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
            dT = spla.spsolve(J, -F) if n > 1 else -F / J.toarray()[0, 0]
        except RuntimeError:  # pragma: no cover - singular Jacobian
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
    from .network import _conductance_matrices

    K, B = _conductance_matrices(asm.seg_a, asm.seg_b, seg_g, n, asm.n_boundaries)
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
    import dataclasses

    from .network import _conductance_matrices

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
    K, B = _conductance_matrices(asm.seg_a, asm.seg_b, seg_g, asm.n_nodes, asm.n_boundaries)
    return dataclasses.replace(asm, capacity=cap, seg_g=seg_g, K=K, B=B, phase_change={},
                               nl=None)
