"""Exports people open: CSV and spreadsheet (xlsx) files of a run, with units in the headers.

Column headers carry their unit in brackets: ``payload [degC]`` (a node or a boundary),
``heater [W]`` (a source), ``walls [W]`` (the heat flow through a link, positive from its first
point to its second). A name used by two kinds with the same unit (a link and a source both called
``heater``) is told apart by the kind: ``heater (source) [W]``, ``heater (link) [W]``.

Time: ``time [s]`` (elapsed since t = 0). When the scenario has a clock start
(``simulation.start``), the first column is ``time``, an ISO-8601 timestamp
(``2026-07-14T06:05:00``, with the start's UTC offset when it has one), and the elapsed seconds
follow as ``elapsed [s]``.

Numbers are written as the shortest text that reads back to the same double (Python's ``repr``):
``0.03``, never ``0.029999999999999999``, and a CSV read back equals the run's histories exactly.

A spreadsheet (:func:`write_xlsx`) has the sheets ``summary``, ``nodes``, ``limits``,
``histories``, ``heat flows``, ``energy`` and, with a scenario, ``inputs``. Every file is written
under a temporary name and renamed when complete.
"""

from __future__ import annotations

import math
import os

import numpy as np
import pandas as pd

from .errors import InputError

__all__ = ["history_table", "flow_table", "energy_table", "clock_columns", "format_number",
           "write_csv", "write_table_csv", "write_xlsx", "check_xlsx_rows", "summary_table",
           "limits_table", "XLSX_MAX_ROWS"]

#: Rows of one worksheet (the format's limit, less the header row).
XLSX_MAX_ROWS = 1_048_575


def format_number(value) -> str:
    """The shortest text that reads back to the same float; ``""`` for NaN.

    >>> format_number(0.1 + 0.2 - 0.27), format_number(0.03), format_number(float("nan"))
    ('0.030000000000000027', '0.03', '')
    >>> format_number(2.0), format_number(1e-20), format_number(float("inf"))
    ('2.0', '1e-20', 'inf')
    """
    x = float(value)
    return "" if math.isnan(x) else repr(x)


# -- columns ------------------------------------------------------------------------------------
def _offset_text(ts: pd.Timestamp) -> str:
    off = ts.utcoffset()
    if off is None:
        return ""
    minutes = int(off.total_seconds() // 60)
    if minutes == 0:
        return "Z"
    sign = "+" if minutes > 0 else "-"
    return f"{sign}{abs(minutes) // 60:02d}:{abs(minutes) % 60:02d}"


def _finest_unit(ns: np.ndarray) -> str:
    """The coarsest of s, ms, us, ns that shows every time of ``ns`` (nanoseconds) exactly."""
    for unit, size in (("s", 1_000_000_000), ("ms", 1_000_000), ("us", 1_000)):
        if not np.any(ns % size):
            return unit
    return "ns"


def clock_columns(time, start) -> pd.Series:
    """ISO-8601 timestamps ``start + time`` (``time`` in seconds), one string per sample.

    Whole seconds are written as ``2026-07-14T06:05:00``; finer times with as many decimals as
    they need. A start with a UTC offset keeps it on every stamp (``...T06:05:00+02:00``).

    >>> list(clock_columns([0.0, 300.0, 3600.5], "2026-07-14T06:00:00+02:00"))
    ['2026-07-14T06:00:00.000+02:00', '2026-07-14T06:05:00.000+02:00', '2026-07-14T07:00:00.500+02:00']
    """
    ts = pd.Timestamp(start)
    wall = ts.tz_localize(None) if ts.tzinfo is not None else ts
    offsets = np.round(np.asarray(time, dtype=float) * 1e9).astype("int64")
    stamps = np.datetime64(wall.to_datetime64(), "ns") + offsets.astype("timedelta64[ns]")
    unit = _finest_unit(stamps.astype("int64"))
    text = np.datetime_as_string(stamps, unit=unit)
    suffix = _offset_text(ts)
    return pd.Series(np.char.add(text.astype(str), suffix) if suffix else text, name="time")


def _unique_headers(groups) -> list[str]:
    """Headers ``name [unit]`` for groups of (kind, names, unit); the kind is added on a clash."""
    plain = [(kind, name, f"{name} [{unit}]") for kind, names, unit in groups for name in names]
    counts: dict[str, int] = {}
    for _, _, header in plain:
        counts[header] = counts.get(header, 0) + 1
    return [header if counts[header] == 1 else f"{name} ({kind}) [{header.rsplit('[', 1)[1]}"
            for kind, name, header in plain]


def _time_frame(result, clock: bool) -> pd.DataFrame:
    t = np.asarray(result.time, dtype=float)
    start = result.start_time if clock else None
    if start is None:
        return pd.DataFrame({"time [s]": t})
    return pd.DataFrame({"time": clock_columns(t, start).to_numpy(), "elapsed [s]": t})


def history_table(result, *, clock: bool = True, flows: bool = True) -> pd.DataFrame:
    """The run's histories as one table with units in the headers (what :func:`write_csv` writes).

    Columns: the time column(s) (see the module's docstring), then every recorded node
    ``[degC]``, every boundary ``[degC]``, every source ``[W]`` and every link's heat flow
    ``[W]``. ``clock=False`` leaves out the timestamps even when the run has a clock start;
    ``flows=False`` leaves out the heat flows.
    """
    temps, bounds = result.temperatures, result.boundary_temperatures
    sources = result.source_powers
    link_flows = result.heat_flows if flows else pd.DataFrame(index=temps.index)
    headers = _unique_headers([("node", list(temps.columns), "degC"),
                               ("boundary", list(bounds.columns), "degC"),
                               ("source", list(sources.columns), "W"),
                               ("link", list(link_flows.columns), "W")])
    blocks = [f.to_numpy(dtype=float) for f in (temps, bounds, sources, link_flows)]
    values = np.hstack([b.reshape(len(result.time), -1) for b in blocks])
    frame = pd.DataFrame(values, columns=headers)
    return pd.concat([_time_frame(result, clock), frame], axis=1)


def flow_table(result, *, clock: bool = True) -> pd.DataFrame:
    """Heat flow through every recorded link [W] with the time column(s)."""
    flows = result.heat_flows
    frame = pd.DataFrame(flows.to_numpy(dtype=float),
                         columns=[f"{c} [W]" for c in flows.columns])
    return pd.concat([_time_frame(result, clock), frame], axis=1)


def energy_table(result, *, clock: bool = True) -> pd.DataFrame:
    """Cumulative energies [J]: the change of stored energy, what entered through each boundary
    link and what each source gave, with the time column(s)."""
    energy = result.energy
    names = []
    for c in energy.columns:
        kind, _, name = c.partition(":")
        names.append("stored [J]" if c == "stored" else f"{name} ({kind}) [J]")
    frame = pd.DataFrame(energy.to_numpy(dtype=float), columns=names)
    return pd.concat([_time_frame(result, clock), frame], axis=1)


# -- CSV ------------------------------------------------------------------------------------------
def _check_suffix(path, suffixes, what) -> str:
    path = os.fspath(path)
    if os.path.splitext(path)[1].lower() not in suffixes:
        raise InputError(f"{what} should end with {' or '.join(suffixes)}", path,
                         f"give a file name such as run{suffixes[0]}")
    return path


def write_table_csv(frame: pd.DataFrame, path, *, index: bool = False) -> str:
    """Write any table to CSV with numbers in their shortest exact form; atomically.

    Sweep tables and other frames go through here too, so that ``0.03`` stays ``0.03``.
    """
    from .atomic import atomic_path

    path = _check_suffix(path, (".csv",), "a CSV file name")
    with atomic_path(path, ".csv.tmp") as tmp:
        # float_format=None: pandas writes each float as its shortest round-trip repr
        frame.to_csv(tmp, index=index, float_format=None, lineterminator="\n")
    return path


def write_csv(result, path, *, clock: bool = True) -> str:
    """Write the run's histories (:func:`history_table`) to a CSV file; returns the path."""
    return write_table_csv(history_table(result, clock=clock), path)


# -- tables for the spreadsheet --------------------------------------------------------------------
def limits_table(result) -> pd.DataFrame:
    """The limit table with hold and out times also in hours and, with a clock, as a date."""
    lim = result.limits.copy()
    if not len(lim):
        return lim
    lim["hold_time [h]"] = lim["hold_time [s]"] / 3600.0
    lim["time_out [h]"] = lim["time_out [s]"] / 3600.0
    start = result.start_time
    if start is not None:
        held = lim["hold_time [s]"].to_numpy(dtype=float)
        stamps = np.full(held.shape, "", dtype=object)
        ok = np.isfinite(held)
        if ok.any():
            stamps[ok] = clock_columns(held[ok], start).to_numpy()
        lim["leaves the band at"] = stamps
    return lim


def summary_table(result, scenario=None) -> pd.DataFrame:
    """One row per fact of the run: item, value, unit."""
    from .base import package_version

    t = np.asarray(result.time, dtype=float)
    energy = result.energy
    last = energy.iloc[-1] if len(energy) else pd.Series(dtype=float)
    rows = [("title", str(result.meta.get("title", "") or (scenario.title if scenario else "")), ""),
            ("scenario", scenario.name if scenario is not None else "", ""),
            ("rcsim version", package_version(), ""),
            ("solver", result.solver, ""),
            ("clock start", "" if result.start_time is None else result.start_time.isoformat(), ""),
            ("duration", float(t[-1] - t[0]) if t.size else math.nan, "s"),
            ("samples", int(t.size), ""),
            ("energy balance (relative closure error)", result.energy_balance, "-"),
            ("change of stored energy", float(last.get("stored", math.nan)), "J"),
            ("energy in through links", float(last[[c for c in last.index
                                                     if c.startswith("link:")]].sum()), "J"),
            ("energy from sources", float(last[[c for c in last.index
                                                 if c.startswith("source:")]].sum()), "J")]
    text = result.scenario
    if text:
        import hashlib

        rows.append(("scenario SHA-256", hashlib.sha256(text.encode("utf-8")).hexdigest(), ""))
    return pd.DataFrame(rows, columns=["item", "value", "unit"])


# -- xlsx -----------------------------------------------------------------------------------------
def _sheet(workbook, name: str, frame: pd.DataFrame, formats) -> None:
    """Write ``frame`` (header row, then values) into a new sheet, row by row (constant memory)."""
    sheet = workbook.add_worksheet(name)
    sheet.freeze_panes(1, 0)
    sheet.write_row(0, 0, [str(c) for c in frame.columns], formats["header"])
    widths = [max(10, min(40, len(str(c)) + 2)) for c in frame.columns]
    for j, w in enumerate(widths):
        sheet.set_column(j, j, w)
    columns = []
    for c in frame.columns:
        col = frame[c]
        if pd.api.types.is_datetime64_any_dtype(col):
            columns.append(("date", col.dt.to_pydatetime()))
        elif pd.api.types.is_numeric_dtype(col) and not pd.api.types.is_bool_dtype(col):
            columns.append(("number", col.to_numpy(dtype=float)))
        else:
            columns.append(("text", col.astype(object).to_numpy()))
    for i in range(len(frame)):
        for j, (kind, values) in enumerate(columns):
            v = values[i]
            if kind == "number":
                if math.isfinite(v):
                    sheet.write_number(i + 1, j, v)
                elif not math.isnan(v):
                    sheet.write_string(i + 1, j, "inf" if v > 0 else "-inf")
            elif kind == "date":
                if not pd.isna(v):
                    sheet.write_datetime(i + 1, j, v, formats["date"])
            elif v is not None and not (isinstance(v, float) and math.isnan(v)):
                if isinstance(v, (int, float, np.integer, np.floating)) and not isinstance(v, bool):
                    sheet.write_number(i + 1, j, float(v))
                else:
                    sheet.write_string(i + 1, j, str(v))


def _dated(table: pd.DataFrame, result) -> pd.DataFrame:
    """Replace the ISO text column of a table by real spreadsheet dates (local wall time)."""
    start = result.start_time
    if start is None or "time" not in table.columns:
        return table
    wall = start.tz_localize(None) if start.tzinfo is not None else start
    out = table.copy()
    out["time"] = wall + pd.to_timedelta(np.asarray(result.time, dtype=float), unit="s")
    offset = _offset_text(start)
    if offset:
        out = out.rename(columns={"time": f"time (UTC{offset if offset != 'Z' else ''})"})
    return out


def check_xlsx_rows(samples, path) -> None:
    """Refuse, before a run, a spreadsheet that would need more rows than a sheet holds.

    >>> check_xlsx_rows(1_048_575, "run.xlsx")
    >>> check_xlsx_rows(1_048_576, "run.xlsx")  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    rcsim.errors.InputError: run.xlsx: the run has 1048576 samples; a spreadsheet sheet holds ...
    """
    if samples is not None and samples > XLSX_MAX_ROWS:
        raise InputError(f"the run has {samples} samples; a spreadsheet sheet holds at most "
                         f"{XLSX_MAX_ROWS}", os.fspath(path),
                         "use a longer step, or write CSV (--csv) or HDF5 (-o) instead")


def write_xlsx(result, path, *, scenario=None) -> str:
    """Write a run to a spreadsheet: summary, nodes, limits, histories, heat flows, energy, inputs.

    ``histories`` holds the time (a spreadsheet date when the run has a clock start, then the
    elapsed seconds), node and boundary temperatures [degC] and source powers [W]; ``heat flows``
    the flow through every link [W]; ``energy`` the cumulative energies [J]; ``inputs`` (with a
    ``scenario``) one row per input value (kind, name, property, value, unit, as written).
    A run with more samples than a sheet holds (1,048,575) is refused: write CSV or HDF5.
    """
    import xlsxwriter

    from .atomic import atomic_path

    path = _check_suffix(path, (".xlsx",), "a spreadsheet file name")
    check_xlsx_rows(len(result.time), path)
    sheets = {"summary": summary_table(result, scenario),
              "nodes": result.nodes,
              "limits": limits_table(result),
              "histories": _dated(history_table(result, flows=False), result),
              "heat flows": _dated(flow_table(result), result),
              "energy": _dated(energy_table(result), result)}
    if scenario is not None:
        from .report.inputs import input_rows

        sheets["inputs"] = input_rows(scenario)
    with atomic_path(path, ".xlsx.tmp") as tmp:
        workbook = xlsxwriter.Workbook(tmp, {"constant_memory": True, "strings_to_numbers": False,
                                             "strings_to_formulas": False, "strings_to_urls": False})
        workbook.set_properties({"title": str(result.meta.get("title", "") or "rcsim run"),
                                 "comments": "written by rcsim"})
        formats = {"header": workbook.add_format({"bold": True, "text_wrap": True,
                                                  "valign": "top", "bottom": 1}),
                   "date": workbook.add_format({"num_format": "yyyy-mm-dd hh:mm:ss"})}
        try:
            for name, frame in sheets.items():
                _sheet(workbook, name, frame.reset_index(drop=True), formats)
        finally:
            workbook.close()
    return path
