"""The sweep itself: check everything, run every row of the design, make and write the table."""

from __future__ import annotations

import os
from dataclasses import replace

import pandas as pd

from .design import MAX_RUNS, check_design_values, make_design, scenario_of
from .executors import check_executor, relay_warnings, run_rows
from .tables import check_table_path, make_table, write_table
from .worker import make_job, output_layout

__all__ = ["sweep", "SweepInterrupted", "interrupted_path"]


class SweepInterrupted(KeyboardInterrupt):
    """Ctrl-C during a sweep. ``table`` holds the rows that finished, also written to ``output``:
    beside the requested table, under a name that says so (:func:`interrupted_path`), never
    under the requested name.

    Attributes
    ----------
    table : DataFrame
        The finished runs, in run order.
    done, planned : int
    output : str or None
        Where the finished rows were written (``grid.interrupted.csv`` for ``grid.csv``).
    """

    def __init__(self, table, done, planned, output=None):
        super().__init__(f"interrupted after {done} of {planned} runs")
        self.table, self.done, self.planned, self.output = table, done, planned, output


def interrupted_path(output) -> str:
    """Where an interrupted sweep writes its finished rows: ``grid.csv`` -> ``grid.interrupted.csv``
    (so the requested name never holds a partial table, and a previous table there is kept).

    >>> interrupted_path("out/grid.csv"), interrupted_path("t.h5")
    ('out/grid.interrupted.csv', 't.interrupted.h5')
    """
    stem, ext = os.path.splitext(os.fspath(output))
    return f"{stem}.interrupted{ext}"


def sweep(scenario, vary, *, samples=None, seed=None, executor="processes", workers=None,
          scheduler=None, dask_workers=None, output=None, progress=None, nodes=None,
          batch_size=None, max_runs=MAX_RUNS) -> pd.DataFrame:
    """Run ``scenario`` over a grid and/or samples of some of its values.

    Parameters
    ----------
    scenario : rcsim.Scenario or path
    vary : dict
        ``{key path: values}``; values are a list (grid), a distribution object, or a text such as
        ``"40 mm..80 mm:5"``, ``"40 mm,60 mm"``, ``"normal(50 mm, 5 mm)"`` (see
        :func:`rcsim.sweep.parse_spec`). Strings with units are allowed everywhere.
    samples : int, optional
        Number of draws of the distributions (required when there are any).
    seed : int, optional
        Seed of ``numpy.random.default_rng``; when None one is drawn and kept in
        ``table.attrs['seed']`` so the sweep can be repeated.
    executor : {'serial', 'processes', 'dask'}
    workers : int, optional
        Local processes (default: all cores).
    scheduler : str or dask.distributed.Client, optional
        Address of a Dask scheduler (``executor='dask'``); without it a local cluster of
        ``dask_workers`` workers is started and closed.
    output : path, optional
        Write the table there (.csv, .h5 or .parquet), atomically.
    progress : callable(done, total), optional
    nodes : list of str, optional
        Nodes whose min/max are reported (default: every node of the scenario's [nodes]).
    batch_size : int, optional
        Runs per task sent to a worker (default: a few tasks per worker, at most 16 runs each).

    Returns
    -------
    DataFrame
        One row per run (index ``run``): the inputs by key path (SI; degC for temperatures), the
        outputs ``min.<node>``, ``max.<node>`` [degC], ``hold_time.<node>``,
        ``time_outside_band.<node>`` [s], then ``error``, then ``energy_balance`` (the run's
        relative energy balance error; above 1e-3 its outputs are not to be trusted), then ``time_out.<node>`` (the former
        name of ``time_outside_band.<node>``, same values). ``attrs`` holds units, seed, limits,
        duration, the design and the executor; ``rcsim.sweep.SweepTable.from_frame(table)`` gives them as a typed record.

    Raises
    ------
    InputError
        A key that does not exist (with a suggestion) or holds no number, a refused value, a bad
        option; all checked before any run starts.
    SweepInterrupted
        On Ctrl-C: carries the finished rows (written first beside ``output``, as
        ``<name>.interrupted.<suffix>``; the table there is marked ``interrupted``).

    Runs that fail are rows with NaN outputs and the error text; distinct warnings of the runs
    are re-issued once each with the number of runs that gave them.
    """
    sc = scenario_of(scenario)
    if output is not None:
        check_table_path(output)
    layout = replace(output_layout(sc, nodes), balance=True)   # each row's balance error too
    design = make_design(sc, vary, samples, seed, max_runs)
    check_design_values(sc, design)
    info = check_executor(executor, workers, scheduler, dask_workers)
    found = run_rows(lambda ship: make_job(sc, design.keys, layout, ship), design.values,
                     layout.width, info, scheduler=scheduler, batch_size=batch_size,
                     progress=progress)
    record = make_table(sc, design, layout, found, info)
    relay_warnings(found.warnings, found.finished)
    if found.interrupted:
        partial = record.finished_only(found.done)
        written = None
        if output is not None and len(partial.frame):
            written = write_table(partial, interrupted_path(output))
        raise SweepInterrupted(partial.to_frame(), found.finished, len(found.done), written)
    if output is not None:
        write_table(record, output)
    return record.to_frame()
