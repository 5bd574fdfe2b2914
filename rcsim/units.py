"""Quantity parsing at the edge: strings with units (or plain numbers) to SI floats.

rcsim holds one pint registry, here, built once on first use (pint is imported then, not when
this module is): :func:`registry`, or the module attribute ``ureg``. Plain numbers, strings
without a unit and strings in the units written most (:data:`COMMON_UNITS`, such as "50 mm" or
"8.4 kJ/K") never need it. Everything else in the package works in SI floats with
temperatures in degC (absolute) or K (differences); solvers never see a unit object.

A *kind* names what a value must be (``"length"``, ``"temperature"``, ``"power"``...). A plain number
is taken to be in the kind's SI unit (degC for an absolute temperature). Absolute temperatures and
temperature differences are kept apart: an absolute temperature accepts degC, degF, K and degR; a
temperature difference accepts K, delta_degC and delta_degF but refuses "7 degC".
"""

from __future__ import annotations

import math
import re
import sys
import threading
from functools import lru_cache
from numbers import Real

from .errors import UnitError

__all__ = ["ureg", "registry", "COMMON_UNITS", "KINDS", "EXAMPLE_UNITS", "expected", "ABSOLUTE_ZERO", "to_si", "to_si_array", "si_unit", "format_quantity",
           "format_duration", "significant", "format_clock_time"]

# kind -> (SI unit string, description used in messages "expected a length")
KINDS: dict[str, tuple[str, str]] = {
    "dimensionless": ("", "a plain number"),
    "length": ("m", "a length"),
    "area": ("m**2", "an area"),
    "volume": ("m**3", "a volume"),
    "mass": ("kg", "a mass"),
    "time": ("s", "a time"),
    "temperature": ("degC", "a temperature"),
    "temperature_difference": ("K", "a temperature difference"),
    "power": ("W", "a power"),
    "energy": ("J", "an energy"),
    "capacity": ("J/K", "a heat capacity"),
    "resistance": ("K/W", "a thermal resistance"),
    "conductance": ("W/K", "a thermal conductance"),
    "area_resistance": ("m**2*K/W", "an area thermal resistance (e.g. m^2*K/W)"),
    "heat_transfer_coefficient": ("W/(m**2*K)", "a heat transfer coefficient (e.g. W/(m^2*K))"),
    "conductivity": ("W/(m*K)", "a thermal conductivity (e.g. W/(m*K))"),
    "density": ("kg/m**3", "a density"),
    "specific_heat": ("J/(kg*K)", "a specific heat (e.g. J/(kg*K))"),
    "specific_energy": ("J/kg", "a specific energy (e.g. kJ/kg)"),
    "velocity": ("m/s", "a velocity"),
    "pressure": ("Pa", "a pressure"),
    "heat_flux": ("W/m**2", "a heat flux"),
    "rate": ("K/s", "a rate of temperature change"),
}

#: absolute zero [degC]: absolute temperatures below it are refused where they are read
ABSOLUTE_ZERO = -273.15

#: kind -> a unit a user would write for it, shown in messages ("expected a length (e.g. mm)")
EXAMPLE_UNITS: dict[str, str] = {
    "dimensionless": "0.9", "length": "50 mm", "area": "0.8 m^2", "volume": "20 L",
    "mass": "2 kg", "time": "5 min", "temperature": "25 degC", "temperature_difference": "7 K",
    "power": "5 W", "energy": "3 kJ", "capacity": "8.4 kJ/K", "resistance": "2.5 K/W",
    "conductance": "0.4 W/K", "area_resistance": "0.13 m^2*K/W",
    "heat_transfer_coefficient": "10 W/(m^2*K)", "conductivity": "0.033 W/(m*K)",
    "density": "1200 kg/m^3", "specific_heat": "900 J/(kg*K)", "specific_energy": "334 kJ/kg",
    "velocity": "3 m/s", "pressure": "101.3 kPa", "heat_flux": "800 W/m^2", "rate": "0.5 K/min",
}


def expected(kind: str) -> str:
    """What a value of ``kind`` is, in words with an example, for messages.

    >>> expected("capacity"), expected("heat_transfer_coefficient")
    ('a heat capacity (e.g. 8.4 kJ/K)', 'a heat transfer coefficient (e.g. 10 W/(m^2*K))')
    """
    words = KINDS[kind][1].split(" (e.g.")[0]
    return f"{words} (e.g. {EXAMPLE_UNITS[kind]})"


_registry = None
_registry_lock = threading.Lock()


def registry():
    """The pint unit registry rcsim parses units with: pint is imported, and its definitions
    parsed, on the first call (~0.2-0.4 s); the same object afterwards, from any thread. Also
    reachable as ``rcsim.units.ureg``. The units people write most (:data:`COMMON_UNITS`) are
    converted without it."""
    global _registry
    if _registry is None:
        with _registry_lock:
            if _registry is None:
                import pint

                built = pint.UnitRegistry()
                built.formatter.default_format = "~P"
                _registry = built
    return _registry


#: The units written most in scenario files, logs and options, converted without the unit
#: registry: (unit as written, kind) -> (factor, offset), SI value = factor * number + offset.
#: Factors are exact by definition (SI brochure, 9th ed.: the prefixes, and minute, hour, day,
#: litre and tonne of its Table 8; the bar is 100 kPa; inch, foot and pound by the
#: international yard and pound agreement of 1959), and tests/test_startup.py checks each
#: against pint's own conversion. A unit not listed here, or written another way, or of another
#: kind, goes through the registry (and its errors).
COMMON_UNITS: dict[tuple[str, str], tuple[float, float]] = {}


def _common(kind: str, units: dict) -> None:
    for text, factor in units.items():
        COMMON_UNITS[(text, kind)] = factor if isinstance(factor, tuple) else (factor, 0.0)


_common("length", {"m": 1.0, "mm": 1e-3, "cm": 1e-2, "km": 1e3, "um": 1e-6, "in": 0.0254,
                   "ft": 0.3048})
_common("area", {"m^2": 1.0, "m**2": 1.0, "mm^2": 1e-6, "cm^2": 1e-4, "dm^2": 1e-2,
                 "ft^2": 0.09290304})
_common("volume", {"m^3": 1.0, "m**3": 1.0, "dm^3": 1e-3, "cm^3": 1e-6, "L": 1e-3, "l": 1e-3,
                   "mL": 1e-6})
_common("mass", {"kg": 1.0, "g": 1e-3, "t": 1e3, "lb": 0.45359237})
_common("time", {"s": 1.0, "ms": 1e-3, "min": 60.0, "h": 3600.0, "hr": 3600.0, "hour": 3600.0,
                 "hours": 3600.0, "d": 86400.0, "day": 86400.0, "days": 86400.0})
_common("temperature", {"degC": 1.0, "\u00b0C": 1.0, "K": (1.0, ABSOLUTE_ZERO),
                        "degF": (5 / 9, -32 * 5 / 9), "\u00b0F": (5 / 9, -32 * 5 / 9)})
_common("temperature_difference", {"K": 1.0, "delta_degC": 1.0, "delta_degF": 5 / 9})
_common("power", {"W": 1.0, "kW": 1e3, "mW": 1e-3})
_common("energy", {"J": 1.0, "kJ": 1e3, "MJ": 1e6, "Wh": 3600.0, "kWh": 3.6e6})
_common("capacity", {"J/K": 1.0, "kJ/K": 1e3, "MJ/K": 1e6})
_common("resistance", {"K/W": 1.0})
_common("conductance", {"W/K": 1.0})
_common("area_resistance", {"m^2*K/W": 1.0})
_common("heat_transfer_coefficient", {"W/(m^2*K)": 1.0})
_common("conductivity", {"W/(m*K)": 1.0})
_common("density", {"kg/m^3": 1.0})
_common("specific_heat", {"J/(kg*K)": 1.0, "kJ/(kg*K)": 1e3})
_common("specific_energy", {"J/kg": 1.0, "kJ/kg": 1e3})
_common("velocity", {"m/s": 1.0, "km/h": 1 / 3.6})
_common("pressure", {"Pa": 1.0, "hPa": 1e2, "kPa": 1e3, "bar": 1e5})
_common("heat_flux", {"W/m^2": 1.0})
_common("rate", {"K/s": 1.0, "K/min": 1 / 60, "K/h": 1 / 3600})


def __getattr__(name: str):
    """``ureg``: the registry, built on first access (PEP 562)."""
    if name == "ureg":
        return registry()
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__():
    return sorted(set(globals()) | {"ureg"})


@lru_cache(maxsize=1)
def _si_tables():
    """({kind: SI unit}, {kind: dimensionality}) in the registry's terms."""
    ureg = registry()
    units = {kind: ureg.parse_units(unit) for kind, (unit, _) in KINDS.items()}
    return units, {kind: ureg.Quantity(1.0, u).dimensionality for kind, u in units.items()}


_NUMBER = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?|[-+]?inf|nan)\s*(.*?)\s*$",
                     re.IGNORECASE)
#: pint's temperature units with a nonzero offset (its definitions file): absolute only
_OFFSET_UNITS = {"degree_Celsius", "degree_Fahrenheit", "degree_Reaumur"}


def _describe_dims(dims, quantity=None) -> str:
    """What a quantity of dimensions ``dims`` is, in words (never the unit library's dimension
    notation): a kind's description, or its unit in SI base units."""
    for kind, d in _si_tables()[1].items():
        if d == dims and kind not in ("temperature_difference",):
            return KINDS[kind][1].split(" (e.g.")[0]
    if not dims:
        return "a plain number"
    if quantity is not None:
        base = quantity.to_base_units().units
        text = f"{base:~C}".replace("**", "^").replace("delta_degC", "K")
        return f"{text} in SI base units: not a quantity rcsim uses"
    return "a quantity rcsim does not use"


@lru_cache(maxsize=8192)
def _string_to_si(text: str, kind: str) -> float:
    """A string such as '50 mm' in the SI unit of ``kind`` (no key in errors: the caller adds
    it). Scenario rebuilds in sweeps and fits meet the same strings again and again."""
    number, unit_text = _split(text)
    if not unit_text:
        return number
    common = COMMON_UNITS.get((unit_text, kind))
    if common is not None:
        return common[0] * number + common[1]
    return _convert(number, _parse_units(unit_text, text), kind, text, None)


def _split(text: str) -> tuple[float, str]:
    """'50 mm' -> (50.0, 'mm'); a plain number has the unit ''."""
    match = _NUMBER.match(text)
    if not match:
        raise UnitError(f"cannot read {text!r} as a number with a unit", None,
                        "write e.g. '50 mm' or '3 kJ/K'")
    return float(match.group(1)), match.group(2)


@lru_cache(maxsize=4096)
def _parse_units(unit_text: str, text: str):
    """The registry's units for ``unit_text`` (of ``text``, for messages)."""
    where = None
    if len(unit_text) > 200:
        raise UnitError(f"unit text too long ({len(unit_text)} characters)", where)
    try:
        units = registry().parse_units(unit_text.replace("°C", "degC").replace("°F", "degF"))
    except Exception:  # noqa: BLE001 - pint's parser fails in many ways (even AssertionError)
        raise UnitError(f"unknown unit {unit_text!r} in {text!r}", where,
                        "units follow pint's names, e.g. mm, m^2, kJ/K, W/(m^2*K), degC") from None
    return units


#: SI magnitudes above MAX_MAGNITUDE, and nonzero sizes (lengths, capacities, resistances...)
#: below MIN_MAGNITUDE, are refused: far beyond any physical network, and products or
#: reciprocals of such numbers overflow double precision.
MIN_MAGNITUDE = 1e-30
MAX_MAGNITUDE = 1e30
#: Kinds that are levels, not sizes of things: a tiny value is just about zero, and harmless.
_LEVELS = {"dimensionless", "temperature", "temperature_difference", "power", "energy",
           "heat_flux", "rate", "time"}


def to_si(value, kind: str, where: str | None = None, *, finite: bool = True) -> float:
    """Convert ``value`` to a float in the SI unit of ``kind``.

    Parameters
    ----------
    value : float, int or str
        A number (already SI; degC for absolute temperatures) or a string such as ``"50 mm"``.
    kind : str
        One of :data:`KINDS`.
    where : str, optional
        Key path used in error messages.
    finite : bool
        Refuse NaN, infinity, magnitudes above 1e30 and nonzero sizes below 1e-30 (default).

    Returns
    -------
    float

    Raises
    ------
    UnitError
        Wrong dimension, unknown unit, not a number, or not finite.

    Examples
    --------
    >>> to_si("50 mm", "length")
    0.05
    >>> round(to_si("68 degF", "temperature"), 9)
    20.0
    >>> to_si("7 delta_degC", "temperature_difference")
    7.0
    """
    if kind not in KINDS:  # programming error, not user input
        raise KeyError(f"unknown quantity kind {kind!r}")
    if isinstance(value, bool):
        raise UnitError(f"expected {KINDS[kind][1]}, got a true/false value ({value!r})", where)
    if isinstance(value, Real):
        number = float(value)
        units = None
    elif isinstance(value, str):
        try:
            number, units = _string_to_si(value, kind), None   # parsed and converted once
        except UnitError as err:
            raise UnitError(err.message, where, err.hint) from None
    elif _is_quantity(value):
        number, units = float(value.magnitude), value.units
    else:
        raise UnitError(f"expected {KINDS[kind][1]}, got {type(value).__name__} {_short(value)}",
                        where)

    if units is None:
        result = number
    else:
        result = _convert(number, units, kind, value, where)
    if finite and not math.isfinite(result):
        raise UnitError(f"expected a finite number, got {_short(value)}", where)
    if finite and (abs(result) > MAX_MAGNITUDE or
                   (kind not in _LEVELS and 0.0 < abs(result) < MIN_MAGNITUDE)):
        raise UnitError(f"{_short(value)} is {result:.3g} in SI units, outside the range rcsim "
                        f"computes with (up to {MAX_MAGNITUDE:g} in size; at least "
                        f"{MIN_MAGNITUDE:g} for sizes of things, or 0)",
                        where, "check the value and its unit")
    if finite and kind == "temperature" and result < ABSOLUTE_ZERO:
        raise UnitError(f"{_short(value)} is below absolute zero ({result:.6g} degC < "
                        f"{ABSOLUTE_ZERO:g} degC)", where, "check the value and its unit")
    return result


def _is_quantity(value) -> bool:
    """Whether ``value`` is a pint quantity (without importing pint: none can exist before)."""
    pint = sys.modules.get("pint")
    return pint is not None and isinstance(value, pint.Quantity)


def _convert(number: float, units, kind: str, original, where) -> float:
    ureg = registry()
    _, dimensions = _si_tables()
    q = ureg.Quantity(number, units)
    dims = q.dimensionality
    names = [str(name) for name, _ in q.unit_items()]
    is_offset = any(name in _OFFSET_UNITS for name in names)
    if kind == "temperature":
        if dims != dimensions["temperature"]:
            raise _wrong_dimension("temperature", original, dims, q, where)
        if any(name.startswith("delta_") for name in names):
            raise UnitError(f"expected an absolute temperature, got a temperature difference "
                            f"{_short(original)}", where, "write e.g. '25 degC' or '298.15 K'")
        return float(q.to(ureg.degC).magnitude)
    if kind == "temperature_difference":
        if dims != dimensions["temperature"]:
            raise _wrong_dimension("temperature_difference", original, dims, q, where)
        if is_offset:
            raise UnitError(f"expected a temperature difference, got the absolute temperature "
                            f"{_short(original)}", where, "write e.g. '7 K' or '7 delta_degC'")
        return float(q.to(ureg.kelvin).magnitude)
    target = _si_tables()[0][kind]
    if dims != dimensions[kind]:
        raise _wrong_dimension(kind, original, dims, q, where)
    return float(q.to(target).magnitude)


def _wrong_dimension(kind, original, dims, quantity, where) -> UnitError:
    """'expected a length, got '3 kg' (a mass)', with an example of the expected unit."""
    words = KINDS[kind][1].split(" (e.g.")[0]
    return UnitError(f"expected {words}, got {_short(original)} "
                     f"({_describe_dims(dims, quantity)})", where,
                     f"write {words} such as '{EXAMPLE_UNITS[kind]}'")


def to_si_array(values, kind: str, where: str | None = None):
    """Convert a sequence of values (numbers or strings) to a float numpy array in SI."""
    import numpy as np

    if isinstance(values, (str, bytes)) or not hasattr(values, "__iter__"):
        raise UnitError(f"expected a list of values ({KINDS[kind][1]}), got {_short(values)}",
                        where)
    out = [to_si(v, kind, f"{where}[{i}]" if where else f"[{i}]") for i, v in enumerate(values)]
    return np.asarray(out, dtype=float)


def si_unit(kind: str, *, display: bool = False) -> str:
    """The unit rcsim works in for ``kind`` (degC for an absolute temperature, K for a
    difference); ``display=True`` writes powers with ``^`` for people.

    >>> si_unit("area"), si_unit("area", display=True), si_unit("temperature")
    ('m**2', 'm^2', 'degC')
    """
    unit = KINDS[kind][0]
    return unit.replace("**", "^") if display else unit


def format_quantity(value: float, kind: str, digits: int = 4) -> str:
    """Format an SI float for display with its unit, e.g. ``"2.5 K/W"``."""
    unit = si_unit(kind, display=True)
    return f"{value:.{digits}g} {unit}".strip()


def format_duration(seconds: float | None) -> str:
    """Format a time span [s] in the unit a reader expects: s, min, h or d.

    One precision rule for every printed time (time constants, hold times, lags, durations):
    four significant figures in the chosen unit, trailing zeros kept, so "1.000 s" says the
    value is known to that precision; a value that is exact at four figures (a step of 10 min, a
    run of 72 h, 0.5 s) prints without them.

    >>> format_duration(90.0), format_duration(1800.0), format_duration(31592.8), format_duration(5e5)
    ('90 s', '30 min', '8.776 h', '5.787 d')
    >>> format_duration(1.00006), format_duration(0.5), format_duration(3600.0 * 47.0001)
    ('1.000 s', '0.5 s', '47.00 h')
    """
    if seconds is None or not math.isfinite(seconds):
        return "-"
    if abs(seconds) < 120:
        value, unit = seconds, "s"
    elif abs(seconds) < 7200:
        value, unit = seconds / 60, "min"
    elif abs(seconds) < 4 * 86400:
        value, unit = seconds / 3600, "h"
    else:
        value, unit = seconds / 86400, "d"
    return f"{significant(value)} {unit}"


def significant(value: float, figures: int = 4) -> str:
    """``value`` to ``figures`` significant figures, trailing zeros kept unless the value is
    exact at that precision (the rule of :func:`format_duration`).

    >>> significant(1.00006), significant(24.0), significant(1234.5), significant(0.125)
    ('1.000', '24', '1234', '0.125')
    """
    short = f"{value:.{figures}g}"
    if value == 0 or abs(float(short) - value) <= 1e-9 * abs(value):
        return short
    text = f"{value:#.{figures}g}"
    return text[:-1] if text.endswith(".") else text


def format_clock_time(seconds: float, period: float | None = None, start=None) -> str:
    """The time of day of ``seconds`` after a run's t = 0, for a periodic run whose first
    crossing is a clock time rather than a hold time.

    t = 0 is midnight (00:00) of the repeated day unless ``start`` (a timestamp) says otherwise.
    With a period other than a day the time is given into the period instead.

    >>> format_clock_time(47916.0, 86400.0), format_clock_time(3000.0, 3600.0)
    ('13:19', '50 min into the 60 min period')
    >>> import datetime; format_clock_time(3600.0, 86400.0, datetime.datetime(2026, 7, 1, 6, 30))
    '07:30'
    """
    day = 86400.0
    if period is not None and abs(period - day) > 1e-6 * day:
        return f"{format_duration(seconds % period)} into the {format_duration(period)} period"
    offset = 0.0
    if start is not None:
        offset = start.hour * 3600.0 + start.minute * 60.0 + start.second
    minutes = int(round(((seconds + offset) % day) / 60.0)) % (24 * 60)
    return f"{minutes // 60:02d}:{minutes % 60:02d}"


def _short(value) -> str:
    text = repr(value)
    return text if len(text) <= 60 else text[:57] + "..."
