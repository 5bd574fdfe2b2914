"""``rcsim modes SCENARIO``: the network's time constants, longest first."""

from __future__ import annotations

import click

from .format import format_time
from .guard import guard
from .options import load_scenario, scenario_argument


@click.command()
@scenario_argument
@click.option("--top", default=3, show_default=True, type=click.IntRange(1, 20),
              help="How many nodes to name per mode.")
@click.option("--limit", "max_rows", default=30, show_default=True, type=click.IntRange(1),
              help="How many modes to print (longest first).")
@guard
def modes(scenario, top, max_rows):
    """Time constants of SCENARIO's network, longest first, with the nodes taking part most."""
    sc = load_scenario(scenario)
    from ..modes import modes_table

    table = modes_table(sc.network, top=top)
    click.echo(f"{sc.name}: {len(table)} mode(s)")
    click.echo("")
    click.echo(f"  {'mode':>4}  {'time constant':>14}  "
               "nodes taking part (share of the mode's energy)")
    for k, row in table.head(max_rows).iterrows():
        click.echo(f"  {k:>4}  {format_time(row['time_constant [s]']):>14}  {row['nodes']}")
    if len(table) > max_rows:
        click.echo(f"  ... {len(table) - max_rows} faster mode(s) not shown (--limit)")
