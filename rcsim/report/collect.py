"""Warnings kept for a report and passed on: what a load or a run warned about goes into the
report, and still reaches whoever listens outside (the command line prints it as usual)."""

from __future__ import annotations

import contextlib
import warnings

__all__ = ["kept_warnings"]


@contextlib.contextmanager
def kept_warnings():
    """Record every warning raised inside the block (``simplefilter("always")``) and yield the
    list of records; on leaving, even through an error, issue each again so that an outer
    ``warnings.catch_warnings(record=True)`` (the command line's guard) or the default handler
    sees it as if nothing had been in between.

    >>> import warnings
    >>> with warnings.catch_warnings(record=True) as outer:
    ...     warnings.simplefilter("always")
    ...     with kept_warnings() as kept:
    ...         warnings.warn("the pack melts early", UserWarning)
    >>> [str(w.message) for w in kept], [str(w.message) for w in outer]
    (['the pack melts early'], ['the pack melts early'])
    """
    kept: list = []
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            try:
                yield caught
            finally:
                kept.extend(caught)
    finally:
        _again(kept)      # after catch_warnings has put back the filters and the handler


def _again(caught) -> None:
    for w in caught:
        warnings.warn_explicit(w.message, w.category, w.filename, w.lineno, source=w.source)
