"""Parts every report shares: the purpose, the inputs, the network picture, warnings, provenance."""

from __future__ import annotations

import datetime as _dt
import hashlib
import platform
import warnings as _warnings

from . import inputs
from .figures import network_figure, profile_figures
from .formatting import table_from_frame
from .model import Facts, Gallery, Paragraph, Preformatted, Section

__all__ = ["purpose_of", "sha256_of", "inputs_section", "network_section", "warning_texts",
           "provenance_items", "scenario_text_section", "now_text"]


def sha256_of(text: str) -> str:
    """SHA-256 of the UTF-8 bytes of ``text`` (hex).

    >>> sha256_of("")[:16]
    'e3b0c44298fc1c14'
    """
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def now_text() -> str:
    return _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds")


def purpose_of(scenario) -> str:
    """What the scenario is for: its ``description``, else the leading comment of its file
    (without command lines and without the caution, which the report states itself)."""
    data = getattr(scenario, "data", None) or {}
    if isinstance(data.get("description"), str) and data["description"].strip():
        return data["description"].strip()
    lines = []
    for line in (getattr(scenario, "text", "") or "").lstrip().splitlines():
        if not line.startswith("#"):
            break
        lines.append(line[1:])
    paragraphs, current = [], []
    for line in lines + [""]:
        if line.strip():
            current.append(line)
        elif current:
            paragraphs.append(current)
            current = []
    kept = []
    for para in paragraphs:
        first = para[0]
        if first.startswith("   ") or first.strip().upper().startswith("CAUTION"):
            continue   # an indented command line, or the file's own caution
        kept.append(" ".join(x.strip() for x in para))
    return "\n\n".join(kept)


def _settings_duration(scenario):
    st = getattr(scenario, "settings", None)
    return getattr(st, "duration", None)


def inputs_section(scenario, duration=None, intro: str = "") -> Section:
    """Every input with units: settings, nodes, links and parts, boundaries, sources, limits,
    thermostats, and the profiles as small figures."""
    blocks = []
    if hasattr(scenario, "settings"):
        blocks.append(table_from_frame(inputs.settings_table(scenario), "Run settings",
                                       id="in-settings"))
    blocks.append(table_from_frame(inputs.nodes_table(scenario), "Nodes", id="in-nodes"))
    blocks.append(table_from_frame(
        inputs.links_table(scenario), "Links (parts in series; several links between the same "
        "two points act in parallel)", id="in-links",
        missing={"resistance [K/W]": "depends on T", "U [W/(m^2*K)]": ""},
        note="A resistance that depends on the temperatures (radiation, a film correlation) is "
             "evaluated along the run."))
    blocks.append(table_from_frame(inputs.parts_table(scenario), "Parts of the links",
                                   id="in-parts",
                                   missing={"resistance [K/W]": "depends on T", "area [m^2]": ""}))
    for make, caption, key in ((inputs.boundaries_table, "Boundaries", "in-boundaries"),
                               (inputs.sources_table, "Sources", "in-sources"),
                               (inputs.limits_table, "Limits", "in-limits"),
                               (inputs.thermostats_table, "Thermostats", "in-thermostats")):
        frame = make(scenario)
        if len(frame):
            blocks.append(table_from_frame(frame, caption, id=key, missing={
                "min [degC]": "", "max [degC]": ""}))
    figures = profile_figures(scenario, duration or _settings_duration(scenario))
    if figures:
        blocks.append(Gallery(figures, "Boundary temperatures and source powers over the run"))
    return Section("inputs", "Inputs", blocks, intro or
                   "What the model was given, in SI units (temperatures in degC), beside what the "
                   "scenario file says.")


def network_section(scenario, expand_layers: bool = False) -> Section:
    return Section("network", "The network", [network_figure(scenario, expand_layers)])


def warning_texts(caught) -> list[str]:
    """Distinct warning texts, in order, from strings or ``warnings.WarningMessage`` objects."""
    out = []
    for w in caught or ():
        text = str(w.message) if isinstance(w, _warnings.WarningMessage) else str(w)
        if text and text not in out:
            out.append(text)
    return out


def provenance_items(scenario_text: str, scenario_name: str = "", extra=()) -> list:
    """rcsim version, Python, the scenario file and the SHA-256 of its text, the report's date."""
    from ..base import package_version

    items = [("rcsim version", package_version()),
             ("Python", platform.python_version())]
    if scenario_name:
        items.append(("scenario file", scenario_name))
    if scenario_text:
        items.append(("scenario SHA-256 (UTF-8 text)", sha256_of(scenario_text)))
    items.extend(extra)
    items.append(("report written", now_text()))
    return items


def scenario_text_section(text: str, title: str = "The scenario as read",
                          caption: str = "") -> Section:
    blocks = [Paragraph("The text below is the scenario file exactly as rcsim read it; its "
                        "SHA-256 above identifies it.")] if text else \
        [Paragraph("This result carries no scenario text.")]
    if text:
        blocks.append(Preformatted(text, caption, "scenario-text"))
    return Section("scenario-text", title, blocks)


def facts(items) -> Facts:
    return Facts([(str(k), str(v)) for k, v in items])
