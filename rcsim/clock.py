"""Time zones and timestamps: placing clock readings on one exact time line.

The rule rcsim follows (the same for weather records, a scenario's start and any timestamp a
user writes):

* A timestamp **with a UTC offset** (``2021-07-01T12:00+02:00``, ``2021-07-01T10:00Z``) is an exact
  instant. A record may mix offsets (a daylight-saving change in the record, or ``Z`` beside
  ``+02:00``); every row is converted to one clock. Where the site's time zone is a named zone
  with daylight-saving rules and a record's offsets vary, each offset must be UTC or the zone's
  offset at that instant; anything else (a clock switched on the wrong day, a typing slip) is
  refused naming the row. A record whose offset never changes is taken as it is.
* A timestamp **without an offset** is a reading of the site's local clock: with a named zone
  (``Europe/Zurich``) that is civil time with its daylight-saving changes; with a fixed offset
  (``+01:00``, ``UTC-05:00``) it is standard time all year. A local time that the clock skips
  (spring forward) or shows twice (fall back) is refused naming the row: write offsets in such a
  record, or give the zone as a fixed offset if the record keeps standard time all year.
* Without a time zone, timestamps without offsets stay naive: they can be compared with a naive
  start, but the sun cannot be placed on them (sun geometry refuses naive times).
* Offsets, and fixed-offset zones, lie within -12:00 .. +14:00 (the offsets in use on Earth).
"""

from __future__ import annotations

import re
from datetime import timedelta, timezone, tzinfo

import numpy as np

from .errors import DataError, InputError
from .inputfiles import quote_cell

__all__ = ["parse_time_zone", "parse_timestamps", "to_instant", "zone_name", "line_of"]

_FIXED = re.compile(r"^\s*(?:UTC|GMT)?\s*(?:([+-])\s*(\d{1,2})(?::?(\d{2}))?)?\s*$", re.IGNORECASE)
# a date, a time, then an optional offset (the time is needed: '2021-03-01' ends in '-01')
_STAMP = re.compile(r"^(?P<clock>.*?[T ]\d{1,2}(?::\d{2}){0,2}(?:[.,]\d+)?)\s*"
                    r"(?P<offset>Z|z|[+-]\d{2}(?::?\d{2})?)?$")
_MIN_OFFSET, _MAX_OFFSET = -12 * 3600, 14 * 3600


def line_of(row: int) -> int:
    """File line of data row ``row`` (0-based) of a CSV file with one header line."""
    return int(row) + 2


def parse_time_zone(value, where: str | None = None) -> tzinfo | None:
    """A time zone from a name (``"Europe/Zurich"``, ``"UTC"``) or a fixed offset.

    Parameters
    ----------
    value : str, tzinfo or None
        An IANA zone name, ``"UTC"``, a fixed offset such as ``"+01:00"``, ``"UTC-05:00"``,
        ``"-5"``, or a tzinfo object. None gives None.

    Raises
    ------
    InputError
        Unknown zone name or offset outside -12:00 .. +14:00.

    >>> parse_time_zone("+01:00")
    datetime.timezone(datetime.timedelta(seconds=3600))
    >>> zone_name(parse_time_zone("Europe/Zurich"))
    'Europe/Zurich'
    """
    if value is None or isinstance(value, tzinfo):
        return value
    if not isinstance(value, str):
        raise InputError(f"a time zone is a name or an offset, got {value!r}", where,
                         "write e.g. 'Europe/Zurich' or '+01:00'")
    match = _FIXED.match(value)
    if match:
        sign, hours, minutes = match.groups()
        if sign is None:
            return timezone.utc
        seconds = (int(hours) * 3600 + int(minutes or 0) * 60) * (1 if sign == "+" else -1)
        if not _MIN_OFFSET <= seconds <= _MAX_OFFSET or int(minutes or 0) >= 60:
            raise InputError(f"time zone offset {value!r} is outside -12:00 .. +14:00", where)
        return timezone(timedelta(seconds=seconds))
    from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

    try:
        return ZoneInfo(value.strip())
    except (ZoneInfoNotFoundError, ValueError):
        raise InputError(f"unknown time zone {value!r}", where,
                         "use a zone name such as 'Europe/Zurich' or 'America/New_York', or a "
                         "fixed offset such as '+01:00'") from None


def zone_name(zone: tzinfo | None) -> str | None:
    """The name a user would write for ``zone`` (``"Europe/Zurich"``, ``"UTC+01:00"``)."""
    if zone is None:
        return None
    key = getattr(zone, "key", None)
    return key if key is not None else str(zone)


def _has_rules(zone) -> bool:
    """True for a zone with daylight-saving rules (a named zone), False for a fixed offset."""
    return zone is not None and not isinstance(zone, timezone)


def parse_timestamps(text, zone: tzinfo | None, label: str, column: str):
    """Parse a column of ISO-8601 texts into a DatetimeIndex following the module's rule.

    Parameters
    ----------
    text : pandas Series of str
        The column, stripped.
    zone : tzinfo or None
        The site's time zone (:func:`parse_time_zone`).
    label : str
        File name for error messages.
    column : str
        Column name for error messages.

    Returns
    -------
    pandas.DatetimeIndex
        Timezone-aware in ``zone`` (UTC when ``zone`` is None and the texts have offsets), or
        naive when neither texts nor zone have one.

    Raises
    ------
    DataError
        A row that is not a timestamp, an offset out of range or against the zone's rules, rows
        with and without offsets mixed, a local time skipped or repeated by the clock; the
        error names the file line.
    """
    import pandas as pd

    fast = _fixed_shape_stamps(text)
    if fast is not None:      # the same instants, read from the bytes (see the function)
        index, offsets = fast
        if offsets is not None:
            if _has_rules(zone) and (offsets != offsets[0]).any():
                _check_offsets_follow_zone(index, offsets, zone, text, label, column)
            return index.tz_convert(zone) if zone is not None else index
        if zone is None:
            return index
        return _localize(index, zone, text, f"time column {quote_cell(column)}",
                         lambda i: f"{label} line {line_of(i)}")
    parts = split_stamps(text)
    unmatched = parts["clock"].isna().to_numpy()
    if unmatched.any():   # no time of day: a date alone, or not a timestamp at all
        dates = pd.to_datetime(text[unmatched], format="ISO8601", errors="coerce")
        bad = dates.isna().to_numpy()
        if bad.any():
            _refuse_row(int(np.flatnonzero(unmatched)[np.argmax(bad)]), text, label, column)
    offset_text = parts["offset"]
    has_offset = offset_text.notna().to_numpy()
    if has_offset.any() and not has_offset.all():
        i = int(np.argmax(has_offset != has_offset[0]))
        raise DataError(f"time column {quote_cell(column)}: {quote_cell(text.iloc[i])} "
                        f"{'has' if has_offset[i] else 'has no'} UTC offset, unlike the rows "
                        f"before it", f"{label} line {line_of(i)}",
                        "give every row an offset, or none")
    if has_offset.all() and not unmatched.any():
        offsets = _offset_seconds(offset_text, label)
        stamps = pd.to_datetime(text, format="ISO8601", utc=True, errors="coerce")
        _refuse_unparsed(stamps, text, label, column)
        index = pd.DatetimeIndex(stamps)
        if _has_rules(zone) and np.unique(offsets).size > 1:
            _check_offsets_follow_zone(index, offsets, zone, text, label, column)
        return index.tz_convert(zone) if zone is not None else index
    stamps = pd.to_datetime(text, format="ISO8601", errors="coerce")
    _refuse_unparsed(stamps, text, label, column)
    index = pd.DatetimeIndex(stamps)
    if index.tz is not None:  # pandas found an offset that the pattern did not (should not happen)
        raise DataError(f"time column {quote_cell(column)} has offsets in a form rcsim does "
                        "not read",
                        label, "write offsets as Z, +02:00 or +0200")
    if zone is None:
        return index
    return _localize(index, zone, text, f"time column {quote_cell(column)}",
                     lambda i: f"{label} line {line_of(i)}")


#: every ASCII digit to '0': a stamp's shape, which decides how :data:`_STAMP` splits it
_SHAPE = str.maketrans("0123456789", "0000000000")


def split_stamps(text):
    """``text.str.extract(_STAMP)`` (columns ``clock`` and ``offset``), with the pattern matched
    once per *shape* of stamp (digits written as 0) instead of once per row: a shape decides
    where, and whether, the pattern splits every stamp of that shape, as the pattern only
    tells digits from other characters. A column of a million stamps of one or two shapes is
    split in a fraction of the time; a column of many shapes is split row by row as before."""
    import pandas as pd

    shapes = text.str.translate(_SHAPE)
    codes, uniques = pd.factorize(shapes)
    if (codes < 0).any() or len(uniques) > 64:
        return text.str.extract(_STAMP)
    cells = text.to_numpy(dtype=object)
    out = {"clock": np.full(cells.size, np.nan, dtype=object),
           "offset": np.full(cells.size, np.nan, dtype=object)}
    for k, shape in enumerate(uniques):
        match = _STAMP.search(shape)
        if match is None:
            continue
        rows = np.flatnonzero(codes == k)
        for group, column in out.items():
            start, end = match.span(group)
            if start == 0 and end == len(shape):
                column[rows] = cells[rows]
            elif start >= 0:
                column[rows] = [cell[start:end] for cell in cells[rows]]
    return pd.DataFrame({group: pd.Series(column, index=text.index, dtype=text.dtype)
                         for group, column in out.items()})


#: the shapes (digits written as 0) of stamps read from their bytes: date, T or space, the hour,
#: then minutes, seconds and a fraction of up to 6 digits as far as given, and an offset (Z,
#: +00:00, +0000 or +00) or none; anything else is read by :func:`split_stamps` and pandas
_FIXED_SHAPE = re.compile(r"^0000-00-00[T ]00(?::00(?::00(?:\.(0{1,6}))?)?)?"
                          r"(Z|[+-]00(?::?00)?)?$")
#: at most this many shapes in one column for the byte reading (a shape costs a pass)
_MAX_SHAPES = 8
#: rows turned into bytes at a time (their text objects exist only for a block)
_BLOCK = 1 << 16


def _fixed_shape_stamps(text):
    """The instants of a column of stamps of a few fixed shapes (:data:`_FIXED_SHAPE`), read
    from the cells' bytes with array arithmetic: (a DatetimeIndex, in UTC when the stamps have
    offsets, else naive; the offsets [s] east of UTC, or None), or None where anything is not
    as those shapes say, or any value would be refused (month 13, an hour 24, an offset out of
    range, rows with and without offsets), so that the reading by text runs and names the row.

    The result is what ``pd.to_datetime(text, format="ISO8601")`` gives (with ``utc=True`` for
    stamps with offsets), in the same unit: pandas reads one row of each shape and the two are
    compared. A column of a million stamps then needs a few bytes per character, not a
    Python string per piece of each stamp (tests/benchmarks/bench_csv.py).
    """
    import pandas as pd

    n = len(text)
    if n == 0 or text.isna().any():
        return None
    lengths = text.str.len().to_numpy(dtype=np.int64)
    width = int(lengths.max())
    if width > 40 or lengths.min() < 13:
        return None
    micro = np.zeros(n, dtype=np.int64)
    offsets = np.zeros(n, dtype=np.int64)
    with_offset = np.zeros(n, dtype=bool)
    known = []               # (shape, its match of _FIXED_SHAPE, its first row)
    for a in range(0, n, _BLOCK):     # a block of rows at a time: no temporary of the whole
        block = text.iloc[a:a + _BLOCK].to_numpy(dtype=object)
        try:
            cells = np.array(block, dtype=f"S{width}").view(np.uint8).reshape(block.size, width)
        except (UnicodeEncodeError, TypeError, ValueError):
            return None      # not ASCII: no stamp of these shapes
        if ((cells != 0).sum(axis=1) != lengths[a:a + block.size]).any():
            return None      # a NUL in a cell
        shapes = np.where((cells >= 48) & (cells <= 57), np.uint8(48), cells)
        todo = np.ones(block.size, dtype=bool)
        k = 0
        while todo.any():
            if k == len(known):          # a shape not met before: its first row
                if k == _MAX_SHAPES:
                    return None
                i = int(np.argmax(todo))
                match = _FIXED_SHAPE.match(bytes(shapes[i]).rstrip(b"\0").decode("ascii"))
                if match is None:
                    return None
                known.append((shapes[i].copy(), match, a + i))
            shape, match, _ = known[k]
            same = todo & (shapes == shape).all(axis=1)
            if same.any():
                if not _read_fixed(cells[same], match, a + np.flatnonzero(same), micro,
                                   offsets, with_offset):
                    return None
                todo &= ~same
            k += 1
    del lengths
    firsts = sorted(first for _, _, first in known)
    if with_offset.any() and not with_offset.all():
        return None
    utc = bool(with_offset[0])
    try:
        sample = pd.to_datetime(text.iloc[firsts], format="ISO8601", utc=utc)
    except (ValueError, TypeError, OverflowError):
        return None
    unit = np.datetime_data(sample.dtype.base if hasattr(sample.dtype, "base") else
                            sample.dtype)[0]
    if unit not in ("s", "ms", "us", "ns"):
        return None
    if unit in ("s", "ms") and (micro % {"s": 1_000_000, "ms": 1000}[unit]).any():
        return None
    if utc:
        micro -= offsets * 1_000_000         # the instants, in place
    if unit == "ns" and not (_NS_MIN <= micro.min() and micro.max() <= _NS_MAX):
        return None          # outside the years a nanosecond clock holds: pandas refuses them
    instants = micro.view("datetime64[us]")
    index = pd.DatetimeIndex(instants if unit == "us" else instants.astype(f"datetime64[{unit}]"))
    if utc:
        index = index.tz_localize("UTC")
    if not index[firsts].equals(pd.DatetimeIndex(sample)):
        return None
    return index, (offsets if utc else None)


#: the instants [us from 1970] a nanosecond clock holds (pandas' bounds, whole microseconds)
_NS_MIN, _NS_MAX = -9_223_372_036_854_775, 9_223_372_036_854_775


def _read_fixed(cells, match, rows, micro, offsets, with_offset) -> bool:
    """Read the stamps ``cells`` (rows x width bytes) of one shape into ``micro`` (local clock
    reading, us from 1970), ``offsets`` [s] and ``with_offset`` at ``rows``; False where a
    value is out of range (the text reading then refuses it by name)."""
    def number(start, count):
        out = np.zeros(len(cells), dtype=np.int64)
        for k in range(count):
            out = out * 10 + (cells[:, start + k].astype(np.int64) - 48)
        return out

    clock = match.string[:match.start(2)] if match.group(2) is not None else match.string
    year, month, day = number(0, 4), number(5, 2), number(8, 2)
    hour = number(11, 2)
    minute = number(14, 2) if len(clock) >= 16 else np.zeros_like(hour)
    second = number(17, 2) if len(clock) >= 19 else np.zeros_like(hour)
    fraction = match.group(1)
    frac = number(20, len(fraction)) * 10 ** (6 - len(fraction)) if fraction else 0
    if (year < 1).any() or (month < 1).any() or (month > 12).any() or (day < 1).any() or \
            (hour > 23).any() or (minute > 59).any() or (second > 59).any():
        return False
    months = ((year - 1970) * 12 + month - 1).astype("datetime64[M]")
    first = months.astype("datetime64[D]")
    if (day > ((months + 1).astype("datetime64[D]") - first).astype(np.int64)).any():
        return False          # 31 April, 29 February of a common year
    days = first.astype(np.int64) + day - 1
    micro[rows] = ((days * 24 + hour) * 60 + minute) * 60_000_000 + second * 1_000_000 + frac
    offset = match.group(2)
    if offset is None:
        return True
    at = match.start(2)
    if offset == "Z":
        seconds = np.zeros(len(cells), dtype=np.int64)
    else:
        sign = np.where(cells[:, at] == ord("-"), -1, 1)
        minutes = number(at + len(offset) - 2, 2) if len(offset) > 3 else 0
        seconds = sign * (number(at + 1, 2) * 3600 + minutes * 60)
        if (np.asarray(minutes) >= 60).any() or (seconds < _MIN_OFFSET).any() or \
                (seconds > _MAX_OFFSET).any():
            return False
    offsets[rows] = seconds
    with_offset[rows] = True
    return True


def _refuse_unparsed(stamps, text, label, column) -> None:
    bad = stamps.isna().to_numpy()
    if bad.any():
        _refuse_row(int(np.argmax(bad)), text, label, column)


def _refuse_row(i, text, label, column) -> None:
    raise DataError(f"time column {quote_cell(column)}: {quote_cell(text.iloc[i])} is not an "
                    "ISO-8601 timestamp",
                    f"{label} line {line_of(i)}",
                    "write e.g. 2021-07-01T12:00, 2021-07-01T12:00+02:00 or 2021-07-01T10:00Z")


def _offset_seconds(offset_text, label) -> np.ndarray:
    """Offsets ('Z', '+02:00', '-0530', '+02') as seconds east of UTC, checked in range."""
    digits = offset_text.str.replace(":", "", regex=False)
    is_utc = digits.str.upper().eq("Z").to_numpy()
    digits = digits.where(~is_utc, "+0000")
    sign = np.where(digits.str[0].eq("-").to_numpy(), -1, 1)
    hours = digits.str[1:3].astype(int).to_numpy()
    minutes = digits.str[3:5].replace("", "0").astype(int).to_numpy()
    seconds = sign * (hours * 3600 + minutes * 60)
    bad = (minutes >= 60) | (seconds < _MIN_OFFSET) | (seconds > _MAX_OFFSET)
    if bad.any():
        i = int(np.argmax(bad))
        raise DataError(f"UTC offset {quote_cell(offset_text.iloc[i])} is not one in use on Earth "
                        "(-12:00 .. +14:00)", f"{label} line {line_of(i)}",
                        "check the offset of that row")
    return seconds


def _check_offsets_follow_zone(index, offsets, zone, text, label, column) -> None:
    """Varying offsets must each be UTC or the zone's offset at that instant."""
    utc_naive = index.tz_convert("UTC").tz_localize(None)
    local_naive = index.tz_convert(zone).tz_localize(None)
    expected = (local_naive - utc_naive).total_seconds().to_numpy()
    bad = (offsets != 0) & (offsets != expected)
    if bad.any():
        i = int(np.argmax(bad))
        want = _format_offset(expected[i])
        raise DataError(f"time column {quote_cell(column)}: {quote_cell(text.iloc[i])} has offset "
                        f"{_format_offset(offsets[i])}, but {zone_name(zone)} is at {want} at "
                        f"that instant", f"{label} line {line_of(i)}",
                        "a record whose offsets change must follow the site's daylight-saving "
                        "rules (or be in UTC)")


def _format_offset(seconds: float) -> str:
    sign = "-" if seconds < 0 else "+"
    minutes = int(round(abs(seconds) / 60))
    return f"{sign}{minutes // 60:02d}:{minutes % 60:02d}"


def _localize(index, zone, text, column, where_of):
    """Naive local clock readings to instants in ``zone``; skipped or repeated times refused."""
    localized = index.tz_localize(zone, ambiguous="NaT", nonexistent="NaT")
    bad = localized.isna()
    if bad.any():
        i = int(np.argmax(bad))
        one = index[i:i + 1].tz_localize(zone, ambiguous=np.array([True]), nonexistent="NaT")
        what = ("does not exist on the local clock (skipped at a daylight-saving change)"
                if one.isna()[0] else
                "occurs twice on the local clock (repeated at a daylight-saving change)")
        raise DataError(f"{column}: local time {quote_cell(text.iloc[i])} {what} in "
                        f"{zone_name(zone)}", where_of(i),
                        "write UTC offsets in the record, or give the zone as a fixed offset "
                        "such as '+01:00' if the record keeps standard time all year")
    return localized


def to_instant(value, zone: tzinfo | None, where: str | None = None):
    """One timestamp (ISO-8601 text, datetime or pandas Timestamp) under the module's rule.

    With an offset it is an exact instant (converted to ``zone`` if given); without one it is a
    reading of the local clock of ``zone`` (refused if the clock skips or repeats it), or stays
    naive when ``zone`` is None.

    >>> str(to_instant("2021-07-01T12:00", parse_time_zone("Europe/Zurich")))
    '2021-07-01 12:00:00+02:00'
    >>> str(to_instant("2021-07-01T10:00Z", parse_time_zone("Europe/Zurich")))
    '2021-07-01 12:00:00+02:00'
    """
    import pandas as pd

    try:
        stamp = pd.Timestamp(value)
    except (ValueError, TypeError):
        raise InputError(f"{value!r} is not an ISO-8601 timestamp", where,
                         "write e.g. 2021-07-01T12:00 or 2021-07-01T12:00+02:00") from None
    if stamp is pd.NaT:
        raise InputError(f"{value!r} is not a timestamp", where)
    if stamp.tzinfo is not None:
        return stamp.tz_convert(zone) if zone is not None else stamp
    if zone is None:
        return stamp
    text = pd.Series([str(value)])
    try:
        return _localize(pd.DatetimeIndex([stamp]), zone, text, "timestamp", lambda i: where)[0]
    except DataError as err:
        raise InputError(err.message, where, err.hint) from None
