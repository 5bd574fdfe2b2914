"""Options and arguments several commands share, and the checks made on them before any work.

The checks raise :class:`rcsim.errors.InputError` naming the option, so a bad path is refused
before a long run rather than after it.
"""

from __future__ import annotations

import unicodedata

import click

from ..errors import InputError

__all__ = ["SOLVERS", "solver_help", "scenario_argument", "allow_absolute_paths_option", "quiet_option",
           "check_output", "check_folder", "load_scenario", "names", "log_time_options",
           "holdout_value"]

#: the transient paths a run may be given (``auto`` chooses): the engine's registry, which
#: imports nothing heavy, so ``--help`` stays light
from ..transient.registry import SOLVERS, solver_help  # noqa: E402

scenario_argument = click.argument("scenario", type=click.Path(dir_okay=True))
allow_absolute_paths_option = click.option(
    "--allow-absolute-paths", is_flag=True,
    help="Let the scenario read CSV files by absolute path or outside its folder.")
quiet_option = click.option("--quiet", is_flag=True,
                            help="Print nothing but errors and warnings.")


def log_time_options(command):
    """--time, --time-unit and --max-gap: how a logged record's time column is read (fit,
    identify)."""
    for option in reversed([
            click.option("--time", "time_column", help="Name of the time column (default: a "
                         "column named time, t, timestamp, ... else the first)."),
            click.option("--time-unit", help="Unit of a numeric time column (default s, or the "
                         "unit in its header as in 'time [min]')."),
            click.option("--max-gap", help="Report spans without data longer than this, e.g. "
                         "10min (default 5 times the median row interval).")]):
        command = option(command)
    return command


def holdout_value(text):
    """--holdout as the fitting reads it: a fraction as a number, anything else (a time range)
    as written (read by :func:`rcsim.fitting.holdout.parse_holdout`)."""
    if text is None:
        return None
    try:
        return float(text)
    except ValueError:
        return text


def check_output(path, suffixes, option: str) -> None:
    """Refuse an output file whose folder is missing, is not a folder or cannot be written, that
    is a folder, or has a wrong suffix: before any work."""
    if path is None:
        return
    from ..atomic import check_writable

    if suffixes and not str(path).lower().endswith(tuple(suffixes)):
        raise InputError(f"{path!r} should end with {' or '.join(suffixes)}", option)
    check_writable(path, option)


def check_folder(path, option: str) -> None:
    """Refuse a folder for figures that exists as something else than a folder, or that could
    not be created or written (tried in it, or in its nearest existing parent)."""
    if path is None:
        return
    from ..atomic import check_folder_writable

    check_folder_writable(path, option)


def load_scenario(path, allow_absolute_paths: bool = False):
    """The :class:`rcsim.Scenario` in ``path`` (the library is imported here, not before)."""
    from ..scenario import load

    return load(path, allow_absolute_paths=allow_absolute_paths)


def names(values) -> list[str] | None:
    """Names given as repeated options and/or comma-separated lists (None when none).

    >>> names(("a,b", " c ")), names(())
    (['a', 'b', 'c'], None)
    """
    out = [unicodedata.normalize("NFC", n.strip()) for v in values for n in v.split(",")
           if n.strip()]   # names are kept in Unicode normal form C (README "Names")
    return out or None
