"""``rcsim check SCENARIO``: validate a scenario and summarise its network."""

from __future__ import annotations

import click

from .format import CAUTION, format_time
from .guard import guard
from .options import allow_absolute_paths_option, load_scenario, scenario_argument


@click.command()
@scenario_argument
@allow_absolute_paths_option
@guard
def check(scenario, allow_absolute_paths):
    """Validate SCENARIO and summarise its network."""
    sc = load_scenario(scenario, allow_absolute_paths)
    click.echo(sc.network.summary())
    st = sc.settings
    if st.duration is not None and st.step is not None:
        click.echo("")
        click.echo(f"run: {format_time(st.duration)} at {format_time(st.step)} output steps, "
                   f"start {st.initial}, solver {st.solver}")
    click.echo("")
    click.echo(f"{sc.name}: ok")
    click.echo(CAUTION)
