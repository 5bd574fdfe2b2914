"""Figures from results: histories, warm-up and cool-down, heat flows and energy; fits; sweeps.

Everything here reads a :class:`rcsim.Result` (in memory or loaded from HDF5), a fit result or a
sweep table and draws it with matplotlib; nothing here runs a solver. Each ``plot_*`` function of
a result takes ``ax=None`` (draw into a new figure) or an existing axes, and returns a
:class:`Drawn` holding the artists it made, so a caller or a test can check what is on the figure
against the result's data.

Kinds
-----
``history``
    Node temperatures against time, boundaries in grey and thinner, limit bands shaded, the first
    excursion from a band (the hold time) marked and labelled.
``response``
    The normalised response θ = (T − T_final)/(T_initial − T_final) on a logarithmic axis, the line
    θ = exp(−t/τ₁) implied by the dominant time constant τ₁, the 63.2 % point of each curve, and the
    network's time constants listed.
``flows``
    Link heat flows over time, and below them the cumulative energy in and out of the network
    against the change of stored energy.

Time axes are in s, min, h or d chosen from the span (:func:`time_unit_for`), or dates when the
result has a start time. Every axis label carries its unit in brackets.

Look
----
Colours are our own set of six (:data:`PALETTE`), checked to stay apart under simulated protan,
deutan and tritan vision; each series also gets its own line style (:data:`LINE_STYLES`), so curves
stay apart in grey-scale print. Boundaries are grey; limit bands are pale tints of their node's
colour.

Modules (one figure family each): :mod:`~rcsim.plotting.style` (palette, line styles, sizes),
:mod:`~rcsim.plotting.timeaxis`, :mod:`~rcsim.plotting.common` (:class:`Drawn` and what every
result figure shares), :mod:`~rcsim.plotting.history`, :mod:`~rcsim.plotting.decay` (the numbers
of a response) and :mod:`~rcsim.plotting.response`, :mod:`~rcsim.plotting.flows`,
:mod:`~rcsim.plotting.fit`, :mod:`~rcsim.plotting.sweeps`, :mod:`~rcsim.plotting.save`,
:mod:`~rcsim.plotting.standard` (:func:`plot_result` by kind, :func:`standard_figures`).

Importing this package imports none of them (nor matplotlib, numpy or pandas): each name is
loaded from its module when first used.
"""

from __future__ import annotations

import importlib

#: Where each public name lives (loaded on first use, see ``__getattr__``).
_WHERE = {
    "Drawn": "common",
    "plot_result": "standard", "standard_figures": "standard", "KINDS": "standard",
    "plot_history": "history",
    "plot_response": "response", "warmup_nodes": "response",
    "plot_flows": "flows", "plot_energy": "flows",
    "plot_fit": "fit",
    "plot_distribution": "sweeps", "plot_tornado": "sweeps", "plot_scatter": "sweeps",
    "sweep_figures": "sweeps", "output_scale": "sweeps", "output_label": "sweeps",
    "save_figure": "save", "FORMATS": "save",
    "time_unit_for": "timeaxis",
    "PALETTE": "style", "LINE_STYLES": "style", "MARKERS": "style", "BOUNDARY_COLOURS": "style",
    "BOUNDARY_STYLES": "style", "STYLE": "style", "series_style": "style",
}

__all__ = ["Drawn", "plot_result", "plot_history", "plot_response", "plot_flows", "plot_energy",
           "standard_figures", "warmup_nodes", "save_figure", "time_unit_for", "PALETTE",
           "LINE_STYLES", "KINDS", "FORMATS", "plot_fit", "plot_distribution", "plot_tornado",
           "plot_scatter", "sweep_figures", "output_scale", "output_label", "MARKERS",
           "BOUNDARY_COLOURS", "BOUNDARY_STYLES", "STYLE", "series_style"]


def __getattr__(name):
    module = _WHERE.get(name)
    if module is None:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    value = getattr(importlib.import_module(f"{__name__}.{module}"), name)
    globals()[name] = value  # found once; later look-ups do not come here
    return value


def __dir__():
    return sorted(set(globals()) | set(_WHERE))
