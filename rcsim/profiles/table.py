"""A table profile: linear interpolation between (time, value) points, also read from a CSV."""

from __future__ import annotations

import math
import os

import numpy as np

from ..errors import ProfileError
from .base import ABSOLUTE_ZERO, LEVEL_KIND, Profile, check_points, to_si, to_si_array
from .timeseries import read_time_series, value_header, value_unit_of


class Table(Profile):
    """Linear interpolation between (time, value) points.

    Parameters
    ----------
    times, values : sequence
        Increasing times [s] and the values there.
    outside : {'error', 'hold'}
        Outside the covered span: an error (default) or hold the end value.
    unit : str, optional
        Unit of plain-number ``values`` (e.g. ``"degF"``); by default SI (degC for temperatures).

    >>> Table([0, 10], [0.0, 5.0]).value(4.0)
    2.0
    """

    #: file line of each point when read from a CSV file (for messages), else None
    lines = None
    #: where the values' unit was read when a CSV header gave it ("x.csv column 'T [degF]'")
    unit_header = None

    def __init__(self, times, values, outside="error", unit=None, source=None, where=None):
        self.raw = dict(times=times, values=values, outside=outside, unit=unit)
        self.source = source
        try:
            t = np.asarray(times, dtype=float)
            v = np.asarray(values, dtype=float)
        except (TypeError, ValueError):
            return
        if unit is None:
            self._set(t, v, outside, where)

    def _set(self, times, values, outside, where):
        check_points(times, values, outside, where, 2, "a table")
        self.times, self.values, self.outside = times, values, outside

    def _bind(self, kind, where):
        out = Table.__new__(Table)
        out.raw, out.source, out.lines = self.raw, self.source, self.lines
        out.unit_header = self.unit_header
        w = f"{where}." if where else ""
        unit = self.raw["unit"]
        times = to_si_array(self.raw["times"], "time", w + "times")
        if unit is not None:
            at = self.unit_header
            values = convert_array(np.asarray(self.raw["values"], dtype=float), unit,
                                   LEVEL_KIND[kind], w + "unit" if at is None else
                                   (f"{where}: {at}" if where else at))
        elif self.lines is not None:  # read from a CSV file: numbers in degC (or SI) already
            values = np.asarray(self.raw["values"], dtype=float)
        else:
            values = to_si_array(self.raw["values"], LEVEL_KIND[kind], w + "values")
        if LEVEL_KIND[kind] == "temperature":
            self._check_absolute_zero(values, where, w)
        out._set(times, values, self.raw["outside"], where)
        return out

    def _check_absolute_zero(self, values, where, w) -> None:
        """Refuse temperatures below absolute zero, naming the file line or the index."""
        bad = values < ABSOLUTE_ZERO
        if bad.any():
            i = int(np.argmax(bad))
            if self.lines is not None:
                name, _, column = (self.source or "the CSV file").rpartition(":")
                row = f"{name} line {int(self.lines[i])} column {column!r}"
                place = f"{where}: {row}" if where else row
            else:
                place = f"{w}values[{i}]"
            raise ProfileError(f"{values[i]:g} degC is below absolute zero "
                               f"({ABSOLUTE_ZERO:g} degC)", place,
                               "check the value and its unit")

    def _pl(self, t, side):
        t = np.asarray(t, dtype=float)
        times, values = self.times, self.values
        if t.size and times.size > 64 and t.size < times.size:
            # only the points around the asked span (a long table read chunk by chunk):
            # the same numbers as over the whole table, without passing over all of it
            lo, hi = np.searchsorted(times, [t.min(), t.max()])
            lo, hi = max(int(lo) - 1, 0), min(int(hi) + 1, times.size)
            times, values = times[lo:hi], values[lo:hi]
        return np.interp(t, times, values)

    def knots(self, t0, t1):
        times = self.times      # increasing: the points strictly inside (t0, t1)
        return times[np.searchsorted(times, t0, side="right"):np.searchsorted(times, t1)]

    def span(self):
        if self.outside == "hold":
            return (-math.inf, math.inf)
        return (float(self.times[0]), float(self.times[-1]))

    def _ready(self) -> bool:
        return hasattr(self, "times")

    def describe(self) -> str:
        origin = f" from {self.source}" if self.source else ""
        return f"table of {self.times.size} points{origin}"

    def __repr__(self):
        return f"Table(<{len(self.raw['times'])} points>)"

    @classmethod
    def from_csv(cls, path, column, time=None, start=None, unit=None, time_unit=None,
                 missing="error", outside="error", where=None) -> "Table":
        """Read one column of a CSV file as a table profile.

        Parameters
        ----------
        path : str or path
            CSV file with a header row.
        column : str
            Name of the value column.
        time : str, optional
            Name of the time column; default the first column.
        start : str or datetime, optional
            When time is given as ISO-8601 timestamps, the time that counts as t = 0;
            default the first timestamp.
        unit : str, optional
            Unit of the values (e.g. ``"degF"``, ``"kW"``) when the column's header does not
            say (``T_out [degF]``); default SI (degC, W). A header and a ``unit`` that disagree
            are refused.
        time_unit : str, optional
            Unit of a numeric time column when its header does not say (``time [h]``);
            default seconds. A header and a ``time_unit`` that disagree are refused.
        missing : {'error', 'interpolate'}
            Empty or non-numeric values: an error naming the row (default), or skip the row and
            interpolate across it.
        """
        series = read_time_series(path, [column], time=time, start=start, time_unit=time_unit,
                                  missing=missing, where=where)
        times = series.index.to_numpy(dtype=float)
        return cls.from_columns(path, column, times, series[column].to_numpy(dtype=float),
                                unit=unit, missing=missing, outside=outside, where=where,
                                header=series.attrs["headers"][column])

    @classmethod
    def from_columns(cls, path, column, times, values, *, unit=None, missing="error",
                     outside="error", where=None, header=None) -> "Table":
        """A table of the column ``column`` of the CSV file ``path`` as read (``times`` [s] and
        ``values``, one per data row, NaN where ``missing = 'interpolate'`` skips a row);
        ``header``: the column's header as written, whose unit in square brackets
        (``T_out [degF]``) is the values' unit (:func:`~rcsim.profiles.timeseries.value_unit_of`)."""
        lines = np.arange(values.size) + 2   # file lines: the header is line 1
        if missing == "interpolate":
            keep = np.isfinite(values)
            times, values, lines = times[keep], values[keep], lines[keep]
        name = os.path.basename(str(path))
        where = where if where is not None else name
        header = header if header is not None else column
        unit = value_unit_of(header, unit, where)
        table = cls(times, values, outside=outside, unit=unit, source=f"{name}:{column}",
                    where=where)
        table.lines = lines
        if value_header(header)[1] is not None:
            table.unit_header = f"{name} column {header!r}"
        return table


def convert_array(values: np.ndarray, unit: str, kind: str, where: str | None) -> np.ndarray:
    """Plain numbers in ``unit`` to the SI unit of ``kind`` (degC for temperatures), at once.

    The dimension (and absolute temperature against difference) is checked on ``1 unit`` first,
    so a wrong unit gives the usual one-line error naming ``where``.
    """
    to_si(f"1 {unit}", kind, where)  # checks the dimension (and absolute vs difference)
    from ..units import si_unit, ureg  # pint only when a table has a unit of its own

    try:
        q = ureg.Quantity(values, ureg.parse_units(unit))
        return np.asarray(q.to(si_unit(kind)).magnitude, dtype=float)
    except Exception as exc:  # pint raises many types; report as a unit error at the key
        raise ProfileError(f"cannot convert values from {unit!r}: {exc}", where) from None
