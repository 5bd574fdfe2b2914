"""A scenario as a fit candidate: the scenario and its own ``[fit]`` section, so that a candidate
structure is one file.

::

    [fit]
    free = ["nodes.water.capacity", "links.surface.resistance", "nodes.water.initial"]
    bounds = { "nodes.water.capacity" = ["0.5 kJ/K", "5 kJ/K"] }   # "" leaves a side open;
                                                   # or "0.5kJ/K..5kJ/K" as with --bound
    per_record = ["nodes.water.initial"]   # fitted once per log when several logs are fitted
    columns = { "temp" = "water" }         # log column -> node, boundary or source
    ignore = ["humidity"]                  # log columns left out
    sigma = "0.1 K"                        # or { temp = "0.1 K" }: measurement standard deviation
    noise = "process"                      # or "measurement" (the default)
    label = "water and mug"                # its name in a comparison (default: the file name)

Values given explicitly win over a section, in Python as on the command line: the keyword
arguments of :func:`rcsim.fit` or :func:`rcsim.fitting.compare` (for every candidate) and the
options of ``rcsim fit`` override what a section says (``given.over(spec)``); a section fills
in only what they leave unsaid. What they override is named: a :class:`FitWarning` in Python
(:func:`given_over`), a note printed by the command (both from :func:`overridden`).

The scenario reader accepts a ``[fit]`` table and checks its keys (:data:`rcsim.scenario.FIT_KEYS`,
an unknown one refused with the nearest valid key); its values are checked here. A candidate
file is read here: its ``[fit]`` table is taken out of the text (with :mod:`tomlkit`, which keeps
the rest of the text as written) and the rest is read by :func:`rcsim.loads`. A scenario loaded
with a ``fit`` table in its data (:func:`rcsim.load`) gives the same candidate.
"""

from __future__ import annotations

import os
import tomllib
from dataclasses import dataclass, field, replace

from ..errors import InputError, ScenarioError
from .notes import FitWarning
from ..parts import check_keys
from ..scenario import FIT_KEYS, Scenario, loads, read_text
from ..tomltext import explain as explain_toml_error

__all__ = ["FitSpec", "Candidate", "read_candidate", "fit_spec", "split_fit_section", "FIT_KEYS",
           "overridden", "given_over"]

NOISE_KINDS = ("measurement", "process")


@dataclass(frozen=True)
class FitSpec:
    """What a ``[fit]`` section (or the caller) says about fitting a scenario; None: not said."""

    free: tuple | None = None
    bounds: dict | None = None
    per_record: tuple | None = None
    columns: dict | None = None
    ignore: tuple | None = None
    sigma: object = None
    noise: str | None = None
    label: str | None = None

    def over(self, other: "FitSpec") -> "FitSpec":
        """This spec, with what it leaves unsaid taken from ``other``."""
        mine = {k: getattr(self, k) for k in self.__dataclass_fields__}
        return replace(other, **{k: v for k, v in mine.items() if v is not None})


@dataclass
class Candidate:
    """A scenario to fit, its ``[fit]`` spec, and its name in a comparison."""

    scenario: Scenario
    spec: FitSpec = field(default_factory=FitSpec)

    @property
    def label(self) -> str:
        return self.spec.label or self.scenario.name


def overridden(section: FitSpec, given: FitSpec) -> list:
    """The fields (in :class:`FitSpec` order) that ``given`` says differently from ``section``,
    a candidate's ``[fit]`` section: both say them and they differ. A value given that the
    section does not say, or says alike, overrides nothing."""
    return [name for name in FitSpec.__dataclass_fields__ if name != "label"
            and getattr(section, name) is not None and getattr(given, name) is not None
            and getattr(section, name) != getattr(given, name)]


def given_over(cand: "Candidate", given: FitSpec, stacklevel: int = 2) -> FitSpec:
    """The spec a candidate is fitted with: the values ``given`` by the caller, the rest from
    its ``[fit]`` section. What the caller overrides is named in one :class:`FitWarning`
    (``note: <scenario>: the arguments override its [fit] section's free (free=), ...``), as
    ``rcsim fit`` names the options that override it."""
    said = overridden(cand.spec, given)
    if said:
        import warnings

        warnings.warn(f"note: {cand.scenario.name}: the arguments override its [fit] section's "
                      + ", ".join(f"{name} ({name}=)" for name in said),
                      FitWarning, stacklevel=stacklevel + 1)
    return given.over(cand.spec)


def fit_spec(table, where: str) -> FitSpec:
    """Check a ``[fit]`` table and turn it into a :class:`FitSpec`.

    Raises
    ------
    InputError
        An unknown key (with the nearest valid one), or a value of the wrong form, naming
        ``<file>: fit.<key>``.
    """
    if table is None:
        return FitSpec()
    check_keys(table, FIT_KEYS, [], where)
    out = {}
    for key in ("free", "per_record", "ignore"):
        if key in table:
            value = table[key]
            if isinstance(value, str):
                value = [value]
            if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
                raise InputError("must be a list of key paths or column names", f"{where}.{key}")
            out[key] = tuple(value)
    if "bounds" in table:
        out["bounds"] = _bounds(table["bounds"], f"{where}.bounds")
    if "columns" in table:
        cols = table["columns"]
        if not isinstance(cols, dict) or not all(isinstance(v, str) for v in cols.values()):
            raise InputError("must map log columns to names, e.g. columns = { temp = \"water\" }",
                             f"{where}.columns")
        out["columns"] = dict(cols)
    if "sigma" in table:
        out["sigma"] = table["sigma"]
    if "noise" in table:
        if table["noise"] not in NOISE_KINDS:
            raise InputError(f"noise must be one of {', '.join(map(repr, NOISE_KINDS))}, got "
                             f"{table['noise']!r}", f"{where}.noise")
        out["noise"] = table["noise"]
    if "label" in table:
        if not isinstance(table["label"], str) or not table["label"].strip():
            raise InputError("label must be a non-empty string", f"{where}.label")
        out["label"] = table["label"].strip()
    return FitSpec(**out)


def _bounds(value, where) -> dict:
    from .parameters import parse_bound

    if not isinstance(value, dict):
        raise InputError("must be a table of key = [low, high]", where,
                         "write e.g. bounds = { \"nodes.box.capacity\" = [\"1 kJ/K\", \"\"] }")
    out = {}
    for key, pair in value.items():
        if isinstance(pair, str):
            _, lo, hi = parse_bound(f"{key}={pair}", f"{where}.{key}")
        elif isinstance(pair, list) and len(pair) == 2:
            lo, hi = (None if v in ("", None) else v for v in pair)
        else:
            raise InputError("a bound is [low, high] (\"\" for an open side) or \"LOW..HIGH\"",
                             f"{where}.{key}")
        out[key] = (lo, hi)
    return out


def split_fit_section(text: str, name: str) -> tuple[str, dict | None]:
    """``text`` without its top-level ``fit`` table, and that table (None if there is none).

    The rest of the text keeps its comments and layout (:mod:`tomlkit`); if tomlkit cannot take
    the table out, the rest is written anew from the data.
    """
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        message, line, hint = explain_toml_error(str(exc), text)
        raise ScenarioError(message, name if line is None else f"{name} line {line}",
                            hint) from None
    if "fit" not in data:
        return text, None
    table = data["fit"]
    if not isinstance(table, dict):
        raise ScenarioError("fit must be a table ([fit])", f"{name}: fit")
    rest = {k: v for k, v in data.items() if k != "fit"}
    try:
        import tomlkit

        from ..tomlwrite import same

        doc = tomlkit.parse(text)
        del doc["fit"]
        out = tomlkit.dumps(doc)
        if same(tomllib.loads(out), rest):
            return out, table
    except Exception:  # tomlkit raises several types on odd layouts; fall back below
        pass
    from ..tomlwrite import dumps

    return dumps(rest), table


def read_candidate(source, *, allow_absolute_paths: bool = False) -> Candidate:
    """A :class:`Candidate` from a scenario file (with or without a ``[fit]`` section), a
    :class:`rcsim.Scenario`, a ``(scenario, {fit table})`` pair, or a Candidate.

    Raises
    ------
    ScenarioError / InputError
        The file cannot be read, or its scenario or ``[fit]`` section is wrong (the message names
        the file and the key).
    """
    if isinstance(source, Candidate):
        return source
    if isinstance(source, tuple) and len(source) == 2 and isinstance(source[1], (dict, FitSpec)):
        cand = read_candidate(source[0], allow_absolute_paths=allow_absolute_paths)
        spec = source[1] if isinstance(source[1], FitSpec) else \
            fit_spec(source[1], f"{cand.scenario.name}: fit")
        return Candidate(cand.scenario, spec.over(cand.spec))
    if isinstance(source, Scenario):
        table = source.data.get("fit") if isinstance(source.data, dict) else None
        return Candidate(source, fit_spec(table, f"{source.name}: fit"))
    if not isinstance(source, (str, os.PathLike)):
        raise InputError(f"a candidate is a scenario or the path of a scenario file, got "
                         f"{type(source).__name__}", "candidates")
    path = os.fspath(source)
    name = os.path.basename(path) or path
    text = read_text(path)       # regular file, bounded size, nesting scanned before parsing
    rest, table = split_fit_section(text, name)
    spec = fit_spec(table, f"{name}: fit")
    sc = loads(rest, name=name, base_dir=os.path.dirname(os.path.abspath(path)), path=path,
               allow_absolute_paths=allow_absolute_paths)
    return Candidate(sc, spec)
