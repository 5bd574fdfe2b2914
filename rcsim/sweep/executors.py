"""Where the runs go: this process, a local process pool or a Dask cluster.

Each executor is a generator of batch results ``(indices, outputs, errors, warnings)`` in the
order they finish; the caller closes it on Ctrl-C, which cancels what has not started.

* ``serial``: batch after batch in this process.
* ``processes``: a ``concurrent.futures.ProcessPoolExecutor``; the job goes once per worker
  through the initializer; workers ignore SIGINT so Ctrl-C reaches the parent only, and leave
  at once when the parent stops the sweep (Ctrl-C, SIGTERM, SIGHUP) or dies (even by SIGKILL):
  a thread in each worker watches for both.
* ``dask``: a Dask distributed cluster at ``scheduler`` (an address or a ``Client``), or a local
  one of ``dask_workers`` workers started and closed here; the job is scattered once with
  ``broadcast=True``. dask is imported only here.

:func:`run_rows` runs every row of a design through one of them and stores the results by run
index, so the table does not depend on the order of arrival. :class:`RowRunner` does the same for
a caller that runs rows of one job a few at a time, call after call (a search): the pool or the
cluster starts once and the job travels once.
"""

from __future__ import annotations

import contextlib
import math
import os
import sys
import warnings
from dataclasses import dataclass

import numpy as np

from ..base import suggest
from ..errors import InputError, RcsimWarning, SolverError
from .worker import run_batch

__all__ = ["EXECUTORS", "ExecutorInfo", "RowResults", "check_executor", "batches", "run_rows",
           "relay_warnings", "RowRunner"]

EXECUTORS = ("serial", "processes", "dask")


@dataclass(frozen=True)
class ExecutorInfo:
    """Where a sweep ran: ``name`` (one of :data:`EXECUTORS`), ``workers`` (processes or Dask
    workers; 1 for serial) and ``scheduler`` (the Dask scheduler's address, when one was given)."""

    name: str
    workers: int
    scheduler: str | None = None


def check_executor(executor, workers=None, scheduler=None, dask_workers=None) -> ExecutorInfo:
    """Check the executor options; returns where the runs will go."""
    if executor not in EXECUTORS:
        raise InputError(f"unknown executor {executor!r}", "executor",
                         suggest(str(executor), EXECUTORS))
    if workers is not None and (isinstance(workers, bool) or not isinstance(workers, int)
                                or workers < 1):
        raise InputError(f"workers must be a whole number >= 1, got {workers!r}", "workers")
    if dask_workers is not None and (not isinstance(dask_workers, int) or dask_workers < 1):
        raise InputError(f"dask_workers must be a whole number >= 1, got {dask_workers!r}",
                         "dask_workers")
    if executor == "serial":
        return ExecutorInfo("serial", 1)
    if executor == "processes":
        return ExecutorInfo("processes", workers or os.cpu_count() or 1)
    address = scheduler if isinstance(scheduler, str) and scheduler else None
    return ExecutorInfo("dask", dask_workers or workers or os.cpu_count() or 1, address)


def batches(values, workers, batch_size=None) -> list:
    """``values`` cut into ``(run indices, values)`` batches.

    By default a few batches per worker (load balance, prompt progress), at most 16 runs each.
    """
    n = len(values)
    if batch_size is None:
        batch_size = max(1, min(16, math.ceil(n / (8 * max(1, workers)))))
    return [(list(range(i, min(n, i + batch_size))), values[i:i + batch_size])
            for i in range(0, n, batch_size)]


def _serial(job, todo):
    for b in todo:
        yield run_batch(job, b)


#: The job of this worker process (sent once, through the pool's initializer).
_WORKER_JOB: list = []


#: How often [s] a worker process checks that its parent lives and has not stopped the sweep.
WATCH_INTERVAL = 0.2


def _init_worker(job, stop=None):  # pragma: no cover - runs in the worker processes
    """Keep the job in the worker (sent once per process), leave Ctrl-C to the parent, and
    watch the parent: the worker leaves at once when its parent dies or sets ``stop``."""
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)
    for name in ("SIGTERM", "SIGHUP"):   # their default action, not the parent's handler
        if hasattr(signal, name):
            signal.signal(getattr(signal, name), signal.SIG_DFL)
    from ..threads import worker_setup

    worker_setup()                  # one BLAS thread per worker (rcsim.threads)
    _WORKER_JOB[:] = [job]
    _watch_parent(stop)


def _watch_parent(stop) -> None:  # pragma: no cover - runs in the worker processes
    """Start a daemon thread that ends this process when the parent process is gone (killed,
    even by SIGKILL: the worker is then adopted by another process) or sets ``stop`` (an
    interrupted sweep), instead of running its batch to the end for nobody."""
    import threading
    import time

    parent = os.getppid()

    def watch():
        while True:
            if os.getppid() != parent or (stop is not None and stop.is_set()):
                os._exit(1)
            time.sleep(WATCH_INTERVAL)

    threading.Thread(target=watch, name="rcsim-parent-watch", daemon=True).start()


def _pool(workers, job):
    """A process pool whose workers hold ``job`` and watch the parent; returns (pool, stop):
    ``stop.set()`` makes every worker leave at once."""
    import concurrent.futures as cf
    import multiprocessing

    context = multiprocessing.get_context()
    stop = context.Event()
    pool = cf.ProcessPoolExecutor(max_workers=workers, mp_context=context,
                                  initializer=_init_worker, initargs=(job, stop))
    return pool, stop


def _run_batch_here(batch):  # pragma: no cover - runs in the worker processes
    return run_batch(_WORKER_JOB[0], batch)


def _worker_result(fut):
    """A batch's result; a worker that died (not a run that failed: those are rows) stops the
    sweep with one line."""
    try:
        return fut.result()
    except (KeyboardInterrupt, SystemExit):
        raise
    except Exception as exc:  # noqa: BLE001 - pool or cluster failure, reported as one line
        raise SolverError(f"a sweep worker stopped unexpectedly ({type(exc).__name__}: {exc})",
                          hint="run with executor 'serial' to see whether a run causes it") \
            from None


def _processes(job, todo, workers):
    import concurrent.futures as cf

    pool, stop = _pool(workers, job)
    finished = False
    try:
        pending = {pool.submit(_run_batch_here, b) for b in todo}
        while pending:
            done, pending = cf.wait(pending, return_when=cf.FIRST_COMPLETED)
            for fut in done:
                yield _worker_result(fut)
        finished = True
    finally:
        if not finished:   # interrupted (or a worker failed): the running batches stop too
            stop.set()
        pool.shutdown(wait=finished, cancel_futures=True)


def _dask_client(scheduler, n_workers):
    """(client, whether to close it, local cluster or None)."""
    try:
        from dask.distributed import Client, LocalCluster
    except ImportError:
        raise InputError("the 'dask' executor needs the dask and distributed packages", "executor",
                         "install them with: pip install \"rcsim[dask]\"") from None
    if isinstance(scheduler, Client):
        return scheduler, False, None
    if scheduler:
        try:
            return Client(scheduler, timeout="10s"), True, None
        except (OSError, TimeoutError) as exc:
            raise InputError(f"cannot reach the Dask scheduler at {scheduler!r} ({exc})",
                             "scheduler", "check the address, e.g. tcp://10.0.0.5:8786") from None
    client, cluster = _start_local_cluster(n_workers)
    return client, True, cluster


def _start_local_cluster(n_workers):
    """(client, cluster): a local Dask cluster of ``n_workers`` processes, started so that
    Ctrl-C during its start is one ``KeyboardInterrupt`` here and nothing from Dask.

    Ctrl-C in a terminal reaches every process of the group. Dask's worker processes, still
    importing, would each print a traceback, and a cluster left half-started prints more at
    exit. So the workers are forked from a fork server that ignores SIGINT
    (:func:`_quiet_start_method`; only this process hears Ctrl-C, and stops the workers through
    the cluster), and the cluster starts in a thread of its own while this thread waits,
    interruptible: on Ctrl-C it lets the start finish, closes the cluster quietly and raises
    ``KeyboardInterrupt``.
    """
    import logging
    import threading

    import dask
    from dask.distributed import Client, LocalCluster

    method = _quiet_start_method()
    made: dict = {}

    def start():
        try:
            with dask.config.set({"distributed.worker.multiprocessing-method": method}) \
                    if method else contextlib.nullcontext():
                # the workers' own chatter (cancelled tasks, a lost scheduler when a sweep is
                # interrupted) is not the user's business: a failed run is a row with its
                # error, a lost worker an error
                made["cluster"] = LocalCluster(n_workers=n_workers, threads_per_worker=1,
                                               processes=True, dashboard_address=None,
                                               silence_logs=logging.CRITICAL)
                made["client"] = Client(made["cluster"])
        except BaseException as exc:  # noqa: BLE001 - handed to the waiting thread below
            made["error"] = exc

    thread = threading.Thread(target=start, name="rcsim-dask-start", daemon=True)
    thread.start()
    try:
        while thread.is_alive():
            thread.join(0.1)
    except KeyboardInterrupt:
        with _quiet_dask(True):
            thread.join()
            for name in ("client", "cluster"):
                if name in made:
                    with contextlib.suppress(Exception):
                        made[name].close()
        raise
    if "error" in made:
        raise made["error"]
    return made["client"], made["cluster"]


def _quiet_start_method() -> str | None:
    """``"forkserver"``, with multiprocessing's fork server started (if it was not already)
    while SIGINT is ignored: a process started with a signal ignored keeps it ignored (POSIX
    exec), the fork server hands its own handlers to every process it forks, so Dask workers
    forked from it ignore Ctrl-C. None where there is no fork server (not POSIX), or when not
    called from the main thread (signal handlers can only be set there): Dask's default then.
    """
    import multiprocessing
    import signal
    import threading

    if ("forkserver" not in multiprocessing.get_all_start_methods()
            or threading.current_thread() is not threading.main_thread()):
        return None
    from multiprocessing import forkserver

    previous = signal.signal(signal.SIGINT, signal.SIG_IGN)
    try:
        forkserver.ensure_running()
    finally:
        signal.signal(signal.SIGINT, previous)
    return "forkserver"


def _dask(job, todo, scheduler, n_workers):
    client, own_client, cluster = _dask_client(scheduler, n_workers)
    from dask.distributed import as_completed

    futures = []
    finished = False
    try:
        shared = client.scatter(job, broadcast=True)
        futures = [client.submit(run_batch, shared, b, pure=False) for b in todo]
        for fut in as_completed(futures):
            yield _worker_result(fut)
        finished = True
    finally:
        with _quiet_dask(not finished and cluster is not None):
            pending = [f for f in futures if not f.done()]
            if pending:
                client.cancel(pending)
            if own_client:
                client.close()
            if cluster is not None:
                cluster.close()


@contextlib.contextmanager
def _quiet_dask(quiet: bool):
    """While a local cluster started here is torn down after an interruption, its scheduler's
    and nannies' complaints about cancelled work are not printed (the sweep says how far it got)."""
    import logging

    loggers = [logging.getLogger(name) for name in ("distributed", "asyncio", "tornado")]
    levels = [lg.level for lg in loggers]
    if quiet:
        for lg in loggers:
            lg.setLevel(logging.CRITICAL + 1)
    try:
        yield
    finally:
        for lg, level in zip(loggers, levels):
            lg.setLevel(level)


def _execute(job_of, values, info: ExecutorInfo, scheduler, batch_size):
    """The generator of batch results for ``info``; ``job_of(ship)`` makes the job."""
    todo = batches(values, info.workers, batch_size)
    if info.name == "serial":
        return _serial(job_of(False), todo)
    if info.name == "processes":
        return _processes(job_of(True), todo, info.workers)
    return _dask(job_of(True), todo, scheduler, info.workers)


@dataclass
class RowResults:
    """The results of :func:`run_rows`, by run index.

    Attributes
    ----------
    outputs : ndarray, shape (runs, outputs)
        NaN where a run failed or did not run.
    errors : ndarray of str
        Empty, or the error of a run that failed.
    done : ndarray of bool
        Runs that finished (all of them unless interrupted).
    warnings : dict
        ``{warning text: number of runs that gave it}``.
    interrupted : bool
        Ctrl-C stopped the runs.
    """

    outputs: np.ndarray
    errors: np.ndarray
    done: np.ndarray
    warnings: dict
    interrupted: bool = False

    @property
    def finished(self) -> int:
        return int(self.done.sum())


def run_rows(job_of, values, n_out, info: ExecutorInfo, *, scheduler=None, batch_size=None,
             progress=None) -> RowResults:
    """Run every row of ``values`` where ``info`` says; Ctrl-C keeps what finished.

    ``job_of(ship)`` returns the :class:`~rcsim.sweep.worker.Job` (``ship``: for other
    processes); ``progress(done, total)`` is called after each batch.
    """
    n = len(values)
    found = RowResults(np.full((n, n_out), np.nan), np.full(n, "", dtype=object),
                       np.zeros(n, dtype=bool), {})
    gen = _execute(job_of, values, info, scheduler, batch_size)
    try:
        for idx, out, errors, seen in gen:
            found.outputs[idx] = out
            found.errors[idx] = errors
            found.done[idx] = True
            for text, count in seen.items():
                found.warnings[text] = found.warnings.get(text, 0) + count
            if progress is not None:
                progress(found.finished, n)
    except KeyboardInterrupt:
        found.interrupted = True
    finally:
        gen.close()
    return found


def relay_warnings(seen: dict, n: int) -> None:
    """Issue each distinct warning of the runs once, with the number of runs that gave it.

    The warnings point at the first caller outside rcsim (``rcsim.sweep(...)``, a script's line).
    """
    for text, count in seen.items():
        warnings.warn(f"{text} (in {count} of {n} runs)", RcsimWarning,
                      stacklevel=_caller_level())


_PACKAGE_DIR = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


def _caller_level() -> int:
    """The ``stacklevel`` (for a warn in the function calling this) of the first frame outside
    the rcsim package."""
    frame, level = sys._getframe(2), 2
    while frame is not None and frame.f_code.co_filename.startswith(_PACKAGE_DIR + os.sep):
        frame, level = frame.f_back, level + 1
    return level


class RowRunner:
    """Rows of one job run on one executor, call after call, the executor kept open in between.

    For a caller that decides its next rows from the last ones (a search): the process pool or
    the Dask client starts at the first call and the job travels to the workers once, so each
    call costs its runs only. Use as a context manager (or call :meth:`close`); Ctrl-C during a
    call cancels what has not started and propagates as ``KeyboardInterrupt``.

    Parameters
    ----------
    job_of : callable(ship) -> Job
        Makes the :class:`~rcsim.sweep.worker.Job` (``ship``: for other processes).
    n_out : int
        Outputs per run.
    info : ExecutorInfo
        From :func:`check_executor`.
    scheduler : str or dask.distributed.Client, optional
    batch_size : int, optional
        Runs per task (default as :func:`batches`).
    """

    def __init__(self, job_of, n_out, info: ExecutorInfo, *, scheduler=None, batch_size=None):
        self.job_of, self.n_out, self.info = job_of, n_out, info
        self.scheduler, self.batch_size = scheduler, batch_size
        self.runs = 0  # rows run so far, over every call
        self._job = None
        self._pool = None
        self._stop = None
        self._client = None
        self._closers: list = []

    def __enter__(self):
        return self

    def __exit__(self, exc_type, exc, tb):
        self.close(wait=exc_type is None)

    def run(self, values) -> RowResults:
        """Run every row of ``values`` (shape (rows, keys)); results by row, as :func:`run_rows`
        gives them (``warnings``: counts of this call's runs)."""
        values = np.asarray(values, dtype=float)
        n = len(values)
        found = RowResults(np.full((n, self.n_out), np.nan), np.full(n, "", dtype=object),
                           np.zeros(n, dtype=bool), {})
        if n == 0:
            return found
        todo = batches(values, self.info.workers, self.batch_size)
        for idx, out, errors, seen in self._results(todo):
            found.outputs[idx] = out
            found.errors[idx] = errors
            found.done[idx] = True
            for text, count in seen.items():
                found.warnings[text] = found.warnings.get(text, 0) + count
        self.runs += n
        return found

    def _results(self, todo):
        if self.info.name == "serial":
            if self._job is None:
                self._job = self.job_of(False)
            for b in todo:
                yield run_batch(self._job, b)
            return
        if self.info.name == "processes":
            yield from self._on_pool(todo)
            return
        yield from self._on_dask(todo)

    def _on_pool(self, todo):
        import concurrent.futures as cf

        if self._pool is None:
            self._pool, self._stop = _pool(self.info.workers, self.job_of(True))
        futures = [self._pool.submit(_run_batch_here, b) for b in todo]
        try:
            for fut in cf.as_completed(futures):
                yield _worker_result(fut)
        finally:
            for fut in futures:
                fut.cancel()

    def _on_dask(self, todo):
        if self._client is None:
            client, own, cluster = _dask_client(self.scheduler, self.info.workers)
            self._client = client
            if cluster is not None:
                self._closers.append(cluster.close)
            if own:
                self._closers.insert(0, client.close)
            self._job = client.scatter(self.job_of(True), broadcast=True)
        from dask.distributed import as_completed

        futures = [self._client.submit(run_batch, self._job, b, pure=False) for b in todo]
        try:
            for fut in as_completed(futures):
                yield _worker_result(fut)
        finally:
            pending = [f for f in futures if not f.done()]
            if pending:
                self._client.cancel(pending)

    def close(self, wait: bool = True) -> None:
        """Stop the pool or close the Dask client (and a local cluster) this runner started;
        ``wait=False`` (after Ctrl-C) does not wait for batches already running."""
        if self._pool is not None:
            if not wait:        # after Ctrl-C: batches already running stop too
                self._stop.set()
            self._pool.shutdown(wait=wait, cancel_futures=True)
            self._pool = None
        for close in self._closers:
            close()
        self._closers, self._client, self._job = [], None, None
