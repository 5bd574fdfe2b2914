"""Exact integration of a linear network by modal decomposition.

With ``V`` the C-orthonormal eigenvectors of ``K v = lambda C v`` (:mod:`rcsim.modes`) and
``z = V^T C T``, each mode obeys ``dz/dt = -lambda z + f(t)`` with ``f = V^T E w(t)``. Every input
profile is a piecewise-linear part plus sinusoids (:mod:`rcsim.profiles`), so over an interval of
length h on which f goes linearly from f0 to f1::

    z(h)     = E0 z0 + h [E1 f0 + E2 (f1 - f0)]
    int z dt = h [E1 z0 + h E2 f0 + h E3 (f1 - f0)]

with ``E_k(x) = sum_m (-x)^m / (m + k)!`` at ``x = lambda h`` (``E0 = exp(-x)``,
``E1 = (1 - exp(-x))/x``, ...), and sinusoids are convolved in closed form. Knots of the inputs
(step times, table points) split output intervals into sub-intervals, so steps are taken at their
exact times. The state and its time integral come from two different kernels; the energy balance
(stored change vs. heat that crossed the boundaries) checks one against the other.

The recurrence ``z[k+1] = a z[k] + G[k]`` over uniform output intervals is evaluated in blocks:
within a block it is a product with a small lower-triangular Toeplitz matrix of powers of ``a``
(batched over modes), and block ends are chained by the same recurrence one level up.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np

from ..modes import modal_decomposition
from ..statespace import state_space
from .inputs import input_values, linear_parts

__all__ = ["phi_functions", "linear_recurrence", "linear_recurrence_times", "scan_stretches",
           "ExactPropagator", "CHUNK_ELEMENTS", "sine_response_factors", "one_minus_sinc"]

#: Samples x (modes + inputs) per chunk of propagation: bounds memory, keeps arrays in cache.
CHUNK_ELEMENTS = 200_000

_SERIES_TERMS = 18
_SERIES_BELOW = 1.0
_BLOCK = 16


def phi_functions(x):
    """E0..E3 of ``x`` (any shape), accurate for all x >= 0 (and tiny negative rounding).

    ``E0 = exp(-x)``, ``E1 = (1 - E0)/x``, ``E2 = (1 - E1)/x``, ``E3 = (1/2 - E2)/x``; that
    recurrence loses digits for small x, where E3 comes from its Taylor series instead and the
    others follow by the stable backward recurrence ``E2 = 1/2 - x E3``, ``E1 = 1 - x E2``.

    >>> [round(float(e), 12) for e in phi_functions(0.0)]
    [1.0, 1.0, 0.5, 0.166666666667]
    """
    x = np.asarray(x, dtype=float)
    e0 = np.exp(-x)
    small = np.abs(x) < _SERIES_BELOW
    if small.all():
        e3 = _series3(x)
        e2 = 0.5 - x * e3
        return e0, 1.0 - x * e2, e2, e3
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        e1 = -np.expm1(-x) / x
        e2 = (1.0 - e1) / x
        e3 = (0.5 - e2) / x
    if np.any(small):
        xs = x[small]
        s3 = _series3(xs)
        s2 = 0.5 - xs * s3
        e1[small], e2[small], e3[small] = 1.0 - xs * s2, s2, s3
    return e0, e1, e2, e3


#: Taylor coefficients of E3: sum_m (-x)^m / (m + 3)!  (18 terms: below 1e-17 for |x| < 1)
_E3_COEFFS = [(-1.0) ** m / math.factorial(m + 3) for m in range(_SERIES_TERMS)]


#: Terms of the E3 series needed below each bound of |x| (the first neglected term, at most
#: |x|^m / (m + 3)!, under 1e-18 of E3 >= 1/24 there)
_E3_TERMS = [(bound, next(m for m in range(1, _SERIES_TERMS + 1)
                          if bound ** m / math.factorial(m + 3) < 1e-18 / 24))
             for bound in (1e-4, 1e-3, 1e-2, 0.1, 0.3, 1.0)]


def _series3(x):
    """E3(x) by Horner's rule on its Taylor series (|x| < 1), with as many terms as the
    largest |x| needs."""
    x = np.asarray(x, dtype=float)
    top = float(np.abs(x).max(initial=0.0))
    terms = next((m for bound, m in _E3_TERMS if top <= bound), _SERIES_TERMS)
    coeffs = _E3_COEFFS[:terms]
    out = np.full(np.shape(x), coeffs[-1])
    for c in reversed(coeffs[:-1]):
        out *= x
        out += c
    return out


_FACTORS: dict = {}


def _block_factors(a: np.ndarray, L: int):
    """Powers a^0..a^L and the lower-triangular Toeplitz blocks of a^(m-j), kept for reuse: the
    same decay factors recur run after run (one interval length, one set of modes)."""
    key = (a.tobytes(), L)
    out = _FACTORS.get(key)
    if out is None:
        powers = a[None, :] ** np.arange(L + 1)[:, None]        # (L+1, n): a^m
        lag = np.arange(L)[:, None] - np.arange(L)[None, :]      # m - j
        toeplitz = np.where(lag[None, :, :] >= 0,
                            powers[np.clip(lag, 0, None)].transpose(2, 0, 1), 0.0)  # (n, L, L)
        out = (powers, toeplitz)
        if a.size <= 64:                                         # at most ~16 MB kept
            if len(_FACTORS) >= 128:
                _FACTORS.clear()
            _FACTORS[key] = out
    return out


def linear_recurrence(a: np.ndarray, G: np.ndarray, z0: np.ndarray) -> np.ndarray:
    """Solve ``z[k+1] = a * z[k] + G[k]`` for k = 0..N-1 (a per column); return z[1..N].

    Vectorised by blocks: no Python loop over time steps.

    >>> linear_recurrence(np.array([0.5]), np.ones((3, 1)), np.array([0.0])).ravel().tolist()
    [1.0, 1.5, 1.75]
    """
    N, n = G.shape
    if N == 0:
        return np.empty((0, n))
    L = _BLOCK if N > _BLOCK else N
    nb = -(-N // L)
    if nb * L != N:
        G = np.vstack([G, np.zeros((nb * L - N, n))])
    powers, toeplitz = _block_factors(a, L)                     # (L+1, n), (n, L, L)
    Gb = G.reshape(nb, L, n).transpose(2, 1, 0)                  # (n, L, nb)
    Y = np.matmul(toeplitz, Gb)                                  # (n, L, nb) from zero start
    if nb == 1:
        starts = z0[None, :]
    else:
        ends = linear_recurrence(powers[L], Y[:, L - 1, :].T, z0)  # (nb, n) block-end states
        starts = np.vstack([z0[None, :], ends[:-1]])
    Z = Y.transpose(2, 1, 0) + powers[1:][None, :, :] * starts[:, None, :]
    return Z.reshape(nb * L, n)[:N]


def linear_recurrence_times(lam: np.ndarray, t: np.ndarray, G: np.ndarray,
                            z0: np.ndarray) -> np.ndarray:
    """Solve ``z[k+1] = exp(-lam (t[k+1] - t[k])) z[k] + G[k]`` on any increasing grid ``t``.

    The product of the decays from step j+1 to k is exp(-lam (t[k+1] - t[j+1])), so each block
    is a lower-triangular matrix of such exponentials (never overflowing: the exponents are <= 0).

    >>> t = np.array([0.0, 1.0, 3.0])
    >>> z = linear_recurrence_times(np.array([np.log(2.0)]), t, np.ones((2, 1)), np.array([0.0]))
    >>> z.ravel().tolist()
    [1.0, 1.25]
    """
    N, n = G.shape
    if N == 0:
        return np.empty((0, n))
    L = _BLOCK if N > _BLOCK else N
    nb = -(-N // L)
    tn = t[1:]
    if nb * L != N:
        G = np.vstack([G, np.zeros((nb * L - N, n))])
        tn = np.concatenate([tn, np.full(nb * L - N, tn[-1])])
    T = tn.reshape(nb, L)                                        # end time of each step
    dt = T[:, :, None] - T[:, None, :]                           # (nb, L, L): T_m - T_j
    lower = np.tril(np.ones((L, L), dtype=bool))
    with np.errstate(over="ignore"):
        M = np.exp(-lam[:, None, None, None] * np.where(lower, dt, 0.0)[None]) * lower
    Gb = G.reshape(nb, L, n).transpose(2, 0, 1)[..., None]       # (n, nb, L, 1)
    Y = np.matmul(M, Gb)[..., 0]                                 # (n, nb, L) from zero start
    block_start = np.concatenate([[t[0]], T[:-1, -1]])           # state time before each block
    if nb == 1:
        starts = z0[None, :]
    else:
        ends = linear_recurrence_times(lam, np.concatenate([[t[0]], T[:, -1]]),
                                       Y[:, :, -1].T, z0)
        starts = np.vstack([z0[None, :], ends[:-1]])             # (nb, n)
    decay = np.exp(-lam[None, None, :] * (T - block_start[:, None])[:, :, None])  # (nb, L, n)
    Z = Y.transpose(1, 2, 0) + decay * starts[:, None, :]
    return Z.reshape(nb * L, n)[:N]


def scan_stretches(e0, starts, G, z0, lam=None, s=None):
    """States after each interval of ``z[k+1] = e0[k] z[k] + G[k]``, one vectorised recurrence
    per stretch of equal decay factors (``e0 = exp(-lam h)``; on a grid of mostly unequal
    intervals, given ``lam`` and the times ``s``, one recurrence over the whole grid)."""
    m = G.shape[0]
    if lam is not None and m > 32 and starts.size > m // 4:
        return linear_recurrence_times(lam, s, G, z0)
    out = np.empty_like(G)
    bounds = np.append(starts, m)
    z = z0
    for a, b in zip(bounds[:-1].tolist(), bounds[1:].tolist()):
        if b - a <= 12:  # short stretches (refined spots): step by step is cheaper
            decay = e0[a]
            for i in range(a, b):
                z = decay * z + G[i]
                out[i] = z
        else:
            out[a:b] = linear_recurrence(np.ascontiguousarray(e0[a]), G[a:b], z)
            z = out[b - 1]
    return out


class PropagatedChunk(NamedTuple):
    """States over the output intervals t[k0]..t[k1] (see :meth:`ExactPropagator.chunks`)."""

    k0: int
    k1: int
    Z: np.ndarray       # modal states at t[k0+1..k1]
    Zint: np.ndarray    # integral of the modal states over each interval
    U: np.ndarray       # integral of each input over each interval


class ExactPropagator:
    """Advance the modal state of a linear network over output intervals, exactly.

    Parameters
    ----------
    asm : rcsim.network.Assembled
        A linear network with at most :data:`rcsim.modes.DENSE_LIMIT` states.
    """

    def __init__(self, asm):
        self.asm = asm
        self.ss = state_space(asm)
        self.modes = modal_decomposition(asm)
        self.lam = self.modes.eigenvalues
        self.V = self.modes.V
        self.W = self.V.T @ self.ss.E.toarray()                  # (n, I)
        self.profiles = list(asm.boundary_profiles) + list(asm.source_profiles)
        self.n_inputs = len(self.profiles)
        self._phi_cache: dict = {}
        self._sines = [(i, s) for i, p in enumerate(self.profiles) for s in p.sines()]
        #: (input column, (amplitude, omega, phase)) of every sinusoid of the inputs
        self.sines = self._sines

    def phi(self, h: float):
        """E0..E3 of lambda * h for one interval length (cached: chunks repeat the same h)."""
        out = self._phi_cache.get(h)
        if out is None:
            if len(self._phi_cache) > 64:
                self._phi_cache.clear()
            out = self._phi_cache[h] = phi_functions(h * self.lam)
        return out

    # -- state <-> temperatures ------------------------------------------------------------
    def z_from_temperatures(self, Tm: np.ndarray) -> np.ndarray:
        return self.V.T @ (self.ss.C * Tm)

    def output_maps(self, nodes: np.ndarray):
        """Matrices (A, D) with ``T[nodes] = z @ A.T + w @ D.T``."""
        ss = self.ss
        pos_m, pos_z = ss.state_of, ss.eliminated_of
        A = np.zeros((len(nodes), ss.n))
        D = np.zeros((len(nodes), self.n_inputs))
        RV = ss.R @ self.V if ss.massless.size else None
        for row, i in enumerate(nodes):
            i = int(i)
            if i in pos_m:
                A[row] = self.V[pos_m[i]]
            else:
                A[row] = RV[pos_z[i]]
                D[row] = ss.D[pos_z[i]]
        return A, D

    def inputs_at(self, t: np.ndarray) -> np.ndarray:
        """Input values w(t) (right-continuous), shape (len(t), I)."""
        return input_values(self.profiles, t)

    # -- forcing over output intervals -----------------------------------------------------
    def forcing(self, t_out: np.ndarray):
        """Per output interval [t_k, t_k+1]: (G, H, U).

        G (N, n): state increment from zero start; H (N, n): integral of the state from zero
        start; U (N, I): integral of each input.

        Intervals of the common length h0 that no knot splits are the bulk: their per-mode
        factors fold into small matrices, so G and H are each one matrix product of
        ``[w_right | w_left - w_right | sin | cos]`` with those factors. Split intervals and a
        shorter last interval take the general formula row by row.
        """
        lam, W = self.lam, self.W
        n, I = lam.size, self.n_inputs
        N = t_out.size - 1
        hk = np.diff(t_out)
        h0 = float(hk[0])
        t0, t1 = float(t_out[0]), float(t_out[-1])
        knots = [p.knots(t0, t1) for p in self.profiles]
        allk = np.concatenate(knots) if knots else np.empty(0)
        tau = np.union1d(t_out, allk) if allk.size else t_out
        J = tau.size - 1
        h = np.diff(tau)
        right = linear_parts(self.profiles, tau[:-1], "right")
        left = linear_parts(self.profiles, tau[1:], "left")
        if J == N:
            k_of = np.arange(N)
            r = np.zeros(N)
        else:
            k_of = np.searchsorted(t_out, tau[:-1], side="right") - 1
            r = t_out[k_of + 1] - tau[1:]
        special = (np.abs(h - h0) > 1e-12 * h0) | (r > 0)
        _, e1, e2, e3 = self.phi(h0)
        Wt = W.T                                                   # (I, n)
        mg = [Wt * (h0 * e1), Wt * (h0 * e2)]
        mh = [Wt * (h0 * h0 * e2), Wt * (h0 * h0 * e3)]
        cols = [right, left - right]
        std_out = np.abs(hk - h0) <= 1e-12 * h0
        sine_cols, sg, sh = self._sine_factors(t_out, h0)
        if not special.any() and std_out.all():
            X = np.hstack(cols + sine_cols)
            G = X @ np.vstack(mg + sg)
            H = X @ np.vstack(mh + sh)
        else:
            G = np.zeros((N, n))
            H = np.zeros((N, n))
            reg = ~special
            X = np.hstack([c[reg] for c in cols])
            G[k_of[reg]] = X @ np.vstack(mg)
            H[k_of[reg]] = X @ np.vstack(mh)
            if special.any():
                self._special_rows(h[special], r[special], k_of[special], right[special],
                                   left[special], G, H)
            if sine_cols:
                Xs = np.hstack(sine_cols)
                G[std_out] += Xs[std_out] @ np.vstack(sg)
                H[std_out] += Xs[std_out] @ np.vstack(sh)
                if not std_out.all():
                    self._sine_rows(t_out, np.flatnonzero(~std_out), G, H)
        # integrals of the inputs: trapezoid is exact on the piecewise-linear part
        trap = (0.5 * h)[:, None] * (right + left)
        if J == N:
            U = trap
        else:
            U = np.zeros((N, I))
            np.add.at(U, k_of, trap)
        for i, (amp, om, ph) in self._sines:
            arg = om * t_out[:-1] + ph
            U[:, i] += sine_integrals(amp, om, np.sin(arg), np.cos(arg), hk)
        return G, H, U

    def _sine_factors(self, t_out, h0):
        """Columns sin(w t_k + phi), cos(w t_k + phi) per sine and their per-mode factors.

        Over [t_k, t_k + h] the response to sin(w t + phi) is Im(exp(i(w t_k + phi)) c) with
        c = (exp(i w h) - exp(-lam h)) / (lam + i w), and its integral Im(exp(i(w t_k + phi)) c2)
        with c2 = ((exp(i w h) - 1)/(i w) - h E1(lam h)) / (lam + i w), both in the forms of
        :func:`sine_response_factors`.
        """
        if not self._sines:
            return [], [], []
        lam, W = self.lam, self.W
        tk = t_out[:-1]
        _, e1, e2, _ = self.phi(h0)
        cols, sg, sh = [], [], []
        for i, (amp, om, ph) in self._sines:
            c, c2 = sine_response_factors(lam * h0, e1, e2, om * h0, h0)
            c, c2 = amp * W[:, i] * c, amp * W[:, i] * c2
            cols.append(np.column_stack([np.sin(om * tk + ph), np.cos(om * tk + ph)]))
            sg.append(np.vstack([c.real, c.imag]))
            sh.append(np.vstack([c2.real, c2.imag]))
        return cols, sg, sh

    def _sine_rows(self, t_out, rows, G, H) -> None:
        """Sine contributions of output intervals of other lengths, one factor row each."""
        lam, W = self.lam, self.W
        tk = t_out[rows]
        hr = t_out[rows + 1] - tk
        x = hr[:, None] * lam[None, :]
        _, e1, e2, _ = phi_functions(x)
        for i, (amp, om, ph) in self._sines:
            c, c2 = sine_response_factors(x, e1, e2, om * hr[:, None], hr[:, None])
            c = amp * W[:, i][None, :] * c
            c2 = amp * W[:, i][None, :] * c2
            sn = np.sin(om * tk + ph)[:, None]
            cs = np.cos(om * tk + ph)[:, None]
            G[rows] += sn * c.real + cs * c.imag
            H[rows] += sn * c2.real + cs * c2.imag

    def _special_rows(self, h, r, k_of, right, left, G, H) -> None:
        """General formula for sub-intervals that are split or of another length."""
        lam, W = self.lam, self.W
        x = h[:, None] * lam[None, :]
        _, e1, e2, e3 = phi_functions(x)
        FR = right @ W.T
        dF = (left - right) @ W.T
        g = h[:, None] * (e1 * FR + e2 * dF)
        hs = (h * h)[:, None] * (e2 * FR + e3 * dF)
        inner = r > 0
        if inner.any():
            e0r, e1r, _, _ = phi_functions(r[inner, None] * lam[None, :])
            gi = g[inner]
            hs[inner] += r[inner, None] * e1r * gi
            g[inner] = e0r * gi
        np.add.at(G, k_of, g)
        np.add.at(H, k_of, hs)

    def step_factors(self, h: float) -> tuple[np.ndarray, np.ndarray]:
        """(exp(-lambda h), h E1(lambda h)) for an interval of length h."""
        e0, e1, _, _ = self.phi(h)
        return e0, h * e1

    def propagate(self, t_out: np.ndarray, z0: np.ndarray):
        """States at t_out[1:] and the state integrals over each interval.

        Any increasing grid works; a uniform one (the last interval may be shorter) takes the
        faster Toeplitz scan. Returns (Z (N, n), Zint (N, n), U (N, I)).
        """
        G, H, U = self.forcing(t_out)
        h = np.diff(t_out)
        N = h.size
        if N == 0:
            return np.empty((0, self.lam.size)), np.empty((0, self.lam.size)), U
        body = h[:-1] if N > 1 else h
        if np.all(np.abs(body - h[0]) <= 1e-12 * h[0]):
            uniform = N if abs(h[-1] - h[0]) <= 1e-12 * h[0] else N - 1
            a, _ = self.step_factors(float(h[0]))
            Z = np.empty_like(G)
            Z[:uniform] = linear_recurrence(a, G[:uniform], z0)
            if uniform < N:
                a2, _ = self.step_factors(float(h[-1]))
                Z[-1] = a2 * (Z[uniform - 1] if uniform else z0) + G[-1]
        else:
            Z = linear_recurrence_times(self.lam, t_out, G, z0)
        # state integral: H plus the decay of each interval's start state, h E1(lam h) z_start
        hu, inv = np.unique(h, return_inverse=True)
        he1 = np.vstack([u * self.phi(float(u))[1] for u in hu]) if hu.size <= 4 else \
            hu[:, None] * phi_functions(hu[:, None] * self.lam[None, :])[1]
        Zint = H
        Zint[0] += z0 * he1[inv[0]]
        if N > 1:
            Zint[1:] += Z[:-1] * (he1[0] if hu.size == 1 else he1[inv[1:]])
        return Z, Zint, U

    def chunk_length(self) -> int:
        """Output intervals per chunk of :meth:`chunks` (about :data:`CHUNK_ELEMENTS` numbers
        per array, a multiple of 32)."""
        chunk = max(256, CHUNK_ELEMENTS // max(1, self.lam.size + self.n_inputs))
        return chunk - chunk % 32

    def chunks(self, t: np.ndarray, z0: np.ndarray, length: int | None = None):
        """Propagate from ``z0`` at t[0] over the grid ``t`` (any increasing times) chunk by
        chunk, so that memory stays bounded on long grids.

        Yields a :class:`PropagatedChunk` for the intervals t[k0]..t[k1]: the states at
        t[k0+1..k1] and the integrals of the states and of the inputs over each interval (see
        :meth:`propagate`).
        """
        length = self.chunk_length() if length is None else int(length)
        N = t.size - 1
        k0, z = 0, z0
        while k0 < N:
            k1 = min(N, k0 + length)
            Z, Zint, U = self.propagate(t[k0:k1 + 1], z)
            yield PropagatedChunk(k0, k1, Z, Zint, U)
            z = Z[-1].copy()
            k0 = k1

    def states_at(self, t: np.ndarray, z0: np.ndarray) -> np.ndarray:
        """Modal states at every time of ``t`` (t[0] included, where the state is ``z0``)."""
        Z = np.empty((t.size, self.lam.size))
        Z[0] = z0
        for k0, k1, Zc, _, _ in self.chunks(t, z0):
            Z[k0 + 1:k1 + 1] = Zc
        return Z

    def periodic_state(self, period: float, z_given: np.ndarray | None):
        """Modal state at t = 0 of the periodic regime of period ``period``.

        Floating modes (lambda = 0) have no periodic regime unless their net input over a
        period is zero; they keep the given state. Returns (z0, net_input_of_floating_modes).
        """
        t = np.array([0.0, period])
        G, _, _ = self.forcing(t)
        a = np.exp(-self.lam * period)
        z0 = np.empty_like(self.lam)
        moving = self.lam > 0
        z0[moving] = G[0, moving] / (1.0 - a[moving])
        floating = ~moving
        if floating.any():
            z0[floating] = 0.0 if z_given is None else z_given[floating]
        return z0, G[0, floating]



def sine_integrals(amp: float, om: float, sin0, cos0, h) -> np.ndarray:
    """Integrals of ``amp*sin(om*t + ph)`` over [t0, t0 + h] from ``sin0``, ``cos0`` (the sine
    and cosine of ``om*t0 + ph``) and ``h`` (arrays, or h one number):
    ``amp/om (sin(om h) sin0 + 2 sin(om h/2)^2 cos0)``. The antiderivative's difference of two
    cosines is written out as products: no two nearly equal numbers are subtracted, so a
    period far longer than the intervals keeps its digits (as
    :meth:`rcsim.profiles.Profile.integral`)."""
    half = np.sin(0.5 * om * h)
    return (amp / om) * (np.sin(om * h) * sin0 + (2.0 * half * half) * cos0)


#: Taylor coefficients of 1 - sin(t)/t = t^2/3! - t^4/5! + ...: up to t^14/15!, the first term
#: left out below |t| = 0.5 is under 1e-18 of the sum
_SINC_COEFFS = [(-1.0) ** k / math.factorial(2 * k + 3) for k in range(7)]


def one_minus_sinc(t):
    """``1 - sin(t)/t`` without the cancellation near t = 0 (its Taylor series below |t| = 0.5).

    >>> round(float(one_minus_sinc(1e-6)) * 6e12, 10)      # t^2/6 - t^4/120 + ...
    1.0
    """
    t = np.asarray(t, dtype=float)
    t2 = t * t
    series = np.zeros_like(t2)
    for c in reversed(_SINC_COEFFS):
        series = series * t2 + c
    series *= t2
    with np.errstate(invalid="ignore", divide="ignore"):
        direct = 1.0 - np.sin(t) / t
    return np.where(np.abs(t) < 0.5, series, direct)


def sine_response_factors(x, e1, e2, theta, h):
    """Per-mode factors of a unit sine input over an interval of length ``h``.

    For a mode ``dz/dt = -lam z + sin(w t + phi)`` with ``x = lam h``, ``theta = w h`` and
    ``e1, e2`` = E1(x), E2(x) (:func:`phi_functions`), the state after the interval from
    zero start is ``Im(exp(i phi) c)`` and its integral over the interval ``Im(exp(i phi) c2)``
    with ``c = (exp(i theta) - exp(-x)) / (lam + i w)`` and
    ``c2 = ((exp(i theta) - 1)/(i w) - h E1(x)) / (lam + i w)``. Written with
    ``exp(i theta) - 1 = -2 sin(theta/2)^2 + i sin(theta)``, ``1 - exp(-x) = x E1`` and
    ``sin(theta)/theta - E1 = x E2 - (1 - sin(theta)/theta)`` (:func:`one_minus_sinc`), so
    that no two nearly equal numbers are subtracted: a period far longer than the interval
    (theta tiny) keeps its digits. Arrays broadcast; returns (c, c2), complex.
    """
    theta = np.asarray(theta, dtype=float)
    half = np.sin(0.5 * theta)
    versine = 2.0 * half * half                                  # 1 - cos(theta)
    # an interval of length 0 (theta = 0, x = 0): both factors are 0 (h = 0 multiplies them)
    theta_or_1 = np.where(theta == 0.0, 1.0, theta)
    den = x + 1j * theta
    den = np.where(den == 0.0, 1.0, den)
    c = h * ((x * e1 - versine) + 1j * np.sin(theta)) / den
    c2 = (h * h) * ((x * e2 - one_minus_sinc(theta)) + 1j * (versine / theta_or_1)) / den
    return c, c2
