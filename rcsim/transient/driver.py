"""``simulate``: check and build the problem, choose a path, run it, wrap the Result.

The driver is the only place that knows there are several paths: it asks each registered path
whether it takes the run (keeping the reasons of those that decline), finds a periodic start once
for the path that runs, falls back to the next path when one declines while running (before
recording anything), and reports progress through one object that never goes back.
"""

from __future__ import annotations

import datetime as _dt
import time as _time
import warnings

from ..base import package_version
from ..errors import EnergyBalanceWarning, Interrupted, SolverError
from ..modes import DENSE_LIMIT, time_constants_at  # noqa: F401 (DENSE_LIMIT: older imports)
from ..profiles import common_period
from ..recording import H5Sink, MemorySink, Recorder
from ..results import Result, h5_attributes
from ..run_warnings import collecting_warnings, warn_network, warn_watched, warning_texts
from ..runinfo import RunInfo
from ..threads import kernels
from .base import NotSuitable, Progress
from .exact import CHUNK_ELEMENTS  # noqa: F401 (older imports)
from .periodic import check_grounded, periodic_start
from .problem import MAX_SAMPLES, build_problem
from .registry import AUTO, BALANCE_LIMIT, EXACT_LIMIT, PATHS, SOLVERS, load_path

__all__ = ["simulate", "choose_paths", "run_first", "run_problem", "EXACT_LIMIT", "MAX_SAMPLES",
           "SOLVERS"]


def choose_paths(problem, solver: str = AUTO):
    """The paths that take ``problem``, in the order to try them, and {name: reason} of those
    that decline. The list ends at the first path that cannot decline once running (later ones
    are not even imported). A path asked for by name that declines raises its refusal."""
    names = list(PATHS) if solver == AUTO else [solver]
    candidates, declined = [], {}
    for name in names:
        path = load_path(name)
        reason = path.accepts(problem)
        if reason is not None:
            if solver != AUTO:
                raise path.refusal(reason)
            declined[name] = reason
            continue
        candidates.append(path)
        if not path.may_decline_while_running:
            break
    return candidates, declined


def run_first(problem, candidates, declined: dict, attempt, solver: str = AUTO):
    """``attempt(path)`` on the first candidate that does not decline while running (raising
    :class:`NotSuitable`); returns (path, what ``attempt`` returned). The periodic start is
    found once, for the first path tried. ``declined`` gains the reasons of the paths that
    decline; a path asked for by name (``solver``) that declines raises its refusal."""
    for k, path in enumerate(candidates):
        if problem.start is None:
            problem.start = periodic_start(problem, path.period_map(problem))
        try:
            return path, attempt(path)
        except NotSuitable as exc:
            if solver != AUTO or k == len(candidates) - 1:
                raise path.refusal(str(exc)) from None
            declined[path.name] = str(exc)
    raise SolverError("no transient path takes this run")  # pragma: no cover - stiff takes all


def run_problem(problem, candidates, declined: dict, recorder, progress: Progress,
                solver: str = AUTO):
    """Run ``problem`` into ``recorder`` on the first candidate that takes it (see
    :func:`run_first`); returns (path, RunStats)."""

    def attempt(path):
        try:
            return path.run(problem, recorder, progress)
        except NotSuitable as exc:
            if recorder.n_samples:           # pragma: no cover - a path's contract
                raise SolverError(f"the {path.name} path declined after recording: {exc}") \
                    from None
            raise

    return run_first(problem, candidates, declined, attempt, solver)


def simulate(network, duration, step, *, initial=None, solver="auto", record=None, output=None,
             rtol=1e-6, atol=1e-6, progress=None, start_time=None, scenario_text=None,
             times=None) -> Result:
    """Integrate ``network`` over [0, duration]; see :meth:`rcsim.Network.simulate`."""
    with kernels(), collecting_warnings() as caught:   # rcsim's own BLAS threads; warnings
        return _simulate(caught, network, duration, step, initial=initial, solver=solver, record=record,
                         output=output, rtol=rtol, atol=atol, progress=progress,
                         start_time=start_time, scenario_text=scenario_text, times=times)


def check_run(network, duration, step, *, initial=None, solver="auto", record=None,
              rtol=1e-6, atol=1e-6, times=None) -> None:
    """Every check a run makes before it integrates, without integrating: the settings, the
    inputs' span, the start (given or steady), what to record, the solver asked for by name,
    and for a periodic start that every input repeats with one common period and every node
    reaches a boundary. Raises what :func:`simulate` would raise for them."""
    with kernels():
        problem = build_problem(network, duration, step, initial=initial, solver=solver,
                                record=record, rtol=rtol, atol=atol, times=times)
        choose_paths(problem, solver)
        if problem.initial == "periodic":
            check_grounded(problem.asm)
            model = problem.energy_model
            common_period(model.profiles + model.varying_profiles, "simulation.initial")


def _simulate(caught, network, duration, step, *, initial, solver, record, output, rtol, atol, progress,
              start_time, scenario_text, times) -> Result:
    wall0 = _time.perf_counter()
    problem = build_problem(network, duration, step, initial=initial, solver=solver,
                            record=record, rtol=rtol, atol=atol, times=times)
    warn_network(network, problem.asm)          # nodes with no path to a boundary
    candidates, declined = choose_paths(problem, solver)
    sink = H5Sink(output) if output is not None else MemorySink()
    recorder = Recorder(problem.asm, problem.plan, sink, samples=problem.times.size)
    try:
        path, stats = run_problem(problem, candidates, declined, recorder, Progress(progress),
                                  solver)
        warn_watched(problem.plan.watchers)     # freezing points, correlation ranges
        balance, terms = recorder.energy_balance()
        _warn_balance(balance, path.name)
        tau = time_constants_at(problem.asm, problem.thermostats, problem.duration)
        info = RunInfo(path=path.name, solver=path.description, stats=stats,
                       states=int(problem.ss.n), wall_time=_time.perf_counter() - wall0,
                       declined=declined)
        meta = {
            "solver": path.description,
            "energy_balance": float(balance),
            "energy_terms": terms,
            "stats": info.as_dict(),
            "scenario": scenario_text or network.source_text or "",
            "start_time": "" if start_time is None else str(start_time),
            "duration": problem.duration,
            "step": float(problem.step),
            "title": network.title or "",
            "initial": problem.initial,
            "time_constants": [] if tau is None else [float(x) for x in tau],
            "period": _period_or_none(problem),
            "surfaces": {name: s.node for name, s in getattr(network, "surfaces", {}).items()},
            "created": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
        }
        meta["warnings"] = warning_texts(caught)     # Result.warnings
        return _result(recorder, sink, meta, info, output)
    except KeyboardInterrupt as exc:
        sink.abort()
        if isinstance(exc, Interrupted):
            raise
        reached = recorder.last_time or 0.0
        total = problem.duration
        where = f" to {output}" if output is not None else ""
        raise Interrupted(f"interrupted at t = {reached:g} s of {total:g} s "
                          f"({100 * reached / total:.0f} %); nothing was written{where}",
                          reached=reached, total=total) from None
    except BaseException:
        sink.abort()
        raise


def _warn_balance(balance: float, path: str) -> None:
    """Warn loudly when the energy balance of a finished run does not close."""
    if balance <= BALANCE_LIMIT:
        return
    # stack: the warning, _warn_balance, _simulate, simulate, Network.simulate, the caller
    warnings.warn(EnergyBalanceWarning(
        f"the energy balance of this run does not close: error {balance:.2g}, above "
        f"{BALANCE_LIMIT:g} ({path} path); its temperatures are not to be trusted (tighten "
        "rtol/atol or try another solver)"), stacklevel=5)


def _result(recorder, sink, meta: dict, info: RunInfo, output) -> Result:
    """The Result of a finished run (its file completed first when streamed)."""
    limits = recorder.limits_table()
    nodes = recorder.node_table()
    thermostats = recorder.tables.get("thermostats")
    if output is None:
        return Result(sink.arrays(), dict(sink.names), meta, limits, nodes,
                      thermostats=thermostats, run_info=info)
    sink.write_table("limits", limits)
    sink.write_table("nodes", nodes)
    for key, table in recorder.tables.items():
        sink.write_table(key, table)
    sink.finish(h5_attributes({**meta, "rcsim_version": package_version()}))
    return Result({}, dict(sink.names), meta, limits, nodes, path=str(output),
                  thermostats=thermostats, run_info=info)


def _period_or_none(problem):
    """The inputs' common period [s] when the run started in its periodic regime."""
    if problem.initial != "periodic":
        return None
    p = common_period(problem.profiles)
    return float(p) if p > 0 else None
