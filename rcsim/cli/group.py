"""The click group behind the ``rcsim`` command, and its commands.

Each command lives in its own module and imports the library only inside its function, so
``rcsim --help`` (which loads every command to list it) imports click and little else. A new
command is a module with a ``@click.command()`` here in :data:`COMMANDS`.
"""

from __future__ import annotations

import click

from . import check, draw, fit, identify, materials, modes, plot, report, run, size, steady, sweep

__all__ = ["main", "COMMANDS"]

COMMANDS = (check.check, steady.steady, modes.modes, materials.materials, run.run, plot.plot,
            fit.fit, identify.identify, sweep.sweep_command, size.size_command, report.report,
            draw.draw)


def _print_version(ctx, _param, value) -> None:
    """``--version``: looked up only when asked for (reading the package metadata takes time)."""
    if not value or ctx.resilient_parsing:
        return
    from ..base import package_version

    click.echo(f"rcsim, version {package_version()}")
    ctx.exit()


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.option("--version", is_flag=True, expose_value=False, is_eager=True,
              callback=_print_version, help="Show the version and exit.")
def main():
    """rcsim: transient heat flow through thermal RC networks.

    Build a network from a scenario file (layers, films, masses, profiles), integrate it
    through time, and report temperatures, limit excursions, hold times and energy balance.
    """


for _command in COMMANDS:
    main.add_command(_command)
del _command
