"""``rcsim plot RESULT.h5``: draw a figure from a result file, without running anything again."""

from __future__ import annotations

import os

import click

from ..errors import InputError
from .guard import guard
from .options import check_output, names


@click.command()
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
@guard
def plot(result, kind, nodes, links, final, output):
    """Draw a figure from the result file RESULT (the run is not repeated)."""
    from ..base import suggest
    from ..plotting import KINDS, plot_result, save_figure
    from ..results import Result

    if kind not in KINDS:
        raise InputError(f"unknown kind {kind!r}", "--kind", suggest(kind, KINDS))
    if output is None:
        output = f"{os.path.splitext(result)[0]}-{kind}.png"
    check_output(output, (".png", ".svg", ".pdf"), "--output")
    options = _figure_options(kind, names(nodes), names(links), final)
    res = Result.load(result)
    try:
        drawn = plot_result(res, kind, nodes=names(nodes), **options)
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


def _figure_options(kind: str, nodes, links, final) -> dict:
    """The options of ``plot_result`` beyond the nodes; refuses options of another kind."""
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
    return options
