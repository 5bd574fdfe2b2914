"""Fit capacities, resistances and starting states of a scenario to a logged temperature record.

A *log* is a table: a time column (seconds, or ISO-8601 timestamps) and temperature columns.
Columns named like a node (or mapped to one) are *measured*: the model is fitted to them. Columns
named like a boundary (or mapped to one) *drive* the model: the boundary follows the log (linear
between samples) instead of its profile in the scenario. The model starts at the log's first row;
with ``simulation.start`` and a log with timestamps, the scenario's own profiles are read from
(first timestamp - start) on (:class:`rcsim.profiles.Shifted`).

Any numeric value of the scenario can be *freed* by its key path (``nodes.block.capacity``,
``links.skin.resistance``, ``links.wall.parts[1].conduction.thickness``, ``nodes.block.initial``,
``boundaries.room.temperature``). The fit is weighted least squares
(:func:`scipy.optimize.least_squares`, trust-region reflective) on

    r_i = (T_measured(t_i) - T_model(t_i; theta)) / sigma_column

over every finite measured value. Values that must be positive (capacities, resistances, lengths,
...) are fitted as their logarithm, so they stay positive; temperatures and powers are fitted as
they are. Several starts guard against local minima.

Uncertainty comes from the Jacobian J at the optimum (the usual linearisation, as in
:func:`scipy.optimize.curve_fit` with ``absolute_sigma=False``)::

    cov = s^2 (J^T J)^-1,     s^2 = sum(r^2) / (n - p)

The standard error of a log-scale value x = ln(theta) gives std_error(theta) = theta * se(x) (the
delta method) and the interval exp(x +- t_{0.975,n-p} se(x)), which stays positive.

Speed: on a linear network the model runs on the exact modal path. Freed initial temperatures and
constant boundary temperatures or source powers enter the output linearly and leave the
eigen-decomposition as it is, so it is reused (and their Jacobian columns are exact differences);
only values that change capacities or conductances need a new decomposition. Networks the exact
path cannot take go through :meth:`rcsim.Network.simulate` per evaluation.

A fit supports, and never replaces, qualification testing and professional judgement: check the
fitted model against data it was not fitted to before predicting with it.
"""

from __future__ import annotations

import dataclasses
import math
import os
import re
import time as _time
import warnings
from collections import OrderedDict
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from .errors import DataError, InputError, RcsimWarning, ScenarioError, SolverError
from .materials import suggest
from .profiles import Constant, Shifted, Table, read_time_series
from .scenario import Scenario, load, loads, parse_key_path, quantity_kind
from .units import KINDS, to_si, ureg

__all__ = ["fit", "FitResult", "FitWarning", "Log", "read_log", "parse_bound"]

#: Lag-1 autocorrelation of residuals above which the model is called too simple (common
#: practice: a Durbin-Watson statistic below about 1, i.e. r1 above about 0.5).
AUTOCORRELATION_LIMIT = 0.5
#: |correlation| between two estimates above which they are reported as not separable.
CORRELATION_LIMIT = 0.95
#: A log-scale estimate whose 95 % interval spans more than this factor is called not identifiable.
WIDE_FACTOR = 4.0
#: A temperature estimate whose 95 % half-width exceeds this [K] is called not identifiable.
WIDE_KELVIN = 2.0

#: A positive value without bounds is kept within this factor of its starting value.
LOG_RANGE = 1e6

_TIME_NAMES = {"time", "t", "timestamp", "datetime", "date", "seconds", "elapsed", "time_s"}
_NA_TOKENS = {"", "nan", "na", "n/a", "null", "none", "-", "--"}
_LINEAR_KINDS = {"temperature", "temperature_difference", "power"}
_CHUNK_ELEMENTS = 400_000
_PENALTY = 1e6  # residual [K/sigma] given to a trial value the model cannot run


class FitWarning(RcsimWarning):
    """A fit is doubtful: values not identifiable, correlated, residuals autocorrelated, gaps."""


# ============================================================================================
# the log
# ============================================================================================
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


def _strip_unit(name: str) -> tuple[str, str | None]:
    m = re.match(r"^(.*?)\s*[\[(]\s*([^\])]+?)\s*[\])]\s*$", name)
    if m:
        return m.group(1).strip(), m.group(2)
    return name.strip(), None


def _find_time_column(columns, time, mapped_targets, names, label) -> str:
    if time is not None:
        if time not in columns:
            raise DataError(f"no time column {time!r}", label,
                            "columns are: " + ", ".join(map(repr, columns)))
        return time
    for c in columns:
        if _strip_unit(c)[0].lower() in _TIME_NAMES:
            return c
    first = columns[0]
    if first in mapped_targets or first in names:
        raise DataError(f"no time column (the first column {first!r} is a node or boundary)",
                        label, "add a column named 'time' (seconds or ISO-8601 timestamps) or "
                        "name the time column (time= / --time)")
    return first


def read_log(source, nodes, boundaries, *, columns=None, ignore=(), time=None, time_unit=None,
             max_gap=None, start=None) -> Log:
    """Read and check a log and match its columns to nodes and boundaries.

    Parameters
    ----------
    source : str, path or pandas.DataFrame
        A CSV file with a header row, or a DataFrame (time as a column, or as its index:
        numbers in ``time_unit`` or a DatetimeIndex).
    nodes, boundaries : list of str
        Names in the network (nodes may include internal ``<link>.<i>`` nodes).
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
    nodes, boundaries = list(nodes), list(boundaries)
    names = set(nodes) | set(boundaries)
    if isinstance(source, pd.DataFrame):
        label = "<data>"
        t_raw, frame, header, is_dt, origin, lines = _from_frame(source, time, time_unit, label,
                                                                columns, names)
    else:
        label = os.path.basename(os.fspath(source)) or os.fspath(source)
        t_raw, frame, header, is_dt, origin, lines = _from_csv(source, time, time_unit, label,
                                                               columns, names, start)
    used = [c for c in header if c not in ignore]
    for c in list(columns) + ignore:
        if c not in header:
            raise DataError(f"no column {c!r}", label, suggest(c, header) or
                            "columns are: " + ", ".join(map(repr, header)))
    targets = {}
    for c in used:
        target = columns.get(c, c)
        if target not in names:
            if c in columns:
                raise DataError(f"column {c!r} is mapped to {target!r}, which is no node or "
                                "boundary", label, suggest(target, sorted(names)))
            raise DataError(f"column {c!r} matches no node or boundary", label,
                            f"map it to one (columns= / --map {c}=NAME; names: "
                            f"{', '.join(sorted(names)[:8])}) or leave it out (ignore= / --ignore)")
        if target in targets.values():
            other = next(k for k, v in targets.items() if v == target)
            raise DataError(f"columns {other!r} and {c!r} both give {target!r}", label,
                            "map one of them elsewhere or leave it out")
        targets[c] = target
    measured = [c for c in used if targets[c] in set(nodes)]
    inputs = [c for c in used if targets[c] in set(boundaries)]
    if not measured:
        raise DataError("no column is matched to a node, so there is nothing to fit", label,
                        f"name a column after a node ({', '.join(nodes[:8])}) or map it "
                        "(columns= / --map COLUMN=NODE)")
    if t_raw.size < 2:
        raise DataError("needs at least two rows", label)
    t = t_raw - t_raw[0]
    values = frame[used].copy()
    values.index = pd.Index(t, name="time [s]")
    for c in used:
        if not np.isfinite(values[c].to_numpy()).any():
            raise DataError(f"column {c!r} has no numeric values", label)
    dt = np.diff(t)
    if max_gap is None:
        gap_limit = 5.0 * float(np.median(dt))
    else:
        gap_limit = to_si(max_gap, "time", "max_gap")
        if gap_limit <= 0:
            raise InputError(f"max_gap must be positive, got {max_gap!r}", "max_gap")
    gaps = _find_gaps(t, values, gap_limit, lines)
    start_time = origin if is_dt else None
    return Log(t, values, targets, measured, inputs, start_time, label, lines, gaps, gap_limit,
               0.0 if is_dt else float(t_raw[0]))


def _from_csv(path, time, time_unit, label, columns, names, start):
    path = os.fspath(path)
    if os.path.isdir(path):
        raise DataError("is a directory, not a CSV file", label)
    if not os.path.exists(path):
        raise DataError("file not found", label, f"looked for {os.path.abspath(path)}")
    from .profiles import read_csv_text

    raw = read_csv_text(path, label)
    header_all = list(raw.columns)
    tcol = _find_time_column(header_all, time, set(columns), names, label)
    if time_unit is None:
        time_unit = _strip_unit(tcol)[1] or "s"
    try:
        to_si(f"1 {time_unit}", "time", "time unit")
    except InputError:
        raise DataError(f"time column {tcol!r}: {time_unit!r} is not a unit of time", label,
                        "write e.g. 'time [s]' or 'time [min]'") from None
    header = [c for c in header_all if c != tcol]
    if not header:
        raise DataError("has only a time column", label, "add temperature columns")
    # times, increasing, and values: the shared reader (NaN where a cell is not a number)
    frame = read_time_series(path, header, time=tcol, start=start, time_unit=time_unit,
                             missing="interpolate", where=label)
    # text that is not a missing-value marker is an error, not a silent gap
    for c in header:
        bad = ~np.isfinite(frame[c].to_numpy())
        if bad.any():
            text = raw[c].str.strip()
            wrong = bad & ~text.str.lower().isin(_NA_TOKENS).to_numpy()
            if wrong.any():
                i = int(np.argmax(wrong))
                raise DataError(f"column {c!r} line {i + 2} is not a number ({text.iloc[i]!r})",
                                label, "fix the cell, or leave it empty to mark a missing value")
    t = frame.index.to_numpy(dtype=float)
    is_dt = bool(frame.attrs.get("is_datetime", False))
    origin = None
    if is_dt:
        stamps = pd.to_datetime(raw[tcol].str.strip(), format="ISO8601")
        origin = stamps.iloc[0]
    frame = frame.reset_index(drop=True)
    return t, frame, header, is_dt, origin, np.arange(t.size) + 2


def _from_frame(df, time, time_unit, label, columns, names):
    df = df.copy()
    df.columns = [str(c).strip() for c in df.columns]
    if df.shape[0] == 0:
        raise DataError("has no rows", label)
    header_all = list(df.columns)
    index_is_time = (time is None and not any(_strip_unit(c)[0].lower() in _TIME_NAMES
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
    if time_unit is None:
        time_unit = _strip_unit(tname)[1] or "s"
    factor = to_si(f"1 {time_unit}", "time", "time_unit")
    origin = None
    if isinstance(tvals, pd.DatetimeIndex) or pd.api.types.is_datetime64_any_dtype(tvals):
        stamps = pd.Series(pd.to_datetime(tvals)).reset_index(drop=True)
        if stamps.isna().any():
            i = int(np.argmax(stamps.isna().to_numpy()))
            raise DataError(f"time {tname!r} row {i} is missing", label)
        origin = stamps.iloc[0]
        t = (stamps - origin).dt.total_seconds().to_numpy(dtype=float)
        is_dt = True
    else:
        t = pd.to_numeric(pd.Series(np.asarray(tvals)), errors="coerce").to_numpy(dtype=float)
        if not np.isfinite(t).all():
            i = int(np.argmax(~np.isfinite(t)))
            raise DataError(f"time {tname!r} row {i} is not a number ({np.asarray(tvals)[i]!r})",
                            label)
        t = t * factor
        is_dt = False
    d = np.diff(t)
    if (d <= 0).any():
        i = int(np.argmax(d <= 0)) + 1
        raise DataError(f"time does not increase at row {i} ({t[i]:g} s after {t[i - 1]:g} s)",
                        label, "sort the rows and remove duplicates")
    header = [c for c in header_all if c != tcol]
    out = {}
    for c in header:
        col = df[c].reset_index(drop=True)
        vals = pd.to_numeric(col, errors="coerce").to_numpy(dtype=float, copy=True)
        bad = ~np.isfinite(vals)
        if bad.any():
            text = col.astype(str).str.strip().str.lower()
            wrong = bad & ~(col.isna().to_numpy() | text.isin(_NA_TOKENS).to_numpy())
            if wrong.any():
                i = int(np.argmax(wrong))
                raise DataError(f"column {c!r} row {i} is not a number ({col.iloc[i]!r})",
                                label, "fix the value, or use NaN to mark a missing value")
            vals[bad] = np.nan
        out[c] = vals
    frame = pd.DataFrame(out)
    return t, frame, header, is_dt, origin, np.arange(t.size)


def _find_gaps(t, values, limit, lines) -> pd.DataFrame:
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


# ============================================================================================
# the free values
# ============================================================================================
@dataclass
class _Param:
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
        return np.log(v) if self.log else v

    def from_x(self, x):
        return float(np.exp(x)) if self.log else float(x)


def parse_bound(text: str, where: str = "--bound"):
    """``"KEY=LOW..HIGH"`` -> (key, low, high); either side may be empty (open)."""
    if not isinstance(text, str) or "=" not in text or ".." not in text.split("=", 1)[1]:
        raise InputError(f"bound {text!r} is not KEY=LOW..HIGH", where,
                         "write e.g. nodes.block.capacity=1kJ/K..20kJ/K")
    key, rng = text.split("=", 1)
    lo, hi = rng.split("..", 1)
    return key.strip(), (lo.strip() or None), (hi.strip() or None)


def _make_params(sc: Scenario, free, bounds, log: Log) -> list[_Param]:
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
    bounds = dict(bounds or {})
    for k in bounds:
        if k not in free:
            raise InputError(f"a bound is given for {k!r}, which is not freed", "bounds",
                             suggest(k, free) or "free it too, or drop the bound")
    measured_boundaries = {log.targets[c] for c in log.inputs}
    params = []
    for key in free:
        tokens = parse_key_path(key, sc.name)
        where = f"{sc.name}: {key}"
        if tokens[0] not in ("nodes", "links", "boundaries", "sources"):
            raise ScenarioError("only values under nodes, links, boundaries and sources change "
                                "the model's temperatures", where)
        raw = sc.value(key)
        if isinstance(raw, (dict, list)):
            inner = "sine.mean" if isinstance(raw, dict) and "sine" in raw else "..."
            raise ScenarioError("holds a table, not a number", where,
                                f"free one of its numbers, e.g. {key}.{inner}")
        kind = _fit_kind(tokens)
        if kind is None or isinstance(raw, bool):
            raise ScenarioError("does not hold a physical quantity that can be fitted", where)
        value = to_si(raw, kind, where)
        tier, target = "rebuild", None
        if tokens[0] == "nodes" and tokens[-1] == "initial" and len(tokens) == 3:
            if sc.settings.initial != "given":
                raise ScenarioError(f"the run starts from the {sc.settings.initial} state, so "
                                    "initial temperatures are not used", where,
                                    "set simulation.initial = 'given' to fit a starting state")
            tier, target = "initial", tokens[1]
        elif tokens[0] == "boundaries" and len(tokens) >= 3:
            if tokens[1] in measured_boundaries:
                col = next(c for c in log.inputs if log.targets[c] == tokens[1])
                raise ScenarioError(f"boundary {tokens[1]!r} follows log column {col!r}, so its "
                                    "scenario values are not used", where,
                                    f"leave the column out (--ignore {col}) to fit it")
            if tokens[2:] in (["temperature"], ["temperature", "constant"]):
                tier, target = "constant", tokens[1]
        elif tokens[0] == "sources" and tokens[2:] in (["power"], ["power", "constant"]):
            tier, target = "constant", tokens[1]
        positive = kind not in _LINEAR_KINDS
        if positive and value <= 0:
            raise ScenarioError(f"is {value:g}; a value fitted on a log scale must start "
                                "positive", where, "give a positive starting guess")
        p = _Param(key, kind, tier, target, positive, value, raw=raw)
        if key in bounds:
            lo, hi = bounds[key]
            p.lo = -math.inf if lo is None else to_si(lo, kind, f"bound of {key}")
            p.hi = math.inf if hi is None else to_si(hi, kind, f"bound of {key}")
            if p.lo >= p.hi:
                raise InputError(f"bound of {key}: low {p.lo:g} is not below high {p.hi:g}",
                                 "bounds")
            if positive and p.lo <= 0:
                p.lo = -math.inf  # a log-scale value is positive anyway
        params.append(p)
    return params


def _fit_kind(tokens) -> str | None:
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


# ============================================================================================
# the model
# ============================================================================================
def _log_offset(sc: Scenario, log: Log, varies: bool = True) -> float:
    """Where the log's first row lies on the scenario's clock [s after its t = 0].

    Without ``simulation.start`` the scenario's t = 0 is the log's first row (0.0). With a start,
    a log with timestamps begins (first timestamp - start) after it; a log with numeric times
    must begin at 0 (then both readings of its numbers agree). When nothing of the scenario
    varies in time (``varies`` False) the placement does not matter and is 0.0.

    Raises
    ------
    ScenarioError
        A log that begins before the start, numeric log times that do not begin at 0, or
        timestamps and start that disagree on time zones (one has a UTC offset, the other not).
    """
    start = sc.settings.start
    if start is None or not varies:
        return 0.0
    where = f"{sc.name}: simulation.start"
    if log.start_time is None:
        if log.first_time == 0.0:
            return 0.0
        raise ScenarioError(f"the times of {log.name} are numbers starting at "
                            f"{log.first_time:g} s, which cannot be placed against the start "
                            f"{start}", where, "give the log ISO-8601 timestamps, or let its "
                            "times start at 0, meaning the start")
    origin = pd.Timestamp(start)
    if (origin.tzinfo is None) != (log.start_time.tzinfo is None):
        raise ScenarioError(f"the start {start} and the timestamps of {log.name} disagree on "
                            "time zones (one has a UTC offset, the other not)", where,
                            "give both with or both without a UTC offset")
    offset = (log.start_time - origin).total_seconds()
    if offset < 0:
        raise ScenarioError(f"{log.name} begins at {log.start_time}, before the start {start} "
                            "where the scenario's profiles begin", where,
                            "set simulation.start at or before the log's first time, or leave "
                            "out the earlier rows")
    return float(offset)


class _Model:
    """Model temperatures at the log's times, as a function of the free values (SI)."""

    def __init__(self, sc: Scenario, log: Log, params: list[_Param], solver: str):
        from .modes import DENSE_LIMIT
        from .statespace import state_space
        from .transient.driver import EXACT_LIMIT

        self.sc, self.log, self.params = sc, log, params
        self.t = log.time
        net = sc.network
        asm = net.assemble()
        self.node_idx = np.array([asm.node_index(log.targets[c]) for c in log.measured])
        self.measured_nodes = [log.targets[c] for c in log.measured]
        self.tables = {}
        for c in log.inputs:
            vals = log.values[c].to_numpy()
            ok = np.isfinite(vals)
            b = log.targets[c]
            self.tables[b] = Table(self.t[ok], vals[ok], outside="hold").bind(
                "temperature", f"{log.name}: column {c!r}")
        own = [p for nm, p in zip(asm.boundary_names, asm.boundary_profiles)
               if nm not in self.tables] + list(asm.source_profiles)
        self.offset = _log_offset(sc, log, varies=any(not p.is_constant for p in own))
        for prof in own:
            prof.check_span(self.offset, self.offset + float(self.t[-1]))
        nonlinear = not asm.is_linear or bool(getattr(net, "thermostats", None))
        n_states = state_space(asm).n
        from .transient.driver import SOLVERS  # the one list of solver names

        if solver not in SOLVERS:
            raise InputError(f"solver must be one of {', '.join(map(repr, SOLVERS))}, got "
                             f"{solver!r}", "solver", suggest(str(solver), list(SOLVERS)))
        if solver == "exact" and (nonlinear or n_states > min(DENSE_LIMIT, EXACT_LIMIT)):
            raise InputError("the exact path needs a linear network of at most "
                             f"{min(DENSE_LIMIT, EXACT_LIMIT)} states", "solver",
                             "use solver='auto' or 'stiff'")
        mode = sc.settings.initial
        self.fast = (solver != "stiff" and not nonlinear and mode in ("given", "steady")
                     and n_states <= min(DENSE_LIMIT, EXACT_LIMIT))
        self.solver = "exact" if self.fast else (solver if solver in ("stiff", "piecewise")
                                                 else "auto")
        if mode == "periodic" and self.fast is False and self.tables:
            raise ScenarioError("a periodic start is not defined when a boundary follows a log",
                                f"{sc.name}: simulation.initial",
                                "use initial = 'given' (and free the starting temperatures)")
        self._cache: OrderedDict = OrderedDict()
        self.n_evaluations = 0
        self.n_decompositions = 0

    # -- building blocks ---------------------------------------------------------------------
    def _shift(self, prof):
        """A scenario profile read on the log's clock (t = 0 at the log's first row)."""
        return Shifted(prof, self.offset) if self.offset else prof

    def _rebuild_values(self, values):
        return {p.key: v for p, v in zip(self.params, values) if p.tier == "rebuild"}

    def _structure(self, values):
        """(network, assembled) for the values that need a rebuild; cached (LRU)."""
        from .modes import modal_decomposition

        rv = self._rebuild_values(values)
        key = tuple(sorted(rv.items()))
        hit = self._cache.get(key)
        if hit is not None:
            self._cache.move_to_end(key)
            return hit
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # warnings of trial values are not the user's
            sc = self.sc.with_values(rv) if rv else self.sc
            net = sc.network
            asm = net.assemble()
        if self.fast:
            modal_decomposition(asm)  # computed once per structure, cached on asm
            self.n_decompositions += 1
        self._cache[key] = (net, asm)
        if len(self._cache) > 16:
            self._cache.popitem(last=False)
        return net, asm

    def outputs(self, values, times=None) -> np.ndarray:
        """Model temperatures (n_times, n_measured) for the free values (SI).

        At the log's times, or at ``times`` (increasing, from 0 to the log's end).
        """
        self.n_evaluations += 1
        values = [float(v) for v in values]
        if times is not None:
            saved, self.t = self.t, np.asarray(times, dtype=float)
            try:
                return self.outputs(values)
            finally:
                self.t = saved
        if not self.fast:
            return self._outputs_general(values)
        return self._outputs_exact(values)

    def _outputs_exact(self, values) -> np.ndarray:
        from .modes import modal_decomposition
        from .statespace import state_space
        from .steady import steady_temperatures
        from .transient.exact import ExactPropagator
        from .transient.initial import given_temperatures

        net, asm0 = self._structure(values)
        bprof = [self.tables[nm] if nm in self.tables else self._shift(p)
                 for nm, p in zip(asm0.boundary_names, asm0.boundary_profiles)]
        sprof = [self._shift(p) for p in asm0.source_profiles]
        overrides = {}
        for p, v in zip(self.params, values):
            if p.tier == "initial":
                overrides[p.target] = v
            elif p.tier == "constant" and p.key.startswith("boundaries."):
                bprof[asm0.boundary_names.index(p.target)] = Constant(v).bind("temperature", p.key)
            elif p.tier == "constant":
                sprof[asm0.source_names.index(p.target)] = Constant(v).bind("power", p.key)
        asm = dataclasses.replace(asm0, boundary_profiles=bprof, source_profiles=sprof)
        # the inputs changed, not K or C: hand the cached reduced system and modes over
        asm._state_space = state_space(asm0)
        asm._modes = modal_decomposition(asm0)
        prop = ExactPropagator(asm)
        ss = prop.ss
        u0 = asm.boundary_values(0.0)
        if self.sc.settings.initial == "steady":
            T0 = steady_temperatures(asm, u0, asm.source_values(0.0))
        else:
            T0 = given_temperatures(net, asm, overrides, u0)
        z0 = prop.z_from_temperatures(T0[ss.massive])
        A, D = prop.output_maps(self.node_idx)
        t = self.t
        n = prop.lam.size + prop.n_inputs
        chunk = max(512, _CHUNK_ELEMENTS // max(1, n))
        Z = np.empty((t.size, prop.lam.size))
        Z[0] = z0
        k0, z = 0, z0
        while k0 < t.size - 1:  # chunks bound memory on long logs; no loop over time steps
            k1 = min(t.size - 1, k0 + chunk)
            Zc, _, _ = prop.propagate(t[k0:k1 + 1], z)
            Z[k0 + 1:k1 + 1] = Zc
            z = Zc[-1]
            k0 = k1
        w = prop.inputs_at(t)
        return Z @ A.T + w @ D.T

    def _outputs_general(self, values) -> np.ndarray:
        subst = {}
        for p, v in zip(self.params, values):
            subst[p.key] = v
        for b, tab in self.tables.items():
            subst[f"boundaries.{b}.temperature"] = {"table": {
                "times": tab.times.tolist(), "values": tab.values.tolist(), "outside": "hold"}}
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            sc = self.sc.with_values(subst)
            if self.offset:  # the scenario's own profiles, read on the log's clock
                for item in [b for b in sc.network.boundaries.values()
                             if b.name not in self.tables] + list(sc.network.sources.values()):
                    item.profile = self._shift(item.profile)
                sc.network._changed()
            res = sc.network.simulate(float(self.t[-1]), float(self.t[-1]), times=self.t,
                                      record=sorted(set(self.measured_nodes)),
                                      initial=sc.settings.initial,
                                      solver=self.solver if self.solver in ("stiff", "piecewise") else "auto",
                                      rtol=min(sc.settings.rtol, 1e-7),
                                      atol=min(sc.settings.atol, 1e-7))
        temps = res.temperatures
        return temps[self.measured_nodes].to_numpy(dtype=float)


# ============================================================================================
# the result
# ============================================================================================
@dataclass
class FitResult:
    """What a fit found.

    Attributes
    ----------
    estimates : DataFrame
        Index: key path; columns ``value``, ``std_error``, ``ci_low``, ``ci_high`` (SI; degC for
        temperatures, K for their standard errors). The interval is 95 %.
    correlation : DataFrame
        Correlation matrix of the estimates.
    covariance : DataFrame
        Covariance of the fitted coordinates (log of positive values, the value itself for
        temperatures and powers).
    rmse : float
        Root mean square of measured - fitted over every measured value [K].
    rmse_by_column : Series
        The same per log column [K].
    autocorrelation : Series
        Lag-1 autocorrelation of the residuals per log column.
    warnings : list of str
        What the fit warned about (also issued as :class:`FitWarning`).
    residuals, measured, fitted : DataFrame
        Measured - fitted, measured and fitted temperatures at the log's times (index time [s],
        one column per measured log column).
    curve : DataFrame
        The fitted model on an even grid over the log's span (joined with the log's times), so
        that it can be drawn across gaps.
    inputs : DataFrame
        The log columns that drove boundaries.
    fitted_scenario : rcsim.Scenario
        The scenario with the estimates written in.
    starts : DataFrame
        Each start: its values, final cost and status.
    """

    estimates: pd.DataFrame
    correlation: pd.DataFrame
    covariance: pd.DataFrame
    rmse: float
    rmse_by_column: pd.Series
    autocorrelation: pd.Series
    warnings: list
    residuals: pd.DataFrame
    measured: pd.DataFrame
    fitted: pd.DataFrame
    curve: pd.DataFrame
    inputs: pd.DataFrame
    fitted_scenario: Scenario
    starts: pd.DataFrame
    units: dict = field(default_factory=dict)
    targets: dict = field(default_factory=dict)
    log_name: str = ""
    start_time: pd.Timestamp | None = None
    n_points: int = 0
    dof: int = 0
    solver: str = ""
    n_evaluations: int = 0
    n_decompositions: int = 0
    wall_time: float = 0.0
    gaps: pd.DataFrame | None = None
    time_constants: np.ndarray | None = None
    _categories: list = field(default_factory=list, repr=False)

    @property
    def time(self) -> np.ndarray:
        """Times of the log's rows [s] from the first row."""
        return self.measured.index.to_numpy(dtype=float)

    def table(self) -> pd.DataFrame:
        """The estimates with their display unit and the starting values (for printing/CSV)."""
        out = self.estimates.copy()
        out["unit"] = [_si_unit(self.units.get(k, "")) for k in out.index]
        out["start"] = self.starts.iloc[0][list(out.index)].to_numpy(dtype=float) \
            if len(self.starts) else np.nan
        return out

    def to_csv(self, path) -> str:
        """Write :meth:`table` to a CSV file (temporary name, renamed when complete)."""
        text = self.table().to_csv(index_label="key")
        return _write_text_atomic(path, text)

    def to_toml(self) -> str:
        """The fitted scenario as TOML text, with a comment header giving the estimates."""
        from . import tomlwrite

        sc = self.fitted_scenario
        lines = [f"# Fitted to {self.log_name} by rcsim fit: {self.n_points} measured values, "
                 f"RMSE {self.rmse:.4g} K.", "# estimate +- standard error (95 % interval):"]
        for k, row in self.estimates.iterrows():
            u = _si_unit(self.units.get(k, ""))
            lines.append(f"#   {k} = {row['value']:.6g} +- {row['std_error']:.3g} "
                         f"({row['ci_low']:.6g} .. {row['ci_high']:.6g}) {u}".rstrip())
        for w in self.warnings:
            lines.append(f"# warning: {w}")
        lines.append("# A fitted model supports, and never replaces, qualification testing and "
                     "professional judgement.")
        return "\n".join(lines) + "\n\n" + tomlwrite.dumps(sc.data)

    def write_scenario(self, path) -> str:
        """Write the fitted scenario to ``path`` (TOML), checked by reading it back.

        Relative CSV file paths in the scenario are rewritten relative to the new folder.
        """
        from . import tomlwrite

        path = os.fspath(path)
        folder = os.path.dirname(os.path.abspath(path))
        sc = self.fitted_scenario
        data = _relocate_csv_paths(sc.data, sc.base_dir, folder)
        header = self.to_toml().split("\n\n", 1)[0]
        text = header + "\n\n" + tomlwrite.dumps(data)
        check = loads(text, name=os.path.basename(path), base_dir=folder,
                      allow_absolute_paths=sc.allow_absolute_paths)
        for k, row in self.estimates.iterrows():
            got = to_si(check.value(k), self.units[k], k)
            if not math.isclose(got, row["value"], rel_tol=1e-9, abs_tol=1e-9):
                raise SolverError(f"the written scenario reads back {k} = {got!r}, not "
                                  f"{row['value']!r}")  # pragma: no cover - a bug if reached
        return _write_text_atomic(path, text)

    def plot(self, **kwargs):
        """Measured vs fitted with residuals below (see :func:`rcsim.plotting.plot_fit`)."""
        from .plotting import plot_fit

        return plot_fit(self, **kwargs)


def _si_unit(kind: str) -> str:
    if not kind:
        return ""
    if kind == "temperature":
        return "degC"
    return KINDS[kind][0].replace("**", "^")


def _relocate_csv_paths(data, old_dir, new_dir):
    import copy

    data = copy.deepcopy(data)

    def walk(node):
        if isinstance(node, dict):
            for k, v in node.items():
                if k == "csv" and isinstance(v, dict) and isinstance(v.get("file"), str) \
                        and not os.path.isabs(v["file"]):
                    full = os.path.normpath(os.path.join(old_dir, v["file"]))
                    v["file"] = os.path.relpath(full, new_dir).replace(os.sep, "/")
                else:
                    walk(v)
        elif isinstance(node, list):
            for v in node:
                walk(v)

    if os.path.abspath(old_dir) != os.path.abspath(new_dir):
        walk(data)
    return data


def _write_text_atomic(path, text: str) -> str:
    from .atomic import atomic_path

    try:
        with atomic_path(path) as tmp, open(tmp, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
    except OSError as exc:
        raise DataError(f"cannot write ({exc.strerror})", os.fspath(path)) from None
    return os.fspath(path)


# ============================================================================================
# fit
# ============================================================================================
def fit(scenario, data, free, *, columns=None, ignore=(), bounds=None, sigma=None, time=None,
        time_unit=None, max_gap=None, starts=4, solver="auto", seed=0) -> FitResult:
    """Fit freed values of a scenario to a logged record.

    Parameters
    ----------
    scenario : rcsim.Scenario or path
        The model; its values are the starting guesses.
    data : path or pandas.DataFrame
        The log (see :func:`read_log`).
    free : list of str
        Key paths of the values to fit, e.g. ``["nodes.block.capacity",
        "links.skin.resistance", "nodes.block.initial"]``.
    columns : dict, optional
        ``{"log column": "node or boundary"}`` for columns not named after one.
    ignore : sequence of str
        Log columns to leave out.
    bounds : dict, optional
        ``{key: (low, high)}``, numbers (SI) or strings with units; None for an open side.
    sigma : float or dict, optional
        Measurement standard deviation [K], one for all columns or per column; sets the
        relative weights. By default each column is weighted by the spread of its residuals
        after a first fit.
    time, time_unit, max_gap : optional
        See :func:`read_log`.
    starts : int
        Number of starts (the scenario's values, then points spread around them or inside the
        bounds). Only values that need a rebuild are varied; the others enter linearly.
    solver : 'auto', 'exact', 'piecewise' or 'stiff'
        'auto' uses the exact modal path where it applies.
    seed : int
        Seed of the spread of starts.

    Returns
    -------
    FitResult

    Raises
    ------
    InputError
        Bad scenario, log, key path or bound (the message names the file, key, column or line);
        a log that cannot be placed against ``simulation.start`` (see :func:`_log_offset`).
    """
    wall0 = _time.perf_counter()
    sc = scenario if isinstance(scenario, Scenario) else load(scenario)
    if not isinstance(starts, int) or isinstance(starts, bool) or starts < 1:
        raise InputError(f"starts must be a positive whole number, got {starts!r}", "starts")
    asm = sc.network.assemble()
    log = read_log(data, asm.node_names, asm.boundary_names, columns=columns, ignore=ignore,
                   time=time, time_unit=time_unit, max_gap=max_gap)
    params = _make_params(sc, free, bounds, log)
    notes: list[str] = []
    for column, g in log.gaps.groupby("column", sort=False):
        kind = "interpolated linearly across" if column in log.inputs else \
            "skipped in the residuals"
        worst = g.loc[g["length [s]"].idxmax()]
        where = (f"{_fmt_span(worst['length [s]'])} (from {_fmt_span(worst['from [s]'])} after "
                 f"the start, line {worst['line']})")
        what = f"no value for {where}" if len(g) == 1 else \
            f"{len(g)} spans without a value, the longest {where}"
        notes.append(f"{log.name}: column {column!r} has {what}, longer than the "
                     f"{_fmt_span(log.max_gap)} allowed; {kind}")
    model = _Model(sc, log, params, solver)
    Y = log.values[log.measured].to_numpy(dtype=float)
    mask = np.isfinite(Y)
    n_points = int(mask.sum())
    if n_points <= len(params):
        raise DataError(f"{n_points} measured values cannot determine {len(params)} free "
                        "values", log.name, "log more data or free fewer values")
    weights = _column_weights(sigma, log)
    # starting guesses: a freed initial temperature of a measured node starts at its first value
    for p in params:
        if p.tier == "initial":
            for j, c in enumerate(log.measured):
                if log.targets[c] == p.target and np.isfinite(Y[0, j]):
                    p.start = float(Y[0, j])
        if not (p.lo <= p.start <= p.hi):
            clipped = min(max(p.start, p.lo), p.hi)
            notes.append(f"{p.key}: the starting value {p.start:.6g} lies outside its bound; "
                         f"started at {clipped:.6g} instead")
            p.start = clipped
    problem = _Problem(model, params, Y, mask, weights)
    x_starts = _starting_points(params, starts, seed)
    runs = []
    for x0 in x_starts:
        runs.append(problem.solve(x0))
    best = min(runs, key=lambda r: r.cost)
    # other starts that ended elsewhere with about as good a fit (compared under one weighting)
    rivals = sum(1 for rn in runs if rn is not best and rn.cost <= best.cost * 1.01 + 1e-300
                 and np.max(np.abs(rn.x - best.x)) > 0.1)
    if sigma is None and len(log.measured) > 1:
        # weight each column by the spread of its own residuals, then refine from the optimum
        r = problem.residual_matrix(best.x)
        spread = np.sqrt(np.nanmean(np.where(mask, r, np.nan) ** 2, axis=0))
        problem.set_weights(1.0 / np.maximum(spread, 1e-12))
        best = problem.solve(best.x)
        runs.append(best)
    result = _summarise(problem, best, runs, log, sc, notes, rivals)
    result.wall_time = _time.perf_counter() - wall0
    for text, category in zip(result.warnings, result._categories):
        warnings.warn(text, category, stacklevel=2)
    return result


def _fmt_span(seconds) -> str:
    s = float(seconds)
    if s < 120:
        return f"{s:.3g} s"
    if s < 7200:
        return f"{s / 60:.3g} min"
    if s < 4 * 86400:
        return f"{s / 3600:.3g} h"
    return f"{s / 86400:.3g} d"


def _column_weights(sigma, log: Log) -> np.ndarray:
    cols = log.measured
    if sigma is None:
        return np.ones(len(cols))
    if isinstance(sigma, dict):
        for c in sigma:
            if c not in cols:
                raise InputError(f"sigma is given for {c!r}, which is no measured column",
                                 "sigma", suggest(c, cols))
        vals = [to_si(sigma.get(c, 1.0), "temperature_difference", f"sigma.{c}") for c in cols]
    else:
        vals = [to_si(sigma, "temperature_difference", "sigma")] * len(cols)
    vals = np.asarray(vals, dtype=float)
    if (vals <= 0).any():
        raise InputError("sigma must be positive", "sigma")
    return 1.0 / vals


def _starting_points(params, n, seed) -> list[np.ndarray]:
    x0 = np.array([p.to_x(p.start) for p in params], dtype=float)
    vary = [i for i, p in enumerate(params) if p.tier == "rebuild"]
    points = [x0]
    if not vary or n == 1:
        return points
    rng = np.random.default_rng(seed)
    # a Latin-hypercube spread: each varied value covers its range once per start
    m = n - 1
    points += [x0.copy() for _ in range(m)]
    for i in vary:
        p = params[i]
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


def _x_limits(params):
    """Bounds of the fitted coordinates. A positive value without bounds stays within a factor
    LOG_RANGE of its start, which keeps trial values physical (and exp() finite)."""
    lo = np.array([p.to_x(p.lo) if np.isfinite(p.lo) else
                   (p.to_x(p.start) - math.log(LOG_RANGE) if p.log else -np.inf) for p in params])
    hi = np.array([p.to_x(p.hi) if np.isfinite(p.hi) else
                   (p.to_x(p.start) + math.log(LOG_RANGE) if p.log else np.inf) for p in params])
    return lo, hi


@dataclass
class _Run:
    x: np.ndarray
    cost: float
    status: int
    message: str
    nfev: int
    x0: np.ndarray


class _Problem:
    """Weighted residuals and their Jacobian in the fitted coordinates x."""

    def __init__(self, model: _Model, params, Y, mask, weights):
        self.model, self.params, self.Y, self.mask = model, params, Y, mask
        self.weights = np.asarray(weights, dtype=float)
        self._last = (None, None)

    def set_weights(self, weights) -> None:
        self.weights = np.asarray(weights, dtype=float)
        self._last = (None, None)

    def values(self, x):
        return [p.from_x(xi) for p, xi in zip(self.params, x)]

    def residual_matrix(self, x) -> np.ndarray:
        """Measured - model (n_times, n_columns), unweighted."""
        return self.Y - self.model.outputs(self.values(x))

    def residuals(self, x) -> np.ndarray:
        x = np.asarray(x, dtype=float)
        if self._last[0] is not None and np.array_equal(self._last[0], x):
            return self._last[1]
        r = self._eval(x)
        self._last = (x.copy(), r)
        return r

    def jacobian(self, x, central: bool = False) -> np.ndarray:
        """d residuals / d x.

        Values entering the output linearly get exact differences. The others get forward
        differences while searching (one model run each; the model is exact to rounding, so a
        step of 1e-7 loses about half the digits) and central differences (step 1e-4, error
        of order 1e-8) for the covariance at the optimum. A model run by a tolerance-controlled
        integrator (not the exact path) is noisier, so its steps are larger (1e-4 and 1e-3).
        """
        exact = self.model.fast
        h_fwd, h_ctr = (1e-7, 1e-4) if exact else (1e-4, 1e-3)
        x = np.asarray(x, dtype=float)
        r0 = self.residuals(x)
        J = np.empty((r0.size, x.size))
        for i, p in enumerate(self.params):
            if p.tier in ("initial", "constant") and not p.log:
                step = 1.0  # linear in the output: any step is exact
                xp = x.copy()
                xp[i] += step
                J[:, i] = (self._eval(xp) - r0) / step
            elif central:
                step = h_ctr * (1.0 if p.log else max(1.0, abs(x[i])))
                xp, xm = x.copy(), x.copy()
                xp[i] += step
                xm[i] -= step
                J[:, i] = (self._eval(xp) - self._eval(xm)) / (2 * step)
            else:
                step = h_fwd * (1.0 if p.log else max(1.0, abs(x[i])))
                xp = x.copy()
                xp[i] += step
                J[:, i] = (self._eval(xp) - r0) / step
        return J

    def _eval(self, x):
        with np.errstate(over="raise", invalid="raise"):
            try:
                r = (self.residual_matrix(x) * self.weights[None, :])[self.mask]
            except (FloatingPointError, InputError):
                # a trial value the model refuses (or that overflows): far from any fit
                return np.full(int(self.mask.sum()), _PENALTY)
        return np.where(np.isfinite(r), r, _PENALTY)

    def solve(self, x0) -> _Run:
        from scipy.optimize import least_squares

        lo, hi = _x_limits(self.params)
        x0 = np.clip(np.asarray(x0, dtype=float), lo, hi)
        res = least_squares(self.residuals, x0, jac=self.jacobian, bounds=(lo, hi),
                            method="trf", x_scale="jac", ftol=1e-12, xtol=1e-10, gtol=1e-10,
                            max_nfev=100 * (1 + x0.size))
        return _Run(np.asarray(res.x, dtype=float), float(np.sum(res.fun ** 2)), int(res.status),
                    str(res.message), int(res.nfev), x0)


def _summarise(problem: _Problem, best: _Run, runs, log: Log, sc: Scenario, notes,
               rivals: int) -> FitResult:
    from scipy import stats

    params = problem.params
    keys = [p.key for p in params]
    x = best.x
    values = problem.values(x)
    J = problem.jacobian(x, central=True)
    r = problem.residuals(x)
    m, n = J.shape
    dof = m - n
    s2 = float(r @ r) / dof
    U, s, Vt = np.linalg.svd(J, full_matrices=False)
    tol = np.finfo(float).eps * max(J.shape) * (s[0] if s.size else 0.0)
    good = s > tol
    inv = np.where(good, 1.0 / np.where(good, s, 1.0) ** 2, 0.0)
    cov = (Vt.T * inv) @ Vt * s2
    se_x = np.sqrt(np.maximum(np.diag(cov), 0.0))
    if not good.all():
        null = Vt[~good]
        touched = (np.abs(null) > 1e-6).any(axis=0)
        se_x = np.where(touched, np.inf, se_x)
    q = float(stats.t.ppf(0.975, dof))
    rows = []
    for p, xi, v, se in zip(params, x, values, se_x):
        if p.log:
            std = v * se
            with np.errstate(over="ignore", under="ignore"):
                lo, hi = (float(np.exp(xi - q * se)), float(np.exp(xi + q * se))) \
                    if np.isfinite(se) else (0.0, np.inf)
        else:
            std = se
            lo, hi = (v - q * se, v + q * se) if np.isfinite(se) else (-np.inf, np.inf)
        rows.append((v, std, lo, hi))
    est = pd.DataFrame(rows, index=pd.Index(keys, name="key"),
                       columns=["value", "std_error", "ci_low", "ci_high"])
    with np.errstate(invalid="ignore", divide="ignore"):
        d = np.sqrt(np.diag(cov))
        corr = cov / np.outer(d, d)
    corr[~np.isfinite(corr)] = np.nan
    np.fill_diagonal(corr, 1.0)
    for i in range(n):
        if not np.isfinite(se_x[i]):
            corr[i, :] = corr[:, i] = np.nan
            corr[i, i] = 1.0
    correlation = pd.DataFrame(corr, index=keys, columns=keys)
    covariance = pd.DataFrame(cov, index=keys, columns=keys)

    model = problem.model
    t = log.time
    fitted_arr = model.outputs(values)
    index = pd.Index(t, name="time [s]")
    measured = pd.DataFrame(problem.Y, index=index, columns=log.measured)
    fitted = pd.DataFrame(fitted_arr, index=index, columns=log.measured)
    resid = (measured - fitted).where(problem.mask)
    # the fitted model on an even grid too, so that a figure shows it across the log's gaps
    step = float(np.median(np.diff(t)))
    n_grid = min(200_000, int(t[-1] / step) + 1)
    grid = np.union1d(t, np.linspace(0.0, float(t[-1]), max(n_grid, 2)))
    if grid.size > 400_000:
        grid = t
    curve = pd.DataFrame(model.outputs(values, times=grid), index=pd.Index(grid, name="time [s]"),
                         columns=log.measured)
    rmse = float(np.sqrt(np.nanmean(resid.to_numpy() ** 2)))
    rmse_by = pd.Series(np.sqrt(np.nanmean(resid.to_numpy() ** 2, axis=0)), index=log.measured,
                        name="rmse [K]")
    ac = pd.Series([_lag1(resid[c].to_numpy()) for c in log.measured], index=log.measured,
                   name="lag-1 autocorrelation")
    inputs = log.values[log.inputs].copy()
    inputs.index = index

    warn = list(notes)
    if any(rn.status <= 0 for rn in [best]):
        warn.append(f"the fit did not converge ({best.message}); the estimates are uncertain")
    for p, v, se, (k, row) in zip(params, values, se_x, est.iterrows()):
        if not np.isfinite(se) or (p.log and not (row["ci_low"] > 0
                                                  and np.isfinite(row["ci_high"]))):
            warn.append(f"{k} is not identifiable from the data (the fit does not depend on it "
                        "in a way it can separate from the other values)")
        elif p.log and row["ci_high"] / row["ci_low"] > WIDE_FACTOR:
            warn.append(f"{k} is poorly identified: its 95 % interval {row['ci_low']:.4g} .. "
                        f"{row['ci_high']:.4g} spans a factor {row['ci_high'] / row['ci_low']:.3g}")
        elif not p.log and (row["ci_high"] - row["ci_low"]) / 2 > (
                WIDE_KELVIN if p.kind.startswith("temperature") else 0.5 * abs(v)):
            warn.append(f"{k} is poorly identified: its 95 % interval is {row['ci_low']:.4g} .. "
                        f"{row['ci_high']:.4g}")
        at_lo = np.isfinite(p.lo) and v <= p.lo * (1 + 1e-6) + 1e-12
        at_hi = np.isfinite(p.hi) and v >= p.hi * (1 - 1e-6) - 1e-12
        if at_lo or at_hi:
            warn.append(f"{k} ended at its {'lower' if at_lo else 'upper'} bound ({v:.6g}); the "
                        "data want it beyond, and its interval is not reliable")
    for i in range(n):
        for j in range(i + 1, n):
            c = corr[i, j]
            if np.isfinite(c) and abs(c) > CORRELATION_LIMIT:
                if params[i].log and params[j].log:
                    what = "their product" if c < 0 else "their ratio"
                else:
                    what = "a combination of them"
                warn.append(f"{keys[i]} and {keys[j]} are strongly correlated (r = {c:+.3f}): "
                            f"the data fix mainly {what}; fix one of them, or log data that "
                            "separate them (e.g. with a known heat input)")
    for c in log.measured:
        n_ok = int(np.isfinite(resid[c].to_numpy()).sum())
        if n_ok >= 20 and ac[c] > AUTOCORRELATION_LIMIT:
            warn.append(f"residuals of column {c!r} are strongly autocorrelated (lag-1 r = "
                        f"{ac[c]:.2f}): the model is likely too simple for the data (e.g. one "
                        "node where the body needs two); the intervals are then too narrow")
    if rivals:
        warn.append(f"{rivals} other start(s) ended at different values with nearly the "
                    "same fit; the data may not decide between them")

    # the fitted scenario, written with the unit each value was given in
    subst = {}
    units = {}
    for p, v in zip(params, values):
        subst[p.key] = _in_original_unit(v, p)
        units[p.key] = p.kind
    with warnings.catch_warnings(record=True) as caught:  # e.g. a Biot number now above 0.1
        warnings.simplefilter("always")
        fitted_sc = sc.with_values(subst)
    categories = [FitWarning] * len(warn)
    for w in caught:
        if issubclass(w.category, RcsimWarning) and str(w.message) not in warn:
            warn.append(f"fitted scenario: {w.message}")
            categories.append(w.category)
    try:
        tau = fitted_sc.network.time_constants()
    except InputError:  # pragma: no cover - networks too large for the dense decomposition
        tau = None
    start_rows = [dict(zip(keys, [float(f"{v:.12g}") for v in problem.values(rn.x0)]),
                       cost=rn.cost, status=rn.status,
                       evaluations=rn.nfev) for rn in runs]
    return FitResult(
        estimates=est, correlation=correlation, covariance=covariance, rmse=rmse,
        rmse_by_column=rmse_by, autocorrelation=ac, warnings=warn, residuals=resid,
        measured=measured, fitted=fitted, curve=curve, inputs=inputs, fitted_scenario=fitted_sc,
        starts=pd.DataFrame(start_rows), units=units, targets=dict(log.targets),
        log_name=log.name, start_time=log.start_time, n_points=m, dof=dof,
        solver=model.solver, n_evaluations=model.n_evaluations,
        n_decompositions=model.n_decompositions, gaps=log.gaps, time_constants=tau,
        _categories=categories)


def _lag1(r: np.ndarray) -> float:
    """Lag-1 autocorrelation of successive available residuals."""
    r = r[np.isfinite(r)]
    if r.size < 3:
        return float("nan")
    r = r - r.mean()
    den = float(r @ r)
    return float(r[1:] @ r[:-1]) / den if den > 0 else 0.0


def _in_original_unit(value: float, p: _Param):
    """The fitted SI value as the scenario wrote it: a number, or a string in the same unit."""
    raw = p.raw
    if not isinstance(raw, str):
        return float(value)
    m = re.match(r"^\s*[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?\s*(.*?)\s*$", raw)
    unit = m.group(1) if m else ""
    if not unit:
        return float(value)
    try:
        si = {"temperature": "degC", "temperature_difference": "K"}.get(p.kind, KINDS[p.kind][0])
        q = ureg.Quantity(value, ureg.parse_units(si)).to(
            ureg.parse_units(unit.replace("°C", "degC").replace("°F", "degF")))
        text = f"{float(q.magnitude):.12g} {unit}"
    except Exception:  # pint raises many types; a plain SI number is always right
        return float(value)
    return text if math.isclose(to_si(text, p.kind), value, rel_tol=1e-10, abs_tol=1e-10) \
        else float(value)
