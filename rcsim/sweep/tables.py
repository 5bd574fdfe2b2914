"""The sweep table: one row per run, its metadata as a typed record, and its files.

A table (``pandas.DataFrame``, index ``run``) holds the inputs by key path (SI values; degC for
temperatures), then the outputs (``min.<node>``, ``max.<node>`` [degC], ``hold_time.<node>``,
``time_outside_band.<node>`` [s]), then ``error`` (empty, or the error text of a run that failed),
then ``energy_balance`` (each run's relative energy balance error: above 1e-3 its outputs are
not to be trusted, :func:`open_balance_runs`, and statistics leave it out, :func:`trusted`),
then, under former names kept for scripts written before, ``time_out.<node>`` (the same values
as ``time_outside_band.<node>``; not listed among the outputs). A table written before the
rename is read with the current names added.
``rcsim.sweep(...)`` returns the DataFrame with its metadata in ``.attrs``;
:class:`SweepTable` is the same thing as a typed record (``SweepTable.from_frame(table)``).

Files: ``.csv`` (the columns only), ``.h5``/``.hdf5`` (h5py: group ``/sweep``, a dataset ``run``
and one per column, attributes ``columns`` (JSON list) and ``meta`` (JSON of the metadata)) and
``.parquet`` (pyarrow; the metadata as JSON under the frame attribute ``rcsim_sweep``). Every
file is written to a temporary name and renamed when complete.

What an empty value means is written down with it, never left to guess: an output is NaN (an
empty cell in CSV) where the run failed (its ``error`` is not empty) and, for ``hold_time.<node>``,
where the node never left its band within the run (a hold time of more than the run's duration).
HDF5 gives each output dataset an attribute ``nan`` saying so, and HDF5 and Parquet keep the same
texts in the metadata under ``missing`` (:func:`missing_values`); a CSV holds no metadata, so the
README and this note are its key. No infinity is ever written.
"""

from __future__ import annotations

import json
import math
import os
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..atomic import atomic_path, check_writable
from ..errors import DataError, InputError
from ..units import si_unit
from .worker import OUTPUT_ALIASES, OUTPUT_PREFIXES, canonical_output

__all__ = ["SweepTable", "TABLE_SUFFIXES", "unit_of", "make_table", "check_table_path",
           "write_table", "read_table", "output_columns", "input_columns", "succeeded",
           "alias_columns", "add_alias_columns", "BALANCE_COLUMN", "open_balance_runs",
           "trusted", "open_balance_mask", "missing_values"]

TABLE_SUFFIXES = (".csv", ".h5", ".hdf5", ".parquet")

#: The column of each run's relative energy balance error (after ``error``; not an output).
BALANCE_COLUMN = "energy_balance"


# -- columns ---------------------------------------------------------------------------------
def output_columns(table: pd.DataFrame) -> list[str]:
    """The output columns of a table (from its metadata, else by their prefixes)."""
    outs = table.attrs.get("outputs")
    if outs:
        return [c for c in outs if c in table.columns]
    return [c for c in table.columns if c.split(".", 1)[0] in OUTPUT_PREFIXES and "." in c]


def input_columns(table: pd.DataFrame) -> list[str]:
    """The input columns of a table (from its metadata, else every column that is not an
    output, ``error`` or a former output name)."""
    ins = table.attrs.get("inputs")
    if ins:
        return [c for c in ins if c in table.columns]
    outs = set(output_columns(table)) | set(alias_columns(table))
    return [c for c in table.columns if c not in outs and c not in ("error", BALANCE_COLUMN)]


def alias_columns(table: pd.DataFrame) -> list[str]:
    """Columns under a former output name (``time_out.<node>``): copies, not outputs."""
    return [c for c in table.columns
            if isinstance(c, str) and "." in c and c.split(".", 1)[0] in OUTPUT_ALIASES]


def add_alias_columns(frame: pd.DataFrame) -> pd.DataFrame:
    """Add, at the end, a column under the former name of every output that has one, with the
    same values (``time_out.<node>`` beside ``time_outside_band.<node>``); returns ``frame``."""
    former = {new: old for old, new in OUTPUT_ALIASES.items()}
    for c in list(frame.columns):
        prefix, dot, node = str(c).partition(".")
        if dot and prefix in former and f"{former[prefix]}.{node}" not in frame.columns:
            frame[f"{former[prefix]}.{node}"] = frame[c]
    return frame


def _current_names(table: pd.DataFrame, meta: dict) -> None:
    """A table written before an output was renamed: add the column under its current name and
    read the metadata's names as current ones (in place)."""
    for c in alias_columns(table):
        new = canonical_output(c)
        if new not in table.columns:
            table[new] = table[c]
    for key in ("outputs",):
        if isinstance(meta.get(key), list):
            meta[key] = [canonical_output(c) for c in meta[key]]
    if isinstance(meta.get("units"), dict):
        meta["units"] = {**{canonical_output(k): v for k, v in meta["units"].items()},
                         **meta["units"]}


def open_balance_runs(table: pd.DataFrame) -> list:
    """The runs (index values) whose energy balance error is above
    ``rcsim.transient.registry.BALANCE_LIMIT`` (none in a table without the column)."""
    return list(table.index[open_balance_mask(table)])


def open_balance_mask(table: pd.DataFrame) -> np.ndarray:
    """Boolean mask of the runs whose energy balance error is above
    ``rcsim.transient.registry.BALANCE_LIMIT`` (all False without the column)."""
    from ..transient.registry import BALANCE_LIMIT

    if BALANCE_COLUMN not in table.columns:
        return np.zeros(len(table), dtype=bool)
    error = pd.to_numeric(table[BALANCE_COLUMN], errors="coerce").to_numpy(dtype=float)
    return error > BALANCE_LIMIT


def trusted(table: pd.DataFrame) -> np.ndarray:
    """Boolean mask of the runs whose outputs enter statistics: they did not fail and their
    energy balance closes. A run with an open balance stays in the table (its
    ``energy_balance`` column above the limit marks it) but no percentile, share, index or
    distribution counts it."""
    return succeeded(table) & ~open_balance_mask(table)


def succeeded(table: pd.DataFrame) -> np.ndarray:
    """Boolean mask of the runs that did not fail (empty ``error``)."""
    if "error" not in table.columns:
        return np.ones(len(table), dtype=bool)
    err = table["error"].fillna("").astype(str).to_numpy()
    return err == ""


def unit_of(col, kinds_by_key) -> str:
    """Unit of a column: the SI unit of an input's kind ("1" for a plain number), degC for
    min/max, s for hold times and times out of band."""
    if col in kinds_by_key:
        kind = kinds_by_key[col]
        return si_unit(kind) if kind != "dimensionless" else "1"
    prefix = col.split(".", 1)[0]
    return "degC" if prefix in ("min", "max") else "s"


# -- the record ------------------------------------------------------------------------------
@dataclass
class SweepTable:
    """A sweep table and what it was made from.

    Attributes
    ----------
    frame : DataFrame
        One row per run (index ``run``): inputs, outputs, ``error``.
    scenario, title : str
        The scenario's file name and title.
    inputs, outputs : list of str
        Input (key path) and output column names, in table order.
    units : dict
        ``{column: unit}`` (SI; degC for temperatures; "1" for plain numbers).
    kinds : dict
        ``{input: quantity kind}``.
    design : dict
        ``{input: description}``, e.g. ``"normal(0.05, 0.005) m"``.
    seed : int or None
        Seed of ``numpy.random.default_rng`` for the draws (None without distributions).
    samples : int
        Draws per grid point (0 without distributions).
    limits : dict
        ``{node: {"min": degC or None, "max": degC or None}}``.
    duration : float or None
        Length of each run [s].
    interrupted : bool
        The sweep was stopped (Ctrl-C); ``frame`` holds the runs that finished.
    executor : dict or None
        Where the runs went: ``{"name", "workers", "scheduler"}`` (None for tables written before
        rcsim recorded it).
    """

    frame: pd.DataFrame
    scenario: str = ""
    title: str = ""
    inputs: list = field(default_factory=list)
    outputs: list = field(default_factory=list)
    units: dict = field(default_factory=dict)
    kinds: dict = field(default_factory=dict)
    design: dict = field(default_factory=dict)
    seed: int | None = None
    samples: int = 0
    limits: dict = field(default_factory=dict)
    duration: float | None = None
    interrupted: bool = False
    executor: dict | None = None

    _META = ("scenario", "title", "inputs", "outputs", "units", "kinds", "design", "seed",
             "limits", "duration", "interrupted", "samples", "executor")

    def metadata(self) -> dict:
        """The metadata as the plain dict kept in ``DataFrame.attrs`` and in the files."""
        return {k: getattr(self, k) for k in self._META}

    def to_frame(self) -> pd.DataFrame:
        """The table with the metadata in ``.attrs`` (the frame itself, not a copy)."""
        self.frame.attrs = self.metadata()
        return self.frame

    @classmethod
    def from_frame(cls, frame: pd.DataFrame) -> "SweepTable":
        """The record of a table (from ``rcsim.sweep`` or :func:`read_table`); what its
        ``.attrs`` do not say (a CSV keeps no metadata) is inferred from the columns or left
        empty."""
        attrs = dict(frame.attrs)
        known = {k: attrs[k] for k in cls._META if k in attrs and attrs[k] is not None}
        known.setdefault("inputs", input_columns(frame))
        known.setdefault("outputs", output_columns(frame))
        if "samples" in known:
            known["samples"] = int(known["samples"])
        return cls(frame, **known)

    @classmethod
    def read(cls, path) -> "SweepTable":
        """Read a table file (.csv, .h5 or .parquet) as a record."""
        return cls.from_frame(read_table(path))

    def write(self, path) -> str:
        """Write the table (.csv, .h5 or .parquet), atomically; returns the path."""
        return write_table(self.to_frame(), path)

    @property
    def ok(self) -> np.ndarray:
        """Boolean mask of the runs that did not fail."""
        return succeeded(self.frame)

    @property
    def failed(self) -> int:
        """Number of runs that failed."""
        return int((~self.ok).sum())

    def finished_only(self, done: np.ndarray) -> "SweepTable":
        """The record of the runs in ``done`` only, marked interrupted."""
        from dataclasses import replace

        return replace(self, frame=self.frame[done].copy(), interrupted=True)


def make_table(sc, design, layout, results, executor) -> SweepTable:
    """The record of a sweep of ``sc`` over ``design`` (a ``Design``) with the ``results`` of
    ``run_rows`` laid out as ``layout`` (an ``OutputLayout``); ``executor`` an ``ExecutorInfo``."""
    cols = list(layout.columns)
    data = {k: design.values[:, i] for i, k in enumerate(design.keys)}
    data.update({c: results.outputs[:, j] for j, c in enumerate(cols)})
    frame = pd.DataFrame(data, index=pd.RangeIndex(len(results.outputs), name="run"))
    frame["error"] = pd.Series(results.errors, index=frame.index, dtype=object)
    if getattr(layout, "balance", False):
        frame[BALANCE_COLUMN] = results.outputs[:, len(cols)]
    add_alias_columns(frame)
    kinds = dict(zip(design.keys, design.kinds))
    limits = {lim.node: {"min": lim.min, "max": lim.max} for lim in sc.network.limits.values()}
    return SweepTable(
        frame, scenario=sc.name, title=sc.title, inputs=list(design.keys), outputs=cols,
        units={c: unit_of(c, kinds) for c in list(design.keys) + cols}, kinds=kinds,
        design=design.describe(lambda k: unit_of(k, kinds)), seed=design.seed,
        samples=design.samples, limits=limits, duration=sc.settings.duration,
        executor={"name": executor.name, "workers": executor.workers,
                  "scheduler": executor.scheduler})


# -- files -----------------------------------------------------------------------------------
def check_table_path(path) -> str:
    """Check that a table can be written at ``path`` before any run; returns it as a string.

    The suffix is .csv, .h5/.hdf5 or .parquet (parquet needs the pyarrow package), the folder
    exists and can be written, and the path is not a directory.
    """
    path = os.fspath(path)
    low = path.lower()
    if not low.endswith(TABLE_SUFFIXES):
        raise InputError(f"{path!r} should end with .csv, .h5 or .parquet", "output")
    check_writable(path, "output")   # folder there, a folder, writable; path not a folder
    if low.endswith(".parquet"):
        try:
            import importlib

            importlib.import_module("pyarrow")
        except ImportError:
            raise InputError("writing .parquet needs the pyarrow package", "output",
                             "pip install \"rcsim[parquet]\", or write .csv or .h5") from None
    return path


def _meta_json(attrs) -> str:
    def clean(v):
        if isinstance(v, dict):
            return {str(k): clean(x) for k, x in v.items()}
        if isinstance(v, (list, tuple)):
            return [clean(x) for x in v]
        if isinstance(v, (np.integer,)):
            return int(v)
        if isinstance(v, (np.floating, float)):
            return None if not math.isfinite(float(v)) else float(v)
        return v

    return json.dumps(clean(dict(attrs)))


def missing_values(table: pd.DataFrame) -> dict:
    """``{output column: what NaN means in it}`` for the table's outputs.

    >>> t = pd.DataFrame({"max.a": [1.0], "hold_time.a": [np.nan], "error": [""]})
    >>> t.attrs["duration"] = 86400.0
    >>> missing_values(t)["hold_time.a"].split("; ")[0]
    'NaN: the node never left its band within the run (more than 86400 s)'
    >>> missing_values(t)["max.a"]
    'NaN: the run failed (error not empty)'
    """
    duration = table.attrs.get("duration")
    longer = f" (more than {float(duration):g} s)" if duration else ""
    out = {}
    for c in output_columns(table) + alias_columns(table):
        if canonical_output(c).startswith("hold_time."):
            out[c] = (f"NaN: the node never left its band within the run{longer}; or the run "
                      "failed (error not empty)")
        else:
            out[c] = "NaN: the run failed (error not empty)"
    return out


def write_table(table: pd.DataFrame, path) -> str:
    """Write a sweep table to .csv, .h5 (h5py, group ``/sweep``) or .parquet, atomically.

    CSV keeps the columns only; HDF5 and Parquet also keep ``table.attrs`` (units, seed, design).
    A :class:`SweepTable` may be given instead of a DataFrame.
    """
    if isinstance(table, SweepTable):
        table = table.to_frame()
    path = check_table_path(path)
    low = path.lower()
    with atomic_path(path, os.path.splitext(path)[1] + ".tmp") as tmp:
        if low.endswith(".csv"):
            # no float_format: each number as the shortest text that reads back to the same
            # double (0.03, never 0.029999999999999999)
            table.to_csv(tmp, lineterminator="\n")
        elif low.endswith((".h5", ".hdf5")):
            _write_h5(table, tmp)
        else:
            frame = table.copy()
            frame.attrs = {"rcsim_sweep": _meta_json({**table.attrs,
                                                      "missing": missing_values(table)})}
            frame.to_parquet(tmp)
    return path


def _write_h5(table, tmp):
    import h5py

    from ..base import package_version

    from ..h5files import guarded_h5

    missing = missing_values(table)
    with guarded_h5(tmp) as h5:        # a full disk: one OSError after closing, not a crash
        g = h5.create_group("sweep")
        g.create_dataset("run", data=table.index.to_numpy(dtype=np.int64))
        for c in table.columns:
            if c == "error":
                g.create_dataset(c, data=np.asarray(table[c].fillna("").astype(str).tolist(),
                                                    dtype=object),
                                 dtype=h5py.string_dtype())
            else:
                g.create_dataset(c, data=table[c].to_numpy(dtype=float))
                if c in missing:
                    g[c].attrs["nan"] = missing[c]
        g.attrs["columns"] = json.dumps(list(map(str, table.columns)))
        g.attrs["meta"] = _meta_json({**table.attrs, "missing": missing})
        h5.attrs["rcsim_version"] = package_version()


def _read_h5(path, label) -> tuple[pd.DataFrame, dict]:
    import h5py

    with h5py.File(path, "r") as h5:
        if "sweep" not in h5:
            raise DataError("is not a sweep table (no /sweep group)", label)
        g = h5["sweep"]
        cols = json.loads(g.attrs["columns"])
        data = {}
        for c in cols:
            arr = g[c][()]
            if c == "error":
                arr = np.asarray([x.decode() if isinstance(x, bytes) else str(x) for x in arr],
                                 dtype=object)
            data[c] = arr
        table = pd.DataFrame(data, index=pd.Index(g["run"][()], name="run"), columns=cols)
        return table, json.loads(g.attrs.get("meta", "{}"))


def read_table(path) -> pd.DataFrame:
    """Read a table written by :func:`write_table` (or ``rcsim sweep -o``).

    Returns the DataFrame with the metadata in ``.attrs`` (empty for CSV);
    :meth:`SweepTable.read` gives the typed record.
    """
    path = os.fspath(path)
    label = os.path.basename(path)
    if not os.path.exists(path):
        raise DataError("file not found", label)
    low = path.lower()
    meta = {}
    if low.endswith(".csv"):
        table = pd.read_csv(path, index_col="run")
    elif low.endswith((".h5", ".hdf5")):
        table, meta = _read_h5(path, label)
    elif low.endswith(".parquet"):
        table = pd.read_parquet(path)
        meta = json.loads(table.attrs.get("rcsim_sweep", "{}"))
    else:
        raise DataError("should end with .csv, .h5 or .parquet", label)
    if "error" in table.columns:
        err = table["error"].astype(object)
        table["error"] = err.where(err.notna(), "")
    _current_names(table, meta)
    table.attrs = meta
    return table
