"""Formatting shared by the commands: times, energies, table cells, the closing caution.

Plain strings only; nothing here prints (the commands echo) and nothing imports the library's
heavy parts.
"""

from __future__ import annotations

import math

__all__ = ["CAUTION", "format_time", "format_energy", "format_cell", "is_missing"]

CAUTION = ("caution: a simulation supports, and never replaces, qualification testing, local "
           "codes and licensed professional judgement.")


def format_time(seconds: float | None) -> str:
    """A time span [s] in the unit a reader expects (s, min, h or d), "-" when unknown.

    >>> format_time(90.0), format_time(31592.8), format_time(None)
    ('90 s', '8.776 h', '-')
    """
    from ..units import format_duration

    return format_duration(seconds)


def format_energy(joules: float) -> str:
    """An energy [J] with a prefix chosen by its size, 4 significant digits.

    >>> format_energy(1234.5), format_energy(-2.5e6), format_energy(12.0)
    ('1.234 kJ', '-2.5 MJ', '12 J')
    """
    size = abs(joules)
    for scale, unit in ((1e9, "GJ"), (1e6, "MJ"), (1e3, "kJ")):
        if size >= scale:
            return f"{joules / scale:.4g} {unit}"
    return f"{joules:.4g} J"


def is_missing(value) -> bool:
    """Whether a table cell holds no value (None or NaN).

    >>> is_missing(None), is_missing(float("nan")), is_missing(0.0)
    (True, True, False)
    """
    return value is None or (isinstance(value, float) and math.isnan(value))


def format_cell(value, spec: str, width: int = 0) -> str:
    """A number formatted with ``spec`` and right-aligned in ``width``; blank when missing.

    >>> format_cell(333550 / 1000, ".5g", 8), format_cell(None, ".5g", 3)
    ('  333.55', '   ')
    """
    text = "" if is_missing(value) else format(value, spec)
    return f"{text:>{width}}"
