"""A linear recurrence over a log's rows, solved at once: x_0 given, x_{k+1} = F_k x_k + v_k.

Two ways, neither a Python loop over rows:

* **Runs of one matrix** (a regularly sampled log has one F; a Kalman filter's gains settle to
  one): in the eigenvectors of F, F = V diag(mu) V^-1, each mode is a first-order recursion
  z_{k+1} = mu z_k + u_k, which :func:`scipy.signal.lfilter` runs in compiled code. Used when the
  rows fall into few runs and each F is well conditioned.
* **Anything else**: one block lower-bidiagonal system (identity blocks on the diagonal, -F_k
  below)::

    [ I                ] [x_1]   [v_0 + F_0 x_0]
    [-F_1  I           ] [x_2] = [v_1          ]
    [     -F_2  I      ] [x_3]   [v_2          ]

  whose band (2n - 1 lower diagonals for n states) LAPACK's banded solver takes
  (:func:`scipy.linalg.solve_banded`), in chunks of rows to bound memory.

Used for the deterministic run of a linear model between log samples and for the state
estimates of the Kalman filter.
"""

from __future__ import annotations

import numpy as np

__all__ = ["linear_recurrence"]

#: Rows of one banded solve (bounds memory: about 2 n^2 numbers per row).
CHUNK_ROWS = 50_000
#: At most this many runs of one matrix go the modal way.
MODAL_RUNS = 64
#: Condition number of F's eigenvectors above which the modal way is not trusted.
MODAL_CONDITION = 1e6


def linear_recurrence(F: np.ndarray, index: np.ndarray, v: np.ndarray, x0: np.ndarray) -> np.ndarray:
    """States x_0 .. x_{N-1} (N, n) of x_{k+1} = F[index[k]] x_k + v[k], from ``x0``.

    Parameters
    ----------
    F : ndarray (r, n, n)
        The distinct transition matrices.
    index : int ndarray (N - 1,)
        Which matrix steps row k to row k + 1.
    v : ndarray (N - 1, n)
        The forcing of each step.
    x0 : ndarray (n,)

    >>> F = np.array([[[0.5]]])
    >>> linear_recurrence(F, np.zeros(3, int), np.ones((3, 1)), np.array([2.0])).ravel()
    array([2., 2., 2., 2.])
    """
    v = np.asarray(v, dtype=float)
    index = np.asarray(index, dtype=np.int64)
    steps, n = v.shape
    out = np.empty((steps + 1, n))
    out[0] = x0
    if steps == 0:
        return out
    cuts = np.flatnonzero(np.diff(index)) + 1
    if cuts.size < MODAL_RUNS and _modal(F, index, v, out, np.concatenate([[0], cuts, [steps]])):
        return out
    _banded(F, index, v, out)
    return out


def _modal(F, index, v, out, bounds) -> bool:
    """Run by run in each F's eigenvectors; False (nothing kept) if an F is ill conditioned."""
    from scipy.signal import lfilter

    decomposed = {}
    for i in np.unique(index):
        if not np.any(F[i] - np.diag(np.diag(F[i]))):  # already diagonal (a modal run)
            eye = np.eye(F.shape[1])
            decomposed[int(i)] = (np.diag(F[i]).copy(), eye, eye)
            continue
        mu, V = np.linalg.eig(F[i])
        if not np.all(np.isfinite(mu)) or np.linalg.cond(V) > MODAL_CONDITION:
            return False
        decomposed[int(i)] = (mu, V, np.linalg.inv(V))
    real = all(np.isrealobj(m) or not np.any(m.imag) for m, _, _ in decomposed.values())
    for a, b in zip(bounds[:-1], bounds[1:]):  # a loop over runs (few), not over rows
        mu, V, Vi = decomposed[int(index[a])]
        if real:
            mu, V, Vi = mu.real, V.real, Vi.real
        z0 = Vi @ out[a]
        u = v[a:b] @ Vi.T
        z = np.empty(u.shape, dtype=u.dtype)
        for j in range(mu.size):  # a loop over modes
            z[:, j], _ = lfilter([1.0], [1.0, -mu[j]], u[:, j], zi=[mu[j] * z0[j]])
        out[a + 1:b + 1] = np.real(z @ V.T)
    return True


def _banded(F, index, v, out) -> None:
    from scipy.linalg import solve_banded

    steps, n = v.shape
    start = 0
    while start < steps:  # chunks of rows, not a loop over rows
        stop = min(steps, start + CHUNK_ROWS)
        Fc = F[index[start:stop]]                     # (L, n, n)
        rhs = v[start:stop].copy()
        rhs[0] += Fc[0] @ out[start]
        L = stop - start
        lower = 2 * n - 1
        ab = np.zeros((lower + 1, L * n))
        ab[0] = 1.0
        if L > 1:
            i, j = np.meshgrid(np.arange(n), np.arange(n), indexing="ij")
            blocks = np.arange(1, L)                  # block row k holds -F_k at block column k-1
            rows_band = (n + i - j).ravel()           # band index of entry (i, j)
            cols = ((blocks[:, None] - 1) * n + j.ravel()[None, :])
            ab[np.broadcast_to(rows_band, cols.shape), cols] = -Fc[1:].reshape(L - 1, n * n)
        x = solve_banded((lower, 0), ab, rhs.ravel(), check_finite=False)
        out[start + 1:stop + 1] = x.reshape(L, n)
        start = stop
