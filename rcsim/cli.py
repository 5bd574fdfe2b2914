"""The ``rcsim`` command: parse, call the library, format. Nothing else lives here.

Exit status: 0 success; 2 bad input (one line on stderr, no traceback, no partial file);
3 the numerics failed on valid input; 130 interrupted.
"""

from __future__ import annotations

import functools
import math
import os
import sys
import time
import warnings

import click

from . import __version__
from .errors import InputError, Interrupted, RcsimError, SolverError

CAUTION = ("caution: a simulation supports, and never replaces, qualification testing, local "
           "codes and licensed professional judgement.")


def _fail(message: str, code: int) -> None:
    click.echo(f"error: {message}", err=True)
    sys.exit(code)


def _guard(func):
    """Turn library errors into one line and an exit status; relay warnings as lines."""

    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            try:
                result = func(*args, **kwargs)
            except Interrupted as err:
                _relay(caught)
                click.echo(f"\n{err}", err=True)
                sys.exit(130)
            except InputError as err:
                _relay(caught)
                _fail(str(err), 2)
            except SolverError as err:
                _relay(caught)
                _fail(str(err), 3)
            except RcsimError as err:  # pragma: no cover - every error is one of the above
                _relay(caught)
                _fail(str(err), 2)
            except KeyboardInterrupt:
                _relay(caught)
                click.echo("\ninterrupted: nothing was written", err=True)
                sys.exit(130)
            _relay(caught)
            return result

    return wrapper


def _relay(caught) -> None:
    seen = set()
    for w in caught:
        text = str(w.message)
        if text in seen:
            continue
        seen.add(text)
        if issubclass(w.category, (DeprecationWarning, PendingDeprecationWarning)):
            continue
        click.echo(f"warning: {text}", err=True)


def _check_output(path, suffixes, option) -> None:
    if path is None:
        return
    folder = os.path.dirname(os.path.abspath(path))
    if not os.path.isdir(folder):
        raise InputError(f"folder {os.path.dirname(path)!r} does not exist", option,
                         "create it first")
    if os.path.isdir(path):
        raise InputError(f"{path!r} is a directory", option, "give a file name")
    if suffixes and not str(path).lower().endswith(tuple(suffixes)):
        raise InputError(f"{path!r} should end with {' or '.join(suffixes)}", option)


def _fmt_time(seconds: float) -> str:
    from .units import format_duration

    return format_duration(seconds)


def _fmt_energy(joules: float) -> str:
    a = abs(joules)
    for scale, unit in ((1e9, "GJ"), (1e6, "MJ"), (1e3, "kJ")):
        if a >= scale:
            return f"{joules / scale:.4g} {unit}"
    return f"{joules:.4g} J"


def _load(path, allow_absolute_paths=False):
    from .scenario import load

    return load(path, allow_absolute_paths=allow_absolute_paths)


class _Progress:
    """A progress bar on stderr that appears only once a job has lasted more than ~2 s.

    Called with the fraction done (a run), or through :meth:`runs` with runs done and total (a
    sweep).
    """

    def __init__(self, enabled: bool, label: str = "running"):
        self.enabled = enabled
        self.t0 = time.perf_counter()
        self.label = label
        self.shown = False

    def __call__(self, fraction: float, detail: str = "") -> None:
        if not self.enabled:
            return
        elapsed = time.perf_counter() - self.t0
        if elapsed < 2.0 and not self.shown:
            return
        self.shown = True
        fraction = min(max(fraction, 0.0), 1.0)
        left = elapsed / fraction - elapsed if fraction > 0 else float("nan")
        bar = "#" * int(30 * fraction)
        shown = detail or f"{100 * fraction:5.1f}%"
        click.echo(f"\r{self.label} [{bar:<30}] {shown}  {_fmt_time(left)} left ", nl=False,
                   err=True)

    def runs(self, done: int, total: int) -> None:
        self(done / total if total else 1.0, f"{done}/{total} runs,")

    def close(self) -> None:
        if self.shown:
            click.echo("", err=True)


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="rcsim")
def main():
    """rcsim: transient heat flow through thermal RC networks.

    Build a network from a scenario file (layers, films, masses, profiles), integrate it
    through time, and report temperatures, limit excursions, hold times and energy balance.
    """


# -- check ---------------------------------------------------------------------------------
@main.command()
@click.argument("scenario", type=click.Path(dir_okay=True))
@click.option("--allow-absolute-paths", is_flag=True, help="Let the scenario read CSV files by "
              "absolute path.")
@_guard
def check(scenario, allow_absolute_paths):
    """Validate SCENARIO and summarise its network."""
    sc = _load(scenario, allow_absolute_paths)
    click.echo(sc.network.summary())
    st = sc.settings
    if st.duration is not None and st.step is not None:
        click.echo("")
        click.echo(f"run: {_fmt_time(st.duration)} at {_fmt_time(st.step)} output steps, "
                   f"start {st.initial}, solver {st.solver}")
    click.echo("")
    click.echo(f"{sc.name}: ok")


# -- steady --------------------------------------------------------------------------------
@main.command()
@click.argument("scenario", type=click.Path(dir_okay=True))
@click.option("--between", nargs=2, metavar="A B", help="Also print the equivalent resistance "
              "between two nodes or boundaries.")
@click.option("--at", "at", default="0 s", show_default=True,
              help="Time at which boundaries and sources are taken, e.g. '15 h'.")
@_guard
def steady(scenario, between, at):
    """Steady-state temperatures and heat flows of SCENARIO."""
    from .units import to_si

    sc = _load(scenario)
    net = sc.network
    res = net.steady(at=to_si(at, "time", "--at"))
    r_between = net.equivalent_resistance(*between) if between else None
    width = max([len(n) for n in list(res.temperatures.index) + list(res.heat_flows.index)] + [8])
    click.echo(f"{sc.name}: steady state ({res.solver}), boundaries and sources at t = "
               f"{_fmt_time(to_si(at, 'time', '--at'))}")
    click.echo("")
    click.echo(f"  {'node':<{width}}  temperature [degC]")
    for name, t in res.temperatures.items():
        click.echo(f"  {name:<{width}}  {t:12.4f}")
    for name, t in res.boundary_temperatures.items():
        click.echo(f"  {name:<{width}}  {t:12.4f}   (boundary)")
    click.echo("")
    click.echo(f"  {'link':<{width}}  heat flow [W]   R [K/W]      U [W/(m^2*K)]")
    for name, q in res.heat_flows.items():
        link = net.links[name]
        u = link.u_value
        u_text = f"{u:12.4g}" if u is not None else "           -"
        click.echo(f"  {name:<{width}}  {q:12.4f}  {link.resistance:10.5g}  {u_text}"
                   f"   ({link.a} -> {link.b})")
    if between:
        click.echo("")
        click.echo(f"  equivalent resistance {between[0]} - {between[1]}: {r_between:.6g} K/W")


# -- modes ---------------------------------------------------------------------------------
@main.command()
@click.argument("scenario", type=click.Path(dir_okay=True))
@click.option("--top", default=3, show_default=True, type=click.IntRange(1, 20),
              help="How many nodes to name per mode.")
@click.option("--limit", "max_rows", default=30, show_default=True, type=click.IntRange(1),
              help="How many modes to print (longest first).")
@_guard
def modes(scenario, top, max_rows):
    """Time constants of SCENARIO's network, longest first, with the nodes taking part most."""
    sc = _load(scenario)
    from .modes import modes_table

    table = modes_table(sc.network, top=top)
    click.echo(f"{sc.name}: {len(table)} mode(s)")
    click.echo("")
    click.echo(f"  {'mode':>4}  {'time constant':>14}  nodes taking part (share of the mode's energy)")
    for k, row in table.head(max_rows).iterrows():
        click.echo(f"  {k:>4}  {_fmt_time(row['time_constant [s]']):>14}  {row['nodes']}")
    if len(table) > max_rows:
        click.echo(f"  ... {len(table) - max_rows} faster mode(s) not shown (--limit)")


# -- materials -----------------------------------------------------------------------------
@main.command()
@click.option("--category", help="Only this category (masonry, insulation, metal, ...).")
@click.option("--sources", is_flag=True, help="Also print where each value comes from.")
@_guard
def materials(category, sources):
    """List the bundled materials with conductivity, density and specific heat."""
    from .materials import materials_table

    table = materials_table()
    if category:
        cats = sorted(set(table["category"]))
        if category not in cats:
            from .materials import suggest

            raise InputError(f"unknown category {category!r}", "--category",
                             suggest(category, cats))
        table = table[table["category"] == category]
    click.echo(f"  {'name':<20} {'category':<13} {'k [W/(m*K)]':>12} {'rho [kg/m^3]':>13} "
               f"{'cp [J/(kg*K)]':>14}  {'latent [kJ/kg]':>14}")
    for name, row in table.iterrows():
        latent = "" if row["latent_heat"] is None or (isinstance(row["latent_heat"], float)
                                                      and math.isnan(row["latent_heat"])) \
            else f"{row['latent_heat'] / 1000:.5g}"
        click.echo(f"  {name:<20} {row['category']:<13} {row['conductivity']:>12.4g} "
                   f"{row['density']:>13.5g} {row['specific_heat']:>14.5g}  {latent:>14}")
        if sources:
            click.echo(f"      source: {row['source']}")


# -- run -----------------------------------------------------------------------------------
@main.command()
@click.argument("scenario", type=click.Path(dir_okay=True))
@click.option("-o", "--output", type=click.Path(), help="Write the result to this HDF5 file.")
@click.option("--csv", "csv_path", type=click.Path(), help="Also write the histories as CSV.")
@click.option("--plots", "plots_dir", type=click.Path(), help="Write the standard figures "
              "into this folder.")
@click.option("--solver", type=click.Choice(["auto", "exact", "piecewise", "stiff"]), default=None,
              help="Override the scenario's solver.")
@click.option("--record", multiple=True, help="Keep the history of this node only "
              "(repeatable).")
@click.option("--allow-absolute-paths", is_flag=True, help="Let the scenario read CSV files by "
              "absolute path.")
@click.option("--quiet", is_flag=True, help="Print nothing but errors and warnings.")
@click.option("--all-nodes", is_flag=True, help="Also list the internal nodes of sliced layers.")
@_guard
def run(scenario, output, csv_path, plots_dir, solver, record, allow_absolute_paths, quiet,
        all_nodes):
    """Simulate SCENARIO and print a summary."""
    _check_output(output, (".h5", ".hdf5"), "--output")
    _check_output(csv_path, (".csv",), "--csv")
    if plots_dir is not None and os.path.exists(plots_dir) and not os.path.isdir(plots_dir):
        raise InputError(f"{plots_dir!r} exists and is not a folder", "--plots")
    sc = _load(scenario, allow_absolute_paths)
    progress = _Progress(sys.stderr.isatty() and not quiet)
    try:
        res = sc.run(output=output, progress=progress, solver=solver,
                     record=list(record) if record else None)
    finally:
        progress.close()
    if csv_path:
        res.to_csv(csv_path)
    written = [p for p in (output, csv_path) if p]
    if plots_dir:
        from .plotting import standard_figures

        os.makedirs(plots_dir, exist_ok=True)
        written += standard_figures(res, plots_dir, stem=os.path.splitext(sc.name)[0])
    if not quiet:
        click.echo(format_run_summary(sc, res, all_nodes=all_nodes))
        for p in written:
            click.echo(f"wrote {p}")


# -- plot ----------------------------------------------------------------------------------
def _names(values) -> list[str] | None:
    """Names given as repeated options and/or comma-separated lists."""
    out = [n.strip() for v in values for n in v.split(",") if n.strip()]
    return out or None


@main.command()
@click.argument("result", type=click.Path(dir_okay=True))
@click.option("--kind", default="history", show_default=True,
              help="history (temperatures, limits, hold time), response (warm-up or cool-down "
              "on a log axis, time constants) or flows (heat flows and energy).")
@click.option("--nodes", multiple=True, help="Nodes to draw, repeated or comma-separated "
              "(history, response); a boundary's name adds it to a history.")
@click.option("--links", multiple=True, help="Links to draw in a flows figure, repeated or "
              "comma-separated.")
@click.option("--final", default=None, help="response only: T_final as 'last' (the last sample, "
              "default), 'fit' (asymptote fitted with the dominant time constant) or a "
              "temperature such as '25 degC'.")
@click.option("-o", "--output", type=click.Path(), help="Figure file, .png, .svg or .pdf "
              "(default: RESULT's name with -KIND.png, beside it).")
@_guard
def plot(result, kind, nodes, links, final, output):
    """Draw a figure from the result file RESULT (the run is not repeated)."""
    from .materials import suggest
    from .plotting import KINDS, plot_result, save_figure
    from .results import Result

    if kind not in KINDS:
        raise InputError(f"unknown kind {kind!r}", "--kind", suggest(kind, KINDS))
    if output is None:
        output = f"{os.path.splitext(result)[0]}-{kind}.png"
    _check_output(output, (".png", ".svg", ".pdf"), "--output")
    nodes, links = _names(nodes), _names(links)
    if links and kind != "flows":
        raise InputError("--links chooses the links of a flows figure", "--links",
                         "use --kind flows, or --nodes")
    if nodes and kind == "flows":
        raise InputError("--nodes chooses nodes of history and response figures", "--nodes",
                         "use --links for a flows figure")
    options = {}
    if final is not None:
        if kind != "response":
            raise InputError("--final applies to response figures", "--final",
                             "use --kind response")
        options["final"] = final
    if links:
        options["links"] = links
    res = Result.load(result)
    try:
        drawn = plot_result(res, kind, nodes=nodes, **options)
    except InputError as err:
        if err.where in ("nodes", "links", "final"):
            raise InputError(err.message, f"--{err.where}", err.hint) from None
        raise
    import matplotlib.pyplot as plt

    try:
        save_figure(drawn.figure, output)
    finally:
        plt.close(drawn.figure)
    for note in drawn.notes:
        click.echo(f"note: {note}")
    click.echo(f"wrote {output}")
# -- fit -----------------------------------------------------------------------------------
def _pairs(items, option) -> dict:
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
    if not items:
        return None
    if len(items) == 1 and "=" not in items[0]:
        return items[0]
    return _pairs(items, "--sigma")


@main.command()
@click.argument("scenario", type=click.Path(dir_okay=True))
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
@click.option("--solver", type=click.Choice(["auto", "exact", "piecewise", "stiff"]), default="auto",
              show_default=True, help="How the model is run at each evaluation.")
@click.option("-o", "--output", type=click.Path(), help="Write the estimates table to this CSV "
              "file.")
@click.option("--write-scenario", type=click.Path(), help="Write the fitted scenario to this "
              "TOML file.")
@click.option("--plot", "plot_path", type=click.Path(), help="Write the measured vs fitted "
              "figure (with residuals) to this PNG, SVG or PDF file.")
@click.option("--allow-absolute-paths", is_flag=True, help="Let the scenario read CSV files by "
              "absolute path.")
@_guard
def fit(scenario, log, free, mapping, ignore, bound_items, sigma_items, time_column, time_unit,
        max_gap, starts, solver, output, write_scenario, plot_path, allow_absolute_paths):
    """Fit values of SCENARIO (capacities, resistances, starting state, ...) to LOG.csv.

    LOG has a time column (seconds or ISO-8601) and temperature columns named after nodes
    (fitted) or boundaries (measured ambient that drives the model); --map matches others.
    """
    from .fitting import fit as run_fit, parse_bound

    if not free:
        raise InputError("nothing to fit", "--free", "free at least one value, e.g. "
                         "--free nodes.block.capacity")
    _check_output(output, (".csv",), "--output")
    _check_output(write_scenario, (".toml",), "--write-scenario")
    _check_output(plot_path, (".png", ".svg", ".pdf"), "--plot")
    columns = _pairs(mapping, "--map")
    bounds = {}
    for item in bound_items:
        key, lo, hi = parse_bound(item)
        if key in bounds:
            raise InputError(f"{key!r} is bounded twice", "--bound")
        bounds[key] = (lo, hi)
    sc = _load(scenario, allow_absolute_paths)
    res = run_fit(sc, log, list(free), columns=columns, ignore=list(ignore), bounds=bounds,
                  sigma=_sigma_option(sigma_items), time=time_column, time_unit=time_unit,
                  max_gap=max_gap, starts=starts, solver=solver)
    written = []
    if output:
        written.append(res.to_csv(output))
    if write_scenario:
        written.append(res.write_scenario(write_scenario))
    if plot_path:
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt

        from .plotting import save_figure

        drawn = res.plot()
        try:
            save_figure(drawn.figure, plot_path)
        finally:
            plt.close(drawn.figure)
        written.append(plot_path)
    click.echo(format_fit_summary(sc, res))
    for p in written:
        click.echo(f"wrote {p}")


# -- sweep ---------------------------------------------------------------------------------
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
    if output.startswith(("hold_time.", "time_out.")):
        if math.isfinite(value):
            return _fmt_time(value)
        return f"> {_fmt_time(duration)}" if duration else "never"
    return f"{value:.3f}"


@main.command(name="sweep")
@click.argument("scenario", type=click.Path(dir_okay=True))
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
@click.option("--allow-absolute-paths", is_flag=True, help="Let the scenario read CSV files by "
              "absolute path.")
@click.option("--quiet", is_flag=True, help="Print nothing but errors and warnings.")
@_guard
def sweep_command(scenario, vary_items, samples, seed, executor, workers, scheduler, dask_workers,
                  output, plots_dir, tornado, target_hold, allow_absolute_paths, quiet):
    """Run SCENARIO many times over grids or samples of its values; percentiles and sensitivity."""
    from .sweep import (SweepInterrupted, first_order_indices, one_at_a_time, percentiles,
                        sweep)
    from .units import to_si

    vary = _parse_vary(vary_items)
    if executor is None:
        executor = "dask" if (scheduler or dask_workers) else "processes"
    elif executor != "dask" and (scheduler or dask_workers):
        raise InputError(f"--scheduler and --dask-workers need --executor dask, not {executor}",
                         "--executor")
    target = None if target_hold is None else to_si(target_hold, "time", "--target-hold")
    if output is not None:
        from .sweep import _check_table_path

        _check_table_path(output)
    if plots_dir is not None and os.path.exists(plots_dir) and not os.path.isdir(plots_dir):
        raise InputError(f"{plots_dir!r} exists and is not a folder", "--plots")
    sc = _load(scenario, allow_absolute_paths)
    oat = None
    if tornado:  # first: it is short, and it checks the ranges before the long part
        oat_progress = _Progress(sys.stderr.isatty() and not quiet, "one at a time")
        try:
            oat = one_at_a_time(sc, vary, executor=executor, workers=workers,
                                scheduler=scheduler, dask_workers=dask_workers,
                                progress=oat_progress.runs)
        finally:
            oat_progress.close()
    progress = _Progress(sys.stderr.isatty() and not quiet, "sweep")
    t0 = time.perf_counter()
    try:
        table = sweep(sc, vary, samples=samples, seed=seed, executor=executor, workers=workers,
                      scheduler=scheduler, dask_workers=dask_workers, output=output,
                      progress=progress.runs)
    except SweepInterrupted as stop:
        progress.close()
        where = (f"wrote the {len(stop.table)} finished rows to {stop.output}" if stop.output
                 else "no table written")
        click.echo(f"interrupted after {stop.done} of {stop.planned} runs; {where}", err=True)
        sys.exit(130)
    finally:
        progress.close()
    wall = time.perf_counter() - t0
    written = [output] if output else []
    if plots_dir:
        from .plotting import sweep_figures

        written += sweep_figures(table, plots_dir, stem=os.path.splitext(sc.name)[0], oat=oat,
                                 target_hold=target)
    if quiet:
        return
    where = {"serial": "in this process",
             "processes": f"{workers or os.cpu_count() or 1} local process(es)",
             "dask": (f"Dask at {scheduler}" if scheduler else
                      f"a local Dask cluster of {dask_workers or workers or os.cpu_count() or 1} "
                      "worker(s)")}[executor]
    click.echo(format_sweep_summary(sc, table, percentiles(table), where, wall, target,
                                    first_order_indices(table) if samples else None, oat))
    for p in written:
        click.echo(f"wrote {p}")


def _display_unit(kind: str, raw) -> tuple[float, str]:
    """(factor, unit): a value of ``kind`` (SI) times factor is in the unit the scenario used."""
    from .units import KINDS, ureg

    if kind == "temperature":
        return 1.0, "degC"
    si = KINDS[kind][0]
    if isinstance(raw, str):
        parts = raw.strip().split(None, 1)
        if len(parts) == 2:
            try:
                return float(ureg.Quantity(1.0, ureg.parse_units(si)).to(
                    ureg.parse_units(parts[1])).magnitude), parts[1]
            except Exception:  # pint raises many types; fall back to SI
                pass
    return 1.0, si.replace("**", "^")


def format_fit_summary(sc, res) -> str:
    """The text printed by ``rcsim fit``."""
    lines = []
    cols = ", ".join(f"{c}" if res.targets[c] == c else f"{c} -> {res.targets[c]}"
                     for c in res.measured.columns)
    inputs = ", ".join(f"{c}" if res.targets[c] == c else f"{c} -> {res.targets[c]}"
                       for c in res.inputs.columns)
    lines.append(f"{sc.name} fitted to {res.log_name}: {res.n_points} measured values "
                 f"({cols}){'; measured inputs: ' + inputs if inputs else ''}")
    lines.append(f"  {len(res.estimates)} free value(s), {len(res.starts)} start(s), "
                 f"{res.n_evaluations} model runs ({res.solver} path, {res.n_decompositions} "
                 f"decompositions), {res.wall_time:.3g} s")
    lines.append("")
    width = max([len(k) for k in res.estimates.index] + [3])
    lines.append(f"  {'key':<{width}}  {'estimate':>12}  {'std error':>10}  "
                 f"{'95 % interval':>25}  unit")
    raw_of = {k: sc.value(k) for k in res.estimates.index}
    for k, row in res.estimates.iterrows():
        kind = res.units[k]
        factor, unit = _display_unit(kind, raw_of[k])
        if kind == "temperature":
            unit = "degC (std error in K)"
        lines.append(f"  {k:<{width}}  {row['value'] * factor:>12.5g}  "
                     f"{row['std_error'] * factor:>10.3g}  {row['ci_low'] * factor:>11.5g} .. "
                     f"{row['ci_high'] * factor:<11.5g}  {unit}")
    lines.append("")
    per = ", ".join(f"{c} {v:.3g} K" for c, v in res.rmse_by_column.items())
    lines.append(f"  RMSE {res.rmse:.3g} K ({per}); residual lag-1 autocorrelation "
                 + ", ".join(f"{c} {v:.2f}" for c, v in res.autocorrelation.items()))
    corr = res.correlation
    big = []
    keys = list(corr.index)
    for i in range(len(keys)):
        for j in range(i + 1, len(keys)):
            c = corr.iloc[i, j]
            if math.isfinite(c) and abs(c) >= 0.8:
                big.append(f"{keys[i]} ~ {keys[j]} {c:+.3f}")
    lines.append("  correlations of 0.8 or more: " + ("; ".join(big) if big else "none"))
    if res.time_constants is not None and len(res.time_constants):
        tau = ", ".join(_fmt_time(x) for x in list(res.time_constants)[:4])
        lines.append(f"  time constants of the fitted network: {tau}"
                     + (" ..." if len(res.time_constants) > 4 else ""))
    if res.warnings:
        lines.append(f"  {len(res.warnings)} warning(s): see the lines starting with 'warning:'")
    lines.append("")
    lines.append("check the fitted model against data it was not fitted to before predicting "
                 "with it.")
    lines.append(CAUTION)
    return "\n".join(lines)


def format_sweep_summary(sc, table, pct, where, wall, target=None, indices=None, oat=None) -> str:
    """The text printed by ``rcsim sweep``."""
    import numpy as np

    lines = []
    title = f' "{sc.title}"' if sc.title else ""
    n = len(table)
    lines.append(f"{sc.name}{title}: {n} runs, {where}, {wall:.3g} s")
    attrs = table.attrs
    if attrs.get("seed") is not None:
        lines.append(f"  samples drawn with seed {attrs['seed']}")
    lines.append("")
    lines.append("  inputs (SI units; degC for temperatures)")
    width = max([len(k) for k in attrs.get("inputs", [])] + [5])
    for k in attrs.get("inputs", []):
        lines.append(f"    {k:<{width}}  {attrs.get('design', {}).get(k, '')}")
    lines.append("")
    ow = max([len(o) for o in pct.index] + [6]) + 7
    cols = [c for c in pct.columns if c.endswith("%")]
    lines.append(f"  {'output':<{ow}}" + "".join(f"{c:>12}" for c in cols))
    for out, row in pct.iterrows():
        unit = "[degC]" if out.split(".", 1)[0] in ("min", "max") else ""
        cells = "".join(f"{_fmt_output(out, row[c], attrs.get('duration')):>12}" for c in cols)
        note = (f"   (never left the band in {int(row['never'])} runs)" if row.get("never")
                else "")
        lines.append(f"  {out + ' ' + unit:<{ow}}{cells}{note}")
    failed = int((table["error"].astype(str) != "").sum()) if "error" in table.columns else 0
    lines.append("")
    lines.append(f"  failed runs: {failed} of {n}")
    if failed:
        first = table.loc[table["error"].astype(str) != "", "error"].iloc[0]
        lines.append(f"    first: {first}")
    if target is not None:
        for out in [c for c in attrs.get("outputs", []) if c.startswith("hold_time.")]:
            ok = table["error"].astype(str) == ""
            hold = table.loc[ok, out].to_numpy(dtype=float)
            holds = int(((hold >= target) | (hold != hold)).sum())
            share = 100.0 * holds / hold.size if hold.size else float("nan")
            lines.append(f"  {out[len('hold_time.'):]} holds {_fmt_time(target)}: {share:.1f} % "
                         f"of runs ({holds} of {hold.size})")
    iw = max([len(k) for k in attrs.get("inputs", [])] + [5])
    if indices is not None and not indices.empty:
        lines.append("")
        rough = " (rough below ~200 runs)" if n < 200 else ""
        lines.append("  first-order indices: share of each output's variance due to one input "
                     f"alone{rough}")
        for out in indices.columns:
            col = indices[out]
            if col.isna().all():
                continue
            lines.append(f"    {out} (sum {col.sum():.2f})")
            for k, v in col.sort_values(ascending=False).items():
                lines.append(f"      {k:<{iw}}  {v:5.2f}")
    if oat is not None:
        lines.append("")
        lines.append("  one at a time: output with each input at the low .. high end of its range")
        for out, rows in oat.groupby("output", sort=False):
            scale = max(1.0, float(np.nanmax(np.abs(rows[["at_low", "at_high"]].to_numpy(
                dtype=float)))) if rows[["at_low", "at_high"]].notna().any().any() else 1.0)
            rows = rows[rows["swing"].fillna(0) > 1e-9 * scale]
            if rows.empty:
                continue
            dur = oat.attrs.get("duration")
            lines.append(f"    {out} (base {_fmt_output(out, rows['base'].iloc[0], dur)})")
            for _, r in rows.iterrows():
                lines.append(f"      {r['input']:<{iw}}  {_fmt_output(out, r['at_low'], dur):>10}"
                             f" .. {_fmt_output(out, r['at_high'], dur)}")
    lines.append("")
    lines.append(CAUTION)
    return "\n".join(lines)


def format_run_summary(sc, res, all_nodes: bool = False) -> str:
    """The text printed by ``rcsim run`` (internal nodes of sliced layers only if asked)."""
    internal = set() if all_nodes else {n for n in res.nodes["node"]
                                         if sc.network._is_internal_name(str(n))}
    lines = []
    title = f' "{sc.title}"' if sc.title else ""
    st = res.stats
    lines.append(f"{sc.name}{title}")
    lines.append(f"  {_fmt_time(res.meta.get('duration'))} at {_fmt_time(res.meta.get('step'))} "
                 f"steps, {len(res.time)} samples, start {res.meta.get('initial')}, "
                 f"solver {res.solver}, {st.get('wall_time [s]', float('nan')):.3g} s")
    if st.get("piecewise_declined"):
        lines.append(f"  (the piecewise path declined: {st['piecewise_declined']})")
    lines.append("")
    nodes = res.nodes
    width = max([len(str(n)) for n in nodes["node"]] + [4]) if len(nodes) else 4
    lines.append(f"  {'node':<{width}}  {'min [degC]':>10}  {'max [degC]':>10}  {'final [degC]':>12}")
    for _, row in nodes.iterrows():
        if row["node"] in internal:
            continue
        lines.append(f"  {row['node']:<{width}}  {row['min [degC]']:10.3f}  "
                     f"{row['max [degC]']:10.3f}  {row['final [degC]']:12.3f}")
    if internal:
        lines.append(f"  ({len(internal)} internal nodes of sliced layers not shown; "
                     "--all-nodes lists them)")
    if len(res.limits):
        lines.append("")
        lines.append("  limits")
        for _, row in res.limits.iterrows():
            label = f"{row['node']} {row['kind']} {row['limit [degC]']:g} degC"
            hold = row["hold_time [s]"]
            if isinstance(hold, float) and math.isnan(hold):
                lines.append(f"    {label}: stays within, closest {row['margin [K]']:.3g} K "
                             f"from the limit")
            else:
                lines.append(f"    {label}: leaves the band at {_fmt_time(hold)} (hold time); "
                             f"{_fmt_time(row['time_out [s]'])} out in all, worst "
                             f"{row['worst [K]']:.3g} K beyond, "
                             f"{row['degree_hours [K*h]']:.3g} K*h")
    if res.period is not None and len(res.boundary_temperatures.columns):
        try:
            pr = res.periodic_response()
        except InputError:
            pr = None
        if pr is not None:
            ref = pr.attrs["reference"]
            lines.append("")
            lines.append(f"  periodic regime over the last {_fmt_time(res.period)}; lag and "
                         f"decrement against {ref}")
            lines.append(f"  {'':<{width}}  {'mean [degC]':>11}  {'swing [K]':>9}  "
                         f"{'lag':>9}  {'decrement':>9}")
            for name, row in pr.iterrows():
                if name == f"{ref} (boundary)" or name in internal:
                    continue
                lines.append(f"  {name:<{width}}  {row['mean [degC]']:11.3f}  "
                             f"{row['swing [K]']:9.3f}  {_fmt_time(row['lag [s]']):>9}  "
                             f"{row['decrement [-]']:9.3f}")
    lf = res.liquid_fraction
    if lf.shape[1]:
        lines.append("")
        lines.append("  phase change (liquid fraction)")
        for c in lf.columns:
            col = lf[c].to_numpy()
            lines.append(f"    {c}: start {col[0]:.3f}, end {col[-1]:.3f}, max {col.max():.3f}")
    if len(res.thermostats):
        lines.append("")
        lines.append("  thermostats")
        for _, row in res.thermostats.iterrows():
            lines.append(f"    {row['thermostat']} ({row['mode']}, {row['control']}, on "
                         f"{row['node']}): duty {100 * row['duty']:.1f} %, "
                         f"{int(row['switches'])} switches, energy "
                         f"{_fmt_energy(row['energy [J]'])}")
    terms = res.meta.get("energy_terms", {})
    if isinstance(terms, str):
        import json

        terms = json.loads(terms)
    lines.append("")
    lines.append(f"  energy: stored change {_fmt_energy(terms.get('stored [J]', 0.0))}, in "
                 f"through boundary links {_fmt_energy(terms.get('in through links [J]', 0.0))}, "
                 f"from sources {_fmt_energy(terms.get('from sources [J]', 0.0))}; balance error "
                 f"{res.energy_balance:.1e}")
    lines.append("")
    lines.append(CAUTION)
    return "\n".join(lines)


def entry():  # pragma: no cover - console script alias
    main()


if __name__ == "__main__":  # pragma: no cover
    main()
