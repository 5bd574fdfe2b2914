"""Scenario files (TOML) to :class:`Scenario`: a network plus run settings and limits.

Every error names the file and the key path (``box.toml: links.wall.parts[1].conduction.thickness:
expected a length, got '3 kg'``). Unknown keys are refused with the nearest valid key suggested;
TOML syntax errors carry their line number; CSV paths are resolved from the scenario's folder.

Any value of the file can be addressed by its *key path* (``nodes.payload.capacity``,
``links.wall.parts[1].conduction.thickness``); :meth:`Scenario.with_values` returns a new scenario
with some values replaced, which is how sweeps and fits change a scenario.
"""

from __future__ import annotations

import copy
import math
import os
import re
import tomllib
import unicodedata
from dataclasses import dataclass, field
from typing import Any

from .base import suggest
from .errors import InputError, ProfileError, ScenarioError
from .inputfiles import check_regular_file, resolve_input
from .network import Network
from .outdoors import add_surfaces, csv_reader, read_outdoors, weather_profile
from .parts import check_keys
from .profiles import Constant, Profile, Repeat, Sine, Steps, Table
from .radiation_links import enclosures_from_scenario, radiation_from_scenario
from .thermostat import add_thermostats_from_scenario
from .tomlscan import check_nesting
from .tomltext import explain as explain_toml_error
from .transient.registry import check_solver
from .units import to_si

__all__ = ["Scenario", "Settings", "load", "loads", "parse_key_path", "format_key_path",
           "profile_from_spec", "FIT_KEYS", "in_file"]

_TOP = {"title", "description", "simulation", "nodes", "boundaries", "links", "sources", "limits",
        "thermostats", "radiation", "enclosures", "site", "weather", "surfaces", "fit"}
#: keys of the ``[fit]`` section: how ``rcsim fit`` fits this scenario (its free keys, bounds,
#: ...); read and checked in full by :mod:`rcsim.fitting.candidates`, its keys checked here
FIT_KEYS = {"free", "bounds", "per_record", "columns", "ignore", "sigma", "noise", "label"}
_SIM = {"duration", "step", "initial", "solver", "record", "start", "rtol", "atol"}
_NODE = {"capacity", "initial", "mass", "specific_heat", "material", "volume", "density",
         "phase_change", "freezes_at"}
_LINK = {"between", "resistance", "conductance", "parts", "area"}
_MAX_BYTES = 20_000_000


@dataclass
class Settings:
    """Run settings of a scenario ([simulation] table), SI values."""

    duration: float | None = None
    step: float | None = None
    initial: str = "given"
    solver: str = "auto"
    record: list[str] | None = None
    start: str | None = None
    rtol: float = 1e-6
    atol: float = 1e-6


@dataclass
class Scenario:
    """A loaded scenario.

    Attributes
    ----------
    network : rcsim.Network
    settings : Settings
    data : dict
        The parsed TOML document (key paths address it).
    text : str
        The source text.
    path : str or None
    title : str
    """

    network: Network
    settings: Settings
    data: dict
    text: str
    path: str | None = None
    title: str = ""
    base_dir: str = "."
    allow_absolute_paths: bool = False
    extras: dict = field(default_factory=dict)

    @property
    def name(self) -> str:
        return os.path.basename(self.path) if self.path else "<scenario>"

    def run(self, *, output=None, record=None, progress=None, solver=None, duration=None,
            step=None, initial=None):
        """Simulate with the scenario's settings (any of them may be overridden here)."""
        st = self.settings
        duration = st.duration if duration is None else duration
        step = st.step if step is None else step
        if duration is None or step is None:
            missing = "duration" if duration is None else "step"
            raise ScenarioError(f"missing key {missing!r}", f"{self.name}: simulation",
                                "add e.g. duration = '72 h' and step = '5 min'")
        try:
            return self.network.simulate(
                duration, step,
                initial=st.initial if initial is None else initial,
                solver=st.solver if solver is None else solver,
                record=st.record if record is None else record,
                output=output, rtol=st.rtol, atol=st.atol, progress=progress,
                start_time=st.start, scenario_text=self.text)
        except InputError as err:  # a run setting: name the file and the [simulation] key
            if err.where in _SIM:
                raise type(err)(err.message, f"{self.name}: simulation.{err.where}",
                                err.hint) from None
            raise in_file(err, self.name) from None

    def check_run(self, *, record=None, solver=None, duration=None, step=None, initial=None):
        """Every check :meth:`run` makes before it integrates (settings, inputs over the run,
        start, record, solver, a periodic start's inputs), without integrating; raises what
        :meth:`run` would raise for them. ``rcsim check`` calls it."""
        from .transient.driver import check_run

        st = self.settings
        duration = st.duration if duration is None else duration
        step = st.step if step is None else step
        if duration is None or step is None:
            return
        try:
            check_run(self.network, duration, step,
                      initial=st.initial if initial is None else initial,
                      solver=st.solver if solver is None else solver,
                      record=st.record if record is None else record,
                      rtol=st.rtol, atol=st.atol)
        except InputError as err:  # as in run(): name the file and the [simulation] key
            if err.where in _SIM:
                raise type(err)(err.message, f"{self.name}: simulation.{err.where}",
                                err.hint) from None
            raise in_file(err, self.name) from None

    def steady(self, at: float = 0.0):
        """The network's steady state (:meth:`rcsim.Network.steady`); errors name the file."""
        try:
            return self.network.steady(at=at)
        except InputError as err:
            raise in_file(err, self.name) from None

    def with_values(self, values: dict[str, Any]) -> "Scenario":
        """A new scenario with the values at the given key paths replaced.

        Values may be numbers (SI; degC for temperatures) or strings with units.
        """
        data = copy.deepcopy(self.data)
        for key, value in values.items():
            set_value(data, key, value, self.name)
        return build(data, self.text, self.path, self.base_dir, self.allow_absolute_paths)

    def value(self, key: str):
        """The raw value at a key path (as written in the file)."""
        return get_value(self.data, key, self.name)

    def si_value(self, key: str) -> float:
        """The value at a key path in SI (degC for temperatures)."""
        raw = self.value(key)
        kind = quantity_kind(parse_key_path(key, self.name))
        if kind is None:
            raise ScenarioError("this key does not hold a physical quantity", f"{self.name}: {key}")
        return to_si(raw, kind, f"{self.name}: {key}")


# -- key paths -------------------------------------------------------------------------------
_TOKEN = re.compile(r'([^.\[\]]+)|\[(\d+)\]')


def parse_key_path(key: str, name: str = "") -> list:
    """Split ``"links.wall.parts[1].conduction.k"`` into ``['links', 'wall', 'parts', 1, ...]``."""
    if not isinstance(key, str) or not key:
        raise ScenarioError(f"invalid key path {key!r}", name or None)
    tokens: list = []
    pos = 0
    for m in _TOKEN.finditer(key):
        gap = key[pos:m.start()]
        if gap not in ("", ".") or (gap == "." and m.group(2) is not None):
            raise ScenarioError(f"invalid key path {key!r}", name or None,
                                "write e.g. links.wall.parts[1].conduction.thickness")
        tokens.append(m.group(1) if m.group(1) is not None else int(m.group(2)))
        pos = m.end()
    if pos != len(key) or not tokens or isinstance(tokens[0], int):
        raise ScenarioError(f"invalid key path {key!r}", name or None,
                            "write e.g. links.wall.parts[1].conduction.thickness")
    return tokens


def format_key_path(tokens) -> str:
    out = ""
    for t in tokens:
        out += f"[{t}]" if isinstance(t, int) else (f".{t}" if out else str(t))
    return out


def get_value(data: dict, key: str, name: str = ""):
    tokens = parse_key_path(key, name)
    cur: Any = data
    for i, t in enumerate(tokens):
        try:
            cur = cur[t]
        except (KeyError, IndexError, TypeError):
            here = format_key_path(tokens[:i + 1])
            options = list(cur) if isinstance(cur, dict) else []
            hint = suggest(t, options) if options else None
            if isinstance(cur, list):  # a list is indexed in brackets, from 0
                above = format_key_path(tokens[:i])
                hint = (f"{above!r} is a list of {len(cur)} item(s): write {above}[0]"
                        + (f" to {above}[{len(cur) - 1}]" if len(cur) > 1 else ""))
            raise ScenarioError(f"no value at {here!r}", f"{name}: {key}" if name else key,
                                hint) from None
    return cur


def set_value(data: dict, key: str, value, name: str = "") -> None:
    tokens = parse_key_path(key, name)
    parent = get_value(data, format_key_path(tokens[:-1]), name) if len(tokens) > 1 else data
    last = tokens[-1]
    try:
        parent[last]
    except (KeyError, IndexError, TypeError):
        options = list(parent) if isinstance(parent, dict) else []
        raise ScenarioError(f"no value at {key!r} to replace", name or None,
                            suggest(last, options) if options else None) from None
    parent[last] = value


_KIND_BY_KEY = {
    "capacity": "capacity", "initial": "temperature", "mass": "mass", "volume": "volume",
    "specific_heat": "specific_heat", "density": "density", "k": "conductivity",
    "thickness": "length", "area": "area", "h": "heat_transfer_coefficient",
    "inner_radius": "length", "outer_radius": "length", "length": "length",
    "emissivity": "dimensionless", "duration": "time", "step": "time", "period": "time",
    "peak": "time", "mean": None, "amplitude": None, "latent_heat": "specific_energy",
    "specific_heat_solid": "specific_heat", "specific_heat_liquid": "specific_heat",
    "min": "temperature", "max": "temperature", "temperature": "temperature", "power": "power",
    "resistance": "resistance", "conductance": "conductance", "view_factor": "dimensionless",
    "band": "temperature_difference", "setpoint": "temperature", "height": "length",
    "width": "length", "diameter": "length", "velocity": "velocity",
    "inner_diameter": "length", "outer_diameter": "length",
    "absorptance": "dimensionless", "sky_view": "dimensionless", "albedo": "dimensionless",
    "tilt": "dimensionless", "azimuth": "dimensionless", "latitude": "dimensionless",
    "longitude": "dimensionless", "elevation": "length", "melting": "temperature",
    "freezes_at": "temperature",
}

#: list-valued keys whose entries are quantities (``...box.inside[0]``, ``...areas[1]``)
_KIND_OF_ENTRIES = {"inside": "length", "outside": "length", "areas": "area",
                    "emissivities": "dimensionless", "temperatures": "temperature",
                    "melting": "temperature"}


def quantity_kind(tokens: list) -> str | None:
    """The quantity kind of the value at a key path, or None if it is not a quantity."""
    last = tokens[-1]
    parent = tokens[-2] if len(tokens) > 1 else None
    if isinstance(last, int):
        return _KIND_OF_ENTRIES.get(parent) if isinstance(parent, str) else None
    in_part = len(tokens) > 2 and isinstance(tokens[-3], int)  # ...parts[i].<kind>.<key>
    if in_part and parent == "contact" and last == "resistance":
        return "area_resistance"
    if in_part and parent == "contact" and last == "conductance":
        return "heat_transfer_coefficient"
    if last in ("mean", "amplitude"):
        root = "temperature" if tokens[0] == "boundaries" else "power"
        if last == "amplitude" and root == "temperature":
            return "temperature_difference"
        return root
    return _KIND_BY_KEY.get(last)


# -- loading ---------------------------------------------------------------------------------
def load(path, *, allow_absolute_paths: bool = False) -> Scenario:
    """Read a scenario file.

    Raises
    ------
    ScenarioError / InputError
        With the file name and key path in the message.
    """
    path = os.fspath(path)
    text = read_text(path)
    return loads(text, name=os.path.basename(path) or path,
                 base_dir=os.path.dirname(os.path.abspath(path)), path=path,
                 allow_absolute_paths=allow_absolute_paths)


def read_text(path) -> str:
    """The text of a scenario file: a regular file (no FIFO or device) of at most 20 MB of
    UTF-8 whose keys and values do not nest too deep (:mod:`rcsim.tomlscan`), or
    ScenarioError."""
    path = os.fspath(path)
    name = os.path.basename(path) or path
    if os.path.isdir(path):
        raise ScenarioError("is a directory, not a scenario file", path,
                            "give the path of a .toml file")
    if not os.path.exists(path):
        raise ScenarioError("file not found", path)
    size = check_regular_file(path, name).st_size   # no FIFO or device (rcsim.inputfiles)
    if size > _MAX_BYTES:
        raise ScenarioError(f"file is {size / 1e6:.1f} MB; a scenario file is at most "
                            f"{_MAX_BYTES / 1e6:.0f} MB", name, "put large data in CSV files")
    try:
        with open(path, "rb") as fh:
            raw = fh.read(_MAX_BYTES + 1)     # bounded even where the size says nothing
        if len(raw) > _MAX_BYTES:
            raise ScenarioError(f"file is over {_MAX_BYTES / 1e6:.0f} MB, the most a scenario "
                                "file may be", name, "put large data in CSV files")
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        raise ScenarioError("is not UTF-8 text", name) from None
    except OSError as exc:
        raise ScenarioError(f"cannot be read ({exc.strerror})", name) from None
    check_nesting(text, name)
    return text


def loads(text: str, name: str = "<scenario>", base_dir: str = ".", path: str | None = None,
          allow_absolute_paths: bool = False) -> Scenario:
    """Read a scenario from a string."""
    if not text.strip():
        raise ScenarioError("is empty", name, "a scenario needs at least [nodes] and [links]")
    text = unicodedata.normalize("NFC", text)   # names in one Unicode form (README "Names")
    check_nesting(text, name)     # a cheap scan first: deep keys cost the parser gigabytes
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        message, line, hint = explain_toml_error(str(exc), text)
        raise ScenarioError(message, name if line is None else f"{name} line {line}",
                            hint) from None
    except RecursionError:
        raise ScenarioError("TOML nesting too deep", name) from None
    return build(data, text, path or name, base_dir, allow_absolute_paths)


def build(data: dict, text: str, path: str | None, base_dir: str,
          allow_absolute_paths: bool = False) -> Scenario:
    name = os.path.basename(path) if path else "<scenario>"
    try:
        return _build(data, text, path, base_dir, allow_absolute_paths, name)
    except InputError as err:
        raise in_file(err, name) from None


def in_file(err: InputError, name: str) -> InputError:
    """``err`` with the scenario file's ``name`` in front of its place (unless already there)."""
    if err.where and (err.where == name or err.where.startswith(name + ":")):
        return err
    return err.at(name)


def _table(value, where, allow_empty=True) -> dict:
    if not isinstance(value, dict):
        raise ScenarioError(f"expected a table, got {type(value).__name__} {value!r:.60}", where)
    return value


def _build(data, text, path, base_dir, allow_abs, name) -> Scenario:
    check_keys(data, _TOP, [], "")
    if "fit" in data:           # used by fits only; its values are checked by the fitting
        check_keys(data["fit"], FIT_KEYS, [], "fit")
    title = data.get("title", "")
    if not isinstance(title, str):
        raise ScenarioError("title must be a string", "title")
    if "nodes" not in data:
        raise ScenarioError("missing [nodes] table", None, "a scenario needs at least one node")
    ctx = _Context(base_dir, allow_abs, data.get("simulation", {}).get("start")
                   if isinstance(data.get("simulation"), dict) else None)
    settings = _settings(_table(data.get("simulation", {}), "simulation"))
    ctx.outdoors = read_outdoors(data, settings.start, base_dir, allow_abs)  # [site], [weather]
    net = Network(title or None)
    net.source_name = name

    nodes = _table(data["nodes"], "nodes")
    for nm, spec in nodes.items():
        w = f"nodes.{nm}"
        spec = _table(spec, w)
        check_keys(spec, _NODE, [], w)
        net.add_node(nm, where=w, **spec)
    for nm, spec in _table(data.get("boundaries", {}), "boundaries").items():
        w = f"boundaries.{nm}"
        spec = _table(spec, w)
        check_keys(spec, {"temperature"}, ["temperature"], w)
        net.add_boundary(nm, profile_from_spec(spec["temperature"], f"{w}.temperature", ctx),
                         where=w)
    for nm, spec in _table(data.get("links", {}), "links").items():
        w = f"links.{nm}"
        spec = _table(spec, w)
        check_keys(spec, _LINK, ["between"], w)
        between = spec["between"]
        if (not isinstance(between, list) or len(between) != 2
                or not all(isinstance(x, str) for x in between)):
            raise ScenarioError("between must list two names, e.g. between = [\"payload\", "
                                "\"outdoor\"]", f"{w}.between")
        kwargs = {k: spec[k] for k in ("resistance", "conductance", "parts", "area") if k in spec}
        if isinstance(kwargs.get("conductance"), dict):   # a conductance that varies in time
            kwargs["conductance"] = profile_from_spec(kwargs["conductance"], f"{w}.conductance",
                                                      ctx)
        net.add_link(between[0], between[1], name=nm, where=w, **kwargs)
    if "radiation" in data:     # one surface seeing several surroundings
        radiation_from_scenario(net, _table(data["radiation"], "radiation"))
    if "enclosures" in data:    # grey diffuse enclosures of N surfaces
        enclosures_from_scenario(net, _table(data["enclosures"], "enclosures"))
    for nm, spec in _table(data.get("sources", {}), "sources").items():
        w = f"sources.{nm}"
        spec = _table(spec, w)
        check_keys(spec, {"node", "power"}, ["node", "power"], w)
        if not isinstance(spec["node"], str):
            raise ScenarioError("node must be a node name", f"{w}.node")
        net.add_source(spec["node"], profile_from_spec(spec["power"], f"{w}.power", ctx),
                       name=nm, where=w)
    add_surfaces(net, data.get("surfaces"), ctx.outdoors,
                 lambda spec, where: profile_from_spec(spec, where, ctx))
    for nm, spec in _table(data.get("limits", {}), "limits").items():
        w = f"limits.{nm}"
        spec = _table(spec, w)
        check_keys(spec, {"min", "max"}, [], w)
        net.add_limit(nm, spec.get("min"), spec.get("max"), where=w)
    extras = {}
    if "thermostats" in data:
        add_thermostats_from_scenario(net, _table(data["thermostats"], "thermostats"))
    if settings.record is not None:
        for i, r in enumerate(settings.record):
            if r not in net.nodes and not net.is_internal_name(r):
                raise ScenarioError(f"unknown node {r!r}", f"simulation.record[{i}]",
                                    suggest(r, list(net.nodes)))
    net.source_text = text
    net.assemble()  # validate now (Biot warnings, internal nodes)
    return Scenario(net, settings, data, text, path, title, base_dir, allow_abs, extras)


def _settings(sim: dict) -> Settings:
    check_keys(sim, _SIM, [], "simulation")
    st = Settings()
    if "duration" in sim:
        st.duration = to_si(sim["duration"], "time", "simulation.duration")
        if st.duration <= 0:
            raise ScenarioError("duration must be positive", "simulation.duration")
    if "step" in sim:
        st.step = to_si(sim["step"], "time", "simulation.step")
        if st.step <= 0:
            raise ScenarioError("step must be positive", "simulation.step")
    if "initial" in sim:
        if sim["initial"] not in ("given", "steady", "periodic"):
            raise ScenarioError(f"initial must be 'given', 'steady' or 'periodic', got "
                                f"{sim['initial']!r}", "simulation.initial")
        st.initial = sim["initial"]
    if "solver" in sim:
        st.solver = check_solver(sim["solver"], "simulation.solver", ScenarioError)
    if "record" in sim:
        rec = sim["record"]
        if not isinstance(rec, list) or not all(isinstance(r, str) for r in rec) or not rec:
            raise ScenarioError("record must be a non-empty list of node names", "simulation.record")
        st.record = rec
    if "start" in sim:
        import pandas as pd

        try:
            pd.Timestamp(str(sim["start"]))
        except (ValueError, TypeError):
            raise ScenarioError(f"start {sim['start']!r} is not an ISO-8601 date and time",
                                "simulation.start", "write e.g. start = 2026-07-01T00:00:00") \
                from None
        st.start = str(sim["start"])
    for key in ("rtol", "atol"):
        if key in sim:
            v = to_si(sim[key], "dimensionless", f"simulation.{key}")
            if not (0 < v < 1):
                raise ScenarioError(f"{key} must be between 0 and 1", f"simulation.{key}")
            setattr(st, key, v)
    return st


@dataclass
class _Context:
    base_dir: str
    allow_absolute: bool
    start: Any = None
    outdoors: Any = None   # rcsim.outdoors.Outdoors: site, clock and weather record


_PROFILE_KEYS = {
    "constant": None,
    "sine": ({"mean", "amplitude", "period", "peak", "repeat"}, ["mean", "amplitude", "period"]),
    "steps": ({"at", "values", "outside", "repeat"}, ["at", "values"]),
    "table": ({"times", "values", "outside", "unit", "repeat"}, ["times", "values"]),
    "csv": ({"file", "column", "time", "unit", "time_unit", "missing", "outside", "repeat"},
            ["file", "column"]),
    "weather": None,
}


def profile_from_spec(spec, where: str, ctx: _Context | None = None) -> Profile:
    """Build an (unbound) profile from its scenario form.

    ``"30 degC"`` or a number is a constant; otherwise a table with one key: ``constant``,
    ``sine``, ``steps``, ``table`` or ``csv``, each optionally with ``repeat = "<period>"``, or
    ``weather`` (a column of the scenario's weather record, :func:`rcsim.outdoors.weather_profile`).
    """
    ctx = ctx or _Context(".", False)
    if isinstance(spec, (int, float, str)) and not isinstance(spec, bool):
        return Constant(spec)
    if isinstance(spec, dict) and len(spec) == 2 and "repeat" in spec:
        kind = next(k for k in spec if k != "repeat")
        raise ScenarioError(f"repeat goes inside the {kind} table, not beside it", where,
                            f"write {{ {kind} = {{ ..., repeat = {spec['repeat']!r} }} }}")
    if not isinstance(spec, dict) or len(spec) != 1:
        raise ScenarioError("a profile is a value like \"30 degC\" or a table with one key: "
                            + ", ".join(_PROFILE_KEYS), where)
    (kind, body), = spec.items()
    if kind not in _PROFILE_KEYS:
        raise ScenarioError(f"unknown profile kind {kind!r}", where, suggest(kind, _PROFILE_KEYS))
    w = f"{where}.{kind}"
    if kind == "weather":                     # a column of the [weather] record
        return weather_profile(body, w, ctx.outdoors)
    if kind == "constant":
        if isinstance(body, dict):
            raise ScenarioError("constant takes a value, e.g. constant = \"30 degC\"", w)
        return Constant(body)
    allowed, required = _PROFILE_KEYS[kind]
    check_keys(body, allowed, required, w)
    try:
        prof = _profile_of_kind(kind, body, w, ctx)
    except ProfileError as err:   # checked when built from plain numbers: name the key
        raise (err.at(w) if err.where is None else err) from None
    if "repeat" in body:
        prof = Repeat(prof, body["repeat"])
    return prof


def _profile_of_kind(kind, body, w, ctx) -> Profile:
    if kind == "sine":
        prof: Profile = Sine(body["mean"], body["amplitude"], body["period"], body.get("peak"))
    elif kind == "steps":
        _list(body["at"], f"{w}.at")
        _list(body["values"], f"{w}.values")
        prof = Steps(body["at"], body["values"], outside=_outside(body, w))
    elif kind == "table":
        _list(body["times"], f"{w}.times")
        _list(body["values"], f"{w}.values")
        prof = Table(body["times"], body["values"], outside=_outside(body, w),
                     unit=_opt_str(body, "unit", w))
    else:  # csv
        file = body["file"]
        if not isinstance(file, str) or not file:
            raise ScenarioError("file must be a path", f"{w}.file")
        # inside the scenario's folder once '..' and links are resolved (rcsim.inputfiles)
        full = resolve_input(file, ctx.base_dir, ctx.allow_absolute, f"{w}.file")
        missing = body.get("missing", "error")
        if missing not in ("error", "interpolate"):
            raise ScenarioError(f"missing must be 'error' or 'interpolate', got {missing!r}",
                                f"{w}.missing")
        column = body["column"]
        if not isinstance(column, str):
            raise ScenarioError("column must be a column name", f"{w}.column")
        read_csv = csv_reader(ctx.outdoors)   # Table.from_csv, or on the site's clock
        prof = read_csv(full, column, time=_opt_str(body, "time", w), start=ctx.start,
                              unit=_opt_str(body, "unit", w),
                              time_unit=_opt_str(body, "time_unit", w),
                              missing=missing, outside=_outside(body, w),
                              where=f"{w}.file ({file})")
    return prof


def _outside(body, w) -> str:
    v = body.get("outside", "error")
    if v not in ("error", "hold"):
        raise ScenarioError(f"outside must be 'error' or 'hold', got {v!r}", f"{w}.outside")
    return v


def _opt_str(body, key, w):
    v = body.get(key)
    if v is not None and not isinstance(v, str):
        raise ScenarioError(f"{key} must be a string", f"{w}.{key}")
    return v


def _list(v, where):
    if not isinstance(v, list) or not v:
        raise ScenarioError("expected a non-empty list", where)
    for i, x in enumerate(v):
        if isinstance(x, (list, dict, bool)):
            raise ScenarioError(f"expected a number or a string with units, got {x!r:.40}",
                                f"{where}[{i}]")
        if isinstance(x, float) and not math.isfinite(x):
            raise ScenarioError(f"not a finite number ({x!r})", f"{where}[{i}]")
