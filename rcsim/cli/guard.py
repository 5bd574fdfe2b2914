"""From library errors and warnings to what a person reads: one line each, and an exit status.

0 success; 2 bad input (:class:`rcsim.errors.InputError`: one line naming the file, key or row,
no traceback; also a file the system refused to read or write, as one line); 3 the numerics
failed on valid input (:class:`rcsim.errors.SolverError`), or a command wrote its results but a
run's energy balance does not close (:func:`check_balance`: ``run``, ``report``, ``sweep``,
``size``); 130 interrupted (Ctrl-C, or
:class:`rcsim.errors.Interrupted` saying how far the run got). SIGTERM
and SIGHUP are handled as Ctrl-C is (the work stops, temporary files are removed, the line says
how far it got), with the status a shell gives for the signal: 143 (SIGTERM), 129 (SIGHUP). A
signal the command was started to ignore (``nohup`` ignores SIGHUP) stays ignored.
Warnings the library raised while a command ran are printed once each, as ``warning: ...``.
"""

from __future__ import annotations

import contextlib
import functools
import signal
import sys
import threading
import warnings

import click

from ..errors import InputError, Interrupted, RcsimError, SolverError

__all__ = ["guard", "fail", "leave_interrupted", "stop_signals_as_interrupt", "check_balance",
           "EXIT_INPUT", "EXIT_SOLVER", "EXIT_INTERRUPTED"]

EXIT_INPUT = 2
EXIT_SOLVER = 3
EXIT_INTERRUPTED = 130


def fail(message: str, code: int) -> None:
    """Print ``error: message`` on stderr and leave with status ``code``."""
    click.echo(f"error: {message}", err=True)
    sys.exit(code)


def check_balance(error: float, runs: list | None = None, total: int | None = None) -> None:
    """Leave with status 3 (through :func:`guard`) after a command whose results are written
    but whose runs do not all close their energy balance: ``error`` the relative error of one
    run, or, with ``runs`` (the names of the runs whose balance is open, out of ``total``), of
    the worst of them. Nothing happens when the balance closes (error at or below
    ``rcsim.transient.registry.BALANCE_LIMIT``)."""
    from ..transient.registry import BALANCE_LIMIT

    if runs is None:
        if not error <= BALANCE_LIMIT:
            raise SolverError(f"the energy balance error of this run is {error:.2g}, above "
                              f"{BALANCE_LIMIT:g}: the result is not to be trusted")
        return
    if runs:
        shown = ", ".join(str(r) for r in runs[:10]) + (" ..." if len(runs) > 10 else "")
        worst = "" if error != error else f" (worst error {error:.2g})"
        raise SolverError(f"the energy balance of {len(runs)} of {total} runs does not close, "
                          f"above {BALANCE_LIMIT:g}{worst}: runs {shown}; their outputs are not "
                          "to be trusted")


#: the signals handled like Ctrl-C (those that exist on this platform)
STOP_SIGNALS = tuple(getattr(signal, name) for name in ("SIGTERM", "SIGHUP")
                     if hasattr(signal, name))


class _Stopped:
    """The stop signal received while a command runs (None: none, or Ctrl-C)."""

    signum: int | None = None


def _on_stop_signal(signum, _frame) -> None:
    _Stopped.signum = signum
    raise KeyboardInterrupt


@contextlib.contextmanager
def stop_signals_as_interrupt():
    """While the block runs, SIGTERM and SIGHUP raise KeyboardInterrupt as Ctrl-C does (only in
    the main thread, and only for signals left at their default action)."""
    installed = {}
    if threading.current_thread() is threading.main_thread():
        for signum in STOP_SIGNALS:
            if signal.getsignal(signum) is signal.SIG_DFL:
                installed[signum] = signal.signal(signum, _on_stop_signal)
    _Stopped.signum = None
    try:
        yield
    finally:
        for signum, previous in installed.items():
            signal.signal(signum, previous)


def leave_interrupted(message: str) -> None:
    """Print how far the work got and leave: 130 after Ctrl-C, 128 + n after signal n."""
    signum = _Stopped.signum
    if signum is None:
        click.echo(f"\n{message}", err=True)
        sys.exit(EXIT_INTERRUPTED)
    click.echo(f"\n{signal.Signals(signum).name} received: {message}", err=True)
    sys.exit(128 + signum)


def guard(func):
    """Run a command: library errors become one line and an exit status; warnings are relayed."""

    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        with warnings.catch_warnings(record=True) as caught, stop_signals_as_interrupt():
            warnings.simplefilter("always")
            try:
                result = func(*args, **kwargs)
            except Interrupted as err:
                _relay(caught)
                leave_interrupted(str(err))
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
                leave_interrupted("interrupted: nothing was written")
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
