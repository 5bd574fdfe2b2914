"""One batch of runs, where it is run (this process, a worker process or a Dask worker).

A :class:`Job` says what every run of a sweep shares: the base scenario (itself, or what a worker
needs to build it once), the keys that change and the outputs to report. A batch is
``(run indices, values)``; :func:`run_batch` runs its rows and returns their outputs, error texts
and warning counts. A run that fails is a row with NaN outputs and its error, never the end of the
sweep.

Outputs per run: for every reported node ``min.<node>`` and ``max.<node>`` [degC]; for every node
with a limit ``hold_time.<node>`` [s] (first time out of the band on either side; NaN if it never
leaves within the run) and ``time_outside_band.<node>`` [s] (total time out of the band, both sides
added; the two sides cannot be out at the same time). ``time_outside_band`` was called
``time_out`` before (it read as "timeout"); the old name is kept as an alias
(:data:`OUTPUT_ALIASES`): tables carry both columns and requirements accept both.
"""

from __future__ import annotations

import math
import uuid
import warnings
from dataclasses import dataclass

import numpy as np

from ..base import suggest
from ..errors import InputError
from ..scenario import Scenario, build

__all__ = ["OUTPUT_PREFIXES", "OUTPUT_ALIASES", "TIME_OUTPUTS", "canonical_output", "OutputLayout",
           "output_layout", "outputs_of", "Job", "make_job", "run_batch", "OPEN_BALANCE",
           "open_balance_text"]

#: Output column prefixes, in table order per node.
OUTPUT_PREFIXES = ("min", "max", "hold_time", "time_outside_band")

#: Former output prefixes and the prefix each now reads (tables keep a column under the former
#: name too; requirements accept it).
OUTPUT_ALIASES = {"time_out": "time_outside_band"}

#: Output prefixes whose values are times [s].
TIME_OUTPUTS = ("hold_time", "time_outside_band")


def canonical_output(name: str) -> str:
    """An output name with a former prefix replaced by the current one.

    >>> canonical_output("time_out.payload"), canonical_output("max.payload")
    ('time_outside_band.payload', 'max.payload')
    """
    prefix, dot, rest = name.partition(".")
    return f"{OUTPUT_ALIASES[prefix]}{dot}{rest}" if prefix in OUTPUT_ALIASES else name


#: The text a run whose energy balance does not close warns with inside a sweep or a sizing (one
#: text for every such run, so the runs are counted: "... (in 3 of 40 runs)").
OPEN_BALANCE = ("the energy balance of a run does not close (error above {limit:g}): its "
                "outputs are not to be trusted (tighten rtol/atol or try another solver)")


def open_balance_text() -> str:
    """:data:`OPEN_BALANCE` with the limit (``rcsim.transient.registry.BALANCE_LIMIT``)."""
    from ..transient.registry import BALANCE_LIMIT

    return OPEN_BALANCE.format(limit=BALANCE_LIMIT)


@dataclass(frozen=True)
class OutputLayout:
    """What each run reports: ``record`` (nodes whose history is kept), ``columns`` (output
    column names, in table order) and ``limit_nodes`` (nodes with a limit). With ``balance``
    each row carries one more value after the outputs: the run's energy balance error."""

    record: list
    columns: list
    limit_nodes: list
    balance: bool = False

    @property
    def width(self) -> int:
        """Values per run: the outputs, and the energy balance error with ``balance``."""
        return len(self.columns) + int(self.balance)


def output_layout(sc: Scenario, nodes=None) -> OutputLayout:
    """The outputs of ``sc``: min/max of ``nodes`` (default every node), hold times of limits."""
    all_nodes = list(sc.network.nodes)
    if nodes is None:
        nodes = all_nodes
    else:
        nodes = [nodes] if isinstance(nodes, str) else list(nodes)
        for n in nodes:
            if n not in all_nodes:
                raise InputError(f"unknown node {n!r}", "nodes", suggest(n, all_nodes))
    limit_nodes = list(dict.fromkeys(lim.node for lim in sc.network.limits.values()))
    cols = [f"{p}.{n}" for n in nodes for p in ("min", "max")]
    cols += [f"{p}.{n}" for n in limit_nodes for p in TIME_OUTPUTS]
    return OutputLayout(list(dict.fromkeys(nodes)), cols, limit_nodes)


def outputs_of(res, record, limit_nodes) -> np.ndarray:
    """The output row of one run's result, in :func:`output_layout` order."""
    nt = res.nodes
    pos = {n: i for i, n in enumerate(nt["node"].tolist())}
    tmin = nt["min [degC]"].to_numpy(dtype=float)
    tmax = nt["max [degC]"].to_numpy(dtype=float)
    out = []
    for n in record:
        out += [tmin[pos[n]], tmax[pos[n]]]
    lim = res.limits
    lim_node = lim["node"].to_numpy(dtype=object)
    holds = lim["hold_time [s]"].to_numpy(dtype=float)
    touts = lim["time_out [s]"].to_numpy(dtype=float)
    for n in limit_nodes:
        rows = lim_node == n
        # first time out on either side; NaN only when neither side is ever left
        hold = float(np.fmin.reduce(holds[rows])) if rows.any() else math.nan
        out += [hold, float(touts[rows].sum())]
    return np.asarray(out, dtype=float)


@dataclass(frozen=True)
class ScenarioSource:
    """What a worker needs to build the base scenario (plain data, cheap to send).

    ``token`` names this sweep's scenario, so a worker builds it once however many batches it
    runs (see :data:`_BASES`).
    """

    token: str
    data: dict
    text: str
    path: str | None
    base_dir: str
    allow_absolute_paths: bool

    def build(self) -> Scenario:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # the caller saw these when it loaded the scenario
            return build(self.data, self.text, self.path, self.base_dir,
                         self.allow_absolute_paths)


@dataclass(frozen=True)
class Job:
    """What every run of a sweep shares.

    Exactly one of ``scenario`` (runs in this process) and ``source`` (runs in workers) is set.
    """

    keys: tuple
    layout: OutputLayout
    scenario: Scenario | None = None
    source: ScenarioSource | None = None

    @property
    def in_worker(self) -> bool:
        return self.scenario is None


def make_job(sc: Scenario, keys, layout: OutputLayout, ship: bool) -> Job:
    """The job of a sweep of ``sc``; ``ship`` for workers in other processes or machines."""
    if not ship:
        return Job(tuple(keys), layout, scenario=sc)
    source = ScenarioSource(uuid.uuid4().hex, sc.data, sc.text, sc.path, sc.base_dir,
                            sc.allow_absolute_paths)
    return Job(tuple(keys), layout, source=source)


#: The base scenario built in this worker, by token: one entry (a worker serves one sweep at a
#: time; a new sweep's token replaces the old one).
_BASES: dict = {}


def _base_of(job: Job) -> Scenario:
    if job.scenario is not None:
        return job.scenario
    token = job.source.token
    if token not in _BASES:
        _BASES.clear()
        _BASES[token] = job.source.build()
    return _BASES[token]


def run_batch(job: Job, batch):
    """Run a batch ``(indices, values)``; returns (indices, outputs, errors, warning counts)."""
    indices, values = batch
    base = _base_of(job)
    layout = job.layout
    n_out = len(layout.columns)
    out = np.full((len(indices), layout.width), np.nan)
    errors = [""] * len(indices)
    seen: dict[str, int] = {}
    for r, row in enumerate(values):
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            try:
                sc = base.with_values({k: float(v) for k, v in zip(job.keys, row)})
                res = sc.run(record=layout.record)
                out[r, :n_out] = outputs_of(res, layout.record, layout.limit_nodes)
                if layout.balance:
                    out[r, n_out] = res.energy_balance_error
            except KeyboardInterrupt:  # Ctrl-C (rcsim's Interrupted too): the end of the sweep
                raise
            except Exception as exc:  # noqa: BLE001 - a failed run is a row, not the end
                errors[r] = f"{type(exc).__name__}: {exc}".replace("\n", " ")
        for text in dict.fromkeys(_counted_text(w) for w in caught):
            seen[text] = seen.get(text, 0) + 1
    return list(indices), out, errors, seen


def _counted_text(w) -> str:
    """The text under which a run's warning is counted: an open energy balance under one text
    (:data:`OPEN_BALANCE`: its error differs from run to run), the others as they are."""
    from ..errors import EnergyBalanceWarning

    if issubclass(w.category, EnergyBalanceWarning):
        return open_balance_text()
    return str(w.message)
