"""Reports a client or QA can read: one self-contained HTML page per run, fit, sweep or sizing.

::

    import rcsim
    from rcsim.report import build_run_report, write_report
    sc = rcsim.load("scenarios/cold-box.toml")
    res = sc.run()
    write_report(build_run_report(sc, res), "report.html")

A page opens offline in any browser and makes no request: its style sheet is inline and its
figures are inline SVG. It states the purpose (from the scenario), the caution, the inputs (every
node, link with its parts and computed resistance, boundary and source with units, the profiles
as small figures), a picture of the network, the results (tables, limits and hold times, time
constants, energy balance, the run's figures), warnings and provenance (rcsim version, the
scenario's text and its SHA-256, solver and its statistics, dates). It prints on A4 and reads on
a narrow screen. Text from the scenario is always escaped.

The builders import the heavy libraries (Jinja2, networkx, matplotlib) only when called.
"""

from __future__ import annotations

import importlib

__all__ = ["build_run_report", "build_fit_report", "build_sweep_report", "build_sizing_report",
           "build_report", "report_page", "render_html", "write_report", "Report", "kept_warnings"]

_WHERE = {
    "build_run_report": ".run",
    "build_fit_report": ".fit",
    "build_sweep_report": ".sweep",
    "build_sizing_report": ".sizing",
    "build_report": ".dispatch",
    "report_page": ".dispatch",
    "render_html": ".render",
    "write_report": ".render",
    "Report": ".model",
    "kept_warnings": ".collect",
}


def __getattr__(name):
    if name in _WHERE:
        value = getattr(importlib.import_module(_WHERE[name], __name__), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__():
    return sorted(list(globals()) + list(_WHERE))
