"""Periodic profiles: any profile repeated with a period, and the common period of several."""

from __future__ import annotations

import math
import warnings

import numpy as np

from ..errors import ProfileError, RcsimWarning
from .base import Profile, fmt_time, to_si
from .table import Table


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
            raise ProfileError(f"the repeated profile covers {fmt_time(a)} to {fmt_time(b)}, "
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
