"""The ``rcsim`` command: parse, call the library, format. Nothing else lives here.

Exit status: 0 success; 2 bad input (one line on stderr, no traceback, no partial file);
3 the numerics failed on valid input; 130 interrupted.

Layout: ``group.py`` holds the click group :func:`main` and registers the commands, one per
module (``check``, ``steady``, ``modes``, ``materials``, ``run``, ``plot``, ``fit``,
``identify``, ``sweep``, ``size``, ``report``, ``draw``); ``guard.py`` turns library errors and
warnings into lines and exit statuses; ``options.py`` holds checks shared by the commands'
options; ``format.py`` the shared formatting of times, energies and tables; ``fit_text.py`` the
text of fits, comparisons and identifications; ``progress.py`` the progress bar. A command module imports only click and
these at module level; the library is imported inside the command, so ``rcsim --help`` starts
quickly.
"""

from __future__ import annotations

from .group import main

__all__ = ["main", "entry", "format_run_summary", "format_fit_summary", "format_sweep_summary",
           "CAUTION"]

#: name -> the module (under rcsim.cli) it comes from, imported on first use
_HOME = {
    "format_run_summary": "run",
    "format_fit_summary": "fit",
    "format_sweep_summary": "sweep",
    "CAUTION": "format",
}


def __getattr__(name: str):
    if name in _HOME:
        from importlib import import_module

        return getattr(import_module(f".{_HOME[name]}", __name__), name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__():
    return sorted(set(globals()) | set(__all__))


def entry():  # pragma: no cover - console script alias
    main()
