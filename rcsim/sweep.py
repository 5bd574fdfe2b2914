"""Many runs of one scenario: grids, Monte Carlo samples and sensitivity, serial or in parallel.

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
``error`` (empty, or the error of a run that failed; its outputs are NaN).

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

A simulation supports, and never replaces, qualification testing, local codes and licensed
professional judgement.
"""

from __future__ import annotations

import json
import math
import os
import re
import tempfile
import uuid
import warnings
from dataclasses import dataclass
from itertools import product

import numpy as np
import pandas as pd

from .errors import InputError, RcsimWarning, SolverError
from .scenario import Scenario, build, load, parse_key_path, quantity_kind
from .units import KINDS, to_si

__all__ = ["sweep", "Grid", "Uniform", "Normal", "LogNormal", "Triangular", "parse_spec",
           "one_at_a_time", "first_order_indices", "percentiles", "write_table", "read_table",
           "SweepInterrupted", "EXECUTORS", "OUTPUT_PREFIXES"]

EXECUTORS = ("serial", "processes", "dask")
#: Output column prefixes, in table order per node.
OUTPUT_PREFIXES = ("min", "max", "hold_time", "time_out")
#: A sweep of more runs than this is refused (a typo in a grid should not start a week of work).
MAX_RUNS = 1_000_000
_DEFAULT_POINTS = 5
_TABLE_SUFFIXES = (".csv", ".h5", ".hdf5", ".parquet")


class SweepInterrupted(KeyboardInterrupt):
    """Ctrl-C during a sweep. ``table`` holds the rows that finished (also written to ``output``).

    Attributes
    ----------
    table : DataFrame
        The finished runs, in run order.
    done, planned : int
    output : str or None
        Where the finished rows were written.
    """

    def __init__(self, table, done, planned, output=None):
        super().__init__(f"interrupted after {done} of {planned} runs")
        self.table, self.done, self.planned, self.output = table, done, planned, output


# -- grids and distributions -----------------------------------------------------------------
def _si(value, kind, where) -> float:
    v = to_si(value, kind, where)
    if not math.isfinite(v):
        raise InputError(f"not a finite number ({value!r})", where)
    return float(v)


@dataclass(frozen=True)
class Grid:
    """Fixed values of one key, run in this order (strings with units allowed)."""

    values: tuple

    def __init__(self, values):
        if isinstance(values, (str, bytes)) or np.ndim(values) == 0:
            values = [values]
        object.__setattr__(self, "values", tuple(values))

    def bind(self, kind, where) -> "Grid":
        if not self.values:
            raise InputError("a grid needs at least one value", where)
        return Grid([_si(v, kind, where) for v in self.values])

    def ends(self) -> tuple[float, float]:
        return min(self.values), max(self.values)

    def describe(self, unit="") -> str:
        vals = ", ".join(f"{v:.6g}" for v in self.values[:6])
        more = f", ... ({len(self.values)} values)" if len(self.values) > 6 else ""
        return f"grid [{vals}{more}] {unit}".rstrip()


class _Distribution:
    """Base of the distributions: draw with a numpy Generator; quantiles from scipy.stats."""

    name = ""
    params: tuple = ()

    def bind(self, kind, where):  # pragma: no cover - every subclass has its own
        raise NotImplementedError

    def draw(self, rng, n) -> np.ndarray:  # pragma: no cover
        raise NotImplementedError

    def frozen(self):  # pragma: no cover
        raise NotImplementedError

    def ends(self, q=0.05) -> tuple[float, float]:
        """The ``q`` and ``1 - q`` quantiles (the one-at-a-time range)."""
        d = self.frozen()
        return float(d.ppf(q)), float(d.ppf(1 - q))

    def center(self) -> float:
        return float(self.frozen().ppf(0.5))

    def describe(self, unit="") -> str:
        args = ", ".join(f"{p:.6g}" for p in self.params)
        return f"{self.name}({args}) {unit}".rstrip()

    def __eq__(self, other):
        return type(self) is type(other) and self.params == other.params

    def __hash__(self):
        return hash((type(self).__name__, self.params))

    def __repr__(self):
        return f"{type(self).__name__}{self.params!r}"


class Uniform(_Distribution):
    """Every value between ``low`` and ``high`` equally likely."""

    name = "uniform"

    def __init__(self, low, high):
        self.params = (low, high)

    def bind(self, kind, where):
        low, high = (_si(v, kind, where) for v in self.params)
        if not low < high:
            raise InputError(f"uniform needs low < high, got {low:g} and {high:g}", where)
        return Uniform(low, high)

    def draw(self, rng, n):
        return rng.uniform(self.params[0], self.params[1], n)

    def frozen(self):
        from scipy import stats

        return stats.uniform(loc=self.params[0], scale=self.params[1] - self.params[0])


class Normal(_Distribution):
    """Normal with ``mean`` and standard deviation ``sd`` (for a temperature, sd in K)."""

    name = "normal"

    def __init__(self, mean, sd):
        self.params = (mean, sd)

    def bind(self, kind, where):
        mean = _si(self.params[0], kind, where)
        sd_kind = "temperature_difference" if kind == "temperature" else kind
        sd = _si(self.params[1], sd_kind, where)
        if not sd > 0:
            raise InputError(f"normal needs a positive standard deviation, got {sd:g}", where)
        return Normal(mean, sd)

    def draw(self, rng, n):
        return rng.normal(self.params[0], self.params[1], n)

    def frozen(self):
        from scipy import stats

        return stats.norm(loc=self.params[0], scale=self.params[1])


class LogNormal(_Distribution):
    """Log-normal given by its ``median`` and its geometric standard deviation ``factor`` (> 1).

    ln X is normal with mean ln(median) and standard deviation ln(factor): about 68 % of the
    values lie within median / factor and median * factor.
    """

    name = "lognormal"

    def __init__(self, median, factor):
        self.params = (median, factor)

    def bind(self, kind, where):
        if kind in ("temperature", "temperature_difference"):
            raise InputError("a log-normal needs a positive quantity; a temperature is not one",
                             where, "use normal(...) or triangular(...) for temperatures")
        median = _si(self.params[0], kind, where)
        factor = _si(self.params[1], "dimensionless", where)
        if not median > 0:
            raise InputError(f"lognormal needs a positive median, got {median:g}", where)
        if not factor > 1:
            raise InputError(f"lognormal needs a factor above 1, got {factor:g}", where,
                             "the factor is the geometric standard deviation, e.g. 1.2")
        return LogNormal(median, factor)

    def draw(self, rng, n):
        return rng.lognormal(math.log(self.params[0]), math.log(self.params[1]), n)

    def frozen(self):
        from scipy import stats

        return stats.lognorm(s=math.log(self.params[1]), scale=self.params[0])


class Triangular(_Distribution):
    """Triangular between ``low`` and ``high`` with its peak at ``mode``."""

    name = "triangular"

    def __init__(self, low, mode, high):
        self.params = (low, mode, high)

    def bind(self, kind, where):
        low, mode, high = (_si(v, kind, where) for v in self.params)
        if not (low <= mode <= high and low < high):
            raise InputError(f"triangular needs low <= mode <= high and low < high, got "
                             f"{low:g}, {mode:g}, {high:g}", where)
        return Triangular(low, mode, high)

    def draw(self, rng, n):
        return rng.triangular(*self.params, n)

    def frozen(self):
        from scipy import stats

        low, mode, high = self.params
        return stats.triang(c=(mode - low) / (high - low), loc=low, scale=high - low)


_DISTRIBUTIONS = {"uniform": (Uniform, 2), "normal": (Normal, 2), "lognormal": (LogNormal, 2),
                  "triangular": (Triangular, 3)}
_CALL = re.compile(r"^\s*([A-Za-z_]+)\s*\((.*)\)\s*$", re.S)


def _split_top(text: str, sep: str = ",") -> list[str]:
    """Split at ``sep`` outside parentheses (units like ``W/(m^2*K)`` keep their commas-free)."""
    out, depth, cur = [], 0, ""
    for ch in text:
        if ch == "(":
            depth += 1
        elif ch == ")":
            depth -= 1
        if ch == sep and depth == 0:
            out.append(cur)
            cur = ""
        else:
            cur += ch
    out.append(cur)
    return [s.strip() for s in out]


def _number_or_text(s: str):
    try:
        return float(s)
    except ValueError:
        return s


def parse_spec(text: str, where: str = "vary"):
    """Read the text form of a grid or a distribution (not yet converted to SI).

    ``"40 mm..80 mm:5"`` (5 evenly spaced values, ends included; ``:N`` defaults to 5),
    ``"40 mm,60 mm,90 mm"`` (these values), ``"50 mm"`` (one value),
    ``"uniform(LOW,HIGH)"``, ``"normal(MEAN,SD)"``, ``"lognormal(MEDIAN,FACTOR)"``,
    ``"triangular(LOW,MODE,HIGH)"``.

    >>> parse_spec("40mm..80mm:3")
    _Range(low='40mm', high='80mm', n=3)
    >>> parse_spec("normal(25 degC, 2 K)")
    Normal('25 degC', '2 K')
    >>> parse_spec("0.03,0.05")
    Grid(values=(0.03, 0.05))
    """
    if not isinstance(text, str) or not text.strip():
        raise InputError("empty value; write e.g. 40mm..80mm:5 or normal(50mm,5mm)", where)
    m = _CALL.match(text)
    if m:
        name = m.group(1).lower()
        if name not in _DISTRIBUTIONS:
            from .materials import suggest

            raise InputError(f"unknown distribution {m.group(1)!r}", where,
                             suggest(name, list(_DISTRIBUTIONS)))
        cls, n_args = _DISTRIBUTIONS[name]
        args = _split_top(m.group(2))
        if len(args) != n_args or not all(args):
            names = {"uniform": "low,high", "normal": "mean,sd", "lognormal": "median,factor",
                     "triangular": "low,mode,high"}[name]
            raise InputError(f"{name} takes {n_args} values ({names}), got {m.group(2)!r}", where)
        return cls(*[_number_or_text(a) for a in args])
    if ".." in text:
        body, _, count = text.partition(":")
        low, _, high = body.partition("..")
        if not low.strip() or not high.strip():
            raise InputError(f"cannot read the range {text!r}", where,
                             "write LOW..HIGH:N, e.g. 40mm..80mm:5")
        n = _DEFAULT_POINTS
        if count.strip():
            try:
                n = int(count)
            except ValueError:
                raise InputError(f"the number of points {count!r} is not a whole number",
                                 where, "write LOW..HIGH:N, e.g. 40mm..80mm:5") from None
        if n < 2:
            raise InputError(f"a range needs at least 2 points, got {n}", where)
        return _Range(_number_or_text(low.strip()), _number_or_text(high.strip()), n)
    if "(" in text and not re.search(r"\d", text.split("(")[0]):
        raise InputError(f"cannot read {text!r}", where,
                         "write e.g. normal(50mm,5mm), uniform(40mm,80mm), 40mm..80mm:5")
    return Grid([_number_or_text(p) for p in _split_top(text)])


@dataclass(frozen=True)
class _Range:
    low: object
    high: object
    n: int

    def bind(self, kind, where) -> Grid:
        low, high = _si(self.low, kind, where), _si(self.high, kind, where)
        return Grid(np.linspace(low, high, self.n).tolist())


def _as_spec(value, where):
    if isinstance(value, str):
        return parse_spec(value, where)
    if isinstance(value, (_Distribution, Grid, _Range)):
        return value
    if isinstance(value, (list, tuple, np.ndarray, pd.Series)) or np.ndim(value) == 0:
        return Grid(list(np.ravel(np.asarray(value, dtype=object))))
    raise InputError(f"cannot use {type(value).__name__} as values", where,
                     "give a list of values, a distribution or a text like 40mm..80mm:5")


# -- the design ------------------------------------------------------------------------------
@dataclass
class _Design:
    keys: list            # key paths, in the order given
    kinds: list           # quantity kind per key
    specs: list           # bound Grid or _Distribution per key
    values: np.ndarray    # (runs, keys) SI values
    seed: int | None


def _scenario(scenario) -> Scenario:
    if isinstance(scenario, Scenario):
        return scenario
    if isinstance(scenario, (str, os.PathLike)):
        return load(scenario)
    raise InputError(f"expected a Scenario or a scenario file path, got {type(scenario).__name__}",
                     "scenario")


def _check_key(sc: Scenario, key) -> str:
    """The quantity kind at ``key``; raises naming the key (with a suggestion) if it is unusable."""
    where = f"{sc.name}: {key}"
    tokens = parse_key_path(key, sc.name)
    raw = sc.value(key)  # raises ScenarioError naming the key, with a suggestion
    kind = quantity_kind(tokens)
    if kind is None or isinstance(raw, (dict, list, bool)):
        raise InputError("this key does not hold a single number to vary", where,
                         "address a numeric value, e.g. links.wall.parts[1].conduction.thickness")
    return kind


def _bind_design(sc, vary, samples, seed) -> tuple[list, list, list]:
    if not isinstance(vary, dict) or not vary:
        raise InputError("nothing to vary", "vary",
                         "give at least one key, e.g. {'nodes.payload.capacity': [8e3, 9e3]}")
    keys, kinds, specs = [], [], []
    for key, value in vary.items():
        kind = _check_key(sc, key)
        where = f"vary {key}"
        spec = _as_spec(value, where).bind(kind, where)
        keys.append(key)
        kinds.append(kind)
        specs.append(spec)
    has_dist = any(isinstance(s, _Distribution) for s in specs)
    if has_dist and samples is None:
        raise InputError("distributions need a number of samples", "samples",
                         "give samples=N (--sample N on the command line)")
    if samples is not None:
        if isinstance(samples, bool) or not isinstance(samples, (int, np.integer)) or samples < 1:
            raise InputError(f"samples must be a whole number >= 1, got {samples!r}", "samples")
        if not has_dist:
            raise InputError("samples given but no key has a distribution", "samples",
                             "vary a key with e.g. normal(50mm,5mm), or leave samples out")
    return keys, kinds, specs


def _design(sc, vary, samples, seed, max_runs) -> _Design:
    keys, kinds, specs = _bind_design(sc, vary, samples, seed)
    if seed is not None and (isinstance(seed, bool) or not isinstance(seed, (int, np.integer))
                             or seed < 0):
        raise InputError(f"seed must be a whole number >= 0, got {seed!r}", "seed")
    grid_cols = [i for i, s in enumerate(specs) if isinstance(s, Grid)]
    dist_cols = [i for i, s in enumerate(specs) if isinstance(s, _Distribution)]
    n_grid = math.prod(len(specs[i].values) for i in grid_cols)
    n_samp = samples if dist_cols else 1
    total = n_grid * n_samp
    if total > max_runs:
        raise InputError(f"{total} runs is more than the limit of {max_runs}", "vary",
                         "use fewer grid points or samples (or raise max_runs)")
    if dist_cols and seed is None:
        seed = int(np.random.SeedSequence().entropy % (2**63))
    values = np.empty((total, len(keys)))
    if grid_cols:  # full factorial, first key slowest; each point repeated for the draws
        points = np.array(list(product(*[specs[i].values for i in grid_cols])), dtype=float)
        values[:, grid_cols] = np.repeat(points, n_samp, axis=0)
    if dist_cols:  # the same draws at every grid point
        rng = np.random.default_rng(seed)
        for i in dist_cols:
            values[:, i] = np.tile(np.asarray(specs[i].draw(rng, n_samp), dtype=float), n_grid)
    return _Design(keys, kinds, specs, values, seed if dist_cols else None)


def _check_design_values(sc, design) -> None:
    """Build the scenario at both ends of each grid and at each distribution's median, so values
    the model refuses are reported before anything runs."""
    for key, spec in zip(design.keys, design.specs):
        vals = spec.ends() if isinstance(spec, Grid) else (spec.center(),)
        for v in dict.fromkeys(vals):
            try:
                with warnings.catch_warnings():
                    warnings.simplefilter("ignore")
                    sc.with_values({key: float(v)})
            except InputError as err:
                raise InputError(f"value {v:.6g} is refused: {err.message}", f"vary {key}",
                                 err.hint) from None


# -- one run ---------------------------------------------------------------------------------
def _output_layout(sc: Scenario, nodes=None) -> tuple[list, list, list]:
    """(record nodes, output column names, limit nodes)."""
    all_nodes = list(sc.network.nodes)
    if nodes is None:
        nodes = all_nodes
    else:
        nodes = [nodes] if isinstance(nodes, str) else list(nodes)
        from .materials import suggest

        for n in nodes:
            if n not in all_nodes:
                raise InputError(f"unknown node {n!r}", "nodes", suggest(n, all_nodes))
    limit_nodes = list(dict.fromkeys(lim.node for lim in sc.network.limits.values()))
    cols = [f"{p}.{n}" for n in nodes for p in ("min", "max")]
    cols += [f"{p}.{n}" for n in limit_nodes for p in ("hold_time", "time_out")]
    record = list(dict.fromkeys(nodes))
    return record, cols, limit_nodes


def _outputs_of(res, record, limit_nodes) -> np.ndarray:
    nt = res.nodes
    pos = {n: i for i, n in enumerate(nt["node"].tolist())}
    tmin = nt["min [degC]"].to_numpy(dtype=float)
    tmax = nt["max [degC]"].to_numpy(dtype=float)
    out = []
    for n in record:
        out += [tmin[pos[n]], tmax[pos[n]]]
    lim = res.limits
    lim_node = lim["node"].to_numpy(dtype=object)
    holds = lim["hold_time [s]"].to_numpy(dtype=float)
    touts = lim["time_out [s]"].to_numpy(dtype=float)
    for n in limit_nodes:
        rows = lim_node == n
        # first time out on either side; NaN only when neither side is ever left
        hold = float(np.fmin.reduce(holds[rows])) if rows.any() else math.nan
        out += [hold, float(touts[rows].sum())]
    return np.asarray(out, dtype=float)


_BASES: dict = {}


def _base_of(job) -> Scenario:
    sc = job.get("scenario")
    if sc is not None:
        return sc
    token = job["token"]
    if token not in _BASES:
        _BASES.clear()
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # the caller saw these when it loaded the scenario
            _BASES[token] = build(job["data"], job["text"], job["path"], job["base_dir"],
                                  job["allow_abs"])
    return _BASES[token]


def _run_batch(job, batch):
    """Run a batch ``(indices, values)``; returns (indices, outputs, errors, warnings)."""
    indices, values = batch
    if "scenario" not in job:  # in a worker process (local or Dask)
        _limit_worker_blas()
    base = _base_of(job)
    keys, record, limit_nodes, n_out = job["keys"], job["record"], job["limit_nodes"], job["n_out"]
    out = np.full((len(indices), n_out), np.nan)
    errors = [""] * len(indices)
    seen: dict[str, int] = {}
    for r, row in enumerate(values):
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            try:
                sc = base.with_values({k: float(v) for k, v in zip(keys, row)})
                res = sc.run(record=record)
                out[r] = _outputs_of(res, record, limit_nodes)
            except Exception as exc:  # noqa: BLE001 - a failed run is a row, not the end
                errors[r] = f"{type(exc).__name__}: {exc}".replace("\n", " ")
        for w in caught:
            text = str(w.message)
            seen[text] = seen.get(text, 0) + 1
    return list(indices), out, errors, seen


def _job(sc, keys, record, limit_nodes, n_out, ship: bool) -> dict:
    job = {"keys": list(keys), "record": list(record), "limit_nodes": list(limit_nodes),
           "n_out": int(n_out)}
    if ship:
        job.update(token=uuid.uuid4().hex, data=sc.data, text=sc.text, path=sc.path,
                   base_dir=sc.base_dir, allow_abs=sc.allow_absolute_paths)
    else:
        job["scenario"] = sc
    return job


# -- executors -------------------------------------------------------------------------------
def _batches(values, workers, batch_size):
    n = len(values)
    if batch_size is None:
        # a few batches per worker for load balance and prompt progress, at most 16 runs each
        batch_size = max(1, min(16, math.ceil(n / (8 * max(1, workers)))))
    return [(list(range(i, min(n, i + batch_size))), values[i:i + batch_size])
            for i in range(0, n, batch_size)]


def _one_blas_thread():
    """A hook to keep BLAS to one thread per worker; nothing to do for rcsim's networks.

    The exact path's matrices are small (tens to hundreds of states): BLAS runs them on one
    thread anyway, so no extra package is needed to stop nested threads competing with workers.
    """
    from contextlib import nullcontext

    return nullcontext()


_WORKER_LIMITS: list = []


def _limit_worker_blas() -> None:
    """In a worker process: one BLAS thread for the rest of its life (applied once)."""
    if not _WORKER_LIMITS:
        _WORKER_LIMITS.append(_one_blas_thread())


def _serial(job, batches):
    with _one_blas_thread():  # restored when the sweep ends
        for b in batches:
            yield _run_batch(job, b)


_WORKER_JOB: dict = {}


def _init_worker(job):  # pragma: no cover - runs in the worker processes
    """Keep the job in the worker (sent once per process) and leave Ctrl-C to the parent."""
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)
    _limit_worker_blas()
    _WORKER_JOB.clear()
    _WORKER_JOB.update(job)


def _run_batch_here(batch):  # pragma: no cover - runs in the worker processes
    return _run_batch(_WORKER_JOB, batch)


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


def _processes(job, batches, workers):
    from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait

    pool = ProcessPoolExecutor(max_workers=workers, initializer=_init_worker, initargs=(job,))
    finished = False
    try:
        pending = {pool.submit(_run_batch_here, b) for b in batches}
        while pending:
            done, pending = wait(pending, return_when=FIRST_COMPLETED)
            for fut in done:
                yield _worker_result(fut)
        finished = True
    finally:
        pool.shutdown(wait=finished, cancel_futures=True)


def _dask(job, batches, scheduler, n_workers):
    try:
        from dask.distributed import Client, LocalCluster, as_completed
    except ImportError:
        raise InputError("the 'dask' executor needs the dask and distributed packages", "executor",
                         "install them with: pip install \"rcsim[dask]\"") from None
    cluster = None
    own_client = True
    if isinstance(scheduler, Client):
        client, own_client = scheduler, False
    elif scheduler:
        try:
            client = Client(scheduler, timeout="10s")
        except (OSError, TimeoutError) as exc:
            raise InputError(f"cannot reach the Dask scheduler at {scheduler!r} ({exc})",
                             "scheduler", "check the address, e.g. tcp://10.0.0.5:8786") from None
    else:
        cluster = LocalCluster(n_workers=n_workers,
                               threads_per_worker=1, processes=True, dashboard_address=None)
        client = Client(cluster)
    futures = []
    try:
        shared = client.scatter(job, broadcast=True)
        futures = [client.submit(_run_batch, shared, b, pure=False) for b in batches]
        for fut in as_completed(futures):
            yield _worker_result(fut)
    finally:
        pending = [f for f in futures if not f.done()]
        if pending:
            client.cancel(pending)
        if own_client:
            client.close()
        if cluster is not None:
            cluster.close()


def _execute(sc, keys, values, record, limit_nodes, n_out, executor, workers, scheduler,
             dask_workers, batch_size):
    if executor not in EXECUTORS:
        from .materials import suggest

        raise InputError(f"unknown executor {executor!r}", "executor",
                         suggest(str(executor), EXECUTORS))
    if workers is not None and (isinstance(workers, bool) or not isinstance(workers, int)
                                or workers < 1):
        raise InputError(f"workers must be a whole number >= 1, got {workers!r}", "workers")
    if dask_workers is not None and (not isinstance(dask_workers, int) or dask_workers < 1):
        raise InputError(f"dask_workers must be a whole number >= 1, got {dask_workers!r}",
                         "dask_workers")
    if executor == "serial":
        return _serial(_job(sc, keys, record, limit_nodes, n_out, False),
                       _batches(values, 1, batch_size))
    job = _job(sc, keys, record, limit_nodes, n_out, True)
    if executor == "processes":
        workers = workers or os.cpu_count() or 1
        return _processes(job, _batches(values, workers, batch_size), workers)
    n_dask = dask_workers or workers or os.cpu_count() or 1
    return _dask(job, _batches(values, n_dask, batch_size), scheduler, n_dask)


def _run_all(sc, keys, values, record, limit_nodes, cols, *, executor, workers, scheduler,
             dask_workers, batch_size, progress):
    """Run every row of ``values``; returns (outputs, errors, done mask, warnings, interrupted)."""
    n = len(values)
    out = np.full((n, len(cols)), np.nan)
    errors = np.full(n, "", dtype=object)
    done = np.zeros(n, dtype=bool)
    seen: dict[str, int] = {}
    interrupted = False
    gen = _execute(sc, keys, values, record, limit_nodes, len(cols), executor, workers,
                   scheduler, dask_workers, batch_size)
    try:
        for idx, o, e, w in gen:
            out[idx] = o
            errors[idx] = e
            done[idx] = True
            for text, count in w.items():
                seen[text] = seen.get(text, 0) + count
            if progress is not None:
                progress(int(done.sum()), n)
    except KeyboardInterrupt:
        interrupted = True
    finally:
        gen.close()
    return out, errors, done, seen, interrupted


def _relay_warnings(seen, n):
    for text, count in seen.items():
        warnings.warn(f"{text} (in {count} of {n} runs)", RcsimWarning, stacklevel=3)


# -- sweep -----------------------------------------------------------------------------------
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
        :func:`parse_spec`). Strings with units are allowed everywhere.
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
        outputs ``min.<node>``, ``max.<node>`` [degC], ``hold_time.<node>``, ``time_out.<node>``
        [s], then ``error``. ``attrs`` holds units, seed, limits, duration and the design.

    Raises
    ------
    InputError
        A key that does not exist (with a suggestion) or holds no number, a refused value, a bad
        option; all checked before any run starts.
    SweepInterrupted
        On Ctrl-C: carries the finished rows (written to ``output`` first).

    Runs that fail are rows with NaN outputs and the error text; distinct warnings of the runs
    are re-issued once each with the number of runs that gave them.
    """
    sc = _scenario(scenario)
    if output is not None:
        _check_table_path(output)
    record, cols, limit_nodes = _output_layout(sc, nodes)
    design = _design(sc, vary, samples, seed, max_runs)
    _check_design_values(sc, design)
    out, errors, done, seen, interrupted = _run_all(
        sc, design.keys, design.values, record, limit_nodes, cols, executor=executor,
        workers=workers, scheduler=scheduler, dask_workers=dask_workers, batch_size=batch_size,
        progress=progress)
    table = _make_table(sc, design, cols, out, errors)
    table.attrs["samples"] = int(samples) if samples is not None else 0
    _relay_warnings(seen, int(done.sum()))
    if interrupted:
        attrs = dict(table.attrs)
        table = table[done].copy()
        table.attrs = {**attrs, "interrupted": True}
        if output is not None and len(table):
            write_table(table, output)
        raise SweepInterrupted(table, int(done.sum()), len(done),
                               os.fspath(output) if output is not None and len(table) else None)
    if output is not None:
        write_table(table, output)
    return table


def _unit_of(col, kinds_by_key) -> str:
    if col in kinds_by_key:
        kind = kinds_by_key[col]
        return KINDS[kind][0] if kind != "dimensionless" else "1"
    prefix = col.split(".", 1)[0]
    return "degC" if prefix in ("min", "max") else "s"


def _make_table(sc, design, cols, out, errors) -> pd.DataFrame:
    data = {k: design.values[:, i] for i, k in enumerate(design.keys)}
    data.update({c: out[:, j] for j, c in enumerate(cols)})
    table = pd.DataFrame(data, index=pd.RangeIndex(len(out), name="run"))
    table["error"] = pd.Series(errors, index=table.index, dtype=object)
    kinds = dict(zip(design.keys, design.kinds))
    limits = {lim.node: {"min": lim.min, "max": lim.max} for lim in sc.network.limits.values()}
    table.attrs.update({
        "scenario": sc.name,
        "title": sc.title,
        "inputs": list(design.keys),
        "outputs": list(cols),
        "units": {c: _unit_of(c, kinds) for c in list(design.keys) + list(cols)},
        "kinds": kinds,
        "design": {k: s.describe(_unit_of(k, kinds)) for k, s in zip(design.keys, design.specs)},
        "seed": design.seed,
        "limits": limits,
        "duration": sc.settings.duration,
        "interrupted": False,
    })
    return table


# -- summaries -------------------------------------------------------------------------------
def _outputs(table) -> list[str]:
    outs = table.attrs.get("outputs")
    if outs:
        return [c for c in outs if c in table.columns]
    return [c for c in table.columns if c.split(".", 1)[0] in OUTPUT_PREFIXES and "." in c]


def _inputs(table) -> list[str]:
    ins = table.attrs.get("inputs")
    if ins:
        return [c for c in ins if c in table.columns]
    outs = set(_outputs(table))
    return [c for c in table.columns if c not in outs and c != "error"]


def _ok(table) -> np.ndarray:
    if "error" not in table.columns:
        return np.ones(len(table), dtype=bool)
    err = table["error"].fillna("").astype(str).to_numpy()
    return err == ""


def percentiles(table: pd.DataFrame, q=(5, 50, 95)) -> pd.DataFrame:
    """Percentiles of each output over the runs that did not fail.

    A hold time of NaN (never left the band within the run) counts as longer than any finite one,
    so a percentile that falls among such runs is ``inf`` ("more than the duration").

    Returns a DataFrame indexed by output with one column per percentile (``"5 %"``...) and
    ``runs`` (successful runs used) and ``never`` (runs that never left the band).

    >>> t = pd.DataFrame({"hold_time.x": [1.0, 2.0, 3.0, np.nan]})
    >>> percentiles(t, q=(50, 90))[["50 %", "90 %", "never"]].to_dict("records")
    [{'50 %': 2.5, '90 %': inf, 'never': 1}]
    """
    ok = _ok(table)
    rows = {}
    for c in _outputs(table):
        x = table[c].to_numpy(dtype=float)[ok]
        never = 0
        if c.startswith("hold_time."):
            never = int(np.isnan(x).sum())
            x = np.where(np.isnan(x), np.inf, x)
        else:
            x = x[np.isfinite(x)]
        row = {}
        for p in q:
            if x.size == 0:
                row[f"{p:g} %"] = math.nan
                continue
            with np.errstate(invalid="ignore"):
                v = float(np.percentile(np.sort(x), p))
            row[f"{p:g} %"] = math.inf if math.isnan(v) else v
        row["runs"] = int(x.size)
        row["never"] = never
        rows[c] = row
    return pd.DataFrame.from_dict(rows, orient="index")


# -- sensitivity -----------------------------------------------------------------------------
def _ranges(sc, vary):
    """({key: (low, high, kind)} of the keys with a range, {key: value} of single-valued ones)."""
    ranges, fixed = {}, {}
    for key, value in vary.items():
        kind = _check_key(sc, key)
        where = f"vary {key}"
        spec = _as_spec(value, where).bind(kind, where)
        low, high = spec.ends()
        if low < high:
            ranges[key] = (low, high, kind)
        else:
            fixed[key] = low
    if not ranges:
        raise InputError("one-at-a-time needs at least one key with a range", "vary",
                         "give two or more values or a distribution")
    return ranges, fixed


def one_at_a_time(scenario, vary, *, executor="processes", workers=None, scheduler=None,
                  dask_workers=None, nodes=None, progress=None) -> pd.DataFrame:
    """Tornado ranking: each input at the low and high end of its range, the others as written.

    The range of a grid is its smallest and largest value; of a distribution its 5th and 95th
    percentiles. The base run uses the scenario's own values, except for keys given a single
    value, which hold that value in every run.

    Returns
    -------
    DataFrame
        One row per (output, input): ``output``, ``input``, ``low``, ``high`` (SI input values),
        ``at_low``, ``at_high``, ``base`` (output values; NaN where a run failed or a hold time
        was not reached) and ``swing`` = |at_high - at_low|, sorted by output then by swing,
        largest first. For a hold time not reached within the run the swing takes the run
        duration in its place (so it is a lower bound). ``attrs['errors']`` lists runs that
        failed; ``attrs['duration']`` is the run duration [s].
    """
    sc = _scenario(scenario)
    ranges, fixed = _ranges(sc, vary)
    keys = list(ranges) + list(fixed)
    record, cols, limit_nodes = _output_layout(sc, nodes)
    base = np.array([fixed[k] if k in fixed else sc.si_value(k) for k in keys])
    rows = [base.copy()]
    for i, k in enumerate(ranges):
        for end in (0, 1):
            r = base.copy()
            r[i] = ranges[k][end]
            rows.append(r)
    values = np.vstack(rows)
    out, errors, done, seen, interrupted = _run_all(
        sc, keys, values, record, limit_nodes, cols, executor=executor, workers=workers,
        scheduler=scheduler, dask_workers=dask_workers, batch_size=None, progress=progress)
    _relay_warnings(seen, int(done.sum()))
    if interrupted:
        raise KeyboardInterrupt
    recs = []
    duration = sc.settings.duration
    for j, c in enumerate(cols):
        for i, k in enumerate(ranges):
            lo, hi = out[1 + 2 * i, j], out[2 + 2 * i, j]
            a, b = lo, hi
            if c.startswith("hold_time.") and duration and not (errors[1 + 2 * i]
                                                                 or errors[2 + 2 * i]):
                # never left the band: the hold time is at least the duration (a lower bound)
                a, b = (duration if math.isnan(v) else v for v in (lo, hi))
            recs.append({"output": c, "input": k, "low": ranges[k][0], "high": ranges[k][1],
                         "at_low": lo, "at_high": hi, "base": out[0, j],
                         "swing": abs(b - a) if np.isfinite(a) and np.isfinite(b) else np.nan})
    table = pd.DataFrame(recs, columns=["output", "input", "low", "high", "at_low", "at_high",
                                        "base", "swing"])
    order = {c: j for j, c in enumerate(cols)}
    table["_o"] = table["output"].map(order)
    table = table.sort_values(["_o", "swing"], ascending=[True, False], na_position="last",
                              kind="stable").drop(columns="_o").reset_index(drop=True)
    kinds = {k: ranges[k][2] for k in ranges}
    table.attrs["units"] = {c: _unit_of(c, kinds) for c in list(ranges) + cols}
    table.attrs["errors"] = [f"run {i}: {e}" for i, e in enumerate(errors) if e]
    table.attrs["scenario"] = sc.name
    table.attrs["duration"] = duration
    return table


def _bins_of(x: np.ndarray, bins: int) -> np.ndarray:
    """Bin label per value: distinct values when there are few, else equal-count bins."""
    uniq, inverse = np.unique(x, return_inverse=True)
    if uniq.size <= bins:
        return inverse
    order = np.argsort(x, kind="stable")
    labels = np.empty(x.size, dtype=np.int64)
    labels[order] = (np.arange(x.size) * bins) // x.size
    return labels


def first_order_indices(table: pd.DataFrame, inputs=None, outputs=None, bins=None) -> pd.DataFrame:
    """Variance-based first-order indices S_i = Var(E[Y|X_i]) / Var(Y) from sampled runs.

    Estimated for each input by the correlation ratio over ``bins`` equal-count bins of that input
    (Plischke, Borgonovo & Smith 2013, see the module notes); an input with at most ``bins``
    distinct values (a grid) is binned by value. The between-bin sum of squares is corrected for
    the finite bin sizes as in Kelley's epsilon-squared (Kelley 1935):
    S = (SS_between - (M - 1) SS_within / (N - M)) / SS_total, clipped at 0.

    The inputs must be independent (as drawn by :func:`sweep`). Hold times never reached are taken
    as the run duration (a lower bound) for this purpose. Failed runs are left out.
    ``bins`` defaults to round(sqrt(N)) between 2 and 50.

    Returns
    -------
    DataFrame
        Rows: inputs; columns: outputs. A column whose output does not vary is NaN.

    >>> rng = np.random.default_rng(1)
    >>> x1, x2 = rng.uniform(size=4000), rng.uniform(size=4000)
    >>> t = pd.DataFrame({"a": x1, "b": x2, "max.y": 2 * x1 + x2})
    >>> s = first_order_indices(t, inputs=["a", "b"], outputs=["max.y"])
    >>> round(float(s.at["a", "max.y"]), 1), round(float(s.at["b", "max.y"]), 1)  # 0.8, 0.2
    (0.8, 0.2)
    """
    ok = _ok(table)
    inputs = list(inputs) if inputs is not None else _inputs(table)
    outputs = list(outputs) if outputs is not None else _outputs(table)
    for c in inputs + outputs:
        if c not in table.columns:
            from .materials import suggest

            raise InputError(f"no column {c!r} in the table", "first_order_indices",
                             suggest(c, list(table.columns)))
    duration = table.attrs.get("duration")
    result = pd.DataFrame(index=pd.Index(inputs, name="input"), columns=outputs, dtype=float)
    for c in outputs:
        y = table[c].to_numpy(dtype=float)[ok]
        if c.startswith("hold_time.") and duration:
            y = np.where(np.isnan(y), float(duration), y)
        keep = np.isfinite(y)
        y = y[keep]
        n = y.size
        if n < 4:
            continue
        ss_total = float(((y - y.mean()) ** 2).sum())
        if ss_total <= 1e-24 * max(1.0, float(np.abs(y).max())) ** 2 * n:
            continue
        m_bins = bins or int(min(50, max(2, round(math.sqrt(n)))))
        for k in inputs:
            x = table[k].to_numpy(dtype=float)[ok][keep]
            labels = _bins_of(x, m_bins)
            m = int(labels.max()) + 1
            counts = np.bincount(labels, minlength=m).astype(float)
            sums = np.bincount(labels, weights=y, minlength=m)
            used = counts > 0
            means = sums[used] / counts[used]
            ss_between = float((counts[used] * (means - y.mean()) ** 2).sum())
            ss_within = ss_total - ss_between
            m_used = int(used.sum())
            if n > m_used:
                ss_between -= (m_used - 1) * ss_within / (n - m_used)
            result.at[k, c] = max(0.0, ss_between / ss_total)
    return result


# -- table files -----------------------------------------------------------------------------
def _check_table_path(path) -> str:
    path = os.fspath(path)
    low = path.lower()
    if not low.endswith(_TABLE_SUFFIXES):
        raise InputError(f"{path!r} should end with .csv, .h5 or .parquet", "output")
    folder = os.path.dirname(os.path.abspath(path))
    if not os.path.isdir(folder):
        raise InputError(f"folder {os.path.dirname(path)!r} does not exist", "output",
                         "create it first")
    if os.path.isdir(path):
        raise InputError(f"{path!r} is a directory", "output", "give a file name")
    if low.endswith(".parquet"):
        try:
            import importlib

            importlib.import_module("pyarrow")
        except ImportError:
            raise InputError("writing .parquet needs the pyarrow package", "output",
                             "pip install \"rcsim[parquet]\", or write .csv or .h5") from None
    return path


def _meta_json(attrs) -> str:
    def clean(v):
        if isinstance(v, dict):
            return {str(k): clean(x) for k, x in v.items()}
        if isinstance(v, (list, tuple)):
            return [clean(x) for x in v]
        if isinstance(v, (np.integer,)):
            return int(v)
        if isinstance(v, (np.floating, float)):
            return None if not math.isfinite(float(v)) else float(v)
        return v

    return json.dumps(clean(dict(attrs)))


def write_table(table: pd.DataFrame, path) -> str:
    """Write a sweep table to .csv, .h5 (h5py, group ``/sweep``) or .parquet, atomically.

    CSV keeps the columns only; HDF5 and Parquet also keep ``table.attrs`` (units, seed, design).
    """
    path = _check_table_path(path)
    low = path.lower()
    folder = os.path.dirname(os.path.abspath(path))
    suffix = os.path.splitext(path)[1]
    fd, tmp = tempfile.mkstemp(prefix=".rcsim-", suffix=suffix + ".tmp", dir=folder)
    os.close(fd)
    try:
        if low.endswith(".csv"):
            table.to_csv(tmp, float_format="%.17g")
        elif low.endswith((".h5", ".hdf5")):
            _write_h5(table, tmp)
        else:
            frame = table.copy()
            frame.attrs = {"rcsim_sweep": _meta_json(table.attrs)}
            frame.to_parquet(tmp)
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.remove(tmp)
        raise
    return path


def _write_h5(table, tmp):
    import h5py

    from . import __version__

    with h5py.File(tmp, "w") as h5:
        g = h5.create_group("sweep")
        g.create_dataset("run", data=table.index.to_numpy(dtype=np.int64))
        for c in table.columns:
            if c == "error":
                g.create_dataset(c, data=np.asarray(table[c].fillna("").astype(str).tolist(),
                                                    dtype=object),
                                 dtype=h5py.string_dtype())
            else:
                g.create_dataset(c, data=table[c].to_numpy(dtype=float))
        g.attrs["columns"] = json.dumps(list(map(str, table.columns)))
        g.attrs["meta"] = _meta_json(table.attrs)
        h5.attrs["rcsim_version"] = __version__


def read_table(path) -> pd.DataFrame:
    """Read a table written by :func:`write_table` (or ``rcsim sweep -o``)."""
    from .errors import DataError

    path = os.fspath(path)
    label = os.path.basename(path)
    if not os.path.exists(path):
        raise DataError("file not found", label)
    low = path.lower()
    meta = {}
    if low.endswith(".csv"):
        table = pd.read_csv(path, index_col="run")
    elif low.endswith((".h5", ".hdf5")):
        import h5py

        with h5py.File(path, "r") as h5:
            if "sweep" not in h5:
                raise DataError("is not a sweep table (no /sweep group)", label)
            g = h5["sweep"]
            cols = json.loads(g.attrs["columns"])
            data = {}
            for c in cols:
                arr = g[c][()]
                if c == "error":
                    arr = np.asarray([x.decode() if isinstance(x, bytes) else str(x)
                                      for x in arr], dtype=object)
                data[c] = arr
            table = pd.DataFrame(data, index=pd.Index(g["run"][()], name="run"), columns=cols)
            meta = json.loads(g.attrs.get("meta", "{}"))
    elif low.endswith(".parquet"):
        table = pd.read_parquet(path)
        meta = json.loads(table.attrs.get("rcsim_sweep", "{}"))
    else:
        raise DataError("should end with .csv, .h5 or .parquet", label)
    if "error" in table.columns:
        err = table["error"].astype(object)
        table["error"] = err.where(err.notna(), "")
    table.attrs = meta
    return table
