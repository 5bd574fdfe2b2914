"""The exact path's run loop: modes advanced chunk by chunk in *modes-major* layout, with the
fewest passes over memory, and an evaluator of the solution between samples.

Per chunk of c output intervals of one length h (the bulk of any run on a regular grid whose
input knots fall on output times), with the n modes as rows and time along each row:

* the inputs' piecewise-linear parts and sines at the output times form a few rows ``X``
  (K = 2 inputs + 2 sines rows), and the modal forcing is one product ``G = M_g X`` (n x c);
* *fast* modes, those whose decay over J intervals exp(-lam J h) is at most 1e-20
  (:data:`FAST_DECAY`, far below the rounding of a double), need no recurrence: their state is
  the sum of their last J forcings, ``z[k+1] = sum_j a^j (M_g X)[:, k-j]``, so they fold into
  the output products as J shifted copies of the input rows (K J rows instead of one row per
  mode), with their start state's decay over a chunk's first J samples added exactly
  (:func:`fast_taps` picks J by cost; on a 50-node wall with 10-minute outputs 33 of 50 modes
  go this way with J = 4, on a 200-node wall 182 of 200 with J = 3);
* the recurrence ``z[k+1] = exp(-lam h) z[k] + G[k]`` of the other modes runs along the rows
  in blocks of 16 (:meth:`ModalRunner._scan`): the block ends from zero start come straight
  from the input rows (one small product), are chained one level up
  (:func:`modes_major_recurrence`), and each block's start state rides in a spare column of
  the forcing, so the states are one batched product with ``[triangular powers; a^(j+1)]`` per
  mode; no Python loop over samples or modes;
* temperatures of the output nodes are one product ``[A_S D A_F F_g] [Z_S; w^T; X_J]``
  (nodes x c; Z_S the scanned modes' states, X_J the shifted input rows) written straight into
  the recorder's column-major history (no transposing copy, no second pass);
* the energy through the boundary links needs the time integral of the temperatures at the
  boundary segments only: it is projected first (``A_e`` times the state-integral kernels), so
  the full state integral (n x c) is never formed; with the stored energy ``q Z`` it is one
  product of the same stacked rows with ``[A_he; q]`` folded the same way; the states of
  every mode are formed only when a limit tracker needs them between samples;
* the forcing and the states live in work arrays kept from chunk to chunk (fresh arrays of a
  few MB per chunk cost more in page faults than the arithmetic done in them).

Chunks with an input knot inside an output interval (a step between two samples) or with
intervals of several lengths take the general closed form of
:meth:`~rcsim.transient.exact.ExactPropagator.propagate` (row-major) instead: same numbers.

:class:`ModalEvaluator` gives the recorded temperatures at any time inside a chunk, in closed
form (the state at the sample before, advanced over the sub-interval; input knots inside it are
stepped over exactly); the limit tracker uses it to locate band crossings.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from ..recording import work_array
from .exact import phi_functions, sine_integrals, sine_response_factors
from .inputs import input_values, linear_parts

__all__ = ["ModalChunk", "ModalRunner", "ModalEvaluator", "modes_major_recurrence", "fast_taps",
           "FAST_DECAY"]

_BLOCK = 16


def _block_matrix(a: np.ndarray, L: int):
    """(powers (n, L+1): a^0..a^L, triangular (n, L, L) with [i, j] = a^(j-i) for j >= i)."""
    powers = a[:, None] ** np.arange(L + 1)[None, :]
    lag = np.arange(L)[None, :] - np.arange(L)[:, None]          # j - i
    tri = np.where(lag[None] >= 0, powers[:, np.clip(lag, 0, None)], 0.0)
    return powers, tri


def modes_major_recurrence(a: np.ndarray, G: np.ndarray, z0: np.ndarray, cache=None,
                           depth: int = 0):
    """Solve ``z[:, k+1] = a * z[:, k] + G[:, k]`` (a per row) for k = 0..N-1; returns the
    states z[:, 1..N] as an (n, N) array. ``G`` is (n, N): modes as rows.

    Blocks of 16 samples are one batched product with a triangular matrix of powers of ``a``
    per mode; the block ends are chained by the same recurrence one level up. ``cache`` (a
    dict, emptied by the caller when ``a`` changes) keeps those matrices for every level.

    >>> modes_major_recurrence(np.array([0.5]), np.ones((1, 3)), np.array([0.0])).tolist()
    [[1.0, 1.5, 1.75]]
    """
    n, N = G.shape
    if N == 0:
        return np.empty((n, 0))
    L = _BLOCK if N > _BLOCK else N
    nb = -(-N // L)
    if nb * L != N:
        G = np.concatenate([G, np.zeros((n, nb * L - N))], axis=1)
    factors = None if cache is None else cache.get((depth, L))
    if factors is None:
        factors = _block_matrix(a, L)
        if cache is not None:
            cache[(depth, L)] = factors
    powers, tri = factors
    Y = np.matmul(G.reshape(n, nb, L), tri)                      # (n, nb, L) from zero start
    if nb == 1:
        starts = z0[:, None]
    else:
        ends = modes_major_recurrence(powers[:, L].copy(), Y[:, :, L - 1], z0, cache,
                                      depth + 1)                 # (n, nb)
        starts = np.concatenate([z0[:, None], ends[:, :-1]], axis=1)
    Y += powers[:, None, 1:] * starts[:, :, None]
    out = Y.reshape(n, nb * L)
    return out[:, :N] if nb * L != N else out


#: A mode whose decay over J intervals is at most this is *fast*: its state is the sum of its
#: last J forcings (older ones and the start state weigh at most 1e-20 of them, far below the
#: 1.1e-16 rounding of a double), so it needs no scan and folds into the output products.
FAST_DECAY = 1e-20

#: Most taps (shifted copies of the input rows) the fast modes may take.
MAX_TAPS = 8

#: Cost of scanning one mode, counted as output rows of the products (measured: the scan of a
#: mode over a sample costs about what 30 rows of the output product cost).
SCAN_ROWS = 30


def fast_taps(a: np.ndarray, K: int, rows: int) -> tuple[int, np.ndarray]:
    """(J, fast): the number of taps J and the modes (mask) taken as fast, for decay factors
    ``a`` = exp(-lam h) over one interval, K input rows and ``rows`` output rows.

    A mode with a^J <= :data:`FAST_DECAY` costs K J numbers per output row and sample when
    folded (shared by all fast modes), a scanned one 1 + :data:`SCAN_ROWS` / rows: J is chosen
    for the least cost (0: every mode scanned).

    >>> J, fast = fast_taps(np.array([0.9, 1e-30, 1e-30, 1e-30, 1e-30, 1e-12]), 1, 10)
    >>> J, fast.tolist()
    (2, [False, True, True, True, True, True])
    """
    a = np.asarray(a, dtype=float)
    with np.errstate(divide="ignore"):
        taps = np.where(a <= 0.0, 1.0,
                        np.ceil(np.log(FAST_DECAY) / np.log(np.minimum(a, 1.0))))
    taps = np.where(np.isfinite(taps) & (taps > 0), taps, np.inf)
    best, best_cost = 0, a.size * (rows + SCAN_ROWS)
    for J in range(1, MAX_TAPS + 1):
        cost = np.count_nonzero(taps > J) * (rows + SCAN_ROWS) + K * J * rows
        if cost < best_cost:
            best, best_cost = J, cost
    return best, (taps <= best) if best else np.zeros(a.size, dtype=bool)


class ModalChunk(NamedTuple):
    """One chunk of the exact run over output intervals t[k0]..t[k1]."""

    k0: int
    k1: int
    T: np.ndarray          # (c, out nodes) temperatures [degC] at t[k0+1..k1], column-major
    w: np.ndarray          # (c, inputs) input values there
    int_Te: np.ndarray     # (c, boundary segments) time integral of their node temperatures
    U: np.ndarray          # (c, inputs) time integral of each input over each interval
    stored: np.ndarray     # (c,) stored energy q . z [J]
    Z: np.ndarray | None   # (n, c) modal states at t[k0+1..k1] (modes as rows), if asked
    z_end: np.ndarray      # (n,) modal state at t[k1]


class ModalRunner:
    """Runs a linear network's modes over output times, chunk by chunk (see the module text).

    Parameters
    ----------
    prop : rcsim.transient.exact.ExactPropagator
    A_out, D_out : output maps of the recorded nodes (``T = A z + D w``)
    A_e, D_e : output maps of the nodes at the boundary segments (their time integrals)
    q_store : (n,) stored energy per unit modal state
    """

    def __init__(self, prop, A_out, D_out, A_e, D_e, q_store):
        self.prop = prop
        self.A_out, self.D_out = np.ascontiguousarray(A_out), np.ascontiguousarray(D_out)
        self.A_e, self.D_e = A_e, D_e
        self.q = q_store
        self.profiles = prop.profiles
        n = prop.lam.size
        self._factors: dict = {}
        self._h = None
        self._irregular = None
        self._pieces = None
        self._n = n

    def _set_step(self, h: float) -> None:
        """Per-mode factors of one interval length: forcing and projected state-integral maps,
        the split of the modes into scanned and fast ones (:func:`fast_taps`) and the output
        matrices over the stacked rows of a chunk."""
        if self._h == h:
            return
        prop, lam, W = self.prop, self.prop.lam, self.prop.W
        e0, e1, e2, e3 = phi_functions(h * lam)
        cols_g = [W * (h * e1)[:, None], W * (h * e2)[:, None]]         # (n, I) each
        cols_h = [W * (h * h * e2)[:, None], W * (h * h * e3)[:, None]]
        for i, (amp, om, ph) in prop.sines:
            c, c2 = sine_response_factors(h * lam, e1, e2, om * h, h)
            c, c2 = amp * W[:, i] * c, amp * W[:, i] * c2
            cols_g.append(np.column_stack([c.real, c.imag]))
            cols_h.append(np.column_stack([c2.real, c2.imag]))
        M_g = np.hstack(cols_g)                                          # (n, K)
        self.M_he = self.A_e @ np.hstack(cols_h)                         # (segments, K)
        self.A_he = self.A_e * (h * e1)[None, :]                         # decay of start state
        self.he1 = h * e1
        self.a = e0
        self._h = h
        self._factors = {}
        n, K = M_g.shape
        I = self.D_out.shape[1]
        proj = np.vstack([self.A_he, self.q[None, :]])                  # A_he z and q z
        # fast modes: their state is the last J forcings (older ones and the start state
        # have decayed below FAST_DECAY of it), so their temperatures come from the input rows
        J, fast = fast_taps(e0, K, self.A_out.shape[0] + proj.shape[0])
        slow = np.flatnonzero(~fast)
        fast = np.flatnonzero(fast)
        self._slow, self._fast, self._J = slow, fast, J
        a_f = e0[fast]
        #: mode-to-state rows of the fast modes over the J shifted input rows: z_F = F_g X_J
        self._F_g = np.hstack([(a_f ** j)[:, None] * M_g[fast] for j in range(J)]) \
            if J else np.zeros((0, 0))
        #: a_F^(k+1), k < J: the start state's share in the first J samples
        self._start_decay = a_f[:, None] ** np.arange(1, J + 1)[None, :]
        A_f, proj_f = self.A_out[:, fast], proj[:, fast]
        self._A_f, self._proj_f = A_f, proj_f
        #: [A_S D A_F F_g]: temperatures are one product with the stacked [Z_S; w^T; X_J]
        self.AD_out = np.ascontiguousarray(np.hstack([self.A_out[:, slow], self.D_out,
                                                      A_f @ self._F_g]))
        self._proj = np.ascontiguousarray(np.hstack([proj[:, slow], np.zeros((proj.shape[0], I)),
                                                     proj_f @ self._F_g]))
        # block factors of the scan of the slow modes (see :meth:`_scan`): a^(j-i) below the
        # diagonal and the decay a^(j+1) of the block's start state as one more row;
        # a^(L-1-i) folded into the forcing map gives the block ends straight from the inputs
        L = _BLOCK
        a_s = e0[slow]
        self.M_g = np.ascontiguousarray(M_g[slow])
        powers, tri = _block_matrix(a_s, L)
        self._tri_aug = np.ascontiguousarray(np.concatenate([tri, powers[:, None, 1:]], axis=1))
        self._M_end = np.ascontiguousarray(
            (self.M_g[:, :, None] * powers[:, None, L - 1::-1]).reshape(slow.size, K * L))
        self._a_block = np.ascontiguousarray(powers[:, L])

    def _rows(self, tt: np.ndarray, width: int | None = None):
        """The rows X (K, width) of the forcing (zero beyond the c intervals of ``tt``), input
        values at tt[1:] and integrals U (c, I)."""
        profiles = self.profiles
        c = tt.size - 1
        I = len(profiles)
        right = linear_parts(profiles, tt, "right")                      # (c+1, I)
        left = linear_parts(profiles, tt[1:], "left")                    # (c, I)
        K = 2 * I + 2 * len(self.prop.sines)
        if width is None or width == c:
            X = np.empty((K, c))
        else:
            X = np.zeros((K, width))
        X[:I, :c] = right[:-1].T
        X[I:2 * I, :c] = (left - right[:-1]).T
        w = right[1:].copy()
        U = 0.5 * (tt[1:] - tt[:-1])[:, None] * (right[:-1] + left)
        row = 2 * I
        if self.prop.sines and c:
            steps = tt[1:] - tt[:-1]
            # one interval length (the usual chunk): the sine integrals' factors are numbers
            steps = float(steps[0]) if steps.max() == steps.min() else steps
        for i, (amp, om, ph) in self.prop.sines:
            arg = om * tt + ph
            sn, cs = np.sin(arg), np.cos(arg)
            X[row, :c], X[row + 1, :c] = sn[:-1], cs[:-1]
            w[:, i] += amp * sn[1:]
            U[:, i] += sine_integrals(amp, om, sn[:-1], cs[:-1], steps)
            row += 2
        return X, w, U

    def plan(self, t_out: np.ndarray) -> None:
        """Mark, once for the whole run, the output intervals that are not of the common length
        or have an input knot strictly inside (chunks then look the answer up)."""
        h = np.diff(t_out)
        self._pieces = np.zeros(1, dtype=np.int64)
        if h.size == 0:
            return
        h0 = float(h[0])
        bad = np.abs(h - h0) > 1e-12 * h0
        inside = np.zeros(h.size, dtype=np.int64)         # knots strictly inside each interval
        for p in self.profiles:
            kn = p.knots(float(t_out[0]), float(t_out[-1]))
            if kn.size:
                at = np.minimum(np.searchsorted(t_out, kn), t_out.size - 1)
                off = np.abs(t_out[at] - kn) > 1e-12 * h0
                where = np.maximum(at[off] - 1, 0)          # the interval the knot falls in
                bad[where] = True
                inside += np.bincount(where, minlength=h.size)
        self._irregular = (t_out, h0, np.concatenate([[0], np.cumsum(bad)]))
        #: sub-intervals (output intervals plus the knots inside them) before each output time
        self._pieces = np.concatenate([[0], np.cumsum(1 + inside)])

    def chunk_end(self, k0: int, length: int) -> int:
        """The last output index of the chunk from ``k0``: at most ``length`` intervals, and at
        most ``length`` sub-intervals when input knots fall inside them (a table or CSV denser
        than the output grid: the general closed form then works on every sub-interval, and
        its arrays must stay bounded too). At least one interval."""
        pieces = self._pieces
        N = pieces.size - 1
        k1 = min(N, k0 + length)
        if pieces[k1] - pieces[k0] > length:
            k1 = int(np.searchsorted(pieces, pieces[k0] + length, side="right")) - 1
        return max(k1, k0 + 1)

    def _uniform(self, tt: np.ndarray) -> float | None:
        """The common interval length when the chunk is regular and no input knot falls
        strictly inside an interval, else None (the general closed form then runs)."""
        planned = self._irregular
        if planned is not None:
            t_out, h0, bad_before = planned
            k0 = int(np.searchsorted(t_out, tt[0]))
            k1 = k0 + tt.size - 1
            if k1 < t_out.size and t_out[k0] == tt[0] and t_out[k1] == tt[-1]:
                return None if bad_before[k1] > bad_before[k0] else h0
        h = np.diff(tt)
        h0 = float(h[0])
        if np.any(np.abs(h - h0) > 1e-12 * h0):
            return None
        for p in self.profiles:
            kn = p.knots(float(tt[0]), float(tt[-1]))
            if kn.size:
                at = np.searchsorted(tt, kn)
                hit = np.minimum(at, tt.size - 1)
                if np.any(np.abs(tt[hit] - kn) > 1e-12 * h0):
                    return None
        return h0

    def _outputs(self, Z, w, out):
        """Temperatures (c, out nodes) = (A Z + D w^T)^T, column-major, into ``out`` if given."""
        T_t = np.empty((self.A_out.shape[0], Z.shape[1])) if out is None else out.T
        np.matmul(self.A_out, Z, out=T_t)
        T_t += self.D_out @ w.T
        return T_t.T

    @staticmethod
    def _buffer(key: str, shape: tuple) -> np.ndarray:
        """A scratch array of ``shape`` kept from chunk to chunk and run to run
        (:func:`rcsim.recording.work_array`): fresh arrays of a few MB per chunk cost more in
        page faults than the products computed in them."""
        return work_array("exact." + key, shape)

    def _scan(self, X: np.ndarray, z0: np.ndarray, out: np.ndarray) -> None:
        """The states ``z[k+1] = a z[k] + (M_g X)[:, k]`` from ``z0``, into ``out`` (n, nb L).

        In blocks of L = 16 samples: the block ends from zero start are one product of the
        input rows with ``M_end`` (n x K L), chained across blocks by the same recurrence one
        level up (:func:`modes_major_recurrence`, on nb numbers per mode); the forcing is
        computed with one spare column per block that takes the block's start state, so each
        block is one product with ``[tri; a^(j+1)]`` (per mode, (L+1) x L), written straight
        into ``out``: no pass to add the start states afterwards.
        """
        n, L = self._slow.size, _BLOCK
        K, width = X.shape
        nb = width // L
        X3 = X.reshape(K, nb, L)
        ends = self._M_end @ X3.transpose(0, 2, 1).reshape(K * L, nb)  # (n, nb) from zero
        X_aug = np.empty((K, nb, L + 1))
        X_aug[:, :, :L] = X3
        X_aug[:, :, L] = 0.0
        G = self._buffer("forcing", (n, nb * (L + 1)))
        np.matmul(self.M_g, X_aug.reshape(K, nb * (L + 1)), out=G)
        G = G.reshape(n, nb, L + 1)
        G[:, 0, L] = z0
        if nb > 1:
            G[:, 1:, L] = modes_major_recurrence(self._a_block, ends[:, :-1], z0, self._factors)
        np.matmul(G, self._tri_aug, out=out.reshape(n, nb, L))

    def chunk(self, tt: np.ndarray, z0: np.ndarray, k0: int, out=None,
              states: bool = True) -> ModalChunk:
        """Advance from ``z0`` at tt[0] over the intervals of ``tt``; the temperatures go into
        ``out`` ((c, out nodes), column-major) when given. The chunk's states (only when
        ``states``: else ``Z`` is None) and its temperatures when ``out`` is None live in work
        arrays that the next chunk overwrites."""
        h0 = self._uniform(tt)
        if h0 is None:
            return self._general(tt, z0, k0, out)
        self._set_step(h0)
        n, c = self._n, tt.size - 1
        width = -(-c // _BLOCK) * _BLOCK
        X, w, U = self._rows(tt, width)                                  # X (K, width)
        I, K = w.shape[1], X.shape[0]
        slow, fast, J = self._slow, self._fast, self._J
        ns = slow.size
        # stacked rows [Z_S; w^T; X shifted by 0..J-1 samples]: temperatures, stored energy
        # and the boundary segments' state integrals are each one product with them
        stacked = self._buffer("states", (ns + I + K * J, width))
        if ns:
            self._scan(X, z0[slow], stacked[:ns])
        stacked[ns:ns + I, :c] = w.T
        for j in range(J):
            r = ns + I + K * j
            stacked[r:r + K, :min(j, c)] = 0.0
            if j < c:
                stacked[r:r + K, j:c] = X[:, :c - j]
        rows = stacked[:, :c]
        T_t = self._buffer("temperatures", (self.A_out.shape[0], c)) if out is None else out.T
        np.matmul(self.AD_out, rows, out=T_t)
        proj = self._proj @ rows
        z_end = np.empty(n)
        z_end[slow] = stacked[:ns, c - 1]
        if J:
            # the fast modes' start state, decayed over the first J samples
            kk = min(c, J)
            start = self._start_decay[:, :kk] * z0[fast][:, None]        # (fast, kk)
            T_t[:, :kk] += self._A_f @ start
            proj[:, :kk] += self._proj_f @ start
            z_end[fast] = self._F_g @ rows[ns + I:, c - 1]
            if c <= J:
                z_end[fast] += start[:, c - 1]
        Z = None
        if states:
            Z = np.empty((n, c))
            Z[slow] = stacked[:ns, :c]
            if J:
                Z[fast] = self._F_g @ rows[ns + I:]
                Z[fast, :kk] += start
        # integral of the boundary segments' node temperatures over each interval, and the
        # stored energy q z
        segs = proj.shape[0] - 1
        int_e = self.M_he @ X[:, :c] + self.D_e @ U.T
        int_e[:, 0] += self.A_he @ z0
        int_e[:, 1:] += proj[:segs, :-1]
        return ModalChunk(k0, k0 + c, T_t.T, w, int_e.T, U, proj[segs], Z, z_end)

    def _general(self, tt, z0, k0, out=None) -> ModalChunk:
        """Any grid, knots anywhere: the row-major closed form of the propagator."""
        Zr, Zint, U = self.prop.propagate(tt, z0)
        w = input_values(self.profiles, tt[1:])
        Z = np.ascontiguousarray(Zr.T)
        T = self._outputs(Z, w, out)
        int_e = Zint @ self.A_e.T + U @ self.D_e.T
        return ModalChunk(k0, k0 + tt.size - 1, T, w, int_e, U, Zr @ self.q, Z, Zr[-1].copy())


class ModalEvaluator:
    """Temperatures of output columns at any times inside one chunk, in closed form.

    Parameters
    ----------
    prop : ExactPropagator
    A_out, D_out : output maps of the chunk's columns
    tt : (c+1,) the sample before the chunk and the chunk's samples [s]
    z_first : (n,) modal state at tt[0]; Z : (n, c) states at tt[1:]
    """

    def __init__(self, prop, A_out, D_out, tt, z_first, Z):
        self.prop, self.A, self.D = prop, A_out, D_out
        self.tt, self.z_first, self.Z = tt, z_first, Z

    def state(self, k: int) -> np.ndarray:
        return self.z_first if k == 0 else self.Z[:, k - 1]

    def __call__(self, times, columns) -> np.ndarray:
        times = np.asarray(times, dtype=float)
        columns = np.asarray(columns, dtype=np.int64)
        tt, prop = self.tt, self.prop
        k = np.clip(np.searchsorted(tt, times, side="right") - 1, 0, tt.size - 2)
        z = np.empty((times.size, prop.lam.size))
        plain = np.ones(times.size, dtype=bool)
        for kk in np.unique(k):                 # intervals with a knot inside: stepped exactly
            t0, t1 = float(tt[kk]), float(tt[kk + 1])
            if any(p.knots(t0, t1).size for p in prop.profiles):
                for q in np.flatnonzero(k == kk):
                    if times[q] > t0:
                        z[q] = prop.propagate(np.array([t0, times[q]]), self.state(kk))[0][0]
                    else:
                        z[q] = self.state(kk)
                    plain[q] = False
        q = np.flatnonzero(plain)
        if q.size:
            z[q] = self._advance(k[q], times[q])
        w = input_values(prop.profiles, times)
        return np.einsum("qn,qn->q", z, self.A[columns]) + np.einsum("qi,qi->q", w,
                                                                     self.D[columns])

    def _advance(self, k, times) -> np.ndarray:
        """States at ``times`` from the samples tt[k], no knot in between (vectorised)."""
        prop, tt = self.prop, self.tt
        lam, W = prop.lam, prop.W
        t0 = tt[k]
        s = (times - t0)[:, None]
        zk = np.stack([self.state(int(i)) for i in k])
        x = s * lam[None, :]
        e0, e1, e2, _ = phi_functions(x)
        right = linear_parts(prop.profiles, t0, "right")                 # (q, I)
        left = linear_parts(prop.profiles, tt[k + 1], "left")
        h = (tt[k + 1] - t0)[:, None]
        slope = (left - right) / h
        z = e0 * zk + s * (e1 * (right @ W.T) + e2 * s * (slope @ W.T))
        for i, (amp, om, ph) in prop.sines:
            rot = np.exp(1j * (om * t0 + ph))[:, None]
            resp = amp * W[:, i][None, :] * sine_response_factors(x, e1, e2, om * s, s)[0]
            z += (rot * resp).imag
        return z
