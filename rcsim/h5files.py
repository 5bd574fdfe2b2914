"""HDF5 result files on disk: the streaming writer, the names and tables inside them.

:class:`H5Sink` writes a run's histories chunk by chunk to a temporary file beside the requested
name and renames it when complete. HDF5 writes through a file object of rcsim's
(:class:`GuardedFile`) that never lets a failed write (disk full, file size limit) reach the
HDF5 library: the library cannot report such a failure where it happens (it surfaces in object
deallocators as printed tracebacks, and can crash the process), so the file object keeps the
first failure, accepts and drops everything after it, and the sink raises it as one
:class:`rcsim.errors.OutputError` after the operation, with the temporary file removed.
"""

from __future__ import annotations

import contextlib
import io
import json
import os

import numpy as np
import pandas as pd

from .atomic import commit, discard, temporary_beside, write_failure

__all__ = ["H5Sink", "GuardedFile", "guarded_h5", "write_frame", "read_frame", "write_names", "read_names",
           "names_dataset", "NAMES_ATTRIBUTE_BYTES", "ONE_D"]

#: series with one value per sample (no names)
ONE_D = ("time", "energy/stored")


class GuardedFile(io.RawIOBase):
    """A binary file for HDF5's file-object driver that keeps its first write failure.

    After a failure (``failed`` holds the OSError) the bytes HDF5 goes on writing are kept in
    memory instead (an overlay that reads see), so the library finishes whatever it was doing
    on a consistent file, without an error it could only print; the caller checks ``failed``
    after each operation and throws the file away. The overlay holds what one operation and the
    final flush write (the chunk cache, 32 MB at most, for :class:`H5Sink`).
    """

    def __init__(self, path: str):
        super().__init__()
        self._raw = open(path, "r+b", buffering=0)   # noqa: SIM115 - closed in close()
        self.failed: BaseException | None = None
        self._overlay: list[tuple[int, bytes]] = []   # (offset, bytes) written after failing
        self._pos = 0

    def readable(self) -> bool:
        return True

    def writable(self) -> bool:
        return True

    def seekable(self) -> bool:
        return True

    def _end(self) -> int:
        end = os.fstat(self._raw.fileno()).st_size
        for off, data in self._overlay:
            end = max(end, off + len(data))
        return end

    def readinto(self, buffer) -> int:
        view = memoryview(buffer).cast("B")
        self._raw.seek(self._pos)
        n = self._raw.readinto(view) or 0
        if self._overlay:
            pos, size = self._pos, view.nbytes
            reach = n
            for off, data in self._overlay:
                if off < pos + size and off + len(data) > pos:
                    reach = max(reach, min(off + len(data), pos + size) - pos)
            if reach > n:
                view[n:reach] = bytes(reach - n)      # past the real end: zeros, then patches
            for off, data in self._overlay:           # in the order they were written
                lo, hi = max(off, pos), min(off + len(data), pos + size)
                if lo < hi:
                    view[lo - pos:hi - pos] = data[lo - off:hi - off]
            n = reach
        self._pos += n
        return n

    def write(self, data) -> int:
        view = memoryview(data).cast("B")
        size = view.nbytes
        done = 0
        if self.failed is None:
            try:
                self._raw.seek(self._pos)
                while done < size:                # a raw write may write less than asked
                    done += self._raw.write(view[done:])
            except OSError as exc:
                self.failed = exc
        if done < size:
            self._overlay.append((self._pos + done, bytes(view[done:])))
        self._pos += size
        return size

    def seek(self, offset: int, whence: int = 0) -> int:
        if whence == 0:
            self._pos = offset
        elif whence == 1:
            self._pos += offset
        else:
            self._pos = self._end() + offset
        return self._pos

    def tell(self) -> int:
        return self._pos

    def truncate(self, size=None) -> int:
        size = self._pos if size is None else size
        if self.failed is None:
            try:
                self._raw.truncate(size)
            except OSError as exc:
                self.failed = exc
        if self.failed is not None:
            self._overlay = [(off, data[:max(0, size - off)]) for off, data in self._overlay
                             if off < size]
        return size

    def flush(self) -> None:
        pass

    def close(self) -> None:
        if not self.closed:
            self._raw.close()
            self._overlay = []
        super().close()


#: The names of a series stay an HDF5 attribute ``names`` too while they take at most this many
#: bytes (an attribute must fit in a 64 KiB object header); they are always a dataset
#: ``<series>_names`` as well.
NAMES_ATTRIBUTE_BYTES = 32_768


def names_dataset(key: str) -> str:
    """Where a result file keeps the names of series ``key``: ``/temperature_names``,
    ``/energy/links_names``, ..."""
    return f"{key}_names"


def _names_attribute(names: list[str]):
    """Names as UTF-8 byte strings for an HDF5 attribute (readers decode them)."""
    return np.asarray([n.encode("utf-8") for n in names], dtype="S") if names else \
        np.zeros(0, dtype="S1")


def write_names(h5, key: str, names: list[str]) -> None:
    """Store the names of series ``key``: a dataset :func:`names_dataset` of UTF-8 strings
    (any length), and the attribute ``names`` of the series as well when it is short enough
    (:data:`NAMES_ATTRIBUTE_BYTES`) for files read by older versions."""
    import h5py

    h5.create_dataset(names_dataset(key), data=np.asarray(names, dtype=object),
                      dtype=h5py.string_dtype("utf-8"), shape=(len(names),))
    attribute = _names_attribute(names)
    if attribute.nbytes <= NAMES_ATTRIBUTE_BYTES:
        h5[key].attrs["names"] = attribute


def read_names(h5, key: str) -> list[str] | None:
    """The names of series ``key`` of a result file: the names dataset, or (files written
    before it existed) the attribute ``names``; None when it has neither."""
    ds = names_dataset(key)
    if ds in h5:
        return [n.decode("utf-8") if isinstance(n, bytes) else str(n) for n in h5[ds][()]]
    if key in h5 and "names" in h5[key].attrs:
        return [n.decode("utf-8") if isinstance(n, bytes) else str(n)
                for n in h5[key].attrs["names"]]
    return None


class H5Sink:
    """Streams chunks to an HDF5 file written under a temporary name, renamed on success."""

    def __init__(self, path):
        import h5py

        self.path = os.fspath(path)
        self.tmp = temporary_beside(self.path, ".h5.tmp")
        self._open = False
        self.names: dict[str, list[str]] = {}
        self._empty: list[str] = []
        self._rows: dict[str, int] = {}
        self._datasets: dict = {}
        self.expected = 0
        self._io = None
        with self._writing():
            self._io = GuardedFile(self.tmp)
            self.file = h5py.File(self._io, "w", rdcc_nbytes=32 * 2 ** 20)
            self._open = True

    @contextlib.contextmanager
    def _writing(self):
        """A failed write (disk full, file size limit, no permission) removes the temporary
        file and becomes one OutputError naming the requested file."""
        try:
            yield
        except (OSError, RuntimeError, ValueError) as exc:   # what h5py raises on a failure
            failure = self._io.failed if self._io is not None and self._io.failed else exc
            self.abort()
            if not isinstance(exc, OSError) and failure is exc:
                raise                              # not a write failure: a bug to report
            raise write_failure(failure, self.path) from None
        if self._io is not None and self._io.failed is not None:
            failure = self._io.failed
            self.abort()
            raise write_failure(failure, self.path) from None

    def reserve(self, samples: int) -> None:
        """The number of samples the run will deliver (datasets are created at that size)."""
        self.expected = max(0, int(samples))

    def declare(self, key: str, names: list[str]) -> None:
        with self._writing():
            self._declare(key, names)

    def _declare(self, key: str, names: list[str]) -> None:
        self.names[key] = list(names)
        if key not in ONE_D and not names:
            self._empty.append(key)  # zero-width: written at the end, unchunked
            return
        width = len(names)
        shape = (self.expected,) if key in ONE_D else (self.expected, width)
        maxshape = (None,) if len(shape) == 1 else (None, width)
        # chunks of about 1 MB (wide histories: a few rows each), within the chunk cache
        chunks = (4096,) if len(shape) == 1 else (max(1, min(4096, 131_072 // max(1, width))),
                                                   max(1, min(width, 131_072)))
        # kept open (not looked up for each chunk)
        self._datasets[key] = self.file.create_dataset(key, shape=shape, maxshape=maxshape,
                                                       dtype="f8", chunks=chunks)
        self._rows[key] = 0
        if len(shape) == 2:
            write_names(self.file, key, names)

    def append(self, key: str, array: np.ndarray) -> None:
        if key in self._empty:
            return
        ds = self._datasets[key]
        n0 = self._rows[key]
        n1 = n0 + array.shape[0]
        with self._writing():
            if n1 > ds.shape[0]:
                ds.resize(max(n1, ds.shape[0] + ds.shape[0] // 2), axis=0)
            ds[n0:n1] = np.ascontiguousarray(array)
        self._rows[key] = n1

    def write_table(self, group: str, frame: pd.DataFrame) -> None:
        with self._writing():
            write_frame(self.file, group, frame)

    def finish(self, attrs: dict) -> None:
        with self._writing():
            self._finish(attrs)

    def _finish(self, attrs: dict) -> None:
        for key, rows in self._rows.items():      # datasets end where the samples ended
            if self._datasets[key].shape[0] != rows:
                self._datasets[key].resize(rows, axis=0)
        n_rows = self._rows.get("time", 0)
        for key in self._empty:
            self.file.create_dataset(key, data=np.empty((n_rows, 0)))
            write_names(self.file, key, [])
        for k, v in attrs.items():
            self.file.attrs[k] = v
        self._datasets.clear()
        self.file.close()
        self._open = False
        if self._io.failed is not None:          # the closing flush failed
            raise self._io.failed
        self._io.close()
        commit(self.tmp, self.path)

    def abort(self) -> None:
        if self._open:
            self._open = False
            if self._io is not None and self._io.failed is None:
                self._io.failed = OSError("aborted")   # the closing flush stays in memory
            try:
                self.file.close()
            except Exception:  # pragma: no cover - closing a broken file
                pass
        self._datasets.clear()
        if self._io is not None:
            self._io.close()
        discard(self.tmp)


@contextlib.contextmanager
def guarded_h5(tmp: str):
    """An HDF5 file opened for writing at ``tmp`` through a :class:`GuardedFile`: a write that
    fails (disk full) raises its OSError once the file is closed, instead of surfacing inside
    the HDF5 library (use it inside :func:`rcsim.atomic.atomic_path`)."""
    import h5py

    io_ = GuardedFile(tmp)
    try:
        with h5py.File(io_, "w") as h5:
            yield h5
    except (OSError, RuntimeError, ValueError):
        if io_.failed is None:
            raise
        # what HDF5 met after a dropped write (data it wrote and could not read back) is not
        # the cause: the failed write is
    finally:
        io_.close()
    if io_.failed is not None:
        raise io_.failed


def write_frame(h5, group: str, frame: pd.DataFrame) -> None:
    g = h5.create_group(group)
    g.attrs["columns"] = json.dumps(list(map(str, frame.columns)))
    for col in frame.columns:
        values = frame[col].to_numpy()
        if values.dtype.kind in "OUS" or str(frame[col].dtype) in ("string", "str"):
            # UTF-8 bytes (names are any Unicode; read_frame decodes them)
            g.create_dataset(str(col), data=np.asarray([str(v).encode("utf-8") for v in values],
                                                       dtype="S"))
        else:
            g.create_dataset(str(col), data=values.astype(float))


def read_frame(h5, group: str) -> pd.DataFrame:
    if group not in h5:
        return pd.DataFrame()
    g = h5[group]
    cols = json.loads(g.attrs["columns"])
    data = {}
    for c in cols:
        arr = g[c][()]
        if arr.dtype.kind == "S":
            arr = np.asarray([x.decode("utf-8") for x in arr], dtype=object)
        data[c] = arr
    return pd.DataFrame(data, columns=cols)

