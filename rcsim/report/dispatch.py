"""One entry point for every kind of report: :func:`build_report` picks the builder."""

from __future__ import annotations

__all__ = ["build_report", "report_page"]


def build_report(subject, scenario=None, **options):
    """The report of ``subject``: a Result (with its ``scenario``), a FitResult, a sweep table or
    a SizingResult.

    Options go to :func:`~rcsim.report.run.build_run_report`,
    :func:`~rcsim.report.fit.build_fit_report`, :func:`~rcsim.report.sweep.build_sweep_report` or
    :func:`~rcsim.report.sizing.build_sizing_report`.
    """
    import pandas as pd

    from ..errors import InputError

    if isinstance(subject, pd.DataFrame):
        from .sweep import build_sweep_report

        return build_sweep_report(subject, scenario, **options)
    if hasattr(subject, "estimates") and hasattr(subject, "fitted_scenario"):
        from .fit import build_fit_report

        return build_fit_report(subject, scenario, **options)
    if hasattr(subject, "requirements") and hasattr(subject, "candidates"):
        from .sizing import build_sizing_report

        return build_sizing_report(subject, scenario, **options)
    if hasattr(subject, "temperatures") and hasattr(subject, "limits"):
        if scenario is None:
            raise InputError("a run's report needs the scenario it ran", "scenario",
                             "pass the Scenario (or Network) the result came from")
        from .run import build_run_report

        return build_run_report(scenario, subject, **options)
    raise InputError(f"cannot make a report of {type(subject).__name__}", "subject",
                     "give a Result, a FitResult, a sweep table or a SizingResult")


def report_page(subject, path=None, scenario=None, **options) -> str:
    """The report of ``subject`` (see :func:`build_report`) written to ``path`` (.html; the path
    is checked before the report is built), or its HTML text when ``path`` is None.

    This is what ``Result.report``, ``FitResult.report`` and ``SizingResult.report_html`` call.
    """
    from .render import check_report_path, render_html, write_report

    if path is not None:
        check_report_path(path)
    report = build_report(subject, scenario, **options)
    return render_html(report) if path is None else write_report(report, path)
