"""Profiles given by a few numbers: a constant, a sinusoid, and steps held until the next one."""

from __future__ import annotations

import math

import numpy as np

from ..errors import ProfileError
from .base import ABSOLUTE_ZERO, DELTA_KIND, LEVEL_KIND, Profile, check_points, to_si, to_si_array


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
        return Constant(to_si(self.raw, LEVEL_KIND[kind], where))

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

    #: Longest period [s] (1e10 s, about 317 years). A longer sine is a constant or a straight
    #: line over any run, and its phase advances by less than 1e-16 rad a second: the
    #: closed-form integrals of the exact path (a difference of two cosines times the period)
    #: would lose their digits (at 1e20 s the energy balance was 1 % open).
    MAX_PERIOD = 1e10

    def _set(self, mean, amplitude, period, peak, where):
        if not (period > 0 and math.isfinite(period)):
            raise ProfileError(f"sine period must be positive, got {period:g} s", where)
        if period > self.MAX_PERIOD:
            raise ProfileError(f"sine period {period:g} s is longer than {self.MAX_PERIOD:g} s "
                               "(about 317 years): over any run such a sine is a constant or a "
                               "straight line, and double precision cannot carry its phase",
                               f"{where}.period" if where else "period",
                               "give a constant, steps or a table instead")
        for key, value in (("mean", mean), ("amplitude", amplitude), ("peak", peak)):
            if value is not None and not math.isfinite(value):
                raise ProfileError(f"sine {key} must be a finite number, got {value!r}",
                                   f"{where}.{key}" if where else key)
        self.mean, self.amplitude, self.period_s, self.peak = mean, amplitude, period, peak
        self.period = period
        self.omega = 2.0 * math.pi / period
        # the phase from the peak reduced to one period first (math.fmod is exact): the peak
        # times omega of a peak many periods away would carry no digit of the phase
        self.phase = 0.0 if peak is None else \
            math.pi / 2.0 - 2.0 * math.pi * (math.fmod(peak, period) / period)

    def _bind(self, kind, where):
        r = self.raw
        out = Sine.__new__(Sine)
        out.raw = r
        w = (lambda k: f"{where}.{k}") if where else (lambda k: k)
        out._set(to_si(r["mean"], LEVEL_KIND[kind], w("mean")),
                 to_si(r["amplitude"], DELTA_KIND[kind], w("amplitude")),
                 to_si(r["period"], "time", w("period")),
                 None if r["peak"] is None else to_si(r["peak"], "time", w("peak")), where)
        low = out.mean - abs(out.amplitude)
        if LEVEL_KIND[kind] == "temperature" and low < ABSOLUTE_ZERO:
            raise ProfileError(f"the sine falls to {low:g} degC, below absolute zero "
                               f"({ABSOLUTE_ZERO:g} degC)", w("amplitude"),
                               "check the mean, the amplitude and their units")
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
        check_points(times, values, outside, where, 1, "a list of steps")
        self.times, self.values, self.outside = times, values, outside

    def _bind(self, kind, where):
        out = Steps.__new__(Steps)
        out.raw = self.raw
        w = f"{where}." if where else ""
        out._set(to_si_array(self.raw["times"], "time", w + "at"),
                 to_si_array(self.raw["values"], LEVEL_KIND[kind], w + "values"),
                 self.raw["outside"], where)
        return out

    def _pl(self, t, side):
        s = "right" if side == "right" else "left"
        i = np.searchsorted(self.times, t, side=s) - 1
        return self.values[np.clip(i, 0, None)]

    def knots(self, t0, t1):
        return self.times[(self.times > t0) & (self.times < t1)]

    def span(self):
        return (-math.inf if self.outside == "hold" else float(self.times[0]), math.inf)

    def _ready(self) -> bool:
        return hasattr(self, "times")

    def describe(self) -> str:
        return f"steps ({self.times.size} values from {self.values.min():g} to {self.values.max():g})"

    def __repr__(self):
        return f"Steps({self.raw['times']!r}, {self.raw['values']!r})"
