"""The large-linear path: linear networks of any size, one sparse factorisation per step length.

A linear network obeys ``C dT/dt = -K T + E w(t)`` with a constant, symmetric, sparse ``K``.
Above :data:`~rcsim.transient.registry.EXACT_LIMIT` states the dense modal decomposition of the
exact path costs too much, and the general stiff path (BDF) refactorises a Jacobian that never
changes. This path uses the linearity instead:

* **Scheme**: the three-stage, third-order, L-stable, stiffly accurate singly diagonally implicit
  Runge-Kutta method of R. Alexander (*SIAM J. Numer. Anal.* 14 (1977) 1006-1021, the method of
  its Table 2: gamma = 0.4358665215 the root of x^3 - 3x^2 + 3x/2 - 1/6 in (1/6, 1/2)). Every
  stage solves with the same matrix ``C + gamma h K`` (symmetric positive definite), so one sparse
  LU factorisation (SuperLU, symmetric mode) serves every step of length h for the whole run;
  factorisations are kept per step length (a uniform output grid needs one or two).
  L-stability damps the fast modes of a large network in one step: no step-size limit from
  stiffness.
* **Grid**: the input knots (steps, table points) split the run into intervals; steps never
  straddle a knot, and are ``L / 2^l`` long in an interval of length L (so that evenly spaced
  knots, an hourly table, share the same few factorisations). Steps are not tied to the output
  times: output samples inside a step are read from the step's cubic Hermite interpolant
  (values and derivatives at both ends; the last stage gives the end derivative for free), which
  is as accurate as the third-order step itself.
* **Error control by step doubling**: every pair of steps of length h is compared with one step
  of 2h from the same state; the difference over (2^3 - 1) estimates the error of the pair, which
  must be below ``atol + rtol |T|`` (the run's tolerances) at every state, else the pair is
  redone with half the step (a new factorisation, kept). A pair that passes by a wide margin
  lets the next ones take steps twice as long. The finer solution is kept (no extrapolation:
  that would lose L-stability).
* **Energies**: the heat through the boundary links and from the sources come from the same
  stage quadrature as the update itself (``h * sum b_j`` over the stages), so the energy balance
  closes to rounding at every step's end, whatever the step (at samples inside a step, the
  Hermite integral of the states and the inputs' exact integrals add the part of the step).
* **Between samples**: the same Hermite interpolants locate band crossings.

The method and the alternatives were measured at equal accuracy
(``tests/benchmarks/bench_large.py``): a reduced modal basis (slowest modes by shift-invert
Lanczos, plus a static correction) loses accuracy where a network's own time constants are near
the output step (every node of a fine mesh); Krylov exponentials (``expm_multiply``) need a number
of products that grows with the norm of C^-1 K times the step.
"""

from __future__ import annotations

import math

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from ..errors import SolverError
from ..profiles import common_period
from ..recording import Chunk
from ..runinfo import RunStats
from .base import Progress, TransientPath
from .dense_eval import WatchedColumns
from .inputs import input_values, linear_parts

__all__ = ["LargeLinearPath", "LinearStepper", "SDIRK3"]

_NONLINEAR = ("needs a linear network (this one has radiation, film correlations, phase change "
              "or thermostats)")


class _Tableau:
    """A singly diagonally implicit, stiffly accurate Runge-Kutta method (b = last row of A)."""

    def __init__(self, gamma: float, A, order: int):
        self.gamma = gamma
        self.A = np.asarray(A, dtype=float)
        self.c = self.A.sum(axis=1)
        self.b = self.A[-1]
        self.order = order
        self.stages = self.A.shape[0]


def _alexander():
    # gamma: the root in (1/6, 1/2) of gamma^3 - 3 gamma^2 + 3/2 gamma - 1/6 = 0 (L-stability
    # and third order); tau2 = (1 + gamma)/2; b1, b2 from the order conditions (Alexander 1977)
    roots = np.roots([1.0, -3.0, 1.5, -1.0 / 6.0])
    gamma = float(min(r.real for r in roots if abs(r.imag) < 1e-12 and 1 / 6 < r.real < 0.5))
    tau2 = 0.5 * (1.0 + gamma)
    b1 = -(6 * gamma ** 2 - 16 * gamma + 1) / 4
    b2 = (6 * gamma ** 2 - 20 * gamma + 5) / 4
    return _Tableau(gamma, [[gamma, 0.0, 0.0], [tau2 - gamma, gamma, 0.0], [b1, b2, gamma]], 3)


#: Alexander's L-stable SDIRK method of order 3 (three stages, stiffly accurate).
SDIRK3 = _alexander()

#: Factorisations kept (one per step length).
_KEPT = 16
#: Halvings of the step before giving up on an interval.
_MAX_LEVEL = 30


class LinearStepper:
    """Steps ``C dT/dt = -K T + E w(t)`` with an SDIRK method, one factorisation per step length.

    Parameters
    ----------
    C : (n,) capacities [J/K]; K : sparse (n, n); E : sparse (n, I); profiles : I inputs.
    """

    def __init__(self, C, K, E, profiles, tableau=SDIRK3):
        self.C = np.asarray(C, dtype=float)
        self.K = sp.csc_matrix(K)
        self.E = sp.csr_matrix(E)
        self.profiles = list(profiles)
        self.tab = tableau
        self._lu: dict = {}
        self.factorisations = 0
        self.solves = 0

    def lu(self, h: float):
        """The factorisation of C + gamma h K (kept per step length)."""
        key = float(h)
        lu = self._lu.get(key)
        if lu is None:
            if len(self._lu) >= _KEPT:
                self._lu.pop(next(iter(self._lu)))
            M = (sp.diags(self.C) + (self.tab.gamma * h) * self.K).tocsc()
            try:
                lu = spla.splu(M, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0,
                               options={"SymmetricMode": True})
            except RuntimeError as exc:       # pragma: no cover - C > 0, K >= 0: SPD
                raise SolverError(f"the large-linear solver could not factorise: {exc}") \
                    from None
            self._lu[key] = lu
            self.factorisations += 1
        return lu

    def stage_inputs(self, t0: float, h: float, count: int) -> np.ndarray:
        """Inputs at the stages of ``count`` steps of length h from t0: (count, s, I); a stage
        at a step's end takes the value just before it (an input jumping there acts after)."""
        tab = self.tab
        times = t0 + h * (np.arange(count)[:, None] + tab.c[None, :])
        w = np.empty(times.shape + (len(self.profiles),))
        for i, p in enumerate(self.profiles):
            w[:, :, i] = p.value(times)
            end = tab.c >= 1.0
            if end.any():
                w[:, end, i] = p.value_left(times[:, end])
        return w

    def steps(self, y, t0: float, h: float, count: int):
        """``count`` steps of length h from ``y`` at t0.

        Returns (states after each step (count, n), stage values (count, s, n), inputs at the
        stages (count, s, I), C times the derivative at each step's end (count, n)).
        """
        tab = self.tab
        s = tab.stages
        n = self.C.size
        w = self.stage_inputs(t0, h, count)
        Ew = (self.E @ w.reshape(count * s, -1).T).T.reshape(count, s, n) if w.shape[2] else \
            np.zeros((count, s, n))
        lu = self.lu(h)
        gh = tab.gamma * h
        Y = np.empty((count, s, n))
        G = np.empty((s, n))
        ends = np.empty((count, n))
        for k in range(count):
            Cy = self.C * y
            for i in range(s):
                rhs = Cy + gh * Ew[k, i]
                for j in range(i):
                    rhs += (h * tab.A[i, j]) * G[j]
                Yi = lu.solve(rhs)
                Y[k, i] = Yi
                # C-weighted derivative at the stage, from the stage equation (no product by K)
                G[i] = (self.C * Yi - rhs) / gh + Ew[k, i]
            self.solves += s
            y = Y[k, -1]
            ends[k] = G[-1]            # stiffly accurate: -K y + E w at the step's end
        return Y[:, -1], Y, w, ends


class _Controller:
    """Step doubling inside intervals free of input knots (see the module text).

    Steps are ``L / 2^l`` for an interval of length L, so that a uniform grid of knots (an
    hourly table) needs the same few factorisations throughout; the level l goes up when a pair
    of steps misses the tolerance, down when it meets it by a wide margin (and the position
    allows the longer step).
    """

    def __init__(self, stepper: LinearStepper, rtol: float, atol: float, h_guess: float):
        self.st = stepper
        self.rtol, self.atol = rtol, atol
        self.h = float(h_guess)
        self.steps = 0
        self.rejected = 0

    def _error(self, fine, coarse) -> float:
        scale = self.atol + self.rtol * np.maximum(np.abs(fine), np.abs(coarse))
        return float(np.max(np.abs(fine - coarse) / scale)) / (2 ** self.st.tab.order - 1)

    def interval(self, y, a: float, b: float):
        """Pairs of accepted steps from ``y`` at a to b: yields (times (3,), states (2, n),
        stage values (2, s, n), stage inputs (2, s, I), C times the end derivatives (2, n))."""
        L = b - a
        level = max(1, int(math.ceil(math.log2(max(L / self.h, 1.0)) - 1e-9)))
        p = 0                                       # position, in steps of the current level
        while p < 2 ** level:
            h = L / 2 ** level
            t0 = a + p * h
            fine, Y, w, g_end = self.st.steps(y, t0, h, 2)
            coarse = self.st.steps(y, t0, 2 * h, 1)[0]
            err = self._error(fine[1:], coarse)
            if err > 1.0:
                if level >= _MAX_LEVEL:     # pragma: no cover - tolerance below rounding
                    raise SolverError("the large-linear solver cannot meet the tolerance",
                                      time=t0, hint="loosen rtol/atol")
                level, p = level + 1, 2 * p
                self.rejected += 1
                continue
            self.steps += 2
            yield np.array([t0, t0 + h, t0 + 2 * h]), fine, Y, w, g_end
            y = fine[-1]
            p += 2
            if err * 2 ** (self.st.tab.order + 2) < 1.0 and level > 1 and p % 4 == 0:
                level, p = level - 1, p // 2
        self.h = L / 2 ** level


def _hermite(s):
    """Cubic Hermite basis at fractions s of a step: (h00, h10, h01, h11) and their integrals
    from 0 to s (in units of the step length)."""
    basis = ((1 + 2 * s) * (1 - s) ** 2, s * (1 - s) ** 2, s * s * (3 - 2 * s), s * s * (s - 1))
    integral = (s - s ** 3 + s ** 4 / 2, s * s / 2 - 2 * s ** 3 / 3 + s ** 4 / 4,
                s ** 3 - s ** 4 / 2, -s ** 3 / 3 + s ** 4 / 4)
    return basis, integral


class LargeLinearPath(TransientPath):
    """Linear networks of any size: an L-stable SDIRK method with step doubling, one sparse
    factorisation per step length."""

    name = "large-linear"
    description = "large linear (L-stable SDIRK3, sparse, step doubling)"

    def accepts(self, problem) -> str | None:
        return None if problem.is_linear else _NONLINEAR

    def run(self, problem, recorder, progress: Progress) -> RunStats:
        return _Run(problem, recorder, progress).go()

    def period_map(self, problem):
        """One period of the large-linear integration (a linear network's period map)."""
        model = problem.energy_model
        period = common_period(model.profiles, "simulation.initial")
        grid = np.union1d([0.0, period], _knots(model.profiles, 0.0, period))

        def one_period(H):
            st = LinearStepper(model.C, model.K_sparse, model.E, model.profiles)
            ctl = _Controller(st, 0.1 * problem.rtol, 0.1 * problem.atol, period / 96)
            y = H / model.C
            for a, b in zip(grid[:-1], grid[1:]):
                for _, fine, *_ in ctl.interval(y, float(a), float(b)):
                    y = fine[-1]
            return y * model.C

        return one_period


def _input_integrals(profiles, t0: float, t: np.ndarray) -> np.ndarray:
    """Exact integrals of the inputs from t0 to each of ``t`` (no knot in between: the
    piecewise-linear parts are straight there), shape (len(t), I)."""
    right = linear_parts(profiles, np.array([t0]), "right")                   # (1, I)
    left = linear_parts(profiles, t, "left")                                  # (q, I)
    out = 0.5 * (t - t0)[:, None] * (right + left)
    for i, p in enumerate(profiles):
        for amp, om, ph in p.sines():
            out[:, i] += amp / om * (math.cos(om * t0 + ph) - np.cos(om * t + ph))
    return out


def _knots(profiles, t0, t1) -> np.ndarray:
    ks = [p.knots(t0, t1) for p in profiles]
    ks = [k for k in ks if k.size]
    return np.unique(np.concatenate(ks)) if ks else np.empty(0)


class _Run:
    """One run of the large-linear path into a recorder."""

    def __init__(self, problem, recorder, progress):
        self.problem, self.recorder, self.progress = problem, recorder, progress
        model = self.model = problem.energy_model
        ss = model.ss
        self.n = ss.n
        self.stepper = LinearStepper(model.C, model.K_sparse, model.E, model.profiles)
        t = problem.times
        self.ctl = _Controller(self.stepper, problem.rtol, problem.atol,
                               float(np.min(np.diff(t))) if t.size > 1 else float(t[-1]))
        self.M = model.M
        # output columns: a state, or a massless node from the states and the inputs
        pos_m, pos_z = ss.state_of, ss.eliminated_of
        out = recorder.out_nodes
        is_m = np.asarray([int(i) in pos_m for i in out], dtype=bool)
        self.cols_m = np.flatnonzero(is_m)
        self.state_m = np.asarray([pos_m[int(i)] for i in out[is_m]], dtype=np.int64)
        self.cols_z = np.flatnonzero(~is_m)
        rows_z = np.asarray([pos_z[int(i)] for i in out[~is_m]], dtype=np.int64)
        self.R = ss.R[rows_z] if rows_z.size else np.zeros((0, self.n))
        self.D = ss.D[rows_z] if rows_z.size else np.zeros((0, ss.n_inputs))
        self.all_states = bool(is_m.all()) and np.array_equal(self.state_m, np.arange(self.n))
        # the states the outputs read (all of them only when every node is recorded)
        if self.all_states:
            self.keep = np.arange(self.n)
        else:
            used = set(self.state_m.tolist())
            for k in range(self.R.shape[0]):
                used |= set(np.flatnonzero(self.R[k]).tolist())
            self.keep = np.asarray(sorted(used), dtype=np.int64)
        where = np.full(self.n, -1, dtype=np.int64)
        where[self.keep] = np.arange(self.keep.size)
        self.state_m_kept = where[self.state_m]
        self.R_kept = self.R[:, self.keep]
        # limit columns: the states the evaluator between samples must keep
        self.watched = WatchedColumns(ss, out, recorder.limit_cols)
        self.watch = self.watched.watch

    def temperatures(self, Y: np.ndarray, w: np.ndarray) -> np.ndarray:
        """Output columns from the kept states (c, kept) and inputs (c, I)."""
        if self.all_states:
            return Y
        T = np.empty((Y.shape[0], self.recorder.out_nodes.size))
        T[:, self.cols_m] = Y[:, self.state_m_kept]
        if self.cols_z.size:
            T[:, self.cols_z] = Y @ self.R_kept.T + w @ self.D.T
        return T

    def go(self) -> RunStats:
        problem, model, rec = self.problem, self.model, self.recorder
        t_out = problem.times
        y = np.array(problem.start.temperatures, dtype=float)
        C = model.C
        H0_sum = float((C * y).sum())
        T_end = float(t_out[-1])
        grid = np.union1d([0.0, T_end], _knots(model.profiles, 0.0, T_end))
        w0 = input_values(model.profiles, t_out[:1])
        nb, S = model.nb, model.S
        rec.add(Chunk(t_out[:1], self.temperatures(y[None, self.keep], w0), w0[:, :self.M],
                      w0[:, self.M:], np.zeros((1, nb)), np.zeros((1, S)), np.zeros(1)))
        width = max(1, rec.out_nodes.size + self.n // 4)
        self.chunk_rows = max(16, min(4096, 4_000_000 // width))
        self.buf = _Buffer()
        self._dense = []
        self.e = [np.zeros(nb), np.zeros(S)]            # energies at the last step's end
        self.k_out = 1                                  # next output sample
        b = self.stepper.tab.b
        for a, end in zip(grid[:-1].tolist(), grid[1:].tolist()):
            # C dT/dt at the interval's start, with the inputs just after it
            g = np.asarray(model.E @ input_values(model.profiles, np.array([a]))[0]
                           - model.K_sparse @ y).ravel()
            for times, fine, Y, w, g_end in self.ctl.interval(y, a, end):
                hs = np.diff(times)
                Iy = np.einsum("k,s,ksn->kn", hs, b, Y)          # state integrals per step
                Iw = np.einsum("k,s,ksi->ki", hs, b, w)          # input integrals per step
                inc = self._energies(Iy, Iw)
                starts = np.vstack([y[None, :], fine[:-1]])
                g_starts = np.vstack([g[None, :], g_end[:-1]])
                for j in range(2):
                    self._outputs(times[j], times[j + 1], starts[j], fine[j], g_starts[j],
                                  g_end[j], inc[0][j], inc[1][j], t_out, H0_sum)
                if self.watch.size:
                    self._keep_dense(times, starts, fine, g_starts, g_end)
                y, g = fine[-1], g_end[-1]
                if len(self.buf) >= self.chunk_rows:
                    self._flush(H0_sum)
                    self.progress(float(times[-1]) / T_end)
        self._flush(H0_sum)
        self.progress(1.0)
        return RunStats(samples=int(t_out.size), steps=self.ctl.steps,
                        nlu=self.stepper.factorisations)

    def _outputs(self, t0, t1, y0, y1, g0, g1, inc_links, inc_src, t_out, H0_sum):
        """Output samples in (t0, t1]: the step's Hermite interpolant (the end exactly), the
        energies from the step's start plus the integrals up to each sample."""
        k = self.k_out
        stop = int(np.searchsorted(t_out, t1 + 1e-12 * max(1.0, abs(t1)), side="right"))
        e_end = (self.e[0] + inc_links, self.e[1] + inc_src)
        if stop > k:
            model, C, h = self.model, self.model.C, t1 - t0
            tk = t_out[k:stop]
            s = (tk - t0) / h
            inner = s < 1.0 - 1e-12
            if inner.any():
                si = s[inner][:, None]
                (b00, b10, b01, b11), (i00, i10, i01, i11) = _hermite(si)
                d0, d1 = (g0 / C)[None, :], (g1 / C)[None, :]
                yk = b00 * y0 + (b10 * h) * d0 + b01 * y1 + (b11 * h) * d1
                Iy = h * (i00 * y0 + (i10 * h) * d0 + i01 * y1 + (i11 * h) * d1)
                links, src = self._energies(Iy, _input_integrals(model.profiles, t0,
                                                                  tk[inner]))
            for q, t in enumerate(tk.tolist()):
                if inner[q]:
                    r = int(np.count_nonzero(inner[:q]))
                    self.buf.add(t, yk[r, self.keep], float(C @ yk[r]), self.e[0] + links[r],
                                 self.e[1] + src[r])
                else:
                    self.buf.add(t, y1[self.keep], float(C @ y1), e_end[0], e_end[1])
            self.k_out = stop
        self.e[0], self.e[1] = e_end

    def _energies(self, Iy, Iw):
        model = self.model
        if model.nb:
            t_end = (model.A_end_sparse @ Iy.T).T + Iw @ model.D_end.T
            flow = model.g_end[None, :] * (Iw[:, model.bcol] - t_end)
            inc_links = np.asarray((model.to_links_sparse @ flow.T).T)
        else:
            inc_links = np.zeros((Iy.shape[0], 0))
        return inc_links, Iw[:, self.M:]

    def _keep_dense(self, times, starts, fine, g_starts, g_end):
        """Values and derivatives of the watched states at both ends of each step (Hermite
        pieces for locating band crossings between samples)."""
        watch, C = self.watch, self.model.C[self.watch]
        self._dense.append((times[:-1], times[1:], starts[:, watch], fine[:, watch],
                            g_starts[:, watch] / C, g_end[:, watch] / C))

    def _flush(self, H0_sum):
        buf = self.buf
        if not len(buf):
            return
        model, rec = self.model, self.recorder
        t, Yo, stored, cl, cs = buf.take()
        w = input_values(model.profiles, t)
        evaluate = None
        if self.watch.size and self._dense:
            evaluate = _HermiteEvaluator(self._dense, self.watched, model.profiles)
            last = float(t[-1])                     # keep the steps after the last sample
            self._dense = [d for d in self._dense if d[1][-1] > last]
        rec.add(Chunk(t, self.temperatures(Yo, w), w[:, :self.M], w[:, self.M:], cl, cs,
                      stored - H0_sum, evaluate=evaluate))


class _Buffer:
    """Output rows collected until a chunk is full."""

    def __init__(self):
        self.rows: list = []

    def __len__(self):
        return len(self.rows)

    def add(self, t, y, stored, cl, cs):
        self.rows.append((t, y, stored, cl, cs))

    def take(self):
        t, y, stored, cl, cs = zip(*self.rows)
        self.rows = []
        return (np.asarray(t), np.vstack(y), np.asarray(stored), np.vstack(cl), np.vstack(cs))


class _HermiteEvaluator:
    """Watched columns between samples: a cubic Hermite piece on each step of the watched
    states (values and derivatives at both ends)."""

    def __init__(self, dense, watched: WatchedColumns, profiles):
        self.t0 = np.concatenate([d[0] for d in dense])
        self.t1 = np.concatenate([d[1] for d in dense])
        self.y0 = np.vstack([d[2] for d in dense])
        self.y1 = np.vstack([d[3] for d in dense])
        self.d0 = np.vstack([d[4] for d in dense])
        self.d1 = np.vstack([d[5] for d in dense])
        self.watched, self.profiles = watched, profiles

    def __call__(self, times, columns):
        times = np.asarray(times, dtype=float)
        k = np.clip(np.searchsorted(self.t0, times, side="right") - 1, 0, self.t0.size - 1)
        h = (self.t1[k] - self.t0[k])[:, None]
        s = ((times - self.t0[k]) / h[:, 0])[:, None]
        Yw = ((1 + 2 * s) * (1 - s) ** 2 * self.y0[k] + s * (1 - s) ** 2 * h * self.d0[k]
              + s * s * (3 - 2 * s) * self.y1[k] + s * s * (s - 1) * h * self.d1[k])
        return self.watched.columns(Yw, times, columns, self.profiles)
