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

import numpy as np

from ..modes import modal_decomposition
from ..statespace import state_space

__all__ = ["phi_functions", "linear_recurrence", "ExactPropagator"]

_SERIES_TERMS = 24
_SERIES_BELOW = 1.0
_BLOCK = 32


def phi_functions(x):
    """E0..E3 of ``x`` (any shape), accurate for all x >= 0 (and tiny negative rounding).

    ``E0 = exp(-x)``, ``E1 = (1 - E0)/x``, ``E2 = (1 - E1)/x``, ``E3 = (1/2 - E2)/x``; the
    recurrence loses digits for small x, where a Taylor series is used instead.

    >>> [round(float(e), 12) for e in phi_functions(0.0)]
    [1.0, 1.0, 0.5, 0.166666666667]
    """
    x = np.asarray(x, dtype=float)
    e0 = np.exp(-x)
    small = np.abs(x) < _SERIES_BELOW
    with np.errstate(divide="ignore", invalid="ignore"):
        e1 = np.where(small, 0.0, -np.expm1(-x) / x)
        e2 = np.where(small, 0.0, (1.0 - e1) / x)
        e3 = np.where(small, 0.0, (0.5 - e2) / x)
    if np.any(small):
        xs = x[small]
        s1, s2, s3 = _series(xs, 1), _series(xs, 2), _series(xs, 3)
        e1 = np.asarray(e1)
        e2 = np.asarray(e2)
        e3 = np.asarray(e3)
        e1[small], e2[small], e3[small] = s1, s2, s3
    return e0, e1, e2, e3


def _series(x, k):
    # sum_{m>=0} (-x)^m / (m+k)!  by Horner
    coeffs = [1.0 / math.factorial(m + k) for m in range(_SERIES_TERMS)]
    out = np.full_like(x, coeffs[-1])
    for c in reversed(coeffs[:-1]):
        out = out * (-x) + c
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
    powers = a[None, :] ** np.arange(L + 1)[:, None]            # (L+1, n): a^m
    lag = np.arange(L)[:, None] - np.arange(L)[None, :]          # m - j
    toeplitz = np.where(lag[None, :, :] >= 0,
                        powers[np.clip(lag, 0, None)].transpose(2, 0, 1), 0.0)  # (n, L, L)
    Gb = G.reshape(nb, L, n).transpose(2, 1, 0)                  # (n, L, nb)
    Y = np.matmul(toeplitz, Gb)                                  # (n, L, nb) from zero start
    if nb == 1:
        starts = z0[None, :]
    else:
        ends = linear_recurrence(powers[L], Y[:, L - 1, :].T, z0)  # (nb, n) block-end states
        starts = np.vstack([z0[None, :], ends[:-1]])
    Z = Y.transpose(2, 1, 0) + powers[1:][None, :, :] * starts[:, None, :]
    return Z.reshape(nb * L, n)[:N]


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
        self._sines = [(i, s) for i, p in enumerate(self.profiles) for s in p.sines()]

    # -- state <-> temperatures ------------------------------------------------------------
    def z_from_temperatures(self, Tm: np.ndarray) -> np.ndarray:
        return self.V.T @ (self.ss.C * Tm)

    def output_maps(self, nodes: np.ndarray):
        """Matrices (A, D) with ``T[nodes] = z @ A.T + w @ D.T``."""
        ss = self.ss
        pos_m = {int(i): p for p, i in enumerate(ss.massive)}
        pos_z = {int(i): q for q, i in enumerate(ss.massless)}
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
        if not self.profiles:
            return np.zeros((t.size, 0))
        return np.column_stack([p.value(t) for p in self.profiles])

    # -- forcing over output intervals -----------------------------------------------------
    def forcing(self, t_out: np.ndarray):
        """Per output interval [t_k, t_k+1]: (G, H, U).

        G (N, n): state increment from zero start; H (N, n): integral of the state from zero
        start; U (N, I): integral of each input.
        """
        lam, W = self.lam, self.W
        t0, t1 = float(t_out[0]), float(t_out[-1])
        N = t_out.size - 1
        n = lam.size
        knots = [p.knots(t0, t1) for p in self.profiles]
        allk = np.concatenate(knots) if knots else np.empty(0)
        tau = np.union1d(t_out, allk) if allk.size else t_out
        J = tau.size - 1
        k_of = np.searchsorted(t_out, tau[:-1], side="right") - 1
        h = np.diff(tau)
        if self.profiles:
            right = np.column_stack([p._pl(tau[:-1], "right") for p in self.profiles])
            left = np.column_stack([p._pl(tau[1:], "left") for p in self.profiles])
        else:
            right = left = np.zeros((J, 0))
        FR = right @ W.T
        dF = (left - right) @ W.T
        # phi functions depend on h only through lambda*h: evaluate once per distinct h
        hu, inv = np.unique(h, return_inverse=True)
        _, e1, e2, e3 = phi_functions(hu[:, None] * lam[None, :])
        g = h[:, None] * (e1[inv] * FR + e2[inv] * dF)
        Hs = (h * h)[:, None] * (e2[inv] * FR + e3[inv] * dF)
        U = (0.5 * h)[:, None] * (right + left)
        if J != N:
            r = t_out[k_of + 1] - tau[1:]
            inner = r > 0
            if inner.any():
                e0r, e1r, _, _ = phi_functions(r[inner, None] * lam[None, :])
                gi = g[inner]
                Hs[inner] += r[inner, None] * e1r * gi
                g[inner] = e0r * gi
            starts = np.flatnonzero(np.r_[True, k_of[1:] != k_of[:-1]])
            g = np.add.reduceat(g, starts, axis=0)
            Hs = np.add.reduceat(Hs, starts, axis=0)
            U = np.add.reduceat(U, starts, axis=0)
        if self._sines:
            hk = np.diff(t_out)
            tk = t_out[:-1]
            _, e1k, _, _ = phi_functions(hk[:, None] * lam[None, :])
            decay = np.exp(-hk[:, None] * lam[None, :])
            for i, (amp, om, ph) in self._sines:
                rot = np.exp(1j * (om * tk + ph))[:, None]          # (N, 1)
                den = lam[None, :] + 1j * om                        # (1, n)
                eh = np.exp(1j * om * hk)[:, None]
                gs = (rot * (eh - decay) / den).imag
                hs = (rot / den * ((eh - 1.0) / (1j * om) - hk[:, None] * e1k)).imag
                g += amp * gs * W[:, i][None, :]
                Hs += amp * hs * W[:, i][None, :]
                U[:, i] += amp / om * (np.cos(om * tk + ph) - np.cos(om * t_out[1:] + ph))
        del n
        return g, Hs, U

    def step_factors(self, h: float) -> tuple[np.ndarray, np.ndarray]:
        """(exp(-lambda h), h E1(lambda h)) for an interval of length h."""
        e0, e1, _, _ = phi_functions(h * self.lam)
        return e0, h * e1

    def propagate(self, t_out: np.ndarray, z0: np.ndarray):
        """States at t_out[1:] and the state integrals over each interval.

        ``t_out`` must have uniform spacing except possibly the last interval.
        Returns (Z (N, n), Zint (N, n), U (N, I)).
        """
        G, H, U = self.forcing(t_out)
        h = np.diff(t_out)
        N = h.size
        if N == 0:
            return np.empty((0, self.lam.size)), np.empty((0, self.lam.size)), U
        uniform = N if N == 1 or abs(h[-1] - h[0]) <= 1e-12 * h[0] else N - 1
        a, h_e1 = self.step_factors(float(h[0]))
        Z = np.empty_like(G)
        Zint = np.empty_like(H)
        Z[:uniform] = linear_recurrence(a, G[:uniform], z0)
        starts = np.vstack([z0[None, :], Z[:uniform - 1]])
        Zint[:uniform] = starts * h_e1[None, :] + H[:uniform]
        if uniform < N:
            a2, h_e1b = self.step_factors(float(h[-1]))
            zlast = Z[uniform - 1] if uniform else z0
            Z[-1] = a2 * zlast + G[-1]
            Zint[-1] = zlast * h_e1b + H[-1]
        return Z, Zint, U

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
