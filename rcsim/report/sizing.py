"""The report of a sizing: the answer, the margin to each requirement, the values tried, the figure.

Built from a :class:`rcsim.sizing.SizingResult` through its attributes only (values, requirements,
achieved values and margins, the candidates tried, the runs table, the sized scenario), so the
page shows exactly what the result holds. Hold times and times out of the band are shown in hours
(``[h]`` in the header); temperatures in degC, temperature margins in K; the value sized in SI
units beside the text written into the sized scenario.
"""

from __future__ import annotations

import math

import pandas as pd

from .common import (inputs_section, network_section, provenance_items, purpose_of,
                     sha256_of, warning_texts)
from .formatting import number_text, table_from_frame
from .model import Paragraph, Preformatted, Report, Section

__all__ = ["build_sizing_report", "SIZING_CAUTION", "output_in_report"]

SIZING_CAUTION = ("A sized value is only as good as the model and its inputs: the margin shown is "
                  "the model's, and what the model leaves out needs a margin of its own.")
_TIMES = ("hold_time", "time_out")


def output_in_report(output: str) -> tuple[float, str]:
    """(factor from the result's value to the value shown, unit shown) of an output.

    >>> output_in_report("hold_time.payload"), output_in_report("max.payload")
    ((0.0002777777777777778, 'h'), (1.0, 'degC'))
    """
    return (1.0 / 3600.0, "h") if output.split(".", 1)[0] in _TIMES else (1.0, "degC")


def _margin_unit(output: str) -> str:
    return "h" if output.split(".", 1)[0] in _TIMES else "K"


def _si_unit(res, key: str) -> str:
    return (getattr(res.runs, "attrs", None) or {}).get("units", {}).get(key, "")


def _outputs(res) -> list[str]:
    return list(dict.fromkeys(r.output for r in res.requirements))


def _answer_table(res):
    rows = []
    for i, (key, value) in enumerate(res.values.items()):
        unit = _si_unit(res, key)
        rows.append({"key": key, "unit (SI)": unit, "answer": float(value),
                     "written into the sized scenario": res.value_texts[key],
                     "values from the answer": res.direction,
                     "nearest value tried that fails": float(res.bracket[0]) if i == 0
                     else math.nan})
    return table_from_frame(pd.DataFrame(rows), "The answer", id="sizing-answer",
                            missing={"nearest value tried that fails": ""},
                            note="Values in SI units (degC for temperatures). Every requirement "
                                 "is met at the answer" + (" in the share of draws asked for"
                                                           if res.confidence else "") + ".")


def _requirements_table(res):
    rows = []
    for r in res.requirements:
        factor, unit = output_in_report(r.output)
        rows.append({"requirement": r.text, "output": r.output, "unit": unit,
                     "required": r.target * factor,
                     "achieved at the answer": res.achieved[r.output] * factor,
                     f"margin [{_margin_unit(r.output)}]": res.margin[r.output] * factor
                     if r.output in res.margin else math.nan})
    frame = pd.DataFrame(rows)
    margins = [c for c in frame.columns if c.startswith("margin")]
    beyond = {c: "beyond the run" for c in margins}
    beyond["achieved at the answer"] = "beyond the run"
    word = ("the output met by the required share of the draws" if res.confidence
            else "the output of the run")
    return table_from_frame(frame, "Requirements, what the answer achieves and its margin",
                            id="sizing-requirements", missing=beyond,
                            note=f"Achieved: {word} at the answer. Margin: how far it is inside "
                                 "the requirement (the smallest, when an output is required "
                                 "twice). A hold time beyond the run is not reached within it.")


def _evaluations_table(res):
    """Every value tried, in order of value: each required output, met or not."""
    outs = _outputs(res)
    first = {o: next(i for i, r in enumerate(res.requirements) if r.output == o) for o in outs}
    cands = sorted(res.candidates, key=lambda c: c.x)
    unit = _si_unit(res, res.key)
    data = {f"{res.key} [{unit}]" if unit else res.key: [float(c.values[0]) for c in cands]}
    for o in outs:
        factor, shown = output_in_report(o)
        data[f"{o} [{shown}]"] = [float(c.achieved[first[o]]) * factor for c in cands]
    data["met"] = ["yes" if c.met else "no" for c in cands]
    if res.confidence is not None:
        data["share met [-]"] = [float(c.share) for c in cands]
    data["order tried"] = [int(c.index) + 1 for c in cands]
    frame = pd.DataFrame(data)
    missing = {c: "beyond the run" for c in frame.columns if c.startswith("hold_time.")}
    head = "The values tried, in order of value" + (
        " (outputs met by the required share of the draws)" if res.confidence else "")
    return table_from_frame(frame, head, id="sizing-evaluations", missing=missing,
                            note=f"{res.evaluations} values tried, {res.n_runs} runs.")


def _uncertain_blocks(res) -> list:
    if not res.uncertain:
        return []
    frame = pd.DataFrame({"key": list(res.uncertain), "distribution": list(res.uncertain.values())})
    lo, hi = res.share_interval
    share = pd.DataFrame([{"draws": int(res.samples), "seed": str(res.seed),
                           "share asked for [-]": float(res.confidence),
                           "share met at the answer [-]": float(res.share),
                           "95 % Wilson interval, low [-]": float(lo),
                           "95 % Wilson interval, high [-]": float(hi),
                           "failed runs": int(res.failed_runs)}])
    return [table_from_frame(frame, "Uncertain inputs (drawn once, the same draws at every value "
                                    "tried)", id="sizing-uncertain"),
            table_from_frame(share, "Share of the draws meeting every requirement at the answer",
                             id="sizing-share")]


def _runs_table(res, max_rows: int):
    runs = res.runs
    columns = [c for c in runs.columns if c != "error"]
    frame = runs[columns].iloc[:max_rows].copy()
    if "met" in frame.columns:
        frame["met"] = frame["met"].map({True: "yes", False: "no"})
    frame.columns = [f"{c} [{_si_unit(res, c)}]" if _si_unit(res, c) else c for c in columns]
    if "error" in runs.columns:
        frame["error"] = runs["error"].iloc[:max_rows].fillna("").astype(str).to_numpy()
    note = (f"The first {max_rows} of {len(runs)} runs; `rcsim size -o` writes them all."
            if len(runs) > max_rows else "")
    return table_from_frame(frame, "Every run made (SI units, degC for temperatures; hold and out "
                                   "times in s; empty: never left the band)",
                            id="sizing-runs", index="run", note=note,
                            missing={c: "" for c in frame.columns})


def _glance(res) -> list[tuple[str, str]]:
    sc = res.scenario
    items = [("scenario", sc.name),
             ("required", "; ".join(r.text for r in res.requirements)
              + (f", in {number_text(100 * res.confidence, 4)} % of the draws"
                 if res.confidence else ""))]
    items += [("answer", f"{key} = {text} ({res.direction})")
              for key, text in res.value_texts.items()]
    for out, text in res.achieved_text.items():
        items.append((f"achieved: {out}", f"{text} (margin {res.margin_text[out]})"))
    if res.confidence is not None:
        lo, hi = res.share_interval
        items.append(("share of draws meeting it", f"{number_text(100 * res.share, 4)} % "
                      f"(95 % Wilson interval {number_text(100 * lo, 3)}.."
                      f"{number_text(100 * hi, 3)} %)"))
    items += [("cost", f"{res.evaluations} values tried, {res.n_runs} runs, "
                       f"{number_text(res.wall_time, 3)} s"),
              ("run length", f"{number_text(res.duration / 3600.0, 4)} h")]
    return items


def build_sizing_report(res, scenario=None, *, warnings=None, title: str | None = None,
                        figures: bool = True, max_rows: int = 500) -> Report:
    """The report of ``res`` (a :class:`rcsim.SizingResult`).

    ``scenario``: the scenario as it was sized (default: the result's own); ``warnings``: further
    warnings of the command (the result's own are always listed); at most ``max_rows`` runs are
    listed.
    """
    base = scenario if scenario is not None else res.scenario
    name = getattr(base, "name", "") or "scenario"
    heading = title or getattr(base, "title", "") or name
    results = [_answer_table(res), _requirements_table(res), _evaluations_table(res)]
    results += _uncertain_blocks(res)
    if res.notes:
        results.append(Paragraph("What the search did: " + "; ".join(res.notes) + "."))
    sections = [Section("results", "Results", results)]
    if figures:
        from .figures import figure_of

        drawn = res.plot()
        sections.append(Section("figures", "Figures", [figure_of(
            drawn["figure"], "fig-sizing", "Each required output against the value sized: the "
            "values tried (points), the requirement (dashed) and the answer (the vertical line "
            "and the ring).")]))
    sections.append(Section("runs", "The runs", [_runs_table(res, max_rows)]))
    sized = res.sized_scenario
    sections += [network_section(sized), inputs_section(
        sized, res.duration, intro="The sized scenario: the scenario's inputs with the answer "
                                   "written in.")]
    toml = res.to_toml()
    sections.append(Section("sized-scenario", "The sized scenario", [
        Paragraph("The scenario with the answer written in, as `rcsim size --write-scenario` "
                  "writes it."), Preformatted(toml, "", "sized-toml")]))
    text = getattr(base, "text", "") or ""
    extra = [("sized scenario SHA-256", sha256_of(toml))]
    if res.seed is not None:
        extra.append(("seed", str(res.seed)))
    keys = ", ".join(res.values)
    report = Report("sizing", heading, f"Sizing report \u00b7 {name}: {keys}", purpose_of(base),
                    _glance(res), sections,
                    warning_texts(list(res.warnings) + list(warnings or [])),
                    provenance_items(text, name, extra), text)
    report.extra_caution = SIZING_CAUTION
    return report
