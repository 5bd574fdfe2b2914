"""Profiles made from others: a scaled and shifted profile, and the product of two.

Both take profiles already in SI (bound, or made of plain numbers) and give values of another
quantity (a wind speed becomes a film conductance, an irradiance an absorbed power), so binding
them only records what they drive: their values are not converted again.
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import ProfileError
from .base import Profile

__all__ = ["Scaled", "Product"]

#: Knots per period of a sinusoid taking part in a product (the product is linear between knots
#: on the exact path).
SAMPLES_PER_PERIOD = 96


def _ready_profile(value, what: str) -> Profile:
    if not isinstance(value, Profile):
        raise ProfileError(f"{what} needs a profile, got {type(value).__name__}")
    if not value._ready():
        raise ProfileError(f"{what} needs a profile in SI values (bound, or plain numbers)",
                           value.where)
    return value


class Scaled(Profile):
    """``value(t) = scale * inner(t) + offset``: knots and sinusoids carried over exactly.

    >>> from rcsim.profiles import Table
    >>> Scaled(Table([0, 10], [0.0, 5.0]), 2.0, 1.0).value(4.0)
    5.0
    """

    def __init__(self, inner: Profile, scale: float, offset: float = 0.0):
        self.inner = _ready_profile(inner, "a scaled profile")
        self.scale, self.offset = float(scale), float(offset)
        if not (math.isfinite(self.scale) and math.isfinite(self.offset)):
            raise ProfileError("scale and offset must be finite numbers", inner.where)
        self.period = inner.period
        self.where, self.bound_kind = inner.where, inner.bound_kind

    def _bind(self, kind, where):
        return Scaled(self.inner, self.scale, self.offset)

    def _pl(self, t, side):
        return self.scale * self.inner._pl(t, side) + self.offset

    def knots(self, t0, t1):
        return self.inner.knots(t0, t1)

    def sines(self):
        return [(self.scale * a, om, ph) for a, om, ph in self.inner.sines()]

    def span(self):
        return self.inner.span()

    @property
    def is_constant(self) -> bool:
        return self.inner.is_constant

    def _ready(self) -> bool:
        return True

    def describe(self) -> str:
        shift = f" + {self.offset:g}" if self.offset else ""
        return f"{self.scale:g} x ({self.inner.describe()}){shift}"

    def __repr__(self):
        return f"Scaled({self.inner!r}, {self.scale!r}, {self.offset!r})"


class Product(Profile):
    """``value(t) = first(t) * second(t)``, exact at every time.

    Its knots are those of both factors (and, where a factor has sinusoids,
    :data:`SAMPLES_PER_PERIOD` points per period of the shortest): the exact and piecewise paths
    take it linear between knots, the stiff path evaluates it where it steps. It repeats when
    both factors repeat with commensurate periods (the longer is taken, checked).
    """

    def __init__(self, first: Profile, second: Profile):
        self.first = _ready_profile(first, "a product of profiles")
        self.second = _ready_profile(second, "a product of profiles")
        self.where, self.bound_kind = first.where, first.bound_kind
        self.period = _product_period(first.period, second.period)
        omegas = [om for p in (first, second) for _, om, _ in p.sines()]
        self._sample_step = (2.0 * math.pi / max(omegas) / SAMPLES_PER_PERIOD) if omegas \
            else None

    def _bind(self, kind, where):
        return Product(self.first, self.second)

    def _pl(self, t, side):
        if side == "left":
            return self.first.value_left(t) * self.second.value_left(t)
        return self.first.value(t) * self.second.value(t)

    def knots(self, t0, t1):
        parts = [self.first.knots(t0, t1), self.second.knots(t0, t1)]
        if self._sample_step is not None and math.isfinite(t0) and math.isfinite(t1):
            k0 = math.floor(t0 / self._sample_step) + 1
            k1 = math.ceil(t1 / self._sample_step)
            parts.append(np.arange(k0, k1, dtype=float) * self._sample_step)
        out = np.unique(np.concatenate(parts))
        return out[(out > t0) & (out < t1)]

    def span(self):
        a1, b1 = self.first.span()
        a2, b2 = self.second.span()
        return (max(a1, a2), min(b1, b2))

    @property
    def is_constant(self) -> bool:
        return self.first.is_constant and self.second.is_constant

    def _ready(self) -> bool:
        return True

    def describe(self) -> str:
        return f"({self.first.describe()}) x ({self.second.describe()})"

    def __repr__(self):
        return f"Product({self.first!r}, {self.second!r})"


def _product_period(p1, p2):
    """Period of a product: None unless both repeat; 0 for two constants."""
    if p1 is None or p2 is None:
        return None
    if p1 == 0.0 or p2 == 0.0:
        return max(p1, p2)
    longest, shortest = max(p1, p2), min(p1, p2)
    ratio = longest / shortest
    return longest if abs(ratio - round(ratio)) <= 1e-9 * ratio else None
