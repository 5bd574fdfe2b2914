"""The contract every transient path fulfils, and what paths and the driver share.

A *path* is one way of integrating a network over time (:mod:`.registry` lists them). It says
whether it takes a :class:`~rcsim.transient.problem.Problem` (:meth:`TransientPath.accepts`,
with the reason when not) and runs it into a :class:`~rcsim.recording.Recorder`
(:meth:`TransientPath.run`), returning what it counted (:class:`~rcsim.runinfo.RunStats`). A path
that finds out only while running that it cannot take a run raises :class:`NotSuitable` before
it records anything; the driver then tries the next path.

This module imports nothing heavy.
"""

from __future__ import annotations

from typing import Callable

from ..runinfo import RunStats
from .registry import EXACT_LIMIT, PATHS, PIECEWISE_STATES

__all__ = ["TransientPath", "NotSuitable", "Progress", "RunStats", "EXACT_LIMIT",
           "PIECEWISE_STATES"]


class NotSuitable(Exception):
    """A path cannot take this run; raised before anything is recorded (the driver tries the
    next path, or reports the reason when that path was asked for by name)."""


class Progress:
    """The fraction of a run done, handed to a callback (or to nothing); it never goes back,
    so a path that takes over from one that declined continues from where that one got."""

    def __init__(self, callback: Callable[[float], object] | None = None):
        self.callback = callback
        self.done = 0.0

    def __call__(self, fraction: float) -> None:
        if self.callback is None:
            return
        fraction = min(1.0, float(fraction))
        if fraction > self.done:
            self.done = fraction
            self.callback(fraction)


class TransientPath:
    """One way of integrating a network over time.

    Attributes
    ----------
    name : str
        The name users give (``solver = "..."``), registered in :data:`.registry.PATHS`.
    summary : str
        One line for help texts (from the registry).
    description : str
        What ``Result.solver`` says of a run made on this path.
    may_decline_while_running : bool
        Whether :meth:`run` may raise :class:`NotSuitable` after :meth:`accepts` took the run
        (then the next path is kept ready).
    """

    name = ""
    description = ""
    may_decline_while_running = False

    @property
    def summary(self) -> str:
        return PATHS[self.name].summary

    def accepts(self, problem) -> str | None:
        """None when this path takes ``problem``, else why not (a phrase, for messages)."""
        raise NotImplementedError

    def run(self, problem, recorder, progress: Progress) -> RunStats:
        """Integrate ``problem`` from ``problem.start`` over its output times into
        ``recorder``; raise :class:`NotSuitable` (before recording anything) when it cannot."""
        raise NotImplementedError

    def temperatures_at(self, problem, nodes):
        """Temperatures [degC] of ``nodes`` (node indices) at every output time of ``problem``,
        shape (times, nodes): a run that records those nodes only. A path may do it faster."""
        from ..recording import MemorySink, Recorder

        sink = MemorySink()
        self.run(problem, Recorder(problem.asm, problem.plan, sink), Progress())
        cols = [problem.plan.record.index(i) for i in nodes]
        return sink.arrays()["temperature"][:, cols]

    def period_map(self, problem):
        """A map H -> H over one period of the inputs (stored energies of the states) used to
        find a nonlinear network's periodic regime, or None to use the stiff path's."""
        return None

    def refusal(self, reason: str) -> Exception:
        """The error for a run that asked for this path by name when it declines."""
        from ..errors import SolverError

        return SolverError(f"the {self.name} solver cannot take this run: {reason}",
                           hint="use solver = 'stiff' or 'auto'")
