"""``rcsim report SCENARIO -o report.html``: run a scenario and write its report, one
self-contained HTML page (inputs, network picture, results, figures, warnings, provenance)."""

from __future__ import annotations

import sys

import click

from .guard import check_balance, guard
from .options import (SOLVERS, allow_absolute_paths_option, load_scenario, quiet_option,
                      scenario_argument, solver_help)
from .progress import Progress

__all__ = ["report"]


@click.command()
@scenario_argument
@click.option("-o", "--output", type=click.Path(), required=True, metavar="REPORT.html",
              help="Write the report to this .html file (one page that opens offline).")
@click.option("--expand-layers", is_flag=True,
              help="Draw every slice of a sliced layer in the network picture (default: one "
                   "block per layer).")
@click.option("--no-figures", is_flag=True,
              help="Leave out the run's figures (the network picture and the profiles stay).")
@click.option("--solver", type=click.Choice(SOLVERS), default=None,
              help="Override the scenario's solver: " + solver_help())
@allow_absolute_paths_option
@quiet_option
@guard
def report(scenario, output, expand_layers, no_figures, solver, allow_absolute_paths, quiet):
    """Simulate SCENARIO and write its report to an HTML page."""
    from ..report.collect import kept_warnings
    from ..report.render import check_report_path

    check_report_path(output, "--output")
    with kept_warnings() as caught:      # into the report, and printed as `run` prints them
        sc = load_scenario(scenario, allow_absolute_paths)
        with Progress(sys.stderr.isatty() and not quiet) as progress:
            res = sc.run(progress=progress, solver=solver)
    from ..report import build_run_report, write_report

    page = build_run_report(sc, res, warnings=list(caught), figures=not no_figures,
                            expand_layers=expand_layers)
    write_report(page, output)
    if not quiet:
        click.echo(f"wrote {output}")
    check_balance(res.energy_balance_error)     # exit 3 after writing, as `rcsim run`
