"""Figures for a report as inline SVG: cleaned, with ids of their own, scaled to the page.

matplotlib writes each figure as an SVG document; :func:`inline_svg` keeps only its drawing:
no XML declaration, comments, metadata, scripts, style elements or event attributes, links only
inside the figure. Every id gets the figure's own prefix (and every reference to it), so many
figures live in one page without clashing, and the fixed width and height give way to the
``viewBox`` so the figure scales with the page (never beyond its natural width).
"""

from __future__ import annotations

import io
import math
import os
import re
import tempfile
import xml.etree.ElementTree as ET

import numpy as np

from .model import Figure

__all__ = ["inline_svg", "svg_of_figure", "run_figures", "profile_figures", "network_figure",
           "figure_of"]

_SVG = "http://www.w3.org/2000/svg"
_XLINK = "http://www.w3.org/1999/xlink"
_DROP = {f"{{{_SVG}}}{tag}" for tag in ("metadata", "script", "style", "foreignObject", "title",
                                         "a", "image", "iframe")}
_URL = re.compile(r"url\(#([^)]+)\)")
ET.register_namespace("", _SVG)
ET.register_namespace("xlink", _XLINK)


def _prefixed(value: str, prefix: str) -> str:
    return _URL.sub(lambda m: f"url(#{prefix}-{m.group(1)})", value)


def inline_svg(svg_text: str, prefix: str, label: str, zoom: float = 1.0) -> str:
    """An SVG document cleaned for inline use in a page (see the module's docstring).

    ``prefix`` makes the ids unique in the page; ``label`` is the accessible name; the figure
    may grow to ``zoom`` times its natural width.

    >>> doc = ('<?xml version="1.0"?><svg xmlns="http://www.w3.org/2000/svg" width="10pt" '
    ...        'height="5pt" viewBox="0 0 10 5" onload="x()"><!-- a --><script>x()</script>'
    ...        '<defs><path id="p" d="M0 0"/></defs><g clip-path="url(#p)"/></svg>')
    >>> print(inline_svg(doc, "f1", "a <figure>"))  # doctest: +NORMALIZE_WHITESPACE
    <svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 10 5" role="img" aria-label="a &lt;figure&gt;"
    style="max-width: 10pt" class="figure-svg"><defs><path id="f1-p" d="M0 0" /></defs><g
    clip-path="url(#f1-p)" /></svg>
    """
    root = ET.fromstring(svg_text.encode("utf-8") if isinstance(svg_text, str) else svg_text)
    width = root.attrib.pop("width", "")
    root.attrib.pop("height", None)
    for parent in root.iter():
        for child in list(parent):
            if child.tag in _DROP or not isinstance(child.tag, str):
                parent.remove(child)
        for key in list(parent.attrib):
            value = parent.attrib[key]
            local = key.rsplit("}", 1)[-1]
            if local.lower().startswith("on"):
                del parent.attrib[key]
            elif local == "id":
                parent.attrib[key] = f"{prefix}-{value}"
            elif local == "href":
                if value.startswith("#"):
                    parent.attrib[key] = f"#{prefix}-{value[1:]}"
                else:
                    del parent.attrib[key]
            elif "url(" in value:
                parent.attrib[key] = _prefixed(value, prefix)
    for key in list(root.attrib):
        if key.rsplit("}", 1)[-1] == "version":
            del root.attrib[key]
    root.set("role", "img")
    root.set("aria-label", label)
    if width:
        m = re.fullmatch(r"([0-9.]+)([a-z]*)", width)
        if m and zoom != 1.0:
            width = f"{float(m.group(1)) * zoom:.6g}{m.group(2)}"
        root.set("style", f"max-width: {width}")
    root.set("class", "figure-svg")
    return ET.tostring(root, encoding="unicode")


def svg_of_figure(fig) -> str:
    """A matplotlib figure as SVG text (text drawn as paths: the page needs no font; names in
    any script drawn with an installed font that has them, as
    :func:`rcsim.plotting.save.write_figure` writes every figure)."""
    from ..plotting.save import write_figure

    buf = io.StringIO()
    write_figure(fig, buf, "svg", rc={"svg.fonttype": "path", "svg.hashsalt": "rcsim-report"},
                 bbox_inches="tight", pad_inches=0.05)
    return buf.getvalue()


def figure_of(fig, prefix: str, caption: str, *, small: bool = False, close: bool = True) -> Figure:
    """A report :class:`Figure` from a matplotlib figure (closed afterwards when ``close``)."""
    try:
        svg = inline_svg(svg_of_figure(fig), prefix, caption)
    finally:
        if close:
            import matplotlib.pyplot as plt

            plt.close(fig)
    return Figure(caption, svg, prefix, small)


_RUN_CAPTIONS = {
    "history": "Temperatures against time; boundaries in grey; limit bands shaded and the first "
               "excursion (the hold time) marked.",
    "response": "Warm-up or cool-down on a logarithmic scale against the network's dominant time "
                "constant.",
    "flows": "Heat flow through each link (positive from its first point to its second), and the "
             "energy taken in against the change of stored energy.",
}


def run_figures(result) -> list[Figure]:
    """The run's standard figures (history, response where it applies, flows) as SVG."""
    from ..plotting import standard_figures

    out = []
    with tempfile.TemporaryDirectory(prefix="rcsim-report-") as folder:
        for path in standard_figures(result, folder, "run", formats=("svg",)):
            name = os.path.splitext(os.path.basename(path))[0].split("-", 1)[1]
            with open(path, encoding="utf-8") as fh:
                svg = inline_svg(fh.read(), f"fig-{name}", _RUN_CAPTIONS.get(name, name))
            out.append(Figure(_RUN_CAPTIONS.get(name, name), svg, f"fig-{name}"))
    return out


def _profile_samples(profile, duration: float):
    """Times [s] and values of a profile over [0, duration], both sides of every jump."""
    t = np.linspace(0.0, duration, 481)
    try:
        lo, hi = profile.span()
        t = t[(t >= lo) & (t <= hi)] if math.isfinite(lo) or math.isfinite(hi) else t
        knots = np.asarray(profile.knots(0.0, duration), dtype=float)
    except Exception:   # a profile that cannot say: sample the grid only
        knots = np.zeros(0)
    if knots.size:
        left = np.asarray(profile.value_left(knots), dtype=float)
        t_all = np.concatenate([t, knots, knots])
        v_all = np.concatenate([np.asarray(profile.value(t), dtype=float), left,
                                np.asarray(profile.value(knots), dtype=float)])
        order = np.argsort(np.concatenate([t, knots - 1e-9 * max(duration, 1.0), knots]),
                           kind="stable")
        return t_all[order], v_all[order]
    return t, np.asarray(profile.value(t), dtype=float)


def profile_figures(scenario, duration: float | None) -> list[Figure]:
    """A small figure of every boundary temperature and source power over the run."""
    from matplotlib.figure import Figure as MplFigure

    from ..plotting import PALETTE
    from ..plotting.style import styled
    from .formatting import time_unit

    net = getattr(scenario, "network", scenario)
    duration = float(duration) if duration else 86400.0
    unit, size = time_unit(duration)
    items = [("boundary", b.name, b.profile, "degC") for b in net.boundaries.values()] + \
            [("source", s.name, s.profile, "W") for s in net.sources.values()]
    out = []
    for i, (kind, name, profile, qty) in enumerate(items):
        try:
            t, v = _profile_samples(profile, duration)
        except Exception:   # noqa: BLE001 - a profile the figure cannot sample is left out
            continue
        with styled():
            fig = MplFigure(figsize=(3.3, 1.55))
            ax = fig.add_axes((0.19, 0.27, 0.77, 0.6))
            ax.plot(t / size, v, lw=1.4,
                    color=PALETTE[i % len(PALETTE)] if kind == "source" else "#555555")
            ax.set_title(f"{kind} {name}", fontsize=8, loc="left")
            ax.set_xlabel(f"time [{unit}]", fontsize=7)
            ax.set_ylabel(f"[{qty}]", fontsize=7)
            ax.tick_params(labelsize=6.5)
            ax.grid(True, color="#e2e2e2", lw=0.5)
        out.append(figure_of(fig, f"profile-{i}", f"{kind} {name}: {profile.describe()}",
                             small=True, close=False))
    return out


def network_figure(scenario, expand_layers: bool = False) -> Figure:
    """The network picture (:mod:`rcsim.drawing`) as inline SVG."""
    from ..drawing import network_svg

    caption = ("The network: boundaries on top, then the points one link further in. Circles "
               "are nodes with their heat capacity; squares are boundaries with their profile; "
               "zig-zags are links with their resistance (crossed by an arrow when it depends on "
               "the temperatures); arrows are sources.")
    if not expand_layers:
        caption += " A sliced layer is drawn as one block."
    svg = network_svg(scenario, expand_layers=expand_layers)
    return Figure(caption, inline_svg(svg, "net", "picture of the network", zoom=1.6),
                  "network-picture")
