"""What a sizing found (:class:`SizingResult`), and writing it: the sized scenario as TOML (the
user's own text with the sized value changed, comments kept), the evaluations as a table.

The sized scenario is written with :func:`rcsim.tomlwrite.update`: the scenario's text is edited
in place (comments, key order and layout kept), a comment header says what was required and
found, and the text is read back and checked before it is written (under a temporary name,
renamed when complete). The value written is the answer rounded *towards the side that meets the
requirement*, to a power of ten no coarser than the tolerance, in the unit the scenario used.
"""

from __future__ import annotations

import copy
import math
from dataclasses import dataclass, field

import pandas as pd

from ..errors import SolverError
from ..scenario import Scenario
from ..units import to_si
from .report import CAUTION, format_report
from .requirement import format_output

__all__ = ["SizingResult", "HEADER_FIRST", "HEADER_LAST", "CAUTION"]

#: First words of the comment header of a sized scenario, and its last line.
HEADER_FIRST = "# Sized by rcsim for "
HEADER_LAST = ("# Sizing supports, and never replaces, qualification testing and professional "
               "judgement.")


@dataclass
class SizingResult:
    """What a sizing found.

    Attributes
    ----------
    value : float
        The sized value of the (first) key, SI (degC for temperatures). Every requirement is met
        there (at the confidence asked for, with uncertain inputs).
    value_text : str
        The same in the unit the range or the scenario used, rounded towards the side that meets
        the requirements (``"78.44 mm"``); this is what :meth:`write_scenario` writes.
    key : str
        The key sized (the first, when several move in step).
    values, value_texts : dict
        ``{key: SI value}`` and ``{key: text}`` for every key sized.
    direction : {"at least", "at most"}
        Values from the answer up (or down) meet the requirements.
    requirements : list of Requirement
    achieved : dict
        ``{output: value}`` at the answer (degC, or s; NaN for a hold time beyond the run). With
        uncertain inputs: the value that the required share of the draws meet (the M-th best).
    margin : dict
        ``{output: how far the achieved value is inside the requirement}`` (K or s; the smallest
        if an output is required twice). NaN when a hold time went beyond the run.
    runs : DataFrame
        Every run made (see :meth:`rcsim.sizing.evaluate.Evaluator.table`).
    warnings : list of str
        Also issued as warnings.
    notes : list of str
        What the search did that a reader should know (runs lengthened, ...).
    bracket : tuple of float
        (the nearest value run that does not meet the requirements, the answer), first key, SI.
    tolerance : float or None
        Of the search, first key, SI (None for choices).
    evaluations, n_runs : int
        Values tried, and runs made (values x draws).
    duration : float
        Length of each run [s].
    confidence, samples, seed, share, share_interval
        With uncertain inputs: the share of draws asked for, the draws, their seed, the share of
        draws meeting every requirement at the answer, and its 95 % Wilson interval.
    failed_runs : int
        Runs that failed (draws only; a failed run without draws stops the sizing).
    """

    value: float
    value_text: str
    key: str
    values: dict
    value_texts: dict
    direction: str
    requirements: list
    achieved: dict
    margin: dict
    runs: pd.DataFrame
    warnings: list
    notes: list
    bracket: tuple
    tolerance: float | None
    evaluations: int
    n_runs: int
    duration: float
    scenario: Scenario
    discrete: bool = False
    candidates: list = field(default_factory=list, repr=False)
    sized: object = field(default=None, repr=False)
    uncertain: dict = field(default_factory=dict)
    confidence: float | None = None
    samples: int = 0
    seed: int | None = None
    share: float | None = None
    share_interval: tuple | None = None
    failed_runs: int = 0
    executor: dict = field(default_factory=dict)
    wall_time: float = 0.0
    written: dict = field(default_factory=dict, repr=False)

    @property
    def achieved_text(self) -> dict:
        """``{output: "72.01 h"}``."""
        return {o: format_output(o, v, self.duration) for o, v in self.achieved.items()}

    @property
    def margin_text(self) -> dict:
        """``{output: "36 s"}`` (K for temperatures)."""
        out = {}
        for o, v in self.margin.items():
            if isinstance(v, float) and math.isnan(v):
                out[o] = "beyond the run"
            elif o.split(".", 1)[0] in ("hold_time", "time_outside_band", "time_out"):
                out[o] = format_output(o, v)
            else:
                out[o] = f"{v:.3g} K"
        return out

    @property
    def sized_scenario(self) -> Scenario:
        """The scenario with the sized value(s) written in (as :meth:`write_scenario` writes
        them)."""
        return self.scenario.with_values(self.written)

    def report(self) -> str:
        """The text ``rcsim size`` prints (see :func:`rcsim.sizing.report.format_report`)."""
        return format_report(self)

    def report_html(self, path=None, **options):
        """A self-contained HTML report of the sizing (see :mod:`rcsim.report`): the answer, the
        margins, the values tried, the figure, warnings, caution and provenance; written to
        ``path`` (.html; the path is returned), or its text when ``path`` is None. (:meth:`report`
        is the printed text.) ``options`` go to :func:`rcsim.report.build_sizing_report`
        (``warnings``, ``figures``, ``title``, ``max_rows``).
        """
        from ..report.dispatch import report_page  # the report sits beside sizing; hand-off

        return report_page(self, path, **options)

    def write_runs(self, path) -> str:
        """Write :attr:`runs` (.csv, .h5 or .parquet, as a sweep table), atomically."""
        from ..sweep.tables import write_table

        return write_table(self.runs, path)

    def plot(self, **kwargs):
        """The outputs against the value sized (see :func:`rcsim.sizing.figures.plot_sizing`)."""
        from .figures import plot_sizing

        return plot_sizing(self, **kwargs)

    def _header(self) -> str:
        req = "; ".join(r.text for r in self.requirements)
        lines = [f"{HEADER_FIRST}{req}"]
        if self.confidence is not None:
            lo, hi = self.share_interval
            lines.append(f"# in {100 * self.confidence:g} % of {self.samples} draws (seed "
                         f"{self.seed}; met in {100 * self.share:.1f} %, 95 % Wilson interval "
                         f"{100 * lo:.1f}..{100 * hi:.1f} %) of:")
            lines += [f"#   {k} {d}" for k, d in self.uncertain.items()]
        for k, text in self.value_texts.items():
            lines.append(f"#   {k} = {text} ({self.direction}; searched "
                         f"{self.sized.describe(list(self.values).index(k))})")
        for o, text in self.achieved_text.items():
            lines.append(f"#   {o}: {text} (margin {self.margin_text[o]})")
        for w in self.warnings:
            lines.append(f"# warning: {w}")
        lines.append(HEADER_LAST)
        return "\n".join(lines)

    def to_toml(self) -> str:
        """The sized scenario as TOML text: the scenario's own text with the sized values
        changed in place and a comment header (a header of an earlier sizing is replaced)."""
        return self._text(self._data())

    def _data(self) -> dict:
        data = copy.deepcopy(self.scenario.data)
        from ..scenario import set_value

        for k, v in self.written.items():
            set_value(data, k, v, self.scenario.name)
        return data

    def _text(self, data) -> str:
        from ..tomlwrite import dumps, update

        body = without_header(self.scenario.text or "")
        text = None
        if body.strip():
            try:
                text = update(body, data)
            except ValueError:
                text = None
        if text is None:
            text = dumps(data)
        newline = "\r\n" if "\r\n" in text else "\n"
        return self._header().replace("\n", newline) + newline + newline + text

    def write_scenario(self, path) -> str:
        """Write the sized scenario to ``path`` (TOML), checked by reading it back.

        The files it names are written relative to the new folder; one that would lie outside
        it is copied beside it (:func:`rcsim.tomlwrite.write_scenario`), so the written file
        reads back with no option. Returns the path (a :class:`rcsim.tomlwrite.Written`, whose
        ``copied`` lists the copies).
        """
        from ..tomlwrite import write_scenario

        def check(back):
            for k, kind in zip(self.sized.keys, self.sized.kinds):
                got = to_si(back.value(k), kind, k)
                want = to_si(self.written[k], kind, k)
                if not math.isclose(got, want, rel_tol=1e-9, abs_tol=1e-12):  # pragma: no cover
                    raise SolverError(f"the written scenario reads back {k} = {got!r}, not "
                                      f"{want!r}")

        return write_scenario(path, self._data(), self.scenario.base_dir, self._text, check)


def without_header(text: str) -> str:
    """``text`` without the comment header a sizing put at its top (so a resizing has one)."""
    lines = text.splitlines(keepends=True)
    if not lines or not lines[0].startswith(HEADER_FIRST):
        return text
    for i, line in enumerate(lines):
        if not line.startswith("#"):
            return text  # not a header of ours: keep every line
        if line.rstrip("\r\n") == HEADER_LAST:
            rest = lines[i + 1:]
            while rest and not rest[0].strip():
                rest = rest[1:]
            return "".join(rest)
    return text
