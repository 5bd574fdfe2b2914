"""The stiff path: any network, integrated with scipy's BDF method and an analytic sparse
Jacobian on the energy form (:mod:`.energy_model`).

The integration restarts at every jump of an input (a step), and at every switching of an on/off
thermostat (located along each step's dense output: :class:`Switching`), so no step straddles a
discontinuity. Outputs are read from the solver's dense output at the requested times, chunk by
chunk.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.polynomial import chebyshev as cheb
import scipy.linalg
import scipy.sparse as sp
import scipy.sparse.linalg as spla
from scipy.integrate import BDF
from scipy.optimize import brentq

from ..errors import SolverError
from ..profiles import common_period
from ..runinfo import RunStats
from .base import Progress, TransientPath
from .dense_eval import StiffEvaluator, WatchedColumns, chebyshev_piece
# the energy-form model and the output mapping live in their own modules; re-exported here for
# older imports
from .energy_model import DENSE_STATES, EnergyModel, StiffModel, jump_times  # noqa: F401
from .output import OutputMap, chunk_from_states, extras_of, thermostat_table  # noqa: F401

__all__ = ["StiffPath", "run_stiff", "Switching", "StiffModel", "EnergyModel", "jump_times",
           "DENSE_STATES", "MAX_EVALUATIONS"]

#: The stiff path's work is bounded: at most this many right-hand-side evaluations, plus
#: :data:`EVALUATIONS_PER_SAMPLE` per output sample and :data:`EVALUATIONS_PER_RESTART` per
#: restart (an input jump, a thermostat switching), before it stops with a SolverError.
MAX_EVALUATIONS = 200_000
EVALUATIONS_PER_SAMPLE = 100
EVALUATIONS_PER_RESTART = 500


def _bounded(model, t_out: np.ndarray, stats: RunStats):
    """``model.rhs`` that stops the run (SolverError) when the states stop being numbers
    (scipy's BDF would accept such steps and go on) or the work exceeds its bound."""
    base = MAX_EVALUATIONS + EVALUATIONS_PER_SAMPLE * int(t_out.size)
    start = model.nfev
    hint = ("the network may be too stiff for double precision: look for near-zero "
            "resistances, huge conductances or tiny capacities")

    def fun(t, y):
        if not (math.isfinite(t) and np.isfinite(y).all()):
            raise SolverError("the stiff solver broke down (its states are no longer numbers)",
                              time=t if math.isfinite(t) else None, hint=hint)
        limit = base + EVALUATIONS_PER_RESTART * stats.restarts
        if model.nfev - start > limit:
            raise SolverError(f"the stiff solver gave up after {limit:,} evaluations", time=t,
                              hint=hint)
        return model.rhs(t, y)

    return fun


def run_stiff(model: EnergyModel, t_out: np.ndarray, Tm0: np.ndarray, emit, rtol: float,
              atol: float, progress=None, record_every: int | None = None, H0=None,
              dense_steps: list | None = None, dense_rows=None, rates: bool = False) -> dict:
    """Integrate from ``Tm0`` (or the stored energies ``H0``, which also say how far a pack at
    its melting point has melted) over ``t_out`` and hand chunks of samples to ``emit``.

    ``emit(t, Y)`` receives consecutive samples (rows of full solver states). Returns the
    counts of steps, restarts, switching events and LU decompositions. With ``dense_steps``
    (a list), each step's polynomial of the states ``dense_rows`` is appended to it
    (:func:`.dense_eval.chebyshev_piece`) before its samples are emitted. With ``rates``,
    ``emit(t, Y, dH, h)`` also receives the stored-energy rates [W] of the massive nodes at
    the samples, the derivative of the step's polynomial (:func:`_rates_on_step`; NaN rows at
    the start and at input jumps, where the polynomial's left-hand rate does not belong to
    the inputs' right-hand values) and the length [s] of the step each sample lies in.
    """
    T_end = float(t_out[-1])
    if record_every is None:  # keep the buffer of full states near 40 MB at most
        record_every = int(max(1, min(2000, 5_000_000 // max(1, model.ny))))
    y = model.y0(Tm0) if H0 is None else np.concatenate([H0, np.zeros(model.ny - model.n)])
    atol_vec = np.concatenate([atol * model.C,
                               np.full(model.ny - model.n, atol * float(model.C.sum()))])
    stops = np.union1d(jump_times(model.profiles + model.varying_profiles, 0.0, T_end), [T_end])
    buf_t, buf_y = [float(t_out[0])], [y.copy()]
    buf_r, buf_h = [np.full(model.n, np.nan)], [0.0]
    jumps = stops[:-1]
    k_next = 1
    t = float(t_out[0])
    stats = RunStats(steps=0, restarts=0, events=0, nlu=0)
    switching = Switching(model)
    fun = _bounded(model, t_out, stats)

    def flush():
        nonlocal buf_t, buf_y, buf_r, buf_h
        if buf_t:
            if rates:
                emit(np.asarray(buf_t), np.vstack(buf_y), np.vstack(buf_r), np.asarray(buf_h))
            else:
                emit(np.asarray(buf_t), np.vstack(buf_y))
        buf_t, buf_y, buf_r, buf_h = [], [], [], []

    for stop in stops:
        while t < stop:
            try:
                solver = BDF(fun, t, y, float(stop), rtol=rtol, atol=atol_vec,
                             jac=model.jac(t, y) if model.is_static else model.jac)
            except (ValueError, np.linalg.LinAlgError) as exc:  # pragma: no cover - defensive
                raise SolverError(f"the stiff solver could not start: {exc}", time=t) from None
            stats.restarts += 1
            restarted = False
            while solver.status == "running":
                message = solver.step()
                if solver.status == "failed":
                    node = _worst_node(model, solver)
                    raise SolverError(f"the stiff solver gave up ({message})", time=solver.t,
                                      node=node, hint="try a looser rtol/atol, check for tiny "
                                      "capacities or huge conductances")
                stats.steps += 1
                t_old, t_new = solver.t_old, solver.t
                dense = solver.dense_output()
                # switching events of on/off thermostats, along the whole step
                t_hit = switching.first(dense, t_old, t_new) if switching else None
                t_limit = t_hit[0] if t_hit is not None else t_new
                if dense_steps is not None:
                    piece = chebyshev_piece(dense, t_old, t_new, dense_rows)
                    dense_steps.append(piece + [(t_old, t_new)] if t_hit is None else
                                       [t_old, t_limit, piece[2], (t_old, t_new)])
                k2 = k_next
                while k2 < t_out.size and t_out[k2] <= t_limit:
                    k2 += 1
                while k_next < k2:  # in batches: one long step may span many outputs
                    kb = min(k2, k_next + record_every)
                    tt = t_out[k_next:kb]
                    buf_t.extend(tt.tolist())
                    buf_y.extend(list(dense(tt).T))
                    if rates:
                        r = _rates_on_step(dense, t_old, t_new, tt, model.n)
                        r[np.isin(tt, jumps)] = np.nan
                        buf_r.extend(list(r))
                        buf_h.extend([t_new - t_old] * tt.size)
                    k_next = kb
                    if len(buf_t) >= record_every:
                        flush()
                if t_hit is not None:
                    t = float(t_hit[0])
                    y = dense(t)
                    model.controllers[t_hit[1]].switch(t, model.temperatures(y[:model.n])[0])
                    stats.events += 1
                    restarted = True
                    break
                if progress is not None:
                    progress(t_new / T_end)
            stats.nlu += getattr(solver, "nlu", 0)
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


def _rates_on_step(dense, t_old: float, t_new: float, tt: np.ndarray, n: int) -> np.ndarray:
    """(len(tt), n): the time derivative of the first ``n`` rows of a step's dense output
    (a polynomial of degree at most 5, taken exactly from six Chebyshev points) at ``tt``."""
    mid, half = 0.5 * (t_new + t_old), 0.5 * (t_new - t_old)
    coef = dense(mid + half * _CHEB_POINTS)[:n] @ _TO_CHEB.T          # (n, 6) series
    slope = coef @ _DERIVATIVE.T                                       # (n, 5) series in s
    return cheb.chebval((tt - mid) / half, slope.T).T / half


class BalancedFlows:
    """Temperatures for the heat flows of a chunk, consistent with the stored-energy rates.

    A link of conductance G carries G*dT, and the solver's states carry an error of about
    rtol*C*T in stored energy: across a stiff link (C/G far below the solver's steps) G times
    that error dwarfs the flow's own variation (at C/G = 1 ms, 14 W on a flow swinging by
    0.5 W). The rate of stored energy, the derivative of the step's polynomial, is accurate
    there: the temperatures given to the flows are corrected by one Newton-like step towards
    the balance f(T + d) = dH/dt, with the matrix K + C/h of the solver's own steps (h the
    length of the step the sample lies in): fully where a link is stiff (C/G << h), by about
    h*G/C where it is slow (C/G >> h, where the rate's own error, about C*rtol*T/h, would
    dominate G times the state's). Every flow of the network is corrected through one solve,
    so a node with several links, stiff chains and parallel paths need no special case.

    Networks with nonlinear or time-varying links keep the flows of their states (the
    correction would need those terms' flows over whole chunks).
    """

    def __init__(self, model: EnergyModel):
        self.model = model
        self.active = not model.terms
        self._factors: dict = {}

    def _solve(self, h: float, rhs: np.ndarray) -> np.ndarray:
        """(K + C/h)^-1 rhs, the factorisation kept per power of two of h."""
        key = int(round(math.log2(h)))
        lu = self._factors.get(key)
        model = self.model
        if lu is None:
            if len(self._factors) > 64:
                self._factors.clear()
            A = model.K_sparse + sp.diags(model.C / 2.0 ** key)
            lu = self._factors[key] = (scipy.linalg.lu_factor(A.toarray()) if model.dense
                                       else spla.splu(A.tocsc()))
        return scipy.linalg.lu_solve(lu, rhs) if model.dense else lu.solve(rhs)

    def temperatures(self, t, Tm, w, dH, h) -> np.ndarray | None:
        """Corrected state temperatures (rows of samples), or None without a correction."""
        if not self.active:
            return None
        model = self.model
        ok = np.isfinite(dH).all(axis=1) & (h > 0)
        if not ok.any():
            return None
        f = -(model.K_sparse @ Tm.T).T + w @ model.E.T if not model.dense else \
            -Tm @ model.K.T + w @ model.E.T
        for c in model.controllers:
            f[:, c.node_idx] += c.power_history(t, Tm)
        out = Tm.copy()
        keys = np.full(t.size, np.iinfo(np.int64).min)
        keys[ok] = np.round(np.log2(h[ok])).astype(np.int64)
        for key in np.unique(keys[ok]):
            rows = np.flatnonzero(keys == key)
            out[rows] += self._solve(2.0 ** key, (f[rows] - dH[rows]).T).T
        return out


class Switching:
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

    def __init__(self, model: EnergyModel):
        self.model = model
        self.on_off = [ci for ci, c in enumerate(model.controllers) if c.control == "on-off"]
        self.rows = np.asarray([model.controllers[ci].sensor_idx for ci in self.on_off],
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


def _flow_temperatures(model, balanced, out_map, t, Y, dH, h):
    """The output nodes' temperatures for the chunk's heat flows (:class:`BalancedFlows`), or
    None where nothing is corrected."""
    H = Y[:, :model.n]
    Tm = H / model.C[None, :]
    for i in model.phase_idx:
        Tm[:, i] = model.phase[i].temperature_array(H[:, i])
    w = (np.column_stack([p.value(t) for p in model.profiles]) if model.profiles
         else np.zeros((t.size, 0)))
    Tc = balanced.temperatures(t, Tm, w, dH, h)
    return None if Tc is None else out_map.temperatures(Tc, w)


def _worst_node(model, solver):
    try:
        f = model.rhs(solver.t, solver.y)[:model.n] / model.C
        i = int(np.argmax(np.abs(f)))
        return model.asm.node_names[int(model.ss.massive[i])]
    except Exception:  # pragma: no cover - best effort only
        return None


class StiffPath(TransientPath):
    """Any network: BDF on the stored energies, analytic sparse Jacobian, restarts at events."""

    name = "stiff"
    description = "stiff (BDF, sparse Jacobian)"

    def accepts(self, problem) -> str | None:
        return None

    def run(self, problem, recorder, progress: Progress) -> RunStats:
        model = problem.energy_model
        start = problem.start
        Tm0 = start.temperatures
        H0 = start.energies if start.energies is not None else model.energy_of(Tm0)
        H0_sum = float(H0.sum())
        out_map = OutputMap(model, recorder.out_nodes)
        extras_fn = extras_of(model)
        for c in model.controllers:
            c.reset(0.0, Tm0)

        watched = WatchedColumns(model.ss, recorder.out_nodes, recorder.limit_cols)
        pieces = [] if watched else None

        balanced = BalancedFlows(model)

        def emit(t, Y, dH=None, h=None):
            chunk = chunk_from_states(model, t, Y, H0_sum, out_map, extras_fn)
            if dH is not None:
                chunk.T_flow = _flow_temperatures(model, balanced, out_map, t, Y, dH, h)
            if pieces:             # band crossings located on the steps' polynomials
                chunk.evaluate = StiffEvaluator(list(pieces), watched, model)
                pieces[:] = pieces[-1:]
            recorder.add(chunk)

        stats = run_stiff(model, problem.times, Tm0, emit, problem.rtol, problem.atol, progress,
                          H0=H0, dense_steps=pieces, dense_rows=watched.watch,
                          rates=balanced.active)
        stats.nfev, stats.njev = model.nfev, model.njev   # the periodic start's included
        if model.controllers:
            recorder.tables["thermostats"] = thermostat_table(model.controllers, problem.times,
                                                              recorder)
        return stats

    def period_map(self, problem):
        """One period of stiff integration, at a tenth of the run's tolerances."""
        model = problem.energy_model
        t = np.array([0.0, common_period(model.profiles + model.varying_profiles,
                                         "simulation.initial")])
        rtol, atol = 0.1 * problem.rtol, 0.1 * problem.atol

        def one_period(H):
            last = {}

            def emit(tt, Y):
                last["y"] = Y[-1]

            for c in model.controllers:
                c.reset(0.0, model.temperatures(H)[0])
            run_stiff(model, t, None, emit, rtol, atol, H0=H)
            return last["y"][:model.n]

        return one_period
