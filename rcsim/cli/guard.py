"""From library errors and warnings to what a person reads: one line each, and an exit status.

0 success; 2 bad input (:class:`rcsim.errors.InputError`: one line naming the file, key or row,
no traceback; also a file the system refused to read or write, as one line); 3 the numerics
failed on valid input (:class:`rcsim.errors.SolverError`); 130 interrupted (Ctrl-C, or
:class:`rcsim.errors.Interrupted` saying how far the run got).
Warnings the library raised while a command ran are printed once each, as ``warning: ...``.
"""

from __future__ import annotations

import functools
import sys
import warnings

import click

from ..errors import InputError, Interrupted, RcsimError, SolverError

__all__ = ["guard", "fail", "EXIT_INPUT", "EXIT_SOLVER", "EXIT_INTERRUPTED"]

EXIT_INPUT = 2
EXIT_SOLVER = 3
EXIT_INTERRUPTED = 130


def fail(message: str, code: int) -> None:
    """Print ``error: message`` on stderr and leave with status ``code``."""
    click.echo(f"error: {message}", err=True)
    sys.exit(code)


def guard(func):
    """Run a command: library errors become one line and an exit status; warnings are relayed."""

    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            try:
                result = func(*args, **kwargs)
            except Interrupted as err:
                _relay(caught)
                click.echo(f"\n{err}", err=True)
                sys.exit(EXIT_INTERRUPTED)
            except InputError as err:
                _relay(caught)
                fail(str(err), EXIT_INPUT)
            except SolverError as err:
                _relay(caught)
                fail(str(err), EXIT_SOLVER)
            except RcsimError as err:  # pragma: no cover - every error is one of the above
                _relay(caught)
                fail(str(err), EXIT_INPUT)
            except OSError as err:   # the system refused a file (a reader did not say which)
                _relay(caught)
                where = f"{err.filename}: " if getattr(err, "filename", None) else ""
                fail(f"{where}{err.strerror or err}", EXIT_INPUT)
            except KeyboardInterrupt:
                _relay(caught)
                click.echo("\ninterrupted: nothing was written", err=True)
                sys.exit(EXIT_INTERRUPTED)
            _relay(caught)
            return result

    return wrapper


def _relay(caught) -> None:
    """Print each distinct warning once (deprecations are for developers, not users)."""
    seen = set()
    for w in caught:
        text = str(w.message)
        if text in seen:
            continue
        seen.add(text)
        if issubclass(w.category, (DeprecationWarning, PendingDeprecationWarning)):
            continue
        click.echo(f"warning: {text}", err=True)
