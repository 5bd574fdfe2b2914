"""Integration of any network with scipy's stiff BDF method and an analytic sparse Jacobian.

The state is the stored energy of each massive node, H [J] (C*T for a sensible node, the enthalpy
for a phase-change node), followed by the cumulative energy that entered through each boundary link
and from each source. Because the right-hand side is conservative (every flow leaves one node and
enters another), the multistep method keeps ``sum(H) - energy in`` constant to rounding and Newton
tolerance, and the energy balance measures exactly that.

The integration restarts at every jump of an input (a step), and at every switching event
(thermostats), so no step straddles a discontinuity. Outputs are read from the solver's dense
output at the requested times, chunk by chunk.
"""

from __future__ import annotations

import warnings

import numpy as np
import scipy.sparse as sp
from numpy.polynomial import chebyshev as cheb
from scipy.integrate import BDF
from scipy.optimize import brentq

from ..errors import RcsimError, SolverError
from ..results import Chunk
from ..statespace import state_space

__all__ = ["StiffModel", "run_stiff", "jump_times", "DENSE_STATES"]

#: Up to this many solver states the stiff path works with dense matrices.
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


class StiffModel:
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
        self._phase_idx = np.asarray(sorted(self.phase), dtype=np.int64)
        self.boundary_links = asm.boundary_segments()[0]
        self._setup_link_energy()
        self.nb = len(self.boundary_links)
        self.nc = len(self.controllers)
        self.ny = self.n + self.nb + self.S + self.nc
        self._static_jac = None
        self.stats = {"nfev": 0, "njev": 0}
        # small systems: dense arrays beat sparse bookkeeping (and BDF then uses dense LU)
        self.dense = self.ny <= DENSE_STATES
        self._K_sp, self._A_end_sp, self._to_links_sp = self.K, self.A_end, self.to_links
        if self.dense:
            self.K = self.K.toarray()
            self.E = self.E.toarray()
            self.A_end = self.A_end.toarray()
            self.to_links = self.to_links.toarray()

    # -- structure ---------------------------------------------------------------------------
    def _setup_link_energy(self):
        """Maps giving, per boundary segment, g*(u_b - T_node), summed into its link."""
        asm, ss = self.asm, self.ss
        _, seg_col, nodes, bnd, g = asm.boundary_segments()
        pos_m = {int(i): p for p, i in enumerate(ss.massive)}
        pos_z = {int(i): q for q, i in enumerate(ss.massless)}
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
            for i in self._phase_idx:
                T[i], dTdH[i] = self.phase[i].temperature(H[i])
        return T, dTdH

    def energy_of(self, Tm: np.ndarray) -> np.ndarray:
        H = self.C * Tm
        for i in self._phase_idx:
            H[i] = self.phase[i].enthalpy(Tm[i])
        return H

    def inputs(self, t: float) -> np.ndarray:
        return np.array([p.value(t) for p in self.profiles]) if self.profiles else np.zeros(0)

    def y0(self, Tm0: np.ndarray) -> np.ndarray:
        return np.concatenate([self.energy_of(Tm0), np.zeros(self.nb + self.S + self.nc)])

    # -- dynamics ----------------------------------------------------------------------------
    def rhs(self, t, y):
        self.stats["nfev"] += 1
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
            dH[ctl._node_idx] += p
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
                dq[ctl._node_idx, entry[1]] += entry[2]
                J[n + nb + S + k, entry[1]] = entry[2] * dTdH[entry[1]]
        J[:n, :n] = dq * dTdH[None, :]
        if nb:
            J[n:n + nb, :n] = e_block * dTdH[None, :]
        return J

    @property
    def _is_static(self) -> bool:
        return not self.terms and not self.phase and not any(
            c.control == "proportional" for c in self.controllers)

    def jac(self, t, y):
        self.stats["njev"] += 1
        if self._is_static and self._static_jac is not None:
            return self._static_jac
        if self.dense:
            J = self._jac_dense(t, y)
            if self._is_static:
                self._static_jac = J
            return J
        n = self.n
        Tm, dTdH = self.temperatures(y[:n])
        w = self.inputs(t)
        dq = -self._K_sp
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
            node_rows = [self.controllers[k]._node_idx for k in c_rows]
            dq = dq + sp.csr_matrix((c_vals, (node_rows, c_cols)), shape=(n, n))
        scale = sp.diags(dTdH)
        J_hh = (dq @ scale).tocsr()
        e_block = -(self._to_links_sp @ sp.diags(self.g_end) @ self._A_end_sp)
        if e_rows is not None:
            e_block = e_block + e_rows
        J_eh = (e_block @ scale).tocsr() if self.nb else sp.csr_matrix((0, n))
        zeros_right = sp.csr_matrix((self.ny, self.ny - n))
        left = sp.vstack([J_hh, J_eh, sp.csr_matrix((self.S, n)), (J_c @ scale).tocsr()],
                         format="csr")
        J = sp.hstack([left, zeros_right], format="csc")
        if self.dense:
            J = J.toarray()
        if self._is_static:
            self._static_jac = J
        return J


def run_stiff(model: StiffModel, t_out: np.ndarray, Tm0: np.ndarray, emit, rtol: float,
              atol: float, progress=None, record_every: int | None = None, H0=None) -> dict:
    """Integrate from ``Tm0`` (or the stored energies ``H0``, which also say how far a pack at
    its melting point has melted) over ``t_out`` and hand chunks of samples to ``emit``.

    ``emit(t, Y)`` receives consecutive samples (rows of full solver states). Returns solver
    statistics.
    """
    T_end = float(t_out[-1])
    if record_every is None:  # keep the buffer of full states near 40 MB at most
        record_every = int(max(1, min(2000, 5_000_000 // max(1, model.ny))))
    y = model.y0(Tm0) if H0 is None else np.concatenate([H0, np.zeros(model.ny - model.n)])
    atol_vec = np.concatenate([atol * model.C,
                               np.full(model.ny - model.n, atol * float(model.C.sum()))])
    stops = np.union1d(jump_times(model.profiles, 0.0, T_end), [T_end])
    buf_t, buf_y = [float(t_out[0])], [y.copy()]
    k_next = 1
    t = float(t_out[0])
    stats = {"steps": 0, "restarts": 0, "events": 0, "nlu": 0}
    switching = _Switching(model)

    def flush():
        nonlocal buf_t, buf_y
        if buf_t:
            emit(np.asarray(buf_t), np.vstack(buf_y))
        buf_t, buf_y = [], []

    for stop in stops:
        while t < stop:
            try:
                solver = BDF(model.rhs, t, y, float(stop), rtol=rtol, atol=atol_vec,
                             jac=model.jac(t, y) if model._is_static else model.jac)
            except (ValueError, np.linalg.LinAlgError) as exc:  # pragma: no cover - defensive
                raise SolverError(f"the stiff solver could not start: {exc}", time=t) from None
            stats["restarts"] += 1
            restarted = False
            while solver.status == "running":
                message = solver.step()
                if solver.status == "failed":
                    node = _worst_node(model, solver)
                    raise SolverError(f"the stiff solver gave up ({message})", time=solver.t,
                                      node=node, hint="try a looser rtol/atol, check for tiny "
                                      "capacities or huge conductances")
                stats["steps"] += 1
                t_old, t_new = solver.t_old, solver.t
                dense = solver.dense_output()
                # switching events of on/off thermostats, along the whole step
                t_hit = switching.first(dense, t_old, t_new) if switching else None
                t_limit = t_hit[0] if t_hit is not None else t_new
                k2 = k_next
                while k2 < t_out.size and t_out[k2] <= t_limit:
                    k2 += 1
                while k_next < k2:  # in batches: one long step may span many outputs
                    kb = min(k2, k_next + record_every)
                    tt = t_out[k_next:kb]
                    buf_t.extend(tt.tolist())
                    buf_y.extend(list(dense(tt).T))
                    k_next = kb
                    if len(buf_t) >= record_every:
                        flush()
                if t_hit is not None:
                    t = float(t_hit[0])
                    y = dense(t)
                    model.controllers[t_hit[1]].switch(t, model.temperatures(y[:model.n])[0])
                    stats["events"] += 1
                    restarted = True
                    break
                if progress is not None:
                    progress(t_new / T_end)
            stats["nlu"] += getattr(solver, "nlu", 0)
            if not restarted:
                t = float(solver.t)
                y = solver.y.copy()
    flush()
    return stats


# Six Chebyshev points on [-1, 1]: the dense output of a BDF step is a polynomial of degree at
# most 5 (the method's highest order), so its values there give that polynomial exactly.
_CHEB_POINTS = np.cos(np.pi * (np.arange(6) + 0.5) / 6)
_TO_CHEB = np.linalg.inv(cheb.chebvander(_CHEB_POINTS, 5))
_DERIVATIVE = cheb.chebder(np.eye(6))          # Chebyshev series -> series of its derivative


class _Switching:
    """Finds the earliest switching of an on/off thermostat inside a solver step.

    Within a step the solver's solution is its dense output, a polynomial in t. Between two
    consecutive extrema of the sensed node's energy that polynomial is monotone, and so is the
    sensed temperature (T(H) never decreases). Checking the sign of the switching function at the
    step ends *and* at those extrema therefore finds every crossing of the threshold, also a dip
    through it and back within one step that the two ends alone do not show. The root is then
    located in the first bracket with a change of sign.

    Cheap bounds come first: with the sensed energy written as a Chebyshev series
    c_0 + sum c_k T_k(s) on the step (|T_k| <= 1), it stays within c_0 -+ sum |c_k|, and a step
    whose bound does not reach the threshold needs nothing more; a step whose slope series keeps
    its sign the same way is monotone, and its two ends decide.
    """

    def __init__(self, model: StiffModel):
        self.model = model
        self.on_off = [ci for ci, c in enumerate(model.controllers) if c.control == "on-off"]
        self.rows = np.asarray([model.controllers[ci]._sensor_idx for ci in self.on_off],
                               dtype=np.int64)
        self.cap = model.C[self.rows] if self.rows.size else np.zeros(0)
        self.phase = {r: model.phase[int(i)] for r, i in enumerate(self.rows)
                      if int(i) in model.phase}

    def __bool__(self) -> bool:
        return bool(self.on_off)

    def _temperature(self, H: np.ndarray) -> np.ndarray:
        """Sensed temperatures [degC] from energies, one per on/off thermostat."""
        T = H / self.cap
        for r, pc in self.phase.items():
            T[r] = pc.temperature_array(H[r])
        return T

    def first(self, dense, t_old: float, t_new: float):
        """(time, controller index) of the earliest switching in [t_old, t_new], or None."""
        mid, half = 0.5 * (t_new + t_old), 0.5 * (t_new - t_old)
        coef = dense(mid + half * _CHEB_POINTS)[self.rows] @ _TO_CHEB.T   # a series per sensor
        reach = np.abs(coef[:, 1:]).sum(axis=1)
        thresholds = np.asarray([self.model.controllers[ci].threshold() for ci in self.on_off])
        near = ((self._temperature(coef[:, 0] - reach) <= thresholds)
                & (thresholds <= self._temperature(coef[:, 0] + reach)))
        if not near.any():
            return None
        xtol = 1e-9 * max(1.0, abs(t_new))
        hit = None
        for r in np.flatnonzero(near):
            c_r, thr, pc = coef[r], thresholds[r], self.phase.get(r)

            def g(s, c_r=c_r, r=r, thr=thr, pc=pc):
                h = cheb.chebval(s, c_r)
                return (h / self.cap[r] if pc is None else pc.temperature_array(h)) - thr

            d_r = _DERIVATIVE @ c_r
            if abs(d_r[0]) > np.abs(d_r[1:]).sum():   # the slope keeps its sign: monotone
                s = np.array([-1.0, 1.0])
            else:
                crit = cheb.chebroots(d_r)
                crit = crit.real[(np.abs(crit.imag) < 1e-6) & (np.abs(crit.real) < 1.0)]
                s = np.concatenate([[-1.0], np.sort(crit), [1.0]])
            sign = np.sign(g(s))
            change = np.flatnonzero((sign[1:] != sign[:-1]) & ((sign[1:] != 0) | (sign[:-1] != 0)))
            if not change.size:
                continue
            a, b = s[change[0]], s[change[0] + 1]
            root = brentq(lambda tt, g=g: float(g((tt - mid) / half)), mid + half * a,
                          mid + half * b, xtol=xtol)
            if hit is None or root < hit[0]:
                hit = (root, self.on_off[r])
        return hit


def _worst_node(model, solver):
    try:
        f = model.rhs(solver.t, solver.y)[:model.n] / model.C
        i = int(np.argmax(np.abs(f)))
        return model.asm.node_names[int(model.ss.massive[i])]
    except Exception:  # pragma: no cover - best effort only
        return None


class OutputMap:
    """Temperatures of chosen nodes from solver states, without forming every node."""

    def __init__(self, model: StiffModel, out_nodes: np.ndarray):
        ss = model.ss
        pos_m = {int(i): p for p, i in enumerate(ss.massive)}
        pos_z = {int(i): q for q, i in enumerate(ss.massless)}
        self.out_nodes = np.asarray(out_nodes, dtype=np.int64)
        is_m = np.asarray([int(i) in pos_m for i in self.out_nodes], dtype=bool)
        self.cols_m = np.flatnonzero(is_m)
        self.state_m = np.asarray([pos_m[int(i)] for i in self.out_nodes[is_m]], dtype=np.int64)
        self.cols_z = np.flatnonzero(~is_m)
        rows_z = np.asarray([pos_z[int(i)] for i in self.out_nodes[~is_m]], dtype=np.int64)
        self.R = ss.R[rows_z] if rows_z.size else np.zeros((0, ss.n))
        self.D = ss.D[rows_z] if rows_z.size else np.zeros((0, ss.n_inputs))

    def temperatures(self, Tm: np.ndarray, w: np.ndarray) -> np.ndarray:
        out = np.empty((Tm.shape[0], self.out_nodes.size))
        out[:, self.cols_m] = Tm[:, self.state_m]
        if self.cols_z.size:
            out[:, self.cols_z] = Tm @ self.R.T + w @ self.D.T
        return out


def chunk_from_states(model: StiffModel, t: np.ndarray, Y: np.ndarray, H0_sum: float,
                      out_map: OutputMap, extras_fn=None) -> Chunk:
    """Build a recorder chunk from solver states (rows of Y) at times t."""
    n = model.n
    H = Y[:, :n]
    Tm = H / model.C[None, :]
    for i in model._phase_idx:
        Tm[:, i] = model.phase[i].temperature_array(H[:, i])
    if model.profiles:
        w = np.column_stack([p.value(t) for p in model.profiles])
    else:
        w = np.zeros((t.size, 0))
    extras = extras_fn(t, Tm, Y) if extras_fn is not None else {}
    return Chunk(t=t, T=out_map.temperatures(Tm, w), u=w[:, :model.M], s=w[:, model.M:],
                 e_links=Y[:, n:n + model.nb], e_sources=Y[:, n + model.nb:],
                 e_stored=H.sum(axis=1) - H0_sum, extras=extras)


def extras_of(model: StiffModel):
    """The function giving a chunk's extra histories: liquid fractions and thermostat powers."""

    def extras_fn(t, Tm, Y):
        ex = {}
        if model.phase:
            ex["liquid_fraction"] = np.column_stack(
                [model.phase[i].liquid_fraction_array(Y[:, i]) for i in model._phase_idx])
        if model.controllers:
            ex["thermostat_power"] = np.column_stack(
                [c.power_history(t, Tm) for c in model.controllers])
        return ex

    return extras_fn


def run_stiff_network(network, asm, t_out, T0, mode, recorder, out_nodes, boundary_links, rtol,
                      atol, progress, thermostats=()) -> dict:
    """Build the stiff model of ``network`` (nonlinear terms included) and run it."""
    from ..nonlinear import build_terms  # nonlinear physics registers its terms there

    terms, phase, controllers = build_terms(network, asm, thermostats)
    model = StiffModel(asm, terms, phase, controllers)
    ss = model.ss
    if mode == "periodic":
        H0 = periodic_start(network, model, asm, rtol, atol)
        Tm0 = model.temperatures(H0)[0]
    else:
        Tm0 = T0[ss.massive]
        H0 = model.energy_of(Tm0)
    H0_sum = float(H0.sum())
    out_map = OutputMap(model, np.asarray(out_nodes))

    extras_fn = extras_of(model)

    for c in model.controllers:
        c.reset(0.0, Tm0)

    def emit(t, Y):
        recorder.add(chunk_from_states(model, t, Y, H0_sum, out_map, extras_fn))

    stats = run_stiff(model, t_out, Tm0, emit, rtol, atol, progress, H0=H0)
    stats.update(model.stats)
    if model.controllers:
        recorder.tables["thermostats"] = thermostat_table(model.controllers, t_out, recorder)
    return stats


def thermostat_table(controllers, t_out, recorder):
    """Duty cycle, on-time, switches and energy of each thermostat over the run."""
    import pandas as pd

    span = float(t_out[-1] - t_out[0])
    energy = recorder.last_energy[2][-len(controllers):]
    rows = []
    for c, e in zip(controllers, energy):
        if c.control == "on-off":
            times = np.append(np.asarray(c._log_t, dtype=float), t_out[-1])
            on = np.asarray(c._log_on, dtype=float)
            on_time = float(np.sum(np.diff(times) * on))
        else:
            on_time = float("nan")
        duty = on_time / span if c.control == "on-off" else abs(float(e)) / (c.power * span)
        rows.append({"thermostat": c.name, "node": c.node, "mode": c.mode, "control": c.control,
                     "duty": duty, "on_time [s]": on_time, "switches": c.switch_count(),
                     "energy [J]": abs(float(e))})
    return pd.DataFrame(rows)


def periodic_start(network, model: StiffModel, asm, rtol, atol, max_periods: int = 200,
                   tol: float = 1e-6, period_map=None) -> np.ndarray:
    """Stored energies H at t = 0 of the periodic regime: the fixed point of the period map
    (integrate one period from H), found with Anderson mixing from the steady state under the
    period-mean inputs. ``period_map(H) -> H`` defaults to the stiff integrator.

    A linear network uses the exact modal solution instead; constant inputs the steady state.
    """
    from ..modes import DENSE_LIMIT
    from ..nonlinear import steady_newton
    from ..profiles import common_period
    from .exact import ExactPropagator
    from .piecewise import Anderson

    period = common_period(model.profiles, "simulation.initial")
    ss = model.ss
    if not model.terms and not model.phase and not model.controllers and ss.n <= DENSE_LIMIT:
        prop = ExactPropagator(asm)
        z0, _ = prop.periodic_state(period if period > 0 else 1.0, None)
        return model.energy_of(prop.V @ z0)
    if period == 0.0:
        return model.energy_of(steady_newton(asm, asm.boundary_values(0.0),
                                             asm.source_values(0.0))[ss.massive])
    # start: the steady state under the inputs averaged over one period (Newton: radiation and
    # films included; a network grounded only through them has no linear steady state)
    tt = np.linspace(0.0, period, 96, endpoint=False)
    w = np.column_stack([p.value(tt) for p in model.profiles]).mean(axis=0)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            Tm = steady_newton(asm, w[:model.M], w[model.M:])[ss.massive]
    except (RcsimError, np.linalg.LinAlgError, ValueError):
        Tm = np.nan_to_num(asm.initial[ss.massive], nan=20.0)
    if period_map is None:
        t = np.array([0.0, period])

        def period_map(H):
            last = {}

            def emit(tt, Y, last=last):
                last["y"] = Y[-1]

            for c in model.controllers:
                c.reset(0.0, model.temperatures(H)[0])
            run_stiff(model, t, None, emit, rtol * 0.1, atol * 0.1, H0=H)
            return last["y"][:model.n]

    H = model.energy_of(Tm)
    mixer = Anderson(min(model.n, 8))
    change = np.inf
    for _ in range(max_periods):
        Hn = period_map(H)
        Tn = model.temperatures(Hn)[0]
        change = float(np.max(np.abs(Tn - model.temperatures(H)[0])))
        if change < max(tol, 10 * atol):
            return Hn
        H_next = mixer.step(H, Hn)
        if not np.all(np.isfinite(H_next)):
            mixer = Anderson(min(model.n, 8))
            H_next = Hn
        H = H_next
    raise SolverError(f"no periodic regime after {max_periods} periods (last change "
                      f"{change:.3g} K per period)", time=period * max_periods,
                      hint="start from given temperatures and simulate longer")
