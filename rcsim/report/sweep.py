"""The report of a sweep: the design, percentiles of every output, sensitivity, the runs."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from ..sweep.tables import succeeded
from .common import (inputs_section, network_section, provenance_items, purpose_of,
                     warning_texts)
from .formatting import number_text, table_from_frame
from .model import Paragraph, Report, Section

__all__ = ["build_sweep_report", "SWEEP_CAUTION"]

SWEEP_CAUTION = ("The spread of a sweep is the spread of the inputs it was given, through this "
                 "model: it says nothing about the model's own error.")
_TIME_OUTPUTS = ("hold_time", "time_outside_band", "time_out")


def _ok(table) -> np.ndarray:
    """The runs statistics count: did not fail, energy balance closed."""
    from ..sweep.tables import trusted

    return trusted(table)


def _unit(table, column) -> str:
    return table.attrs.get("units", {}).get(column, "")


def _percentile_table(table, duration):
    from ..sweep import percentiles

    pct = percentiles(table)
    # a percentile among runs that never left the band is more than the run's duration: say
    # so in the cell ("> 24" in hours), never a bare infinity
    beyond = "> the run" if not duration else f"> {number_text(duration / 3600.0, 4)}"
    rows = []
    for output, r in pct.iterrows():
        is_time = output.split(".", 1)[0] in _TIME_OUTPUTS
        scale, unit = (1 / 3600.0, "h") if is_time else (1.0, _unit(table, output) or "degC")
        row = {"output": output, "unit": unit}
        for q in [c for c in pct.columns if c.endswith("%")]:
            v = float(r[q])
            row[q] = beyond if math.isinf(v) and v > 0 else v * scale
        row["runs"], row["never left the band"] = int(r["runs"]), int(r["never"])
        rows.append(row)
    frame = pd.DataFrame(rows)
    left_out = int(pct.attrs.get("open_balance", 0))
    open_note = (f" {left_out} run(s) with an open energy balance (column energy_balance above "
                 "1e-3) are left out here and from the shares and indices." if left_out else "")
    never = int(pct["never"].max()) if len(pct) else 0
    never_note = (f"{beyond} h: more than the run's duration; the node had not left its band "
                  "at that percentile (the runs that never left it rank above every finite "
                  "hold time)." if never else "")
    return table_from_frame(frame, "Percentiles of each output over the runs that did not fail "
                            "and whose energy balance closes",
                            id="sweep-percentiles", note=(never_note + open_note).strip())


def _shown_outputs(table) -> list[str]:
    outputs = [c for c in table.attrs.get("outputs", []) if c in table.columns]
    limited = set(table.attrs.get("limits", {}))
    chosen = [c for c in outputs if c.split(".", 1)[1] in limited] or outputs
    ok = _ok(table)
    out = []
    for c in chosen:
        y = table[c].to_numpy(dtype=float)[ok]
        y = y[np.isfinite(y)]
        if y.size > 1 and float(y.max() - y.min()) > 1e-9 * max(1.0, float(np.abs(y).max())):
            out.append(c)
    return out[:6]


def _figures(table, oat, target_hold) -> list:
    from ..plotting import plot_distribution, plot_scatter, plot_tornado
    from .figures import figure_of

    out = []
    for i, output in enumerate(_shown_outputs(table)):
        drawn = plot_distribution(table, output, target_hold=target_hold)
        out.append(figure_of(drawn["ax"].figure, f"fig-dist-{i}",
                             f"Distribution of {output} over the runs"))
        drawn = plot_scatter(table, output)
        if drawn["axes"]:
            out.append(figure_of(drawn["axes"][0].figure, f"fig-scatter-{i}",
                                 f"{output} against each input"))
        if oat is not None and (oat["output"] == output).any():
            drawn = plot_tornado(oat, output)
            out.append(figure_of(drawn["ax"].figure, f"fig-tornado-{i}",
                                 f"{output}: each input alone at the low and high end of its "
                                 f"range"))
    return out


def _runs_table(table, max_rows):
    columns = [c for c in table.columns if c != "error"]
    frame = table[columns].iloc[:max_rows].copy()
    # a hold time of a run that did not fail and never left the band: more than the run's
    # duration, said so in the cell (the table file keeps NaN there, see its "missing" note)
    duration = table.attrs.get("duration")
    never = f"> {number_text(float(duration), 6)}" if duration else "> the run"
    ran = succeeded(table)[:max_rows]
    for c in columns:
        if c.startswith("hold_time."):
            values = frame[c].to_numpy(dtype=float)
            frame[c] = [never if ok and np.isnan(v) else v for v, ok in zip(values, ran)]
    frame.columns = [f"{c} [{_unit(table, c)}]" if _unit(table, c) else c for c in columns]
    if "error" in table.columns:
        frame["error"] = table["error"].iloc[:max_rows].fillna("").astype(str).to_numpy()
    note = (f"The first {max_rows} of {len(table)} runs; the table file holds them all."
            if len(table) > max_rows else "")
    return table_from_frame(frame, "The runs (inputs in SI units, degC for temperatures; hold "
                                   f"and out times in s; {never}: never left the band within "
                                   "the run; empty: the run failed, see its error)",
                            id="sweep-runs", index="run", note=note,
                            missing={c: "" for c in frame.columns})


def _target_share(table, target_hold):
    ok = _ok(table)
    outs = [c for c in table.attrs.get("outputs", []) if c.startswith("hold_time.")]
    rows = []
    for c in outs:
        held = table[c].to_numpy(dtype=float)[ok]
        share = float(np.mean(np.isnan(held) | (held >= target_hold))) if held.size else math.nan
        rows.append({"output": c, "target [h]": target_hold / 3600.0, "share of runs [-]": share})
    return table_from_frame(pd.DataFrame(rows), "Share of the runs that hold at least the target",
                            id="sweep-target") if rows else None


def build_sweep_report(table, scenario=None, *, oat=None, target_hold=None, warnings=None,
                       title: str | None = None, figures: bool = True,
                       max_rows: int = 500) -> Report:
    """The report of a sweep ``table`` (from :func:`rcsim.sweep`).

    ``scenario``: the swept scenario (adds its inputs, its network picture, its text and hash);
    ``oat``: the one-at-a-time table (:func:`rcsim.sweep.one_at_a_time`) for the tornado;
    ``target_hold`` [s]: adds the share of runs holding that long; at most ``max_rows`` runs are
    listed.
    """
    attrs = table.attrs
    ok = _ok(table)
    name = getattr(scenario, "name", "") or attrs.get("scenario", "") or "scenario"
    heading = title or attrs.get("title", "") or getattr(scenario, "title", "") or name
    duration = attrs.get("duration")
    glance = [("scenario", name), ("runs", str(len(table))),
              ("failed runs", str(int((~succeeded(table)).sum()))),
              ("seed", "-" if attrs.get("seed") is None else str(attrs["seed"])),
              ("samples per grid point", str(attrs.get("samples", 0) or "-"))]
    left_out = int((succeeded(table) & ~ok).sum())
    if left_out:
        glance.append(("open energy balance", f"{left_out} runs, left out of every statistic "
                       "(column energy_balance above 1e-3)"))
    if duration:
        glance.append(("run duration", f"{number_text(float(duration) / 3600.0, 4)} h"))
    if attrs.get("interrupted"):
        glance.append(("interrupted", "yes: only the runs that finished are here"))
    design = pd.DataFrame({"key": list(attrs.get("design", {})),
                           "values": list(attrs.get("design", {}).values())})
    design["unit"] = [_unit(table, k) for k in design["key"]]
    results = [table_from_frame(design, "What was varied", id="sweep-design"),
               _percentile_table(table, duration)]
    if target_hold is not None:
        share = _target_share(table, float(target_hold))
        if share is not None:
            results.append(share)
    if attrs.get("samples") and ok.sum() >= 20:
        from ..sweep import first_order_indices

        try:
            sobol = first_order_indices(table)
        except Exception:   # noqa: BLE001 - too few runs for the estimate: left out
            sobol = None
        if sobol is not None and len(sobol):
            results.append(table_from_frame(
                sobol, "First-order (variance-based) sensitivity indices: the share of an "
                       "output's variance each input explains alone", id="sweep-sobol",
                index=sobol.index.name or "output"))
    if oat is not None and len(oat):
        results.append(table_from_frame(oat, "One at a time: each input at the low and high end "
                                             "of its range, the others as written",
                                        id="sweep-tornado"))
    sections = [Section("results", "Results", results)]
    if figures:
        sections.append(Section("figures", "Figures", _figures(table, oat, target_hold)))
    sections.append(Section("runs", "The runs", [_runs_table(table, max_rows)]))
    if scenario is not None:
        sections += [network_section(scenario), inputs_section(
            scenario, duration, intro="The swept scenario as written; the keys above vary.")]
    else:
        sections.append(Section("inputs", "Inputs", [Paragraph(
            "The scenario was not given to the report; its inputs are not listed.")]))
    text = getattr(scenario, "text", "") or ""
    report = Report("sweep", heading, f"Sweep report \u00b7 {name}", purpose_of(scenario),
                    glance, sections, warning_texts(warnings),
                    provenance_items(text, name, [("seed", "-" if attrs.get("seed") is None
                                                       else str(attrs["seed"]))]), text)
    report.extra_caution = SWEEP_CAUTION
    return report
