"""The continuous-discrete Kalman filter of a linear network with process noise.

The stochastic grey-box model of Kristensen, Madsen & Joergensen, "Parameter estimation in
stochastic grey-box models", *Automatica* 40 (2004) 225-237: the network's states follow a
linear stochastic differential equation between the log's samples and are measured with
Gaussian noise at the samples::

    dx = (A x + B w(t)) dt + G dbeta,      G G^T = Sigma = diag(sigma_i^2)   [K^2/s]
    y_k = H x(t_k) + D w(t_k) + e_k,       e_k ~ N(0, R),  R = diag(s_j^2)   [K^2]

The filter here runs on the deviation delta = x - x_det from the deterministic run x_det of the
same network (same inputs, same starting state), which the rest of the fitting computes exactly.
Because the model is linear, delta obeys the same equation without inputs, and the deviation of
the measurements from the deterministic run, r_k = y_k - y_det(t_k), is what it filters.

**Exact discretisation between samples** (step dt, for each distinct step of the log)::

    Phi = expm(A dt),     Q = int_0^dt expm(A s) Sigma expm(A s)^T ds

with Q from the Van Loan method (Van Loan, "Computing integrals involving the matrix
exponential", *IEEE Trans. Automatic Control* 23 (1978) 395-404)::

    expm([[-A, Sigma], [0, A^T]] dt) = [[F11, F12], [0, F22]],   Phi = F22^T,   Q = Phi F12

**The filter** (prior delta_k, covariance P_k at row k; only the columns measured at row k)::

    S_k = H P_k H^T + R,        K_k = P_k H^T S_k^-1,       e_k = r_k - H delta_k
    P_k|k = (I - K_k H) P_k (I - K_k H)^T + K_k R K_k^T     (Joseph form)
    delta_k+1 = Phi (delta_k + K_k e_k),       P_k+1 = Phi P_k|k Phi^T + Q

and the log-likelihood of the measurements is the sum over rows of the one-step-ahead
prediction errors' Gaussian densities::

    l = -1/2 sum_k ( m_k ln(2 pi) + ln det S_k + e_k^T S_k^-1 e_k )

The first prior is delta_0 = 0 (the deterministic run's starting state) with covariance P_0, by
default the stationary one-step prediction covariance of the most common step (the discrete
algebraic Riccati equation, :func:`stationary_covariance`): the state at the first row is taken
to be as uncertain as a prediction one step ahead in a long record.

**Speed.** The covariance recursion does not depend on the data. Once it has converged (the
prior changes from one row to the next by less than ``CONVERGED`` times its own size plus the
smallest measurement variance, a change that S = H P H^T + R cannot feel) it stays where it is
for as long as the step and the set of measured columns stay the same, so the loop jumps over
such runs of rows; a run of rows without measurements at the end needs no covariance at all.
The state estimates then follow from one linear recurrence over all rows
(:func:`rcsim.fitting.recurrence.linear_recurrence`) and the likelihood from array sums.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .recurrence import linear_recurrence

__all__ = ["van_loan", "modal_discretisation", "kalman_filter", "KalmanOutput",
           "stationary_covariance"]

#: Relative change of the prior covariance from one row to the next below which it is taken as
#: converged (held over a run of rows with the same step and measured columns).
CONVERGED = 1e-13
#: Distinct steps above which Phi and Q are taken over the eigenvalues of A, all at once.
MANY_STEPS = 32


@dataclass
class KalmanOutput:
    """What the filter found on one record.

    ``log_likelihood``; ``innovations`` (N, m) the one-step-ahead prediction errors
    r_k - H delta_k (NaN where a value was not measured or was held out), ``variances`` (N, m)
    their predicted variances diag(S_k) (NaN likewise), ``deviation`` (N, n) the prior state
    deviation delta_k from the deterministic run, ``n_observed`` the values used.
    ``predictions`` (N, m) holds H delta_k at every row, also where nothing was measured (the
    open-loop prediction across held-out rows).
    """

    log_likelihood: float
    innovations: np.ndarray
    variances: np.ndarray
    deviation: np.ndarray
    predictions: np.ndarray
    n_observed: int

    @property
    def standardised(self) -> np.ndarray:
        """Innovations divided by their predicted standard deviations (N, m)."""
        return self.innovations / np.sqrt(self.variances)


def van_loan(A: np.ndarray, Sigma: np.ndarray, steps) -> tuple[np.ndarray, np.ndarray]:
    """Phi = expm(A dt) and the process-noise covariance Q over each step (Van Loan's method).

    Parameters
    ----------
    A : (n, n) ndarray
        Continuous-time state matrix [1/s].
    Sigma : (n, n) ndarray
        Diffusion G G^T [K^2/s].
    steps : (u,) array
        Step lengths dt [s].

    Returns
    -------
    Phi, Q : (u, n, n) ndarrays

    A log has few distinct steps (one when it is sampled regularly), and each gets one matrix
    exponential of size 2n. With more than ``MANY_STEPS`` distinct steps (irregular sampling),
    or a diagonal A (one node), the same integrals are taken in closed form over the
    eigenvalues of A, for all steps at once (:func:`modal_discretisation`).

    >>> Phi, Q = van_loan(np.array([[-0.5]]), np.array([[2.0]]), [1.0])
    >>> round(float(Phi[0, 0, 0]), 6), round(float(Q[0, 0, 0]), 6)  # e^-0.5, 2 (1 - e^-1) / 1
    (0.606531, 1.264241)
    """
    from scipy.linalg import expm

    steps = np.atleast_1d(np.asarray(steps, dtype=float))
    diagonal = not np.any(A - np.diag(np.diag(A)))
    if steps.size > MANY_STEPS or diagonal:  # (a diagonal A, e.g. one node: the closed form)
        out = modal_discretisation(A, Sigma, steps)
        if out is not None:
            return out
    n = A.shape[0]
    M = np.zeros((2 * n, 2 * n))
    M[:n, :n] = -A
    M[:n, n:] = Sigma
    M[n:, n:] = A.T
    Phi = np.empty((steps.size, n, n))
    Q = np.empty((steps.size, n, n))
    for i, dt in enumerate(steps):  # one exponential per distinct step (few)
        E = expm(M * dt)
        Phi[i] = E[n:, n:].T
        Q[i] = Phi[i] @ E[:n, n:]
    Q = 0.5 * (Q + np.transpose(Q, (0, 2, 1)))
    return Phi, Q


def modal_discretisation(A, Sigma, steps):
    """Phi and Q over many steps at once from the eigen-decomposition A = V diag(lambda) V^-1::

        Phi(dt) = V diag(exp(lambda dt)) V^-1
        Q(dt)   = V [ M_ij (exp((lambda_i + lambda_j) dt) - 1) / (lambda_i + lambda_j) ] V^T,
                  M = V^-1 Sigma V^-T   (dt M_ij where lambda_i + lambda_j = 0)

    Returns None when A is too close to defective for this (then Van Loan's exponentials are
    used).
    """
    lam, V = np.linalg.eig(A)
    if np.linalg.cond(V) > 1e8:  # pragma: no cover - defective A; thermal networks are not
        return None
    Vi = np.linalg.inv(V)
    M = Vi @ Sigma @ Vi.T
    s = lam[:, None] + lam[None, :]
    dt = steps[:, None, None]
    small = np.abs(s) * dt < 1e-8
    with np.errstate(divide="ignore", invalid="ignore"):
        kernel = np.where(small, dt * (1 + 0.5 * s * dt), np.expm1(s * dt) / s)
    Q = np.real(V[None] @ (M[None] * kernel) @ V.T[None])
    Phi = np.real((V[None] * np.exp(lam[None, None, :] * dt)) @ Vi[None])
    Q = 0.5 * (Q + np.transpose(Q, (0, 2, 1)))
    return Phi, Q


def stationary_covariance(Phi, Q, H, Rm) -> np.ndarray:
    """The stationary prior covariance of the filter with every column measured: the
    stabilising solution of the discrete algebraic Riccati equation::

        P = Phi P Phi^T - Phi P H^T (H P H^T + R)^-1 H P Phi^T + Q
          = Phi P (I + H^T R^-1 H P)^-1 Phi^T + Q

    by the structure-preserving doubling algorithm (Chu, Fan & Lin, *Linear Algebra and its
    Applications* 396 (2005) 55-80), which converges quadratically: with A = Phi^T,
    G = H^T R^-1 H and X_0 = Q,

        W = I + G X_k,  A_k+1 = A_k W^-1 A_k,  G_k+1 = G_k + A_k W^-1 G_k A_k^T,
        X_k+1 = X_k + A_k^T X_k W^-1 A_k;

    if it does not converge, scipy's solver (:func:`scipy.linalg.solve_discrete_are`), and if
    that fails the open-loop stationary covariance (a discrete Lyapunov equation).
    """
    P = _doubling(Phi, Q, H, Rm)
    if P is not None:
        return P
    from scipy.linalg import solve_discrete_are, solve_discrete_lyapunov

    try:
        P = solve_discrete_are(Phi.T, H.T, Q, Rm)
    except (ValueError, np.linalg.LinAlgError):
        try:
            P = solve_discrete_lyapunov(Phi, Q)
        except (ValueError, np.linalg.LinAlgError):  # pragma: no cover - degenerate networks
            P = Q.copy()
    P = 0.5 * (P + P.T)
    if not np.all(np.isfinite(P)):  # pragma: no cover - degenerate networks
        P = Q.copy()
    return P


def _doubling(Phi, Q, H, Rm, iterations: int = 60):
    """The doubling iteration of :func:`stationary_covariance` (None if it does not settle)."""
    n = Phi.shape[0]
    eye = np.eye(n)
    A = Phi.T.copy()
    G = H.T @ np.linalg.solve(Rm, H)
    X = Q.copy()
    with np.errstate(all="ignore"):
        for _ in range(iterations):  # quadratic: about ten iterations
            W = eye + G @ X
            try:
                WA = np.linalg.solve(W, A)
                WG = np.linalg.solve(W, G)
            except np.linalg.LinAlgError:
                return None
            X_next = X + A.T @ X @ WA
            G = G + A @ WG @ A.T
            G = 0.5 * (G + G.T)
            A = A @ WA
            X_next = 0.5 * (X_next + X_next.T)
            if not np.all(np.isfinite(X_next)):
                return None
            if np.max(np.abs(X_next - X)) <= 1e-15 * np.max(np.abs(X_next)):
                return X_next
            X = X_next
    return None


@dataclass
class _Gains:
    """One row's filter quantities (rows with the same ones share an entry)."""

    F: list
    G: list
    Sinv: list
    logdet: list
    sdiag: list
    counts: list


def kalman_filter(r: np.ndarray, observed: np.ndarray, t: np.ndarray, A: np.ndarray,
                  H: np.ndarray, process: np.ndarray, measurement: np.ndarray,
                  P0: np.ndarray | None = None) -> KalmanOutput:
    """Filter the deviations ``r`` (N, m) of a record from its deterministic run.

    Parameters
    ----------
    r : (N, m) ndarray
        Measured minus deterministic model [K]; NaN where not measured.
    observed : (N, m) bool ndarray
        The values the filter uses (finite and not held out).
    t : (N,) ndarray
        Row times [s], increasing.
    A, H : ndarrays (n, n), (m, n)
        State matrix and output map.
    process : (n,) ndarray
        Process-noise intensity sigma_i^2 of each state [K^2/s].
    measurement : (m,) ndarray
        Measurement-noise variance of each column [K^2].
    P0 : (n, n) ndarray, optional
        Covariance of the first prior (default: stationary, see the module's docstring).
    """
    from ..threads import kernels

    # many small matrices: BLAS threads only cost (and much more on a busy machine)
    with kernels():
        return _filter(r, observed, t, A, H, process, measurement, P0)


def _filter(r, observed, t, A, H, process, measurement, P0) -> KalmanOutput:
    r = np.asarray(r, dtype=float)
    observed = np.asarray(observed, dtype=bool) & np.isfinite(r)
    N, m = r.shape
    n = A.shape[0]
    steps = np.diff(np.asarray(t, dtype=float))
    unique, step_index = np.unique(steps, return_inverse=True)
    Phi, Q = van_loan(A, np.diag(process), unique)
    Rm = np.diag(measurement)
    if P0 is None:
        common = int(np.argmax(np.bincount(step_index))) if steps.size else 0
        P0 = stationary_covariance(Phi[common], Q[common], H, Rm) if steps.size else np.eye(n)
    pattern = observed @ (1 << np.arange(m, dtype=np.int64))
    # the key of each row: (its step, its measured columns); the last row has no step
    key = pattern * (unique.size + 1) + np.append(step_index, unique.size)
    gains, row_gain = _covariances(observed, key, step_index, Phi, Q, H, Rm, P0, N, n, m)
    F = np.asarray(gains.F)
    G = np.asarray(gains.G)
    r0 = np.where(observed, r, 0.0)
    forcing = np.einsum("kij,kj->ki", G[row_gain[:-1]], r0[:-1]) if N > 1 else np.zeros((0, n))
    delta = linear_recurrence(F, row_gain[:-1], forcing, np.zeros(n))
    predictions = delta @ H.T
    e = np.where(observed, r - predictions, 0.0)
    Sinv = np.asarray(gains.Sinv)[row_gain]
    quad = np.einsum("ki,kij,kj->k", e, Sinv, e)
    counts = np.asarray(gains.counts)[row_gain]
    loglik = -0.5 * float(np.sum(counts * math.log(2 * math.pi))
                          + np.sum(np.asarray(gains.logdet)[row_gain]) + np.sum(quad))
    variances = np.where(observed, np.asarray(gains.sdiag)[row_gain], np.nan)
    innovations = np.where(observed, r - predictions, np.nan)
    return KalmanOutput(loglik, innovations, variances, delta, predictions,
                        int(observed.sum()))


def _covariances(observed, key, step_index, Phi, Q, H, Rm, P0, N, n, m):
    """The covariance recursion, row by row until it converges, then run by run.

    Returns the distinct gains and, for each row, the index of its gains.
    """
    gains = _Gains([], [], [], [], [], [])
    row_gain = np.empty(N, dtype=np.int64)
    # end of the run of equal keys that each row belongs to
    change = np.flatnonzero(np.diff(key) != 0)
    ends = np.append(change, N - 1)
    starts = np.concatenate([[0], change + 1])
    run_end = np.repeat(ends, ends - starts + 1)
    any_obs = observed.any(axis=1)
    last_obs = int(np.flatnonzero(any_obs)[-1]) if any_obs.any() else -1
    eye = np.eye(n)
    patterns = {}
    # a change of P far below the measurement variance does not change S = H P H^T + R
    floor = float(np.min(np.diag(Rm))) / max(float(np.max(np.sum(H ** 2, axis=1))), 1e-300)
    P = np.array(P0, dtype=float)
    k = 0
    while k < N:
        Kfull, Sfull, sd, logdet, count = _update(P, observed[k], H, Rm, patterns, n, m)
        Ppost = P if count == 0 else _joseph(P, Kfull, H, Rm, eye)
        if k < N - 1:
            Ph = Phi[step_index[k]]
            F = Ph - Ph @ Kfull @ H
            Gk = Ph @ Kfull
            Pnext = Ph @ Ppost @ Ph.T + Q[step_index[k]]
            Pnext = 0.5 * (Pnext + Pnext.T)
        else:
            F, Gk, Pnext = eye, np.zeros((n, m)), P
        row_gain[k] = len(gains.F)
        gains.F.append(F)
        gains.G.append(Gk)
        gains.Sinv.append(Sfull)
        gains.logdet.append(logdet)
        gains.sdiag.append(sd)
        gains.counts.append(count)
        if k >= last_obs:  # nothing measured from here on: only the transitions are needed
            _open_loop(gains, row_gain, step_index, Phi, k + 1, N, n, m)
            break
        if k + 1 < N and key[k + 1] == key[k] and \
                np.max(np.abs(Pnext - P)) <= CONVERGED * (np.max(np.abs(P)) + floor):
            j = int(run_end[k])  # the same prior for the rest of the run: the same gains
            row_gain[k + 1:j + 1] = row_gain[k]
            k = j + 1
            P = Pnext
            continue
        P = Pnext
        k += 1
    return gains, row_gain


def _update(P, cols, H, Rm, patterns, n, m):
    """Gain (n, m), S^-1 (m, m) and diag(S) (m,) padded with zeros / NaN for the columns not
    measured, ln det S and the number of values measured, at a row measuring ``cols``."""
    key = cols.tobytes()
    if key not in patterns:  # the measured columns' rows of H and block of R, once per pattern
        idx = np.flatnonzero(cols)
        patterns[key] = (idx, H[idx], Rm[np.ix_(idx, idx)])
    idx, Ho, Ro = patterns[key]
    Kfull = np.zeros((n, m))
    Sfull = np.zeros((m, m))
    sd = np.full(m, np.nan)
    if idx.size == 0:
        return Kfull, Sfull, sd, 0.0, 0
    PH = P @ Ho.T
    S = Ho @ PH + Ro
    if idx.size == 1:
        s = float(S[0, 0])
        Si = np.array([[1.0 / s]])
        logdet = math.log(s)
    else:
        S = 0.5 * (S + S.T)
        Si = np.linalg.inv(S)
        logdet = float(np.linalg.slogdet(S)[1])
    Kfull[:, idx] = PH @ Si
    Sfull[np.ix_(idx, idx)] = Si
    sd[idx] = np.diag(S)
    return Kfull, Sfull, sd, logdet, int(idx.size)


def _joseph(P, Kfull, H, Rm, eye):
    """The posterior covariance in Joseph form, (I - K H) P (I - K H)^T + K R K^T."""
    IKH = eye - Kfull @ H
    return IKH @ P @ IKH.T + Kfull @ Rm @ Kfull.T


def _open_loop(gains, row_gain, step_index, Phi, k0, N, n, m) -> None:
    """Rows k0 .. N-1 without measurements: transition Phi of their step, no gain."""
    if k0 >= N:
        return
    base = len(gains.F)
    steps = step_index[k0:N - 1]
    used = np.unique(steps)
    for u in used:  # one entry per distinct step (few), not per row
        gains.F.append(Phi[u])
        gains.G.append(np.zeros((n, m)))
        gains.Sinv.append(np.zeros((m, m)))
        gains.logdet.append(0.0)
        gains.sdiag.append(np.full(m, np.nan))
        gains.counts.append(0)
    lookup = np.zeros(int(step_index.max()) + 1 if step_index.size else 1, dtype=np.int64)
    lookup[used] = base + np.arange(used.size)
    row_gain[k0:N - 1] = lookup[steps]
    last = len(gains.F)
    gains.F.append(np.eye(n))
    gains.G.append(np.zeros((n, m)))
    gains.Sinv.append(np.zeros((m, m)))
    gains.logdet.append(0.0)
    gains.sdiag.append(np.full(m, np.nan))
    gains.counts.append(0)
    row_gain[N - 1] = last
