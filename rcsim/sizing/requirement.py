"""What a sized design must achieve: ``"hold_time.payload >= 72 h"`` as a typed requirement.

A requirement names an output of a sweep table (see :mod:`rcsim.sweep`), a comparison and a
value with units:

* ``min.<node> >= 18 degC``, ``max.<node> <= 85 degC``: the lowest / highest temperature of a
  node over the run [degC];
* ``hold_time.<node> >= 72 h``: the first time the node leaves its band (its ``[limits]``) on
  either side [s]; a node that never leaves it within the run has a hold time longer than the run
  (the table's NaN);
* ``time_out.<node> <= 30 min``: the total time the node spends outside its band [s].

``>=`` and ``<=`` (or ``≥``, ``≤``; ``>`` and ``<`` read the same: on computed values the
difference has no meaning). The *slack* of a run is how far it meets the requirement:
``output - value`` for ``>=``, ``value - output`` for ``<=``, in the output's unit (K or s); the
run meets it when the slack is zero or more. A hold time beyond the run is known only to be
longer than the run: its slack is taken at that bound (``duration - value`` for ``>=``), which
has the right sign whenever the run is at least as long as the value asked for.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

import numpy as np

from ..base import suggest
from ..errors import InputError
from ..units import format_duration, to_si
from ..sweep.worker import OUTPUT_PREFIXES

__all__ = ["Requirement", "parse_requirement", "parse_requirements", "format_output",
           "OUTPUT_WORDS"]

#: What each output prefix means, for messages.
OUTPUT_WORDS = {"min": "lowest temperature", "max": "highest temperature",
                "hold_time": "hold time", "time_out": "time out of band"}

_PATTERN = re.compile(r"^\s*(?P<output>[^\s<>=≥≤!]+)\s*(?P<op>>=|<=|≥|≤|=>|=<|==|=|>|<|!=)"
                      r"\s*(?P<value>.+?)\s*$")
_OPS = {">=": ">=", "≥": ">=", ">": ">=", "=>": ">=", "<=": "<=", "≤": "<=", "<": "<=",
        "=<": "<="}


@dataclass(frozen=True)
class Requirement:
    """One requirement on one output.

    Attributes
    ----------
    text : str
        As written, e.g. ``"hold_time.payload >= 72 h"``.
    output : str
        The output column, e.g. ``"hold_time.payload"``.
    prefix, node : str
        ``"hold_time"`` and ``"payload"``.
    op : {">=", "<="}
    target : float
        The value, SI: degC for ``min``/``max``, s for ``hold_time``/``time_out``.
    """

    text: str
    output: str
    prefix: str
    node: str
    op: str
    target: float

    @property
    def is_time(self) -> bool:
        """Whether the output is a time [s] (else a temperature [degC])."""
        return self.prefix in ("hold_time", "time_out")

    @property
    def scale(self) -> float:
        """A natural size of this requirement's slack, to put several on one footing: 1 K for
        temperatures, the value asked for (at least 1 min) for times."""
        return max(abs(self.target), 60.0) if self.is_time else 1.0

    def slack(self, values, duration) -> np.ndarray:
        """Slack of each run [K or s]: positive or zero where the requirement is met.

        ``values`` are the output of the runs (NaN for a hold time not reached within the run,
        whose slack is taken at the bound ``duration``); ``duration`` is the run length [s].
        """
        v = np.asarray(values, dtype=float)
        if self.prefix == "hold_time":
            beyond = np.isnan(v)
            v = np.where(beyond, duration, v)
        s = v - self.target if self.op == ">=" else self.target - v
        if self.prefix == "hold_time":
            # beyond the run: strictly longer than it, so a bound equal to the target still meets
            # a ">=" (and still fails a "<=")
            tiny = 1e-9 * self.scale
            s = np.where(beyond, np.maximum(s, tiny) if self.op == ">=" else
                         np.minimum(s, -tiny), s)
        return s

    def met(self, values, duration) -> np.ndarray:
        """Whether each run meets the requirement."""
        return self.slack(values, duration) >= 0.0

    def describe_value(self, value, duration=None) -> str:
        """An output value in words with its unit (``"71.8 h"``, ``"> 108 h"``, ``"6.53 degC"``)."""
        return format_output(self.output, value, duration)

    def describe_target(self) -> str:
        """``">= 72 h"``."""
        return f"{self.op} {format_output(self.output, self.target)}"


def format_output(output: str, value, duration=None) -> str:
    """An output value with its unit: times in s, min, h or d; temperatures in degC; a hold time
    not reached within a run of ``duration`` as ``"> 72 h"``."""
    prefix = output.split(".", 1)[0]
    if value is None or (isinstance(value, float) and math.isnan(value)):
        if prefix == "hold_time" and duration:
            return f"> {format_duration(duration)}"
        return "-"
    if prefix in ("hold_time", "time_out"):
        return format_duration(float(value))
    return f"{float(value):.4g} degC"


def parse_requirement(text, nodes, limit_nodes, where="require") -> Requirement:
    """Read one requirement and check its output against the scenario.

    Parameters
    ----------
    text : str
        ``"<prefix>.<node> <op> <value with units>"``.
    nodes : list of str
        The scenario's nodes (``min``/``max`` may name any of them).
    limit_nodes : list of str
        Nodes with a ``[limits]`` entry (``hold_time``/``time_out`` need one).

    Raises
    ------
    InputError
        One line naming the requirement: unreadable text, an unknown output or node (with the
        nearest valid name), a hold time of a node without limits, a value of the wrong kind.
    """
    if not isinstance(text, str) or not text.strip():
        raise InputError("empty requirement", where,
                         "write e.g. 'hold_time.payload >= 72 h' or 'max.module <= 85 degC'")
    here = f"{where} {text.strip()!r}"
    m = _PATTERN.match(text)
    if not m:
        raise InputError("cannot read this requirement", here,
                         "write OUTPUT >= VALUE or OUTPUT <= VALUE, "
                         "e.g. 'hold_time.payload >= 72 h'")
    output, op, value = m.group("output"), m.group("op"), m.group("value")
    if op not in _OPS:
        raise InputError(f"the comparison {op!r} cannot be sized for", here,
                         "use >= (at least) or <= (at most)")
    prefix, dot, node = output.partition(".")
    if not dot or not node:
        raise InputError(f"the output {output!r} names no node", here,
                         f"write <output>.<node> with output one of {', '.join(OUTPUT_PREFIXES)}")
    if prefix not in OUTPUT_PREFIXES:
        raise InputError(f"unknown output {prefix!r}", here, suggest(prefix, OUTPUT_PREFIXES))
    if node not in nodes:
        raise InputError(f"unknown node {node!r}", here, suggest(node, nodes))
    if prefix in ("hold_time", "time_out") and node not in limit_nodes:
        raise InputError(f"node {node!r} has no limits, so it has no {OUTPUT_WORDS[prefix]}", here,
                         f"add [limits.{node}] with min and/or max, or require min.{node} / "
                         f"max.{node}")
    kind = "time" if prefix in ("hold_time", "time_out") else "temperature"
    try:
        number = float(value)
    except ValueError:
        number = None
    target = to_si(value if number is None else number, kind, here)
    if not math.isfinite(target):
        raise InputError(f"the value {value!r} is not a finite number", here)
    if kind == "time" and target < 0:
        raise InputError(f"a time cannot be negative ({value!r})", here)
    return Requirement(text.strip(), output, prefix, node, _OPS[op], float(target))


def parse_requirements(require, nodes, limit_nodes) -> list[Requirement]:
    """``require`` (a text or a list of texts; all must hold) as requirements, each checked."""
    if isinstance(require, (str, Requirement)):
        require = [require]
    if require is None or not len(require):
        raise InputError("nothing is required", "require",
                         "give e.g. require='hold_time.payload >= 72 h'")
    out = []
    for i, item in enumerate(require):
        if isinstance(item, Requirement):
            out.append(item)
            continue
        out.append(parse_requirement(item, nodes, limit_nodes,
                                     "require" if len(require) == 1 else f"require[{i}]"))
    return out
