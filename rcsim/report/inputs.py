"""The inputs of a scenario as tables with units: nodes, links and their parts, boundaries,
sources, limits, thermostats and run settings.

Each table gives the value rcsim computed (SI, degC for temperatures) beside what the user wrote
(``as written``, the scenario's own text of that entry), so a reader can check one against the
other. Used by the reports and by the spreadsheet export (:func:`input_rows`).
"""

from __future__ import annotations

import datetime as _dt
import json
import math

import pandas as pd

__all__ = ["inline_toml", "settings_table", "nodes_table", "links_table", "parts_table",
           "boundaries_table", "sources_table", "limits_table", "thermostats_table", "input_rows",
           "PARAMETER_UNITS"]

#: SI units of the parameters a link part keeps (``Part.params``).
PARAMETER_UNITS = {
    "k": "W/(m*K)", "thickness": "m", "area": "m^2", "density": "kg/m^3",
    "specific_heat": "J/(kg*K)", "inner_radius": "m", "outer_radius": "m", "length": "m",
    "h": "W/(m^2*K)", "height": "m", "diameter": "m", "width": "m", "velocity": "m/s",
    "emissivity": "-", "emissivity_2": "-", "area_2": "m^2", "view_factor": "-",
    "surface_factor": "m^2", "h_r_area": "W/K", "resistance": "K/W", "conductance": "W/K",
    "area_resistance": "m^2*K/W",
}


def inline_toml(value) -> str:
    """A value of a parsed scenario written back as inline TOML (for the ``as written`` column).

    >>> inline_toml({"conduction": {"k": "0.06 W/(m*K)", "thickness": "10 mm", "slices": 4}})
    '{ conduction = { k = "0.06 W/(m*K)", thickness = "10 mm", slices = 4 } }'
    """
    if isinstance(value, dict):
        if not value:
            return "{}"
        return "{ " + ", ".join(f"{_key(k)} = {inline_toml(v)}" for k, v in value.items()) + " }"
    if isinstance(value, list):
        return "[" + ", ".join(inline_toml(v) for v in value) + "]"
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return json.dumps(value, ensure_ascii=False)
    if isinstance(value, (_dt.datetime, _dt.date, _dt.time)):
        return value.isoformat()
    return repr(value)


def _key(k: str) -> str:
    bare = k.replace("_", "").replace("-", "").isalnum() and k.isascii()
    return k if bare else json.dumps(k, ensure_ascii=False)


def _written(scenario, *path) -> str:
    """The scenario's entry at ``path`` as inline TOML, or "" when there is none."""
    data = getattr(scenario, "data", None)
    cur = data
    for p in path:
        try:
            cur = cur[p]
        except (KeyError, IndexError, TypeError):
            return ""
    return inline_toml(cur)


def _network(scenario_or_network):
    return getattr(scenario_or_network, "network", scenario_or_network)


def _nan(x):
    return math.nan if x is None else float(x)


def settings_table(scenario) -> pd.DataFrame:
    """The run settings: duration, step [s], initial state, solver, clock start, tolerances."""
    st = scenario.settings
    rows = [("duration", _nan(st.duration), "s"), ("step", _nan(st.step), "s"),
            ("initial state", st.initial, ""), ("solver", st.solver, ""),
            ("clock start", st.start or "", ""), ("rtol", st.rtol, "-"), ("atol", st.atol, "-"),
            ("recorded nodes", ", ".join(st.record) if st.record else "all", "")]
    return pd.DataFrame(rows, columns=["setting", "value", "unit"])


def _phase_text(pc) -> str:
    if pc is None:
        return ""
    return (f"latent heat {pc.latent_heat / 1000:g} kJ/kg, melts {pc.melting_low:g} .. "
            f"{pc.melting_high:g} degC")


def nodes_table(scenario) -> pd.DataFrame:
    """Every node: capacity [J/K], mass [kg], initial temperature [degC], phase change."""
    net = _network(scenario)
    rows = []
    for n in net.nodes.values():
        rows.append({"node": n.name, "capacity [J/K]": float(n.capacity),
                     "mass [kg]": _nan(n.mass), "initial [degC]": _nan(n.initial),
                     "phase change": _phase_text(n.phase_change),
                     "as written": _written(scenario, "nodes", n.name)})
    return pd.DataFrame(rows, columns=["node", "capacity [J/K]", "mass [kg]", "initial [degC]",
                                       "phase change", "as written"])


def links_table(scenario) -> pd.DataFrame:
    """Every link: its two points, total resistance [K/W] (NaN when it depends on the
    temperatures), U-value [W/(m^2*K)] where it has one area, stored capacity [J/K], slices."""
    net = _network(scenario)
    rows = []
    for link in net.links.values():
        u = link.u_value
        rows.append({"link": link.name, "from": link.a, "to": link.b,
                     "parts": " + ".join(p.kind for p in link.parts),
                     "resistance [K/W]": float(link.resistance),
                     "U [W/(m^2*K)]": _nan(u), "capacity [J/K]": float(link.capacity),
                     "slices": int(sum(p.slices for p in link.parts)),
                     "temperature-dependent": "yes" if link.is_nonlinear else ""})
    return pd.DataFrame(rows, columns=["link", "from", "to", "parts", "resistance [K/W]",
                                       "U [W/(m^2*K)]", "capacity [J/K]", "slices",
                                       "temperature-dependent"])


def _params_text(params: dict) -> str:
    out = []
    for k, v in params.items():
        if isinstance(v, float):
            unit = PARAMETER_UNITS.get(k, "")
            out.append(f"{k} {v:.6g}{' ' + unit if unit and unit != '-' else ''}")
        else:
            out.append(f"{k} {v}")
    return ", ".join(out)


def parts_table(scenario) -> pd.DataFrame:
    """Every part of every link, in series order: kind, SI parameters, resistance [K/W], area
    [m^2], capacity [J/K], slices and what was written."""
    net = _network(scenario)
    rows = []
    for link in net.links.values():
        for i, p in enumerate(link.parts):
            written = _written(scenario, "links", link.name, "parts", i)
            if not written:
                for key in ("resistance", "conductance"):
                    w = _written(scenario, "links", link.name, key)
                    written = written or (f"{key} = {w}" if w else "")
            rows.append({"link": link.name, "part": i + 1, "kind": p.kind,
                         "parameters (SI)": _params_text(p.params),
                         "resistance [K/W]": float(p.resistance), "area [m^2]": _nan(p.area),
                         "capacity [J/K]": float(p.capacity), "slices": int(p.slices),
                         "as written": written})
    return pd.DataFrame(rows, columns=["link", "part", "kind", "parameters (SI)",
                                       "resistance [K/W]", "area [m^2]", "capacity [J/K]",
                                       "slices", "as written"])


def boundaries_table(scenario) -> pd.DataFrame:
    """Every boundary with its temperature profile [degC]."""
    net = _network(scenario)
    rows = [{"boundary": b.name, "temperature [degC]": b.profile.describe(),
             "as written": _written(scenario, "boundaries", b.name, "temperature")}
            for b in net.boundaries.values()]
    return pd.DataFrame(rows, columns=["boundary", "temperature [degC]", "as written"])


def sources_table(scenario) -> pd.DataFrame:
    """Every source: the node it heats and its power profile [W]."""
    net = _network(scenario)
    rows = [{"source": s.name, "node": s.node, "power [W]": s.profile.describe(),
             "as written": _written(scenario, "sources", s.name, "power")}
            for s in net.sources.values()]
    return pd.DataFrame(rows, columns=["source", "node", "power [W]", "as written"])


def limits_table(scenario) -> pd.DataFrame:
    """Every temperature band: node, min and max [degC]."""
    net = _network(scenario)
    rows = [{"node": lim.node, "min [degC]": _nan(lim.min), "max [degC]": _nan(lim.max)}
            for lim in net.limits.values()]
    return pd.DataFrame(rows, columns=["node", "min [degC]", "max [degC]"])


def thermostats_table(scenario) -> pd.DataFrame:
    """Every thermostat as written in the scenario (node, sensor, mode, setpoint, band, power)."""
    data = getattr(scenario, "data", None) or {}
    rows = [{"thermostat": name, "as written": inline_toml(spec)}
            for name, spec in (data.get("thermostats") or {}).items()]
    if not rows:  # a network built in Python: what it holds
        for name, th in getattr(_network(scenario), "thermostats", {}).items():
            text = ", ".join(f"{k} {getattr(th, k)}" for k in ("node", "sensor", "mode",
                             "control", "setpoint", "band", "power") if hasattr(th, k))
            rows.append({"thermostat": name, "as written": text})
    return pd.DataFrame(rows, columns=["thermostat", "as written"])


def input_rows(scenario) -> pd.DataFrame:
    """Every input value in one long table: kind, name, property, value, unit, as written.

    What the ``inputs`` sheet of a spreadsheet export holds.
    """
    rows = []

    def add(kind, name, prop, value, unit, written=""):
        rows.append((kind, name, prop, value, unit, written))

    if hasattr(scenario, "settings"):
        for _, r in settings_table(scenario).iterrows():
            add("simulation", "", r["setting"], r["value"], r["unit"])
    for _, r in nodes_table(scenario).iterrows():
        w = r["as written"]
        add("node", r["node"], "capacity", r["capacity [J/K]"], "J/K", w)
        if not math.isnan(r["mass [kg]"]):
            add("node", r["node"], "mass", r["mass [kg]"], "kg", w)
        if not math.isnan(r["initial [degC]"]):
            add("node", r["node"], "initial", r["initial [degC]"], "degC", w)
        if r["phase change"]:
            add("node", r["node"], "phase change", r["phase change"], "", w)
    for _, r in links_table(scenario).iterrows():
        add("link", r["link"], "between", f"{r['from']} - {r['to']}", "")
        add("link", r["link"], "resistance", r["resistance [K/W]"], "K/W")
    for _, r in parts_table(scenario).iterrows():
        add("part", f"{r['link']} part {r['part']}", r["kind"], r["resistance [K/W]"], "K/W",
            r["as written"])
    for _, r in boundaries_table(scenario).iterrows():
        add("boundary", r["boundary"], "temperature", r["temperature [degC]"], "degC",
            r["as written"])
    for _, r in sources_table(scenario).iterrows():
        add("source", r["source"], f"power into {r['node']}", r["power [W]"], "W", r["as written"])
    for _, r in limits_table(scenario).iterrows():
        for side in ("min", "max"):
            if not math.isnan(r[f"{side} [degC]"]):
                add("limit", r["node"], side, r[f"{side} [degC]"], "degC")
    for _, r in thermostats_table(scenario).iterrows():
        add("thermostat", r["thermostat"], "settings", "", "", r["as written"])
    return pd.DataFrame(rows, columns=["kind", "name", "property", "value", "unit", "as written"])
