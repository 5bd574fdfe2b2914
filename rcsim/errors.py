"""The exception and warning types of rcsim.

Every error a user can cause by what they wrote (a scenario file, a CSV, an API argument) is an
:class:`InputError`, which is also a :class:`ValueError`. It carries ``where`` (file, key path, row)
and, where we know one, ``hint`` (what would fix it), so the command line can print one line and
exit 2. Failures of the numerics on valid input are :class:`SolverError` (also a
:class:`RuntimeError`).
"""

from __future__ import annotations

__all__ = [
    "RcsimError",
    "InputError",
    "UnitError",
    "ScenarioError",
    "NetworkError",
    "ProfileError",
    "DataError",
    "OutputError",
    "SolverError",
    "Interrupted",
    "RcsimWarning",
    "LumpedWarning",
    "EnergyBalanceWarning",
]


class RcsimError(Exception):
    """Base class of every error raised on purpose by rcsim."""


class InputError(RcsimError, ValueError):
    """Something the user gave is wrong.

    Parameters
    ----------
    message : str
        What is wrong, e.g. ``"expected a length, got '3 kg'"``.
    where : str, optional
        Where it is: ``"box.toml: links.wall.parts[1].conduction.thickness"``, ``"log.csv line 14"``.
    hint : str, optional
        What would fix it.
    """

    def __init__(self, message: str, where: str | None = None, hint: str | None = None):
        self.message = message
        self.where = where
        self.hint = hint
        super().__init__(self._text())

    def _text(self) -> str:
        text = f"{self.where}: {self.message}" if self.where else self.message
        if self.hint:
            text += f" ({self.hint})"
        return text

    def at(self, prefix: str) -> "InputError":
        """Return the same error with ``prefix`` put in front of its place (e.g. a file name)."""
        where = f"{prefix}: {self.where}" if self.where else prefix
        err = type(self).__new__(type(self))
        InputError.__init__(err, self.message, where, self.hint)
        return err


class UnitError(InputError):
    """A quantity has the wrong dimension or cannot be parsed."""


class ScenarioError(InputError):
    """A scenario file is malformed (syntax, unknown or missing key, bad value)."""


class NetworkError(InputError):
    """The network is inconsistent: unknown or duplicate names, no path to a boundary, ..."""


class ProfileError(InputError):
    """A time profile is malformed or does not cover the simulated span."""


class DataError(InputError):
    """A data file (CSV log, table) is malformed."""


class OutputError(DataError):
    """An output file cannot be written: its folder is missing, is not a folder or is not
    writable, or the disk filled up while writing (nothing is left under the name then)."""


class SolverError(RcsimError, RuntimeError):
    """The integration or a nonlinear solve failed on input that was otherwise valid.

    Attributes
    ----------
    time : float or None
        Simulated time reached [s].
    node : str or None
        The node that misbehaved most, where known.
    """

    def __init__(self, message: str, time: float | None = None, node: str | None = None,
                 hint: str | None = None):
        self.message = message
        self.time = time
        self.node = node
        self.hint = hint
        parts = [message]
        if time is not None:
            parts.append(f"at t = {time:.6g} s")
        if node is not None:
            parts.append(f"node '{node}'")
        text = ", ".join(parts)
        if hint:
            text += f" ({hint})"
        super().__init__(text)


class Interrupted(RcsimError, KeyboardInterrupt):
    """A run stopped by Ctrl-C (also a KeyboardInterrupt); says how far it got.

    Attributes
    ----------
    reached, total : float
        Simulated time reached and asked for [s].
    done : int
        Units of work finished (e.g. sweep runs), where that applies.
    """

    def __init__(self, message: str, reached: float | None = None, total: float | None = None,
                 done: int | None = None):
        self.message = message
        self.reached, self.total, self.done = reached, total, done
        super().__init__(message)


class RcsimWarning(UserWarning):
    """Base class of rcsim's warnings (the library warns; only the CLI prints)."""


class LumpedWarning(RcsimWarning):
    """A lumped (single-node) assumption is doubtful, e.g. Biot number above 0.1."""


class EnergyBalanceWarning(RcsimWarning):
    """A run's energy balance does not close (its error is above
    :data:`rcsim.transient.registry.BALANCE_LIMIT`): its temperatures are not to be trusted."""
