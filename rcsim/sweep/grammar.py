"""What a ``vary`` value may be: grids, ranges and distributions, and their text form.

A value of ``vary`` is

* a **grid** of fixed values (:class:`Grid`; the text ``"40 mm,60 mm"`` or one value ``"50 mm"``);
* a **range** ``"LOW..HIGH:N"``: N evenly spaced values, ends included (N defaults to 5), which
  becomes a grid once converted to SI;
* a **distribution**: :class:`Uniform`, :class:`Normal`, :class:`LogNormal`, :class:`Triangular`,
  or their text ``"normal(50 mm, 5 mm)"``...

Values may carry units; :meth:`bind` converts them to SI floats for the quantity kind of the key
they vary (for a temperature, a normal's standard deviation is a difference, in K).
Draws use a ``numpy.random.Generator``; quantiles come from ``scipy.stats`` (imported when used).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..base import suggest
from ..errors import InputError
from ..units import to_si

__all__ = ["Grid", "Uniform", "Normal", "LogNormal", "Triangular", "Distribution", "parse_spec",
           "as_spec", "DEFAULT_POINTS"]

#: Points of a range ``LOW..HIGH`` written without ``:N``.
DEFAULT_POINTS = 5


def _si(value, kind, where) -> float:
    v = to_si(value, kind, where)
    if not math.isfinite(v):
        raise InputError(f"not a finite number ({value!r})", where)
    return float(v)


@dataclass(frozen=True)
class Grid:
    """Fixed values of one key, run in this order (strings with units allowed)."""

    values: tuple

    def __init__(self, values):
        if isinstance(values, (str, bytes)) or np.ndim(values) == 0:
            values = [values]
        object.__setattr__(self, "values", tuple(values))

    def bind(self, kind, where) -> "Grid":
        """The same grid in SI floats of ``kind``."""
        if not self.values:
            raise InputError("a grid needs at least one value", where)
        return Grid([_si(v, kind, where) for v in self.values])

    def ends(self) -> tuple[float, float]:
        """Smallest and largest value (the one-at-a-time range)."""
        return min(self.values), max(self.values)

    def describe(self, unit="") -> str:
        """``"grid [0.03, 0.05] m"`` (at most six values shown)."""
        vals = ", ".join(f"{v:.6g}" for v in self.values[:6])
        more = f", ... ({len(self.values)} values)" if len(self.values) > 6 else ""
        return f"grid [{vals}{more}] {unit}".rstrip()


class Distribution:
    """Base of the distributions: draw with a numpy Generator; quantiles from scipy.stats.

    A subclass sets ``name`` and ``params`` and implements ``bind(kind, where)`` (the same
    distribution in SI floats, checked), ``draw(rng, n)`` and ``frozen()`` (the scipy.stats
    distribution with the same parameters).
    """

    name = ""
    params: tuple = ()

    def bind(self, kind, where):  # pragma: no cover - every subclass has its own
        raise NotImplementedError

    def draw(self, rng, n) -> np.ndarray:  # pragma: no cover
        raise NotImplementedError

    def frozen(self):  # pragma: no cover
        raise NotImplementedError

    def ends(self, q=0.05) -> tuple[float, float]:
        """The ``q`` and ``1 - q`` quantiles (the one-at-a-time range)."""
        d = self.frozen()
        return float(d.ppf(q)), float(d.ppf(1 - q))

    def center(self) -> float:
        """The median."""
        return float(self.frozen().ppf(0.5))

    def describe(self, unit="") -> str:
        """``"normal(0.05, 0.005) m"``."""
        args = ", ".join(f"{p:.6g}" for p in self.params)
        return f"{self.name}({args}) {unit}".rstrip()

    def __eq__(self, other):
        return type(self) is type(other) and self.params == other.params

    def __hash__(self):
        return hash((type(self).__name__, self.params))

    def __repr__(self):
        return f"{type(self).__name__}{self.params!r}"


class Uniform(Distribution):
    """Every value between ``low`` and ``high`` equally likely."""

    name = "uniform"

    def __init__(self, low, high):
        self.params = (low, high)

    def bind(self, kind, where):
        low, high = (_si(v, kind, where) for v in self.params)
        if not low < high:
            raise InputError(f"uniform needs low < high, got {low:g} and {high:g}", where)
        return Uniform(low, high)

    def draw(self, rng, n):
        return rng.uniform(self.params[0], self.params[1], n)

    def frozen(self):
        from scipy import stats

        return stats.uniform(loc=self.params[0], scale=self.params[1] - self.params[0])


class Normal(Distribution):
    """Normal with ``mean`` and standard deviation ``sd`` (for a temperature, sd in K)."""

    name = "normal"

    def __init__(self, mean, sd):
        self.params = (mean, sd)

    def bind(self, kind, where):
        mean = _si(self.params[0], kind, where)
        sd_kind = "temperature_difference" if kind == "temperature" else kind
        sd = _si(self.params[1], sd_kind, where)
        if not sd > 0:
            raise InputError(f"normal needs a positive standard deviation, got {sd:g}", where)
        return Normal(mean, sd)

    def draw(self, rng, n):
        return rng.normal(self.params[0], self.params[1], n)

    def frozen(self):
        from scipy import stats

        return stats.norm(loc=self.params[0], scale=self.params[1])


class LogNormal(Distribution):
    """Log-normal given by its ``median`` and its geometric standard deviation ``factor`` (> 1).

    ln X is normal with mean ln(median) and standard deviation ln(factor): about 68 % of the
    values lie within median / factor and median * factor.
    """

    name = "lognormal"

    def __init__(self, median, factor):
        self.params = (median, factor)

    def bind(self, kind, where):
        if kind in ("temperature", "temperature_difference"):
            raise InputError("a log-normal needs a positive quantity; a temperature is not one",
                             where, "use normal(...) or triangular(...) for temperatures")
        median = _si(self.params[0], kind, where)
        factor = _si(self.params[1], "dimensionless", where)
        if not median > 0:
            raise InputError(f"lognormal needs a positive median, got {median:g}", where)
        if not factor > 1:
            raise InputError(f"lognormal needs a factor above 1, got {factor:g}", where,
                             "the factor is the geometric standard deviation, e.g. 1.2")
        return LogNormal(median, factor)

    def draw(self, rng, n):
        return rng.lognormal(math.log(self.params[0]), math.log(self.params[1]), n)

    def frozen(self):
        from scipy import stats

        return stats.lognorm(s=math.log(self.params[1]), scale=self.params[0])


class Triangular(Distribution):
    """Triangular between ``low`` and ``high`` with its peak at ``mode``."""

    name = "triangular"

    def __init__(self, low, mode, high):
        self.params = (low, mode, high)

    def bind(self, kind, where):
        low, mode, high = (_si(v, kind, where) for v in self.params)
        if not (low <= mode <= high and low < high):
            raise InputError(f"triangular needs low <= mode <= high and low < high, got "
                             f"{low:g}, {mode:g}, {high:g}", where)
        return Triangular(low, mode, high)

    def draw(self, rng, n):
        return rng.triangular(*self.params, n)

    def frozen(self):
        from scipy import stats

        low, mode, high = self.params
        return stats.triang(c=(mode - low) / (high - low), loc=low, scale=high - low)


@dataclass(frozen=True)
class _Range:
    """``LOW..HIGH:N`` before conversion: binds to a :class:`Grid` of N evenly spaced values."""

    low: object
    high: object
    n: int

    def bind(self, kind, where) -> Grid:
        low, high = _si(self.low, kind, where), _si(self.high, kind, where)
        return Grid(np.linspace(low, high, self.n).tolist())


# name -> (class, number of arguments, what the arguments are)
_DISTRIBUTIONS = {"uniform": (Uniform, "low,high"), "normal": (Normal, "mean,sd"),
                  "lognormal": (LogNormal, "median,factor"),
                  "triangular": (Triangular, "low,mode,high")}
_CALL = re.compile(r"^\s*([A-Za-z_]+)\s*\((.*)\)\s*$", re.S)


def _split_top(text: str, sep: str = ",") -> list[str]:
    """Split at ``sep`` outside parentheses (units like ``W/(m^2*K)`` keep their commas-free)."""
    out, depth, cur = [], 0, ""
    for ch in text:
        if ch == "(":
            depth += 1
        elif ch == ")":
            depth -= 1
        if ch == sep and depth == 0:
            out.append(cur)
            cur = ""
        else:
            cur += ch
    out.append(cur)
    return [s.strip() for s in out]


def _number_or_text(s: str):
    try:
        return float(s)
    except ValueError:
        return s


def _parse_distribution(match, where) -> Distribution:
    name = match.group(1).lower()
    if name not in _DISTRIBUTIONS:
        raise InputError(f"unknown distribution {match.group(1)!r}", where,
                         suggest(name, list(_DISTRIBUTIONS)))
    cls, arg_names = _DISTRIBUTIONS[name]
    n_args = arg_names.count(",") + 1
    args = _split_top(match.group(2))
    if len(args) != n_args or not all(args):
        raise InputError(f"{name} takes {n_args} values ({arg_names}), got {match.group(2)!r}",
                         where)
    return cls(*[_number_or_text(a) for a in args])


def _parse_range(text, where) -> _Range:
    body, _, count = text.partition(":")
    low, _, high = body.partition("..")
    if not low.strip() or not high.strip():
        raise InputError(f"cannot read the range {text!r}", where,
                         "write LOW..HIGH:N, e.g. 40mm..80mm:5")
    n = DEFAULT_POINTS
    if count.strip():
        try:
            n = int(count)
        except ValueError:
            raise InputError(f"the number of points {count!r} is not a whole number",
                             where, "write LOW..HIGH:N, e.g. 40mm..80mm:5") from None
    if n < 2:
        raise InputError(f"a range needs at least 2 points, got {n}", where)
    return _Range(_number_or_text(low.strip()), _number_or_text(high.strip()), n)


def parse_spec(text: str, where: str = "vary"):
    """Read the text form of a grid or a distribution (not yet converted to SI).

    ``"40 mm..80 mm:5"`` (5 evenly spaced values, ends included; ``:N`` defaults to 5),
    ``"40 mm,60 mm,90 mm"`` (these values), ``"50 mm"`` (one value),
    ``"uniform(LOW,HIGH)"``, ``"normal(MEAN,SD)"``, ``"lognormal(MEDIAN,FACTOR)"``,
    ``"triangular(LOW,MODE,HIGH)"``.

    >>> parse_spec("40mm..80mm:3")
    _Range(low='40mm', high='80mm', n=3)
    >>> parse_spec("normal(25 degC, 2 K)")
    Normal('25 degC', '2 K')
    >>> parse_spec("0.03,0.05")
    Grid(values=(0.03, 0.05))
    """
    if not isinstance(text, str) or not text.strip():
        raise InputError("empty value; write e.g. 40mm..80mm:5 or normal(50mm,5mm)", where)
    match = _CALL.match(text)
    if match:
        return _parse_distribution(match, where)
    if ".." in text:
        return _parse_range(text, where)
    if "(" in text and not re.search(r"\d", text.split("(")[0]):
        raise InputError(f"cannot read {text!r}", where,
                         "write e.g. normal(50mm,5mm), uniform(40mm,80mm), 40mm..80mm:5")
    return Grid([_number_or_text(p) for p in _split_top(text)])


def as_spec(value, where):
    """A ``vary`` value as a grid, range or distribution (text parsed, lists made grids)."""
    if isinstance(value, str):
        return parse_spec(value, where)
    if isinstance(value, (Distribution, Grid, _Range)):
        return value
    if isinstance(value, (list, tuple, np.ndarray, pd.Series)) or np.ndim(value) == 0:
        return Grid(list(np.ravel(np.asarray(value, dtype=object))))
    raise InputError(f"cannot use {type(value).__name__} as values", where,
                     "give a list of values, a distribution or a text like 40mm..80mm:5")
