"""``rcsim run SCENARIO``: simulate, write the files asked for, print a summary."""

from __future__ import annotations

import math
import os
import sys

import click

from ..errors import InputError, SolverError
from .format import CAUTION, format_clock_time, format_energy, format_time
from .guard import check_balance, guard
from .options import (SOLVERS, solver_help, allow_absolute_paths_option, check_folder, check_output,
                      load_scenario, quiet_option, scenario_argument)
from .progress import Progress

__all__ = ["run", "format_run_summary"]


@click.command()
@scenario_argument
@click.option("-o", "--output", type=click.Path(), help="Write the result to this HDF5 file.")
@click.option("--csv", "csv_path", type=click.Path(), help="Also write the histories as CSV, "
              "with units in the headers ('payload [degC]', 'walls [W]') and ISO-8601 times when "
              "the scenario has a clock start.")
@click.option("--xlsx", "xlsx_path", type=click.Path(), help="Also write a spreadsheet: summary, "
              "nodes, limits, histories, heat flows, energy and inputs, units in the headers.")
@click.option("--plots", "plots_dir", type=click.Path(), help="Write the standard figures "
              "into this folder.")
@click.option("--solver", type=click.Choice(SOLVERS), default=None,
              help="Override the scenario's solver: " + solver_help())
@click.option("--record", multiple=True, help="Keep the history of this node only "
              "(repeatable).")
@allow_absolute_paths_option
@quiet_option
@click.option("--all-nodes", is_flag=True, help="Also list the internal nodes of sliced layers.")
@guard
def run(scenario, output, csv_path, xlsx_path, plots_dir, solver, record, allow_absolute_paths,
        quiet, all_nodes):
    """Simulate SCENARIO and print a summary."""
    check_output(output, (".h5", ".hdf5"), "--output")
    check_output(csv_path, (".csv",), "--csv")
    check_output(xlsx_path, (".xlsx",), "--xlsx")
    check_folder(plots_dir, "--plots")
    sc = load_scenario(scenario, allow_absolute_paths)
    if xlsx_path and sc.settings.duration and sc.settings.step:
        from ..exports import check_xlsx_rows

        check_xlsx_rows(int(sc.settings.duration / sc.settings.step) + 1, xlsx_path)
    with Progress(sys.stderr.isatty() and not quiet) as progress:
        res = sc.run(output=output, progress=progress, solver=solver,
                     record=list(record) if record else None)
    if csv_path or xlsx_path:
        from ..exports import write_csv, write_xlsx

        if csv_path:
            write_csv(res, csv_path)
        if xlsx_path:
            write_xlsx(res, xlsx_path, scenario=sc)
    written = [p for p in (output, csv_path, xlsx_path) if p]
    if plots_dir:
        from ..atomic import make_folder
        from ..plotting import standard_figures

        make_folder(plots_dir, "--plots")
        written += standard_figures(res, plots_dir, stem=os.path.splitext(sc.name)[0])
    if not quiet:
        click.echo(format_run_summary(sc, res, all_nodes=all_nodes))
        for p in written:
            click.echo(f"wrote {p}")
    _check_balance(res)


def _check_balance(res) -> None:
    """Exit 3 (the guard) after a run whose energy balance does not close (README "Physics and
    numerics"): its files are written, its summary printed."""
    check_balance(res.energy_balance_error)


def format_run_summary(sc, res, all_nodes: bool = False) -> str:
    """The text printed by ``rcsim run`` (internal nodes of sliced layers only if asked)."""
    internal = set() if all_nodes else {n for n in res.nodes["node"]
                                         if _is_internal(sc.network, str(n))}
    nodes = res.nodes
    width = max([len(str(n)) for n in nodes["node"]] + [4]) if len(nodes) else 4
    lines = _header(sc, res)
    lines += _node_table(nodes, internal, width)
    lines += _limits(res)
    lines += _periodic(res, internal, width)
    lines += _phase_change(res)
    lines += _thermostats(res)
    lines += _energy(res)
    lines += _warnings(res)
    lines += ["", CAUTION]
    return "\n".join(lines)


def _is_internal(network, name: str) -> bool:
    """Whether ``name`` is an internal node of a sliced layer: ``<link>.<i>`` (README)."""
    link, _, index = name.rpartition(".")
    return link in network.links and index.isdigit()


def _header(sc, res) -> list[str]:
    title = f' "{sc.title}"' if sc.title else ""
    info = res.run_info
    lines = [f"{sc.name}{title}",
             f"  {format_time(res.meta.get('duration'))} at {format_time(res.meta.get('step'))} "
             f"steps, {len(res.time)} samples, start {res.meta.get('initial')}, "
             f"solver {res.solver}, {info.wall_time:.3g} s"]
    for path, why in info.declined.items():
        if path not in ("exact", "large-linear"):   # a nonlinear network is not news
            lines.append(f"  (the {path} path declined: {why})")
    return lines


def _node_table(nodes, internal, width) -> list[str]:
    lines = ["", f"  {'node':<{width}}  {'min [degC]':>10}  {'max [degC]':>10}  "
                 f"{'final [degC]':>12}"]
    for _, row in nodes.iterrows():
        if row["node"] in internal:
            continue
        lines.append(f"  {row['node']:<{width}}  {row['min [degC]']:10.3f}  "
                     f"{row['max [degC]']:10.3f}  {row['final [degC]']:12.3f}")
    if internal:
        lines.append(f"  ({len(internal)} internal nodes of sliced layers not shown; "
                     "--all-nodes lists them)")
    return lines


def _limits(res) -> list[str]:
    if not len(res.limits):
        return []
    lines = ["", "  limits"]
    periodic = res.period is not None
    for _, row in res.limits.iterrows():
        label = f"{row['node']} {row['kind']} {row['limit [degC]']:g} degC"
        hold = row["hold_time [s]"]
        if isinstance(hold, float) and math.isnan(hold):
            lines.append(f"    {label}: stays within, closest {row['margin [K]']:.3g} K "
                         f"from the limit")
            continue
        if periodic:   # no start: the first crossing is a time of the repeated day
            word = "above" if row["kind"] == "max" else "below"
            first = (f"first {word} {row['limit [degC]']:g} degC at "
                     f"{format_clock_time(hold, res.period, res.start_time)}")
            per = f" per {format_time(res.period)}"
        else:
            first = f"leaves the band at {format_time(hold)} (hold time)"
            per = " in all"
        lines.append(f"    {label}: {first}; {format_time(row['time_out [s]'])} out{per}, "
                     f"worst {row['worst [K]']:.3g} K beyond, "
                     f"{row['degree_hours [K*h]']:.3g} K*h")
    return lines


def _periodic(res, internal, width) -> list[str]:
    if res.period is None or not len(res.boundary_temperatures.columns):
        return []
    try:
        pr = res.periodic_response()
    except InputError:
        return []
    if pr is None:
        return []
    ref = pr.attrs["reference"]
    lines = ["", f"  periodic regime over the last {format_time(res.period)}; lag and amplitude "
                 f"ratio against {ref}",
             f"  {'':<{width}}  {'mean [degC]':>11}  {'range [K]':>9}  {'lag':>9}  "
             f"{'amplitude ratio':>15}"]
    for name, row in pr.iterrows():
        if name == f"{ref} (boundary)" or name in internal:
            continue
        lines.append(f"  {name:<{width}}  {row['mean [degC]']:11.3f}  "
                     f"{row['range [K]']:9.3f}  {format_time(row['lag [s]']):>9}  "
                     f"{row['amplitude ratio [-]']:15.3f}")
    lines.append(f"  (range: max - min over the period; amplitude ratio: first-harmonic amplitude "
                 f"over {ref}'s)")
    return lines


def _phase_change(res) -> list[str]:
    fractions = res.liquid_fraction
    if not fractions.shape[1]:
        return []
    lines = ["", "  phase change (liquid fraction)"]
    for c in fractions.columns:
        col = fractions[c].to_numpy()
        lines.append(f"    {c}: start {col[0]:.3f}, end {col[-1]:.3f}, max {col.max():.3f}")
    return lines


def _thermostats(res) -> list[str]:
    if not len(res.thermostats):
        return []
    lines = ["", "  thermostats"]
    for _, row in res.thermostats.iterrows():
        switches = row["switches"]
        counted = ("switchings too fast to count" if math.isnan(switches)
                   else f"{int(switches)} switches")
        lines.append(f"    {row['thermostat']} ({row['mode']}, {row['control']}, on "
                     f"{row['node']}): duty {100 * row['duty']:.1f} %, {counted}, energy "
                     f"{format_energy(row['energy [J]'])}")
    return lines


def _energy(res) -> list[str]:
    terms = res.meta.get("energy_terms", {})
    return ["", f"  energy: stored change {format_energy(terms.get('stored [J]', 0.0))}, in "
                f"through boundary links {format_energy(terms.get('in through links [J]', 0.0))}"
                f", from sources {format_energy(terms.get('from sources [J]', 0.0))}; balance "
                f"error {res.energy_balance_error:.1e}"]


def _warnings(res) -> list[str]:
    """A count of the run's warnings (Result.warnings): their texts are printed once, as the
    'warning: ...' lines every command prints (cli/guard.py), not a second time here."""
    if not res.warnings:
        return []
    return ["", f"  {len(res.warnings)} warning(s): see the lines starting with 'warning:'"]
