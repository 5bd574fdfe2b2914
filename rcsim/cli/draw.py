"""``rcsim draw SCENARIO -o net.svg``: a picture of the network (nodes with their capacities,
boundaries with their profiles, links with their resistances and parts, sources)."""

from __future__ import annotations

import click

from .guard import guard
from .options import allow_absolute_paths_option, check_output, load_scenario, scenario_argument

__all__ = ["draw"]


@click.command()
@scenario_argument
@click.option("-o", "--output", type=click.Path(), required=True, metavar="PICTURE",
              help="Write the picture to this .svg, .png or .pdf file.")
@click.option("--expand-layers", is_flag=True,
              help="Draw every slice of a sliced layer (default: one labelled block per layer).")
@click.option("--orientation", type=click.Choice(["down", "right"]), default="down",
              show_default=True,
              help="Boundaries on top and the network below them (down), or on the left (right).")
@allow_absolute_paths_option
@guard
def draw(scenario, output, expand_layers, orientation, allow_absolute_paths):
    """Draw the network of SCENARIO (nothing is simulated)."""
    check_output(output, (".svg", ".png", ".pdf"), "--output")
    sc = load_scenario(scenario, allow_absolute_paths)
    from ..drawing import save_network_picture

    save_network_picture(sc, output, expand_layers=expand_layers, orientation=orientation)
    click.echo(f"wrote {output}")
