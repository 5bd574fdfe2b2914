"""Property-based tests: hostile and mutated input never raises anything but rcsim's InputError,
and that error names a place."""

import copy
import datetime as dt
import math
import tomllib

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

import rcsim
from rcsim.errors import InputError
from rcsim.profiles import Steps, Table, read_time_series
from rcsim.scenario import build, loads
from rcsim.units import KINDS, to_si

MANY = settings(max_examples=2000, deadline=None,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much])
SOME = settings(max_examples=400, deadline=None, suppress_health_check=[HealthCheck.too_slow])

UNITS = ["m", "mm", "kg", "K", "degC", "degF", "delta_degC", "W", "kW", "J/K", "kJ/K", "h",
         "min", "s", "W/(m^2*K)", "W/(m*K)", "m^2", "kg/m^3", "J/(kg*K)", "K/W", "W/K", "Pa",
         "", "%", "furlong", "m/s", "1/s", "mol", "°C", "J/kg", "m^3", "parsec/fortnight"]


def _ok_or_input_error(func, *args, **kwargs):
    try:
        return func(*args, **kwargs)
    except InputError as err:
        assert str(err).strip(), "empty message"
        return err


@MANY
@given(st.text(max_size=80), st.sampled_from(sorted(KINDS)))
def test_unit_parser_on_any_text(text, kind):
    out = _ok_or_input_error(to_si, text, kind, "x")
    if not isinstance(out, InputError):
        assert math.isfinite(out)
    else:
        assert str(out).startswith("x: ")


@pytest.mark.slow
@MANY
@given(st.one_of(st.floats(allow_nan=True, allow_infinity=True), st.integers(-10**30, 10**30)),
       st.sampled_from(UNITS), st.sampled_from(sorted(KINDS)))
def test_unit_parser_on_numbers_with_units(number, unit, kind):
    out = _ok_or_input_error(to_si, f"{number} {unit}", kind, "key")
    if not isinstance(out, InputError):
        assert math.isfinite(out)


GOOD = """
title = "t"
[simulation]
duration = "2 h"
step = "10 min"
[nodes.payload]
capacity = "8.4 kJ/K"
initial = "5 degC"
[nodes.air]
capacity = 100
initial = 5
[boundaries.outdoor]
temperature = { sine = { mean = "25 degC", amplitude = "7 K", period = "24 h", peak = "15 h" } }
[links.wall]
between = ["air", "outdoor"]
parts = [
  { convection = { h = "3 W/(m^2*K)", area = "0.8 m^2" } },
  { conduction = { k = "0.033 W/(m*K)", thickness = "50 mm", area = "0.8 m^2", density = 30, specific_heat = 1400, slices = 2 } },
]
[links.film]
between = ["payload", "air"]
resistance = "0.4 K/W"
[sources.fan]
node = "air"
power = { steps = { at = ["0 h", "1 h"], values = ["0 W", "5 W"] } }
[limits.payload]
min = "2 degC"
max = "8 degC"
"""
BASE = tomllib.loads(GOOD)


def _paths(obj, prefix=()):
    if isinstance(obj, dict):
        for k, v in obj.items():
            yield prefix + (k,)
            yield from _paths(v, prefix + (k,))
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            yield prefix + (i,)
            yield from _paths(v, prefix + (i,))


PATHS = list(_paths(BASE))

JUNK = st.one_of(
    st.none(), st.booleans(), st.integers(-10**20, 10**20),
    st.floats(allow_nan=True, allow_infinity=True), st.text(max_size=40),
    st.sampled_from(["", "nan", "-1 m", "1e400 K", "3 kg", "25 degC", "7 K", "0", "∞", "🙂",
                     "x" * 5000, "payload", "outdoor", "0 s"]),
    st.datetimes(min_value=dt.datetime(1900, 1, 1), max_value=dt.datetime(2100, 1, 1)),
    st.lists(st.integers(-5, 5), max_size=4), st.dictionaries(st.text(max_size=5), st.integers(),
                                                               max_size=3),
)


def _mutate(data, path, value, action):
    cur = data
    for key in path[:-1]:
        cur = cur[key]
    last = path[-1]
    if action == "set":
        cur[last] = value
    elif action == "delete":
        if isinstance(cur, dict):
            del cur[last]
        else:
            cur.pop(last)
    else:  # extra key next to it
        if isinstance(cur, dict):
            cur[f"extra_{last}"] = value


@pytest.mark.slow
@pytest.mark.filterwarnings("ignore::rcsim.errors.LumpedWarning")
@MANY
@given(st.lists(st.tuples(st.sampled_from(PATHS), JUNK,
                          st.sampled_from(["set", "delete", "extra"])), min_size=1, max_size=3))
def test_mutated_scenarios_fail_cleanly(mutations):
    data = copy.deepcopy(BASE)
    for path, value, action in mutations:
        try:
            _mutate(data, path, value, action)
        except (KeyError, IndexError, TypeError, AttributeError):
            pass  # an earlier mutation removed the place
    out = _ok_or_input_error(build, data, GOOD, "m.toml", ".")
    if isinstance(out, InputError):
        assert str(out).startswith("m.toml"), str(out)


@pytest.mark.filterwarnings("ignore::rcsim.errors.LumpedWarning")
@SOME
@given(st.lists(st.tuples(st.sampled_from(PATHS), JUNK, st.just("set")), min_size=1, max_size=2))
def test_mutated_scenarios_that_load_also_run_or_fail_cleanly(mutations):
    data = copy.deepcopy(BASE)
    for path, value, action in mutations:
        try:
            _mutate(data, path, value, action)
        except (KeyError, IndexError, TypeError, AttributeError):
            pass
    sc = _ok_or_input_error(build, data, GOOD, "m.toml", ".")
    if isinstance(sc, InputError):
        return  # refused at load time: covered above
    try:
        res = sc.run()
    except (InputError, rcsim.SolverError) as err:
        assert str(err).strip()
        return
    T = res.temperatures.to_numpy()
    assert np.isfinite(T).all()


@pytest.mark.slow
@MANY
@given(st.text(max_size=300))
def test_any_text_as_scenario(text):
    _ok_or_input_error(loads, text, "t.toml")


@SOME
@given(st.integers(1, 400))
def test_deep_nesting(depth):
    text = "a = " + "[" * depth + "]" * depth
    out = _ok_or_input_error(loads, text, "deep.toml")
    assert isinstance(out, InputError)


@pytest.mark.slow
@MANY
@given(st.lists(st.floats(allow_nan=True, allow_infinity=True), min_size=0, max_size=6),
       st.lists(st.floats(allow_nan=True, allow_infinity=True), min_size=0, max_size=6),
       st.sampled_from(["error", "hold", "sideways"]), st.sampled_from([Steps, Table]))
def test_profile_arrays(times, values, outside, kind):
    def make():
        p = kind(times, values, outside=outside).bind("temperature", "b.temperature")
        p.check_span(0.0, 10.0)
        return p.value(np.linspace(0, 10, 7))

    out = _ok_or_input_error(make)
    if not isinstance(out, InputError):
        assert np.isfinite(out).all()


CSV_CELLS = st.one_of(st.floats(allow_nan=True, allow_infinity=True).map(repr),
                      st.integers(-10**6, 10**6).map(str), st.text(max_size=8),
                      st.sampled_from(["", "NaN", "2026-07-01T00:00", "1,2", '"q"', "\x00"]))


@pytest.mark.slow
@MANY
@given(st.lists(st.lists(CSV_CELLS, min_size=1, max_size=3), min_size=0, max_size=8),
       st.sampled_from(["time,t\n", "t\n", "time,t,t\n", "", "time;t\n"]))
def test_csv_reader(tmp_path_factory, rows, header):
    path = tmp_path_factory.mktemp("csv") / "log.csv"
    body = header + "\n".join(",".join(r) for r in rows)
    path.write_text(body, encoding="utf-8", errors="surrogatepass") if False else \
        path.write_bytes(body.encode("utf-8", errors="replace"))
    out = _ok_or_input_error(read_time_series, path, ["t"])
    if isinstance(out, InputError):
        assert "log.csv" in str(out)
    else:
        t = out.index.to_numpy()
        assert np.all(np.diff(t) > 0)


@SOME
@given(st.text(min_size=1, max_size=120))
def test_names(name):
    net = rcsim.Network()

    def add():
        net.add_node(name, capacity=1.0, initial=0.0)
        net.add_boundary(name + "_b", temperature=0.0)
        net.add_link(name, name + "_b", resistance=1.0)
        return net.steady()

    _ok_or_input_error(add)


@pytest.mark.slow
@MANY
@given(st.lists(st.lists(CSV_CELLS, min_size=1, max_size=4), min_size=0, max_size=8),
       st.sampled_from(["time,block,room\n", "t [min],block\n", "when,block\n", "block,room\n",
                        "time,block,block\n", "time,probe,room\n", ""]))
def test_fit_log_reader(tmp_path_factory, rows, header):
    from rcsim.fitting import read_log

    path = tmp_path_factory.mktemp("log") / "log.csv"
    path.write_bytes((header + "\n".join(",".join(r) for r in rows)).encode("utf-8", "replace"))
    out = _ok_or_input_error(read_log, path, ["block"], ["room"])
    if isinstance(out, InputError):
        assert "log.csv" in str(out)
