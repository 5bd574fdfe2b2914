"""A profile read on another clock: ``value(t) = inner(t + offset)``."""

from __future__ import annotations

import math

from ..errors import ProfileError
from .base import Profile


class Shifted(Profile):
    """A profile read ``offset`` seconds later: ``value(t) = inner(t + offset)``.

    Places a profile written on one clock on another whose t = 0 is ``offset`` seconds later
    (a fit whose log starts after the scenario's ``simulation.start``). Knots move with it and
    sinusoids change phase, so the exact solver still integrates it in closed form.

    >>> from rcsim.profiles import Sine
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
