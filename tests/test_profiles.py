"""Profiles: values, exact integrals, repeats, CSV reading and the errors of each."""

import math

import numpy as np
import pytest
from scipy.integrate import quad

import rcsim
from rcsim.errors import DataError, ProfileError
from rcsim.profiles import Table, common_period, read_time_series


def bound(p, kind="temperature"):
    return p.bind(kind, "p")


def test_sine_peak_and_mean():
    s = bound(rcsim.Sine(mean="25 degC", amplitude="7 K", period="24 h", peak="15 h"))
    assert s.value(15 * 3600) == pytest.approx(32.0)
    assert s.value(3 * 3600) == pytest.approx(18.0)
    # the mean over a period is the mean (integral of a cosine over a period is zero)
    assert s.integral(0, 86400) / 86400 == pytest.approx(25.0, abs=1e-12)


def test_steps_hold_values_and_jump_exactly():
    p = bound(rcsim.Steps(["0 h", "8 h", "18 h"], ["16 degC", "21 degC", "16 degC"]))
    assert p.value(8 * 3600) == 21.0
    assert p.value_left(8 * 3600) == 16.0
    assert p.value(30 * 3600) == 16.0


@pytest.mark.parametrize("profile", [
    rcsim.Table([0, 100, 250, 400], [1.0, 5.0, -2.0, 3.0]),
    rcsim.Steps([0, 100, 250], [1.0, 5.0, -2.0]),
    rcsim.Sine(mean=3, amplitude=2, period=300, peak=40),
    rcsim.Repeat(rcsim.Table([0, 50, 100], [0.0, 4.0, 1.0]), 100),
])
def test_integral_is_exact(profile):
    p = bound(profile, "power")
    # adaptive quadrature with the breakpoints given (scipy.integrate.quad)
    pts = list(p.knots(13.0, 391.0))
    ref, _ = quad(p.value, 13.0, 391.0, points=pts or None, limit=500, epsabs=1e-12)
    assert p.integral(13.0, 391.0) == pytest.approx(ref, abs=1e-8)


def test_repeat_tiles_a_day():
    day = rcsim.Table(["0 h", "12 h", "24 h"], ["10 degC", "20 degC", "10 degC"])
    p = bound(rcsim.Repeat(day, "24 h"))
    assert p.value(86400 * 3 + 21600) == pytest.approx(15.0)
    assert p.period == 86400.0
    assert common_period([p, bound(rcsim.Sine(0, 1, 43200))]) == 86400.0


def test_incommensurate_periods():
    with pytest.raises(ProfileError, match="not multiples"):
        common_period([bound(rcsim.Sine(0, 1, 86400)), bound(rcsim.Sine(0, 1, 50000))])


@pytest.mark.parametrize("make,fragment", [
    (lambda: rcsim.Table([0, 10, 5], [1, 2, 3]), "times must increase"),
    (lambda: rcsim.Table([0, 10], [1, float("nan")]), "values[1] is not a finite number"),
    (lambda: rcsim.Table([0], [1]), "at least two points"),
    (lambda: rcsim.Table([0, 1, 2], [1, 2]), "3 times but 2 values"),
    (lambda: rcsim.Steps([], []), "at least one time"),
    (lambda: rcsim.Sine(0, 1, -5), "period must be positive"),
    (lambda: rcsim.Repeat(rcsim.Table([0, 10], [0, 1]), 20), "less than one period"),
])
def test_profile_errors(make, fragment):
    with pytest.raises(ProfileError, match=fragment.replace("[", r"\[").replace("]", r"\]")):
        bound(make())


def test_span_check_names_the_profile():
    p = rcsim.Table([0, 3600], [1, 2]).bind("temperature", "boundaries.x.temperature")
    with pytest.raises(ProfileError, match="boundaries.x.temperature: profile covers"):
        p.check_span(0, 7200)
    held = rcsim.Table([0, 3600], [1, 2], outside="hold").bind("temperature", "b")
    held.check_span(0, 7200)
    assert held.value(7200) == 2.0


def test_csv_seconds_and_timestamps(write):
    path = write("w.csv", "time,t_out\n0,10\n3600,12\n7200,11\n")
    p = Table.from_csv(path, "t_out").bind("temperature", "b")
    assert p.value(1800) == pytest.approx(11.0)
    path2 = write("w2.csv", "when,t_out\n2026-07-01T00:00,10\n2026-07-01T01:00,12\n")
    p2 = Table.from_csv(path2, "t_out", start="2026-06-30T23:00").bind("temperature", "b")
    assert p2.times.tolist() == [3600.0, 7200.0]
    p3 = Table.from_csv(path2, "t_out", unit="degF").bind("temperature", "b")
    assert p3.value(0) == pytest.approx((10 - 32) * 5 / 9)


@pytest.mark.parametrize("text,fragment", [
    ("time,t_out\n0,10\n3600,\n7200,11\n", "column 't_out' line 3 is empty"),
    ("time,t_out\n0,10\n3600,abc\n", "column 't_out' line 3 is not a finite number ('abc')"),
    ("time,t_out\n0,10\n3600,12\n1800,11\n", "time does not increase at line 4"),
    ("time,other\n0,10\n", "no column 't_out'"),
    ("time,t_out\n", "no data rows"),
    ("", "is empty"),
    ("time,t_out\n0,10\nyesterday,3\n", "line 3"),
])
def test_csv_errors(write, text, fragment):
    path = write("bad.csv", text)
    with pytest.raises(DataError) as err:
        read_time_series(path, ["t_out"])
    assert fragment in str(err.value)
    assert "bad.csv" in str(err.value)


def test_csv_missing_interpolate(write):
    path = write("gap.csv", "time,t_out\n0,10\n3600,\n7200,14\n")
    p = Table.from_csv(path, "t_out", missing="interpolate").bind("temperature", "b")
    assert p.value(3600) == pytest.approx(12.0)


def test_scenario_csv_relative_to_file(tmp_path):
    (tmp_path / "data").mkdir()
    (tmp_path / "data" / "amb.csv").write_text("t,amb\n0,20\n7200,30\n")
    (tmp_path / "s.toml").write_text("""
[simulation]
duration = "2 h"
step = "1 h"
[nodes.a]
capacity = 1000
initial = 20
[boundaries.o]
temperature = { csv = { file = "data/amb.csv", column = "amb" } }
[links.l]
between = ["a", "o"]
resistance = 1
""")
    sc = rcsim.load(tmp_path / "s.toml")
    assert sc.network.boundaries["o"].profile.value(3600) == pytest.approx(25.0)
    text = (tmp_path / "s.toml").read_text().replace("data/amb.csv", str(tmp_path / "data/amb.csv"))
    (tmp_path / "abs.toml").write_text(text)
    with pytest.raises(rcsim.InputError, match="absolute path"):
        rcsim.load(tmp_path / "abs.toml")
    rcsim.load(tmp_path / "abs.toml", allow_absolute_paths=True)


def test_strings_with_units_in_profiles():
    p = rcsim.Sine(mean="77 degF", amplitude="9 delta_degF", period="1 d").bind("temperature", "b")
    assert p.mean == pytest.approx(25.0)
    assert p.amplitude == pytest.approx(5.0)
    q = rcsim.Steps(["0 s", "1 h"], ["0 W", "1.5 kW"]).bind("power", "s")
    assert q.value(3600) == 1500.0
    assert math.isclose(q.integral(0, 7200), 1500.0 * 3600)
    assert np.allclose(q.value([0.0, 3600.0]), [0.0, 1500.0])


def test_importing_profiles_loads_neither_pandas_nor_pint():
    # the command line's quick start needs light imports: pandas is loaded where a CSV is read,
    # pint where a unit is parsed. The package root is stood in for by an empty module, so that
    # only what rcsim.profiles itself imports is counted (the root may import more).
    import subprocess
    import sys

    code = """
import importlib.util, sys, types
root = types.ModuleType("rcsim")   # found, not run
root.__path__ = list(importlib.util.find_spec("rcsim").submodule_search_locations)
sys.modules["rcsim"] = root
import rcsim.profiles as profiles
p = profiles.Repeat(profiles.Table([0, 10], [0.0, 5.0]), 10)
assert p.value(14.0) == 2.0
print(sorted({n.split(".")[0] for n in sys.modules} & {"pandas", "pint"}))
profiles.Constant("5 degC").bind("temperature", "x")      # a unit parsed: now pint is there
print("pint" in sys.modules)
"""
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.split("\n")[:2] == ["[]", "True"], out.stdout + out.stderr
