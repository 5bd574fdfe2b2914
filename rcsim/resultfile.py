"""Opening a result file that may not be what it claims: nothing outside it is read, nothing
larger than memory is allocated, and anything malformed is one line naming the file.

:func:`inspect_result` walks every link of the file before anything is read from it:

* only hard links are followed: an external link (into another file) or a soft link (which
  can loop) is refused, and so is a virtual dataset (whose data lives in other files) or a
  dataset with external storage (raw data in another file);
* every history must be a numeric array with one row per time sample and one column per name,
  names must be UTF-8 strings, tables must have their columns, metadata must have its types;
* the bytes a full load would allocate (every history, names and tables, counted together) are
  checked against the available memory before a single one is read.

The file is then read by :class:`rcsim.results.Result`; an error that still escapes the
library while reading (a corrupted chunk, a bad checksum) becomes one :class:`DataError` too
(:func:`reading`).
"""

from __future__ import annotations

import contextlib
import json
import os
from dataclasses import dataclass, field

import numpy as np

from .errors import DataError
from .h5files import ONE_D, names_dataset
from .inputfiles import check_regular_file, cut
from .limits import LIMIT_COLUMNS

__all__ = ["inspect_result", "open_result", "reading", "ResultLayout", "SERIES", "MAX_OBJECTS"]

#: the histories a result file may hold
SERIES = ("temperature", "heat_flow", "boundary_temperature", "source_power", "energy/stored",
          "energy/links", "energy/sources", "liquid_fraction", "thermostat_power", "sol_air")

#: a result file holds a few dozen objects; a file with more is not one
MAX_OBJECTS = 10_000
_MAX_DEPTH = 8
#: the columns each table must have (what the summaries, plots and reports read)
_TABLE_COLUMNS = {"limits": LIMIT_COLUMNS,
                  "nodes": ["node", "min [degC]", "max [degC]", "final [degC]"],
                  "thermostats": []}
#: root attributes that must be numbers (or empty) when present
_NUMBER_ATTRS = ("energy_balance", "duration", "step", "period")
#: reading a history takes its bytes once for the array and about once more for the frame
_COPIES = 2


@dataclass
class ResultLayout:
    """What :func:`inspect_result` found: the samples, the histories (key -> shape) and the
    bytes a full load allocates."""

    samples: int = 0
    series: dict = field(default_factory=dict)
    needed_bytes: int = 0


def _fail(label: str, what: str) -> DataError:
    return DataError(what, label, "it is not a complete rcsim result file; write it again "
                                  "with rcsim run -o")


def open_result(path):
    """The path checked and opened with h5py read-only (a context manager), or DataError."""
    import h5py

    path = os.fspath(path)
    label = os.path.basename(path) or path
    if os.path.isdir(path):
        raise DataError("is a directory, not a result file", label)
    if not os.path.exists(path) and not os.path.islink(path):
        raise DataError("file not found", label)
    check_regular_file(path, label)            # no FIFO or device
    try:
        return h5py.File(path, "r", locking=False)
    except (OSError, ValueError) as exc:
        raise DataError(f"cannot be read as HDF5 ({cut(str(exc).splitlines()[0], 80)})",
                        label) from None


@contextlib.contextmanager
def reading(label: str):
    """Turn what the HDF5 library, numpy or JSON raise on a malformed file into one DataError
    naming ``label``."""
    try:
        yield
    except DataError:
        raise
    except (KeyError, ValueError, TypeError, OSError, RuntimeError, RecursionError,
            UnicodeDecodeError, IndexError, AttributeError) as exc:
        text = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise _fail(label, f"cannot be read ({cut(text, 100)})") from None


def _walk(h5, label: str):
    """Every (path, object) reachable by hard links; refuses the other kinds of link."""
    import h5py

    count = 0
    stack = [("", h5, 0)]
    while stack:
        prefix, group, depth = stack.pop()
        if depth > _MAX_DEPTH:
            raise _fail(label, f"nests groups deeper than {_MAX_DEPTH} levels at {prefix}")
        for name in group:
            where = f"{prefix}/{name}"
            count += 1
            if count > MAX_OBJECTS:
                raise _fail(label, f"holds more than {MAX_OBJECTS} objects")
            link = group.get(name, getlink=True)
            if isinstance(link, h5py.ExternalLink):
                raise DataError(f"{where} is a link into another file; a result file is read "
                                "only from itself", label)
            if isinstance(link, h5py.SoftLink):
                raise DataError(f"{where} is a soft link (rcsim result files hold none)", label)
            if not isinstance(link, h5py.HardLink):
                raise DataError(f"{where} is a link of an unknown kind", label)
            obj = group[name]
            if isinstance(obj, h5py.Group):
                stack.append((where, obj, depth + 1))
            elif isinstance(obj, h5py.Dataset):
                if obj.is_virtual:
                    raise DataError(f"{where} is a virtual dataset (its data lives in other "
                                    "files); a result file is read only from itself", label)
                if obj.external:
                    raise DataError(f"{where} keeps its data in another file (external "
                                    "storage); a result file is read only from itself", label)
            yield where.lstrip("/"), obj


def _names(h5, key: str, label: str) -> list[str] | None:
    """The names of series ``key`` (dataset, else attribute), checked as UTF-8 strings."""
    ds = names_dataset(key)
    width = None if key in ONE_D else h5[key].shape[1]
    if ds in h5:
        raw = h5[ds]
        if raw.ndim != 1 or raw.dtype.kind not in "OS":
            raise _fail(label, f"/{ds} is not a list of names")
        if width is not None and raw.shape[0] != width:
            raise _fail(label, f"/{key} has {width} columns but {raw.shape[0]} names")
        values = raw[()]
    elif "names" in h5[key].attrs:
        values = np.atleast_1d(h5[key].attrs["names"])
    else:
        return None
    out = []
    for v in values:
        if isinstance(v, bytes):
            try:
                v = v.decode("utf-8")
            except UnicodeDecodeError:
                raise _fail(label, f"the names of /{key} are not UTF-8 text") from None
        elif not isinstance(v, str):
            raise _fail(label, f"the names of /{key} are not text")
        out.append(v)
    return out


def _check_series(h5, key, samples, label, layout) -> None:
    ds = h5[key]
    import h5py

    if not isinstance(ds, h5py.Dataset):
        raise _fail(label, f"/{key} is not a dataset")
    if ds.dtype.kind not in "fiu":
        raise _fail(label, f"/{key} holds {ds.dtype.kind!r}-type data, not numbers")
    want = 1 if key in ONE_D else 2
    if ds.ndim != want:
        raise _fail(label, f"/{key} has {ds.ndim} dimensions, not {want}")
    if ds.shape[0] != samples:
        raise _fail(label, f"/{key} has {ds.shape[0]} rows but /time has {samples} samples")
    layout.series[key] = ds.shape


def _check_table(h5, group: str, label: str) -> int:
    """Checks table ``group``; returns its rows."""
    import h5py

    g = h5[group]
    if not isinstance(g, h5py.Group):
        raise _fail(label, f"/{group} is not a table")
    try:
        columns = json.loads(g.attrs["columns"])
    except KeyError:
        raise _fail(label, f"/{group} has no list of columns") from None
    except (ValueError, TypeError):
        raise _fail(label, f"/{group}: its list of columns is not JSON") from None
    if not isinstance(columns, list) or not all(isinstance(c, str) for c in columns):
        raise _fail(label, f"/{group}: its list of columns is not a list of names")
    missing = [c for c in _TABLE_COLUMNS.get(group, []) if c not in columns]
    if missing:
        raise _fail(label, f"/{group} has no column {cut(missing[0])!r}")
    rows = None
    for c in columns:
        ds = g.get(c)
        if not isinstance(ds, h5py.Dataset) or ds.ndim != 1 or ds.dtype.kind not in "fiuSO":
            raise _fail(label, f"/{group}/{cut(c)} is not a column of numbers or text")
        if rows is not None and ds.shape[0] != rows:
            raise _fail(label, f"/{group}: its columns have different lengths")
        rows = ds.shape[0]
    return rows or 0


def _check_attrs(h5, label: str) -> None:
    for key in list(h5.attrs):
        try:
            value = h5.attrs[key]
        except (OSError, UnicodeDecodeError, TypeError, ValueError):
            raise _fail(label, f"attribute {cut(key)!r} cannot be read") from None
        if isinstance(value, bytes):
            try:
                value.decode("utf-8")
            except UnicodeDecodeError:
                raise _fail(label, f"attribute {cut(key)!r} is not UTF-8 text") from None
        if key in _NUMBER_ATTRS:
            v = value.decode() if isinstance(value, bytes) else value
            if isinstance(v, str) and v == "":
                continue
            try:
                number = float(np.asarray(v).item()) if np.ndim(v) == 0 else None
            except (TypeError, ValueError):
                number = None
            if number is None:
                raise _fail(label, f"attribute {key!r} is not a number")


def inspect_result(h5, label: str) -> ResultLayout:
    """Check an open result file all through before anything of it is read (see the module's
    description); returns its layout. Raises DataError naming ``label``."""
    import h5py

    from .profiles import check_fits_in_memory

    with reading(label):
        objects = dict(_walk(h5, label))
        if "time" not in objects or "rcsim_version" not in h5.attrs:
            raise DataError("is not an rcsim result file (no /time or no rcsim_version)", label)
        time = objects["time"]
        if not isinstance(time, h5py.Dataset) or time.ndim != 1 or time.dtype.kind not in "fiu":
            raise _fail(label, "/time is not a list of times")
        layout = ResultLayout(samples=int(time.shape[0]))
        # what a full load allocates, before anything is read: every dataset once, the time
        # and the histories twice (array and frame)
        total = 0
        for path, obj in objects.items():
            if isinstance(obj, h5py.Dataset):
                size = int(np.prod(obj.shape, dtype=np.float64)) * obj.dtype.itemsize
                total += size * (_COPIES if path in SERIES or path == "time" else 1)
        layout.needed_bytes = total
        check_fits_in_memory(total, label, "loading this result")
        for key in SERIES:
            if key in objects:
                _check_series(h5, key, layout.samples, label, layout)
                names = _names(h5, key, label)
                width = 1 if key in ONE_D else h5[key].shape[1]
                if key not in ONE_D and (names is None or len(names) != width):
                    got = "no names" if names is None else f"{len(names)} names"
                    raise _fail(label, f"/{key} has {width} columns but {got}")
        for group in _TABLE_COLUMNS:
            if group in objects:
                _check_table(h5, group, label)
        _check_attrs(h5, label)
    return layout
