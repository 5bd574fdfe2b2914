"""The sizing itself: check everything, plan the runs, search, and say what was found."""

from __future__ import annotations

import math
import time
import warnings

from ..errors import InputError, ProfileError, RcsimWarning
from ..sweep.design import scenario_of
from ..sweep.executors import RowRunner, check_executor, relay_warnings
from ..sweep.worker import make_job, output_layout
from ..units import format_duration, to_si
from .evaluate import Evaluator
from .requirement import parse_requirements
from .result import SizingResult
from .search import CHECK_POINTS, SCAN_POINTS, ends_direction, last_crossing, search_continuous, \
    search_discrete
from .uncertain import check_confidence, draw_uncertain, wilson_interval
from .variable import parse_vary

__all__ = ["size", "SizingWarning", "LENGTHEN", "DEFAULT_TOLERANCE"]

#: Runs judged on hold times only are lengthened to this many times the longest hold time asked
#: for, so that hold times near the answer end inside the run.
LENGTHEN = 1.5
#: Default tolerance: this share of the range of the (first) key sized.
DEFAULT_TOLERANCE = 1e-3


class SizingWarning(RcsimWarning):
    """Something about a sizing a reader should check (a response that is not monotone, ...)."""


def size(scenario, vary, require, *, vary_uncertain=None, samples=None, confidence=None,
         seed=None, tolerance=None, executor=None, workers=None, scheduler=None,
         dask_workers=None, batch_size=None, progress=None,
         scan_points=SCAN_POINTS, check_points=CHECK_POINTS) -> SizingResult:
    """Find the value of a scenario's key that just meets one or more requirements.

    Parameters
    ----------
    scenario : rcsim.Scenario or path
    vary : dict
        ``{key path: (low, high)}`` (a range; also the text ``"LOW..HIGH"``) or
        ``{key path: [a, b, c]}`` (choices; also ``"A,B,C"`` or ``"LOW..HIGH:N"``). Values may
        carry units. Several keys move in step (see :mod:`rcsim.sizing.variable`).
    require : str or list of str
        ``"hold_time.payload >= 72 h"``, ``"max.module <= 85 degC"``, ``"min.room >= 18 degC"``,
        ``"time_out.payload <= 30 min"``; with several, all must hold.
    vary_uncertain : dict, optional
        ``{key path: distribution}`` in the sweep grammar (``"normal(25 degC, 2 K)"``...).
    samples : int, optional
        Draws of the uncertain inputs (required with them).
    confidence : float, optional
        Share of the draws that must meet the requirements (default 0.95 with uncertain inputs).
    seed : int, optional
        Seed of the draws (one is drawn and kept in the result when not given).
    tolerance : float or str, optional
        How close the answer must be to the value where the requirements start to hold, in the
        units of the (first) key sized (SI, or a text with units; a temperature difference for a
        temperature). Default: 0.1 % of its range. Not used with choices.
    executor : {'serial', 'processes', 'dask'}, optional
        Where the runs go (default: this process without uncertain inputs, local processes with
        them); ``workers``, ``scheduler``, ``dask_workers``, ``batch_size`` as for
        :func:`rcsim.sweep`.
    progress : callable(fraction, detail), optional
        Called after each batch of runs with an estimate of the share of the search done.
    scan_points : int
        Values scanned over the range when the response turns out not to be monotone.
    check_points : int
        Values run after the search between the answer and the end of the range that meets the
        requirements (a check that they all do; 0 to skip).

    Returns
    -------
    SizingResult

    Raises
    ------
    InputError
        A key, requirement or option that cannot be used (checked before any run), or a range
        met at both ends or at neither (one line giving the values found at each end).
    SolverError
        A run failed on a valid value, or the search did not settle.
    """
    t0 = time.perf_counter()
    sc = scenario_of(scenario)
    sized = parse_vary(sc, vary)
    limit_nodes = list(dict.fromkeys(lim.node for lim in sc.network.limits.values()))
    requirements = parse_requirements(require, list(sc.network.nodes), limit_nodes)
    conf = check_confidence(confidence, bool(vary_uncertain))
    design = draw_uncertain(sc, vary_uncertain, samples, seed, sized.keys)
    xtol, tol = _tolerance(tolerance, sized)
    notes, found_warnings = [], []
    duration, lengthen = _plan_duration(sc, requirements, sized, design, notes, found_warnings)
    if executor is None:
        executor = "serial" if design is None else "processes"
    info = check_executor(executor, workers, scheduler, dask_workers)
    layout = output_layout(sc, list(dict.fromkeys(r.node for r in requirements)))
    keys = list(sized.keys) + (list(design.keys) if design is not None else [])
    keys += ["simulation.duration"] if lengthen else []
    job_of = lambda ship: make_job(sc, keys, layout, ship)  # noqa: E731
    with RowRunner(job_of, len(layout.columns), info, scheduler=scheduler,
                   batch_size=batch_size) as runner:
        ev = Evaluator(sized, requirements, layout, runner, keys,
                       None if design is None else design.values, duration, conf,
                       _progress_of(progress, sized, xtol))
        low, high = ev([0.0, sized.last])
        if ends_direction(low, high) is None:
            raise _ends_error(sized, requirements, low, high, duration, conf)
        if sized.discrete:
            outcome = search_discrete(ev, low, high, len(sized.choices), check_points)
        else:
            outcome = search_continuous(ev, low, high, xtol, scan_points, check_points)
    found_warnings += _search_warnings(outcome, sized, requirements, scan_points)
    result = _result(sc, sized, requirements, ev, outcome, tol, design, conf, info, notes,
                     found_warnings, layout)
    relay_warnings(ev.warning_counts, ev.n_runs)
    result.warnings += [f"{text} (in {count} of {ev.n_runs} runs)"
                        for text, count in ev.warning_counts.items()]
    for text in found_warnings:
        warnings.warn(text, SizingWarning, stacklevel=2)
    result.wall_time = time.perf_counter() - t0
    return result


def _tolerance(tolerance, sized) -> tuple[float, float | None]:
    """(tolerance in the search coordinate, in the first key's SI unit)."""
    if sized.discrete:
        if tolerance is not None:
            raise InputError("choices need no tolerance", "tolerance",
                             "leave it out: the answer is one of the choices")
        return 1.0, None
    span = sized.span()
    if tolerance is None:
        tol = DEFAULT_TOLERANCE * span
    else:
        kind = sized.kinds[0]
        kind = "temperature_difference" if kind == "temperature" else kind
        tol = to_si(tolerance, kind, "tolerance")
        if not (math.isfinite(tol) and 0 < tol < span):
            raise InputError(f"the tolerance must be positive and smaller than the range "
                             f"({sized.describe()}), got {tolerance!r}", "tolerance")
    return tol / span, tol


def _plan_duration(sc, requirements, sized, design, notes, found_warnings):
    """(run length [s], whether runs are lengthened) for hold times asked beyond the run."""
    duration = sc.settings.duration
    if duration is None:
        raise InputError("the scenario gives no run length", f"{sc.name}: simulation",
                         "add duration = '72 h' (and step) to [simulation]")
    holds = [r for r in requirements if r.prefix == "hold_time"]
    if not holds:
        return duration, False
    longest = max(holds, key=lambda r: r.target)
    touched = set(sized.keys) | set(design.keys if design is not None else [])
    only_holds = len(holds) == len(requirements) and "simulation.duration" not in touched \
        and "duration" in (sc.data.get("simulation") or {})
    if not only_holds:
        if longest.target > duration:
            raise InputError(f"runs of {format_duration(duration)} cannot show a hold time of "
                             f"{format_duration(longest.target)}", f"require {longest.text!r}",
                             "make simulation.duration at least that long (the other "
                             "requirements depend on the run's length, so runs are not "
                             "lengthened)")
        return duration, False
    wanted = LENGTHEN * longest.target
    if wanted <= duration:
        return duration, False
    try:
        for item in list(sc.network.boundaries.values()) + list(sc.network.sources.values()):
            item.profile.check_span(0.0, wanted)
    except ProfileError as err:
        if longest.target > duration:
            raise InputError(f"runs of {format_duration(duration)} cannot show a hold time of "
                             f"{format_duration(longest.target)}, and they cannot be lengthened "
                             f"({err})", f"require {longest.text!r}",
                             "extend or repeat the profile and make simulation.duration longer")\
                from None
        found_warnings.append(f"runs kept at {format_duration(duration)} (a profile ends there: "
                              f"{err}); a hold time not reached within a run counts as longer")
        return duration, False
    notes.append(f"runs lengthened from {format_duration(duration)} to "
                 f"{format_duration(wanted)} so that hold times near "
                 f"{format_duration(longest.target)} end inside them (a hold time depends only "
                 "on what happens before it)")
    return wanted, True


def _progress_of(progress, sized, xtol):
    """The evaluator's callback: ``progress(fraction, detail)`` from the bracket's width."""
    if progress is None:
        return None
    last = sized.last

    def report(ev):
        fraction = 0.0
        if len(ev.candidates) >= 2:
            low, high = ev.candidates[0], ev.candidates[1]
            direction = ends_direction(low, high)
            if direction is not None:
                other, answer = last_crossing(ev.candidates, direction)
                width = max(abs(answer.x - other.x), xtol)
                fraction = min(1.0, math.log(last / width) / math.log(last / xtol)) \
                    if last > xtol else 1.0
        progress(fraction, f"{ev.n_runs} runs, {len(ev.candidates)} values,")

    return report


def _at(sized, requirements, cand, duration, conf) -> str:
    where = sized.format(0, sized.at(cand.x)[0])
    if conf is not None:
        return f"{100 * cand.share:.1f} % of the draws meet them at {where}"
    shown = ", ".join(f"{r.output} = {r.describe_value(cand.achieved[i], duration)}"
                      for i, r in enumerate(requirements))
    return f"{shown} at {where}"


def _ends_error(sized, requirements, low, high, duration, conf) -> InputError:
    req = "; ".join(r.text for r in requirements)
    if conf is not None:
        req += f" in {100 * conf:g} % of the draws"
    ends = f"{_at(sized, requirements, low, duration, conf)}; " \
           f"{_at(sized, requirements, high, duration, conf)}"
    where = f"vary {sized.key} = {sized.describe()}"
    if low.met:
        return InputError(f"{req} is met at both ends: {ends}", where,
                          "the whole range meets it: widen the range to where it is not met")
    return InputError(f"{req} is not met at either end: {ends}", where,
                      "widen the range towards values that meet it, or check the requirement")


def _search_warnings(outcome, sized, requirements, scan_points) -> list[str]:
    if outcome.monotone:
        return []
    parts = []
    if outcome.not_monotone:
        names = ", ".join(dict.fromkeys(requirements[i].output for i in outcome.not_monotone))
        parts.append(f"{names} rises and falls among the values run")
    if outcome.flips:
        parts.append("the requirements are met and not met more than once")
    text = (f"the response is not monotone in {sized.key} over {sized.describe()}: "
            + "; ".join(parts))
    if outcome.scanned:
        near = ", ".join(sized.format(0, 0.5 * (sized.at(a.x)[0] + sized.at(b.x)[0]), digits=4)
                         for a, b in outcome.crossings[:6])
        scanned = len(sized.choices) if sized.discrete else scan_points
        text += (f"; a scan of {scanned} values finds them changing over "
                 f"{len(outcome.crossings)} time(s) (near {near}); the answer is the value past "
                 "which every value run meets them: check it with a sweep")
    return [text]


def _result(sc, sized, requirements, ev, outcome, tol, design, conf, info, notes,
            found_warnings, layout) -> SizingResult:
    answer, other = outcome.answer, outcome.other
    up = outcome.direction == "at least"
    values, texts, written = {}, {}, {}
    for i, key in enumerate(sized.keys):
        v = float(answer.values[i])
        values[key] = v
        if sized.discrete:
            given = sized.choice_texts[int(answer.x)][i]
            texts[key] = given if isinstance(given, str) else sized.format(i, v)
        else:
            per_key = tol * (sized.highs[i] - sized.lows[i]) / sized.span()
            texts[key] = sized.format(i, v, round_to=per_key, up=up)
        rounded = to_si(texts[key], sized.kinds[i], key) if not sized.discrete else v
        written[key] = texts[key] if isinstance(sized.raws[i], str) else float(rounded)
    achieved, margin = {}, {}
    for i, r in enumerate(requirements):
        a = float(answer.achieved[i])
        achieved.setdefault(r.output, a)
        m = (a - r.target) if r.op == ">=" else (r.target - a)
        margin[r.output] = min(margin.get(r.output, math.inf), m) if not math.isnan(m) else m
    result = SizingResult(
        value=values[sized.key], value_text=texts[sized.key], key=sized.key, values=values,
        value_texts=texts, direction=outcome.direction, requirements=requirements,
        achieved=achieved, margin=margin, runs=ev.table(layout.columns),
        warnings=list(found_warnings), notes=notes,
        bracket=(float(other.values[0]), float(answer.values[0])), tolerance=tol,
        evaluations=len(ev.candidates), n_runs=ev.n_runs, duration=ev.duration, scenario=sc,
        discrete=sized.discrete, candidates=list(ev.candidates), sized=sized,
        executor={"name": info.name, "workers": info.workers, "scheduler": info.scheduler},
        written=written)
    if design is not None:
        _add_uncertain(result, design, conf, answer, ev)
    result.runs.attrs = _table_attrs(result, ev, layout, design)
    return result


def _add_uncertain(result, design, conf, answer, ev) -> None:
    from ..units import si_unit

    kinds = dict(zip(design.keys, design.kinds))
    result.uncertain = design.describe(
        lambda k: si_unit(kinds[k], display=True) if kinds[k] != "dimensionless" else "")
    result.confidence, result.samples, result.seed = conf, design.samples, design.seed
    result.share = answer.share
    result.share_interval = wilson_interval(answer.n_met, answer.n_runs)
    result.failed_runs = sum(c.n_failed for c in ev.candidates)
    if result.failed_runs:
        first = ev.failed_errors()[0]
        text = (f"{result.failed_runs} of {ev.n_runs} runs failed and count as not meeting the "
                f"requirements (first: {first})")
        result.warnings.append(text)
        warnings.warn(text, SizingWarning, stacklevel=4)
    result.notes.append(f"the same {design.samples} draws (seed {design.seed}) at every value "
                        "tried (common random numbers)")


def _table_attrs(result, ev, layout, design) -> dict:
    from ..sweep.tables import unit_of

    kinds = dict(zip(result.sized.keys, result.sized.kinds))
    if design is not None:
        kinds.update(zip(design.keys, design.kinds))
    cols = [c for c in result.runs.columns if c not in ("error",)]
    units = {c: unit_of(c, kinds) for c in cols if c in kinds or c in layout.columns}
    units.update({"simulation.duration": "s"} if "simulation.duration" in cols else {})
    return {"scenario": result.scenario.name, "title": result.scenario.title,
            "inputs": [k for k in ev.keys], "outputs": [c for c in layout.columns if c in cols],
            "units": units, "requirements": [r.text for r in result.requirements],
            "answer": result.values, "direction": result.direction,
            "confidence": result.confidence, "samples": result.samples, "seed": result.seed,
            "duration": result.duration, "design": dict(result.uncertain)}
