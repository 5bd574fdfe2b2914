"""Temperatures between output samples, from the solution itself, for locating band crossings.

A path hands the recorder, with each chunk, an evaluator ``evaluate(times, columns)`` of the
temperatures of output columns (the limits' nodes) at any time inside the chunk
(:class:`rcsim.recording.Chunk`); the limit tracker calls it only where a band edge is crossed
between two samples. The exact path has its own closed form (:mod:`.exact_chunks`), the
large-linear path its Hermite pieces (:mod:`.large_linear`); here:

* :class:`StiffEvaluator`: the stiff path's dense output, each BDF step's polynomial kept as a
  Chebyshev series of the watched stored energies (degree <= 5, so six values give it exactly);
* :class:`PiecewiseEvaluator`: the piecewise path's closed form of each regime over each grid
  interval of its last sweep (the state at the interval's start advanced over the sub-interval).

:class:`WatchedColumns` says which states those columns read and how (a massless node is a
combination of states and inputs).
"""

from __future__ import annotations

import numpy as np
from numpy.polynomial import chebyshev as cheb

from .exact import phi_functions
from .inputs import input_values

__all__ = ["WatchedColumns", "StiffEvaluator", "PiecewiseEvaluator", "chebyshev_piece"]

_CHEB_POINTS = np.cos(np.pi * (np.arange(6) + 0.5) / 6)
_TO_CHEB = np.linalg.inv(cheb.chebvander(_CHEB_POINTS, 5))


class WatchedColumns:
    """The states output columns ``columns`` (positions in ``out_nodes``) read.

    ``T[column] = map @ T_states[watch] + D @ w`` (a massive node: one state; a massless one:
    its row of R and D from the state space ``ss``).
    """

    def __init__(self, ss, out_nodes, columns):
        pos_m, pos_z = ss.state_of, ss.eliminated_of
        columns = np.asarray(columns, dtype=np.int64)
        need: set = set()
        for c in columns.tolist():
            node = int(out_nodes[c])
            if node in pos_m:
                need.add(pos_m[node])
            else:
                need |= set(np.flatnonzero(ss.R[pos_z[node]]).tolist())
        self.watch = np.asarray(sorted(need), dtype=np.int64)
        where = {int(s): k for k, s in enumerate(self.watch)}
        self.map = np.zeros((columns.size, self.watch.size))
        self.D = np.zeros((columns.size, ss.n_inputs))
        for r, c in enumerate(columns.tolist()):
            node = int(out_nodes[c])
            if node in pos_m:
                self.map[r, where[pos_m[node]]] = 1.0
            else:
                k = pos_z[node]
                for s_idx in np.flatnonzero(ss.R[k]).tolist():
                    self.map[r, where[s_idx]] = ss.R[k, s_idx]
                self.D[r] = ss.D[k]
        self.row_of = np.full(int(columns.max(initial=-1)) + 1, -1, dtype=np.int64)
        self.row_of[columns] = np.arange(columns.size)

    def __bool__(self) -> bool:
        return bool(self.watch.size)

    def columns(self, T_watch, times, columns, profiles) -> np.ndarray:
        """Temperatures of ``columns`` at ``times`` from the watched state temperatures there
        (one row per time)."""
        rows = self.row_of[np.asarray(columns, dtype=np.int64)]
        out = np.einsum("qw,qw->q", T_watch, self.map[rows])
        if np.any(self.D[rows]):
            out += np.einsum("qi,qi->q", input_values(profiles, times), self.D[rows])
        return out


def chebyshev_piece(dense, t_old: float, t_new: float, rows: np.ndarray):
    """(t_old, t_new, Chebyshev coefficients (rows, 6)) of a BDF step's dense output (a
    polynomial of degree at most 5 in t) for the states ``rows``."""
    mid, half = 0.5 * (t_new + t_old), 0.5 * (t_new - t_old)
    values = dense(mid + half * _CHEB_POINTS)[rows]
    return [float(t_old), float(t_new), values @ _TO_CHEB.T]


class StiffEvaluator:
    """Watched columns between samples from the stiff path's step polynomials.

    ``pieces``: [t_old, t_new, coef (watched states, 6)] per step, in time order (a step cut by
    a switching ends at the switching: ``t_new`` is then where it ends, the series keeps its
    own span in ``span``).
    """

    def __init__(self, pieces, watched: WatchedColumns, model):
        self.t0 = np.asarray([p[0] for p in pieces])
        self.t_end = np.asarray([p[1] for p in pieces])
        self.span = np.asarray([p[3] if len(p) > 3 else (p[0], p[1]) for p in pieces])
        self.coef = np.stack([p[2] for p in pieces])                   # (P, watched, 6)
        self.watched, self.model = watched, model

    def __call__(self, times, columns) -> np.ndarray:
        times = np.asarray(times, dtype=float)
        k = np.clip(np.searchsorted(self.t0, times, side="right") - 1, 0, self.t0.size - 1)
        a, b = self.span[k, 0], self.span[k, 1]
        x = (2 * times - (a + b)) / (b - a)
        basis = np.polynomial.chebyshev.chebvander(x, 5)                # (q, 6)
        H = np.einsum("qwj,qj->qw", self.coef[k], basis)
        model, watch = self.model, self.watched.watch
        T = H / model.C[watch][None, :]
        for r, s in enumerate(watch.tolist()):
            if s in model.phase:
                T[:, r] = model.phase[s].temperature_array(H[:, r])
        return self.watched.columns(T, times, columns, model.profiles)


class PiecewiseEvaluator:
    """Watched columns between samples from the piecewise path's closed forms.

    ``pieces``: (regime, t0 (P,), t1 (P,), h (P,), z0 (P, n), FR (P, n), dF (P, n)) per run of
    the last sweep: interval k runs from t0[k] to t1[k] in that regime, from modal state z0[k],
    with the forcing FR[k] rising by dF[k] over a length h[k].
    """

    def __init__(self, pieces, watched: WatchedColumns, model):
        pieces = [p for p in pieces if p[1].size]
        order = np.argsort([float(p[1][0]) for p in pieces], kind="stable")
        self.pieces = [pieces[i] for i in order]
        self.t0 = np.concatenate([p[1] for p in self.pieces]) if pieces else np.empty(0)
        self.which = np.concatenate([np.full(p[1].size, i) for i, p in enumerate(self.pieces)]) \
            if pieces else np.empty(0, dtype=np.int64)
        self.row = np.concatenate([np.arange(p[1].size) for p in self.pieces]) if pieces else \
            np.empty(0, dtype=np.int64)
        srt = np.argsort(self.t0, kind="stable")
        self.t0, self.which, self.row = self.t0[srt], self.which[srt], self.row[srt]
        self.watched, self.model = watched, model

    def __call__(self, times, columns) -> np.ndarray:
        times = np.asarray(times, dtype=float)
        k = np.clip(np.searchsorted(self.t0, times, side="right") - 1, 0, self.t0.size - 1)
        watch = self.watched.watch
        T = np.empty((times.size, watch.size))
        for piece in np.unique(self.which[k]):
            sel = np.flatnonzero(self.which[k] == piece)
            reg, t0, _, h, z0, FR, dF = self.pieces[int(piece)]
            r = self.row[k[sel]]
            tau = (times[sel] - t0[r])[:, None]
            e0, e1, e2, _ = phi_functions(tau * reg.lam[None, :])
            z = e0 * z0[r] + tau * (e1 * FR[r] + e2 * (tau / h[r][:, None]) * dF[r])
            if reg.cz:
                z += reg.particular(times[sel]) - e0 * reg.particular(t0[r])
            H = z @ reg.V.T
            T[sel] = reg.a[watch][None, :] + reg.b[watch][None, :] * H[:, watch]
        return self.watched.columns(T, times, columns, self.model.profiles)
