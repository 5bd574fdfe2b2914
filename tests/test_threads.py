"""The number of BLAS threads rcsim's kernels use, as a user observes it with threadpoolctl:
inside :func:`rcsim.threads.kernels` in the main process and in a sweep worker process.

The expected numbers are the documented policy (rcsim.threads, README "Threads"): one thread in
rcsim's kernels by default, in the main process and in every sweep or fit worker. The policy was
chosen by measurement: ``python tests/benchmarks/bench_transient.py --threads`` (one thread
against all cores, alternated in child processes) found all cores slower at the median on every
workload on the shared 2-core machine (the numbers are in the rcsim.threads docstring).
"""

from __future__ import annotations

import os

import pytest

import rcsim
from rcsim import threads
from rcsim.sweep.executors import _pool


def _blas_threads():
    from threadpoolctl import threadpool_info

    return sorted({p["num_threads"] for p in threadpool_info() if p["user_api"] == "blas"})


def _observed():
    """What a user sees with threadpoolctl: BLAS threads inside rcsim's kernels, and outside."""
    with threads.kernels():
        inside = _blas_threads()
    return {"inside": inside, "outside": _blas_threads(), "current": threads.current()}


def _in_a_sweep_worker(env: dict):
    """_observed() in a worker process started by rcsim's sweep pool (its real initializer)."""
    saved = {k: os.environ.get(k) for k in env}
    os.environ.update(env)
    try:
        pool, stop = _pool(1, job=None)
        try:
            return pool.submit(_observed).result(timeout=60)
        finally:
            pool.shutdown(wait=True)
    finally:
        for k, v in saved.items():
            if v is None:
                os.environ.pop(k, None)
            else:
                os.environ[k] = v


@pytest.fixture
def no_setting(monkeypatch):
    monkeypatch.delenv(threads.ENVIRONMENT_VARIABLE, raising=False)
    threads.limit(None)
    yield
    threads.limit(None)


def test_default_is_one_thread_in_the_main_process_and_the_callers_setting_is_kept(no_setting):
    # the documented default (rcsim.threads: measured, see the module text): one thread
    assert threads.DEFAULT_THREADS == 1
    seen = _observed()
    assert seen["current"] == 1
    assert seen["inside"] == [1]
    # the library's own setting outside rcsim's kernels is left as it was (threadpoolctl
    # restores it): whatever the BLAS library chose for this machine
    assert seen["outside"] == _blas_threads()


def test_a_sweep_worker_runs_on_one_thread_inside_and_outside_rcsims_kernels(no_setting):
    # rcsim.threads.worker_setup (called by the pool's initializer): one thread for the whole
    # worker process, so two workers on two cores do not fight (the documented policy)
    seen = _in_a_sweep_worker({})
    assert seen["inside"] == [1]
    assert seen["outside"] == [1]


def test_rcsim_threads_in_the_environment_reaches_main_process_and_workers(no_setting,
                                                                            monkeypatch):
    # RCSIM_THREADS=2 (the documented way to change it): two threads in the kernels of the
    # main process, and in a worker for the whole process
    monkeypatch.setenv(threads.ENVIRONMENT_VARIABLE, "2")
    assert _observed()["inside"] == [2]
    seen = _in_a_sweep_worker({threads.ENVIRONMENT_VARIABLE: "2"})
    assert seen["inside"] == [2] and seen["outside"] == [2]


def test_limit_from_python_wins_over_the_environment_and_none_goes_back(no_setting,
                                                                        monkeypatch):
    monkeypatch.setenv(threads.ENVIRONMENT_VARIABLE, "2")
    threads.limit(1)
    assert _observed()["inside"] == [1]
    threads.limit(None)
    assert _observed()["inside"] == [2]
    with pytest.raises(rcsim.InputError, match="whole number"):
        threads.limit("many")
