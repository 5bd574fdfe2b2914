"""Sizing: the value of a scenario that just meets a requirement, and how sure that is.

``rcsim.sizing.size(scenario, vary={"<key path>": (low, high)}, require="<output> <op> <value>")``
answers a design question directly: the foam thickness that holds the payload 72 h, the pack
mass that does so in 95 % of the uncertain conditions, the heater power that keeps a room above
18 degC, the fin area that keeps a module below 85 degC::

    from rcsim.sizing import size
    res = size("scenarios/cold-box.toml",
               vary={"links.foam.parts[0].conduction.thickness": ("30 mm", "120 mm")},
               require="hold_time.payload >= 72 h")
    res.value, res.value_text, res.achieved, res.margin, res.runs, res.warnings
    res.write_scenario("sized.toml"); res.plot()

* **What is sized** (:mod:`~rcsim.sizing.variable`): one key path over a range (or several in
  step), or over a list of choices (catalogue thicknesses, pack counts).
* **What is required** (:mod:`~rcsim.sizing.requirement`): outputs named as in sweep tables,
  ``hold_time.<node> >= 72 h``, ``max.<node> <= 85 degC``, ``min.<node> >= 18 degC``,
  ``time_out.<node> <= 30 min``; with several, all must hold.
* **How** (:mod:`~rcsim.sizing.search`): the ends of the range are checked (met at one end and not
  the other), Brent's method closes the bracket to the tolerance (default 0.1 % of the range),
  and the values evaluated are checked for a response that is not monotone (then the range is
  scanned and a warning says so). Hold times asked beyond the run lengthen the runs.
* **With uncertainty** (:mod:`~rcsim.sizing.uncertain`): uncertain inputs in the sweep grammar,
  drawn once and reused at every value tried (common random numbers); the answer is the value at
  which the requirement holds in the share of draws asked for, reported with that share's Wilson
  interval. Runs go through the sweep executors (this process, local processes, Dask).
* **What comes back** (:mod:`~rcsim.sizing.result`): :class:`SizingResult`, its evaluations table,
  the sized scenario (the user's own TOML text with the value changed), a figure
  (:mod:`~rcsim.sizing.figures`) and the text ``rcsim size`` prints (:mod:`~rcsim.sizing.report`,
  :mod:`~rcsim.sizing.command`).

Sizing supports, and never replaces, qualification testing, local codes and licensed professional
judgement: the answer is only as good as the model and its inputs.

Importing this package imports none of its modules (nor numpy or pandas): each name is loaded
from its module when first used.
"""

from __future__ import annotations

import importlib

#: Where each public name lives (loaded on first use, see ``__getattr__``).
_WHERE = {
    "size": "driver", "SizingWarning": "driver", "LENGTHEN": "driver",
    "DEFAULT_TOLERANCE": "driver",
    "SizingResult": "result",
    "Requirement": "requirement", "parse_requirement": "requirement",
    "parse_requirements": "requirement",
    "Sized": "variable", "parse_vary": "variable",
    "plot_sizing": "figures", "sizing_figures": "figures",
    "format_report": "report",
    "size_command": "command",
    "wilson_interval": "uncertain",
}

__all__ = sorted(_WHERE)


def __getattr__(name):
    module = _WHERE.get(name)
    if module is None:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    value = getattr(importlib.import_module(f"{__name__}.{module}"), name)
    globals()[name] = value  # found once; later look-ups do not come here
    return value


def __dir__():
    return sorted(set(globals()) | set(_WHERE))
