"""Input profiles as the closed-form paths see them: a piecewise-linear part plus sinusoids.

Every profile is a piecewise-linear part plus sums of sines (:mod:`rcsim.profiles`); the exact
and piecewise paths integrate the two separately and exactly. :func:`linear_parts` is the one
place the engine reads the piecewise-linear part.
"""

from __future__ import annotations

import numpy as np

__all__ = ["linear_parts", "input_values"]


def _linear_part(profile, t: np.ndarray, side: str) -> np.ndarray:
    # a profile's piecewise-linear part; read through its public name once profiles offer one
    # (``linear_part``), through the subclass hook ``_pl`` of rcsim.profiles.Profile until then
    public = getattr(profile, "linear_part", None)
    if public is not None:
        return public(t, side)
    return profile._pl(t, side)


def linear_parts(profiles, t: np.ndarray, side: str = "right") -> np.ndarray:
    """Piecewise-linear parts of ``profiles`` at times ``t`` [s]: shape (len(t), len(profiles)).

    ``side`` 'right' gives the values just after a jump, 'left' those just before it.
    """
    t = np.asarray(t, dtype=float)
    if not profiles:
        return np.zeros((t.size, 0))
    return np.column_stack([_linear_part(p, t, side) for p in profiles])


def input_values(profiles, t: np.ndarray) -> np.ndarray:
    """Values of ``profiles`` at times ``t`` [s] (right-continuous): (len(t), len(profiles))."""
    t = np.asarray(t, dtype=float)
    if not profiles:
        return np.zeros((t.size, 0))
    return np.column_stack([p.value(t) for p in profiles])
