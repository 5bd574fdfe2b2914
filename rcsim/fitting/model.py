"""The model of a fit: temperatures of the measured nodes at the log's times, for given values.

This is the only module of the fitting package that uses the transient engine, and the only one
that touches its internals; the rest of the package sees this interface::

    model = Model(scenario, log, parameters, solver)   # checks the solver name and the start
    model.outputs(values)            # (n_times, n_measured) at the log's times, values in SI
    model.outputs(values, times=t)   # the same at other times (0 .. end of the log)
    model.fast                       # True on the exact modal path (see below)
    model.stats                      # ModelStats: solver, evaluations, decompositions
    model.state_matrices(values)     # StateMatrices: A, H of the linear network (exact path)

Inputs: log columns that drive boundaries or sources become tables (linear between samples, held
at the ends); the scenario's own profiles are read on the log's clock (:func:`log_offset`,
wrapped in :class:`rcsim.profiles.Shifted`).

Paths. Every evaluation goes through the engine's :func:`rcsim.transient.trajectory`, which
makes the same checks, start and path choice as a run. On a linear network (given or steady
start, within the exact path's size, decided by the engine's one exact-or-not test) the exact
modal propagation runs straight to the log's times, whatever their spacing. Freed initial
temperatures (overrides of the given start) and constant boundary temperatures or source powers
(constant profiles swapped in through :meth:`rcsim.assembly.Assembled.with_inputs`) leave
capacities and conductances alone, so the copy shares the reduced system and the modes computed
for the structure; only values that need a rebuild get a new decomposition (cached per set of
values, least recently used first out). Networks the exact path cannot take run on the
piecewise or stiff path per evaluation, at tolerances of at most 1e-7.
"""

from __future__ import annotations

import warnings
from collections import OrderedDict
from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..errors import InputError, ScenarioError
from ..profiles import Constant, Shifted, Table
from ..scenario import Scenario
from .logs import Log
from .parameters import ParameterSet

__all__ = ["Model", "ModelStats", "StateMatrices", "log_offset"]

#: Elements (times x (modes + inputs)) of one block of the exact propagation; bounds memory on
#: long logs.
CHUNK_ELEMENTS = 400_000
#: Structures (network, assembly, decomposition) kept for values that need a rebuild.
CACHED_STRUCTURES = 16


@dataclass
class ModelStats:
    """How the model was run: the path, model evaluations, eigen-decompositions computed."""

    solver: str
    evaluations: int = 0
    decompositions: int = 0


@dataclass
class StateMatrices:
    """The linear network at given values, for a Kalman filter: dx/dt = A x + ..., y = H x + ...

    ``A`` (n, n) is -C^-1 K of the reduced system (massless nodes eliminated), ``H`` (m, n) maps
    the states to the measured columns, ``groups`` names each state's process-noise group (its
    node, or the link of an internal node of a sliced layer), ``time_constants`` (n,) is
    C_i / K_ii of each state [s] (a scale for starting values).
    """

    A: np.ndarray
    H: np.ndarray
    groups: list
    time_constants: np.ndarray


@dataclass
class Structure:
    """A network built for one set of rebuild values, and its assembly (which caches the
    reduced system and modes on the exact path)."""

    network: object
    assembled: object


def log_offset(sc: Scenario, log: Log, varies: bool = True) -> float:
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


class Model:
    """Model temperatures at the log's times, as a function of the free values (SI)."""

    def __init__(self, sc: Scenario, log: Log, params: ParameterSet, solver: str):
        self.sc, self.log, self.params = sc, log, params
        self.t = log.time
        asm = sc.network.assemble()
        self.node_idx = np.array([asm.node_index(log.targets[c]) for c in log.measured])
        self.measured_nodes = [log.targets[c] for c in log.measured]
        self.tables = _log_tables(log)
        self.power_tables = _power_tables(log)
        own = [p for nm, p in zip(asm.boundary_names, asm.boundary_profiles)
               if nm not in self.tables] + [p for nm, p in zip(asm.source_names,
                                                             asm.source_profiles)
                                            if nm not in self.power_tables]
        self.offset = log_offset(sc, log, varies=any(not p.is_constant for p in own))
        for prof in own:
            prof.check_span(self.offset, self.offset + float(self.t[-1]))
        self.fast, path = _choose_path(sc, asm, solver)
        if sc.settings.initial == "periodic" and not self.fast and self.tables:
            raise ScenarioError("a periodic start is not defined when a boundary follows a log",
                                f"{sc.name}: simulation.initial",
                                "use initial = 'given' (and free the starting temperatures)")
        self.stats = ModelStats(path)
        self._cache: OrderedDict = OrderedDict()

    @property
    def solver(self) -> str:
        return self.stats.solver

    # -- building blocks ---------------------------------------------------------------------
    def _shift(self, prof):
        """A scenario profile read on the log's clock (t = 0 at the log's first row)."""
        return Shifted(prof, self.offset) if self.offset else prof

    def _rebuild_values(self, values) -> dict:
        return {p.key: v for p, v in zip(self.params, values) if p.tier == "rebuild"}

    def _structure(self, values) -> Structure:
        """The network and assembly for the values that need a rebuild; cached (LRU)."""
        from ..modes import modal_decomposition

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
            self.stats.decompositions += 1
        structure = Structure(net, asm)
        self._cache[key] = structure
        if len(self._cache) > CACHED_STRUCTURES:
            self._cache.popitem(last=False)
        return structure

    def outputs(self, values, times=None) -> np.ndarray:
        """Model temperatures (n_times, n_measured) for the free values (SI).

        At the log's times, or at ``times`` (increasing, from 0 to the log's end).
        """
        self.stats.evaluations += 1
        values = [float(v) for v in values]
        t = self.t if times is None else np.asarray(times, dtype=float)
        if not self.fast:
            return self._outputs_general(values, t)
        return self._outputs_exact(values, t)

    def _inputs(self, asm0, values):
        """Boundary and source profiles on the log's clock, with the freed constants swapped
        in, and the freed initial temperatures {node: degC}."""
        bprof = [self.tables[nm] if nm in self.tables else self._shift(p)
                 for nm, p in zip(asm0.boundary_names, asm0.boundary_profiles)]
        sprof = [self.power_tables[nm] if nm in self.power_tables else self._shift(p)
                 for nm, p in zip(asm0.source_names, asm0.source_profiles)]
        overrides = {}
        for p, v in zip(self.params, values):
            if p.tier == "initial":
                overrides[p.target] = v
            elif p.tier == "constant" and p.key.startswith("boundaries."):
                bprof[asm0.boundary_names.index(p.target)] = Constant(v).bind("temperature", p.key)
            elif p.tier == "constant":
                sprof[asm0.source_names.index(p.target)] = Constant(v).bind("power", p.key)
        return bprof, sprof, overrides

    def _outputs_exact(self, values, t) -> np.ndarray:
        from ..transient import trajectory

        structure = self._structure(values)
        asm0 = structure.assembled
        bprof, sprof, overrides = self._inputs(asm0, values)
        # the inputs changed, not K or C: the copy shares the reduced system and the modes
        asm = asm0.with_inputs(boundary_profiles=bprof, source_profiles=sprof)
        initial = "steady" if self.sc.settings.initial == "steady" else overrides
        return trajectory(structure.network, t, self.node_idx, assembled=asm, initial=initial,
                          solver="exact")

    def _outputs_general(self, values, t) -> np.ndarray:
        from ..transient import trajectory

        subst = {p.key: v for p, v in zip(self.params, values)
                 if p.tier in ("rebuild", "initial")}
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # warnings of trial values are not the user's
            sc = self.sc.with_values(subst) if subst else self.sc
            net = sc.network
            asm0 = net.assemble()
        bprof, sprof, _ = self._inputs(asm0, values)
        asm = asm0.with_inputs(boundary_profiles=bprof, source_profiles=sprof)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return trajectory(net, t, self.node_idx, assembled=asm, initial=sc.settings.initial,
                              solver=self.solver if self.solver in ("stiff", "piecewise")
                              else "auto",
                              rtol=min(sc.settings.rtol, 1e-7), atol=min(sc.settings.atol, 1e-7))


    def state_matrices(self, values) -> StateMatrices:
        """A and H of the reduced linear system at the free values (SI), for a Kalman filter.

        Raises
        ------
        InputError
            A network the exact path cannot take (nonlinear parts, thermostats, a periodic
            start, too many states): a stochastic fit needs a linear network.
        """
        from ..statespace import state_space

        if not self.fast:
            raise InputError("a fit with process noise needs a linear network on the exact path "
                             f"(this one runs on the {self.solver} path: nonlinear parts, "
                             "thermostats, a periodic start or too many states)", "noise",
                             "fit with noise='measurement', or make the network linear")
        asm = self._structure([float(v) for v in values]).assembled
        ss = state_space(asm)
        K = ss.K.toarray()
        A = -K / ss.C[:, None]
        position = {int(node): i for i, node in enumerate(ss.massive)}
        zpos = {int(node): i for i, node in enumerate(ss.massless)}
        R = np.asarray(ss.R.toarray() if hasattr(ss.R, "toarray") else ss.R, dtype=float)
        H = np.zeros((self.node_idx.size, ss.n))
        for row, node in enumerate(self.node_idx):
            if int(node) in position:
                H[row, position[int(node)]] = 1.0
            else:  # a massless node follows the states algebraically
                H[row] = R[zpos[int(node)]]
        names = [asm.node_names[i] for i in ss.massive]
        groups = [asm.internal_of.get(nm, nm) for nm in names]
        tau = ss.C / np.maximum(np.diag(K), 1e-300)
        return StateMatrices(A, H, groups, tau)


def _log_tables(log: Log) -> dict:
    """Boundary name -> a table of its log column (finite values; held outside the log)."""
    tables = {}
    for c in log.inputs:
        vals = log.values[c].to_numpy()
        ok = np.isfinite(vals)
        tables[log.targets[c]] = Table(log.time[ok], vals[ok], outside="hold").bind(
            "temperature", f"{log.name}: column {c!r}")
    return tables


def _power_tables(log: Log) -> dict:
    """Source name -> a table of its log column [W] (finite values; held outside the log)."""
    tables = {}
    for c in getattr(log, "powers", []):
        vals = log.values[c].to_numpy()
        ok = np.isfinite(vals)
        tables[log.targets[c]] = Table(log.time[ok], vals[ok], outside="hold").bind(
            "power", f"{log.name}: column {c!r}")
    return tables


def _choose_path(sc: Scenario, asm, solver: str) -> tuple[bool, str]:
    """(fast, solver name): whether the exact modal path runs the model, and the path named in
    the result ('exact', or the solver asked for when the general path runs). The exact-or-not
    decision is the engine's own (:func:`rcsim.transient.exact_path.exact_declines`).

    Raises
    ------
    InputError
        An unknown solver name, or 'exact' for a network the exact path cannot take.
    """
    from ..transient.exact_path import exact_declines
    from ..transient.registry import check_solver

    check_solver(solver)
    declined = exact_declines(asm, tuple(sc.network.thermostats.values()))
    if solver == "exact" and declined is not None:
        raise InputError(f"the exact path {declined}", "solver", "use solver='auto' or 'stiff'")
    fast = solver != "stiff" and declined is None and sc.settings.initial in ("given", "steady")
    path = "exact" if fast else (solver if solver in ("stiff", "piecewise") else "auto")
    return fast, path
