"""A linear recurrence over a log's rows, solved at once: x_0 given, x_{k+1} = F_k x_k + v_k.

Written as one block lower-bidiagonal system (identity blocks on the diagonal, -F_k below)::

    [ I                ] [x_1]   [v_0 + F_0 x_0]
    [-F_1  I           ] [x_2] = [v_1          ]
    [     -F_2  I      ] [x_3]   [v_2          ]
    [           ...    ] [...]   [...          ]

whose band (n - 1 + n lower diagonals for n states) is solved by LAPACK's banded solver
(:func:`scipy.linalg.solve_banded`), in chunks of rows to bound memory. No Python loop runs over
the rows. Used for the deterministic run of a linear model between log samples and for the state
estimates of the Kalman filter.
"""

from __future__ import annotations

import numpy as np

__all__ = ["linear_recurrence"]

#: Rows of one banded solve (bounds memory: about 2 n^2 numbers per row).
CHUNK_ROWS = 50_000


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
    array([2.  , 2.  , 2.  , 2.  ])
    """
    from scipy.linalg import solve_banded

    v = np.asarray(v, dtype=float)
    steps, n = v.shape
    out = np.empty((steps + 1, n))
    out[0] = x0
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
    return out
