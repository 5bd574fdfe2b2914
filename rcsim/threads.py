"""How many threads rcsim's numerical kernels use (the BLAS and OpenMP pools of numpy and scipy).

By default every run, fit and steady computation runs rcsim's kernels on **one thread**, in the
main process as in every sweep or fit worker; parallel work comes from sweep workers, one process
per core. This was chosen by measurement (``python tests/benchmarks/bench_transient.py
--threads``: each workload in child processes under ``RCSIM_THREADS=1`` and ``=2``, alternated
round after round, times in ms, best / median) on the shared 2-core machine rcsim is developed
on, with other work running (load average 1.4-3.7 in one session, 3.1-4.4 in another):

====================================  ===================  ===================
workload                              one thread           two threads (all)
====================================  ===================  ===================
10-node wall, a year at 10 min        10.2 / 12.6          18.4 / 127.7
50-node wall, a year at 10 min        24.6 / 30.2          106.7 / 278.1
200-node wall, 30 days                24.6 / 31.9          37.9 / 264.6
1000-node wall, 7 days                221 / 229            380 / 1291
serial sweep, 50 cold-box runs        1650 / 2017          1378 / 2246
10,000-node chain, a day              451 / 559            392 / 599
fit, 3 days of one-minute rows        107 / 148            68 / 187
====================================  ===================  ===================

(first session; the second gave the same picture: the walls 2.4-10 times slower at the median
with two threads, the others within 0.9-1.2). The exact path's products (thousands of samples by
tens to hundreds of modes) gain 1.3-1.9 times from a second thread when measured alone, and the
50-node wall, alternated in one process at load 1.6, gained 1.19 times (while the 200-node wall
lost: 0.3-0.7 times); but OpenBLAS's helper thread keeps spinning for about 0.1 s after each
threaded call (0.1 s of CPU measured during 0.5 s of plain Python after one product), so on a
machine where anything else runs, every run takes a core from it and waits for its share:
medians 2-10 times slower, single runs up to 50 times. The sweep, the large-linear path (sparse
LU, not threaded) and the fits hardly use threaded BLAS, so their differences are noise. A
size-based rule (a second thread only for the output product above a million multiply-adds) was
measured too, with a trial build: 10-15 % faster in half the rounds, 1.5-3 times slower in the
other half. So: one thread, unless told.

Change it with the environment variable ``RCSIM_THREADS`` (read when rcsim first needs it):

* ``RCSIM_THREADS=4``: up to four threads in rcsim's kernels (it may pay on an idle machine of
  many cores with large networks: measure it there with the benchmark above);
* ``RCSIM_THREADS=auto`` (or ``0``): leave the BLAS library's own default (often all cores);

or from Python with :func:`limit` (``rcsim.threads.limit(4)``, ``rcsim.threads.limit("auto")``,
``rcsim.threads.limit(None)`` back to the environment or the default). A sweep worker process
uses :data:`WORKER_THREADS` (one) for the whole process unless ``RCSIM_THREADS`` says otherwise.

The limits are applied with threadpoolctl, only while rcsim computes (:func:`kernels`), so code
of yours that calls numpy between rcsim calls keeps its own setting. This module imports nothing
heavy (threadpoolctl is imported on first use).
"""

from __future__ import annotations

import os
from contextlib import contextmanager

from .errors import InputError

__all__ = ["ENVIRONMENT_VARIABLE", "DEFAULT_THREADS", "WORKER_THREADS", "limit", "current",
           "kernels", "worker_setup"]

#: The environment variable that sets the number of threads of rcsim's kernels.
ENVIRONMENT_VARIABLE = "RCSIM_THREADS"
#: Threads of rcsim's kernels when nothing else is said (measured: see the module text).
DEFAULT_THREADS = 1
#: Threads of a sweep (or fit) worker process, for the whole process, when nothing else is said.
WORKER_THREADS = 1

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
    (restored afterwards). Entering costs about 30 microseconds (measured, two BLAS libraries
    loaded: numpy's and scipy's)."""
    n = current()
    if n == _AUTO:
        yield
        return
    with _get_controller().limit(limits=n):
        yield


def worker_setup() -> None:
    """In a sweep (or fit) worker process: :data:`WORKER_THREADS` (one) per worker for the
    whole process, unless ``RCSIM_THREADS`` says otherwise."""
    n = current() if os.environ.get(ENVIRONMENT_VARIABLE, "").strip() else WORKER_THREADS
    if n != _AUTO:
        _get_controller().limit(limits=n)
