"""The figure gallery: run every bundled scenario and write its standard figures.

From the repository's root::

    python -m rcsim.gallery                 # scenarios/*.toml -> plots/*.png and plots/README.md

Every ``*.toml`` in the scenario folder is run, so a new scenario joins the gallery by being
there. Figures the run no longer makes (a scenario removed or renamed) are deleted from the output
folder, and ``README.md`` there lists what is left, one section per scenario.
"""

from __future__ import annotations

import glob
import os
import sys

import click

from .errors import InputError, RcsimError

__all__ = ["build_gallery"]

_INDEX = "README.md"
_FIGURE_SUFFIXES = (".png", ".svg", ".pdf")
_CAPTIONS = {
    "history": "temperatures, boundaries, limit band and hold time",
    "response": "warm-up or cool-down, normalised, with the time constants",
    "flows": "heat flow through each link; cumulative energy in, out and stored",
}


def build_gallery(scenarios: str = "scenarios", out: str = "plots", echo=None) -> list[str]:
    """Run every ``*.toml`` in ``scenarios`` and write its standard figures into ``out``.

    Returns the paths written (figures, then the index). Figure files in ``out`` that this run did
    not write are removed, so the folder holds exactly the current gallery.
    """
    from .plotting import standard_figures
    from .scenario import load

    files = sorted(glob.glob(os.path.join(scenarios, "*.toml")))
    if not files:
        raise InputError(f"no *.toml scenario in {scenarios!r}", "--scenarios",
                         "run from the repository's root, or give the folder")
    os.makedirs(out, exist_ok=True)
    written, sections = [], []
    for path in files:
        sc = load(path)
        stem = os.path.splitext(os.path.basename(path))[0]
        res = sc.run()
        paths = standard_figures(res, out, stem)
        written += paths
        sections.append((stem, sc.title, paths))
        if echo:
            echo(f"{stem}: " + ", ".join(os.path.basename(p) for p in paths))
    keep = {os.path.abspath(p) for p in written}
    for old in os.listdir(out):
        full = os.path.abspath(os.path.join(out, old))
        if old.lower().endswith(_FIGURE_SUFFIXES) and full not in keep:
            os.remove(full)
            if echo:
                echo(f"removed {old} (no longer made)")
    index = os.path.join(out, _INDEX)
    _write_index(index, scenarios, sections)
    return written + [index]


def _write_index(path: str, scenarios: str, sections) -> None:
    lines = ["# Figure gallery", "",
             "The standard figures of every bundled scenario, written by `python -m rcsim.gallery`",
             "from the repository's root (do not edit by hand; run it again after changing a",
             f"scenario in `{scenarios}/` or the plotting code).", ""]
    for stem, title, paths in sections:
        lines += [f"## {stem}" + (f": {title}" if title else ""), "",
                  f"Scenario: [`{scenarios}/{stem}.toml`](../{scenarios}/{stem}.toml)", ""]
        for p in paths:
            name = os.path.basename(p)
            kind = os.path.splitext(name)[0].rsplit("-", 1)[-1]
            lines += [f"**{kind}**: {_CAPTIONS.get(kind, '')}", "", f"![{stem} {kind}]({name})", ""]
    from .atomic import atomic_path

    with atomic_path(path) as tmp, open(tmp, "w", encoding="utf-8") as fh:
        fh.write("\n".join(lines))


@click.command()
@click.option("--scenarios", default="scenarios", show_default=True,
              help="Folder whose *.toml files are run.")
@click.option("--out", default="plots", show_default=True, help="Folder the figures go into.")
def main(scenarios, out):
    """Regenerate the figure gallery from every scenario in SCENARIOS."""
    import matplotlib

    matplotlib.use("Agg")
    try:
        paths = build_gallery(scenarios, out, echo=click.echo)
    except RcsimError as err:
        click.echo(f"error: {err}", err=True)
        sys.exit(2)
    click.echo(f"wrote {len(paths)} files into {out}/")


if __name__ == "__main__":  # pragma: no cover
    main()
