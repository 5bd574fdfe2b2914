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
    ("time\n0\n3600\n", "has no value columns besides its time column 'time'"),
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


def test_a_csv_of_times_only_is_one_line_naming_what_to_add(write, cli, tmp_path):
    """A boundary read from a CSV that holds only its time column: exit 2, one line naming the
    file, that it has no value columns and the column to add (not an empty list of names)."""
    write("only.csv", "time [h]\n0\n1\n2\n")
    scenario = write("s.toml", """
[simulation]
duration = "2 h"
step = "10 min"
[nodes.a]
capacity = "8 kJ/K"
initial = "5 degC"
[boundaries.out]
temperature = { csv = { file = "only.csv", column = "t_out" } }
[links.w]
between = ["a", "out"]
resistance = "2 K/W"
""")
    out = tmp_path / "never.h5"
    r = cli("run", scenario, "-o", out)
    assert r.exit_code == 2, r.output
    lines = r.output.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in r.output
    assert "only.csv" in lines[0] and "has no value columns besides its time column 'time [h]'" \
        in lines[0] and "add a column of values named 't_out'" in lines[0]
    assert "valid: )" not in lines[0]
    assert not out.exists()


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
profiles.Constant("5 degC").bind("temperature", "x")      # a common unit: still no pint
print("pint" in sys.modules)
profiles.Constant("500 degR").bind("temperature", "x")    # any other unit: now pint is there
print("pint" in sys.modules)
"""
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.split("\n")[:3] == ["[]", "False", "True"], out.stdout + out.stderr


# -- huge periods and peaks (computed stably, checked against closed forms) --------------------
def _sine_integral_series(mean, amplitude, period, phase, duration):
    """The integral over [0, duration] of mean + amplitude sin(omega t + phase), omega = 2 pi /
    period, by the Taylor series of sin(x)/omega and (1 - cos x)/omega in x = omega duration
    (closed form; the terms beyond x^2 are below double precision for x < 1e-5)."""
    omega = 2.0 * math.pi / period
    x = omega * duration
    assert x < 1e-5
    sin_over = duration * (1.0 - x * x / 6.0)            # sin(x) / omega
    one_minus_cos_over = duration * (x / 2.0 - x ** 3 / 24.0)   # (1 - cos x) / omega
    return mean * duration + amplitude * (math.sin(phase) * sin_over
                                          + math.cos(phase) * one_minus_cos_over)


@pytest.mark.parametrize("peak", [None, 0.0, 3600.0])
def test_a_sine_with_a_long_period_integrates_to_its_closed_form(peak):
    # before: -a/omega (cos(omega t1 + phase) - cos(omega t0 + phase)) subtracted two nearly
    # equal cosines and multiplied by period / (2 pi): at 1e20 s, 2 % off with peak = 0
    # (a cosine); now the product form keeps the digits up to the longest period accepted
    for period in (1e10, 3e9):
        s = rcsim.Sine(mean=25.0, amplitude=7.0, period=period, peak=peak)
        phase = 0.0 if peak is None else math.pi / 2.0 - 2.0 * math.pi * peak / period
        want = _sine_integral_series(25.0, 7.0, period, phase, 60.0)
        assert s.integral(0.0, 60.0) == pytest.approx(want, rel=1e-15)
    # an ordinary period still matches quadrature (scipy.integrate.quad)
    d = rcsim.Sine(mean=25.0, amplitude=7.0, period=86400.0, peak=15 * 3600.0)
    assert d.integral(1000.0, 50000.0) == pytest.approx(quad(d.value, 1000.0, 50000.0)[0],
                                                        rel=1e-12)


def test_a_sine_period_beyond_1e10_s_is_refused_naming_the_key(tmp_path, cli):
    with pytest.raises(ProfileError, match=r"period 1e\+20 s is longer than 1e\+10 s"):
        rcsim.Sine(mean=25.0, amplitude=7.0, period=1e20)
    path = tmp_path / "slow.toml"
    path.write_text("""
[simulation]
duration = "1 d"
step = "10 min"
[nodes.x]
capacity = "8.4 kJ/K"
initial = "5 degC"
[boundaries.out]
temperature = { sine = { mean = "25 degC", amplitude = "7 K", period = "1e20 s" } }
[links.wall]
between = ["x", "out"]
resistance = "2.5 K/W"
""", encoding="utf-8")
    r = cli("run", path)
    assert r.exit_code == 2 and "Traceback" not in r.output
    assert "boundaries.out.temperature" in r.output and ".period" in r.output
    assert "longer than 1e+10 s" in r.output


def test_a_peak_many_periods_away_keeps_its_phase():
    # peak = 1e20 s with a 1-day period: the peak reduced by exact integer arithmetic
    # (1e20 is an integer in double precision) gives the closed-form value
    # mean + amplitude cos(2 pi (t - peak mod period) / period)
    s = rcsim.Sine(mean=25.0, amplitude=7.0, period=86400.0, peak=1e20)
    r = int(1e20) % 86400
    t = np.array([0.0, 3600.0, 40000.0, 86399.0])
    want = 25.0 + 7.0 * np.cos(2.0 * np.pi * (t - r) / 86400.0)
    assert s.value(t) == pytest.approx(want, abs=1e-12)
    # before, the integral over an hour came out as mean x 1 h: the sine part was lost
    want_int = 25.0 * 3600.0 + 7.0 * 86400.0 / (2 * math.pi) * (
        math.sin(2 * math.pi * (3600.0 - r) / 86400.0) - math.sin(2 * math.pi * (0.0 - r) / 86400.0))
    assert s.integral(0.0, 3600.0) == pytest.approx(want_int, rel=1e-12)


@pytest.mark.parametrize("kw", [dict(period=1e10), dict(period=1e10, peak=0.0),
                                dict(period=86400.0, peak=1e20), dict(period=1e10, peak=1e20)])
def test_huge_periods_and_peaks_close_the_energy_balance_on_the_exact_path(kw):
    # before: a balance error of 0.03 with the peak 1e20 s away (its phase lost)
    net = rcsim.Network()
    net.add_node("x", capacity=8400.0, initial=5.0)
    net.add_boundary("amb", temperature=rcsim.Sine(mean=25.0, amplitude=7.0, **kw))
    net.add_link("x", "amb", resistance=2.5, name="skin")
    exact = net.simulate(duration=86400, step=600, solver="exact")
    assert exact.energy_balance_error < 1e-9
    # the same run on the stiff path (BDF, independent of the closed forms) agrees
    stiff = net.simulate(duration=86400, step=600, solver="stiff", rtol=1e-9, atol=1e-9)
    assert exact.temperatures["x"].to_numpy() == pytest.approx(
        stiff.temperatures["x"].to_numpy(), abs=1e-4)


def test_a_sine_refuses_values_that_are_not_finite():
    with pytest.raises(ProfileError, match="peak must be a finite number"):
        rcsim.Sine(mean=25.0, amplitude=7.0, period=86400.0, peak=math.inf)
