"""``rcsim materials``: the bundled material table and where each value comes from."""

from __future__ import annotations

import click

from ..errors import InputError
from .format import format_cell, is_missing
from .guard import guard


@click.command()
@click.option("--category", help="Only this category (masonry, insulation, metal, ...).")
@click.option("--sources", is_flag=True, help="Also print where each value comes from.")
@guard
def materials(category, sources):
    """List the bundled materials with conductivity, density and specific heat."""
    from ..base import suggest
    from ..materials import materials_table

    table = materials_table()
    if category:
        categories = sorted(set(table["category"]))
        if category not in categories:
            raise InputError(f"unknown category {category!r}", "--category",
                             suggest(category, categories))
        table = table[table["category"] == category]
    click.echo(f"  {'name':<20} {'category':<13} {'k [W/(m*K)]':>12} {'rho [kg/m^3]':>13} "
               f"{'cp [J/(kg*K)]':>14}  {'latent [kJ/kg]':>14}")
    for name, row in table.iterrows():
        latent = None if is_missing(row["latent_heat"]) else row["latent_heat"] / 1000
        click.echo(f"  {name:<20} {row['category']:<13} {row['conductivity']:>12.4g} "
                   f"{row['density']:>13.5g} {row['specific_heat']:>14.5g}  "
                   f"{format_cell(latent, '.5g', 14)}")
        if sources:
            click.echo(f"      source: {row['source']}")
