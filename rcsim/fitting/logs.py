"""The log: reading a logged record (CSV or DataFrame), checking it and matching its columns.

Columns named like a node (or mapped to one) are *measured*; columns named like a boundary (or
mapped to one) *drive* the model as its temperature; columns named like a source (or mapped to
one) drive the model as that source's power (in W, or in the unit of the header, as in
``heater [kW]``). Every problem is one :class:`rcsim.errors.DataError` naming the file, the
column and the line.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..base import suggest
from ..errors import DataError, InputError
from ..profiles import read_csv_text
from ..profiles.numeric_csv import NumericCSV
from ..profiles.table import convert_array
from ..profiles.timeseries import (check_separator, csv_byte_limit, read_series, split_header,
                                   time_unit_of)
from ..units import ABSOLUTE_ZERO, to_si

__all__ = ["Log", "read_log", "gap_notes", "log_header"]

TIME_NAMES = {"time", "t", "timestamp", "datetime", "date", "seconds", "elapsed", "time_s"}
NA_TOKENS = {"", "nan", "na", "n/a", "null", "none", "-", "--"}


@dataclass
class Log:
    """A logged record, checked and matched to a network.

    Attributes
    ----------
    time : ndarray
        Seconds from the first row (t = 0 is the first row).
    values : DataFrame
        One float column per used log column (NaN where missing), index ``time [s]``.
    targets : dict
        Log column -> node or boundary name.
    measured, inputs : list of str
        Log columns matched to nodes (fitted) and to boundaries (driving the model).
    powers : list of str
        Log columns matched to sources (their power drives the model; values in ``values`` are
        in W).
    start_time : pandas.Timestamp or None
        Time of the first row when the log has timestamps.
    name : str
        File name (or ``"<data>"``) used in messages.
    lines : ndarray
        File line (1-based, header is line 1) of each row, for messages.
    gaps : DataFrame
        Spans without a value longer than ``max_gap``: column, from [s], to [s], length [s], line.
    max_gap : float
        The limit used [s].
    first_time : float
        The first row's time as written, in seconds, when the time column holds numbers (0.0
        for timestamps).
    """

    time: np.ndarray
    values: pd.DataFrame
    targets: dict
    measured: list
    inputs: list
    start_time: pd.Timestamp | None
    name: str
    lines: np.ndarray
    gaps: pd.DataFrame
    max_gap: float
    first_time: float = 0.0
    powers: list = field(default_factory=list)


@dataclass
class RawLog:
    """A log as read, before it is matched to a network.

    ``seconds``: row times as written, in seconds (not yet counted from the first row);
    ``frame``: one float column per header name, NaN where a cell is missing; ``origin``: the
    first timestamp when ``is_datetime``; ``lines``: the file line (or frame row) of each row.
    """

    seconds: np.ndarray
    frame: pd.DataFrame
    header: list
    is_datetime: bool
    origin: pd.Timestamp | None
    lines: np.ndarray


#: ``"time [min]"`` -> ``("time", "min")`` (:func:`rcsim.profiles.timeseries.split_header`)
strip_unit = split_header


def _find_time_column(columns, time, mapped_targets, names, label) -> str:
    if time is not None:
        if time not in columns:
            raise DataError(f"no time column {time!r}", label,
                            "columns are: " + ", ".join(map(repr, columns)))
        return time
    for c in columns:
        if strip_unit(c)[0].lower() in TIME_NAMES:
            return c
    first = columns[0]
    if first in mapped_targets or first in names:
        raise DataError(f"no time column (the first column {first!r} is a node or boundary)",
                        label, "add a column named 'time' (seconds or ISO-8601 timestamps) or "
                        "name the time column (time= / --time)")
    return first


def read_log(source, nodes, boundaries, *, columns=None, ignore=(), time=None, time_unit=None,
             max_gap=None, start=None, sources=()) -> Log:
    """Read and check a log and match its columns to nodes and boundaries.

    Parameters
    ----------
    source : str, path or pandas.DataFrame
        A CSV file with a header row, or a DataFrame (time as a column, or as its index:
        numbers in ``time_unit`` or a DatetimeIndex).
    nodes, boundaries : list of str
        Names in the network (nodes may include internal ``<link>.<i>`` nodes).
    sources : list of str
        Names of the network's sources; a column matched to one drives its power.
    columns : dict, optional
        ``{"log column": "node or boundary"}``; other columns are matched by name.
    ignore : sequence of str
        Columns to leave out.
    time : str, optional
        Name of the time column (default: a column named time, t, timestamp, ... else the first).
    time_unit : str, optional
        Unit of a numeric time column (default seconds, or the unit in its header as in
        ``"time [min]"``).
    max_gap : float or str, optional
        Spans without a value longer than this are reported (default 5 times the median row
        interval).
    start : str, optional
        Reference time for timestamps (default the first row).

    Raises
    ------
    DataError
        Naming the file, the column and the line: no time column, times that do not increase,
        text where a number should be, a column that matches no node or boundary, a column
        without any value.
    """
    columns = dict(columns or {})
    ignore = list(ignore or [])
    nodes, boundaries, sources = list(nodes), list(boundaries), list(sources)
    names = set(nodes) | set(boundaries) | set(sources)
    if isinstance(source, pd.DataFrame):
        label = "<data>"
        raw = _from_frame(source, time, time_unit, label, columns, names)
    else:
        label = os.path.basename(os.fspath(source)) or os.fspath(source)
        raw = _from_csv(source, time, time_unit, label, columns, names, start)
    header = raw.header
    used = [c for c in header if c not in ignore]
    for c in list(columns) + ignore:
        if c not in header:
            raise DataError(f"no column {c!r}", label, suggest(c, header) or
                            "columns are: " + ", ".join(map(repr, header)))
    targets = _match_columns(used, columns, names, label)
    measured = [c for c in used if targets[c] in set(nodes)]
    inputs = [c for c in used if c not in measured and targets[c] in set(boundaries)]
    powers = [c for c in used if c not in measured and c not in inputs]
    if not measured:
        raise DataError("no column is matched to a node, so there is nothing to fit", label,
                        f"name a column after a node ({', '.join(nodes[:8])}) or map it "
                        "(columns= / --map COLUMN=NODE)")
    if raw.seconds.size < 2:
        raise DataError("needs at least two rows", label)
    t = raw.seconds - raw.seconds[0]
    values = raw.frame[used].copy()
    values.index = pd.Index(t, name="time [s]")
    for c in powers:  # powers in W
        values[c] = values[c] * _power_factor(c, label)
    for c in used:
        if not np.isfinite(values[c].to_numpy()).any():
            raise DataError(f"column {c!r} has no numeric values", label)
    for c in measured + inputs:   # temperatures: degC, or the unit in the header ('T [degF]')
        unit = strip_unit(c)[1]
        if unit is not None:
            values[c] = convert_array(values[c].to_numpy(dtype=float), unit, "temperature",
                                      f"{label}: column {c!r}")
    for c in measured + inputs:   # temperatures [degC]
        below = values[c].to_numpy() < ABSOLUTE_ZERO
        if below.any():
            i = int(np.argmax(below))
            place = f"line {raw.lines[i]}" if label != "<data>" else f"row {raw.lines[i]}"
            raise DataError(f"column {c!r} {place}: {values[c].iloc[i]:g} degC is below "
                            f"absolute zero ({ABSOLUTE_ZERO:g} degC)", label,
                            "check the value and the column's unit (degC)")
    if max_gap is None:
        gap_limit = 5.0 * float(np.median(np.diff(t)))
    else:
        gap_limit = to_si(max_gap, "time", "max_gap")
        if gap_limit <= 0:
            raise InputError(f"max_gap must be positive, got {max_gap!r}", "max_gap")
    gaps = find_gaps(t, values, gap_limit, raw.lines)
    start_time = raw.origin if raw.is_datetime else None
    return Log(t, values, targets, measured, inputs, start_time, label, raw.lines, gaps,
               gap_limit, 0.0 if raw.is_datetime else float(raw.seconds[0]), powers)


def _power_factor(column: str, label: str) -> float:
    """Watts per unit of a power column: 1, or the factor of the unit in its header."""
    unit = strip_unit(column)[1]
    if unit is None:
        return 1.0
    try:
        return to_si(f"1 {unit}", "power", column)
    except InputError:
        raise DataError(f"column {column!r} drives a source, but {unit!r} is not a unit of "
                        "power", label, "write e.g. 'heater [W]' or 'heater [kW]'") from None


def log_header(source, time=None) -> tuple[str | None, list[str]]:
    """(time column, the other columns) of a log, as :func:`read_log` will see them: the time
    column is ``time``, or one named time, t, timestamp, ..., or else the first (None for a
    DataFrame whose index holds the time)."""
    if isinstance(source, pd.DataFrame):
        header = [str(c).strip() for c in source.columns]
        named = time is not None or any(strip_unit(c)[0].lower() in TIME_NAMES for c in header)
        index_time = not named and (isinstance(source.index, pd.DatetimeIndex) or (
            pd.api.types.is_numeric_dtype(source.index.dtype)
            and not isinstance(source.index, pd.RangeIndex)))
        if index_time:
            return None, header
        label = "<data>"
    else:
        path = os.fspath(source)
        label = os.path.basename(path) or path
        if not os.path.isfile(path):
            raise DataError("file not found", label, f"looked for {os.path.abspath(path)}")
        try:
            header = [str(c).strip() for c in pd.read_csv(path, nrows=0, skipinitialspace=True,
                                                            encoding="utf-8").columns]
        except (UnicodeDecodeError, pd.errors.ParserError, pd.errors.EmptyDataError):
            raise DataError("cannot be read as a CSV file with a header", label) from None
        check_separator(header, label)
    if not header:
        raise DataError("has no columns", label)
    tcol = _find_time_column(header, time, set(), set(), label)
    return tcol, [c for c in header if c != tcol]


def _match_columns(used, columns, names, label) -> dict:
    """Log column -> node or boundary, by mapping or by name; one column per target."""
    targets = {}
    for c in used:
        target = columns.get(c, c)
        if c not in columns and target not in names and strip_unit(c)[0] in names:
            target = strip_unit(c)[0]   # 'block [degF]' is the node 'block', in degF
        if target not in names:
            if c in columns:
                raise DataError(f"column {c!r} is mapped to {target!r}, which is no node, "
                                "boundary or source", label, suggest(target, sorted(names)))
            raise DataError(f"column {c!r} matches no node or boundary", label,
                            f"map it to a node, boundary or source (columns= / --map {c}=NAME; "
                            f"names: {', '.join(sorted(names)[:8])}) or leave it out (ignore= / "
                            "--ignore)")
        if target in targets.values():
            other = next(k for k, v in targets.items() if v == target)
            raise DataError(f"columns {other!r} and {c!r} both give {target!r}", label,
                            "map one of them elsewhere or leave it out")
        targets[c] = target
    return targets


def _from_csv(path, time, time_unit, label, columns, names, start) -> RawLog:
    path = os.fspath(path)
    if os.path.isdir(path):
        raise DataError("is a directory, not a CSV file", label)
    if not os.path.exists(path):
        raise DataError("file not found", label, f"looked for {os.path.abspath(path)}")
    peek = NumericCSV.open(path, csv_byte_limit()[0])   # the header, without reading the rows
    header_all = list(read_csv_text(path, label).columns) if peek is None else peek.names
    try:
        tcol = _find_time_column(header_all, time, set(columns), names, label)
        header = [c for c in header_all if c != tcol]
        if not header:
            raise DataError("has only a time column", label, "add temperature columns")
    except DataError:
        if peek is not None:    # a file the text pass refuses is refused for that first
            read_csv_text(path, label)
        raise
    # times, increasing, and values: the shared reader (NaN where a cell is not a number)
    read = read_series(path, header, time=tcol, start=start, time_unit=time_unit,
                       missing="interpolate", where=label)
    frame = read.frame
    if not read.missing_empty:
        # text that is not a missing-value marker is an error, not a silent gap
        raw = read_csv_text(path, label)
        for c in header:
            bad = ~np.isfinite(frame[c].to_numpy())
            if bad.any():
                text = raw[c].str.strip()
                wrong = bad & ~text.str.lower().isin(NA_TOKENS).to_numpy()
                if wrong.any():
                    i = int(np.argmax(wrong))
                    raise DataError(f"column {c!r} line {i + 2} is not a number "
                                    f"({text.iloc[i]!r})", label,
                                    "fix the cell, or leave it empty to mark a missing value")
    t = frame.index.to_numpy(dtype=float)
    is_dt = bool(frame.attrs.get("is_datetime", False))
    # the first row as an instant, on the clock the reader used (mixed offsets allowed)
    origin = read.first_instant if is_dt else None
    frame = frame.reset_index(drop=True)
    return RawLog(t, frame, header, is_dt, origin, np.arange(t.size) + 2)


def _from_frame(df, time, time_unit, label, columns, names) -> RawLog:
    df = df.copy()
    df.columns = [str(c).strip() for c in df.columns]
    if df.shape[0] == 0:
        raise DataError("has no rows", label)
    header_all = list(df.columns)
    index_is_time = (time is None and not any(strip_unit(c)[0].lower() in TIME_NAMES
                                              for c in header_all)
                     and (isinstance(df.index, pd.DatetimeIndex)
                          or (pd.api.types.is_numeric_dtype(df.index.dtype)
                              and not isinstance(df.index, pd.RangeIndex))))
    if index_is_time:
        tcol = None
        tvals = df.index
        tname = str(df.index.name or "index")
    else:
        tcol = _find_time_column(header_all, time, set(columns), names, label)
        tvals = df[tcol]
        tname = tcol
    time_unit = time_unit_of(tname, time_unit, label)
    t, origin = _frame_times(tvals, tname, to_si(f"1 {time_unit}", "time", "time_unit"), label)
    header = [c for c in header_all if c != tcol]
    out = {}
    for c in header:
        col = df[c].reset_index(drop=True)
        vals = pd.to_numeric(col, errors="coerce").to_numpy(dtype=float, copy=True)
        bad = ~np.isfinite(vals)
        if bad.any():
            text = col.astype(str).str.strip().str.lower()
            wrong = bad & ~(col.isna().to_numpy() | text.isin(NA_TOKENS).to_numpy())
            if wrong.any():
                i = int(np.argmax(wrong))
                raise DataError(f"column {c!r} row {i} is not a number ({col.iloc[i]!r})",
                                label, "fix the value, or use NaN to mark a missing value")
            vals[bad] = np.nan
        out[c] = vals
    return RawLog(t, pd.DataFrame(out), header, origin is not None, origin, np.arange(t.size))


def _frame_times(tvals, tname, factor, label):
    """Seconds of a DataFrame's time column or index (timestamps counted from the first) and
    the first timestamp (None for numbers, which are multiplied by ``factor``)."""
    origin = None
    if isinstance(tvals, pd.DatetimeIndex) or pd.api.types.is_datetime64_any_dtype(tvals):
        stamps = pd.Series(pd.to_datetime(tvals)).reset_index(drop=True)
        if stamps.isna().any():
            i = int(np.argmax(stamps.isna().to_numpy()))
            raise DataError(f"time {tname!r} row {i} is missing", label)
        origin = stamps.iloc[0]
        t = (stamps - origin).dt.total_seconds().to_numpy(dtype=float)
    else:
        t = pd.to_numeric(pd.Series(np.asarray(tvals)), errors="coerce").to_numpy(dtype=float)
        if not np.isfinite(t).all():
            i = int(np.argmax(~np.isfinite(t)))
            raise DataError(f"time {tname!r} row {i} is not a number ({np.asarray(tvals)[i]!r})",
                            label)
        t = t * factor
    d = np.diff(t)
    if (d <= 0).any():
        i = int(np.argmax(d <= 0)) + 1
        raise DataError(f"time does not increase at row {i} ({t[i]:g} s after {t[i - 1]:g} s)",
                        label, "sort the rows and remove duplicates")
    return t, origin


def find_gaps(t, values, limit, lines) -> pd.DataFrame:
    """Spans longer than ``limit`` without a value, per column (including at the ends)."""
    parts = []
    for c in values.columns:
        ok = np.flatnonzero(np.isfinite(values[c].to_numpy()))
        edges = np.concatenate([[t[0]], t[ok], [t[-1]]])
        d = np.diff(edges)
        j = np.flatnonzero(d > limit * (1 + 1e-9))
        # the line of the last row with a value before the span (the first row for a leading one)
        line = np.where(j == 0, lines[0], lines[ok[np.maximum(j - 1, 0)]])
        parts.append(pd.DataFrame({"column": c, "from [s]": edges[j], "to [s]": edges[j + 1],
                                   "length [s]": d[j], "line": line.astype(int)}))
    return pd.concat(parts, ignore_index=True)


def fmt_span(seconds) -> str:
    """A time span [s] for a message: s, min, h or d with three digits."""
    s = float(seconds)
    if s < 120:
        return f"{s:.3g} s"
    if s < 7200:
        return f"{s / 60:.3g} min"
    if s < 4 * 86400:
        return f"{s / 3600:.3g} h"
    return f"{s / 86400:.3g} d"


def gap_notes(log: Log) -> list[str]:
    """One note per column with spans longer than the log's ``max_gap`` (the longest named)."""
    notes = []
    for column, g in log.gaps.groupby("column", sort=False):
        kind = "interpolated linearly across" if column in log.inputs + log.powers else \
            "skipped in the residuals"
        worst = g.loc[g["length [s]"].idxmax()]
        where = (f"{fmt_span(worst['length [s]'])} (from {fmt_span(worst['from [s]'])} after "
                 f"the start, line {worst['line']})")
        what = f"no value for {where}" if len(g) == 1 else \
            f"{len(g)} spans without a value, the longest {where}"
        notes.append(f"{log.name}: column {column!r} has {what}, longer than the "
                     f"{fmt_span(log.max_gap)} allowed; {kind}")
    return notes
