"""The one list of transient paths: names, help texts, did-you-mean, and loading them.

Everything that names a solver reads this module: scenario files (``solver = "..."``), runs,
fits, sweeps and the command line. It imports nothing heavy; a path's implementation is imported
when it is first used (:meth:`PathEntry.load`).

A new path is added here (one entry) and implemented as a :class:`.base.TransientPath`.
"""

from __future__ import annotations

from dataclasses import dataclass
from importlib import import_module

from ..base import suggest
from ..errors import InputError

__all__ = ["PathEntry", "PATHS", "AUTO", "SOLVERS", "check_solver", "solver_help", "load_path",
           "EXACT_LIMIT", "PIECEWISE_STATES", "BALANCE_LIMIT"]

#: The exact path takes linear networks of up to this many states (dense eigenproblem; above it
#: the large-linear path is faster). The one threshold of the exact-or-not decision, for runs and fits.
EXACT_LIMIT = 2000
#: The piecewise-exact path takes networks of up to this many states (dense eigenproblems per
#: regime).
PIECEWISE_STATES = 200

#: Largest energy-balance error (relative, see :attr:`rcsim.Result.energy_balance_error`) of a
#: run taken as sound: every path closes its balance to 1e-6 or better at its default
#: tolerances, so a run above it warns (:class:`rcsim.errors.EnergyBalanceWarning`) and the
#: command line exits 3.
BALANCE_LIMIT = 1e-3

#: Let the engine choose: the first registered path that takes the run.
AUTO = "auto"


@dataclass(frozen=True)
class PathEntry:
    """A registered transient path.

    Attributes
    ----------
    name : str
        What users write (``solver = "stiff"``).
    summary : str
        One line of help.
    module, attribute : str
        Where its :class:`.base.TransientPath` class lives.
    """

    name: str
    summary: str
    module: str
    attribute: str

    def load(self):
        """An instance of the path (its module imported on first use)."""
        return getattr(import_module(self.module), self.attribute)()


#: The paths in the order 'auto' tries them.
PATHS: dict[str, PathEntry] = {entry.name: entry for entry in (
    PathEntry("exact", f"linear networks up to {EXACT_LIMIT} states: every mode in closed form, "
              "exact at any output step", "rcsim.transient.exact_path", "ExactPath"),
    PathEntry("large-linear", f"linear networks above {EXACT_LIMIT} states (any size when "
              "asked for): an L-stable third-order implicit method with step doubling, one "
              "sparse factorisation per step length", "rcsim.transient.large_linear",
              "LargeLinearPath"),
    PathEntry("piecewise", f"nonlinear networks up to {PIECEWISE_STATES} states: closed form "
              "between phase-change and thermostat events, waveform relaxation for radiation "
              "and film correlations", "rcsim.transient.piecewise_path", "PiecewisePath"),
    PathEntry("stiff", "any network: BDF on the stored energies with an analytic sparse "
              "Jacobian", "rcsim.transient.stiff", "StiffPath"),
)}

#: Every valid solver name, 'auto' first.
SOLVERS: tuple[str, ...] = (AUTO, *PATHS)


def solver_help() -> str:
    """Help text naming every solver and what it is for (command line, docs)."""
    parts = [f"'{AUTO}': the first of {', '.join(map(repr, PATHS))} that takes the run"]
    parts += [f"'{e.name}': {e.summary}" for e in PATHS.values()]
    return "; ".join(parts) + "."


def check_solver(name, where: str = "solver", error=InputError) -> str:
    """``name`` when it is a solver name; else ``error`` naming the valid ones, with a hint.

    >>> check_solver("stiff")
    'stiff'
    >>> check_solver("stif")
    Traceback (most recent call last):
    ...
    rcsim.errors.InputError: solver: solver must be one of 'auto', 'exact', 'large-linear', 'piecewise', 'stiff', got 'stif' (did you mean 'stiff'?)
    """
    if name not in SOLVERS:
        raise error(f"solver must be one of {', '.join(map(repr, SOLVERS))}, got {name!r}",
                    where, suggest(str(name), list(SOLVERS)))
    return name


def load_path(name: str):
    """The path registered as ``name``."""
    return PATHS[name].load()
