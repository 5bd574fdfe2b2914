"""The body of ``rcsim size``: options in, text out (the command line file only parses and prints).

``rcsim size SCENARIO --vary 'KEY=LOW..HIGH' --require 'hold_time.payload >= 72 h'
[--vary-uncertain 'KEY=normal(..)' --sample N --confidence 0.95 --seed S] [--tolerance '0.5 mm']
[--write-scenario PATH] [-o table.csv|.h5|.parquet] [--plots DIR] [--report PATH.html]
[--executor ...]``

:func:`size_command` checks every output path before any run, runs :func:`rcsim.sizing.size`,
writes what was asked for and returns the text to print (the answer, the margin, the values
tried, the caution). Errors are :class:`rcsim.errors.InputError` one-liners (exit 2) or
:class:`rcsim.errors.SolverError` (exit 3); nothing is written when the sizing fails.
"""

from __future__ import annotations

import os

from ..errors import InputError

__all__ = ["size_command", "parse_items"]


def parse_items(items, option) -> dict:
    """``("KEY=SPEC", ...)`` -> ``{key: spec text}``; one line naming the bad item otherwise."""
    out = {}
    for item in items or ():
        key, eq, spec = str(item).partition("=")
        key, spec = key.strip(), spec.strip()
        if not eq or not key or not spec:
            raise InputError(f"expected KEY=VALUES, got {item!r}", option,
                             "e.g. --vary 'links.foam.parts[0].conduction.thickness=30mm..120mm'")
        if key in out:
            raise InputError(f"key {key!r} is given twice", option)
        out[key] = spec
    return out


def _check_paths(output, write_scenario, plots_dir, report=None) -> None:
    if output is not None:
        from ..sweep.tables import check_table_path

        check_table_path(output)
    from ..atomic import check_folder_writable, check_writable

    if write_scenario is not None:
        path = os.fspath(write_scenario)
        if not path.lower().endswith(".toml"):
            raise InputError(f"{path!r} should end with .toml", "--write-scenario")
        check_writable(path, "--write-scenario")    # folder there, writable; not a folder
    if plots_dir is not None:
        check_folder_writable(plots_dir, "--plots")
    if report is not None:
        from ..report.render import check_report_path

        check_report_path(report, "--report")


def size_command(scenario, vary_items, require_items, *, vary_uncertain_items=(), samples=None,
                 confidence=None, seed=None, tolerance=None, executor=None, workers=None,
                 scheduler=None, dask_workers=None, output=None, write_scenario=None,
                 plots_dir=None, allow_absolute_paths=False, quiet=False, progress=None,
                 report=None) -> str:
    """Run ``rcsim size`` with parsed options; returns the text to print (with ``quiet``, only
    the files written).

    Parameters are the command's options (see the module docstring); ``progress`` is a
    ``callable(fraction, detail)`` for a progress bar.
    """
    from ..scenario import load
    from .driver import size
    from .figures import sizing_figures

    vary = parse_items(vary_items, "--vary")
    if not vary:
        raise InputError("nothing to size", "--vary",
                         "give --vary 'KEY=LOW..HIGH' (a range) or 'KEY=A,B,C' (choices)")
    require = [r for r in (require_items or ()) if str(r).strip()]
    if not require:
        raise InputError("nothing is required", "--require",
                         "give e.g. --require 'hold_time.payload >= 72 h'")
    uncertain = parse_items(vary_uncertain_items, "--vary-uncertain") or None
    if executor is None and (scheduler or dask_workers):
        executor = "dask"
    elif executor is not None and executor != "dask" and (scheduler or dask_workers):
        raise InputError(f"--scheduler and --dask-workers need --executor dask, not {executor}",
                         "--executor")
    _check_paths(output, write_scenario, plots_dir, report)
    from ..report.collect import kept_warnings

    with kept_warnings() as caught:          # for the report; passed on all the same
        sc = load(scenario, allow_absolute_paths=allow_absolute_paths)
        res = size(sc, vary, require, vary_uncertain=uncertain, samples=samples,
                   confidence=confidence, seed=seed, tolerance=tolerance, executor=executor,
                   workers=workers, scheduler=scheduler, dask_workers=dask_workers,
                   progress=progress)
    written = []
    if output is not None:
        written.append(res.write_runs(output))
    if write_scenario is not None:
        written.append(res.write_scenario(write_scenario))
    if plots_dir is not None:
        written += sizing_figures(res, plots_dir, stem=os.path.splitext(sc.name)[0])
    if report is not None:
        written.append(res.report_html(report, warnings=list(caught)))
    from ..tomlwrite import copy_lines

    lines = [] if quiet else [res.report()]
    for p in written:
        lines.append(f"wrote {p}")
        lines += copy_lines(p)       # files copied beside a written scenario
    return "\n".join(lines)
