"""One log prepared for a fit: its scenario, model, free values and which values count.

Fits of several logs at once (:mod:`rcsim.fitting.records`) and stochastic fits
(:mod:`rcsim.fitting.stochastic`) work on a list of these. Each record has its own free values
(``params``: the shared ones, then its own per-record ones), placed in the fit's global
coordinates by ``index``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..scenario import Scenario
from .logs import Log
from .parameters import ParameterSet

__all__ = ["Record"]


@dataclass
class Record:
    """A log ready to fit.

    ``Y`` (N, m) the measured values, ``mask`` (N, m) those fitted (finite and not held out),
    ``holdout`` the held-out span or None, ``index`` (len(params),) the global coordinate of each
    local free value.
    """

    label: str
    scenario: Scenario
    log: Log
    model: object
    params: ParameterSet
    index: np.ndarray
    Y: np.ndarray
    mask: np.ndarray
    holdout: object = None

    def local(self, x) -> np.ndarray:
        """This record's fitted coordinates from the global ones."""
        return np.asarray(x, dtype=float)[self.index]

    def holdout_rows(self) -> np.ndarray:
        """True for the rows in the held-out span."""
        if self.holdout is None:
            return np.zeros(self.log.time.size, dtype=bool)
        return self.holdout.mask(self.log.time)
