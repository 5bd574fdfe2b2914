"""``rcsim fit SCENARIO LOG.csv --free KEY ...``: fit values of a scenario to a logged record;
with ``--candidate FILE`` several scenarios compared, with ``--log FILE`` several logs at once."""

from __future__ import annotations

import os

import click

from ..errors import InputError
from .fit_text import format_comparison, format_fit_summary, format_joint_summary
from .guard import guard
from .options import (SOLVERS, solver_help, allow_absolute_paths_option, check_output,
                      holdout_value, load_scenario, log_time_options, scenario_argument)

__all__ = ["fit", "format_fit_summary"]

#: the choices of --select and --noise (as rcsim.fitting.compare and .candidates define them;
#: written here so that ``rcsim --help`` does not import the fitting)
SELECT = ("bic", "aic", "lr", "holdout")
NOISE_KINDS = ("measurement", "process")


@click.command()
@scenario_argument
@click.argument("log", type=click.Path(dir_okay=True), required=False)
@click.option("--log", "more_logs", multiple=True, type=click.Path(dir_okay=True), metavar="FILE",
              help="A further log (repeatable): the logs are fitted at once, values shared "
                   "across them except those given by --per-record.")
@click.option("--free", "free", multiple=True, metavar="KEY", help="Key path of a value to fit, "
              "e.g. nodes.block.capacity (repeatable). A scenario's [fit] section may give "
              "its free values, bounds, ...; options given here override it (a note names "
              "what they override).")
@click.option("--per-record", "per_record", multiple=True, metavar="KEY",
              help="With several logs: a value fitted once per log, e.g. nodes.block.initial "
                   "(repeatable).")
@click.option("--candidate", "candidates", multiple=True, type=click.Path(dir_okay=True),
              metavar="FILE", help="Another candidate scenario to compare with SCENARIO "
              "(repeatable; each may carry its own [fit] section).")
@click.option("--select", type=click.Choice(SELECT), default="bic", show_default=True,
              help="How a comparison of candidates selects one: lowest BIC or AIC, forward "
                   "selection by likelihood-ratio tests (lr), or lowest held-out RMSE "
                   "(holdout).")
@click.option("--holdout", metavar="SPAN", help="Leave a span out of the fit and score the "
              "prediction on it: a fraction at the end (0.2, '20 %') or a time range from the "
              "first row ('20 h..24 h', '20 h..').")
@click.option("--noise", type=click.Choice(NOISE_KINDS), default=None,
              help="measurement (default): a deterministic model and measurement errors; "
                   "process: a stochastic model with process noise, fitted by maximum "
                   "likelihood with a Kalman filter (linear networks).")
@click.option("--lags", type=click.IntRange(1), metavar="N",
              help="Lags of the Ljung-Box test of the residuals (default min(10, n/5)).")
@click.option("--map", "mapping", multiple=True, metavar="COLUMN=NAME", help="Match a log "
              "column to a node (fitted) or a boundary (drives the model) (repeatable).")
@click.option("--ignore", multiple=True, metavar="COLUMN", help="Leave a log column out "
              "(repeatable).")
@click.option("--bound", "bound_items", multiple=True, metavar="KEY=LOW..HIGH",
              help="Keep a value inside a range, e.g. nodes.block.capacity=1kJ/K..20kJ/K; a "
              "side may be left empty (repeatable).")
@click.option("--sigma", "sigma_items", multiple=True, metavar="[COLUMN=]K",
              help="Measurement standard deviation, for all columns or per column; sets the "
              "weights (default: from the residuals of each column).")
@log_time_options
@click.option("--starts", default=4, show_default=True, type=click.IntRange(1, 50),
              help="Number of starting points (against local minima).")
@click.option("--solver", type=click.Choice(SOLVERS), default="auto",
              show_default=True, help="How the model is run at each evaluation: " + solver_help())
@click.option("-o", "--output", type=click.Path(), help="Write the estimates table (of the "
              "selected candidate) to this CSV file.")
@click.option("--comparison", "comparison_path", type=click.Path(), metavar="FILE.csv",
              help="With candidates: write the comparison table to this CSV file.")
@click.option("--write-scenario", type=click.Path(), help="Write the fitted scenario (of the "
              "selected candidate; of the first log) to this TOML file; a CSV it reads that "
              "would lie outside its folder is copied beside it.")
@click.option("--plot", "plot_path", type=click.Path(), help="Write the measured vs fitted "
              "figure (with residuals; with candidates every fit overlaid, a pair of panels per "
              "log; with several logs and one scenario one file per log, named after it) to "
              "this PNG, SVG or PDF file.")
@click.option("--report", "report_path", type=click.Path(), metavar="REPORT.html",
              help="Write the fit's report (of the selected candidate; estimates, quality, "
              "figure, fitted scenario, warnings, provenance; with several logs a section per "
              "log) to this .html file.")
@allow_absolute_paths_option
@guard
def fit(scenario, log, more_logs, free, per_record, candidates, select, holdout, noise, lags,
        mapping, ignore, bound_items, sigma_items, time_column, time_unit, max_gap, starts,
        solver, output, comparison_path, write_scenario, plot_path, report_path,
        allow_absolute_paths):
    """Fit values of SCENARIO (capacities, resistances, starting state, ...) to LOG.csv.

    LOG has a time column (seconds or ISO-8601) and temperature columns named after nodes
    (fitted) or boundaries (measured ambient that drives the model); --map matches others.
    Without --free the scenario's [fit] section says what is free; options given here
    override what the section says. With --candidate the candidates are compared and one is
    selected; with --log several logs are fitted at once.
    """
    from ..fitting import fit as run_fit, parse_bound
    from ..fitting.candidates import Candidate, FitSpec, read_candidate

    logs = ([log] if log is not None else []) + list(more_logs)
    if not logs:
        raise InputError("no log to fit", "LOG", "give LOG.csv after the scenario (or --log "
                         "FILE, repeatable)")
    _check_outputs(output, comparison_path, write_scenario, plot_path, report_path, candidates)
    bounds = {}
    for item in bound_items:
        key, low, high = parse_bound(item)
        if key in bounds:
            raise InputError(f"{key!r} is bounded twice", "--bound")
        bounds[key] = (low, high)
    given = FitSpec(free=tuple(free) or None, bounds=bounds or None,
                    per_record=tuple(per_record) or None,
                    columns=_pairs(mapping, "--map") or None, ignore=tuple(ignore) or None,
                    sigma=_sigma_option(sigma_items), noise=noise)
    from ..report.collect import kept_warnings

    with kept_warnings() as caught:          # for the report; printed as usual all the same
        pool = []
        for path in (scenario, *candidates):  # the command line wins over a [fit] section
            cand = read_candidate(path, allow_absolute_paths=allow_absolute_paths)
            note = overridden_note(cand, given)
            if note:
                click.echo(note)
            pool.append(Candidate(cand.scenario, given.over(cand.spec)))
            if not pool[-1].spec.free and not pool[-1].spec.per_record:
                raise InputError("nothing to fit", os.path.basename(path),
                                 "free at least one value, e.g. --free nodes.block.capacity, "
                                 "or list them in its [fit] section: free = "
                                 "[\"nodes.block.capacity\"]")
        res = run_fit(pool if candidates else pool[0], logs if len(logs) > 1 else logs[0],
                      time=time_column, time_unit=time_unit, max_gap=max_gap, starts=starts,
                      solver=solver, holdout=holdout_value(holdout), select=select, lags=lags)
    chosen = res.selected_fit if candidates else res
    sc = dict(zip(res.fits, pool))[res.selected].scenario if candidates else pool[0].scenario
    written = []
    if comparison_path:
        written.append(res.to_csv(comparison_path))
    if output:
        written.append(chosen.to_csv(output))
    if write_scenario:
        written.append(chosen.write_scenario(write_scenario))
    if plot_path:
        written += _save_plots(res, plot_path)
    if report_path:
        from ..report.dispatch import report_page

        written.append(report_page(chosen, report_path, sc, warnings=list(caught),
                                   log_path=logs if len(logs) > 1 else logs[0]))
    if candidates:
        click.echo(format_comparison(res))
        click.echo("")
    click.echo(format_joint_summary(sc, chosen) if hasattr(chosen, "records")
               else format_fit_summary(sc, chosen))
    from ..tomlwrite import copy_lines

    for p in written:
        click.echo(f"wrote {p}")
        for line in copy_lines(p):   # files copied beside the written scenario
            click.echo(line)


def _check_outputs(output, comparison_path, write_scenario, plot_path, report_path,
                   candidates) -> None:
    """Refuse bad output paths, and outputs that do not apply, before any work."""
    check_output(output, (".csv",), "--output")
    check_output(comparison_path, (".csv",), "--comparison")
    check_output(write_scenario, (".toml",), "--write-scenario")
    check_output(plot_path, (".png", ".svg", ".pdf"), "--plot")
    if comparison_path and not candidates:
        raise InputError("there is no comparison without candidates", "--comparison",
                         "add --candidate FILE (repeatable), or leave --comparison out")
    if report_path is not None:
        from ..report.render import check_report_path

        check_report_path(report_path, "--report")


#: FitSpec field -> the option that gives it
_OPTIONS = {"free": "--free", "bounds": "--bound", "per_record": "--per-record",
            "columns": "--map", "ignore": "--ignore", "sigma": "--sigma", "noise": "--noise"}


def overridden_note(cand, given) -> str:
    """One line naming what the command line overrides in a candidate's [fit] section (empty
    when it overrides nothing)."""
    from ..fitting.candidates import overridden

    said = [f"{field} ({_OPTIONS[field]})" for field in overridden(cand.spec, given)]
    if not said:
        return ""
    return (f"note: {cand.scenario.name}: the command line overrides its [fit] section's "
            + ", ".join(said))


def _save_plots(res, path) -> list:
    """The figure(s): one per log with several logs (``fit-<log>.png``), else one."""
    if hasattr(res, "records"):
        stem, suffix = os.path.splitext(path)
        out = []
        for record in res.records:
            safe = "".join(ch if ch.isalnum() or ch in "-_." else "_" for ch in record)
            out.append(_save_plot(res.records[record], f"{stem}-{safe}{suffix}"))
        return out
    return [_save_plot(res, path)]


def _save_plot(res, path) -> str:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from ..plotting import save_figure

    drawn = res.plot()
    try:
        save_figure(drawn.figure, path)
    finally:
        plt.close(drawn.figure)
    return path


def _pairs(items, option) -> dict:
    """``("COLUMN=NAME", ...)`` -> {column: name}; one line naming the bad item otherwise."""
    out = {}
    for item in items:
        if "=" not in item:
            raise InputError(f"{item!r} is not COLUMN=NAME", option,
                             "write e.g. --map 'probe 1=block'")
        k, v = item.split("=", 1)
        k, v = k.strip(), v.strip()
        if not k or not v:
            raise InputError(f"{item!r} is not COLUMN=NAME", option)
        if k in out:
            raise InputError(f"column {k!r} is mapped twice", option)
        out[k] = v
    return out


def _sigma_option(items):
    """One value for all columns (text as given), a {column: value} mapping, or None."""
    if not items:
        return None
    if len(items) == 1 and "=" not in items[0]:
        return items[0]
    return _pairs(items, "--sigma")
