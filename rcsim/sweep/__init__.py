"""Many runs of one scenario: grids, Monte Carlo samples and sensitivity, serial or in parallel.

Calling this package runs a sweep: ``rcsim.sweep(scenario, vary, samples=..., seed=...)`` is
:func:`rcsim.sweep.sweep` (the package is callable, so ``rcsim.sweep(...)`` works whether
``rcsim.sweep`` names the function or this package).

A *design* says which scenario values change, addressed by key path (see
:meth:`rcsim.Scenario.with_values`):

* a **grid** of values (``[0.04, 0.06, 0.08]``, ``"40 mm..80 mm:5"``, ``"40 mm,60 mm"``): several
  grid keys give every combination (full factorial), the first key varying slowest;
* a **distribution** (:class:`Uniform`, :class:`Normal`, :class:`LogNormal`, :class:`Triangular`,
  or the text ``"normal(50 mm, 5 mm)"``...), sampled ``samples`` times.

With grids and distributions together, every grid point is run with the same ``samples`` draws
(common random numbers), grid-major. All draws are made up front in the calling process from
``numpy.random.default_rng(seed)``, one key after the other in the order given, so the table does
not depend on the executor, the number of workers or the order in which runs finish.

Each run reports, for every node, ``min.<node>`` and ``max.<node>`` [degC] and, for every node with
a limit, ``hold_time.<node>`` [s] (first time out of the band on either side; NaN if it never
leaves within the run) and ``time_out.<node>`` [s] (total time out of the band, both sides added;
the two sides cannot be out at the same time). The table has one row per run (index ``run``):
the input columns named by key path (SI values; degC for temperatures), then the outputs, then
``error`` (empty, or the error of a run that failed; its outputs are NaN). Its metadata are in
``table.attrs`` and, typed, in :class:`SweepTable`.

Sensitivity:

* :func:`one_at_a_time` runs each input at the low and the high end of its range with the others at
  the scenario's own values (a tornado ranking);
* :func:`first_order_indices` estimates variance-based first-order (Sobol) indices
  S_i = Var(E[Y | X_i]) / Var(Y) from the sampled table by the correlation ratio over equal-count
  bins of each input (Plischke, Borgonovo & Smith, "Global sensitivity measures from given data",
  European Journal of Operational Research 226 (2013) 536-550), with Kelley's (1935) correction of
  the between-bin variance for the finite number of runs per bin.

Executors: ``"serial"`` (in this process), ``"processes"`` (a local pool, all cores by default) and
``"dask"`` (a Dask distributed cluster at ``scheduler``, or a local one of ``dask_workers``
workers). Runs travel in batches; the scenario travels once per worker.

Modules: :mod:`~rcsim.sweep.grammar` (the values of ``vary``), :mod:`~rcsim.sweep.design` (the
runs, checked before any starts), :mod:`~rcsim.sweep.worker` (a batch of runs and their outputs),
:mod:`~rcsim.sweep.executors` (where batches run), :mod:`~rcsim.sweep.tables` (the table, its
record and files), :mod:`~rcsim.sweep.statistics` (percentiles, first-order indices),
:mod:`~rcsim.sweep.ranking` (one at a time), :mod:`~rcsim.sweep.driver` (:func:`sweep`).

A simulation supports, and never replaces, qualification testing, local codes and licensed
professional judgement.
"""

from __future__ import annotations

import sys as _sys
import types as _types

from .design import MAX_RUNS, Design
from .driver import SweepInterrupted, sweep
from .executors import EXECUTORS, ExecutorInfo
from .grammar import Distribution, Grid, LogNormal, Normal, Triangular, Uniform, parse_spec
from .ranking import one_at_a_time
from .statistics import first_order_indices, percentiles
from .tables import SweepTable, check_table_path, read_table, write_table
from .worker import OUTPUT_PREFIXES

__all__ = ["sweep", "Grid", "Uniform", "Normal", "LogNormal", "Triangular", "parse_spec",
           "one_at_a_time", "first_order_indices", "percentiles", "write_table", "read_table",
           "SweepInterrupted", "EXECUTORS", "OUTPUT_PREFIXES", "SweepTable", "check_table_path",
           "Distribution", "Design", "ExecutorInfo", "MAX_RUNS"]

#: Old private name of :func:`check_table_path`, kept while callers move to the public one.
_check_table_path = check_table_path


class _CallableModule(_types.ModuleType):
    """The ``rcsim.sweep`` package, callable as its :func:`sweep` function.

    ``rcsim.sweep`` is the public sweep function, and also this package (``from rcsim.sweep import
    Normal``). Importing a submodule binds the package as ``rcsim.sweep``, so which of the two the
    name holds depends on import order; calling the package forwards to the module's current
    ``sweep`` (so a replaced ``rcsim.sweep.sweep`` is honoured), and ``inspect.signature`` shows
    the function's signature.
    """

    def __call__(self, *args, **kwargs):
        return self.sweep(*args, **kwargs)

    @property
    def __signature__(self):
        import inspect

        return inspect.signature(self.sweep)


_sys.modules[__name__].__class__ = _CallableModule
