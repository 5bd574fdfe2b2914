"""The stiff path: any network, integrated with scipy's BDF method and an analytic sparse
Jacobian on the energy form (:mod:`.energy_model`).

The integration restarts at every jump of an input (a step), and at every switching of an on/off
thermostat (located along each step's dense output: :class:`Switching`), so no step straddles a
discontinuity. Outputs are read from the solver's dense output at the requested times, chunk by
chunk.
"""

from __future__ import annotations

import math
from typing import NamedTuple

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

__all__ = ["StiffPath", "run_stiff", "SampleRates", "Switching", "StiffModel", "EnergyModel", "jump_times",
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


class SampleRates(NamedTuple):
    """What the stiff path's flows are corrected from, per sample (:class:`BalancedFlows`).

    The step that reaches a stop (an input jump, the end) is cut short to land on it, and
    scipy's BDF accepts its state with an error far above that of the steps before (measured:
    2.9e-4 K against 1e-9 K on a 1 ms node); its polynomial's slope carries that error over the
    short step. Samples in such a step take the state and the rate of the step before, whose
    polynomial reaches past its end by less than its own length.
    """

    dH: np.ndarray      # (c, n) stored-energy rates [W]: the derivative of the step's
    #                     polynomial (:func:`_rates_on_step`); NaN at the start, whose state is
    #                     the starting state itself
    h: np.ndarray       # (c,) the length [s] of the step (or of the step before, when longer)
    left: np.ndarray    # (c,) bool: at an input jump, where the rate is that of the step
    #                     ending there and belongs to the inputs' values before the jump
    H: np.ndarray       # (c, n) stored energies the correction starts from


def run_stiff(model: EnergyModel, t_out: np.ndarray, Tm0: np.ndarray, emit, rtol: float,
              atol: float, progress=None, record_every: int | None = None, H0=None,
              dense_steps: list | None = None, dense_rows=None, rates: bool = False) -> dict:
    """Integrate from ``Tm0`` (or the stored energies ``H0``, which also say how far a pack at
    its melting point has melted) over ``t_out`` and hand chunks of samples to ``emit``.

    ``emit(t, Y)`` receives consecutive samples (rows of full solver states). Returns the
    counts of steps, restarts, switching events and LU decompositions. With ``dense_steps``
    (a list), each step's polynomial of the states ``dense_rows`` is appended to it
    (:func:`.dense_eval.chebyshev_piece`) before its samples are emitted. With ``rates``,
    ``emit(t, Y, rates)`` also receives :class:`SampleRates` of the samples.
    """
    T_end = float(t_out[-1])
    if record_every is None:  # keep the buffer of full states near 40 MB at most
        record_every = int(max(1, min(2000, 5_000_000 // max(1, model.ny))))
    y = model.y0(Tm0) if H0 is None else np.concatenate([H0, np.zeros(model.ny - model.n)])
    atol_vec = np.concatenate([atol * model.C,
                               np.full(model.ny - model.n, atol * float(model.C.sum()))])
    stops = np.union1d(jump_times(model.profiles + model.varying_profiles, 0.0, T_end), [T_end])
    buf_t, buf_y = [float(t_out[0])], [y.copy()]
    buf_r, buf_h, buf_l, buf_f = [np.full(model.n, np.nan)], [0.0], [False], [y[:model.n].copy()]
    jumps = stops[:-1]
    k_next = 1
    t = float(t_out[0])
    stats = RunStats(steps=0, restarts=0, events=0, nlu=0)
    switching = Switching(model)
    fun = _bounded(model, t_out, stats)

    def flush():
        nonlocal buf_t, buf_y, buf_r, buf_h, buf_l, buf_f
        if buf_t:
            if rates:
                emit(np.asarray(buf_t), np.vstack(buf_y),
                     SampleRates(np.vstack(buf_r), np.asarray(buf_h),
                                 np.asarray(buf_l, dtype=bool), np.vstack(buf_f)))
            else:
                emit(np.asarray(buf_t), np.vstack(buf_y))
        buf_t, buf_y, buf_r, buf_h, buf_l, buf_f = [], [], [], [], [], []

    for stop in stops:
        while t < stop:
            try:
                solver = BDF(fun, t, y, float(stop), rtol=rtol, atol=atol_vec,
                             jac=model.jac(t, y) if model.is_static else model.jac)
            except (ValueError, np.linalg.LinAlgError) as exc:  # pragma: no cover - defensive
                raise SolverError(f"the stiff solver could not start: {exc}", time=t) from None
            stats.restarts += 1
            restarted = False
            # the last step (length, dense output, ends): the step that reaches a stop is cut
            # short, and its polynomial's slope carries the state's error over that short step
            h_last, last = 0.0, None
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
                        cut = t_new == stop and t_new - t_old < h_last
                        src = last if cut else (dense, t_old, t_new)
                        buf_r.extend(list(_rates_on_step(*src, tt, model.n)))
                        buf_f.extend(list(src[0](tt)[:model.n].T) if cut else
                                     [row[:model.n] for row in buf_y[-tt.size:]])
                        buf_h.extend([max(t_new - t_old, h_last)] * tt.size)
                        buf_l.extend(np.isin(tt, jumps).tolist())
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
                h_last, last = t_new - t_old, (dense, t_old, t_new)
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


class _TermFlows:
    """A nonlinear or time-varying term of the energy form evaluated on rows of samples at
    once: the flows of its segments (c, segments), their derivatives by the end temperatures,
    and the incidence matrices that take them to the states (:class:`rcsim.nonlinear.
    SegmentTerm`, :class:`rcsim.varying.VaryingTerm`)."""

    def __init__(self, term, n: int, dense: bool):
        self.term = term
        self.law = getattr(term, "nl", None)            # radiation, correlation films
        self.varying = getattr(term, "varying", None)   # conductances that vary in time
        k = np.arange(term.a_idx.size)
        an, bn = term.a_is_node, term.b_is_node
        ones = np.ones

        def select(mask, idx, sign=1.0):
            return sp.csr_matrix((sign * ones(int(mask.sum())), (k[mask], idx[mask])),
                                 shape=(k.size, n))

        #: (segments, n): q @ S gives the heat into each state (a loses q, b gains it)
        self.S = select(an, term.a_idx, -1.0) + select(bn, term.b_idx)
        #: (segments, n): the state at end a (b) of each segment; zero rows at boundaries
        self.Aa, self.Ab = select(an, term.a_idx), select(bn, term.b_idx)
        if dense:
            self.S_d, self.Aa_d, self.Ab_d = (m.toarray() for m in (self.S, self.Aa, self.Ab))

    @staticmethod
    def supports(term) -> bool:
        return (hasattr(term, "nl") or hasattr(term, "varying")) and all(
            hasattr(term, a) for a in ("ends", "a_idx", "b_idx", "a_is_node", "b_is_node"))

    def _conductance(self, t, left):
        g = self.varying.extra(t)
        if left.any():
            g[left] = self.varying.extra(t[left], side="left")
        return g

    def flows(self, T, w, t, left) -> np.ndarray:
        """(c, n) heat into each state for state temperatures T and inputs w (rows), at times
        t; ``left`` marks rows at a jump, where a varying conductance takes its value before."""
        ta, tb = self.term.ends(T, w)
        if self.law is not None:
            q = self.law.flows(ta, tb)
        else:
            q = self._conductance(t, left) * (ta - tb)
        return np.asarray(self.S.T @ q.T).T

    def jacobians(self, T, w, t, left):
        """d(heat into the states)/dT at rows: (g, n, n) for a dense model, else a list of
        sparse matrices."""
        ta, tb = self.term.ends(T, w)
        if self.law is not None:
            _, da, db = self.law.solve(ta, tb)
        else:
            da = self._conductance(t, left)
            db = -da
        if hasattr(self, "S_d"):
            return (np.einsum("sn,gs,sm->gnm", self.S_d, da, self.Aa_d)
                    + np.einsum("sn,gs,sm->gnm", self.S_d, db, self.Ab_d))
        return [self.S.T @ (sp.diags(a) @ self.Aa + sp.diags(b) @ self.Ab)
                for a, b in zip(da, db)]


class BalancedFlows:
    """Temperatures for the heat flows of a chunk, consistent with the stored-energy rates.

    A link of conductance G carries G*dT, and the solver's states carry an error of about
    rtol*C*T in stored energy: across a stiff link (C/G far below the solver's steps) G times
    that error dwarfs the flow's own variation (at C/G = 1 ms, 14 W on a flow swinging by
    0.5 W). The rate of stored energy, the derivative of the step's polynomial, is accurate
    there: the stored energies are corrected by delta solving the balance

        f(T(H + delta)) = dH/dt + delta/h

    (f the heat into each state by every link law, source and thermostat; h the length of the
    solver's step, to a power of two): fully where a link is stiff (C/G << h), by about h*G/C
    where it is slow (C/G >> h, where the rate's own error, about C*rtol*T/h, would dominate G
    times the state's). For a linear network one solve with K + C/h does it; nonlinear links
    (radiation, correlation films) and conductances that vary in time add their flows to f and
    are solved by chord iterations with the matrix (K - J) dT/dH + I/h, J the terms' Jacobian
    at the middle sample of each group of rows with one h (converged to 1e-13 of the absolute
    temperature; rows that do not converge are split into shorter runs of samples with their
    own J, and keep the temperatures of their states if they still do not). Phase-change nodes
    enter through T(H): in their melting range dT/dH is small and so is their correction.
    Every flow of the network is corrected through one solve, so a node with several links,
    stiff chains and parallel paths need no special case.

    Samples at an input jump hold the state just before the jump (it is continuous) and the
    rate of the step that ends there: their balance takes the inputs' values before the jump
    (``left``). The first sample is the starting state itself and is not corrected.
    """

    #: Chord iterations per round, and rounds (round r splits the rows left into 2**r runs of
    #: consecutive samples, each with its own Jacobian).
    ITERATIONS = 8
    ROUNDS = 5
    #: A sample whose correction of a stored energy exceeds this many times the solver's error
    #: bound on it (rtol |H| + atol C) keeps its state's temperatures: the rate is then the
    #: less trustworthy of the two (a step whose polynomial straddles a kink of an input or
    #: the edge of a melting range). Measured: at most 2.1 on stiff links, 9.4 at a kink. In a
    #: step cut short, the distance to the solver's own state counts too (the state of the
    #: step before, extrapolated, may be the farther one, or the solver's).
    TRUST = 4.0

    def __init__(self, model: EnergyModel, rtol: float = 1e-6, atol: float = 1e-6):
        self.model = model
        self.rtol, self.atol = rtol, atol
        supported = all(_TermFlows.supports(term) for term in model.terms)
        self.active = supported
        self.terms = ([_TermFlows(term, model.n, model.dense) for term in model.terms]
                      if supported else [])
        # the matrix depends on the state only through nonlinear terms and phase change
        self.fixed = not model.terms and not model.phase
        self._factors: dict = {}

    def _apply(self, lu, rhs: np.ndarray) -> np.ndarray:
        return scipy.linalg.lu_solve(lu, rhs) if self.model.dense else lu.solve(rhs)

    def _matrices(self, keys, H, w, t, left) -> list:
        """The factorised (K - J) diag(dT/dH) + I/h at h = 2**key for each reference row; kept
        per key when it does not depend on the state (a linear network)."""
        model = self.model
        if self.fixed and all(int(k) in self._factors for k in keys):
            return [self._factors[int(k)] for k in keys]
        T = self._state_temperatures(H)
        dTdH = np.tile(1.0 / model.C, (keys.size, 1))
        for i in model.phase_idx:
            for r in range(keys.size):
                dTdH[r, i] = model.phase[i].temperature(float(H[r, i]))[1]
        J = [term.jacobians(T, w, t, left) for term in self.terms]
        out = []
        for r, key in enumerate(keys):
            inv_h = 2.0 ** -float(key)
            A = model.K if model.dense else model.K_sparse
            for j in J:
                A = A - j[r]
            if model.dense:
                lu = scipy.linalg.lu_factor(A * dTdH[r][None, :] + inv_h * np.eye(model.n))
            else:
                lu = spla.splu(sp.csc_matrix(A @ sp.diags(dTdH[r])
                                             + inv_h * sp.identity(model.n)))
            if self.fixed:
                if len(self._factors) > 64:
                    self._factors.clear()
                self._factors[int(key)] = lu
            out.append(lu)
        return out

    def _state_temperatures(self, H):
        model = self.model
        T = H / model.C[None, :]
        for i in model.phase_idx:
            T[:, i] = model.phase[i].temperature_array(H[:, i])
        return T

    def _inflow(self, t, T, w, left):
        """(c, n) heat into each state [W] at rows of state temperatures and inputs."""
        model = self.model
        f = -(model.K_sparse @ T.T).T + w @ model.E.T if not model.dense else \
            -T @ model.K.T + w @ model.E.T
        for term in self.terms:
            f += term.flows(T, w, t, left)
        for c in model.controllers:
            f[:, c.node_idx] += c.power_history(t, T)
        return f

    def temperatures(self, t, H, w, dH, h, left, H_state=None) -> np.ndarray | None:
        """Corrected state temperatures (rows of samples), or None without a correction.

        ``H``: stored energies of the states (rows) the correction starts from; ``w``: the
        inputs at the samples (right-hand values; those before the jump are taken where
        ``left``); ``dH``: the rates of stored energy (NaN where none belongs to the sample);
        ``h``: the steps' lengths; ``H_state``: the solver's own states where they differ
        from ``H`` (a step cut short: a correction is trusted when it is small against
        either)."""
        if not self.active:
            return None
        model = self.model
        ok = np.isfinite(dH).all(axis=1) & (h > 0)
        if not ok.any():
            return None
        if left.any():
            w = w.copy()
            w[left] = np.column_stack([p.value_left(t[left]) for p in model.profiles])
        T0 = self._state_temperatures(H)
        out = T0.copy()
        keys = np.full(t.size, np.iinfo(np.int64).min)
        keys[ok] = np.round(np.log2(h[ok])).astype(np.int64)
        tol = 1e-13 * (np.abs(T0) + 273.15).max(axis=1)
        pending = ok.copy()
        for r in range(1 if self.fixed else self.ROUNDS):
            # round r: the rows left of each h, split into 2**r runs of consecutive samples,
            # each with the Jacobian at its middle (a conductance varying widely over a chunk)
            groups = [rows for key in np.unique(keys[pending])
                      for rows in np.array_split(np.flatnonzero(pending & (keys == key)), 2 ** r)
                      if rows.size]
            rows = np.concatenate(groups)
            done = self._iterate(groups, rows, keys, t, H, T0, w, dH, left, tol, out,
                                 H if H_state is None else H_state)
            pending[rows[done]] = False
            if not pending.any():
                break
        return out

    def _iterate(self, groups, rows, keys, t, H, T0, w, dH, left, tol, out,
                 H_state) -> np.ndarray:
        """Chord iterations on ``rows`` (the ``groups`` one after the other, each with one
        matrix); writes the corrected temperatures of the rows that converge into ``out`` and
        returns which did."""
        refs = np.asarray([g[g.size // 2] for g in groups])
        lus = self._matrices(keys[refs], H[refs], w[refs], t[refs], left[refs])
        ends = np.cumsum([0] + [g.size for g in groups])
        H_r, w_r, t_r, dH_r, left_r = H[rows], w[rows], t[rows], dH[rows], left[rows]
        inv_h = 2.0 ** -keys[rows].astype(float)
        delta = np.zeros_like(H_r)
        step = np.empty_like(H_r)
        T = T0[rows]
        for _ in range(1 if self.fixed else self.ITERATIONS):
            with np.errstate(all="ignore"):
                g = self._inflow(t_r, T, w_r, left_r) - dH_r - delta * inv_h[:, None]
                for lu, a, b in zip(lus, ends[:-1], ends[1:]):
                    step[a:b] = self._apply(lu, g[a:b].T).T
                delta += step
                T_new = self._state_temperatures(H_r + delta)
                change = np.abs(T_new - T).max(axis=1)
            T = T_new
            converged = np.isfinite(T).all(axis=1) & (change <= tol[rows])
            if self.fixed or converged.all():
                break
        if self.fixed:           # linear: one solve is the answer
            converged = np.isfinite(T).all(axis=1)
        model = self.model
        bound = self.rtol * np.abs(H_r) + self.atol * model.C[None, :]
        trusted = converged & (
            (np.abs(delta) <= self.TRUST * bound).all(axis=1)
            | (np.abs(H_r + delta - H_state[rows]) <= self.TRUST * bound).all(axis=1))
        out[rows[trusted]] = T[trusted]
        return converged


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


def _flow_temperatures(model, balanced, out_map, chunk, Y, rates):
    """The output nodes' temperatures for the chunk's heat flows (:class:`BalancedFlows`), or
    None where nothing is corrected. The inputs are those :func:`.output.chunk_from_states`
    already evaluated for the chunk (``chunk.u``, ``chunk.s``), not evaluated again."""
    w = np.hstack([chunk.u, chunk.s]) if model.profiles else np.zeros((chunk.t.size, 0))
    Tc = balanced.temperatures(chunk.t, rates.H, w, rates.dH, rates.h, rates.left,
                               Y[:, :model.n])
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

        balanced = BalancedFlows(model, problem.rtol, problem.atol)

        def emit(t, Y, rates=None):
            chunk = chunk_from_states(model, t, Y, H0_sum, out_map, extras_fn)
            if rates is not None:
                chunk.T_flow = _flow_temperatures(model, balanced, out_map, chunk, Y, rates)
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
