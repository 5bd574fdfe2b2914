"""A corpus of concrete bad inputs across every reader: each gives rcsim's own InputError whose
message names the place and carries the expected fragment. (The scenario-file cases through the
CLI are in test_scenario_errors.py; the hypothesis suites in test_properties.py.)"""

import h5py
import numpy as np
import pytest

import rcsim
from rcsim.errors import InputError
from rcsim.units import to_si

# ---- the unit parser: (value, kind, fragment) -----------------------------------------------
UNITS = [
    ("3 kg", "length", "expected a length, got '3 kg'"),
    ("7 degC", "temperature_difference", "expected a temperature difference"),
    ("7 delta_degC", "temperature", "expected an absolute temperature"),
    ("12 bananas", "length", "unknown unit 'bananas'"),
    ("", "time", "cannot read ''"),
    ("inf s", "time", "expected a finite number"),
    ("1e400 m", "length", "expected a finite number"),
    ("5 W/(m^2*K", "heat_transfer_coefficient", "unknown unit"),
    ([1, 2], "power", "expected a power, got list"),
    (True, "capacity", "true/false"),
]


@pytest.mark.parametrize("value,kind,fragment", UNITS)
def test_unit_parser(value, kind, fragment):
    with pytest.raises(InputError) as err:
        to_si(value, kind, "a.key")
    assert str(err.value).startswith("a.key: ") and fragment in str(err.value)


# ---- the network API: (callable, fragment) ---------------------------------------------------
def _net():
    net = rcsim.Network()
    net.add_node("a", capacity=1000.0, initial=20.0)
    net.add_boundary("b", temperature=0.0)
    return net


API = [
    (lambda n: n.add_node("a.b", capacity=1), "invalid node name 'a.b'"),
    (lambda n: n.add_node("c", capacity=1, mass=2), "give only one of capacity, mass or volume"),
    (lambda n: n.add_node("c", mass=2), "mass is given but no specific_heat or material"),
    (lambda n: n.add_node("c", volume=1, material="unobtainium"), "unknown material 'unobtainium'"),
    (lambda n: n.add_node("c", capacity=1, initial="-300 degC"), "below absolute zero"),
    (lambda n: n.add_link("a", "b"), "give exactly one of resistance, conductance or parts"),
    (lambda n: n.add_link("a", "b", resistance=-1), "links.a-b.resistance: must be positive"),
    (lambda n: n.add_link("a", "b", parts=[]), "parts must be a non-empty list"),
    (lambda n: n.add_link("a", "b", parts=[{"conduction": {"k": 1, "area": 1}}]),
     "missing key 'thickness'"),
    (lambda n: n.add_link("a", "b", parts=[{"sphere": {"k": 1, "inner_radius": 2,
                                                      "outer_radius": 1}}]),
     "outer_radius must exceed inner_radius"),
    (lambda n: n.add_link("a", "b", parts=[{"radiation": {"emissivity": 0.9, "area": 1,
                                                         "emissivity_2": 0.9}}]),
     "needs both emissivity_2 and area_2"),
    (lambda n: n.add_link("a", "b", parts=[{"radiation": {"emissivity": 0.9, "area": 4,
                                                         "emissivity_2": 0.9, "area_2": 1}}]),
     "breaks reciprocity"),
    (lambda n: n.add_source("b", power=5), "sources heat nodes"),
    (lambda n: n.add_limit("a"), "a limit needs min, max or both"),
    (lambda n: n.add_thermostat("t", "a", setpoint=20, band="1 degC", power=100),
     "expected a temperature difference"),
    (lambda n: n.add_thermostat("t", "a", setpoint=20, band=1, power=100, mode="warm"),
     "mode must be 'heat' or 'cool'"),
    (lambda n: n.simulate("1 h", "2 h"), "step (7200 s) is longer than the duration"),
    (lambda n: n.simulate("1 h", "1 min", solver="fast"), "solver must be"),
    (lambda n: n.simulate("1 h", "1 min", initial="warm"), "initial must be"),
    (lambda n: n.simulate("1 h", "1 min", record=["z"]), "unknown node 'z'"),
    (lambda n: n.simulate("1 h", "1 min", times=[10, 5]), "times must increase"),
]


@pytest.mark.parametrize("call,fragment", API)
def test_network_api(call, fragment):
    with pytest.raises(InputError) as err:
        call(_net())
    assert fragment in str(err.value)


# ---- profiles and CSV columns ------------------------------------------------------------------
PROFILES = [
    (lambda: rcsim.Sine(mean=20, amplitude="5 degC", period="1 d").bind("temperature", "p"),
     "p.amplitude: expected a temperature difference"),
    (lambda: rcsim.Steps([0, 3600], [1, "2 kg"]).bind("power", "p"), "p.values[1]: expected a power"),
    (lambda: rcsim.Table([0, 1, 1], [1, 2, 3]).bind("temperature", "p"), "times must increase"),
    (lambda: rcsim.Repeat(rcsim.Table([0, 100], [1, 2]), "1 h").bind("temperature", "p"),
     "less than one period"),
]


@pytest.mark.parametrize("make,fragment", PROFILES)
def test_profiles(make, fragment):
    with pytest.raises(InputError) as err:
        make()
    assert fragment in str(err.value)


# ---- the log reader of fits: (CSV text, fragment) ----------------------------------------------
BLOCK = """
[nodes.block]
capacity = "2 kJ/K"
initial = "10 degC"
[boundaries.room]
temperature = "20 degC"
[links.skin]
between = ["block", "room"]
resistance = "1 K/W"
"""
LOGS = [
    ("block,room\n10,20\n11,20\n", "time column"),
    ("time,block\n0,10\n60,11\n30,12\n", "line 4"),
    ("time,block,probe9\n0,10,1\n60,11,2\n", "probe9"),
    ("time,block\n0,\n60,NaN\n", "block"),
    ("time,block\n0,10\n60,eleven\n", "line 3"),
    ("", "empty"),
]


@pytest.mark.parametrize("text,fragment", LOGS)
def test_fit_logs(tmp_path, text, fragment):
    log = tmp_path / "log.csv"
    log.write_text(text)
    with pytest.raises(InputError) as err:
        rcsim.fit(rcsim.loads(BLOCK), log, ["nodes.block.capacity"])
    assert "log.csv" in str(err.value) and fragment in str(err.value)


def test_fit_options():
    sc = rcsim.loads(BLOCK)
    import pandas as pd

    log = pd.DataFrame({"time": [0.0, 60.0, 120.0], "block": [10.0, 11.0, 12.0]})
    with pytest.raises(InputError, match="nodes.blok.capacity"):
        rcsim.fit(sc, log, ["nodes.blok.capacity"])
    with pytest.raises(InputError):
        rcsim.fit(sc, log, [])


# ---- result files --------------------------------------------------------------------------
def test_result_files(tmp_path):
    cases = []
    p = tmp_path / "plain.h5"
    with h5py.File(p, "w") as h5:
        h5["x"] = np.arange(3)
    cases.append((p, "not an rcsim result file"))
    q = tmp_path / "text.h5"
    q.write_text("not hdf5 at all")
    cases.append((q, "cannot be read as HDF5"))
    cases.append((tmp_path / "missing.h5", "file not found"))
    cases.append((tmp_path, "is a directory"))
    for path, fragment in cases:
        with pytest.raises(InputError) as err:
            rcsim.Result.load(path)
        assert fragment in str(err.value)


def test_the_corpus_is_large_enough():
    # the corpus here plus the scenario cases of test_scenario_errors.py
    from test_scenario_errors import CASES

    assert len(UNITS) + len(API) + len(PROFILES) + len(LOGS) + 4 + len(CASES) >= 40
    assert len(UNITS) + len(API) + len(PROFILES) + len(LOGS) + 4 >= 40


def test_files_never_execute_code(tmp_path):
    # no reader evaluates text as code: neither the package's source uses eval/exec/pickle...
    import pathlib
    import re

    src = pathlib.Path(rcsim.__file__).parent
    for f in src.rglob("*.py"):
        text = f.read_text(encoding="utf-8")
        assert not re.search(r"\b(eval|exec)\s*\(|\bpickle\b|allow_pickle\s*=\s*True", text), f
    # ...nor does a result file whose metadata holds code-like text run it
    net = rcsim.Network()
    net.add_node("a", capacity=1.0, initial=0.0)
    net.add_boundary("b", temperature=0.0)
    net.add_link("a", "b", resistance=1.0)
    res = net.simulate("1 min", "10 s")
    marker = tmp_path / "ran"
    res.meta["scenario"] = f"__import__('pathlib').Path({str(marker)!r}).touch()"
    res.save(tmp_path / "r.h5")
    back = rcsim.Result.load(tmp_path / "r.h5")
    assert back.scenario.startswith("__import__") and not marker.exists()
