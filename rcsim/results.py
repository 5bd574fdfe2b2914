"""Results of a run: histories as pandas, energy balance, limit excursions; HDF5 write and read.

File layout (HDF5)::

    /time                   [s]
    /temperature            time x node [degC], attr names
    /heat_flow              time x link [W], attr names (positive from first to second point)
    /boundary_temperature   time x boundary [degC], attr names
    /source_power           time x source [W], attr names
    /energy/stored          time [J], change of stored energy since t = 0
    /energy/links           time x boundary link [J], heat that entered the nodes through it
    /energy/sources         time x source [J]
    /liquid_fraction        time x phase-change node [-] (when there are any)
    /limits/<column>        one dataset per column of the limit table
    /nodes/<column>         per-node min, max, final
    root attrs: rcsim_version, scenario (source text), solver, energy_balance, created, ...

A file is written to a temporary name in the same folder and renamed when complete, so a crash
never leaves a half-written file under the requested name. Long runs stream their chunks to the
file as they come (:class:`H5Sink`), so memory stays bounded.
"""

from __future__ import annotations

import datetime as _dt
import json
import os

import numpy as np
import pandas as pd

from .errors import DataError

__all__ = ["Result", "Recorder", "MemorySink", "H5Sink", "Chunk"]

_SERIES = ["temperature", "heat_flow", "boundary_temperature", "source_power",
           "energy/stored", "energy/links", "energy/sources", "liquid_fraction",
           "thermostat_power"]


class Chunk:
    """A block of consecutive samples handed from a solver to the :class:`Recorder`."""

    __slots__ = ("t", "T", "u", "s", "e_links", "e_sources", "e_stored", "extras")

    def __init__(self, t, T, u, s, e_links, e_sources, e_stored, extras=None):
        self.t, self.T, self.u, self.s = t, T, u, s
        self.e_links, self.e_sources, self.e_stored = e_links, e_sources, e_stored
        self.extras = extras or {}


# -- sinks -----------------------------------------------------------------------------------
class MemorySink:
    """Keeps every chunk in memory."""

    def __init__(self):
        self.parts: dict[str, list] = {}
        self.names: dict[str, list[str]] = {}

    def declare(self, key: str, names: list[str]) -> None:
        self.names[key] = list(names)
        self.parts[key] = []

    def append(self, key: str, array: np.ndarray) -> None:
        # a slice would keep the solver's whole block of states alive: copy those only
        a = np.asarray(array, dtype=float)
        self.parts[key].append(a.copy() if a.base is not None else a)

    def arrays(self) -> dict:
        out = {}
        for key, chunks in self.parts.items():
            if chunks:
                out[key] = np.concatenate(chunks, axis=0)
            else:
                width = len(self.names.get(key, []))
                out[key] = np.empty((0,) if key in ("time", "energy/stored") else (0, width))
        return out

    def abort(self) -> None:
        self.parts.clear()


class H5Sink:
    """Streams chunks to an HDF5 file written under a temporary name, renamed on success."""

    def __init__(self, path):
        import h5py

        from .atomic import temporary_beside

        self.path = os.fspath(path)
        self.tmp = temporary_beside(self.path, ".h5.tmp")
        self.file = h5py.File(self.tmp, "w")
        self.names: dict[str, list[str]] = {}
        self._empty: list[str] = []
        self._open = True

    def declare(self, key: str, names: list[str]) -> None:
        self.names[key] = list(names)
        if key not in ("time", "energy/stored") and not names:
            self._empty.append(key)  # zero-width: written at the end, unchunked
            return
        shape = (0,) if key in ("time", "energy/stored") else (0, len(names))
        maxshape = (None,) if len(shape) == 1 else (None, len(names))
        chunks = (4096,) if len(shape) == 1 else (max(1, min(4096, 2_000_000 // max(1, len(names)))),
                                                   max(1, len(names)))
        ds = self.file.create_dataset(key, shape=shape, maxshape=maxshape, dtype="f8",
                                      chunks=chunks)
        if len(shape) == 2:
            ds.attrs["names"] = np.asarray(names, dtype=object).astype("S") if names else \
                np.zeros(0, dtype="S1")

    def append(self, key: str, array: np.ndarray) -> None:
        if key in self._empty:
            return
        ds = self.file[key]
        n0 = ds.shape[0]
        ds.resize(n0 + array.shape[0], axis=0)
        ds[n0:] = array

    def write_table(self, group: str, frame: pd.DataFrame) -> None:
        _write_frame(self.file, group, frame)

    def finish(self, attrs: dict) -> None:
        n_rows = self.file["time"].shape[0] if "time" in self.file else 0
        for key in self._empty:
            ds = self.file.create_dataset(key, data=np.empty((n_rows, 0)))
            ds.attrs["names"] = np.zeros(0, dtype="S1")
        for k, v in attrs.items():
            self.file.attrs[k] = v
        self.file.close()
        self._open = False
        from .atomic import commit

        commit(self.tmp, self.path)

    def abort(self) -> None:
        if self._open:
            try:
                self.file.close()
            except Exception:  # pragma: no cover - closing a broken file
                pass
            self._open = False
        from .atomic import discard

        discard(self.tmp)


def _write_frame(h5, group: str, frame: pd.DataFrame) -> None:
    g = h5.create_group(group)
    g.attrs["columns"] = json.dumps(list(map(str, frame.columns)))
    for col in frame.columns:
        values = frame[col].to_numpy()
        if values.dtype.kind in "OUS" or str(frame[col].dtype) in ("string", "str"):
            g.create_dataset(str(col), data=np.asarray([str(v) for v in values], dtype="S"))
        else:
            g.create_dataset(str(col), data=values.astype(float))


def _read_frame(h5, group: str) -> pd.DataFrame:
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


# -- the recorder ----------------------------------------------------------------------------
class Recorder:
    """Receives :class:`Chunk` objects from a solver, writes histories, tracks statistics.

    Parameters
    ----------
    asm : Assembled
    out_nodes : array of node indices whose temperatures each chunk carries (``Chunk.T``)
    record : list of node indices (subset of out_nodes) to keep as histories
    links : list of link indices to keep as heat-flow histories
    boundary_links : list of link indices whose energies each chunk carries
    tracker : rcsim.limits.ExcursionTracker or None, with limit node indices ``limit_nodes``
    sink : MemorySink or H5Sink
    extra_names : {key: names} of extra series (liquid fraction, ...)
    """

    def __init__(self, asm, out_nodes, record, links, boundary_links, tracker, limit_nodes, sink,
                 extra_names=None, extra_sources=()):
        self.asm = asm
        self.out_nodes = np.asarray(out_nodes, dtype=np.int64)
        pos = {int(i): p for p, i in enumerate(self.out_nodes)}
        self.rec_cols = np.asarray([pos[int(i)] for i in record], dtype=np.int64)
        # every output column recorded, in order: the chunk's array goes to the sink as it is
        self._rec_all = np.array_equal(self.rec_cols, np.arange(len(out_nodes)))
        self.rec_names = [asm.node_names[int(i)] for i in record]
        self.links = np.asarray(links, dtype=np.int64)
        n = asm.n_nodes
        seg = asm.link_first_seg[self.links]
        self._flow_a = asm.seg_a[seg]
        self._flow_b = asm.seg_b[seg]
        self._flow_g = asm.seg_g[seg]
        # flow ends as columns of [T_out | u]: a node by its place in out_nodes, a boundary after
        m = len(out_nodes)
        self._a_col = np.asarray([pos[int(p)] if p < n else m + int(p - n) for p in self._flow_a],
                                 dtype=np.int64)
        self._b_col = np.asarray([pos[int(p)] if p < n else m + int(p - n) for p in self._flow_b],
                                 dtype=np.int64)
        # links whose first segment is nonlinear: their flows come from the segment laws
        self._nl_links = np.empty(0, dtype=np.int64)
        if asm.nl is not None and self.links.size:
            nl_pos = {int(sg): k for k, sg in enumerate(asm.nl.seg)}
            which = [(j, nl_pos[int(sg)]) for j, sg in enumerate(seg) if int(sg) in nl_pos]
            if which:
                self._nl_links = np.asarray([j for j, _ in which], dtype=np.int64)
                self._nl_cols = np.asarray([k for _, k in which], dtype=np.int64)
                self._nl_a = np.asarray([pos[int(p)] if p < n else m + int(p - n)
                                         for p in asm.seg_a[asm.nl.seg]], dtype=np.int64)
                self._nl_b = np.asarray([pos[int(p)] if p < n else m + int(p - n)
                                         for p in asm.seg_b[asm.nl.seg]], dtype=np.int64)
        self.tracker = tracker
        self.limit_cols = np.asarray([pos[int(i)] for i in limit_nodes], dtype=np.int64)
        self.sink = sink
        self.boundary_links = list(boundary_links)
        self.extra_names = dict(extra_names or {})
        self.tmin = np.full(self.out_nodes.size, np.inf)
        self.tmax = np.full(self.out_nodes.size, -np.inf)
        self.tlast = np.full(self.out_nodes.size, np.nan)
        self.last_energy = None
        self.n_samples = 0
        self.last_time = None
        self.tables: dict = {}
        sink.declare("time", [])
        sink.declare("temperature", self.rec_names)
        sink.declare("heat_flow", [asm.link_names[i] for i in self.links])
        sink.declare("boundary_temperature", asm.boundary_names)
        sink.declare("source_power", asm.source_names)
        sink.declare("energy/stored", [])
        sink.declare("energy/links", [asm.link_names[i] for i in self.boundary_links])
        sink.declare("energy/sources", list(asm.source_names) + list(extra_sources))
        for key, names in self.extra_names.items():
            sink.declare(key, names)

    def add(self, c: Chunk) -> None:
        if c.t.size == 0:
            return
        T = c.T
        cmin, cmax = T.min(axis=0), T.max(axis=0)       # NaN and infinities show in these too
        if not (np.isfinite(cmin).all() and np.isfinite(cmax).all()) or \
                (cmin.size and cmin.min() < -273.15):
            self._check_physical(c.t, T)
        self.sink.append("time", c.t)
        self.sink.append("temperature", T if self._rec_all else T[:, self.rec_cols])
        if self.links.size:
            points = np.hstack([T, c.u])
            with np.errstate(invalid="ignore"):
                flows = self._flow_g[None, :] * (points[:, self._a_col] - points[:, self._b_col])
            if self._nl_links.size:
                q = self.asm.nl.flows(points[:, self._nl_a], points[:, self._nl_b])
                flows[:, self._nl_links] = q[:, self._nl_cols]
            self.sink.append("heat_flow", flows)
        else:
            self.sink.append("heat_flow", np.zeros((c.t.size, 0)))
        self.sink.append("boundary_temperature", c.u)
        self.sink.append("source_power", c.s)
        self.sink.append("energy/stored", c.e_stored)
        self.sink.append("energy/links", c.e_links)
        self.sink.append("energy/sources", c.e_sources)
        for key in self.extra_names:
            self.sink.append(key, c.extras[key])
        self.tmin = np.minimum(self.tmin, cmin)
        self.tmax = np.maximum(self.tmax, cmax)
        self.tlast = T[-1].copy()
        if self.tracker is not None:
            self.tracker.update(c.t, T[:, self.limit_cols])
        self.last_energy = (float(c.e_stored[-1]), c.e_links[-1].copy(), c.e_sources[-1].copy())
        self.last_time = float(c.t[-1])
        self.n_samples += c.t.size

    def _check_physical(self, t: np.ndarray, T: np.ndarray) -> None:
        """Refuse non-finite temperatures and temperatures below absolute zero."""
        from .errors import SolverError

        bad = ~np.isfinite(T)
        if bad.any():
            k, j = np.argwhere(bad)[0]
            raise SolverError("the solution is no longer a finite number", time=float(t[k]),
                              node=self.asm.node_names[int(self.out_nodes[j])],
                              hint="check for huge source powers or conductances, tiny "
                                   "capacities, or try the stiff solver with a tighter rtol")
        if T.size and T.min() < -273.15:
            k = int(np.argmax((T < -273.15).any(axis=1)))   # the first sample below
            j = int(np.argmin(T[k]))
            raise SolverError(f"the temperature fell below absolute zero ({T[k, j]:.4g} degC)",
                              time=float(t[k]), node=self.asm.node_names[int(self.out_nodes[j])],
                              hint="a cooling source draws more heat than can reach the node; "
                                   "check source powers, capacities and resistances")

    def energy_balance(self) -> tuple[float, dict]:
        """Relative closure error and the energy terms at the end of the run.

        The error is ``|dE_stored - E_links - E_sources|`` divided by the larger of the sum of
        the magnitudes of those terms and the energy needed to move every capacity by 1 K.
        """
        stored, links, sources = self.last_energy
        total_in = float(links.sum() + sources.sum())
        scale = abs(stored) + float(np.abs(links).sum() + np.abs(sources).sum())
        scale = max(scale, float(self.asm.capacity.sum()) * 1.0, 1e-300)
        terms = {"stored [J]": stored, "in through links [J]": float(links.sum()),
                 "from sources [J]": float(sources.sum())}
        return abs(stored - total_in) / scale, terms

    def node_table(self) -> pd.DataFrame:
        names = [self.asm.node_names[i] for i in self.out_nodes]
        return pd.DataFrame({"node": names, "min [degC]": self.tmin, "max [degC]": self.tmax,
                             "final [degC]": self.tlast})

    def limits_table(self) -> pd.DataFrame:
        from .limits import LIMIT_COLUMNS, ExcursionTracker

        if self.tracker is None:
            return ExcursionTracker([], [], []).table()[LIMIT_COLUMNS]
        return self.tracker.table()


# -- the result ------------------------------------------------------------------------------
class Result:
    """Histories and summaries of one run.

    Attributes
    ----------
    temperatures : DataFrame
        index time [s], one column per recorded node [degC].
    heat_flows : DataFrame
        one column per recorded link [W], positive from first to second point, measured at the
        link's first end.
    boundary_temperatures, source_powers : DataFrame
    energy : DataFrame
        cumulative energy [J]: ``stored`` (change since t = 0), one ``link:<name>`` column per link
        touching a boundary (heat that entered the nodes through it), one ``source:<name>`` column
        per source.
    energy_balance : float
        Relative closure error of stored vs. exchanged energy.
    limits : DataFrame
        One row per limit: hold time, time out, worst excursion, degree-hours, margin.
    nodes : DataFrame
        min, max and final temperature of every tracked node.
    thermostats : DataFrame
        per thermostat: duty (fraction of the time on; mean power over full power for
        proportional control), on_time [s], switches, energy [J].
    liquid_fraction, thermostat_power : DataFrame
        histories of phase-change nodes [-] and thermostat powers [W, into the node].
    solver : str
    stats : dict
        Solver statistics (steps, function and Jacobian evaluations, wall time [s], ...).
    """

    def __init__(self, arrays: dict | None = None, names: dict | None = None, meta: dict | None = None,
                 limits: pd.DataFrame | None = None, nodes: pd.DataFrame | None = None,
                 path: str | None = None, thermostats: pd.DataFrame | None = None):
        self._arrays = arrays if arrays is not None else {}
        self._names = names or {}
        self.meta = dict(meta or {})
        self.limits = limits if limits is not None else pd.DataFrame()
        self.nodes = nodes if nodes is not None else pd.DataFrame()
        self.thermostats = thermostats if thermostats is not None else pd.DataFrame()
        self.path = path

    # -- metadata ----------------------------------------------------------------------------
    @property
    def solver(self) -> str:
        return str(self.meta.get("solver", ""))

    @property
    def energy_balance(self) -> float:
        return float(self.meta.get("energy_balance", np.nan))

    @property
    def stats(self) -> dict:
        raw = self.meta.get("stats", "{}")
        return json.loads(raw) if isinstance(raw, str) else dict(raw)

    @property
    def time_constants(self) -> np.ndarray:
        """Time constants [s] of the network's linear part, longest first (empty if unknown)."""
        raw = self.meta.get("time_constants", [])
        if isinstance(raw, str):
            raw = json.loads(raw) if raw else []
        return np.asarray(raw, dtype=float)

    @property
    def scenario(self) -> str:
        return str(self.meta.get("scenario", ""))

    @property
    def start_time(self):
        s = self.meta.get("start_time", "")
        return pd.Timestamp(s) if s else None

    # -- histories ---------------------------------------------------------------------------
    def _array(self, key: str) -> np.ndarray:
        if key not in self._arrays and self.path is not None:
            import h5py

            from .profiles import check_fits_in_memory

            with h5py.File(self.path, "r") as h5:
                if key in h5:
                    ds = h5[key]
                    check_fits_in_memory(ds.size * ds.dtype.itemsize * 2,
                                         f"{os.path.basename(self.path)}: /{key}",
                                         "loading this history")
                    self._arrays[key] = ds[()]
        return self._arrays.get(key, np.empty((0, 0)))

    def _frame(self, key: str) -> pd.DataFrame:
        data = self._array(key)
        names = self._names.get(key, [])
        t = self._array("time")
        if data.size == 0 and not names:
            return pd.DataFrame(index=pd.Index(t, name="time [s]"))
        return pd.DataFrame(data, index=pd.Index(t, name="time [s]"), columns=names)

    @property
    def time(self) -> np.ndarray:
        return self._array("time")

    @property
    def temperatures(self) -> pd.DataFrame:
        return self._frame("temperature")

    @property
    def heat_flows(self) -> pd.DataFrame:
        return self._frame("heat_flow")

    @property
    def boundary_temperatures(self) -> pd.DataFrame:
        return self._frame("boundary_temperature")

    @property
    def source_powers(self) -> pd.DataFrame:
        return self._frame("source_power")

    @property
    def liquid_fraction(self) -> pd.DataFrame:
        return self._frame("liquid_fraction")

    @property
    def thermostat_power(self) -> pd.DataFrame:
        return self._frame("thermostat_power")

    @property
    def energy(self) -> pd.DataFrame:
        t = self._array("time")
        cols = {"stored": self._array("energy/stored")}
        for j, nm in enumerate(self._names.get("energy/links", [])):
            cols[f"link:{nm}"] = self._array("energy/links")[:, j]
        for j, nm in enumerate(self._names.get("energy/sources", [])):
            cols[f"source:{nm}"] = self._array("energy/sources")[:, j]
        return pd.DataFrame(cols, index=pd.Index(t, name="time [s]"))

    # -- output ------------------------------------------------------------------------------
    def save(self, path) -> None:
        """Write to HDF5 (atomically: a temporary file renamed when complete)."""
        import h5py  # noqa: F401 - imported by H5Sink

        sink = H5Sink(path)
        try:
            for key in ["time"] + _SERIES:
                arr = self._array(key)
                if key != "time" and key not in self._names and arr.size == 0:
                    continue
                sink.declare(key, self._names.get(key, []))
                if arr.size:
                    sink.append(key, arr)
            sink.write_table("limits", self.limits)
            sink.write_table("nodes", self.nodes)
            if len(self.thermostats):
                sink.write_table("thermostats", self.thermostats)
            sink.finish(_h5_attrs(self.meta))
        except BaseException:
            sink.abort()
            raise

    @classmethod
    def load(cls, path) -> "Result":
        """Read a result file written by :meth:`save` or by a streamed run.

        Histories are read lazily, on first access.
        """
        import h5py

        path = os.fspath(path)
        label = os.path.basename(path)
        if os.path.isdir(path):
            raise DataError("is a directory, not a result file", label)
        if not os.path.exists(path):
            raise DataError("file not found", label)
        try:
            with h5py.File(path, "r") as h5:
                if "time" not in h5 or "rcsim_version" not in h5.attrs:
                    raise DataError("is not an rcsim result file (no /time or no rcsim_version)",
                                    label)
                names = {}
                for key in _SERIES:
                    if key in h5 and "names" in h5[key].attrs:
                        names[key] = [n.decode("utf-8") if isinstance(n, bytes) else str(n)
                                      for n in h5[key].attrs["names"]]
                meta = {k: (v.decode() if isinstance(v, bytes) else v) for k, v in h5.attrs.items()}
                meta = {k: (v.item() if hasattr(v, "item") and np.ndim(v) == 0 else v)
                        for k, v in meta.items()}
                limits = _read_frame(h5, "limits")
                nodes = _read_frame(h5, "nodes")
                thermostats = _read_frame(h5, "thermostats")
        except OSError as exc:
            raise DataError(f"cannot be read as HDF5 ({exc})", label) from None
        return cls({}, names, meta, limits, nodes, path=path, thermostats=thermostats)

    def to_csv(self, path) -> None:
        """Write temperatures, boundary temperatures, source powers and heat flows to one CSV.

        Columns are prefixed ``T:``, ``boundary:``, ``source:`` and ``flow:``; written atomically.
        """
        frames = [self.temperatures.add_prefix("T:"),
                  self.boundary_temperatures.add_prefix("boundary:"),
                  self.source_powers.add_prefix("source:"),
                  self.heat_flows.add_prefix("flow:")]
        table = pd.concat(frames, axis=1)
        from .atomic import atomic_path

        with atomic_path(path, ".csv.tmp") as tmp:
            table.to_csv(tmp, float_format="%.10g")

    @property
    def period(self) -> float | None:
        """Period of the inputs [s] when the run started in its periodic regime, else None."""
        p = self.meta.get("period")
        return float(p) if p not in (None, "", 0, 0.0) else None

    def periodic_response(self, reference: str | None = None, period=None) -> pd.DataFrame:
        """Mean, swing, amplitude, time of peak, lag and decrement of every node over one period.

        Uses the last full period of the run (``period`` [s]; default the inputs' period stored
        with a run that started periodic). The amplitude and phase are those of the first
        harmonic (the discrete Fourier coefficient at 2 pi / period over one period of samples),
        so the lag of a node behind the reference boundary is the phase difference over omega,
        and the decrement is the ratio of their amplitudes. ``reference`` defaults to the boundary
        with the largest first harmonic.

        Columns: ``mean [degC]``, ``swing [K]`` (max - min), ``amplitude [K]``, ``peak [s]``
        (time of the maximum within the period, from its start), ``lag [s]``, ``decrement [-]``.
        """
        from .units import to_si

        P = self.period if period is None else to_si(period, "time", "period")
        if P is None:
            raise DataError("the run did not start periodic, so give the period", "period")
        t = self.time
        step = float(np.median(np.diff(t))) if t.size > 1 else 0.0
        n = int(round(P / step)) if step > 0 else 0
        if n < 4 or t.size < n + 1 or abs(n * step - P) > 1e-6 * P:
            raise DataError(f"the run needs at least one period ({P:g} s) of evenly spaced "
                            f"samples whose step divides it", "period")
        sel = slice(t.size - 1 - n, t.size - 1)          # the last full period, end excluded
        tt = t[sel]
        omega = 2 * np.pi / P
        basis = np.exp(-1j * omega * tt)
        frames = {**{c: self.temperatures[c].to_numpy()[sel] for c in self.temperatures.columns}}
        bounds = {c: self.boundary_temperatures[c].to_numpy()[sel]
                  for c in self.boundary_temperatures.columns}

        def harmonic(x):
            return 2.0 / n * np.sum(x * basis)

        bh = {c: harmonic(v) for c, v in bounds.items()}
        if reference is None:
            if not bh:
                raise DataError("no boundary to compare with", "reference")
            reference = max(bh, key=lambda c: abs(bh[c]))
        if reference not in bh:
            from .materials import suggest

            raise DataError(f"unknown boundary {reference!r}", "reference", suggest(reference, bh))
        ref = bh[reference]
        rows = []
        for name, x in list(frames.items()) + [(f"{c} (boundary)", v) for c, v in bounds.items()]:
            h = harmonic(x)
            lag = ((np.angle(ref) - np.angle(h)) / omega) % P if abs(ref) > 0 and abs(h) > 0 \
                else np.nan
            rows.append({"node": name, "mean [degC]": float(np.mean(x)),
                         "swing [K]": float(np.max(x) - np.min(x)),
                         "amplitude [K]": float(abs(h)),
                         "peak [s]": float((tt[int(np.argmax(x))] - tt[0]) % P),
                         "lag [s]": float(lag),
                         "decrement [-]": float(abs(h) / abs(ref)) if abs(ref) > 0 else np.nan})
        out = pd.DataFrame(rows).set_index("node")
        out.attrs["reference"] = reference
        out.attrs["period"] = P
        return out

    def plot(self, kind: str = "history", **kwargs):
        """Draw the result (see :mod:`rcsim.plotting`); returns what was drawn."""
        from . import plotting  # plotting sits above results; thin hand-off

        return plotting.plot_result(self, kind=kind, **kwargs)

    def summary(self) -> str:
        """Plain-text summary of the run."""
        lines = []
        lines.append(f"solver {self.solver}, {len(self.time)} samples, energy balance "
                     f"{self.energy_balance:.2e}")
        return "\n".join(lines)


def _h5_attrs(meta: dict) -> dict:
    from . import __version__

    out = {}
    for k, v in meta.items():
        if isinstance(v, (dict, list)):
            v = json.dumps(v)
        if v is None:
            v = ""
        out[k] = v
    out.setdefault("rcsim_version", __version__)
    out.setdefault("created", _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"))
    return out
