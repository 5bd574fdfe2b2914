"""``rcsim size SCENARIO --vary KEY=RANGE --require '...'``: the value of a key that just meets
the requirements (with uncertain inputs: in the share of draws asked for)."""

from __future__ import annotations

import sys

import click

from .guard import guard
from .options import allow_absolute_paths_option, quiet_option, scenario_argument
from .progress import Progress

__all__ = ["size_command"]


@click.command(name="size")
@scenario_argument
@click.option("--vary", "vary_items", multiple=True, required=True, metavar="KEY=RANGE",
              help="The value to size, by key path: a range LOW..HIGH (e.g. 30mm..120mm), or "
                   "choices A,B,C or LOW..HIGH:N. Repeat to move several keys in step.")
@click.option("--require", "require_items", multiple=True, required=True, metavar="REQUIREMENT",
              help="What must hold, e.g. 'hold_time.payload >= 72 h', 'max.module <= 85 degC', "
                   "'min.room >= 18 degC', 'time_outside_band.payload <= 30 min' (repeatable: "
                   "all must hold; the former name time_out.<node> is accepted).")
@click.option("--vary-uncertain", "vary_uncertain_items", multiple=True,
              metavar="KEY=DISTRIBUTION",
              help="An uncertain input in the sweep grammar: normal(MEAN,SD), uniform(LOW,HIGH), "
                   "lognormal(MEDIAN,FACTOR), triangular(LOW,MODE,HIGH) (repeatable).")
@click.option("--sample", "samples", type=click.IntRange(1), metavar="N",
              help="Draws of the uncertain inputs (needed with them); the same draws are used at "
                   "every value tried.")
@click.option("--confidence", type=click.FloatRange(0, 1, min_open=True, max_open=True),
              help="Share of the draws that must meet the requirements (default 0.95).")
@click.option("--seed", type=click.IntRange(0),
              help="Seed of the draws (printed when not given, so the sizing can be repeated).")
@click.option("--tolerance", metavar="VALUE",
              help="How close the answer must be to where the requirements start to hold, in the "
                   "units of the value sized, e.g. '0.5 mm' (default: 0.1 % of the range).")
@click.option("--write-scenario", type=click.Path(),
              help="Write the scenario with the sized value (.toml; the file's comments and "
                   "layout kept).")
@click.option("-o", "--output", type=click.Path(),
              help="Write every run made to this .csv, .h5 or .parquet table.")
@click.option("--plots", "plots_dir", type=click.Path(),
              help="Write the figure (each required output against the value sized) into this "
                   "folder.")
@click.option("--executor", type=click.Choice(["serial", "processes", "dask"]), default=None,
              help="Where the runs go (default: this process; local processes with uncertain "
                   "inputs).")
@click.option("--workers", type=click.IntRange(1), help="Local processes (default: all cores).")
@click.option("--scheduler", metavar="ADDRESS",
              help="Address of a running Dask scheduler (implies --executor dask).")
@click.option("--dask-workers", type=click.IntRange(1),
              help="Start a local Dask cluster of this many workers (implies --executor dask).")
@click.option("--report", "report_path", type=click.Path(), metavar="REPORT.html",
              help="Write the sizing's report (answer, margins, values tried, figure, warnings, "
                   "provenance) to this .html file.")
@allow_absolute_paths_option
@quiet_option
@guard
def size_command(scenario, vary_items, require_items, vary_uncertain_items, samples, confidence,
                 seed, tolerance, write_scenario, output, plots_dir, executor, workers, scheduler,
                 dask_workers, report_path, allow_absolute_paths, quiet):
    """Find the value of a key of SCENARIO that just meets the requirements (with uncertain
    inputs: in the share of draws asked for)."""
    from ..report.collect import kept_warnings
    from ..sizing.command import size_command as run_size
    from ..sweep.worker import open_balance_text

    with kept_warnings() as caught, \
            Progress(sys.stderr.isatty() and not quiet, "sizing") as bar:
        text = run_size(scenario, vary_items, require_items,
                        vary_uncertain_items=vary_uncertain_items, samples=samples,
                        confidence=confidence, seed=seed, tolerance=tolerance, executor=executor,
                        workers=workers, scheduler=scheduler, dask_workers=dask_workers,
                        output=output, write_scenario=write_scenario, plots_dir=plots_dir,
                        report=report_path,
                        allow_absolute_paths=allow_absolute_paths, quiet=quiet,
                        progress=lambda fraction, _detail=None: bar(fraction))
    if text:
        click.echo(text)
    # runs whose energy balance does not close are counted in one warning ("... (in 3 of 40
    # runs)"): the answer and the files are written, and the exit status is 3
    _check_runs_balance(caught, open_balance_text())


def _check_runs_balance(caught, text: str) -> None:
    """Exit 3 (the guard) when a warning of ``caught`` counts runs with an open balance."""
    import re

    from ..errors import SolverError

    for w in caught:
        found = re.fullmatch(re.escape(text) + r" \(in (\d+) of (\d+) runs\)", str(w.message))
        if found:
            raise SolverError(f"the energy balance of {found[1]} of {found[2]} runs of the "
                              "sizing does not close: the answer is not to be trusted")
