"""Recording a run: chunks of samples from a solver, sinks in memory or streamed to HDF5.

A solver hands consecutive samples to a :class:`Recorder` as :class:`Chunk` objects; the recorder
keeps the histories asked for (:class:`RecordingPlan`), the heat flows, energies, extremes and
limit excursions, and writes them to a sink: :class:`MemorySink`, or :class:`H5Sink` which
streams them to an HDF5 file written under a temporary name and renamed when complete (memory
stays bounded on long runs).
"""

from __future__ import annotations

import threading
import unicodedata
from dataclasses import dataclass, field
from typing import NamedTuple

import numpy as np
import pandas as pd

# the HDF5 side lives in rcsim.h5files; re-exported here for older imports
from .h5files import ONE_D
from .h5files import (NAMES_ATTRIBUTE_BYTES, H5Sink, names_dataset, read_frame,  # noqa: F401
                      read_names, write_frame, write_names)
from .base import suggest
from .errors import InputError, NetworkError, SolverError
from .limits import LIMIT_COLUMNS, ExcursionTracker

__all__ = ["Chunk", "MemorySink", "H5Sink", "Recorder", "RecordingPlan", "EnergyTotals",
           "NonlinearFlows",
           "write_frame", "read_frame", "write_names", "read_names", "names_dataset",
           "NAMES_ATTRIBUTE_BYTES", "work_array", "work_arrays_kept", "release_work_arrays"]


#: The limits table of a run without limits, made once (:meth:`Recorder.limits_table`).
_EMPTY_LIMITS: list = []

#: Scratch arrays of up to this many numbers are kept (per thread) for the next chunk and the
#: next run (:func:`work_array`); larger ones are made for the run and dropped with it.
WORK_KEEP = 2_000_000
_WORK = threading.local()


def work_array(key: str, shape: tuple) -> np.ndarray:
    """A contiguous float scratch array of ``shape`` under the name ``key``, whatever it last
    held. Kept per thread from chunk to chunk and from run to run: touching fresh memory costs
    a page fault per 4 KiB (about 3 microseconds each on a virtual machine), more than the
    arithmetic done in a chunk's arrays. Whoever asks for ``key`` writes it before reading.
    :func:`release_work_arrays` gives them back."""
    size = 1
    for d in shape:
        size *= int(d)
    store = getattr(_WORK, "arrays", None)
    if store is None:
        store = _WORK.arrays = {}
    flat = store.get(key)
    if flat is None or flat.size < size:
        flat = np.empty(size)
        if size <= WORK_KEEP:
            store[key] = flat
        else:
            store.pop(key, None)
    return flat[:size].reshape(shape)


def work_arrays_kept() -> int:
    """Bytes of scratch arrays this thread keeps for the next run (:func:`work_array`): up to
    :data:`WORK_KEEP` numbers (16 MB) for each of a handful of names, so at most about 80 MB."""
    store = getattr(_WORK, "arrays", None) or {}
    return int(sum(a.nbytes for a in store.values()))


def release_work_arrays() -> int:
    """Drop the scratch arrays this thread keeps between runs and return their bytes.

    A run keeps them because fresh memory costs a page fault per 4 KiB; a program that has
    finished running (or runs rarely, in a long-lived process) can give the memory back with
    ``rcsim.recording.release_work_arrays()``. The next run makes them again. Results never
    refer to these arrays, so every result stays valid.
    """
    store = getattr(_WORK, "arrays", None)
    if not store:
        return 0
    freed = work_arrays_kept()
    store.clear()
    return freed


class Chunk:
    """A block of consecutive samples handed from a solver to the :class:`Recorder`.

    Attributes
    ----------
    t : (c,) times [s]
    T : (c, out nodes) temperatures [degC] of the plan's ``out_nodes``, in either memory order
        (a path that computes them node by node hands a column-major array: no copy is made)
    u, s : (c, boundaries), (c, sources) input values
    e_links, e_sources : cumulative energies [J]; e_stored : (c,) change of stored energy [J]
    extras : {series key: (c, k) array} extra histories
    evaluate : callable or None
        ``evaluate(times, columns)`` gives the temperatures [degC] of output columns
        ``columns`` (positions in ``out_nodes``) at ``times`` (arrays of one length) anywhere
        between the previous sample and ``t[-1]``, from the solution itself (used to locate
        band crossings between samples; None: linear between samples).
    T_flow : (c, out nodes) or None
        Temperatures [degC] the heat flows are computed from, where a path gives ones more
        accurate for that purpose than ``T`` (the stiff path: consistent with the stored-energy
        rates, so a stiff link's flow does not carry its conductance times the state's error);
        None: ``T``.
    """

    __slots__ = ("t", "T", "u", "s", "e_links", "e_sources", "e_stored", "extras", "evaluate",
                 "T_flow")

    def __init__(self, t, T, u, s, e_links, e_sources, e_stored, extras=None, evaluate=None,
                 T_flow=None):
        self.t, self.T, self.u, self.s = t, T, u, s
        self.e_links, self.e_sources, self.e_stored = e_links, e_sources, e_stored
        self.extras = extras or {}
        self.evaluate = evaluate
        self.T_flow = T_flow


# -- sinks -----------------------------------------------------------------------------------
class _Growing:
    """A history filled chunk by chunk into a preallocated column-major array (doubled when a
    run delivers more rows than announced: never a concatenation of all chunks)."""

    __slots__ = ("data", "rows")

    def __init__(self, width: int | None, capacity: int):
        shape = (capacity,) if width is None else (width, capacity)
        self.data = np.empty(shape)          # row-major (width, rows): column-major history
        self.rows = 0

    def _room(self, c: int) -> None:
        need = self.rows + c
        cap = self.data.shape[-1]
        if need > cap:
            grown = np.empty(self.data.shape[:-1] + (max(need, 2 * cap),))
            grown[..., :self.rows] = self.data[..., :self.rows]
            self.data = grown

    def slot(self, c: int) -> np.ndarray:
        """The next ``c`` rows as a writable (c, width) view, to be filled and then appended."""
        self._room(c)
        return self.data[:, self.rows:self.rows + c].T

    def append(self, array: np.ndarray) -> None:
        c = array.shape[0]
        need = self.rows + c
        self._room(c)
        data = self.data
        if data.ndim == 2 and c and array.ndim == 2 and array.base is data and \
                array.__array_interface__["data"][0] == \
                data.__array_interface__["data"][0] + self.rows * data.strides[1] \
                and array.strides == (data.strides[1], data.strides[0]):
            self.rows = need                  # filled in place through slot()
            return
        if self.data.ndim == 1:
            self.data[self.rows:need] = array
        else:
            self.data[:, self.rows:need] = array.T
        self.rows = need

    def view(self) -> np.ndarray:
        """(rows,) or (rows, width), column-major: a view, no copy."""
        return self.data[:self.rows] if self.data.ndim == 1 else self.data[:, :self.rows].T


class MemorySink:
    """Keeps the histories in memory, in arrays allocated once for the announced number of
    samples (:meth:`reserve`)."""

    def __init__(self):
        self.buffers: dict[str, _Growing] = {}
        self.names: dict[str, list[str]] = {}
        self.expected = 1024

    def reserve(self, samples: int) -> None:
        """The number of samples the run will deliver (histories are allocated at that size)."""
        self.expected = max(1, int(samples))

    def declare(self, key: str, names: list[str]) -> None:
        self.names[key] = list(names)
        width = None if key in ONE_D else len(names)
        self.buffers[key] = _Growing(width, self.expected)

    def append(self, key: str, array: np.ndarray) -> None:
        self.buffers[key].append(np.asarray(array, dtype=float))

    def slot(self, key: str, rows: int) -> np.ndarray:
        """Where the next ``rows`` samples of ``key`` go: a (rows, width) writable view that a
        path may fill before handing it back to :meth:`append` (no copy then)."""
        return self.buffers[key].slot(rows)

    @property
    def parts(self) -> dict:
        """{key: [history]} (older form: a list of one array per key)."""
        return {key: [b.view()] for key, b in self.buffers.items()}

    def arrays(self) -> dict:
        return {key: b.view() for key, b in self.buffers.items()}

    def abort(self) -> None:
        self.buffers.clear()


# -- what a run records ------------------------------------------------------------------------
@dataclass
class RecordingPlan:
    """What a run records (indices into the assembly's nodes and links).

    Attributes
    ----------
    out_nodes : node indices whose temperatures each chunk carries (``Chunk.T``): the recorded
        nodes, the limits' nodes and the ends of the recorded links.
    record : node indices (a subset of ``out_nodes``) kept as histories.
    links : link indices kept as heat-flow histories.
    boundary_links : link indices touching a boundary, whose energies each chunk carries.
    limit_nodes, limit_kinds, limit_values : one entry per limit: node index, 'min' or 'max',
        temperature [degC].
    extra_names : {series key: names} of extra histories (liquid fraction, thermostat power).
    extra_sources : names of energy sources after the network's sources (thermostats).
    derived : series computed from the recorded temperatures and inputs (sol-air temperatures).
    """

    out_nodes: list
    record: list
    links: list
    boundary_links: list
    limit_nodes: list = field(default_factory=list)
    limit_kinds: list = field(default_factory=list)
    limit_values: list = field(default_factory=list)
    extra_names: dict = field(default_factory=dict)
    extra_sources: list = field(default_factory=list)
    #: series computed from each chunk (e.g. rcsim.surfaces.SolAirSeries): objects with ``key``,
    #: ``names``, ``nodes`` (node indices) and ``values(t, T of those nodes, u, s)``
    derived: list = field(default_factory=list)
    #: observers of each chunk that keep no history (rcsim.run_warnings): objects with ``nodes``
    #: (node indices) and ``observe(t, T of those nodes, u, **extra)``; ``extra`` holds what a
    #: watcher declares it wants (``wants``): ``nonlinear``, the flows of the nonlinear segments
    #: the recorder computes anyway (:class:`NonlinearFlows`), and ``evaluate``, the chunk's
    #: temperatures between samples of the watcher's nodes (``evaluate(times, columns)``,
    #: columns positions in the watcher's ``nodes``; None where the path gives none)
    watchers: list = field(default_factory=list)

    def tracker(self, asm):
        """A fresh excursion tracker of the limits (None without limits)."""
        if not self.limit_nodes:
            return None
        return ExcursionTracker([asm.node_names[i] for i in self.limit_nodes], self.limit_kinds,
                                self.limit_values)


def plan_recording(asm, record=None, limits=(), thermostat_names=(),
                   derived=(), watchers=()) -> RecordingPlan:
    """What to record for ``record`` (node names, one name, or None for every node), the
    network's ``limits`` (:class:`rcsim.network.Limit`) and thermostats.

    A link's heat flow is kept when both its ends are recorded nodes or boundaries.
    """
    names = asm.node_names
    if record is None:
        rec_idx = list(range(asm.n_nodes))
        links = list(range(len(asm.link_names)))
    else:
        if isinstance(record, str):
            record = [record]
        rec_idx = []
        for r in (unicodedata.normalize("NFC", r) if isinstance(r, str) else r for r in record):
            if r not in names:
                raise InputError(f"unknown node {r!r}", "record", suggest(r, names))
            rec_idx.append(names.index(r))
        avail = set(rec_idx)
        a, b = asm.link_ends(np.arange(len(asm.link_names)))
        links = [li for li in range(len(asm.link_names))
                 if all(p >= asm.n_nodes or int(p) in avail for p in (a[li], b[li]))]
    plan = RecordingPlan([], rec_idx, links, asm.boundary_segments().links)
    for lim in limits:
        if lim.node not in names:
            raise NetworkError(f"unknown node {lim.node!r}", lim.where, suggest(lim.node, names))
        for kind, val in (("min", lim.min), ("max", lim.max)):
            if val is not None:
                plan.limit_nodes.append(names.index(lim.node))
                plan.limit_kinds.append(kind)
                plan.limit_values.append(val)
    ends = set()
    if links:
        a, b = asm.link_ends(links)
        ends = {int(p) for p in np.concatenate([a, b]) if p < asm.n_nodes}
        if asm.nl is not None:   # the flows of nonlinear links need both ends of their segments
            ends |= {int(p) for p in np.concatenate([asm.seg_a[asm.nl.seg],
                                                     asm.seg_b[asm.nl.seg]]) if p < asm.n_nodes}
    plan.derived = list(derived)
    plan.watchers = list(watchers)
    ends |= {int(i) for d in plan.derived + plan.watchers for i in d.nodes}
    plan.out_nodes = sorted(set(rec_idx) | set(plan.limit_nodes) | ends)
    if asm.phase_change:
        plan.extra_names["liquid_fraction"] = [names[i] for i in sorted(asm.phase_change)]
    if thermostat_names:
        plan.extra_names["thermostat_power"] = list(thermostat_names)
        plan.extra_sources = list(thermostat_names)
    for d in plan.derived:
        plan.extra_names[d.key] = list(d.names)
    return plan


class NonlinearFlows(NamedTuple):
    """The nonlinear segments of a chunk (``asm.nl``, in its order), computed once by the
    :class:`Recorder` and shared by the heat-flow histories and the watchers."""

    q: np.ndarray               # (c, segments) flow [W] from end a to end b
    ta: np.ndarray              # (c, segments) temperature of end a [degC]
    tb: np.ndarray              # (c, segments) temperature of end b [degC]


class EnergyTotals(NamedTuple):
    """Energies since t = 0 [J] at the last recorded sample."""

    stored: float               # change of stored energy
    links: np.ndarray           # heat in through each boundary link
    sources: np.ndarray         # from each source (thermostats last)


# -- the recorder ----------------------------------------------------------------------------
class Recorder:
    """Receives :class:`Chunk` objects from a solver, writes histories, tracks statistics.

    Parameters
    ----------
    asm : Assembled
    plan : RecordingPlan
        What to record.
    sink : MemorySink or H5Sink
    samples : int, optional
        How many samples the run will deliver: histories are allocated once at that size.

    Heat flows of the recorded links are each link's conductance times the difference of its
    end temperatures, written into their history: runs of links between consecutive output
    columns (a chain of nodes) subtract slices, the other links gather their ends from the
    chunk's node columns and the boundary values. The histories are stored column-major, so a
    chunk of temperatures computed node by node goes to the sink without a transposing copy.
    """

    def __init__(self, asm, plan: RecordingPlan, sink, samples: int | None = None):
        self.asm = asm
        self.plan = plan
        out_nodes = plan.out_nodes
        self.out_nodes = np.asarray(out_nodes, dtype=np.int64)
        pos = {int(i): p for p, i in enumerate(self.out_nodes)}
        self.rec_cols = np.asarray([pos[int(i)] for i in plan.record], dtype=np.int64)
        # every output column recorded, in order: the chunk's array goes to the sink as it is
        self._rec_all = np.array_equal(self.rec_cols, np.arange(len(out_nodes)))
        self.rec_names = [asm.node_names[int(i)] for i in plan.record]
        self.links = np.asarray(plan.links, dtype=np.int64)
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
        # flows^T = g * (T[a] - T[b]) (links x samples), written into the history: links whose
        # ends are runs of consecutive output columns (a sliced layer: link j joins columns
        # j and j + 1) subtract slices of the temperatures, one pass and no gather; the others
        # gather their ends (a boundary end reads the boundary values)
        self._runs, rest = _column_runs(self._a_col, self._b_col, m)
        self._rest = rest
        self._a_rest, self._b_rest = self._a_col[rest], self._b_col[rest]
        self._g_col = np.ascontiguousarray(self._flow_g[:, None])
        # links whose first segment is nonlinear: their flows come from the segment laws
        self._nl_links = np.empty(0, dtype=np.int64)
        if asm.nl is not None and self.links.size:
            nl_pos = {int(sg): k for k, sg in enumerate(asm.nl.seg)}
            which = [(j, nl_pos[int(sg)]) for j, sg in enumerate(seg) if int(sg) in nl_pos]
            if which:
                self._nl_links = np.asarray([j for j, _ in which], dtype=np.int64)
                self._nl_cols = np.asarray([k for _, k in which], dtype=np.int64)
        # the nonlinear segments' flows, once per chunk, for the histories and the watchers
        self._nl_wanted = asm.nl is not None and (
            bool(self._nl_links.size)
            or any("nonlinear" in getattr(w, "wants", ()) for w in plan.watchers))
        if self._nl_wanted:
            self._nl_a = np.asarray([pos[int(p)] if p < n else m + int(p - n)
                                     for p in asm.seg_a[asm.nl.seg]], dtype=np.int64)
            self._nl_b = np.asarray([pos[int(p)] if p < n else m + int(p - n)
                                     for p in asm.seg_b[asm.nl.seg]], dtype=np.int64)
        # links whose first segment's conductance varies in time: G_eff(t) at each sample
        self._var_links = self._var_cols = np.empty(0, dtype=np.int64)
        if asm.varying is not None and self.links.size:
            var_pos = {int(sg): k for k, sg in enumerate(asm.varying.seg)}
            which = [(j, var_pos[int(sg)]) for j, sg in enumerate(seg) if int(sg) in var_pos]
            self._var_links = np.asarray([j for j, _ in which], dtype=np.int64)
            self._var_cols = np.asarray([k for _, k in which], dtype=np.int64)
        self.tracker = plan.tracker(asm)
        self.limit_cols = np.asarray([pos[int(i)] for i in plan.limit_nodes], dtype=np.int64)
        self._tracked = self.limit_cols              # the tracker's own columns
        self._derived = [(d, np.asarray([pos[int(i)] for i in d.nodes], dtype=np.int64))
                         for d in plan.derived]
        self._watchers = [(w, np.asarray([pos[int(i)] for i in w.nodes], dtype=np.int64))
                          for w in plan.watchers]
        # the columns whose temperatures between samples a path gives with each chunk
        # (Chunk.evaluate): the limits' first, then the nodes of watchers that want them. The
        # paths prepare them for ``limit_cols`` when there is a tracker: a watcher that wants
        # them gets an empty tracker if the run has no limits.
        dense = [int(c) for w, cols in self._watchers if "evaluate" in getattr(w, "wants", ())
                 for c in cols.tolist()]
        extra = [c for c in dict.fromkeys(dense) if c not in set(self.limit_cols.tolist())]
        if extra:
            self.limit_cols = np.concatenate([self.limit_cols,
                                              np.asarray(extra, dtype=np.int64)])
            if self.tracker is None:
                self.tracker = ExcursionTracker([], [], [])
        self.sink = sink
        if samples is not None and hasattr(sink, "reserve"):
            sink.reserve(samples)
        self.boundary_links = list(plan.boundary_links)
        self.extra_names = dict(plan.extra_names)
        self.tmin = np.full(self.out_nodes.size, np.inf)
        self.tmax = np.full(self.out_nodes.size, -np.inf)
        self.tlast = np.full(self.out_nodes.size, np.nan)
        self.last_energy: EnergyTotals | None = None
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
        sink.declare("energy/sources", list(asm.source_names) + list(plan.extra_sources))
        for key, names in self.extra_names.items():
            sink.declare(key, names)

    def output_slot(self, rows: int):
        """A (rows, out nodes) array to compute the next chunk's temperatures into, when they
        go to the sink as they are (every output column recorded, in memory): the chunk then
        costs no copy. None otherwise."""
        if self._rec_all and hasattr(self.sink, "slot"):
            return self.sink.slot("temperature", rows)
        return None

    def nonlinear_flows(self, T: np.ndarray, u: np.ndarray) -> NonlinearFlows | None:
        """The flows of every nonlinear segment for temperatures ``T`` (c, out nodes) and
        boundary values ``u`` (None when neither the histories nor a watcher need them)."""
        if not self._nl_wanted:
            return None
        points = np.hstack([T, np.asarray(u, dtype=float).reshape(T.shape[0], -1)])
        ta, tb = points[:, self._nl_a], points[:, self._nl_b]
        return NonlinearFlows(self.asm.nl.flows(ta, tb), ta, tb)

    def flows(self, T: np.ndarray, u: np.ndarray, t: np.ndarray | None = None,
              nonlinear: NonlinearFlows | None = None,
              out: np.ndarray | None = None) -> np.ndarray:
        """Heat flows [W] of the recorded links for temperatures ``T`` (c, out nodes) and
        boundary values ``u`` (c, boundaries) at times ``t`` [s] (needed when a link's
        conductance varies in time): (c, links), column-major, written into ``out`` when given
        (a (c, links) view), else into a work array that the next call overwrites (copy what
        is kept). ``nonlinear``: the nonlinear segments' flows at the same samples when
        already computed (:meth:`nonlinear_flows`)."""
        L, c = self.links.size, T.shape[0]
        flows_t = work_array("flows", (L, c)) if out is None else out.T
        T_t, u_t = T.T, np.asarray(u).T
        m = T_t.shape[0]
        with np.errstate(invalid="ignore"):
            for j0, j1, a0, b0 in self._runs:
                np.subtract(T_t[a0:a0 + j1 - j0], T_t[b0:b0 + j1 - j0], out=flows_t[j0:j1])
            rest = self._rest
            if rest.size:
                # the other links' ends gathered: into two work arrays kept from chunk to chunk
                # when the temperatures are one block of many samples, else row by row by fancy
                # indexing (np.take would first copy a history's strided rows whole)
                R = rest.size
                a, b = self._a_rest, self._b_rest
                if m and (c < 64 or not T_t.flags.c_contiguous):
                    first = T_t[np.minimum(a, m - 1)]
                    second = T_t[np.minimum(b, m - 1)]
                else:
                    first = work_array("flows.first", (R, c))
                    second = work_array("flows.second", (R, c))
                    if m:
                        np.take(T_t, np.minimum(a, m - 1), axis=0, out=first, mode="clip")
                        np.take(T_t, np.minimum(b, m - 1), axis=0, out=second, mode="clip")
                bnd = np.flatnonzero(a >= m)
                if bnd.size:
                    first[bnd] = u_t[a[bnd] - m]
                bnd = np.flatnonzero(b >= m)
                if bnd.size:
                    second[bnd] = u_t[b[bnd] - m]
                if R == L:
                    np.subtract(first, second, out=flows_t)
                else:
                    np.subtract(first, second, out=first)
                    flows_t[rest] = first
            np.multiply(flows_t, self._g_col, out=flows_t)
        flows = flows_t.T
        if self._nl_links.size:
            if nonlinear is None:
                nonlinear = self.nonlinear_flows(T, u)
            flows[:, self._nl_links] = nonlinear.q[:, self._nl_cols]
        if self._var_links.size:
            if t is None:
                raise ValueError("flows of links whose conductance varies need the times")
            points = np.hstack([T, u])
            j = self._var_links
            g = self.asm.varying.conductance(np.asarray(t, dtype=float))[:, self._var_cols]
            with np.errstate(invalid="ignore"):
                flows[:, j] = g * (points[:, self._a_col[j]] - points[:, self._b_col[j]])
        return flows

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
        nonlinear = self.nonlinear_flows(T, c.u)
        if self.links.size:
            slot = self.sink.slot("heat_flow", c.t.size) if hasattr(self.sink, "slot") else None
            if c.T_flow is None:
                flows = self.flows(T, c.u, c.t, nonlinear, slot)
            else:
                flows = self.flows(c.T_flow, c.u, c.t, None, slot)
            self.sink.append("heat_flow", flows)
        else:
            self.sink.append("heat_flow", np.zeros((c.t.size, 0)))
        self.sink.append("boundary_temperature", c.u)
        self.sink.append("source_power", c.s)
        self.sink.append("energy/stored", c.e_stored)
        self.sink.append("energy/links", c.e_links)
        self.sink.append("energy/sources", c.e_sources)
        for d, cols in self._derived:
            c.extras[d.key] = d.values(c.t, T[:, cols], c.u, c.s)
        for key in self.extra_names:
            self.sink.append(key, c.extras[key])
        for w, cols in self._watchers:
            extra = {}
            wants = getattr(w, "wants", ())
            if "nonlinear" in wants:
                extra["nonlinear"] = nonlinear
            if "evaluate" in wants:
                extra["evaluate"] = None if c.evaluate is None else _columns_of(c.evaluate, cols)
            w.observe(c.t, T[:, cols], c.u, **extra)
        self.tmin = np.minimum(self.tmin, cmin)
        self.tmax = np.maximum(self.tmax, cmax)
        self.tlast = np.array(T[-1])
        if self.tracker is not None:
            evaluate = None
            if c.evaluate is not None:
                limit_cols, chunk_eval = self.limit_cols, c.evaluate

                def evaluate(times, which):
                    return chunk_eval(times, limit_cols[which])

            self.tracker.update(c.t, T[:, self._tracked], evaluate)
        self.last_energy = EnergyTotals(float(c.e_stored[-1]), np.array(c.e_links[-1]),
                                        np.array(c.e_sources[-1]))
        self.last_time = float(c.t[-1])
        self.n_samples += c.t.size

    def _check_physical(self, t: np.ndarray, T: np.ndarray) -> None:
        """Refuse non-finite temperatures and temperatures below absolute zero."""
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
        if self.tracker is None or not self.tracker.nodes:
            # the empty table built once (pandas takes ~2 ms for it)
            if not _EMPTY_LIMITS:
                _EMPTY_LIMITS.append(ExcursionTracker([], [], []).table()[LIMIT_COLUMNS])
            return _EMPTY_LIMITS[0].copy()
        return self.tracker.table()


def _column_runs(a: np.ndarray, b: np.ndarray, m: int, shortest: int = 4):
    """Runs of links (j0, j1, a0, b0) whose ends are consecutive columns below ``m`` (link
    j0 + i joins columns a0 + i and b0 + i) of at least ``shortest`` links, and the links in no
    run (an array).

    >>> runs, rest = _column_runs(np.array([0, 1, 2, 3, 9, 4]), np.array([1, 2, 3, 4, 0, 5]), 6)
    >>> runs, rest.tolist()
    ([(0, 4, 0, 1)], [4, 5])
    """
    a, b = np.asarray(a, dtype=np.int64), np.asarray(b, dtype=np.int64)
    inside = (a < m) & (b < m)
    # a run goes on from link k - 1 to link k when both ends step by one column, inside
    goes_on = np.zeros(a.size, dtype=bool)
    goes_on[1:] = inside[1:] & inside[:-1] & (np.diff(a) == 1) & (np.diff(b) == 1)
    starts = np.flatnonzero(~goes_on)
    ends = np.append(starts[1:], a.size)
    long = (ends - starts >= shortest) & inside[starts] if a.size else np.zeros(0, dtype=bool)
    runs = [(int(j0), int(j1), int(a[j0]), int(b[j0]))
            for j0, j1 in zip(starts[long], ends[long])]
    in_run = np.zeros(a.size, dtype=bool)
    if runs:
        cover = np.zeros(a.size + 1, dtype=np.int64)
        np.add.at(cover, starts[long], 1)
        np.add.at(cover, ends[long], -1)
        in_run = np.cumsum(cover[:-1]) > 0
    return runs, np.flatnonzero(~in_run).astype(np.int64)


def _columns_of(evaluate, cols: np.ndarray):
    """``evaluate(times, columns)`` of a chunk (columns: positions in the output nodes) read
    with columns given as positions in ``cols`` (a watcher's nodes)."""

    def of_watcher(times, which):
        return evaluate(times, cols[np.asarray(which, dtype=np.int64)])

    return of_watcher
