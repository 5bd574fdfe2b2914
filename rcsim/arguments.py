"""Checks of arguments given to the physics functions: a name from a registry, a number in a
range, a temperature above absolute zero. Each failure is an InputError naming the argument.

(``check_name`` would sit well in ``base.py`` beside ``suggest``.)
"""

from __future__ import annotations

import numpy as np

from .base import suggest
from .errors import InputError

__all__ = ["KELVIN", "check_name", "bounded", "kelvin"]

#: 0 degC in kelvin
KELVIN = 273.15


def check_name(name, valid, what: str, where: str | None = None) -> str:
    """Return ``name`` if it is one of ``valid``, else raise an InputError listing them.

    >>> check_name("perez", ["isotropic", "perez"], "sky model")
    'perez'
    """
    valid = list(valid)
    if name not in valid:
        close = suggest(name, valid)
        hint = f"valid: {', '.join(valid)}"
        raise InputError(f"unknown {what} {name!r}", where,
                         f"{close}; {hint}" if close.startswith("did you") else hint)
    return name


def bounded(value, name: str, low: float = 0.0, high: float = 1.0) -> np.ndarray:
    """``value`` as a float array, every element finite and within [low, high] (or an error)."""
    array = np.asarray(value, dtype=float)
    if not np.all(np.isfinite(array)) or np.any(array < low) or np.any(array > high):
        raise InputError(f"{name} must be between {low:g} and {high:g}, got {_short(value)}",
                         name)
    return array


def kelvin(celsius, name: str) -> np.ndarray:
    """A temperature array in degC converted to kelvin, refused if not finite or at or below
    absolute zero."""
    array = np.asarray(celsius, dtype=float) + KELVIN
    if not np.all(np.isfinite(array)) or np.any(array <= 0):
        raise InputError(f"{name} must be finite and above absolute zero", name)
    return array


def _short(value) -> str:
    text = repr(value)
    return text if len(text) <= 60 else text[:57] + "..."
