"""The base class of time profiles: values, left limits, exact integrals, span checks.

A subclass gives its piecewise-linear part (``_pl``), its kinks and jumps (``knots``), its
sinusoids (``sines``), the span it covers and how it binds strings with units (``_bind``);
everything else here follows from those. Also the checks that tables of points share and the
unit conversion used when binding (``units`` is imported only then, so that importing profiles
does not load pint).
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import ProfileError
from ..units import ABSOLUTE_ZERO

LEVEL_KIND = {"temperature": "temperature", "power": "power", "conductance": "conductance",
              "heat_flux": "heat_flux", "velocity": "velocity", "fraction": "dimensionless"}
DELTA_KIND = {"temperature": "temperature_difference", "power": "power",
              "conductance": "conductance", "heat_flux": "heat_flux", "velocity": "velocity",
              "fraction": "dimensionless"}


def to_si(value, kind: str, where: str | None = None) -> float:
    """:func:`rcsim.units.to_si`, imported when a profile is bound (not when profiles are)."""
    from ..units import to_si as convert

    return convert(value, kind, where)


#: Kinds whose plain numbers are SI already and need no lower bound (levels, not sizes).
_PLAIN_KINDS = ("time", "temperature", "temperature_difference", "power")


def to_si_array(values, kind: str, where: str | None = None) -> np.ndarray:
    """:func:`rcsim.units.to_si_array` (imported when a profile is bound), vectorised: plain
    numbers are checked as one array, strings with units are converted once per distinct
    string. A bad entry gives the same one-line error as converting it alone (naming its index).
    """
    from ..units import MAX_MAGNITUDE, to_si_array as convert

    if kind not in _PLAIN_KINDS or isinstance(values, (str, bytes)) or \
            not hasattr(values, "__iter__"):
        return convert(values, kind, where)
    if not isinstance(values, (list, tuple, np.ndarray)):
        values = list(values)
    if isinstance(values, np.ndarray):
        numbers = values if values.dtype.kind in "fiu" else None
    elif any(type(v) is bool or isinstance(v, np.bool_) for v in values):
        numbers = None
    else:
        try:
            numbers = np.asarray(values)
        except (TypeError, ValueError):
            return convert(values, kind, where)
        if numbers.dtype.kind not in "fiuU" or numbers.ndim != 1:
            return convert(values, kind, where)
        if numbers.dtype.kind == "U":
            return _strings_to_si(numbers, kind, where)
    if numbers is None:
        return convert(values, kind, where)
    out = np.asarray(numbers, dtype=float).ravel()
    bad = ~np.isfinite(out) | (np.abs(out) > MAX_MAGNITUDE)
    if kind == "temperature":
        bad |= out < ABSOLUTE_ZERO
    if bad.any():          # the per-value conversion says what is wrong, and where
        i = int(np.argmax(bad))
        to_si(values[i], kind, f"{where}[{i}]" if where else f"[{i}]")
    return out


def _strings_to_si(texts: np.ndarray, kind: str, where: str | None) -> np.ndarray:
    """Strings (with units) to SI floats, one conversion per distinct string."""
    distinct, first, inverse = np.unique(texts, return_index=True, return_inverse=True)
    converted = np.empty(distinct.size)
    for j, (text, i) in enumerate(zip(distinct.tolist(), first.tolist())):
        converted[j] = to_si(text, kind, f"{where}[{i}]" if where else f"[{i}]")
    return converted[inverse.ravel()]


class Profile:
    """Base class of time profiles. Subclasses implement the piecewise-linear part and sinusoids.

    A bound profile holds SI floats only. Public methods take time in seconds (floats or arrays).
    """

    #: period [s] when the profile repeats itself; 0.0 for constants (any period); None otherwise
    period: float | None = None
    where: str | None = None
    bound_kind: str | None = None

    # -- to implement ------------------------------------------------------------------------
    def _pl(self, t: np.ndarray, side: str) -> np.ndarray:  # pragma: no cover - abstract
        raise NotImplementedError

    def knots(self, t0: float, t1: float) -> np.ndarray:
        """Times in the open interval (t0, t1) where the piecewise-linear part has a kink or jump."""
        return np.empty(0)

    def sines(self) -> list[tuple[float, float, float]]:
        """Sinusoidal components ``(amplitude, omega, phase)``: ``amplitude*sin(omega*t + phase)``."""
        return []

    def span(self) -> tuple[float, float]:
        """Interval of time the profile is defined on (may be infinite)."""
        return (-math.inf, math.inf)

    def _bind(self, kind: str, where: str | None) -> "Profile":  # pragma: no cover - abstract
        raise NotImplementedError

    def describe(self) -> str:  # pragma: no cover - overridden
        return type(self).__name__

    def _ready(self) -> bool:
        """True when the numeric fields are set (plain numbers given, or bound)."""
        return False

    # -- shared ------------------------------------------------------------------------------
    def bind(self, kind: str, where: str | None = None) -> "Profile":
        """Return a copy with every value converted to SI for ``kind`` (a key of ``LEVEL_KIND``:
        'temperature', 'power', 'conductance', 'heat_flux', 'velocity' or 'fraction')."""
        if kind not in LEVEL_KIND:
            raise KeyError(kind)
        bound = self._bind(kind, where)
        bound.where = where
        bound.bound_kind = kind
        return bound

    def value(self, t):
        """Value at time(s) ``t`` [s] (right-continuous at steps)."""
        scalar = np.ndim(t) == 0
        tt = np.atleast_1d(np.asarray(t, dtype=float))
        out = self._pl(tt, "right") + self._sine_values(tt)
        return float(out[0]) if scalar else out

    def value_left(self, t):
        """Left limit of the value at time(s) ``t`` (differs from :meth:`value` at a step)."""
        scalar = np.ndim(t) == 0
        tt = np.atleast_1d(np.asarray(t, dtype=float))
        out = self._pl(tt, "left") + self._sine_values(tt)
        return float(out[0]) if scalar else out

    __call__ = value

    def _sine_values(self, t: np.ndarray) -> np.ndarray:
        out = np.zeros_like(t)
        for amplitude, omega, phase in self.sines():
            out += amplitude * np.sin(omega * t + phase)
        return out

    def integral(self, t0: float, t1: float) -> float:
        """Exact integral of the profile over [t0, t1] [value*s].

        The piecewise-linear part by the trapezoid rule between knots (exact for straight
        pieces); each sinusoid by its antiderivative ``-a/omega cos(omega t + phase)``, the
        difference of the two cosines written as the product
        ``2 sin(omega (t0 + t1)/2 + phase) sin(omega (t1 - t0)/2)``: no two nearly equal numbers
        are subtracted, so a period far longer than the interval (omega (t1 - t0) tiny) keeps
        its digits (the factor tends to ``a (t1 - t0) sin(phase)``).
        """
        tau = np.concatenate(([t0], self.knots(t0, t1), [t1]))
        right = self._pl(tau[:-1], "right")
        left = self._pl(tau[1:], "left")
        total = float(np.sum(0.5 * (right + left) * np.diff(tau)))
        for amplitude, omega, phase in self.sines():
            half = 0.5 * omega * (t1 - t0)
            total += 2.0 * amplitude * math.sin(0.5 * omega * (t0 + t1) + phase) * \
                (math.sin(half) / omega)
        return total

    def check_span(self, t0: float, t1: float) -> None:
        """Raise :class:`ProfileError` if the profile does not cover [t0, t1]."""
        a, b = self.span()
        if a > t0 or b < t1:
            raise ProfileError(
                f"profile covers {fmt_time(a)} to {fmt_time(b)} but the run needs {fmt_time(t0)} "
                f"to {fmt_time(t1)}", self.where,
                "extend the data, repeat it with repeat = '<period>', or set outside = 'hold'")

    def repeat(self, period):
        """This profile repeated with ``period`` (its value on [0, period) tiled over time).

        A thin hand-off to :class:`rcsim.profiles.Repeat` (imported here, the module above).
        """
        from .periodic import Repeat

        return Repeat(self, period)

    @property
    def is_constant(self) -> bool:
        return False


def fmt_time(t: float) -> str:
    """A time [s] for messages; infinite ends as -inf / +inf."""
    if math.isinf(t):
        return "-inf" if t < 0 else "+inf"
    return f"{t:g} s"


def finite_checked(array: np.ndarray, what: str, where: str | None) -> np.ndarray:
    """``array`` if every entry is finite, else a ProfileError naming the first bad index."""
    bad = ~np.isfinite(array)
    if bad.any():
        i = int(np.argmax(bad))
        raise ProfileError(f"{what}[{i}] is not a finite number ({array[i]!r})", where)
    return array


def check_points(times, values, outside, where, min_points: int, what: str) -> None:
    """The checks Steps and Table share: shape, counts, finite numbers, increasing times."""
    if times.ndim != 1 or times.size < min_points:
        raise ProfileError(f"{what} needs at least {'one time' if min_points == 1 else 'two points'}",
                           where)
    if values.shape != times.shape:
        raise ProfileError(f"{what} has {times.size} times but {values.size} values", where,
                           "give one value per time")
    if outside not in ("error", "hold"):
        raise ProfileError(f"outside must be 'error' or 'hold', got {outside!r}", where)
    finite_checked(times, "times", where)
    finite_checked(values, "values", where)
    check_increasing(times, where)


def check_increasing(times: np.ndarray, where: str | None, strict: bool = True) -> None:
    """A ProfileError naming the first time that does not increase (or, not strict, decreases)."""
    d = np.diff(times)
    bad = d <= 0 if strict else d < 0
    if bad.any():
        i = int(np.argmax(bad)) + 1
        raise ProfileError(f"times must increase, but times[{i}] = {times[i]:g} s follows "
                           f"{times[i - 1]:g} s", where, "sort the times")
