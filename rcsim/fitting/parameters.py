"""The free values of a fit: key paths, their kinds and tiers, bounds, coordinates, starts.

A freed key path becomes a :class:`Parameter`. Its *tier* says how the model takes it:

* ``initial``: a node's starting temperature (an override of the given initial state);
* ``constant``: a constant boundary temperature or source power (a constant profile swapped in);
* ``rebuild``: anything else (the scenario rebuilt with the value, a new assembly).

The first two enter the model's output linearly. Values that must be positive (capacities,
resistances, lengths, ...) are fitted as their logarithm, so they stay positive; temperatures and
powers are fitted as they are.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field

import numpy as np

from ..base import suggest
from ..errors import InputError, ScenarioError
from ..scenario import Scenario, parse_key_path, quantity_kind
from ..units import si_unit, to_si
from .logs import Log

__all__ = ["Parameter", "ParameterSet", "parse_bound", "make_parameters", "fit_kind",
           "in_original_unit", "LOG_RANGE"]

#: A positive value without bounds is kept within this factor of its starting value.
LOG_RANGE = 1e6

LINEAR_KINDS = {"temperature", "temperature_difference", "power"}


@dataclass
class Parameter:
    """One free value. ``start``, ``lo`` and ``hi`` are SI (degC for temperatures)."""

    key: str
    kind: str
    tier: str            # 'initial' | 'constant' | 'rebuild'
    target: str | None   # node, boundary or source name for 'initial' and 'constant'
    log: bool            # fitted as log(value)
    start: float         # SI
    lo: float = -math.inf
    hi: float = math.inf
    raw: object = None   # value as written in the scenario

    def to_x(self, v):
        """The fitted coordinate of a value: its logarithm, or the value itself."""
        return np.log(v) if self.log else v

    def from_x(self, x):
        """The value of a fitted coordinate."""
        return float(np.exp(x)) if self.log else float(x)

    @property
    def linear(self) -> bool:
        """Enters the model's output linearly (any difference step is exact)."""
        return self.tier in ("initial", "constant") and not self.log


@dataclass
class ParameterSet:
    """The fit's free values, in the order they were freed."""

    items: list = field(default_factory=list)

    def __iter__(self):
        return iter(self.items)

    def __len__(self) -> int:
        return len(self.items)

    def __getitem__(self, i) -> Parameter:
        return self.items[i]

    @property
    def keys(self) -> list[str]:
        return [p.key for p in self.items]

    def values(self, x) -> list[float]:
        """The values (SI) at fitted coordinates ``x``."""
        return [p.from_x(xi) for p, xi in zip(self.items, x)]

    def x_start(self) -> np.ndarray:
        return np.array([p.to_x(p.start) for p in self.items], dtype=float)

    def x_limits(self) -> tuple[np.ndarray, np.ndarray]:
        """Bounds of the fitted coordinates. A positive value without bounds stays within a
        factor LOG_RANGE of its start, which keeps trial values physical (and exp() finite)."""
        span = math.log(LOG_RANGE)
        lo = np.array([p.to_x(p.lo) if np.isfinite(p.lo) else
                       (p.to_x(p.start) - span if p.log else -np.inf) for p in self.items])
        hi = np.array([p.to_x(p.hi) if np.isfinite(p.hi) else
                       (p.to_x(p.start) + span if p.log else np.inf) for p in self.items])
        return lo, hi

    def starting_points(self, n: int, seed) -> list[np.ndarray]:
        """The scenario's values, then ``n - 1`` points spread over the values that need a
        rebuild (a Latin hypercube: each covers its range once; a decade either side of a
        log-scale value, or its bounds). Linear values are not varied: they have one optimum."""
        x0 = self.x_start()
        vary = [i for i, p in enumerate(self.items) if p.tier == "rebuild"]
        points = [x0]
        if not vary or n == 1:
            return points
        rng = np.random.default_rng(seed)
        m = n - 1
        points += [x0.copy() for _ in range(m)]
        for i in vary:
            p = self.items[i]
            lo = p.to_x(p.lo) if np.isfinite(p.lo) else None
            hi = p.to_x(p.hi) if np.isfinite(p.hi) else None
            if p.log:  # a decade either side, or the bounds
                a = lo if lo is not None else x0[i] - math.log(10.0)
                b = hi if hi is not None else x0[i] + math.log(10.0)
            else:
                span = max(abs(x0[i]) * 0.5, 10.0)
                a = lo if lo is not None else x0[i] - span
                b = hi if hi is not None else x0[i] + span
            cells = (rng.permutation(m) + rng.uniform(0.05, 0.95, m)) / m
            for k in range(m):
                points[k + 1][i] = a + (b - a) * cells[k]
        return points

    def start_from_log(self, log: Log, Y: np.ndarray) -> list[str]:
        """A freed initial temperature of a measured node starts at its first logged value;
        a start outside its bounds is moved inside. Returns a note for each start moved."""
        notes = []
        for p in self.items:
            if p.tier == "initial":
                for j, c in enumerate(log.measured):
                    if log.targets[c] == p.target and np.isfinite(Y[0, j]):
                        p.start = float(Y[0, j])
            if not (p.lo <= p.start <= p.hi):
                clipped = min(max(p.start, p.lo), p.hi)
                notes.append(f"{p.key}: the starting value {p.start:.6g} lies outside its bound; "
                             f"started at {clipped:.6g} instead")
                p.start = clipped
        return notes


def parse_bound(text: str, where: str = "--bound"):
    """``"KEY=LOW..HIGH"`` -> (key, low, high); either side may be empty (open).

    >>> parse_bound("nodes.block.capacity=1kJ/K..")
    ('nodes.block.capacity', '1kJ/K', None)
    """
    if not isinstance(text, str) or "=" not in text or ".." not in text.split("=", 1)[1]:
        raise InputError(f"bound {text!r} is not KEY=LOW..HIGH", where,
                         "write e.g. nodes.block.capacity=1kJ/K..20kJ/K")
    key, rng = text.split("=", 1)
    lo, hi = rng.split("..", 1)
    return key.strip(), (lo.strip() or None), (hi.strip() or None)


def make_parameters(sc: Scenario, free, bounds, log: Log) -> ParameterSet:
    """The freed key paths of ``sc`` as parameters, checked, sorted into tiers and bounded.

    Raises
    ------
    InputError / ScenarioError
        Nothing freed, a key freed twice, a bound for a key not freed, a key that holds no
        fittable number, a starting state or boundary the run does not use, a log-scale value
        that does not start positive, a low bound not below the high one.
    """
    free = _checked_free(free, bounds)
    bounds = dict(bounds or {})
    measured_boundaries = {log.targets[c] for c in log.inputs}
    params = []
    for key in free:
        tokens = parse_key_path(key, sc.name)
        where = f"{sc.name}: {key}"
        if tokens[0] not in ("nodes", "links", "boundaries", "sources", "radiation",
                             "enclosures"):
            raise ScenarioError("only values under nodes, links, boundaries, sources, radiation "
                                "and enclosures change the model's temperatures", where)
        raw = sc.value(key)
        if isinstance(raw, (dict, list)):
            inner = "sine.mean" if isinstance(raw, dict) and "sine" in raw else "..."
            raise ScenarioError("holds a table, not a number", where,
                                f"free one of its numbers, e.g. {key}.{inner}")
        kind = fit_kind(tokens)
        if kind is None or isinstance(raw, bool):
            raise ScenarioError("does not hold a physical quantity that can be fitted", where)
        value = to_si(raw, kind, where)
        tier, target = _tier(sc, log, tokens, measured_boundaries, where)
        positive = kind not in LINEAR_KINDS
        if positive and value <= 0:
            raise ScenarioError(f"is {value:g}; a value fitted on a log scale must start "
                                "positive", where, "give a positive starting guess")
        p = Parameter(key, kind, tier, target, positive, value, raw=raw)
        if key in bounds:
            _apply_bound(p, *bounds[key])
        params.append(p)
    return ParameterSet(params)


def _checked_free(free, bounds) -> list[str]:
    if isinstance(free, str):
        free = [free]
    free = list(free or [])
    if not free:
        raise InputError("nothing to fit: no value is freed", "free",
                         "free at least one value by its key path, e.g. "
                         "--free nodes.block.capacity")
    if len(set(free)) != len(free):
        dup = next(k for k in free if free.count(k) > 1)
        raise InputError(f"{dup!r} is freed twice", "free")
    for k in dict(bounds or {}):
        if k not in free:
            raise InputError(f"a bound is given for {k!r}, which is not freed", "bounds",
                             suggest(k, free) or "free it too, or drop the bound")
    return free


def _tier(sc: Scenario, log: Log, tokens, measured_boundaries, where) -> tuple[str, str | None]:
    """(tier, target) of a key path; see the module's docstring."""
    if tokens[0] == "nodes" and tokens[-1] == "initial" and len(tokens) == 3:
        if sc.settings.initial != "given":
            raise ScenarioError(f"the run starts from the {sc.settings.initial} state, so "
                                "initial temperatures are not used", where,
                                "set simulation.initial = 'given' to fit a starting state")
        return "initial", tokens[1]
    if tokens[0] == "boundaries" and len(tokens) >= 3:
        if tokens[1] in measured_boundaries:
            col = next(c for c in log.inputs if log.targets[c] == tokens[1])
            raise ScenarioError(f"boundary {tokens[1]!r} follows log column {col!r}, so its "
                                "scenario values are not used", where,
                                f"leave the column out (--ignore {col}) to fit it")
        if tokens[2:] in (["temperature"], ["temperature", "constant"]):
            return "constant", tokens[1]
    elif tokens[0] == "sources" and len(tokens) >= 3:
        driven = {log.targets[c]: c for c in getattr(log, "powers", [])}
        if tokens[1] in driven:
            col = driven[tokens[1]]
            raise ScenarioError(f"source {tokens[1]!r} follows log column {col!r}, so its "
                                "scenario values are not used", where,
                                f"leave the column out (--ignore {col}) to fit it")
        if tokens[2:] in (["power"], ["power", "constant"]):
            return "constant", tokens[1]
    return "rebuild", None


def _apply_bound(p: Parameter, lo, hi) -> None:
    p.lo = -math.inf if lo is None else to_si(lo, p.kind, f"bound of {p.key}")
    p.hi = math.inf if hi is None else to_si(hi, p.kind, f"bound of {p.key}")
    if p.lo >= p.hi:
        raise InputError(f"bound of {p.key}: low {p.lo:g} is not below high {p.hi:g}", "bounds")
    if p.log and p.lo <= 0:
        p.lo = -math.inf  # a log-scale value is positive anyway


def fit_kind(tokens) -> str | None:
    """Quantity kind of a key path, also for the numbers inside profiles.

    Beyond :func:`rcsim.scenario.quantity_kind`: ``...temperature.constant`` and
    ``...power.constant``, and list items of steps and tables (``...steps.values[1]`` is a
    temperature under a boundary and a power under a source; ``...steps.at[1]`` and
    ``...table.times[0]`` are times).
    """
    root = {"boundaries": "temperature", "sources": "power"}.get(tokens[0])
    if root and tokens[-1] == "constant":
        return root
    if root and isinstance(tokens[-1], int) and len(tokens) >= 3:
        name = tokens[-2]
        if name == "values":
            return root
        if name in ("at", "times"):
            return "time"
    return quantity_kind(tokens)


def in_original_unit(value: float, p: Parameter):
    """The fitted SI value as the scenario wrote it: a number, or a string in the same unit
    (twelve significant digits, e.g. ``"1.79412345678 kJ/K"``), checked to read back."""
    raw = p.raw
    if not isinstance(raw, str):
        return float(value)
    m = re.match(r"^\s*[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?\s*(.*?)\s*$", raw)
    unit = m.group(1) if m else ""
    if not unit:
        return float(value)
    try:
        from ..units import ureg

        q = ureg.Quantity(value, ureg.parse_units(si_unit(p.kind))).to(
            ureg.parse_units(unit.replace("°C", "degC").replace("°F", "degF")))
        text = f"{float(q.magnitude):.12g} {unit}"
    except Exception:  # pint raises many types; a plain SI number is always right
        return float(value)
    return text if math.isclose(to_si(text, p.kind), value, rel_tol=1e-10, abs_tol=1e-10) \
        else float(value)
