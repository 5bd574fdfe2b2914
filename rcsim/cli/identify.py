"""``rcsim identify LOG --measured COLUMN [--driver COLUMN ...] [--ambient VALUE|free]``: grow a
network from a logged record by forward selection with likelihood-ratio tests (Bacher & Madsen,
Energy and Buildings 2011) and write the structure it selects as a scenario."""

from __future__ import annotations

import os

import click

from .fit_text import CLOSING, format_fit_summary, format_steps
from .guard import guard
from .options import check_folder, check_output, holdout_value, log_time_options

__all__ = ["identify"]

#: the kinds of extension (as rcsim.fitting.ladder.MOVES; written here so that ``rcsim --help``
#: does not import the fitting)
EXTENSIONS = ("envelope", "mass", "leak", "heater")
NOISE_KINDS = ("measurement", "process")


@click.command()
@click.argument("log", type=click.Path(dir_okay=True))
@click.option("--measured", multiple=True, required=True, metavar="COLUMN",
              help="Log column of the body's measured temperature in degC (repeatable: one "
                   "node per column).")
@click.option("--driver", "drivers", multiple=True, metavar="COLUMN",
              help="Log column that drives the body (repeatable): a heat input in W (or the "
                   "unit in its header, as 'heater [kW]'), or a temperature it exchanges heat "
                   "with when its header says degC ('ground [degC]').")
@click.option("--ambient", metavar="VALUE|free|COLUMN",
              help="The surroundings: a temperature ('20 degC'), a log column, or free (an "
                   "unknown constant, fitted). Default: free, unless a temperature driver is "
                   "given.")
@click.option("--holdout", metavar="SPAN", help="Leave a span out of every fit and score the "
              "prediction on it: a fraction at the end (0.2, '20 %') or a time range from the "
              "first row ('20 h..24 h').")
@click.option("--noise", type=click.Choice(NOISE_KINDS), default="measurement",
              show_default=True, help="measurement: deterministic fits; process: stochastic "
              "fits with process noise (Kalman filter).")
@click.option("--significance", type=click.FloatRange(0, 1, min_open=True, max_open=True),
              default=0.05, show_default=True,
              help="Level of the likelihood-ratio test that keeps an extension.")
@click.option("--max-nodes", type=click.IntRange(1), default=4, show_default=True,
              help="The largest structure tried.")
@click.option("--extension", "extensions", multiple=True, type=click.Choice(EXTENSIONS),
              help="The kinds of extension tried (repeatable; default all): envelope (a node "
                   "inside a link to a boundary), mass (a node behind a measured node), leak (a "
                   "direct link to a boundary), heater (the heater's own node).")
@click.option("--capacity", default="1 kJ/K", show_default=True, metavar="VALUE",
              help="The first measured node's capacity when the log has no heat input (which "
                   "alone fixes the scale); other capacities are then relative to it.")
@click.option("--sigma", metavar="K", help="Measurement standard deviation for all measured "
              "columns (default: from the residuals).")
@click.option("--starts", default=3, show_default=True, type=click.IntRange(1, 50),
              help="Starting points of each structure's fit, at most.")
@click.option("--lags", type=click.IntRange(1), metavar="N",
              help="Lags of the Ljung-Box test of the residuals (default min(10, n/5)).")
@log_time_options
@click.option("-o", "--output", type=click.Path(), help="Write the table of the structures "
              "tried (one row each) to this CSV file.")
@click.option("--write-scenario", type=click.Path(), help="Write the selected structure, with "
              "its fitted values and the log's inputs, to this TOML file.")
@click.option("--plots", "plots_dir", type=click.Path(), help="Write the figures (the "
              "structures kept overlaid on the log; the selected one's fit with residuals) "
              "into this folder.")
@click.option("--report", "report_path", type=click.Path(), metavar="REPORT.html",
              help="Write the report (structures tried, the selected one's estimates, quality, "
                   "figures, scenario, warnings, provenance) to this .html file.")
@guard
def identify(log, measured, drivers, ambient, holdout, noise, significance, max_nodes,
             extensions, capacity, sigma, starts, lags, time_column, time_unit, max_gap, output,
             write_scenario, plots_dir, report_path):
    """Grow a network from LOG by forward selection with likelihood-ratio tests, print the
    path taken and the structure selected with its fit.

    Starting from one node per measured column, each step fits every structure one node or
    link larger and keeps the most likely when the likelihood-ratio test finds it significant
    (Bacher & Madsen, Energy and Buildings 43 (2011) 1511-1522).
    """
    from ..fitting import identify as run_identify
    from ..fitting.ladder import MOVES
    from ..report.collect import kept_warnings

    check_output(output, (".csv",), "--output")
    check_output(write_scenario, (".toml",), "--write-scenario")
    check_folder(plots_dir, "--plots")
    if report_path is not None:
        from ..report.render import check_report_path

        check_report_path(report_path, "--report")
    with kept_warnings() as caught:  # for the report; printed as usual all the same
        res = run_identify(log, list(measured), list(drivers), ambient, time=time_column,
                           time_unit=time_unit, max_gap=max_gap, holdout=holdout_value(holdout),
                           noise=noise, significance=significance, max_nodes=max_nodes,
                           capacity=capacity, sigma=sigma, starts=starts, lags=lags,
                           moves=tuple(extensions) or MOVES)
    written = []
    if output:
        written.append(res.to_csv(output))
    if write_scenario:
        written.append(res.write_selected(write_scenario))
    if plots_dir:
        written += _figures(res, plots_dir, os.path.splitext(os.path.basename(log))[0])
    if report_path:
        written.append(_report(res, report_path, log, list(caught)))
    click.echo(format_steps(res))
    click.echo("")
    body = format_fit_summary(res.selected, res.fit).splitlines()
    click.echo("\n".join(body[:len(body) - len(CLOSING)]))
    click.echo("\n".join(CLOSING))
    for p in written:
        click.echo(f"wrote {p}")



def _figures(res, folder, stem) -> list[str]:
    """``<log>-structures.png`` (the structures kept, overlaid) and ``<log>-fit.png`` (the
    selected one's fit with residuals) in ``folder`` (created if needed)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from ..plotting import save_figure

    from ..atomic import make_folder

    make_folder(folder, "--plots")
    out = []
    for name, draw in (("structures", res.plot), ("fit", res.fit.plot)):
        drawn = draw()
        try:
            out.append(save_figure(drawn.figure, os.path.join(folder, f"{stem}-{name}.png")))
        finally:
            plt.close(drawn.figure)
    return out


def _report(res, path, log, caught) -> str:
    """The selected structure's fit report, opened by the structures tried and the path."""
    from ..fitting.identify import METHOD
    from ..report import write_report
    from ..report.fit import build_fit_report
    from ..report.formatting import table_from_frame
    from ..report.model import Paragraph, Preformatted, Section

    page = build_fit_report(res.fit, res.selected, log_path=log, warnings=caught,
                            title=f"Structure identified from {os.path.basename(log)}")
    steps = res.steps.drop(columns=["accepted", "selected"])
    steps.insert(len(steps.columns), "kept", ["selected" if s else "kept" if a else ""
                                              for a, s in zip(res.steps["accepted"],
                                                              res.steps["selected"])])
    page.sections.insert(0, Section("identification", "Structures tried", [
        Paragraph(f"The structure was grown from the log by {METHOD}, at the significance "
                  f"level {res.significance:g}: each step fits every structure one extension "
                  "larger and keeps the most likely when its likelihood-ratio test is "
                  "significant."),
        table_from_frame(steps, "One row per structure tried", id="identify-steps",
                         note="p_value: the likelihood-ratio test against the structure it "
                              "extends; whiteness_p: the Ljung-Box test of the residuals."),
        Preformatted(res.path, "The path taken", "identify-path")]))
    return write_report(page, path)
