"""The figures of a run by kind (``history``, ``response``, ``flows``) and the standard set
written for a run (``rcsim run --plots``, the gallery)."""

from __future__ import annotations

import os

from ..base import suggest
from ..errors import InputError
from .common import Drawn
from .flows import plot_flows_and_energy
from .history import plot_history
from .response import auto_final, plot_response, warmup_nodes
from .save import FORMATS, save_figure

__all__ = ["KINDS", "plot_result", "standard_figures"]

KINDS = ("history", "response", "flows")


def plot_result(res, kind: str = "history", nodes=None, ax=None, **kwargs) -> Drawn:
    """Draw ``res`` as a ``history``, ``response`` or ``flows`` figure; returns a :class:`Drawn`.

    ``nodes`` chooses nodes (history, response); other keywords go to
    :func:`~rcsim.plotting.plot_history`, :func:`~rcsim.plotting.plot_response` or
    :func:`~rcsim.plotting.plot_flows` (``links=`` for flows; ``ax`` may then be one axes for the
    flows alone or two for flows and energy).
    """
    if kind not in KINDS:
        raise InputError(f"unknown plot kind {kind!r}", "kind", suggest(kind, KINDS))
    if kind == "history":
        return plot_history(res, nodes, ax=ax, **kwargs)
    if kind == "response":
        return plot_response(res, nodes, ax=ax, **kwargs)
    if nodes is not None:
        raise InputError("nodes= chooses nodes for history and response plots", "nodes",
                         "use links= to choose the links of a flows plot")
    return plot_flows_and_energy(res, ax=ax, **kwargs)


def standard_figures(res, folder, stem: str, formats=("png",)) -> list[str]:
    """Write the standard figures of ``res`` into ``folder``; return the paths written.

    ``<stem>-history``, ``<stem>-response`` (of the nodes :func:`~rcsim.plotting.warmup_nodes`
    finds, when there are any; T_final is the fitted asymptote when the run ends before 5 τ₁) and
    ``<stem>-flows`` (heat flows and energy), in each of ``formats``.
    """
    import matplotlib.pyplot as plt

    for fmt in formats:
        if fmt not in FORMATS:
            raise InputError(f"unknown figure format {fmt!r}", "formats", suggest(fmt, FORMATS))
    jobs = [("history", lambda: plot_history(res))]
    moving = warmup_nodes(res)
    if moving:
        jobs.append(("response", lambda: plot_response(res, moving, final=auto_final(res))))
    jobs.append(("flows", lambda: plot_flows_and_energy(res)))
    written = []
    for name, job in jobs:
        drawn = job()
        try:
            for fmt in formats:
                written.append(save_figure(drawn.figure,
                                           os.path.join(os.fspath(folder), f"{stem}-{name}.{fmt}")))
        finally:
            plt.close(drawn.figure)
    return written
