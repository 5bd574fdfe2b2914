"""How many threads rcsim's numerical kernels use (the BLAS and OpenMP pools of numpy and scipy).

rcsim's kernels multiply medium-sized matrices (thousands of samples by tens to hundreds of
modes, one chunk at a time). On such products a multi-threaded BLAS spends more time handing
work between threads than it saves, and on a machine of few cores it competes with every other
process (and with rcsim's own sweep workers). So, by default, every run, fit and sweep worker
runs its numerical kernels on **one thread**; parallel work comes from sweep workers, one process
per core.

Change it with the environment variable ``RCSIM_THREADS`` (read when rcsim first needs it):

* ``RCSIM_THREADS=4``: up to four threads in rcsim's kernels;
* ``RCSIM_THREADS=auto`` (or ``0``): leave the BLAS library's own default (often all cores);

or from Python with :func:`limit` (``rcsim.threads.limit(4)``, ``rcsim.threads.limit("auto")``,
``rcsim.threads.limit(None)`` back to the environment or the default). A sweep worker process
uses one thread unless ``RCSIM_THREADS`` says otherwise.

The limits are applied with threadpoolctl, only while rcsim computes (:func:`kernels`), so code
of yours that calls numpy between rcsim calls keeps its own setting. This module imports nothing
heavy (threadpoolctl is imported on first use).
"""

from __future__ import annotations

import os
from contextlib import contextmanager

from .errors import InputError

__all__ = ["ENVIRONMENT_VARIABLE", "DEFAULT_THREADS", "limit", "current", "kernels",
           "worker_setup"]

#: The environment variable that sets the number of threads of rcsim's kernels.
ENVIRONMENT_VARIABLE = "RCSIM_THREADS"
#: Threads of rcsim's kernels when nothing else is said.
DEFAULT_THREADS = 1

_AUTO = "auto"
_chosen: list = []          # [value] once limit() was called with something other than None
_controller: list = []      # the threadpoolctl controller, made once per process


def _parse(value, where: str):
    """An int >= 1, or 'auto' (the library's own default); InputError otherwise."""
    if isinstance(value, str):
        text = value.strip().lower()
        if text in ("auto", "0", ""):
            return _AUTO
        try:
            value = int(text)
        except ValueError:
            raise InputError(f"the number of threads must be a whole number >= 1 or 'auto', "
                             f"got {value!r}", where) from None
    if isinstance(value, bool) or not isinstance(value, int) or value < 0:
        raise InputError(f"the number of threads must be a whole number >= 1 or 'auto', got "
                         f"{value!r}", where)
    return _AUTO if value == 0 else value


def limit(threads=None):
    """Set how many threads rcsim's kernels use from now on, in this process.

    Parameters
    ----------
    threads : int, 'auto' or None
        A number >= 1; ``'auto'`` (or 0) leaves the BLAS library's own default; None goes back
        to ``RCSIM_THREADS`` or, without it, :data:`DEFAULT_THREADS`.

    Returns
    -------
    The previous setting (what :func:`current` gave).

    >>> previous = limit(2); current()
    2
    >>> limit(previous) == 2
    True
    """
    before = current()
    _chosen.clear()
    if threads is not None:
        _chosen.append(_parse(threads, "threads"))
    return before


def current():
    """The number of threads rcsim's kernels use (an int), or 'auto'."""
    if _chosen:
        return _chosen[0]
    text = os.environ.get(ENVIRONMENT_VARIABLE)
    if text is None or not text.strip():
        return DEFAULT_THREADS
    return _parse(text, ENVIRONMENT_VARIABLE)


def _get_controller():
    if not _controller:
        import scipy.linalg  # noqa: F401  (scipy's BLAS loaded before the libraries are listed)
        from threadpoolctl import ThreadpoolController

        _controller.append(ThreadpoolController())
    return _controller[0]


@contextmanager
def kernels():
    """Run the enclosed computation with :func:`current` threads in the BLAS and OpenMP pools
    (restored afterwards). Nesting is cheap (~10 microseconds)."""
    n = current()
    if n == _AUTO:
        yield
        return
    with _get_controller().limit(limits=n):
        yield


def worker_setup() -> None:
    """In a sweep (or fit) worker process: one thread per worker for the whole process, unless
    ``RCSIM_THREADS`` says otherwise."""
    n = current() if os.environ.get(ENVIRONMENT_VARIABLE, "").strip() else 1
    if n != _AUTO:
        _get_controller().limit(limits=n)
