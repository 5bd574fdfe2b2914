"""``rcsim fit SCENARIO LOG.csv --free KEY ...``: fit values of a scenario to a logged record."""

from __future__ import annotations

import math

import click

from ..errors import InputError
from .format import CAUTION, format_time
from .guard import guard
from .options import (SOLVERS, solver_help, allow_absolute_paths_option, check_output, load_scenario,
                      scenario_argument)

__all__ = ["fit", "format_fit_summary"]


@click.command()
@scenario_argument
@click.argument("log", type=click.Path(dir_okay=True))
@click.option("--free", "free", multiple=True, metavar="KEY", help="Key path of a value to fit, "
              "e.g. nodes.block.capacity (repeatable).")
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
@click.option("--time", "time_column", help="Name of the time column (default: a column "
              "named time, t, timestamp, ... else the first).")
@click.option("--time-unit", help="Unit of a numeric time column (default s, or the unit in "
              "its header as in 'time [min]').")
@click.option("--max-gap", help="Report spans without data longer than this, e.g. 10min "
              "(default 5 times the median row interval).")
@click.option("--starts", default=4, show_default=True, type=click.IntRange(1, 50),
              help="Number of starting points (against local minima).")
@click.option("--solver", type=click.Choice(SOLVERS), default="auto",
              show_default=True, help="How the model is run at each evaluation: " + solver_help())
@click.option("-o", "--output", type=click.Path(), help="Write the estimates table to this CSV "
              "file.")
@click.option("--write-scenario", type=click.Path(), help="Write the fitted scenario to this "
              "TOML file.")
@click.option("--plot", "plot_path", type=click.Path(), help="Write the measured vs fitted "
              "figure (with residuals) to this PNG, SVG or PDF file.")
@click.option("--report", "report_path", type=click.Path(), metavar="REPORT.html",
              help="Write the fit's report (estimates, quality, figure, fitted scenario, "
              "warnings, provenance) to this .html file.")
@allow_absolute_paths_option
@guard
def fit(scenario, log, free, mapping, ignore, bound_items, sigma_items, time_column, time_unit,
        max_gap, starts, solver, output, write_scenario, plot_path, report_path,
        allow_absolute_paths):
    """Fit values of SCENARIO (capacities, resistances, starting state, ...) to LOG.csv.

    LOG has a time column (seconds or ISO-8601) and temperature columns named after nodes
    (fitted) or boundaries (measured ambient that drives the model); --map matches others.
    """
    from ..fitting import fit as run_fit, parse_bound

    if not free:
        raise InputError("nothing to fit", "--free", "free at least one value, e.g. "
                         "--free nodes.block.capacity")
    check_output(output, (".csv",), "--output")
    check_output(write_scenario, (".toml",), "--write-scenario")
    check_output(plot_path, (".png", ".svg", ".pdf"), "--plot")
    if report_path is not None:
        from ..report.render import check_report_path

        check_report_path(report_path, "--report")
    columns = _pairs(mapping, "--map")
    bounds = {}
    for item in bound_items:
        key, low, high = parse_bound(item)
        if key in bounds:
            raise InputError(f"{key!r} is bounded twice", "--bound")
        bounds[key] = (low, high)
    from ..report.collect import kept_warnings

    with kept_warnings() as caught:          # for the report; printed as usual all the same
        sc = load_scenario(scenario, allow_absolute_paths)
        res = run_fit(sc, log, list(free), columns=columns, ignore=list(ignore), bounds=bounds,
                      sigma=_sigma_option(sigma_items), time=time_column, time_unit=time_unit,
                      max_gap=max_gap, starts=starts, solver=solver)
    written = []
    if output:
        written.append(res.to_csv(output))
    if write_scenario:
        written.append(res.write_scenario(write_scenario))
    if plot_path:
        written.append(_save_plot(res, plot_path))
    if report_path:
        written.append(res.report(report_path, scenario=sc, log_path=log, warnings=list(caught)))
    click.echo(format_fit_summary(sc, res))
    for p in written:
        click.echo(f"wrote {p}")


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


def _display_unit(kind: str, raw) -> tuple[float, str]:
    """(factor, unit): a value of ``kind`` (SI) times factor is in the unit the scenario used."""
    from ..units import KINDS, registry

    if kind == "temperature":
        return 1.0, "degC"
    si = KINDS[kind][0]
    if isinstance(raw, str):
        parts = raw.strip().split(None, 1)
        if len(parts) == 2:
            ureg = registry()
            try:
                return float(ureg.Quantity(1.0, ureg.parse_units(si)).to(
                    ureg.parse_units(parts[1])).magnitude), parts[1]
            except Exception:  # noqa: BLE001 - pint raises many types; fall back to SI
                pass
    return 1.0, si.replace("**", "^")


def format_fit_summary(sc, res) -> str:
    """The text printed by ``rcsim fit``."""
    lines = _fit_header(sc, res)
    lines += _estimates(sc, res)
    lines.append("")
    per = ", ".join(f"{c} {v:.3g} K" for c, v in res.rmse_by_column.items())
    lines.append(f"  RMSE {res.rmse:.3g} K ({per}); residual lag-1 autocorrelation "
                 + ", ".join(f"{c} {v:.2f}" for c, v in res.autocorrelation.items()))
    lines.append("  correlations of 0.8 or more: " + (_strong_correlations(res.correlation)
                                                       or "none"))
    if res.time_constants is not None and len(res.time_constants):
        tau = ", ".join(format_time(x) for x in list(res.time_constants)[:4])
        lines.append(f"  time constants of the fitted network: {tau}"
                     + (" ..." if len(res.time_constants) > 4 else ""))
    if res.warnings:
        lines.append(f"  {len(res.warnings)} warning(s): see the lines starting with 'warning:'")
    lines += ["", "check the fitted model against data it was not fitted to before predicting "
                  "with it.", CAUTION]
    return "\n".join(lines)


def _fit_header(sc, res) -> list[str]:
    def described(columns):
        return ", ".join(f"{c}" if res.targets[c] == c else f"{c} -> {res.targets[c]}"
                         for c in columns)

    cols, inputs = described(res.measured.columns), described(res.inputs.columns)
    return [f"{sc.name} fitted to {res.log_name}: {res.n_points} measured values "
            f"({cols}){'; measured inputs: ' + inputs if inputs else ''}",
            f"  {len(res.estimates)} free value(s), {len(res.starts)} start(s), "
            f"{res.n_evaluations} model runs ({res.solver} path, {res.n_decompositions} "
            f"decompositions), {res.wall_time:.3g} s",
            ""]


def _estimates(sc, res) -> list[str]:
    width = max([len(k) for k in res.estimates.index] + [3])
    lines = [f"  {'key':<{width}}  {'estimate':>12}  {'std error':>10}  "
             f"{'95 % interval':>25}  unit"]
    for k, row in res.estimates.iterrows():
        kind = res.units[k]
        factor, unit = _display_unit(kind, sc.value(k))
        if kind == "temperature":
            unit = "degC (std error in K)"
        lines.append(f"  {k:<{width}}  {row['value'] * factor:>12.5g}  "
                     f"{row['std_error'] * factor:>10.3g}  {row['ci_low'] * factor:>11.5g} .. "
                     f"{row['ci_high'] * factor:<11.5g}  {unit}")
    return lines


def _strong_correlations(corr) -> str:
    keys = list(corr.index)
    strong = []
    for i in range(len(keys)):
        for j in range(i + 1, len(keys)):
            c = corr.iloc[i, j]
            if math.isfinite(c) and abs(c) >= 0.8:
                strong.append(f"{keys[i]} ~ {keys[j]} {c:+.3f}")
    return "; ".join(strong)
