"""The report of one run: a Scenario and the Result it gave."""

from __future__ import annotations

import dataclasses
import json
import math

import numpy as np
import pandas as pd

from .common import (facts, inputs_section, network_section, provenance_items, purpose_of,
                     warning_texts)
from .formatting import number_text, table_from_frame, time_unit
from .model import Report, Section, Table

__all__ = ["build_run_report", "limit_sentences", "stats_items"]


def _when(result, seconds: float) -> str:
    start = result.start_time
    if start is None or not math.isfinite(seconds):
        return ""
    return (start + pd.to_timedelta(seconds, unit="s")).strftime("%Y-%m-%d %H:%M")


def limit_sentences(result) -> list[str]:
    """One plain sentence per limit: held or left, when, for how long, how far."""
    out = []
    span = float(result.time[-1] - result.time[0]) if result.time.size else 0.0
    unit, size = time_unit(span)
    for _, r in result.limits.iterrows():
        head = f"{r['node']} {r['kind']} {number_text(r['limit [degC]'])} degC"
        hold = float(r["hold_time [s]"])
        if math.isnan(hold):
            out.append(f"{head}: stays within the band; closest "
                       f"{number_text(r['margin [K]'], 3)} K from the limit.")
            continue
        if result.period is not None:   # a periodic run has no start: a clock time
            from ..units import format_clock_time

            word = "above" if r["kind"] == "max" else "below"
            out.append(f"{head}: first {word} {number_text(r['limit [degC]'])} degC at "
                       f"{format_clock_time(hold, result.period, result.start_time)}; "
                       f"{number_text(r['time_out [s]'] / size, 4)} {unit} out per period, "
                       f"worst {number_text(r['worst [K]'], 3)} K beyond.")
            continue
        when = _when(result, hold)
        out.append(f"{head}: leaves the band after {number_text(hold / size, 4)} {unit}"
                   f"{f' ({when})' if when else ''}; {number_text(r['time_out [s]'] / size, 4)} "
                   f"{unit} out in all, worst {number_text(r['worst [K]'], 3)} K beyond.")
    return out


def stats_items(stats) -> list[tuple[str, str]]:
    """Solver statistics as (name, text) pairs, from a dict or a typed record."""
    if dataclasses.is_dataclass(stats) and not isinstance(stats, type):
        stats = dataclasses.asdict(stats)
    elif hasattr(stats, "_asdict"):
        stats = stats._asdict()
    elif not isinstance(stats, dict):
        stats = dict(getattr(stats, "__dict__", {}))
    out = []
    for k, v in stats.items():
        if isinstance(v, float):
            text = number_text(v, 4)
        elif isinstance(v, (dict, list, tuple)):
            text = json.dumps(v, default=str)
        else:
            text = str(v)
        out.append((str(k), text))
    return out


def _nodes_tables(result, scenario) -> list[Table]:
    nodes = result.nodes
    if not len(nodes):
        return []
    own = set(getattr(getattr(scenario, "network", None), "nodes", {}) or nodes["node"])
    mine = nodes[nodes["node"].isin(own)]
    inner = nodes[~nodes["node"].isin(own)]
    out = [table_from_frame(mine, "Temperatures of the nodes over the run", id="res-nodes")]
    if len(inner):
        out.append(table_from_frame(inner, "Nodes inside sliced layers (<link>.<i>, numbered "
                                           "from the link's first point)", id="res-internal"))
    return out


def _limits_table(result, unit, size) -> Table | None:
    lim = result.limits
    if not len(lim):
        return None
    frame = pd.DataFrame({
        "node": lim["node"], "limit": lim["kind"], "limit [degC]": lim["limit [degC]"],
        f"hold time [{unit}]": lim["hold_time [s]"] / size,
        "leaves the band at": [_when(result, h) for h in lim["hold_time [s]"]],
        f"time out [{unit}]": lim["time_out [s]"] / size, "worst [K]": lim["worst [K]"],
        "degree-hours [K*h]": lim["degree_hours [K*h]"], "margin [K]": lim["margin [K]"]})
    if result.start_time is None:
        frame = frame.drop(columns=["leaves the band at"])
    return table_from_frame(frame, "Limits: hold time (first time out of the band), time out "
                                   "of the band, worst excursion, degree-hours, margin",
                            id="res-limits",
                            missing={f"hold time [{unit}]": _never_text(result, size)},
                            note="A negative margin is how far the limit was exceeded.")


def _never_text(result, size) -> str:
    """The hold time of a node that never left its band: more than the run ("> 24, never
    left" in the table's unit), never an empty or infinite cell."""
    if result.time.size < 2:
        return "never left"
    return f"> {number_text(float(result.time[-1] - result.time[0]) / size, 4)}, never left"


def _energy_table(result) -> Table | None:
    energy = result.energy
    if not len(energy):
        return None
    last = energy.iloc[-1]
    rows = [("change of stored energy", float(last["stored"]))]
    for c in energy.columns:
        if c.startswith("link:"):
            rows.append((f"in through link {c[5:]}", float(last[c])))
        elif c.startswith("source:"):
            rows.append((f"from source {c[7:]}", float(last[c])))
    frame = pd.DataFrame(rows, columns=["term", "energy [kJ]"])
    frame["energy [kJ]"] /= 1000.0
    return table_from_frame(frame, "Energy balance at the end of the run", id="res-energy",
                            note=f"Relative closure error (stored against exchanged): "
                                 f"{number_text(result.energy_balance_error, 3)}.")


def _time_constants_table(result) -> Table | None:
    taus = np.asarray(result.time_constants, dtype=float)
    if not taus.size:
        return None
    finite = taus[np.isfinite(taus)]
    unit, size = time_unit(finite.max() if finite.size else 1.0)
    shown = taus[:12]
    frame = pd.DataFrame({"mode": np.arange(1, shown.size + 1),
                          f"time constant [{unit}]": shown / size})
    note = f"{taus.size - shown.size} shorter ones not shown." if taus.size > shown.size else ""
    return table_from_frame(frame, "Time constants of the network (linearised about the final "
                                   "state where it is nonlinear), longest first",
                            id="res-time-constants", note=note)


def _extras(result) -> list:
    blocks = []
    lf = result.liquid_fraction
    if lf.shape[1]:
        frame = pd.DataFrame({"node": lf.columns, "start [-]": lf.iloc[0].to_numpy(),
                              "end [-]": lf.iloc[-1].to_numpy(), "min [-]": lf.min().to_numpy(),
                              "max [-]": lf.max().to_numpy()})
        blocks.append(table_from_frame(frame, "Phase change: liquid fraction", id="res-phase"))
    if len(result.thermostats):
        blocks.append(table_from_frame(result.thermostats, "Thermostats", id="res-thermostats"))
    if result.period:
        try:
            per = result.periodic_response()
        except Exception:   # noqa: BLE001 - a run too short for it simply has no such table
            per = None
        if per is not None:
            per = per.drop(columns=["swing [K]", "decrement [-]"], errors="ignore")  # aliases
            per = per.rename(columns={"peak [s]": "peak [h]", "lag [s]": "lag [h]"})
            per[["peak [h]", "lag [h]"]] /= 3600.0
            blocks.append(table_from_frame(
                per, f"Periodic regime over the last period; lag and amplitude ratio against "
                     f"{per.attrs.get('reference', 'the reference boundary')}",
                id="res-periodic", index="node"))
    return blocks


def build_run_report(scenario, result, *, warnings=None, figures: bool = True,
                     expand_layers: bool = False, title: str | None = None) -> Report:
    """The report of a run of ``scenario`` that gave ``result``.

    ``warnings``: what the load and the run warned about (strings or the records of
    ``warnings.catch_warnings(record=True)``); ``figures=False`` leaves out the run's figures;
    ``expand_layers`` draws every slice of a sliced layer in the network picture.
    """
    span = float(result.time[-1] - result.time[0]) if result.time.size else 0.0
    unit, size = time_unit(span)
    name = getattr(scenario, "name", "") or "scenario"
    heading = title or getattr(scenario, "title", "") or result.meta.get("title", "") or name
    glance = [("scenario", name),
              ("simulated", f"{number_text(span / size, 4)} {unit}, output every "
                            f"{number_text(float(result.meta.get('step', 0) or 0), 4)} s"
                            if result.meta.get("step") else f"{number_text(span / size, 4)} {unit}"),
              ("initial state", str(result.meta.get("initial", "given")))]
    if result.start_time is not None:
        glance.append(("clock start", result.start_time.isoformat()))
    glance += [("limits", s) for s in limit_sentences(result)]
    glance += [("energy balance", "relative closure error "
                                  f"{number_text(result.energy_balance_error, 3)}"),
               ("solver", result.solver)]
    results = Section("results", "Results", _nodes_tables(result, scenario))
    for block in (_limits_table(result, unit, size), _energy_table(result),
                  _time_constants_table(result)):
        if block is not None:
            results.blocks.append(block)
    results.blocks.extend(_extras(result))
    sections = [results]
    if figures:
        from .figures import run_figures

        sections.append(Section("figures", "Figures", run_figures(result)))
    sections += [network_section(scenario, expand_layers), inputs_section(scenario, span)]
    stats = stats_items(result.stats)
    sections.append(Section("solver", "Solver", [
        facts([("path", result.solver)] + [("samples", str(result.time.size))] + stats)]))
    text = result.scenario or getattr(scenario, "text", "")
    extra = [("solver", result.solver)]
    if result.meta.get("created"):
        extra.append(("run finished", str(result.meta["created"])))
    return Report("run", heading, f"Simulation report \u00b7 {name}", purpose_of(scenario),
                  glance, sections, warning_texts(list(warnings or []) + result.warnings),
                  provenance_items(text, name, extra), text)
