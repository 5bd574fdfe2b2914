"""What the summaries (``rcsim check``, ``rcsim steady``, the report) call a node's starting
temperature and a link's conductance per area.

* A link that runs through a construction (at least one plane layer, ``conduction``, and no
  ``contact`` interface) is given its U-value, U = 1/(R A) [W/(m^2*K)], between the link's two
  points: it includes a film only when the film is a part of the same link.
* Any other link with one area (a single film, a thermal pad with its contact resistance, a
  plain resistance given an area) is given its conductance per area, G/A = 1/(R A)
  [W/(m^2*K)]: the same number, under a name that claims no construction.
* A massless node (capacity 0) has no starting temperature of its own: it follows its
  neighbours at every instant, so a value given for it is ignored, and the summary says so.

The rules are stated here once; they are words around numbers the network computes, so this
module only reads nodes and links.
"""

from __future__ import annotations

import math

__all__ = ["area_conductance", "area_conductance_text", "initial_text", "CONSTRUCTION_KINDS"]

#: Part kinds that make a link a construction (a plane layer between two surfaces).
CONSTRUCTION_KINDS = ("conduction",)
#: Part kinds that make a link an interface (pad) rather than a construction.
_INTERFACE_KINDS = ("contact",)


def area_conductance(link) -> tuple[str, float] | None:
    """``("U", value)`` for a construction, ``("G/A", value)`` for a film, pad or other link
    with one area, None when the link has no single area or is nonlinear. Value in W/(m^2*K).

    Uses the link's own U = 1/(R A) (``Link.u_value``); only the name differs.
    """
    value = link.u_value
    if value is None or not math.isfinite(value):
        return None
    kinds = {p.kind for p in link.parts}
    if kinds & set(CONSTRUCTION_KINDS) and not kinds & set(_INTERFACE_KINDS):
        return "U", float(value)
    return "G/A", float(value)


def area_conductance_text(link, spec: str = ".4g") -> str:
    """``"U = 0.2755 W/(m^2*K)"``, ``"G/A = 7.69 W/(m^2*K)"`` or ``""``."""
    found = area_conductance(link)
    if found is None:
        return ""
    name, value = found
    return f"{name} = {value:{spec}} W/(m^2*K)"


def initial_text(node) -> str:
    """The starting temperature of a node as a summary prints it: ``"5 degC"``, ``"-"`` when
    none is given, ``"- (massless: follows its neighbours; the 4 degC given is ignored)"``."""
    massless = node.capacity == 0 and node.phase_change is None
    if node.initial is None:
        return "- (massless: follows its neighbours)" if massless else "-"
    if massless:
        return f"- (massless: follows its neighbours; the {node.initial:g} degC given is ignored)"
    return f"{node.initial:g} degC"
