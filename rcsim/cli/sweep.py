"""``rcsim sweep SCENARIO --vary KEY=VALUES ...``: many runs over grids or samples; a table with
a row per run, percentiles, sensitivity and figures."""

from __future__ import annotations

import math
import os
import sys
import time

import click

from ..errors import InputError
from .format import CAUTION, format_time
from .guard import check_balance, guard, leave_interrupted
from .options import (allow_absolute_paths_option, check_folder, load_scenario, quiet_option,
                      scenario_argument)
from .progress import Progress

__all__ = ["sweep_command", "format_sweep_summary"]


@click.command(name="sweep")
@scenario_argument
@click.option("--vary", "vary_items", multiple=True, required=True, metavar="KEY=VALUES",
              help="A value to vary, by key path (repeatable). VALUES is a grid: LOW..HIGH[:N] "
                   "(N evenly spaced, default 5) or A,B,C; or a distribution: uniform(LOW,HIGH), "
                   "normal(MEAN,SD), lognormal(MEDIAN,FACTOR), triangular(LOW,MODE,HIGH). "
                   "Units allowed, e.g. 40mm..80mm:5 or normal(25degC,2K).")
@click.option("--sample", "samples", type=click.IntRange(1), metavar="N",
              help="Draw N samples of the distributions (needed when there are any).")
@click.option("--seed", type=click.IntRange(0), help="Seed of the random draws (printed when "
              "not given, so the sweep can be repeated).")
@click.option("--executor", type=click.Choice(["serial", "processes", "dask"]), default=None,
              help="Where the runs go: this process, local processes (default), or Dask.")
@click.option("--workers", type=click.IntRange(1), help="Local processes (default: all cores).")
@click.option("--scheduler", metavar="ADDRESS", help="Address of a running Dask scheduler "
              "(implies --executor dask).")
@click.option("--dask-workers", type=click.IntRange(1), help="Start a local Dask cluster of this "
              "many workers (implies --executor dask).")
@click.option("-o", "--output", type=click.Path(), help="Write the table (one row per run) to "
              "this .csv, .h5 or .parquet file.")
@click.option("--plots", "plots_dir", type=click.Path(), help="Write the sweep figures into this "
              "folder.")
@click.option("--tornado", is_flag=True, help="Also run each input alone at the low and high end "
              "of its range (2 runs per input) and rank the inputs.")
@click.option("--target-hold", metavar="TIME", help="Required hold time, e.g. '48 h': print the "
              "share of runs that hold it and mark it on the figures.")
@click.option("--report", "report_path", type=click.Path(), metavar="REPORT.html",
              help="Write the sweep's report (design, percentiles, sensitivity, figures, runs, "
              "warnings, provenance) to this .html file.")
@allow_absolute_paths_option
@quiet_option
@guard
def sweep_command(scenario, vary_items, samples, seed, executor, workers, scheduler, dask_workers,
                  output, plots_dir, tornado, target_hold, report_path, allow_absolute_paths,
                  quiet):
    """Run SCENARIO many times over grids or samples of its values; percentiles and sensitivity."""
    from ..sweep import first_order_indices, percentiles
    from ..units import to_si

    vary = _parse_vary(vary_items)
    if executor is None:
        executor = "dask" if (scheduler or dask_workers) else "processes"
    elif executor != "dask" and (scheduler or dask_workers):
        raise InputError(f"--scheduler and --dask-workers need --executor dask, not {executor}",
                         "--executor")
    target = None if target_hold is None else to_si(target_hold, "time", "--target-hold")
    if output is not None:
        _check_table_path(output)
    check_folder(plots_dir, "--plots")
    if report_path is not None:
        from ..report.render import check_report_path

        check_report_path(report_path, "--report")
    from ..report.collect import kept_warnings

    with kept_warnings() as caught:          # for the report; printed as usual all the same
        table, oat, wall, sc, places = _run_sweep(scenario, vary, samples, seed, executor,
                                                  workers, scheduler, dask_workers, output,
                                                  tornado, allow_absolute_paths, quiet)
    written = [output] if output else []
    if plots_dir:
        from ..plotting import sweep_figures

        written += sweep_figures(table, plots_dir, stem=os.path.splitext(sc.name)[0], oat=oat,
                                 target_hold=target)
    if report_path:
        from ..report import build_sweep_report, write_report

        written.append(write_report(build_sweep_report(
            table, sc, oat=oat, target_hold=target, warnings=list(caught)), report_path))
    if not quiet:
        click.echo(format_sweep_summary(sc, table, percentiles(table), _where(places), wall,
                                        target, first_order_indices(table) if samples else None,
                                        oat))
        for p in written:
            click.echo(f"wrote {p}")
    _check_balance(table, oat, caught)


def _check_balance(table, oat, caught) -> None:
    """Exit 3 (the guard) when a run of the sweep (or of ``--tornado``) has an open energy
    balance: the table, figures and report are written first, the summary names the runs."""
    from ..sweep.tables import BALANCE_COLUMN, open_balance_runs
    from ..sweep.worker import open_balance_text

    runs = open_balance_runs(table)
    if runs:
        worst = float(table.loc[runs, BALANCE_COLUMN].max())
        check_balance(worst, runs, len(table))
    if oat is not None:      # the one-at-a-time runs: counted in one warning
        text = open_balance_text()
        for w in caught:
            if str(w.message).startswith(text):
                from ..errors import SolverError

                raise SolverError("the energy balance of a one-at-a-time run (--tornado) does "
                                  "not close: its ranking is not to be trusted")


def _run_sweep(scenario, vary, samples, seed, executor, workers, scheduler, dask_workers, output,
               tornado, allow_absolute_paths, quiet):
    """Load, run the one-at-a-time runs if asked, then the sweep: (table, oat, wall time [s],
    scenario, places). Ctrl-C writes the finished rows and leaves with status 130."""
    from ..sweep import SweepInterrupted, one_at_a_time, sweep

    sc = load_scenario(scenario, allow_absolute_paths)
    places = dict(executor=executor, workers=workers, scheduler=scheduler,
                  dask_workers=dask_workers)
    show = sys.stderr.isatty() and not quiet
    oat = None
    if tornado:  # first: it is short, and it checks the ranges before the long part
        with Progress(show, "one at a time") as progress:
            oat = one_at_a_time(sc, vary, progress=progress.runs, **places)
    t0 = time.perf_counter()
    with Progress(show, "sweep") as progress:
        try:
            table = sweep(sc, vary, samples=samples, seed=seed, output=output,
                          progress=progress.runs, **places)
        except SweepInterrupted as stop:
            progress.close()
            where = (f"wrote the {len(stop.table)} finished rows to {stop.output} (marked "
                     "interrupted; nothing under the requested name)" if stop.output
                     else "no table written")
            leave_interrupted(f"interrupted after {stop.done} of {stop.planned} runs; {where}")
    return table, oat, time.perf_counter() - t0, sc, places


def _check_table_path(path) -> None:
    """The sweep's own check of a table path (suffix, folder, pyarrow for .parquet)."""
    from ..sweep.tables import check_table_path

    check_table_path(path)


def _where(places) -> str:
    """Where the runs went, for the summary's first line."""
    workers, cores = places["workers"], os.cpu_count() or 1
    if places["executor"] == "serial":
        return "in this process"
    if places["executor"] == "processes":
        return f"{workers or cores} local process(es)"
    if places["scheduler"]:
        return f"Dask at {places['scheduler']}"
    return f"a local Dask cluster of {places['dask_workers'] or workers or cores} worker(s)"


def _parse_vary(items) -> dict:
    """``("KEY=SPEC", ...)`` -> {key: spec text}; one line naming the bad item otherwise."""
    vary = {}
    for item in items:
        key, eq, spec = item.partition("=")
        key, spec = key.strip(), spec.strip()
        if not eq or not key or not spec:
            raise InputError(f"expected KEY=VALUES, got {item!r}", "--vary",
                             "e.g. --vary links.walls.parts[1].conduction.thickness=40mm..80mm:5")
        if key in vary:
            raise InputError(f"key {key!r} is given twice", "--vary")
        vary[key] = spec
    return vary


def _fmt_output(output: str, value: float, duration=None) -> str:
    """An output value for the summary; a hold time never reached prints as "> <duration>"."""
    if isinstance(value, float) and math.isnan(value):
        return "-"
    if output.startswith(("hold_time.", "time_outside_band.", "time_out.")):
        if math.isfinite(value):
            return format_time(value)
        return f"> {format_time(duration)}" if duration else "never"
    return f"{value:.3f}"


def format_sweep_summary(sc, table, pct, where, wall, target=None, indices=None, oat=None) -> str:
    """The text printed by ``rcsim sweep``."""
    attrs = table.attrs
    n = len(table)
    title = f' "{sc.title}"' if sc.title else ""
    lines = [f"{sc.name}{title}: {n} runs, {where}, {wall:.3g} s"]
    if attrs.get("seed") is not None:
        lines.append(f"  samples drawn with seed {attrs['seed']}")
    lines += ["", "  inputs (SI units; degC for temperatures)"]
    width = max([len(k) for k in attrs.get("inputs", [])] + [5])
    for k in attrs.get("inputs", []):
        lines.append(f"    {k:<{width}}  {attrs.get('design', {}).get(k, '')}")
    lines += _percentile_table(pct, attrs.get("duration"))
    lines += _failures(table)
    lines += _open_balance(table)
    if target is not None:
        lines += _target_shares(table, target)
    if indices is not None and not indices.empty:
        lines += _indices(indices, n, width)
    if oat is not None:
        lines += _one_at_a_time(oat, width)
    lines += ["", CAUTION]
    return "\n".join(lines)


def _percentile_table(pct, duration) -> list[str]:
    ow = max([len(o) for o in pct.index] + [6]) + 7
    cols = [c for c in pct.columns if c.endswith("%")]
    lines = ["", f"  {'output':<{ow}}" + "".join(f"{c:>12}" for c in cols)]
    for out, row in pct.iterrows():
        unit = "[degC]" if out.split(".", 1)[0] in ("min", "max") else ""
        cells = "".join(f"{_fmt_output(out, row[c], duration):>12}" for c in cols)
        note = (f"   (never left the band in {int(row['never'])} runs)" if row.get("never")
                else "")
        lines.append(f"  {out + ' ' + unit:<{ow}}{cells}{note}")
    left_out = int(pct.attrs.get("open_balance", 0))
    if left_out:
        lines.append(f"  ({left_out} run{'s' if left_out > 1 else ''} with an open energy "
                     "balance left out of the percentiles, shares and indices)")
    return lines


def _failures(table) -> list[str]:
    failed = int((table["error"].astype(str) != "").sum()) if "error" in table.columns else 0
    lines = ["", f"  failed runs: {failed} of {len(table)}"]
    if failed:
        first = table.loc[table["error"].astype(str) != "", "error"].iloc[0]
        lines.append(f"    first: {first}")
    return lines


def _open_balance(table) -> list[str]:
    """The runs whose energy balance does not close (none: nothing printed)."""
    from ..sweep.tables import BALANCE_COLUMN, open_balance_runs
    from ..transient.registry import BALANCE_LIMIT

    runs = open_balance_runs(table)
    if not runs:
        return []
    shown = ", ".join(str(r) for r in runs[:20]) + (" ..." if len(runs) > 20 else "")
    worst = float(table.loc[runs, BALANCE_COLUMN].max())
    return [f"  energy balance open (error above {BALANCE_LIMIT:g}, worst {worst:.2g}) in "
            f"{len(runs)} of {len(table)} runs: {shown} (column {BALANCE_COLUMN}; their "
            "outputs are not to be trusted and no statistic counts them)"]


def _target_shares(table, target) -> list[str]:
    """The share of runs holding ``target`` [s], over the runs that did not fail and whose
    energy balance closes."""
    from ..sweep.tables import trusted

    lines = []
    ok = trusted(table)
    for out in [c for c in table.attrs.get("outputs", []) if c.startswith("hold_time.")]:
        hold = table[out].to_numpy(dtype=float)[ok]
        holds = int(((hold >= target) | (hold != hold)).sum())
        share = 100.0 * holds / hold.size if hold.size else float("nan")
        lines.append(f"  {out[len('hold_time.'):]} holds {format_time(target)}: {share:.1f} % "
                     f"of runs ({holds} of {hold.size})")
    return lines


def _indices(indices, n, width) -> list[str]:
    rough = " (rough below ~200 runs)" if n < 200 else ""
    lines = ["", "  first-order indices: share of each output's variance due to one input "
                 f"alone{rough}"]
    for out in indices.columns:
        col = indices[out]
        if col.isna().all():
            continue
        lines.append(f"    {out} (sum {col.sum():.2f})")
        for k, v in col.sort_values(ascending=False).items():
            lines.append(f"      {k:<{width}}  {v:5.2f}")
    return lines


def _one_at_a_time(oat, width) -> list[str]:
    import numpy as np

    lines = ["", "  one at a time: output with each input at the low .. high end of its range"]
    duration = oat.attrs.get("duration")
    for out, rows in oat.groupby("output", sort=False):
        ends = rows[["at_low", "at_high"]]
        scale = (max(1.0, float(np.nanmax(np.abs(ends.to_numpy(dtype=float)))))
                 if ends.notna().any().any() else 1.0)
        rows = rows[rows["swing"].fillna(0) > 1e-9 * scale]
        if rows.empty:
            continue
        lines.append(f"    {out} (base {_fmt_output(out, rows['base'].iloc[0], duration)})")
        for _, r in rows.iterrows():
            low, high = (_fmt_output(out, r[end], duration) for end in ("at_low", "at_high"))
            lines.append(f"      {r['input']:<{width}}  {low:>10} .. {high}")
    return lines
