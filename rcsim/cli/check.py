"""``rcsim check SCENARIO``: validate a scenario and summarise its network."""

from __future__ import annotations

import warnings

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
    sc.check_run()        # what a run refuses before it integrates, refused here too
    from ..run_warnings import FloatingNodesWarning, network_warnings

    found = network_warnings(sc.network)   # nodes with no path to a boundary
    for text in found:
        warnings.warn(text, FloatingNodesWarning, stacklevel=2)    # guard prints them
    click.echo(sc.network.summary())
    for line in _box_lines(sc.network):
        click.echo(line)
    st = sc.settings
    if st.duration is not None and st.step is not None:
        click.echo("")
        click.echo(f"run: {format_time(st.duration)} at {format_time(st.step)} output steps, "
                   f"start {st.initial}, solver {st.solver}")
    click.echo("")
    click.echo(f"{sc.name}: ok" + (f", {len(found)} warning(s): see the lines starting with "
                                   "'warning:'" if found else ""))
    click.echo(CAUTION)


def _box_lines(network) -> list[str]:
    """The share of edges and corners in each box part's heat flow (rcsim.shapefactors)."""
    lines = []
    for link in network.links.values():
        for part in link.parts:
            box = getattr(part, "box", None)
            if box is None:
                continue
            note = "" if box.valid else "; walls thick for the box: an upper bound"
            lines.append(f"  box {part.where}: edges and corners carry "
                         f"{100 * box.edge_corner_share:.1f} % of the heat flow "
                         f"({100 * box.edge_corner_ratio:.1f} % on top of the plane walls){note}")
    return [""] + lines if lines else []
