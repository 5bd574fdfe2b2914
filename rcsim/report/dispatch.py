"""One entry point for every kind of report: :func:`build_report` picks the builder."""

from __future__ import annotations

__all__ = ["build_report"]


def build_report(subject, scenario=None, **options):
    """The report of ``subject``: a Result (with its ``scenario``), a FitResult or a sweep table.

    Options go to :func:`~rcsim.report.run.build_run_report`,
    :func:`~rcsim.report.fit.build_fit_report` or :func:`~rcsim.report.sweep.build_sweep_report`.
    """
    import pandas as pd

    from ..errors import InputError

    if isinstance(subject, pd.DataFrame):
        from .sweep import build_sweep_report

        return build_sweep_report(subject, scenario, **options)
    if hasattr(subject, "estimates") and hasattr(subject, "fitted_scenario"):
        from .fit import build_fit_report

        return build_fit_report(subject, scenario, **options)
    if hasattr(subject, "temperatures") and hasattr(subject, "limits"):
        if scenario is None:
            raise InputError("a run's report needs the scenario it ran", "scenario",
                             "pass the Scenario the result came from")
        from .run import build_run_report

        return build_run_report(scenario, subject, **options)
    raise InputError(f"cannot make a report of {type(subject).__name__}", "subject",
                     "give a Result, a FitResult or a sweep table")
