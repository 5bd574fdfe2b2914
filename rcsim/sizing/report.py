"""The text of a sizing (what ``rcsim size`` prints): the answer, the margin, the values tried.

Nothing here prints; :func:`format_report` returns the text.
"""

from __future__ import annotations

import math

from .requirement import format_output

#: The caution printed with every sizing.
CAUTION = ("caution: sizing supports, and never replaces, qualification testing, local codes and "
           "licensed professional judgement; the answer is only as good as the model and its "
           "inputs.")

__all__ = ["format_report", "evaluations_lines"]


def _where(executor: dict) -> str:
    name = (executor or {}).get("name", "serial")
    if name == "serial":
        return "in this process"
    if name == "processes":
        return f"{executor.get('workers')} local process(es)"
    return f"Dask at {executor['scheduler']}" if executor.get("scheduler") else \
        f"a local Dask cluster of {executor.get('workers')} worker(s)"


def format_report(res) -> str:
    """The text printed by ``rcsim size`` for a :class:`~rcsim.sizing.result.SizingResult`."""
    sc = res.scenario
    title = f' "{sc.title}"' if sc.title else ""
    lines = [f"{sc.name}{title}: sizing {', '.join(res.values)}"]
    lines.append("  required: " + "; ".join(r.text for r in res.requirements)
                 + (f", in {100 * res.confidence:g} % of the draws" if res.confidence else ""))
    sized = res.sized
    for i, key in enumerate(res.values):
        lines.append(f"  searched: {key} over {sized.describe(i)}"
                     + (f" (tolerance {sized.format(0, res.tolerance, digits=3)})"
                        if i == 0 and res.tolerance else ""))
    if res.uncertain:
        lines.append(f"  uncertain: {res.samples} draws (seed {res.seed}) of")
        width = max(len(k) for k in res.uncertain)
        lines += [f"    {k:<{width}}  {d}" for k, d in res.uncertain.items()]
    lines.append("")
    for key, text in res.value_texts.items():
        lines.append(f"  answer: {key} = {text} ({res.direction})")
    other = sized.format(0, res.bracket[0])
    lines.append(f"    the nearest value tried that does not meet it: {other}")
    for out, text in res.achieved_text.items():
        word = "met by the required share of draws" if res.confidence else "achieved"
        lines.append(f"  {word}: {out} = {text} (margin {res.margin_text[out]})")
    if res.confidence is not None:
        lo, hi = res.share_interval
        n_met = round(res.share * res.samples)
        lines.append(f"  share of draws meeting every requirement at the answer: "
                     f"{100 * res.share:.1f} % ({n_met} of {res.samples}; 95 % Wilson interval "
                     f"{100 * lo:.1f}..{100 * hi:.1f} %)")
    lines.append(f"  cost: {res.evaluations} values tried, {res.n_runs} runs, "
                 f"{_where(res.executor)}, {res.wall_time:.3g} s")
    for note in res.notes:
        lines.append(f"  note: {note}")
    if res.warnings:
        lines.append(f"  {len(res.warnings)} warning(s): see the lines starting with 'warning:'")
    lines.append("")
    lines += evaluations_lines(res)
    lines.append("")
    lines.append(CAUTION)
    return "\n".join(lines)


def evaluations_lines(res) -> list[str]:
    """The values tried, in order of value: each requirement's output, and met or not."""
    sized = res.sized
    cands = sorted(res.candidates, key=lambda c: c.x)
    outs = list(dict.fromkeys(r.output for r in res.requirements))
    first = {o: next(i for i, r in enumerate(res.requirements) if r.output == o) for o in outs}
    head = f"{sized.key} [{sized.units[0][1]}]" if sized.units[0][1] else sized.key
    values = [sized.format(0, c.values[0]).rsplit(" ", 1)[0] if sized.units[0][1]
              else sized.format(0, c.values[0]) for c in cands]
    width = max([len(head)] + [len(v) for v in values]) + 2
    cols = [max(len(o), 12) + 2 for o in outs]
    extra = "     share met" if res.confidence else ""
    title = "  values tried" + (" (outputs met by the required share of draws)"
                                if res.confidence else "")
    lines = [title, "    " + f"{head:<{width}}" + "".join(f"{o:>{w}}" for o, w in zip(outs, cols))
             + "   met" + extra]
    for c, v in zip(cands, values):
        cells = "".join(f"{format_output(o, c.achieved[first[o]], res.duration):>{w}}"
                        for o, w in zip(outs, cols))
        share = f"{100 * c.share:13.1f} %" if res.confidence else ""
        mark = "  <- answer" if c.x == _answer_x(res) else ""
        lines.append(f"    {v:<{width}}{cells}   {'yes' if c.met else 'no ':<3}{share}{mark}")
    return lines


def _answer_x(res) -> float:
    for c in res.candidates:
        if math.isclose(float(c.values[0]), res.value, rel_tol=0, abs_tol=0):
            return c.x
    return math.nan
