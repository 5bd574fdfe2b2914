"""Reading CSV time series (a time column and value columns), with a memory check first.

pandas is imported inside the readers, so importing profiles does not load it.
"""

from __future__ import annotations

import os
import re
from dataclasses import dataclass

import numpy as np

from ..base import suggest
from ..errors import DataError
from ..inputfiles import cut, quote_cell, quote_names, read_bytes
from .base import to_si
from .numeric_csv import NumericCSV


@dataclass
class TimeParse:
    """A time column read: seconds from the origin, and whether it held timestamps."""

    seconds: np.ndarray
    is_datetime: bool
    #: the first row's instant (timestamps only, on the clock of the first row's offset)
    first: object = None


_HEADER_UNIT = re.compile(r"^(.*?)\s*[\[(]\s*([^\])]+?)\s*[\])]\s*$")


def split_header(name: str) -> tuple[str, str | None]:
    """``"time [min]"`` -> ``("time", "min")``; a name without a unit -> ``(name, None)``.

    >>> split_header("time [h]"), split_header("elapsed (s)"), split_header("T_out")
    (('time', 'h'), ('elapsed', 's'), ('T_out', None))
    """
    m = _HEADER_UNIT.match(name)
    if m:
        return m.group(1).strip(), m.group(2)
    return name.strip(), None


_VALUE_UNIT = re.compile(r"^(.*?)\s*\[\s*([^\]]+?)\s*\]\s*$")


def value_header(name: str) -> tuple[str, str | None]:
    """A value column's header: ``"T_out [degF]"`` -> ``("T_out", "degF")``; the unit of a value
    is written in square brackets only (parentheses are left to notes: ``"T (north)"``).

    >>> value_header("T_out [degF]"), value_header("T (north)")
    (('T_out', 'degF'), ('T (north)', None))
    """
    m = _VALUE_UNIT.match(name)
    if m:
        return m.group(1).strip(), m.group(2)
    return name.strip(), None


def value_unit_of(header: str, unit: str | None, label: str) -> str | None:
    """The unit of a value column: the one in its header (``T_out [degF]``), else ``unit``, else
    None (SI: degC, W). A header unit and a ``unit`` that differ are refused."""
    in_header = value_header(header)[1]
    if in_header is not None and unit is not None and in_header != unit:
        from ..units import registry

        try:
            same = registry().parse_units(in_header) == registry().parse_units(unit)
        except Exception:  # noqa: BLE001 - pint fails in many ways; the binding names the unit
            same = False
        if not same:
            raise DataError(f"column {quote_cell(header)}: its header says "
                            f"{quote_cell(in_header)} but unit is {unit!r}", label,
                            "give the unit in one place")
    return in_header or unit


def time_unit_of(header: str, time_unit: str | None, label: str) -> str:
    """The unit of a numeric time column: the one in its header (``time [h]``), else
    ``time_unit``, else seconds. A header and a ``time_unit`` that disagree, or a unit that is
    not one of time, are refused (DataError naming the file and the column).

    >>> time_unit_of("time [h]", None, "x.csv"), time_unit_of("t", "min", "x.csv")
    ('h', 'min')
    """
    in_header = split_header(header)[1]
    for unit, said in ((in_header, f"its header says {quote_cell(in_header)}"),
                       (time_unit, f"time_unit is {time_unit!r}")):
        if unit is not None:
            try:
                to_si(f"1 {unit}", "time")
            except ValueError:
                raise DataError(f"time column {quote_cell(header)}: {said}, which is not a "
                                "unit of time", label,
                                "write e.g. 'time [s]', 'time [min]' or 'time [h]'") from None
    if in_header is not None and time_unit is not None and \
            to_si(f"1 {in_header}", "time") != to_si(f"1 {time_unit}", "time"):
        raise DataError(f"time column {quote_cell(header)}: its header says "
                        f"{quote_cell(in_header)} but time_unit "
                        f"is {time_unit!r}", label, "give the unit in one place")
    return in_header or time_unit or "s"


def read_time_series(path, columns=None, time=None, start=None, time_unit=None, missing="error",
                     where=None, max_bytes=None):
    """Read a CSV time series: a time column and numeric value columns.

    Returns a pandas DataFrame indexed by time [s] (float), one column per requested column (or
    every column but the time column). Numeric times are in the unit written in the time
    column's header (``time [h]``), or ``time_unit``, or seconds (:func:`time_unit_of`); or
    ISO-8601 timestamps, counted from ``start`` (default the first one), mixed UTC offsets placed
    on one clock (:func:`parse_times`).

    The numbers are parsed at once (:mod:`rcsim.profiles.numeric_csv`); a file with anything
    that parse cannot vouch for (a bad cell, a gap where none is allowed, times that do not
    increase) is read again cell by cell as text, which names the line and column.

    Raises
    ------
    DataError
        Missing file or column, a file with no column besides its time column, unreadable or
        non-increasing times, non-numeric values (unless
        ``missing='interpolate'``, which turns them into NaN for the caller to skip).
    """
    return read_series(path, columns, time, start, time_unit, missing, where, max_bytes).frame


@dataclass
class SeriesRead:
    """What :func:`read_series` read: the frame of :func:`read_time_series`, and what callers
    that place timestamps on another clock or check gaps need besides."""

    frame: object
    #: the time column's header as written
    time_column: str
    #: the time column's cells as read (strings), when it holds timestamps; else None
    time_text: object = None
    #: the first row's instant when the time column holds timestamps (:attr:`TimeParse.first`)
    first_instant: object = None
    #: True when every missing value (NaN) in ``frame`` was an empty cell
    missing_empty: bool = False


def read_series(path, columns=None, time=None, start=None, time_unit=None, missing="error",
                where=None, max_bytes=None) -> SeriesRead:
    """:func:`read_time_series` with what it read besides the frame (:class:`SeriesRead`)."""
    label = os.path.basename(str(path)) if where is None else where
    path = os.fspath(path)
    if os.path.isdir(path):
        raise DataError("is a directory, not a CSV file", label)
    fast = NumericCSV.open(path, csv_byte_limit(max_bytes)[0])
    if fast is not None:
        done = _numbers_first(fast, columns, time, start, time_unit, missing, label)
        if done is not None:
            return done
    return _text_first(path, columns, time, start, time_unit, missing, label, max_bytes)


def _numbers_first(fast, columns, time, start, time_unit, missing, label) -> SeriesRead | None:
    """The series from the numbers parsed at once, or None where the text pass must run (it
    then finds the same problem and names it). Every check here is the text pass's, in its
    order; one that fails gives None instead of the error."""
    import pandas as pd

    names = fast.names
    if len(set(names)) != len(names) or len(names) == 1:
        return None
    tcol = time if time is not None else names[0]
    if tcol not in names:
        tcol = next((c for c in names if split_header(c)[0] == tcol), tcol)
        if tcol not in names:
            return None
    columns = [c for c in names if c != tcol] if columns is None else list(columns)
    headers = {}
    for c in columns:
        headers[c] = c if c in names else next(
            (x for x in names if x != tcol and value_header(x)[0] == c), None)
        if headers[c] is None:
            return None
    first = pd.to_numeric(pd.Series([fast.first_row[names.index(tcol)]]), errors="coerce")
    numeric_time = bool(np.isfinite(first.to_numpy(dtype=float)).all())
    text_columns = () if numeric_time else (tcol,)
    frame = fast.parse(text_columns)
    others = [x for x in names if x != tcol and x not in headers.values()]
    if frame is None and others:    # a column not asked for may hold text (notes, flags)
        frame = fast.parse(text_columns + tuple(others))
    if frame is None:
        return None
    if numeric_time:
        numbers = frame[tcol].to_numpy(dtype=float)
        if not np.isfinite(numbers).all():
            return None
        unit = time_unit_of(tcol, time_unit, label)    # raises as the text pass would here
        factor = to_si(f"1 {unit}", "time", "time_unit")
        with np.errstate(over="ignore"):
            t = numbers * factor
        if not np.isfinite(t).all():
            return None
        parsed, text = TimeParse(t, False), None
    else:
        text = frame[tcol]
        parsed = parse_times(text, tcol, label, start, time_unit)  # raises as the text pass
        t = parsed.seconds
    if (t[1:] <= t[:-1]).any():
        return None
    out = {}
    for c in columns:
        values = frame[headers[c]].to_numpy(dtype=float, copy=True)
        bad = np.isnan(values)    # empty cells; an infinite value is left to the text pass
        if (bad.any() and (missing != "interpolate" or bad.all())) or np.isinf(values).any():
            return None
        out[c] = values
    del frame
    series = pd.DataFrame(out, index=pd.Index(t, name="time"), copy=False)
    series.attrs["is_datetime"] = parsed.is_datetime
    series.attrs["headers"] = headers
    return SeriesRead(series, tcol, text, parsed.first, True)


def _text_first(path, columns, time, start, time_unit, missing, label, max_bytes) -> SeriesRead:
    """The text pass: every cell read as text first, so that any problem names its line."""
    import pandas as pd

    df = read_csv_text(path, label, max_bytes)
    if len(set(df.columns)) != len(df.columns):
        raise DataError("has duplicate column names", label)
    tcol = time if time is not None else df.columns[0]
    if tcol not in df.columns:  # the name without its unit: time = "hour" for "hour [h]"
        tcol = next((c for c in df.columns if split_header(c)[0] == tcol), tcol)
    if tcol not in df.columns:
        raise DataError(f"no time column {quote_cell(tcol)}", label,
                        "columns are: " + quote_names(df.columns))
    if len(df.columns) == 1:
        wanted = f" named {quote_cell(columns[0])}" if columns else ""
        raise DataError(f"has no value columns besides its time column {quote_cell(tcol)}",
                        label, f"add a column of values{wanted} beside the time column, or name "
                        "the file that holds them")
    if columns is None:
        columns = [c for c in df.columns if c != tcol]
    headers = {}      # requested name -> the header as written ("T" -> "T [degF]")
    for c in columns:
        headers[c] = c if c in df.columns else next(
            (x for x in df.columns if x != tcol and value_header(x)[0] == c), c)
        if headers[c] not in df.columns:
            others = [x for x in df.columns if x != tcol]
            raise DataError(f"no column {quote_cell(c)}", label,
                            suggest(c, [cut(x) for x in others]) if len(others) <= 6
                            else "columns are: " + quote_names(others))
    parsed = parse_times(df[tcol], tcol, label, start, time_unit)
    t = parsed.seconds
    d = np.diff(t)
    if (d <= 0).any():
        i = int(np.argmax(d <= 0)) + 1
        raise DataError(f"time does not increase at line {i + 2} ({quote_cell(df[tcol].iloc[i])}"
                        f" after {quote_cell(df[tcol].iloc[i - 1])})", label,
                        "sort the rows and remove duplicates")
    out = {}
    empty = True
    for c in columns:
        text = df[headers[c]].str.strip()
        values = pd.to_numeric(text, errors="coerce").to_numpy(dtype=float, copy=True)
        bad = ~np.isfinite(values)
        if bad.any() and missing != "interpolate":
            i = int(np.argmax(bad))
            what = "empty" if text.iloc[i] == "" else \
                f"not a finite number ({quote_cell(text.iloc[i])})"
            raise DataError(f"column {quote_cell(c)} line {i + 2} is {what}", label,
                            "fix the row or set missing = 'interpolate'")
        if np.isfinite(values).sum() == 0:
            raise DataError(f"column {quote_cell(c)} has no numeric values", label)
        if bad.any():
            empty = empty and bool((text[bad] == "").all())
        values[bad] = np.nan
        out[c] = values
    frame = pd.DataFrame(out, index=pd.Index(t, name="time"))
    frame.attrs["is_datetime"] = parsed.is_datetime
    frame.attrs["headers"] = headers
    return SeriesRead(frame, tcol, df[tcol] if parsed.is_datetime else None, parsed.first, empty)


def read_csv_text(path, label: str, max_bytes: int | None = None):
    """Read a CSV file with a header as a DataFrame of stripped strings, or raise DataError.

    Checks that it fits in memory (and in ``max_bytes``, when given), is UTF-8, parses as CSV
    and has data rows. The file is read with a byte cap, not trusted to be as large as it says
    (a ``/proc`` file says 0 bytes): :func:`rcsim.inputfiles.read_bytes`.
    """
    import io

    import pandas as pd

    raw = read_capped(path, label, max_bytes)
    check_separator(first_line(raw).split(","), label)
    try:
        df = pd.read_csv(io.BytesIO(raw), skipinitialspace=True, dtype=str, keep_default_na=False,
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


#: separators other programs write instead of a comma, and their names in messages
OTHER_SEPARATORS = {";": "semicolons", "\t": "tabs", "|": "vertical bars"}


def read_capped(path, label: str, max_bytes: int | None = None) -> bytes:
    """The bytes of a CSV file, read with a cap: what fits in memory once parsed as text (pandas
    holds a CSV read as text at about 11-15 times its size on disk, measured for 1,000,000 rows,
    tests/benchmarks/bench_transient.py --large), and ``max_bytes`` when given."""
    limit, too_large, hint = csv_byte_limit(max_bytes)
    return read_bytes(path, label, limit, too_large, hint)


def csv_byte_limit(max_bytes: int | None = None) -> tuple[int | None, str, str | None]:
    """(the most bytes of a CSV file read, the end of the message refusing a larger file, its
    hint): :func:`read_capped`'s cap, which the numbers-first parse keeps too."""
    avail = memory_available()
    limit = None if avail is None else int(0.8 * avail / 15)
    if max_bytes is not None and (limit is None or max_bytes < limit):
        return max_bytes, ", the most allowed here", None
    return (limit, f", the most that fits in memory once read ({avail / 1e9:.1f} GB of "
            "memory is available)" if avail is not None else "",
            "split the file, or use a machine with more memory")


def first_line(raw: bytes, limit: int = 65536) -> str:
    """The first line of a file's bytes, as text (at most ``limit`` bytes of it).

    >>> first_line(b"time;T\\r\\n0;1\\n")
    'time;T'
    """
    return raw[:limit].split(b"\n", 1)[0].decode("utf-8", errors="replace").rstrip("\r")


def header_line(path, limit: int = 65536) -> str:
    """The first line of a text file (at most ``limit`` characters; "" if unreadable here: the
    reader that follows reports that)."""
    try:
        with open(path, encoding="utf-8", errors="replace", newline="") as fh:
            return fh.readline(limit).rstrip("\r\n")
    except OSError:
        return ""


def check_separator(header, label: str) -> None:
    """Refuse a CSV file whose header is one column holding another separator (``time;T``).

    rcsim reads comma-separated files only, with a point as the decimal mark: a file separated
    by semicolons usually writes decimal commas (``20,5``), which no guess could read safely.
    """
    if len(header) != 1:
        return
    name = str(header[0])
    for sep, what in OTHER_SEPARATORS.items():
        if sep in name:
            shown = name if len(name) <= 40 else name[:37] + "..."
            raise DataError(f"its header {shown!r} is one column separated by {what} ({sep!r}); "
                            "rcsim reads comma-separated files", label,
                            "save it as CSV with commas between columns and a point as the "
                            "decimal mark")


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


def parse_times(col, name, label, start, time_unit) -> TimeParse:
    """A CSV time column (strings) to seconds; the first row decides which of:

    * numbers, in the unit of :func:`time_unit_of` (the header's, ``time_unit``, or seconds);
    * ISO-8601 timestamps, counted from ``start`` (default the first). Rows with UTC offsets are
      exact instants and may mix offsets (``Z`` beside ``+02:00``, a daylight-saving change),
      placed on one clock by :func:`rcsim.clock.parse_timestamps` and shown at the first row's
      offset; rows without offsets are readings of one clock. Rows with and without offsets
      mixed are refused, naming the line.
    """
    import pandas as pd

    from ..clock import parse_timestamps

    text = col.str.strip()
    # the first row decides; a first row that is no number is a timestamp, and the rest of the
    # column need not be tried as numbers
    first = pd.to_numeric(text.iloc[:1], errors="coerce").to_numpy(dtype=float)
    numeric = pd.to_numeric(text, errors="coerce").to_numpy(dtype=float) \
        if np.isfinite(first).all() else first
    if np.isfinite(numeric).all():
        unit = time_unit_of(name, time_unit, label)
        factor = to_si(f"1 {unit}", "time", "time_unit")
        with np.errstate(over="ignore"):
            seconds = numeric * factor
        if not np.isfinite(seconds).all():  # e.g. 1e306 min: a number, but not a time
            i = int(np.argmax(~np.isfinite(seconds)))
            raise DataError(f"time column {quote_cell(name)} line {i + 2} is too large to be a "
                            "time "
                            f"({quote_cell(text.iloc[i])} {unit})", label,
                            "check the column's unit and values")
        return TimeParse(seconds, False)
    if np.isfinite(numeric[0]):  # the first row decides: seconds, or timestamps
        i = int(np.argmax(~np.isfinite(numeric)))
        raise DataError(f"time column {quote_cell(name)} line {i + 2} is not a number "
                        f"({quote_cell(text.iloc[i])})",
                        label)
    stamps = first_row_clock(parse_timestamps(text, None, label, name), text)
    if start is None:
        origin = stamps[0]
    else:
        try:
            origin = pd.Timestamp(start)
        except (ValueError, TypeError):
            raise DataError(f"start {start!r} is not an ISO-8601 timestamp", label) from None
    tz_data = stamps.tz is not None
    tz_origin = origin.tzinfo is not None
    if tz_data != tz_origin:
        raise DataError("timestamps and start time disagree on time zones (one has an offset, "
                        "the other not)", label, "give both with or both without a UTC offset")
    seconds = (stamps - origin).total_seconds().to_numpy(dtype=float)
    return TimeParse(seconds, True, stamps[0])


def first_row_clock(stamps, text):
    """Instants (a DatetimeIndex in UTC, from :func:`rcsim.clock.parse_timestamps`) shown at the
    UTC offset of the first row as written; naive stamps as they are."""
    import pandas as pd

    if stamps.tz is None:
        return stamps
    try:
        return stamps.tz_convert(pd.Timestamp(text.iloc[0]).tzinfo)
    except (ValueError, TypeError):  # pragma: no cover - a form pandas parses only as a column
        return stamps
