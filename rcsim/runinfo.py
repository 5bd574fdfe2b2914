"""Typed records of a run: what a transient path counted (:class:`RunStats`) and how the run was
made (:class:`RunInfo`: the path, why others declined, the wall time).

A :class:`rcsim.Result` carries its :class:`RunInfo` as ``result.run_info``; ``result.meta
["stats"]`` holds the same as a plain dict (:meth:`RunInfo.as_dict`), in memory and after
loading a file alike. Quantities have their units in the docstrings, not in the keys; the older
keys ``"wall_time [s]"`` and ``"piecewise_declined"`` are kept in that dict for readers written
before these records.

This module imports nothing heavy.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field

__all__ = ["RunStats", "RunInfo"]


@dataclass
class RunStats:
    """Counts of one run on one transient path; None where the path does not count it.

    Attributes
    ----------
    samples : output samples recorded.
    modes : modes of the exact path (the number of states).
    steps, restarts, nlu, nfev, njev : stiff path: solver steps, restarts (at input jumps and
        switchings), LU decompositions, right-hand side and Jacobian evaluations.
    events : switchings and melting-range crossings located (stiff and piecewise paths).
    sweeps, regimes, refinements, runs, grid_points : piecewise path: waveform-relaxation
        sweeps, regimes built, grid refinements, closed-form runs, points of the final grid.
    """

    samples: int | None = None
    modes: int | None = None
    steps: int | None = None
    restarts: int | None = None
    events: int | None = None
    nlu: int | None = None
    nfev: int | None = None
    njev: int | None = None
    sweeps: int | None = None
    regimes: int | None = None
    refinements: int | None = None
    runs: int | None = None
    grid_points: int | None = None

    def counts(self) -> dict[str, int]:
        """The counts that were kept, by name."""
        return {f.name: int(getattr(self, f.name)) for f in dataclasses.fields(self)
                if getattr(self, f.name) is not None}

    @classmethod
    def from_counts(cls, counts: dict) -> "RunStats":
        """Read back :meth:`counts` (unknown names are ignored)."""
        names = {f.name for f in dataclasses.fields(cls)}
        return cls(**{k: int(v) for k, v in counts.items() if k in names and v is not None})


#: Start of the solver description of each path (``Result.solver``), for files that predate
#: :class:`RunInfo` and name only the description.
_DESCRIPTION_PREFIX = {"exact": "exact", "piecewise": "piecewise", "stiff": "stiff"}


@dataclass
class RunInfo:
    """How a run was made.

    Attributes
    ----------
    path : str
        The transient path that ran it ('exact', 'piecewise' or 'stiff'; '' when unknown).
    solver : str
        Its description, as ``Result.solver`` (e.g. "exact (modal)").
    stats : RunStats
        What the path counted.
    states : int
        States of the reduced system (massive nodes).
    wall_time : float
        Wall-clock time of the whole run [s] (checks, start, integration, recording).
    declined : dict
        {path name: why it did not take this run} for every path considered before ``path``.
    """

    path: str = ""
    solver: str = ""
    stats: RunStats = field(default_factory=RunStats)
    states: int = 0
    wall_time: float = float("nan")
    declined: dict = field(default_factory=dict)

    def as_dict(self) -> dict:
        """The plain dict kept in ``Result.meta["stats"]`` (JSON in a result file)."""
        out = dict(self.stats.counts())
        out["states"] = int(self.states)
        out["wall_time"] = float(self.wall_time)
        out["wall_time [s]"] = float(self.wall_time)          # older key
        out["path"] = self.path
        out["declined"] = dict(self.declined)
        if "piecewise" in self.declined:
            out["piecewise_declined"] = self.declined["piecewise"]   # older key (README)
        return out

    @classmethod
    def from_dict(cls, stats: dict, solver: str = "") -> "RunInfo":
        """Read ``meta["stats"]`` back, as written now or by earlier versions."""
        stats = dict(stats or {})
        declined = dict(stats.get("declined") or {})
        if "piecewise_declined" in stats and "piecewise" not in declined:
            declined["piecewise"] = str(stats["piecewise_declined"])
        wall = stats.get("wall_time", stats.get("wall_time [s]", float("nan")))
        path = str(stats.get("path") or "")
        if not path:
            path = next((name for name, prefix in _DESCRIPTION_PREFIX.items()
                         if str(solver).startswith(prefix)), "")
        return cls(path=path, solver=str(solver), stats=RunStats.from_counts(stats),
                   states=int(stats.get("states", 0)), wall_time=float(wall), declined=declined)
