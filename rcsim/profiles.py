"""Time profiles for boundary temperatures and source powers.

Kinds: :class:`Constant`, :class:`Sine`, :class:`Steps`, :class:`Table` (also read from a CSV
column with :meth:`Table.from_csv`), and any of them repeated with a period (:class:`Repeat`, or
``profile.repeat(period)``).

Every profile is, internally, a *piecewise-linear part* (knots where the slope or the value jumps)
plus a sum of *sinusoids*. The exact solver integrates both in closed form, so a step is taken at
its exact time and a sine is never approximated by chords. Values are right-continuous: at a step
time the new value applies.

Profiles accept numbers or strings with units. A profile is *bound* to what it drives (a
temperature or a power) when it is attached to a boundary or a source; only then are strings parsed
("25 degC" for a level, "7 K" for a sine amplitude of a temperature).
"""

from __future__ import annotations

import math
import os
import warnings
from dataclasses import dataclass

import numpy as np

from .errors import DataError, ProfileError, RcsimWarning
from .units import to_si, to_si_array, ureg

__all__ = [
    "Profile",
    "Constant",
    "Sine",
    "Steps",
    "Table",
    "Repeat",
    "Shifted",
    "as_profile",
    "profile_kinds",
    "read_time_series",
    "common_period",
]

_LEVEL_KIND = {"temperature": "temperature", "power": "power"}
_DELTA_KIND = {"temperature": "temperature_difference", "power": "power"}


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
        """Return a copy with every value converted to SI for ``kind`` ('temperature' or 'power')."""
        if kind not in _LEVEL_KIND:
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
        """Exact integral of the profile over [t0, t1] [value*s]."""
        tau = np.concatenate(([t0], self.knots(t0, t1), [t1]))
        right = self._pl(tau[:-1], "right")
        left = self._pl(tau[1:], "left")
        total = float(np.sum(0.5 * (right + left) * np.diff(tau)))
        for amplitude, omega, phase in self.sines():
            total += amplitude / omega * (math.cos(omega * t0 + phase) - math.cos(omega * t1 + phase))
        return total

    def check_span(self, t0: float, t1: float) -> None:
        """Raise :class:`ProfileError` if the profile does not cover [t0, t1]."""
        a, b = self.span()
        if a > t0 or b < t1:
            raise ProfileError(
                f"profile covers {_fmt_t(a)} to {_fmt_t(b)} but the run needs {_fmt_t(t0)} to "
                f"{_fmt_t(t1)}", self.where,
                "extend the data, repeat it with repeat = '<period>', or set outside = 'hold'")

    def repeat(self, period) -> "Repeat":
        """This profile repeated with ``period`` (its value on [0, period) tiled over time)."""
        return Repeat(self, period)

    @property
    def is_constant(self) -> bool:
        return False


def _fmt_t(t: float) -> str:
    if math.isinf(t):
        return "-inf" if t < 0 else "+inf"
    return f"{t:g} s"


def _finite_checked(array: np.ndarray, what: str, where: str | None) -> np.ndarray:
    bad = ~np.isfinite(array)
    if bad.any():
        i = int(np.argmax(bad))
        raise ProfileError(f"{what}[{i}] is not a finite number ({array[i]!r})", where)
    return array


def _check_points(times, values, outside, where, min_points: int, what: str) -> None:
    """The checks Steps and Table share: shape, counts, finite numbers, increasing times."""
    if times.ndim != 1 or times.size < min_points:
        raise ProfileError(f"{what} needs at least {'one time' if min_points == 1 else 'two points'}",
                           where)
    if values.shape != times.shape:
        raise ProfileError(f"{what} has {times.size} times but {values.size} values", where,
                           "give one value per time")
    if outside not in ("error", "hold"):
        raise ProfileError(f"outside must be 'error' or 'hold', got {outside!r}", where)
    _finite_checked(times, "times", where)
    _finite_checked(values, "values", where)
    _increasing(times, where)


def _increasing(times: np.ndarray, where: str | None, strict: bool = True) -> None:
    d = np.diff(times)
    bad = d <= 0 if strict else d < 0
    if bad.any():
        i = int(np.argmax(bad)) + 1
        raise ProfileError(f"times must increase, but times[{i}] = {times[i]:g} s follows "
                           f"{times[i - 1]:g} s", where, "sort the times")


# ------------------------------------------------------------------------------------------
class Constant(Profile):
    """A constant value.

    >>> Constant(5.0).value(100.0)
    5.0
    """

    period = 0.0

    def __init__(self, value):
        self.raw = value
        self.level = value if isinstance(value, (int, float)) else None

    def _bind(self, kind, where):
        out = Constant(to_si(self.raw, _LEVEL_KIND[kind], where))
        return out

    def _pl(self, t, side):
        return np.full(t.shape, float(self.level))

    @property
    def is_constant(self) -> bool:
        return True

    def _ready(self) -> bool:
        return self.level is not None

    def describe(self) -> str:
        return f"constant {self.level:g}"

    def __repr__(self):
        return f"Constant({self.raw!r})"


class Sine(Profile):
    r"""A sinusoid: ``mean + amplitude*cos(2*pi*(t - peak)/period)``.

    If ``peak`` (time of the maximum) is not given, the profile is ``mean + amplitude*sin(2*pi*t/period)``.

    >>> s = Sine(mean=25, amplitude=7, period=86400, peak=15*3600)
    >>> round(s.value(15*3600), 9), round(s.value(3*3600), 9)
    (32.0, 18.0)
    """

    def __init__(self, mean, amplitude, period, peak=None):
        self.raw = dict(mean=mean, amplitude=amplitude, period=period, peak=peak)
        if all(isinstance(v, (int, float)) or v is None for v in self.raw.values()):
            self._set(float(mean), float(amplitude), float(period),
                      None if peak is None else float(peak), None)

    def _set(self, mean, amplitude, period, peak, where):
        if not (period > 0 and math.isfinite(period)):
            raise ProfileError(f"sine period must be positive, got {period:g} s", where)
        self.mean, self.amplitude, self.period_s, self.peak = mean, amplitude, period, peak
        self.period = period
        self.omega = 2.0 * math.pi / period
        self.phase = 0.0 if peak is None else math.pi / 2.0 - self.omega * peak

    def _bind(self, kind, where):
        r = self.raw
        out = Sine.__new__(Sine)
        out.raw = r
        w = (lambda k: f"{where}.{k}") if where else (lambda k: k)
        out._set(to_si(r["mean"], _LEVEL_KIND[kind], w("mean")),
                 to_si(r["amplitude"], _DELTA_KIND[kind], w("amplitude")),
                 to_si(r["period"], "time", w("period")),
                 None if r["peak"] is None else to_si(r["peak"], "time", w("peak")), where)
        return out

    def _pl(self, t, side):
        return np.full(t.shape, self.mean)

    def sines(self):
        return [(self.amplitude, self.omega, self.phase)] if self.amplitude != 0.0 else []

    def _ready(self) -> bool:
        return hasattr(self, "omega")

    def describe(self) -> str:
        peak = "" if self.peak is None else f", peak at {self.peak / 3600:g} h"
        return (f"sine mean {self.mean:g} amplitude {self.amplitude:g} period "
                f"{self.period_s / 3600:g} h{peak}")

    def __repr__(self):
        return "Sine(" + ", ".join(f"{k}={v!r}" for k, v in self.raw.items() if v is not None) + ")"


class Steps(Profile):
    """Values held from each time until the next one; the last value holds on.

    Parameters
    ----------
    times : sequence
        Increasing times [s] (or strings with units) where each value starts.
    values : sequence
        One value per time.
    outside : {'error', 'hold'}
        Before the first time: an error (default) or hold the first value.

    >>> p = Steps([0, 3600], [0.0, 5.0])
    >>> p.value([0.0, 3599.0, 3600.0, 1e6]).tolist()
    [0.0, 0.0, 5.0, 5.0]
    """

    def __init__(self, times, values, outside="error"):
        self.raw = dict(times=times, values=values, outside=outside)
        try:
            t = np.asarray(times, dtype=float)
            v = np.asarray(values, dtype=float)
        except (TypeError, ValueError):
            return
        self._set(t, v, outside, None)

    def _set(self, times, values, outside, where):
        _check_points(times, values, outside, where, 1, "a list of steps")
        self.times, self.values, self.outside = times, values, outside

    def _bind(self, kind, where):
        out = Steps.__new__(Steps)
        out.raw = self.raw
        w = f"{where}." if where else ""
        out._set(to_si_array(self.raw["times"], "time", w + "at"),
                 to_si_array(self.raw["values"], _LEVEL_KIND[kind], w + "values"),
                 self.raw["outside"], where)
        return out

    def _pl(self, t, side):
        s = "right" if side == "right" else "left"
        i = np.searchsorted(self.times, t, side=s) - 1
        return self.values[np.clip(i, 0, None)]

    def knots(self, t0, t1):
        k = self.times[(self.times > t0) & (self.times < t1)]
        return k

    def span(self):
        return (-math.inf if self.outside == "hold" else float(self.times[0]), math.inf)

    def _ready(self) -> bool:
        return hasattr(self, "times")

    def describe(self) -> str:
        return f"steps ({self.times.size} values from {self.values.min():g} to {self.values.max():g})"

    def __repr__(self):
        return f"Steps({self.raw['times']!r}, {self.raw['values']!r})"


class Table(Profile):
    """Linear interpolation between (time, value) points.

    Parameters
    ----------
    times, values : sequence
        Increasing times [s] and the values there.
    outside : {'error', 'hold'}
        Outside the covered span: an error (default) or hold the end value.
    unit : str, optional
        Unit of plain-number ``values`` (e.g. ``"degF"``); by default SI (degC for temperatures).

    >>> Table([0, 10], [0.0, 5.0]).value(4.0)
    2.0
    """

    def __init__(self, times, values, outside="error", unit=None, source=None):
        self.raw = dict(times=times, values=values, outside=outside, unit=unit)
        self.source = source
        try:
            t = np.asarray(times, dtype=float)
            v = np.asarray(values, dtype=float)
        except (TypeError, ValueError):
            return
        if unit is None:
            self._set(t, v, outside, None)

    def _set(self, times, values, outside, where):
        _check_points(times, values, outside, where, 2, "a table")
        self.times, self.values, self.outside = times, values, outside

    def _bind(self, kind, where):
        out = Table.__new__(Table)
        out.raw, out.source = self.raw, self.source
        w = f"{where}." if where else ""
        unit = self.raw["unit"]
        times = to_si_array(self.raw["times"], "time", w + "times")
        if unit is not None:
            values = _convert_array(np.asarray(self.raw["values"], dtype=float), unit,
                                    _LEVEL_KIND[kind], w + "unit")
        else:
            values = to_si_array(self.raw["values"], _LEVEL_KIND[kind], w + "values")
        out._set(times, values, self.raw["outside"], where)
        return out

    def _pl(self, t, side):
        return np.interp(t, self.times, self.values)

    def knots(self, t0, t1):
        return self.times[(self.times > t0) & (self.times < t1)]

    def span(self):
        if self.outside == "hold":
            return (-math.inf, math.inf)
        return (float(self.times[0]), float(self.times[-1]))

    def _ready(self) -> bool:
        return hasattr(self, "times")

    def describe(self) -> str:
        origin = f" from {self.source}" if self.source else ""
        return f"table of {self.times.size} points{origin}"

    def __repr__(self):
        return f"Table(<{len(self.raw['times'])} points>)"

    @classmethod
    def from_csv(cls, path, column, time=None, start=None, unit=None, time_unit="s",
                 missing="error", outside="error", where=None) -> "Table":
        """Read one column of a CSV file as a table profile.

        Parameters
        ----------
        path : str or path
            CSV file with a header row.
        column : str
            Name of the value column.
        time : str, optional
            Name of the time column; default the first column.
        start : str or datetime, optional
            When time is given as ISO-8601 timestamps, the time that counts as t = 0;
            default the first timestamp.
        unit : str, optional
            Unit of the values (e.g. ``"degF"``, ``"kW"``); default SI (degC, W).
        time_unit : str
            Unit of a numeric time column (default seconds).
        missing : {'error', 'interpolate'}
            Empty or non-numeric values: an error naming the row (default), or skip the row and
            interpolate across it.
        """
        series = read_time_series(path, [column], time=time, start=start, time_unit=time_unit,
                                  missing=missing, where=where)
        times = series.index.to_numpy(dtype=float)
        values = series[column].to_numpy(dtype=float)
        if missing == "interpolate":
            keep = np.isfinite(values)
            times, values = times[keep], values[keep]
        name = os.path.basename(str(path))
        prof = cls(times, values, outside=outside, unit=unit, source=f"{name}:{column}")
        return prof


def _convert_array(values: np.ndarray, unit: str, kind: str, where: str | None) -> np.ndarray:
    probe = to_si(f"1 {unit}", kind, where)  # checks the dimension (and absolute vs difference)
    del probe
    try:
        q = ureg.Quantity(values, ureg.parse_units(unit))
        target = {"temperature": "degC", "temperature_difference": "K"}.get(kind)
        if target is None:
            from .units import KINDS
            target = KINDS[kind][0]
        return np.asarray(q.to(target).magnitude, dtype=float)
    except Exception as exc:  # pint raises many types; report as a unit error at the key
        raise ProfileError(f"cannot convert values from {unit!r}: {exc}", where) from None


class Repeat(Profile):
    """A profile repeated with a period: ``value(t) = inner(t mod period)``.

    The inner profile must cover [0, period]. A sinusoid whose period does not divide the repeat
    period is sampled into a fine table (with a warning).

    >>> day = Table([0, 43200, 86400], [10.0, 20.0, 10.0])
    >>> round(Repeat(day, 86400).value(86400 * 3 + 21600), 9)
    15.0
    """

    def __init__(self, inner: Profile, period):
        if not isinstance(inner, Profile):
            raise ProfileError(f"repeat needs a profile, got {type(inner).__name__}")
        self.inner = inner
        self.raw_period = period
        if isinstance(period, (int, float)) and inner._ready():
            self._set(float(period), None)

    def _set(self, period, where):
        if not (math.isfinite(period) and period > 0):
            raise ProfileError(f"repeat period must be positive, got {period:g} s", where)
        self.period = period
        a, b = self.inner.span()
        if a > 0 or b < period:
            raise ProfileError(f"the repeated profile covers {_fmt_t(a)} to {_fmt_t(b)}, "
                               f"less than one period (0 to {period:g} s)", where)
        sines = self.inner.sines()
        if sines:
            ok = all(abs(period * om / (2 * math.pi) - round(period * om / (2 * math.pi))) < 1e-9
                     * max(1.0, period * om) for _, om, _ in sines)
            if not ok:
                warnings.warn(f"{where or 'profile'}: a sine whose period does not divide the "
                              f"repeat period is sampled at 2000 points per period",
                              RcsimWarning, stacklevel=3)
                t = np.linspace(0.0, period, 2001)
                tab = Table(t, self.inner.value(t))
                tab.bound_kind = self.inner.bound_kind
                self.inner = tab
        self._sines_ok = bool(self.inner.sines())

    def _bind(self, kind, where):
        inner = self.inner.bind(kind, where)
        out = Repeat.__new__(Repeat)
        out.inner, out.raw_period = inner, self.raw_period
        out._set(to_si(self.raw_period, "time", f"{where}.repeat" if where else "repeat"), where)
        return out

    def _pl(self, t, side):
        p = self.period
        tm = np.mod(t, p)
        if side == "left":
            at_wrap = (tm == 0.0)
            tm = np.where(at_wrap, p, tm)
            return self.inner._pl(tm, "left")
        return self.inner._pl(tm, "right")

    def knots(self, t0, t1):
        p = self.period
        inner = self.inner.knots(0.0, p)
        base = np.concatenate(([0.0], inner))
        k0 = math.floor(t0 / p)
        k1 = math.ceil(t1 / p)
        n_periods = k1 - k0 + 1
        if n_periods * base.size > 50_000_000:
            raise ProfileError("the repeated profile has too many knots over the run "
                               f"({n_periods * base.size})", self.where,
                               "use a coarser table or a shorter run")
        all_k = (np.arange(k0, k1 + 1)[:, None] * p + base[None, :]).ravel()
        return all_k[(all_k > t0) & (all_k < t1)]

    def sines(self):
        return self.inner.sines()

    def _ready(self) -> bool:
        return isinstance(self.__dict__.get("period"), float)

    def describe(self) -> str:
        return f"{self.inner.describe()}, repeated every {self.period / 3600:g} h"

    def __repr__(self):
        return f"Repeat({self.inner!r}, {self.raw_period!r})"


class Shifted(Profile):
    """A profile read ``offset`` seconds later: ``value(t) = inner(t + offset)``.

    Places a profile written on one clock on another whose t = 0 is ``offset`` seconds later
    (a fit whose log starts after the scenario's ``simulation.start``). Knots move with it and
    sinusoids change phase, so the exact solver still integrates it in closed form.

    >>> day = Sine(mean=20, amplitude=5, period=86400, peak=15*3600)
    >>> round(Shifted(day, 9*3600).value(6*3600), 9)     # 15:00 on the profile's clock
    25.0
    """

    def __init__(self, inner: Profile, offset: float):
        if not isinstance(inner, Profile):
            raise ProfileError(f"a shift needs a profile, got {type(inner).__name__}")
        if not math.isfinite(offset):
            raise ProfileError(f"a shift must be a finite time, got {offset!r} s")
        self.inner, self.offset = inner, float(offset)
        self.period = inner.period
        self.where, self.bound_kind = inner.where, inner.bound_kind

    def _bind(self, kind, where):
        return Shifted(self.inner.bind(kind, where), self.offset)

    def _pl(self, t, side):
        return self.inner._pl(t + self.offset, side)

    def knots(self, t0, t1):
        return self.inner.knots(t0 + self.offset, t1 + self.offset) - self.offset

    def sines(self):
        return [(a, om, ph + om * self.offset) for a, om, ph in self.inner.sines()]

    def span(self):
        a, b = self.inner.span()
        return (a - self.offset, b - self.offset)

    @property
    def is_constant(self) -> bool:
        return self.inner.is_constant

    def _ready(self) -> bool:
        return self.inner._ready()

    def describe(self) -> str:
        return f"{self.inner.describe()}, read {self.offset:g} s later"

    def __repr__(self):
        return f"Shifted({self.inner!r}, {self.offset!r})"


# ------------------------------------------------------------------------------------------
def as_profile(value, kind: str, where: str | None = None) -> Profile:
    """Turn a number, a string with units or a :class:`Profile` into a bound profile."""
    if isinstance(value, Profile):
        return value.bind(kind, where)
    if isinstance(value, (int, float, str)) and not isinstance(value, bool):
        return Constant(value).bind(kind, where)
    if callable(value):
        raise ProfileError("a Python function is not a profile", where,
                           "use Constant, Sine, Steps, Table or Repeat")
    raise ProfileError(f"expected a number, a string with units or a profile, got "
                       f"{type(value).__name__}", where)


def profile_kinds() -> list[str]:
    """Names of the profile kinds a scenario file accepts."""
    return ["constant", "sine", "steps", "table", "csv"]


def common_period(profiles, where: str | None = None) -> float:
    """Common period of periodic profiles (the longest, checked to be a multiple of the others).

    Raises
    ------
    ProfileError
        If a profile is not periodic or the periods are not commensurate.
    """
    periods = []
    for p in profiles:
        if p.period is None:
            raise ProfileError("a periodic start needs periodic inputs, but this profile does not "
                               "repeat", p.where, "add repeat = '<period>' or start from given "
                               "temperatures")
        if p.period > 0:
            periods.append(p.period)
    if not periods:
        return 0.0
    longest = max(periods)
    for q in periods:
        ratio = longest / q
        if abs(ratio - round(ratio)) > 1e-9 * ratio:
            raise ProfileError(f"periods {q:g} s and {longest:g} s are not multiples of each other",
                               where, "a periodic start needs one common period")
    return longest


# ------------------------------------------------------------------------------------------
@dataclass
class _TimeParse:
    seconds: np.ndarray
    is_datetime: bool


def read_time_series(path, columns=None, time=None, start=None, time_unit="s", missing="error",
                     where=None, max_bytes=None):
    """Read a CSV time series: a time column and numeric value columns.

    Returns a pandas DataFrame indexed by time [s] (float), one column per requested column (or
    every column but the time column). Times in seconds (or ``time_unit``) or ISO-8601 timestamps;
    timestamps are counted from ``start`` (default the first one).

    Raises
    ------
    DataError
        Missing file or column, unreadable or non-increasing times, non-numeric values (unless
        ``missing='interpolate'``, which turns them into NaN for the caller to skip).
    """
    import pandas as pd

    label = os.path.basename(str(path)) if where is None else where
    path = os.fspath(path)
    if os.path.isdir(path):
        raise DataError("is a directory, not a CSV file", label)
    if not os.path.exists(path):
        raise DataError("file not found", label, f"looked for {os.path.abspath(path)}")
    size = os.path.getsize(path)
    if max_bytes is not None and size > max_bytes:
        raise DataError(f"file is {size / 1e9:.2f} GB, more than the "
                        f"{max_bytes / 1e9:.2f} GB allowed", label)
    df = read_csv_text(path, label)
    if len(set(df.columns)) != len(df.columns):
        raise DataError("has duplicate column names", label)
    tcol = time if time is not None else df.columns[0]
    if tcol not in df.columns:
        raise DataError(f"no time column {tcol!r}", label,
                        "columns are: " + ", ".join(map(repr, df.columns)))
    if columns is None:
        columns = [c for c in df.columns if c != tcol]
    for c in columns:
        if c not in df.columns:
            from .materials import suggest
            raise DataError(f"no column {c!r}", label, suggest(c, [x for x in df.columns if x != tcol]))
    parsed = _parse_times(df[tcol], tcol, label, start, time_unit)
    t = parsed.seconds
    d = np.diff(t)
    if (d <= 0).any():
        i = int(np.argmax(d <= 0)) + 1
        raise DataError(f"time does not increase at line {i + 2} ({df[tcol].iloc[i]!r} after "
                        f"{df[tcol].iloc[i - 1]!r})", label, "sort the rows and remove duplicates")
    out = {}
    for c in columns:
        text = df[c].str.strip()
        values = pd.to_numeric(text, errors="coerce").to_numpy(dtype=float, copy=True)
        bad = ~np.isfinite(values)
        if bad.any() and missing != "interpolate":
            i = int(np.argmax(bad))
            what = "empty" if text.iloc[i] == "" else f"not a finite number ({text.iloc[i]!r})"
            raise DataError(f"column {c!r} line {i + 2} is {what}", label,
                            "fix the row or set missing = 'interpolate'")
        if np.isfinite(values).sum() == 0:
            raise DataError(f"column {c!r} has no numeric values", label)
        values[bad] = np.nan
        out[c] = values
    frame = pd.DataFrame(out, index=pd.Index(t, name="time"))
    frame.attrs["is_datetime"] = parsed.is_datetime
    return frame


def read_csv_text(path, label: str):
    """Read a CSV file with a header as a DataFrame of stripped strings, or raise DataError.

    Checks that it fits in memory, is UTF-8, parses as CSV and has data rows.
    """
    import pandas as pd

    # pandas holds a CSV read as text at about 11-15 times its size on disk (measured for
    # 1,000,000 rows, tests/benchmarks/bench_transient.py --large)
    check_fits_in_memory(os.path.getsize(path) * 15, label, "reading it")
    try:
        df = pd.read_csv(path, skipinitialspace=True, dtype=str, keep_default_na=False,
                         encoding="utf-8")
    except UnicodeDecodeError:
        raise DataError("is not UTF-8 text", label) from None
    except pd.errors.EmptyDataError:
        raise DataError("is empty", label, "a header row and data rows are needed") from None
    except pd.errors.ParserError as exc:
        raise DataError(f"cannot be read as CSV: {str(exc).strip().splitlines()[-1]}",
                        label) from None
    df.columns = [str(c).strip() for c in df.columns]
    if df.shape[0] == 0:
        raise DataError("has a header but no data rows", label)
    return df


def memory_available() -> int | None:
    """Bytes of memory available to this process (Linux /proc/meminfo), or None if unknown."""
    try:
        with open("/proc/meminfo", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except OSError:  # pragma: no cover - not Linux
        pass
    return None


def check_fits_in_memory(needed_bytes: float, where: str, doing: str) -> None:
    """Refuse work that would need more than 80 % of the available memory."""
    avail = memory_available()
    if avail is not None and needed_bytes > 0.8 * avail:
        raise DataError(f"{doing} needs about {needed_bytes / 1e9:.1f} GB but only "
                        f"{avail / 1e9:.1f} GB of memory is available", where,
                        "split the file, or use a machine with more memory")


def _parse_times(col, name, label, start, time_unit) -> _TimeParse:
    import pandas as pd

    text = col.str.strip()
    numeric = pd.to_numeric(text, errors="coerce").to_numpy(dtype=float)
    if np.isfinite(numeric).all():
        factor = to_si(f"1 {time_unit}", "time", "time_unit")
        with np.errstate(over="ignore"):
            seconds = numeric * factor
        if not np.isfinite(seconds).all():  # e.g. 1e306 min: a number, but not a time
            i = int(np.argmax(~np.isfinite(seconds)))
            raise DataError(f"time column {name!r} line {i + 2} is too large to be a time "
                            f"({text.iloc[i]!r} {time_unit})", label,
                            "check the column's unit and values")
        return _TimeParse(seconds, False)
    if np.isfinite(numeric[0]):  # the first row decides: seconds, or timestamps
        i = int(np.argmax(~np.isfinite(numeric)))
        raise DataError(f"time column {name!r} line {i + 2} is not a number ({text.iloc[i]!r})",
                        label)
    stamps = pd.to_datetime(text, errors="coerce", format="ISO8601")
    if stamps.isna().any():
        i = int(np.argmax(stamps.isna().to_numpy()))
        raise DataError(f"time column {name!r} line {i + 2} is neither seconds nor an ISO-8601 "
                        f"timestamp ({text.iloc[i]!r})", label)
    if start is None:
        origin = stamps.iloc[0]
    else:
        try:
            origin = pd.Timestamp(start)
        except (ValueError, TypeError):
            raise DataError(f"start {start!r} is not an ISO-8601 timestamp", label) from None
    tz_data = stamps.dt.tz is not None
    tz_origin = origin.tzinfo is not None
    if tz_data != tz_origin:
        raise DataError("timestamps and start time disagree on time zones (one has an offset, "
                        "the other not)", label, "give both with or both without a UTC offset")
    seconds = (stamps - origin).dt.total_seconds().to_numpy(dtype=float)
    return _TimeParse(seconds, True)
