"""Anderson mixing: faster fixed-point iteration for waveform relaxation and periodic starts."""

from __future__ import annotations

import numpy as np

__all__ = ["Anderson"]


class Anderson:
    """Anderson mixing for the fixed point x = F(x) (type II, small memory).

    Each :meth:`step` takes the current x and F(x) and proposes the next x: the combination of
    the last ``m`` + 1 iterates whose residuals F(x) - x cancel best in the least-squares sense
    (Walker and Ni, "Anderson acceleration for fixed-point iterations", SIAM J. Numer. Anal. 49,
    2011).

    >>> mixer = Anderson(3)
    >>> x = 0.0
    >>> for _ in range(6):   # x = cos(x): the fixed point 0.739085...
    ...     x = float(mixer.step(np.array([x]), np.cos(np.array([x])))[0])
    >>> round(x, 6)
    0.739085
    """

    def __init__(self, m: int):
        self.m = m
        self.X: list = []
        self.R: list = []

    def step(self, x, fx):
        r = fx - x
        self.X.append(x)
        self.R.append(r)
        if len(self.X) > self.m + 1:
            self.X.pop(0)
            self.R.pop(0)
        if len(self.X) < 2:
            return fx
        dX = np.column_stack([self.X[i + 1] - self.X[i] for i in range(len(self.X) - 1)])
        dR = np.column_stack([self.R[i + 1] - self.R[i] for i in range(len(self.R) - 1)])
        gamma, *_ = np.linalg.lstsq(dR, r, rcond=None)
        out = fx - (dX + dR) @ gamma
        return out
