"""The value being sized: one key path (or several moving in step) over a range or a list.

``vary={"links.foam.parts[0].conduction.thickness": ("30 mm", "120 mm")}`` sizes a value that may
take anything between the two ends (a **range**: a tuple ``(LOW, HIGH)`` or the text
``"LOW..HIGH"``); ``vary={"nodes.pack.mass": ["1 kg", "2 kg", "3 kg"]}`` one that takes one of
some **choices** (a list, the text ``"A,B,C"``, or ``"LOW..HIGH:N"``: N evenly spaced values).
Several keys move **in step**: over a range each goes from its own low end to its own high end
together (``value_k = low_k + x (high_k - low_k)``, ``0 <= x <= 1``); with choices, the i-th
choice of every key goes together (the lists have the same length). Choices are put in the order
of the first key's values.

Keys are checked as a sweep checks them (:func:`rcsim.sweep.design.check_key`: unknown keys named
with the nearest valid one) and the scenario is built at both ends of a range, or at every
choice, before anything runs, so a value the model refuses is reported at once.
"""

from __future__ import annotations

import math
import re
import warnings
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..sweep.design import check_key
from ..sweep.grammar import Distribution, Grid, parse_spec
from ..units import si_unit, to_si

__all__ = ["Sized", "parse_vary", "display_unit"]

_NUMBER_UNIT = re.compile(r"^\s*[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?\s*(.*?)\s*$")


def _unit_of_text(raw) -> str | None:
    """The unit written after the number in ``raw`` (``"50 mm"`` -> ``"mm"``), or None."""
    if not isinstance(raw, str):
        return None
    m = _NUMBER_UNIT.match(raw)
    return m.group(1) if m and m.group(1) else None


def display_unit(kind: str, *raws) -> tuple[float, str]:
    """(factor, unit): an SI value of ``kind`` times ``factor`` is in ``unit``, the unit of the
    first of ``raws`` written with one (e.g. the scenario's ``"50 mm"``), else the SI unit.
    Temperatures are shown in degC."""
    if kind == "temperature":
        return 1.0, "degC"
    si = si_unit(kind)
    for raw in raws:
        unit = _unit_of_text(raw)
        if unit is None:
            continue
        try:
            from ..units import ureg

            factor = float(ureg.Quantity(1.0, ureg.parse_units(si or "dimensionless"))
                           .to(ureg.parse_units(unit)).magnitude)
        except Exception:  # noqa: BLE001 - pint raises many types; fall back to SI
            continue
        if math.isfinite(factor) and factor > 0:
            return factor, unit
    return 1.0, si_unit(kind, display=True) if kind != "dimensionless" else ""


@dataclass
class Sized:
    """The value being sized.

    Attributes
    ----------
    keys, kinds : list of str
        Key paths (moving in step) and their quantity kinds.
    discrete : bool
        Choices rather than a range.
    lows, highs : ndarray
        Ends of each key's range (SI; a range only).
    choices : ndarray, shape (choices, keys)
        Every choice, in the order of the first key's values (SI; choices only).
    choice_texts : list of tuple
        The choices as the user wrote them (strings kept, to be written into a scenario).
    raws : list
        Each key's value as written in the scenario.
    units : list of (factor, unit)
        How each key is shown (the unit of the range or the scenario).
    """

    keys: list
    kinds: list
    discrete: bool
    lows: np.ndarray | None = None
    highs: np.ndarray | None = None
    choices: np.ndarray | None = None
    choice_texts: list | None = None
    raws: list | None = None
    units: list | None = None

    @property
    def key(self) -> str:
        return self.keys[0]

    @property
    def last(self) -> float:
        """The far end of the search coordinate x (1 for a range; choices - 1 for choices)."""
        return float(len(self.choices) - 1) if self.discrete else 1.0

    def at(self, x) -> np.ndarray:
        """Every key's value (SI) at search coordinate ``x``."""
        if self.discrete:
            return self.choices[int(round(x))].copy()
        return self.lows + float(x) * (self.highs - self.lows)

    def span(self) -> float:
        """Width of the first key's range (SI); 0 for choices."""
        return 0.0 if self.discrete else float(self.highs[0] - self.lows[0])

    def format(self, i: int, value: float, round_to: float | None = None,
               up: bool | None = None, digits: int = 6) -> str:
        """Key ``i``'s ``value`` (SI) in its display unit, to ``digits`` significant digits;
        with ``round_to`` (SI) rounded to a power of ten no coarser than it, up (``up=True``) or
        down (``up=False``)."""
        factor, unit = self.units[i]
        v = value * factor
        if round_to is not None and round_to > 0:
            step = 10.0 ** math.floor(math.log10(round_to * factor))
            n = v / step
            n = math.ceil(n - 1e-9) if up else math.floor(n + 1e-9) if up is False else round(n)
            v = n * step
            decimals = max(0, -int(math.floor(math.log10(step))))
            text = f"{v:.{decimals}f}"
        else:
            text = f"{v:.{digits}g}"
        return f"{text} {unit}".strip()

    def describe(self, i: int = 0) -> str:
        """``"30 mm..120 mm"`` or ``"choices 1 kg, 2 kg, 3 kg"`` for key ``i``."""
        if self.discrete:
            shown = ", ".join(self.format(i, v) for v in self.choices[:8, i])
            more = f", ... ({len(self.choices)} choices)" if len(self.choices) > 8 else ""
            return f"choices {shown}{more}"
        return f"{self.format(i, self.lows[i])}..{self.format(i, self.highs[i])}"


def _si(value, kind, where) -> float:
    v = to_si(value, kind, where)
    if not math.isfinite(v):
        raise InputError(f"not a finite number ({value!r})", where)
    return float(v)


def _range_or_choices(value, kind, where):
    """("range", (low, high, raw_low)) or ("choices", (values, texts)) of one key's spec."""
    if isinstance(value, tuple):
        if len(value) != 2:
            raise InputError(f"a range is (LOW, HIGH), got {len(value)} values", where,
                             "give a tuple of two values, or a list of choices")
        return "range", (_si(value[0], kind, where), _si(value[1], kind, where), value[0])
    spec = parse_spec(value, where) if isinstance(value, str) else value
    if isinstance(spec, Distribution):
        raise InputError("a distribution cannot be sized", where,
                         "give a range (LOW..HIGH) or choices here, and the uncertain values in "
                         "vary_uncertain (--vary-uncertain)")
    if isinstance(spec, Grid):
        return "choices", _choices(spec.values, kind, where)
    if isinstance(value, str):  # a range LOW..HIGH, or N choices LOW..HIGH:N
        _high, _, count = value.partition("..")[2].partition(":")
        if count.strip():
            return "choices", _choices(spec.bind(kind, where).values, kind, where)
        return "range", (_si(spec.low, kind, where), _si(spec.high, kind, where), spec.low)
    if isinstance(value, (list, np.ndarray)):
        return "choices", _choices(list(value), kind, where)
    raise InputError(f"cannot size over {value!r}", where,
                     "give a range (LOW, HIGH) or 'LOW..HIGH', or a list of choices")


def _choices(values, kind, where):
    if not len(values):
        raise InputError("no choices given", where)
    si = [_si(v, kind, where) for v in values]
    return si, list(values)


def parse_vary(sc, vary) -> Sized:
    """``vary`` checked against the scenario ``sc`` as a :class:`Sized`."""
    if not isinstance(vary, dict) or not vary:
        raise InputError("nothing to size", "vary",
                         "give one key and its range, e.g. {'nodes.pack.mass': ('1 kg', '4 kg')}")
    keys, kinds, forms, raws = [], [], [], []
    for key, value in vary.items():
        kind = check_key(sc, key)
        where = f"vary {key}"
        keys.append(key)
        kinds.append(kind)
        forms.append(_range_or_choices(value, kind, where))
        raws.append(sc.value(key))
    shapes = {f for f, _ in forms}
    if len(shapes) > 1:
        raise InputError("some keys have a range and some choices", "vary",
                         "keys sized together must all have ranges or all have choices")
    if shapes == {"range"}:
        sized = _ranged(keys, kinds, forms, raws)
    else:
        sized = _chosen(keys, kinds, forms, raws)
    _check_buildable(sc, sized)
    return sized


def _ranged(keys, kinds, forms, raws) -> Sized:
    lows = np.array([f[1][0] for f in forms])
    highs = np.array([f[1][1] for f in forms])
    for key, lo, hi in zip(keys, lows, highs):
        if not lo < hi:
            raise InputError(f"the range needs LOW < HIGH, got {lo:.6g} and {hi:.6g} (SI)",
                             f"vary {key}", "write the smaller value first")
    units = [display_unit(k, f[1][2], r) for k, f, r in zip(kinds, forms, raws)]
    return Sized(keys, kinds, False, lows=lows, highs=highs, raws=raws, units=units)


def _chosen(keys, kinds, forms, raws) -> Sized:
    counts = {len(f[1][0]) for f in forms}
    if len(counts) > 1:
        raise InputError(f"keys sized together have different numbers of choices "
                         f"({', '.join(str(len(f[1][0])) for f in forms)})", "vary",
                         "give every key the same number of choices; the i-th go together")
    values = np.array([f[1][0] for f in forms], dtype=float).T
    texts = list(zip(*[f[1][1] for f in forms]))
    order = np.argsort(values[:, 0], kind="stable")
    values, texts = values[order], [texts[i] for i in order]
    first = values[:, 0]
    if len(first) > 1 and np.any(np.diff(first) == 0):
        raise InputError("the same choice is given twice", f"vary {keys[0]}")
    if len(first) < 2:
        raise InputError("one choice leaves nothing to size", f"vary {keys[0]}",
                         "give at least two choices")
    units = [display_unit(k, *[t[i] for t in texts], r) for i, (k, r) in
             enumerate(zip(kinds, raws))]
    return Sized(keys, kinds, True, choices=values, choice_texts=texts, raws=raws, units=units)


def _check_buildable(sc, sized: Sized) -> None:
    """Build the scenario at both ends of a range, or at every choice: a value the model refuses
    is reported before any run."""
    points = [0.0, sized.last] if not sized.discrete else range(len(sized.choices))
    for x in points:
        values = sized.at(x)
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                sc.with_values({k: float(v) for k, v in zip(sized.keys, values)})
        except InputError as err:
            shown = ", ".join(f"{k} = {sized.format(i, v)}"
                              for i, (k, v) in enumerate(zip(sized.keys, values)))
            raise InputError(f"{shown} is refused: {err.message}", f"vary {sized.key}",
                             err.hint) from None
