"""Weather records: a CSV table of outdoor conditions read into SI arrays on one clock.

A record has a header row, a time column and value columns. Columns are mapped to quantities
(:data:`QUANTITIES`: air temperature, the three irradiance components, wind speed, dew point or
relative humidity, sky cover, air pressure, or any quantity of a kind you name), so any column can
drive any input.

**Time.** The time column holds ISO-8601 timestamps with or without UTC offsets (placed on one
clock by the rule of :mod:`rcsim.clock`: offsets are exact instants, mixed offsets allowed; rows
without offsets are readings of the site's local clock), or elapsed time with its unit in the
header (``time [h]``) or given as ``time_unit``. Times must increase: a duplicated or earlier time
is an error naming the line.

**Units.** From the header (``T_air [degF]``, ``GHI [W/m^2]``; pint's unit names, square
brackets) or the mapping (``{column = "Dry-bulb", unit = "degC"}``); both given and different is an
error, neither given means the SI unit of the quantity (degC, W/m^2, m/s, Pa, a 0-1 fraction).
Fractions (relative humidity, sky cover) accept ``%``, ``percent``, ``tenths`` and ``okta``. A unit
that does not fit the quantity is an error naming the column. Each column is converted once, as
an array.

**Gaps.** An empty cell, ``NA``/``NaN`` or a value listed in ``missing_values`` is a gap, and so is
a step between rows longer than 1.5 times the record's median step. Gaps are errors naming the
lines, unless ``max_gap`` is given: then a gap whose span (from the last value before it to the
first after it) is at most ``max_gap`` is filled linearly in time, and a longer gap, or one at the
start or end of the record, is still an error.

**Interval means.** Irradiance in many records is the mean over the interval that ends (or
begins) at the stamp. ``irradiance_period = "ending"`` (or ``"beginning"``) places those values at
the middle of their interval (half the record's median step earlier, or later); other
quantities keep their stamps.
"""

from __future__ import annotations

import io
import os
import re
from dataclasses import dataclass, field
from typing import Mapping

import numpy as np

from .arguments import check_name
from .base import suggest
from .clock import line_of, parse_time_zone, parse_timestamps, to_instant
from .errors import DataError, InputError, UnitError
from .inputfiles import cut, quote_cell
from .profiles.numeric_csv import NumericCSV
from .profiles.timeseries import check_separator, csv_byte_limit, first_line, read_capped
from .units import KINDS, to_si

__all__ = ["QUANTITIES", "FRACTION_UNITS", "WeatherRecord", "read_weather"]

#: quantity -> (kind, description). The kind "fraction" is a number 0..1.
QUANTITIES: dict[str, tuple[str, str]] = {
    "air_temperature": ("temperature", "outdoor air (dry-bulb) temperature"),
    "dew_point": ("temperature", "dew-point temperature"),
    "relative_humidity": ("fraction", "relative humidity"),
    "global_horizontal": ("heat_flux", "global horizontal irradiance"),
    "direct_normal": ("heat_flux", "direct normal irradiance"),
    "diffuse_horizontal": ("heat_flux", "diffuse horizontal irradiance"),
    "wind_speed": ("velocity", "wind speed"),
    "sky_cover": ("fraction", "sky (cloud) cover"),
    "pressure": ("pressure", "air pressure"),
}
IRRADIANCE = ("global_horizontal", "direct_normal", "diffuse_horizontal")

#: units of a 0..1 fraction and their factor to it
FRACTION_UNITS = {"": 1.0, "1": 1.0, "fraction": 1.0, "%": 0.01, "percent": 0.01,
                  "tenths": 0.1, "okta": 0.125, "oktas": 0.125}

#: texts read as a gap in any value column
NA_TEXTS = ("", "NA", "N/A", "NaN", "nan", "null", "-")
_HEADER_UNIT = re.compile(r"^(?P<name>.*?)\s*\[(?P<unit>[^\]]*)\]\s*$")
_SPEC_KEYS = ("column", "unit", "kind")
_PERIODS = ("instant", "ending", "beginning")
#: a step longer than this many median steps is a gap
GAP_FACTOR = 1.5


@dataclass(frozen=True)
class WeatherRecord:
    """A weather record in SI on one clock.

    Attributes
    ----------
    seconds : ndarray
        Time of each row [s] from ``start`` (t = 0 of the scenario).
    timestamps : pandas.DatetimeIndex or None
        The instant of each row (timezone-aware in the site's zone, UTC for records with offsets
        read without a zone; naive for naive records read without a zone; None for elapsed-time
        records without a start).
    start : pandas.Timestamp or None
        The instant of t = 0.
    values : dict of str to ndarray
        Each quantity in SI: degC, W/m^2, m/s, Pa, fractions 0..1. Gaps filled as told.
    kinds, columns : dict of str to str
        Each quantity's kind (a :data:`rcsim.units.KINDS` name or ``"fraction"``) and column.
    shifts : dict of str to float
        Seconds added to the row times of a quantity (interval means placed at mid-interval).
    step : float
        Median step between rows [s].
    filled : dict of str to int
        Number of values filled by interpolation per quantity.
    source : str
        File name.
    """

    seconds: np.ndarray
    timestamps: object
    start: object
    values: dict
    kinds: dict
    columns: dict
    shifts: dict
    step: float
    source: str
    filled: dict = field(default_factory=dict)

    @property
    def quantities(self) -> list[str]:
        """The quantities the record holds, in mapping order."""
        return list(self.values)

    def __contains__(self, quantity) -> bool:
        return quantity in self.values

    def _check(self, quantity: str) -> None:
        if quantity not in self.values:
            raise InputError(f"the weather record {self.source} has no quantity {quantity!r}",
                             None, suggest(quantity, self.values) + " (map a column to it)")

    def series(self, quantity: str) -> tuple[np.ndarray, np.ndarray]:
        """Times [s from start] and SI values of ``quantity`` (times shifted for interval means)."""
        self._check(quantity)
        return self.seconds + self.shifts.get(quantity, 0.0), self.values[quantity]

    def times_of(self, quantity: str):
        """The instants of the values of ``quantity`` (None for an elapsed-time record)."""
        self._check(quantity)
        if self.timestamps is None:
            return None
        import pandas as pd

        return self.timestamps + pd.Timedelta(seconds=self.shifts.get(quantity, 0.0))

    def to_frame(self):
        """The record as a DataFrame indexed by seconds from start (unshifted row times)."""
        import pandas as pd

        frame = pd.DataFrame(self.values, index=pd.Index(self.seconds, name="time"))
        if self.timestamps is not None:
            frame.insert(0, "timestamp", np.asarray(self.timestamps))
        return frame


def read_weather(path, columns: Mapping, *, time: str | None = None, time_unit: str | None = None,
                 time_zone=None, start=None, max_gap=None, missing_values=(),
                 irradiance_period: str = "instant", where: str | None = None) -> WeatherRecord:
    """Read a weather record (see the module text for the rules).

    Parameters
    ----------
    path : str or path
        CSV file with one header row.
    columns : mapping
        Quantity -> column. The column is its header text, with or without the ``[unit]``, or a
        mapping ``{"column": ..., "unit": ..., "kind": ...}``; ``kind`` (a units kind) is needed
        only for quantities not in :data:`QUANTITIES`.
    time : str, optional
        Name of the time column (default: the first column).
    time_unit : str, optional
        Unit of an elapsed-time column whose header has none (e.g. ``"h"``).
    time_zone : str or tzinfo, optional
        The site's time zone (``"Europe/Zurich"`` or a fixed offset ``"+01:00"``).
    start : str or Timestamp, optional
        The instant of t = 0 (naive: a local clock reading of ``time_zone``). Default: the first
        row. For elapsed-time records it gives the rows timestamps (row time 0 = start).
    max_gap : float or str, optional
        Longest gap filled linearly, in seconds or with a unit (``"3 h"``). Default: no filling.
    missing_values : sequence of numbers
        Values that mean "no value" (e.g. ``[-9999, 9999]``).
    irradiance_period : {"instant", "ending", "beginning"}
        What the irradiance stamps mean (see the module text).
    where : str, optional
        Label of the file in messages (default the file name).

    Returns
    -------
    WeatherRecord

    Raises
    ------
    DataError, UnitError, InputError
        One line naming the file with its line or column, and what would fix it.
    """
    label = where if where is not None else os.path.basename(str(path))
    check_name(irradiance_period, _PERIODS, "irradiance_period", f"{label}: irradiance_period")
    zone = parse_time_zone(time_zone, f"{label}: time_zone")
    gap_limit = None if max_gap is None else _positive_time(max_gap, f"{label}: max_gap")
    fast = _numbers_first(path, label, columns, time, time_unit, zone, start, gap_limit,
                          missing_values, irradiance_period)
    if fast is not None:
        return fast
    frame = _read_text(path, label)
    headers = _split_headers(list(frame.columns), label)
    tcol = _find_time_column(time, headers, label)
    if len(headers) == 1:
        raise DataError(f"has no value columns besides its time column {quote_cell(tcol)}",
                        label, f"add the weather columns{_wanted(columns)} beside the time "
                        "column, or name the file that holds them")
    specs = _column_specs(columns, headers, tcol, label)

    seconds, stamps, origin = _read_times(frame[tcol], headers[tcol], time_unit, zone, start,
                                          label, tcol)
    _check_increasing(seconds, frame[tcol], label, tcol)
    step = float(np.median(np.diff(seconds))) if seconds.size > 1 else 0.0
    _check_time_gaps(seconds, step, gap_limit, frame[tcol], label)

    flags = _flags(missing_values, f"{label}: missing_values")
    values, filled = {}, {}
    for quantity, (column, (offset, factor), kind) in specs.items():
        raw = _numbers(frame[column], flags, label, column)
        converted = offset + factor * raw   # one conversion per column, as an array
        _check_range(converted, kind, frame[column], label, column, quantity)
        values[quantity], filled[quantity] = _fill(converted, seconds, gap_limit, label, column)
    return _record(seconds, stamps, origin, values, filled, specs, step, label,
                   irradiance_period)


def _record(seconds, stamps, origin, values, filled, specs, step, label,
            irradiance_period) -> WeatherRecord:
    """The record of the columns read (both passes end here): irradiances given per period are
    shifted to the middle of it."""
    shift = {"instant": 0.0, "ending": -0.5 * step, "beginning": 0.5 * step}[irradiance_period]
    shifts = {q: shift for q in values if q in IRRADIANCE and shift != 0.0}
    return WeatherRecord(seconds=seconds, timestamps=stamps, start=origin, values=values,
                         kinds={q: spec[2] for q, spec in specs.items()},
                         columns={q: spec[0] for q, spec in specs.items()}, shifts=shifts,
                         step=step, source=label, filled=filled)


# ------------------------------------------------------------------------------------------
class _TextNeeded(Exception):
    """A check of the numbers-first read would quote a cell: the text pass runs instead."""


class _Unquoted:
    """Stands for a column's text in the numbers-first read, where a check that fails would
    quote a cell: reading one means the text pass must run (it finds and quotes the same)."""

    class _Cells:
        def __getitem__(self, i):
            raise _TextNeeded

    iloc = _Cells()


def _numbers_first(path, label, columns, time, time_unit, zone, start, gap_limit,
                   missing_values, irradiance_period) -> WeatherRecord | None:
    """The record from the numbers parsed at once (:mod:`rcsim.profiles.numeric_csv`), or None
    where the text pass must run: a file that parse cannot vouch for, or any check that would
    quote a cell or fails before the rows are read. The checks are the text pass's, in its
    order, on the same values."""
    import csv

    import pandas as pd

    path = os.fspath(path)
    if os.path.isdir(path):
        return None
    fast = NumericCSV.open(path, csv_byte_limit()[0])
    if fast is None:
        return None
    try:
        with open(path, "rb") as fh:
            names = _header_of(fh, label)      # as the text pass names the columns
        headers = _split_headers(names, label)
        tcol = _find_time_column(time, headers, label)
        specs = _column_specs(columns, headers, tcol, label) if len(headers) > 1 else None
    except (InputError, UnicodeDecodeError, csv.Error, StopIteration):
        return None
    if specs is None or len(names) != len(fast.names):
        return None
    at = dict(zip(names, fast.names))          # the text pass's name -> the parse's
    first = pd.to_numeric(pd.Series([fast.first_row[names.index(tcol)]]), errors="coerce")
    numeric_time = bool(np.isfinite(first.to_numpy(dtype=float)).all())
    text_columns = () if numeric_time else (at[tcol],)
    frame = fast.parse(text_columns)
    others = tuple(at[h] for h in names if h != tcol and h not in
                   {spec[0] for spec in specs.values()})
    if frame is None and others:                # a column not mapped may hold text
        frame = fast.parse(text_columns + others)
    if frame is None:
        return None
    try:
        if numeric_time:
            times = frame[at[tcol]].to_numpy(dtype=float)
            if not np.isfinite(times).all():
                return None
            seconds, stamps, origin = _read_times(pd.Series(times), headers[tcol], time_unit,
                                                  zone, start, label, tcol)
        else:
            text = frame[at[tcol]].str.strip()
            seconds, stamps, origin = _read_times(text, headers[tcol], time_unit, zone, start,
                                                  label, tcol)
        _check_increasing(seconds, _Unquoted(), label, tcol)
        step = float(np.median(np.diff(seconds))) if seconds.size > 1 else 0.0
        _check_time_gaps(seconds, step, gap_limit, _Unquoted(), label)
        flags = _flags(missing_values, f"{label}: missing_values")
        values, filled = {}, {}
        for quantity, (column, (offset, factor), kind) in specs.items():
            raw = frame[at[column]].to_numpy(dtype=float, copy=True)
            if np.isinf(raw).any():             # not a number: the text pass names it
                return None
            gap = np.isnan(raw)                 # an empty cell, a gap as in the text pass
            if flags.size:
                raw[np.isin(raw, flags)] = np.nan
            raw[gap] = np.nan
            converted = offset + factor * raw
            _check_range(converted, kind, _Unquoted(), label, column, quantity)
            values[quantity], filled[quantity] = _fill(converted, seconds, gap_limit, label,
                                                       column)
    except _TextNeeded:
        return None
    return _record(seconds, stamps, origin, values, filled, specs, step, label,
                   irradiance_period)


def _read_text(path, label):
    import pandas as pd

    path = os.fspath(path)
    if os.path.isdir(path):
        raise DataError("is a directory, not a CSV file", label)
    raw = read_capped(path, label)       # no FIFO or device, at most what fits in memory
    check_separator(first_line(raw).split(","), label)
    try:
        frame = pd.read_csv(io.BytesIO(raw), dtype=str, keep_default_na=False, skipinitialspace=True,
                            encoding="utf-8")
    except UnicodeDecodeError:
        raise DataError("is not UTF-8 text", label) from None
    except pd.errors.EmptyDataError:
        raise DataError("is empty", label, "a header row and data rows are needed") from None
    except pd.errors.ParserError as exc:
        raise DataError(f"cannot be read as CSV: {str(exc).strip().splitlines()[-1]}",
                        label) from None
    frame.columns = _header_of(io.BytesIO(raw), label)
    if frame.shape[0] == 0:
        raise DataError("has a header but no data rows", label)
    return frame.apply(lambda col: col.str.strip())


def _header_of(raw, label) -> list[str]:
    """The header row as written (pandas renames duplicated names; they are refused here);
    ``raw``: the file's bytes as a binary file object."""
    import csv

    with io.TextIOWrapper(raw, encoding="utf-8", newline="") as fh:
        names = [name.strip() for name in next(csv.reader(fh, skipinitialspace=True))]
    for i, name in enumerate(names):
        if name in names[:i]:
            raise DataError(f"has two columns named {quote_cell(name)}", f"{label} line 1",
                            "rename one of them")
    return names


def _split_headers(names, label) -> dict[str, tuple[str, str | None]]:
    """header -> (name without unit, unit or None); names must be unique either way."""
    out, seen = {}, {}
    for header in names:
        match = _HEADER_UNIT.match(header)
        name, unit = (match["name"], match["unit"].strip()) if match else (header, None)
        for key in {header, name}:
            if key in seen and seen[key] != header:
                raise DataError(f"columns {quote_cell(seen[key])} and {quote_cell(header)} have "
                                "the same name", label, "rename one of them")
            seen[key] = header
        out[header] = (name, unit)
    return out


def _lookup(name: str, headers, label, what: str) -> str:
    for header, (bare, _unit) in headers.items():
        if name in (header, bare):
            return header
    valid = [bare for bare, _ in headers.values()]
    raise DataError(f"no column {quote_cell(name)} ({what})", label,
                    suggest(name, [cut(v) for v in valid][:12]))


def _wanted(columns) -> str:
    """`` 'T_air', 'wind'``: the column names a mapping asks for, quoted (at most three), or
    nothing where it names none."""
    if not isinstance(columns, Mapping):
        return ""
    names = [spec if isinstance(spec, str) else spec.get("column")
             for spec in columns.values() if isinstance(spec, (str, Mapping))]
    names = [quote_cell(str(n)) for n in names if n is not None][:3]
    return (" " + ", ".join(names)) if names else ""


def _find_time_column(time, headers, label) -> str:
    if time is None:
        return next(iter(headers))
    return _lookup(str(time), headers, label, "the time column")


def _column_specs(columns, headers, tcol, label) -> dict[str, tuple]:
    """quantity -> (header, (offset, factor) to SI, kind), every name checked."""
    if not isinstance(columns, Mapping) or not columns:
        raise InputError("columns must map quantities to column names, e.g. "
                         "{'air_temperature': 'T_air'}", f"{label}: columns")
    specs = {}
    for quantity, spec in columns.items():
        key = f"{label}: columns.{quantity}"
        if isinstance(spec, str):
            column, unit, kind = spec, None, None
        elif isinstance(spec, Mapping):
            unknown = [k for k in spec if k not in _SPEC_KEYS]
            if unknown:
                raise InputError(f"unknown key {unknown[0]!r}", key,
                                 suggest(unknown[0], _SPEC_KEYS))
            if "column" not in spec:
                raise InputError("needs the column's name: column = '...'", key)
            column, unit, kind = spec["column"], spec.get("unit"), spec.get("kind")
        else:
            raise InputError(f"expected a column name or {{column = ..., unit = ...}}, got "
                             f"{spec!r}", key)
        kind = _kind_of(quantity, kind, key)
        header = _lookup(str(column), headers, label, f"mapped to {quantity}")
        if header == tcol:
            raise InputError(f"column {header!r} is the time column", key)
        specs[quantity] = (header, _unit_of(header, headers[header][1], unit, kind, label), kind)
    return specs


def _kind_of(quantity, kind, key) -> str:
    if quantity in QUANTITIES:
        known = QUANTITIES[quantity][0]
        if kind is not None and kind != known:
            raise InputError(f"{quantity} is {known}, not {kind}", key, "leave kind out")
        return known
    if kind is None:
        raise InputError(f"unknown quantity {quantity!r}", key,
                         suggest(quantity, QUANTITIES) + "; or give kind = '<kind>' "
                         "(e.g. 'temperature') for a quantity of your own")
    if kind not in KINDS and kind != "fraction":
        raise InputError(f"unknown kind {kind!r}", key, suggest(kind, list(KINDS) + ["fraction"]))
    return kind


def _affine(unit: str, kind: str) -> tuple[float, float]:
    """(offset, factor) with SI = offset + factor * value; raises UnitError on a misfit."""
    if kind == "fraction":
        if unit not in FRACTION_UNITS:
            raise UnitError(f"unit {unit!r} is not one of a fraction",
                            None, "use one of: " + ", ".join(repr(u) for u in FRACTION_UNITS))
        return 0.0, FRACTION_UNITS[unit]
    if unit in ("", "1"):
        return 0.0, 1.0
    offset = to_si(f"0 {unit}", kind)
    return offset, to_si(f"1 {unit}", kind) - offset


def _unit_of(header, header_unit, mapped_unit, kind, label) -> tuple[float, float]:
    """The (offset, factor) of a column, from its header and/or the mapping."""
    where = f"{label} column {header!r}"
    found = {}
    for source, unit in (("header", header_unit), ("mapping", mapped_unit)):
        if unit is None:
            continue
        try:
            found[source] = _affine(str(unit).strip(), kind)
        except UnitError as err:
            describe = "a 0-1 fraction" if kind == "fraction" else KINDS[kind][1]
            raise UnitError(f"its {source} unit {unit!r} does not fit {describe}: {err.message}",
                            where, err.hint) from None
    if len(found) == 2 and not np.allclose(found["header"], found["mapping"], rtol=1e-12,
                                           atol=1e-12):
        raise UnitError(f"its header says {header_unit!r} but the mapping says {mapped_unit!r}",
                        where, "give the unit in one place")
    return next(iter(found.values()), (0.0, 1.0))


def _positive_time(value, where) -> float:
    seconds = to_si(value, "time", where)
    if seconds <= 0:
        raise InputError(f"must be positive, got {value!r}", where)
    return seconds


def _read_times(text, header, time_unit, zone, start, label, tcol):
    """(seconds from the origin, timestamps or None, origin or None)."""
    import pandas as pd

    _name, header_unit = header
    unit = header_unit or time_unit
    if header_unit and time_unit and header_unit != time_unit:
        if to_si(f"1 {header_unit}", "time") != to_si(f"1 {time_unit}", "time"):
            raise UnitError(f"its header says {header_unit!r} but time_unit is {time_unit!r}",
                            f"{label} column {tcol!r}", "give the unit in one place")
    numbers = pd.to_numeric(text, errors="coerce").to_numpy(dtype=float)
    if unit is not None:
        factor = to_si(f"1 {unit}", "time", f"{label} column {tcol!r}")
        bad = ~np.isfinite(numbers)
        if bad.any():
            i = int(np.argmax(bad))
            raise DataError(f"time column {tcol!r} ({unit}): {text.iloc[i]!r} is not a number",
                            f"{label} line {line_of(i)}")
        elapsed = numbers * factor
        if start is None:
            return elapsed, None, None
        origin = to_instant(start, zone, f"{label}: start")
        return elapsed, origin + pd.to_timedelta(elapsed, unit="s"), origin
    if np.isfinite(numbers).all():
        raise DataError(f"time column {tcol!r} holds numbers but no unit", label,
                        f"write the unit in its header, e.g. '{tcol} [h]', or give time_unit")
    stamps = parse_timestamps(text, zone, label, tcol)
    origin = stamps[0] if start is None else to_instant(start, zone, f"{label}: start")
    if (origin.tzinfo is None) != (stamps.tz is None):
        raise InputError("the record's timestamps and the start disagree on time zones (one has "
                         "an offset or zone, the other not)", f"{label}: start",
                         "give the site's time_zone, or offsets in both")
    seconds = (stamps - origin).total_seconds().to_numpy(dtype=float)
    return seconds, stamps, origin


def _flags(missing_values, where) -> np.ndarray:
    try:
        return np.asarray([float(v) for v in missing_values], dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"missing_values must be a list of numbers, got {missing_values!r}",
                         where, "e.g. [-9999, 9999]") from None


def _check_increasing(seconds, text, label, tcol) -> None:
    steps = np.diff(seconds)
    bad = steps <= 0
    if bad.any():
        i = int(np.argmax(bad)) + 1
        what = "repeats the time of" if steps[i - 1] == 0 else "is earlier than"
        raise DataError(f"time column {tcol!r}: {text.iloc[i]!r} {what} the row before "
                        f"({text.iloc[i - 1]!r})", f"{label} line {line_of(i)}",
                        "sort the rows and remove duplicates")


def _check_time_gaps(seconds, step, gap_limit, text, label) -> None:
    if seconds.size < 3:
        return
    steps = np.diff(seconds)
    long = steps > GAP_FACTOR * step
    if gap_limit is not None:
        long &= steps > gap_limit
    if long.any():
        i = int(np.argmax(long))
        hint = (f"the gap is longer than max_gap ({gap_limit / 3600:.4g} h)"
                if gap_limit is not None else
                "add the missing rows, or set max_gap to fill gaps linearly")
        raise DataError(f"no rows between {text.iloc[i]!r} and {text.iloc[i + 1]!r} "
                        f"({steps[i] / 3600:.4g} h; the record's step is {step / 3600:.4g} h)",
                        f"{label} lines {line_of(i)}-{line_of(i + 1)}", hint)


def _numbers(text, flags, label, column) -> np.ndarray:
    import pandas as pd

    values = pd.to_numeric(text, errors="coerce").to_numpy(dtype=float, copy=True)
    gap = text.isin(NA_TEXTS).to_numpy()
    bad = ~np.isfinite(values) & ~gap
    if bad.any():
        i = int(np.argmax(bad))
        raise DataError(f"column {column!r}: {text.iloc[i]!r} is not a number",
                        f"{label} line {line_of(i)}",
                        "leave the cell empty for a gap, or list the text in missing_values")
    if flags.size:
        values[np.isin(values, flags)] = np.nan
    values[gap] = np.nan
    return values


def _check_range(values, kind, text, label, column, quantity) -> None:
    lower, upper, hint = {
        "temperature": (-273.15, np.inf, "a missing-value flag? list it in missing_values"),
        "fraction": (0.0, 1.0, "a percentage or tenths? give the unit ('%', 'tenths')"),
        "velocity": (0.0, np.inf, "a missing-value flag? list it in missing_values"),
        "pressure": (0.0, np.inf, "a missing-value flag? list it in missing_values"),
    }.get(kind, (-np.inf, np.inf, ""))
    tolerance = 1e-9 * max(1.0, abs(lower) if np.isfinite(lower) else 1.0)
    with np.errstate(invalid="ignore"):
        bad = (values < lower - tolerance) | (values > upper + tolerance)
    if bad.any():
        i = int(np.argmax(bad))
        limit = "below absolute zero" if kind == "temperature" else "out of range"
        raise DataError(f"column {column!r}: {text.iloc[i]!r} is {limit} for {quantity}",
                        f"{label} line {line_of(i)}", hint)


def _fill(values, seconds, gap_limit, label, column) -> tuple[np.ndarray, int]:
    """Fill runs of NaN linearly where ``gap_limit`` allows; else an error naming the lines."""
    missing = np.isnan(values)
    if not missing.any():
        return values, 0
    if missing.all():
        raise DataError(f"column {column!r} has no values", label)
    edges = np.diff(np.concatenate(([0], missing.astype(np.int8), [0])))
    first = np.flatnonzero(edges == 1)
    last = np.flatnonzero(edges == -1) - 1
    n = values.size
    at_end = (first == 0) | (last == n - 1)
    before = np.clip(first - 1, 0, n - 1)
    after = np.clip(last + 1, 0, n - 1)
    span = seconds[after] - seconds[before]
    refused = at_end if gap_limit is None else at_end | (span > gap_limit)
    if gap_limit is None or refused.any():
        k = int(np.argmax(refused)) if refused.any() else 0
        lines = (f"line {line_of(first[k])}" if first[k] == last[k] else
                 f"lines {line_of(first[k])}-{line_of(last[k])}")
        if at_end[k]:
            why, hint = ("at the start or end of the record, which cannot be filled",
                         "trim the record or give the values")
        elif gap_limit is None:
            why, hint = (f"a gap of {span[k] / 3600:.4g} h", "give the values, or set max_gap "
                         "to fill gaps linearly")
        else:
            why, hint = (f"a gap of {span[k] / 3600:.4g} h, longer than max_gap "
                         f"({gap_limit / 3600:.4g} h)", "give the values or raise max_gap")
        raise DataError(f"column {column!r} has no value: {why}", f"{label} {lines}", hint)
    filled = values.copy()
    filled[missing] = np.interp(seconds[missing], seconds[~missing], values[~missing])
    return filled, int(missing.sum())
