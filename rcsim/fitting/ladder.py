"""Structures grown from a log: the starting structure and the ways to extend one by a node.

A structure (:class:`Ladder`) is a network of capacities and resistances between the measured
nodes (one per measured log column), the boundaries (the ambient and any other temperature the
log gives) and the heat inputs of the log. It is written out as an ordinary scenario.

The starting structure is one node per measured column, each linked to every boundary (and
successive measured nodes linked in a chain); the heat inputs enter the first measured node.
An *extension* adds one node or one link:

``envelope``
    a node with a capacity inserted into a link from a node to a boundary (the link becomes two
    in series through the new node): a massive envelope between the body and its surroundings;
    repeated, the nodes in series form an RC ladder;
``mass``
    a node linked to a measured node only (furniture, a container, the core of a body);
``leak``
    a direct link from a measured node to a boundary it reaches only through other nodes (a
    window beside a massive wall, an air leak);
``heater``
    a node of its own between a heat input and the measured node it heated (the heater's own
    capacity).

Each extension's starting values keep the parent's fitted values and spread the new ones over a
few starts (the new node's capacity a fraction or a multiple of its neighbour's, the split
link's resistance shared in a few ways), so the fit starts close to the parent's optimum.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field, replace

__all__ = ["Ladder", "Extension", "LadderSetup", "BoundaryInput", "extensions", "base_ladder",
           "base_starts", "clean_name", "MOVES"]

_NAME_OK = re.compile(r'^[^.\[\]"@\x00-\x1f]{1,60}$')


def clean_name(text: str, fallback: str, taken: set) -> str:
    """A network name from a log column (its unit stripped), else ``fallback``; unique."""
    from .logs import strip_unit

    name = strip_unit(str(text))[0].strip()
    if not _NAME_OK.match(name) or name != name.strip():
        name = fallback
    base, i = name, 2
    while name in taken:
        name = f"{base}_{i}"
        i += 1
    taken.add(name)
    return name


@dataclass(frozen=True)
class BoundaryInput:
    """A boundary of the structures: ``kind`` 'column' (follows a log column), 'constant'
    (a known temperature) or 'free' (an unknown constant temperature, fitted)."""

    name: str
    kind: str
    column: str | None = None
    value: float | None = None


@dataclass
class LadderSetup:
    """What every structure of one identification shares: names, inputs and starting scales.

    ``measured``: (log column, node) pairs; ``boundaries``: :class:`BoundaryInput`; ``sources``:
    (source name, log column); ``fixed_capacity``: the first measured node's capacity [J/K] when
    no heat input fixes the scale (else None); ``first``: each measured node's first logged
    value [degC]; ``boundary_start``: each boundary's value at the first row [degC];
    ``span``: the log's span [s]; ``scale_resistance``: a starting resistance [K/W];
    ``tables``: (times, values) of each log-driven boundary or source, written into the
    scenarios; ``simulation``: the scenarios' [simulation] table; ``temperature_range``: the
    bounds of fitted temperatures [degC] (the logged range widened by itself, at least 10 K,
    each way), so that a starting temperature the data hardly see stays physical.
    """

    measured: list
    boundaries: list
    sources: list
    fixed_capacity: float | None
    first: dict
    boundary_start: dict
    span: float
    scale_resistance: float
    tables: dict = field(default_factory=dict)
    simulation: dict = field(default_factory=dict)
    temperature_range: tuple = (-273.0, 1e4)

    @property
    def measured_nodes(self) -> list[str]:
        return [node for _, node in self.measured]

    @property
    def boundary_names(self) -> list[str]:
        return [b.name for b in self.boundaries]


@dataclass(frozen=True)
class Ladder:
    """A structure: ``nodes`` (name, role), ``links`` (name, a, b), ``sources`` (name, node),
    ``made_by`` the short names of the extensions that made it from the starting structure."""

    nodes: tuple
    links: tuple
    sources: tuple
    made_by: tuple = ()

    @property
    def n_nodes(self) -> int:
        return len(self.nodes)

    @property
    def label(self) -> str:
        n = self.n_nodes
        head = f"{n} node{'s' if n > 1 else ''}"
        return head if not self.made_by else head + ": " + " + ".join(self.made_by)

    @property
    def node_names(self) -> list[str]:
        return [nm for nm, _ in self.nodes]

    def free_keys(self, setup: LadderSetup) -> list[str]:
        """Every capacity (but a fixed one), resistance and starting temperature, and a free
        ambient."""
        keys = []
        for nm, _ in self.nodes:
            if not (setup.fixed_capacity is not None and nm == setup.measured_nodes[0]):
                keys.append(f"nodes.{nm}.capacity")
        keys += [f"links.{nm}.resistance" for nm, _, _ in self.links]
        keys += [f"nodes.{nm}.initial" for nm, _ in self.nodes]
        keys += [f"boundaries.{b.name}.temperature" for b in setup.boundaries if b.kind == "free"]
        return keys

    def text(self, setup: LadderSetup, values: dict, title: str, comments=(),
             tables: bool = True) -> str:
        """This structure as scenario text (TOML) with ``values`` (key path -> SI) written in.

        With ``tables``, the boundaries and heat inputs that follow the log hold the log's
        values (``table``, linear between rows, held outside), so that the scenario runs as the
        log did; without, they hold their first value (a fit replaces them by the log anyway).
        """
        fixed = setup.fixed_capacity
        first = setup.measured_nodes[0]
        out = [f"# {c}" if c else "#" for c in comments]
        out += [f"title = {_q(title)}", "", "[simulation]"]
        out += [f"{k} = {_q(v)}" for k, v in setup.simulation.items()]
        roles = {"measured": "measured (a log column)", "envelope": "an envelope node",
                 "mass": "an internal mass", "heater": "the node of a heat input"}
        for nm, role in self.nodes:
            cap = fixed if (fixed is not None and nm == first) else \
                values[f"nodes.{nm}.capacity"]
            note = "  # fixed: no heat input sets the scale" if (fixed is not None and
                                                                   nm == first) else ""
            out += ["", f"[nodes.{_key(nm)}]  # {roles.get(role, role)}",
                    f"capacity = {_q(_num(cap, 'J/K'))}{note}",
                    f"initial = {_q(_num(values[f'nodes.{nm}.initial'], 'degC'))}"]
        for b in setup.boundaries:
            out += ["", f"[boundaries.{_key(b.name)}]"]
            if b.kind == "column" and tables:
                out += [f"[boundaries.{_key(b.name)}.temperature.table]  # log column "
                        f"{_q(b.column)}"] + _table_lines(*setup.tables[b.name])
            elif b.kind == "column":
                out.append(f"temperature = {_q(_num(setup.boundary_start[b.name], 'degC'))}")
            elif b.kind == "free":
                out.append("temperature = " + _q(_num(
                    values[f"boundaries.{b.name}.temperature"], "degC")) + "  # fitted")
            else:
                out.append(f"temperature = {_q(_num(b.value, 'degC'))}")
        for nm, a, b in self.links:
            out += ["", f"[links.{_key(nm)}]", f"between = [{_q(a)}, {_q(b)}]",
                    f"resistance = {_q(_num(values[f'links.{nm}.resistance'], 'K/W'))}"]
        columns = dict(setup.sources)
        for nm, node in self.sources:
            out += ["", f"[sources.{_key(nm)}]", f"node = {_q(node)}"]
            if tables:
                out += [f"[sources.{_key(nm)}.power.table]  # log column {_q(columns[nm])}"] + \
                    _table_lines(*setup.tables[nm])
            else:
                out.append('power = "0 W"')
        return "\n".join(out) + "\n"


def _num(value, unit: str) -> str:
    return f"{float(value):.12g} {unit}"


def _q(text) -> str:
    """A TOML basic string (JSON's escapes are TOML's for the characters names may hold)."""
    import json

    return json.dumps(str(text), ensure_ascii=False)


def _key(name: str) -> str:
    return name if re.fullmatch(r"[A-Za-z0-9_-]+", name) else _q(name)


def _table_lines(times, values) -> list[str]:
    """``times``, ``values`` (8 numbers a line) and ``outside = "hold"`` of a table."""
    def array(xs):
        rows = [", ".join(f"{float(x):.12g}" for x in xs[i:i + 8]) for i in range(0, len(xs), 8)]
        return "[\n  " + ",\n  ".join(rows) + ",\n]"

    return [f"times = {array(times)}", f"values = {array(values)}", 'outside = "hold"']


@dataclass
class Extension:
    """One way to extend a structure: the new structure, what it adds (text), its short name,
    and the new values' starting points (each a dict of the values it adds or changes)."""

    ladder: Ladder
    description: str
    short: str
    new_values: list
    removed: tuple = ()
    kind: str = ""

    def starts(self, parent: dict) -> list[dict]:
        """Starting values: the parent's fitted values with this extension's new ones."""
        out = []
        for new in self.new_values:
            values = {k: v for k, v in parent.items() if k not in self.removed}
            values.update(new)
            out.append(values)
        return out


def _unique(base: str, taken) -> str:
    name, i = base, 2
    while name in taken:
        name = f"{base}_{i}"
        i += 1
    return name


def _capacity(setup, values, node) -> float:
    if setup.fixed_capacity is not None and node == setup.measured_nodes[0]:
        return setup.fixed_capacity
    return float(values[f"nodes.{node}.capacity"])


def _resistance_near(ladder, values, node) -> float:
    """The smallest resistance of the links at ``node`` [K/W]."""
    rs = [float(values[f"links.{nm}.resistance"]) for nm, a, b in ladder.links if node in (a, b)]
    return min(rs) if rs else 1.0


MOVES = ("envelope", "mass", "leak", "heater")


def extensions(ladder: Ladder, setup: LadderSetup, values: dict, moves=MOVES) -> list[Extension]:
    """Every one-node (or one-link) extension of ``ladder`` of the kinds ``moves``; ``values``
    are its fitted values (for the new values' starting points)."""
    return [e for e in _all_extensions(ladder, setup, values) if e.kind in moves]


def _all_extensions(ladder: Ladder, setup: LadderSetup, values: dict) -> list[Extension]:
    out = []
    taken = set(ladder.node_names) | set(setup.boundary_names) | {nm for nm, _, _ in ladder.links}
    bnames = set(setup.boundary_names)
    several = len(setup.boundaries) > 1 or len(setup.measured) > 1
    to_boundary = sum(1 for _, a, b in ladder.links if b in bnames and a not in bnames)
    for link, a, b in ladder.links:  # envelope: a node inserted into a link to a boundary
        if b not in bnames or a in bnames:
            continue
        node = _unique("envelope", taken)
        la, lb = _unique(f"{a}-{node}", taken), _unique(f"{node}-{b}", taken)
        new = replace(ladder, nodes=ladder.nodes + ((node, "envelope"),),
                      links=tuple(x for x in ladder.links if x[0] != link) +
                      ((la, a, node), (lb, node, b)))
        r = float(values[f"links.{link}.resistance"])
        c = _capacity(setup, values, a)
        t_mid = 0.5 * (float(values[f"nodes.{a}.initial"]) + setup.boundary_start[b])
        starts = [{f"nodes.{node}.capacity": c * k, f"links.{la}.resistance": r * f,
                   f"links.{lb}.resistance": r * (1 - f), f"nodes.{node}.initial": t_mid}
                  for f, k in ((0.5, 1.0), (0.2, 5.0), (0.8, 0.2))]
        short = f"envelope {a}-{b}" if several or to_boundary > 1 else "envelope"
        out.append(_ext(new, f"an envelope node between {a} and {b}", short, starts,
                        ladder, setup, (f"links.{link}.resistance",)))
    for m in setup.measured_nodes:  # mass: a node linked to a measured node only
        node = _unique("mass", taken)
        lm = _unique(f"{m}-{node}", taken)
        new = replace(ladder, nodes=ladder.nodes + ((node, "mass"),),
                      links=ladder.links + ((lm, m, node),))
        c, r = _capacity(setup, values, m), _resistance_near(ladder, values, m)
        t0 = float(values[f"nodes.{m}.initial"])
        starts = [{f"nodes.{node}.capacity": c * k, f"links.{lm}.resistance": r * f,
                   f"nodes.{node}.initial": t0} for k, f in ((1.0, 0.2), (5.0, 0.05), (0.3, 1.0))]
        out.append(_ext(new, f"an internal mass on {m}", f"mass {m}" if several else "mass",
                        starts, ladder, setup))
    for m in setup.measured_nodes:  # leak: a direct link to a boundary reached only indirectly
        for bd in setup.boundary_names:
            if any({a, b} == {m, bd} for _, a, b in ladder.links):
                continue
            link = _unique(f"{m}-{bd}", taken)
            new = replace(ladder, links=ladder.links + ((link, m, bd),))
            total = sum(float(values[f"links.{nm}.resistance"]) for nm, _, _ in ladder.links)
            starts = [{f"links.{link}.resistance": total * k} for k in (10.0, 3.0)]
            short = f"leak {m}-{bd}" if several else "leak"
            out.append(_ext(new, f"a direct link from {m} to {bd}", short, starts, ladder, setup))
    for src, node_of in ladder.sources:  # heater: the heat input gets a node of its own
        if node_of not in setup.measured_nodes:
            continue
        node = _unique(f"{src}_node", taken)
        link = _unique(f"{node}-{node_of}", taken)
        new = replace(ladder, nodes=ladder.nodes + ((node, "heater"),),
                      links=ladder.links + ((link, node, node_of),),
                      sources=tuple((s, node if s == src else n) for s, n in ladder.sources))
        c, r = _capacity(setup, values, node_of), _resistance_near(ladder, values, node_of)
        t0 = float(values[f"nodes.{node_of}.initial"])
        starts = [{f"nodes.{node}.capacity": c * k, f"links.{link}.resistance": r * f,
                   f"nodes.{node}.initial": t0} for k, f in ((0.1, 0.1), (0.02, 0.02))]
        out.append(_ext(new, f"a node of its own for the heat input {src}",
                        f"heater {src}" if len(ladder.sources) > 1 else "heater", starts,
                        ladder, setup))
    return out


def _ext(new: Ladder, text: str, short: str, starts, parent: Ladder, setup, removed=()):
    return Extension(replace(new, made_by=parent.made_by + (short,)), text, short, starts,
                     removed, short.split(" ", 1)[0])


def base_ladder(setup: LadderSetup) -> Ladder:
    """The starting structure: one node per measured column, linked to every boundary (and to
    the previous measured node); the heat inputs into the first measured node."""
    nodes = tuple((m, "measured") for m in setup.measured_nodes)
    links = []
    taken = set(setup.measured_nodes) | set(setup.boundary_names)
    for i, m in enumerate(setup.measured_nodes):
        for b in setup.boundary_names:
            links.append((_unique(f"{m}-{b}", taken), m, b))
            taken.add(links[-1][0])
        if i:
            prev = setup.measured_nodes[i - 1]
            links.append((_unique(f"{prev}-{m}", taken), prev, m))
            taken.add(links[-1][0])
    sources = tuple((s, setup.measured_nodes[0]) for s, _ in setup.sources)
    return Ladder(nodes, tuple(links), sources)


def base_starts(ladder: Ladder, setup: LadderSetup) -> list[dict]:
    """Starting values of the starting structure: time constants of a twentieth, a fifth and
    two thirds of the log's span; with a heat input, the resistance that its largest power
    needs to move the body by the logged range, else the capacity fixed."""
    starts = []
    for frac in (0.05, 0.2, 0.67):
        tau = frac * setup.span
        r = setup.scale_resistance
        c = tau / r if setup.fixed_capacity is None else setup.fixed_capacity
        if setup.fixed_capacity is not None:
            r = tau / c
        values = {}
        for nm, _ in ladder.nodes:
            values[f"nodes.{nm}.capacity"] = c
            values[f"nodes.{nm}.initial"] = setup.first[nm]
        for nm, _, _ in ladder.links:
            values[f"links.{nm}.resistance"] = r
        for b in setup.boundaries:
            if b.kind == "free":
                values[f"boundaries.{b.name}.temperature"] = setup.boundary_start[b.name]
        starts.append(values)
    return starts

