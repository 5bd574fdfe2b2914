"""Hostile inputs around time and units: time headers with units, mixed UTC offsets, other CSV
separators, temperatures below absolute zero, unit-library notation in messages, duplicated
TOML keys. Each case through the library (the value read) and through the CLI (one line, exit 2,
no traceback, no file left)."""

import numpy as np
import pytest

import rcsim
from rcsim.errors import InputError
from rcsim.fitting.logs import read_log
from rcsim.profiles import Table, read_time_series

SCENARIO = """
title = "t"
[simulation]
duration = "2 d"
step = "1 h"
[nodes.a]
capacity = "100 kJ/K"
initial = "20 degC"
[boundaries.out]
temperature = PROFILE
[links.w]
between = ["a", "out"]
resistance = "0.1 K/W"
"""
CSV_PROFILE = '{ csv = { file = "p.csv", column = "T" } }'


def _scenario(tmp_path, csv_text=None, profile=CSV_PROFILE, extra=""):
    if csv_text is not None:
        (tmp_path / "p.csv").write_text(csv_text, encoding="utf-8")
    path = tmp_path / "s.toml"
    path.write_text(SCENARIO.replace("PROFILE", profile) + extra, encoding="utf-8")
    return path


def _one_line_error(cli, tmp_path, path):
    out = tmp_path / "out.h5"
    r = cli("run", path, "-o", out)
    lines = [x for x in r.output.splitlines() if x.strip()]
    assert r.exit_code == 2, r.output
    assert len(lines) == 1 and lines[0].startswith("error: "), r.output
    assert "Traceback" not in r.output
    assert not out.exists()
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".rcsim-")]
    return lines[0]


# ---- 1. units in time headers ----------------------------------------------------------------
def test_profile_time_header_in_hours_is_read_in_hours(tmp_path):
    (tmp_path / "p.csv").write_text("time [h],T\n0,10\n24,20\n48,10\n")
    prof = Table.from_csv(tmp_path / "p.csv", "T").bind("temperature")
    # closed form: linear interpolation between the points as written, 12 h = 43200 s
    assert prof.value(43200.0) == pytest.approx(15.0, abs=1e-12)
    assert prof.span() == (0.0, 48 * 3600.0)


@pytest.mark.parametrize("header,unit,seconds", [
    ("time [min]", None, 60.0), ("elapsed (h)", None, 3600.0), ("t", "d", 86400.0),
    ("time [h]", "h", 3600.0), ("time [h]", "hour", 3600.0), ("t", None, 1.0),
])
def test_time_series_honours_the_header_or_time_unit(tmp_path, header, unit, seconds):
    # the factors: 1 min = 60 s, 1 h = 3600 s, 1 d = 86400 s (SI brochure, 9th ed., table 8)
    (tmp_path / "p.csv").write_text(f"{header},T\n0,1\n2,3\n")
    frame = read_time_series(tmp_path / "p.csv", ["T"], time_unit=unit)
    np.testing.assert_array_equal(frame.index.to_numpy(), [0.0, 2 * seconds])


def test_scenario_profile_with_an_hour_header_runs_two_days(tmp_path):
    path = _scenario(tmp_path, "time [h],T\n0,10\n24,20\n48,10\n")
    res = rcsim.load(path).run()
    # before the fix the 48 h table covered 48 s and the run was refused
    assert res.temperatures.index[-1] == 48 * 3600.0


@pytest.mark.parametrize("csv_text,profile,fragment", [
    ("time [h],T\n0,1\n100,2\n",
     '{ csv = { file = "p.csv", column = "T", time_unit = "min" } }',
     "its header says 'h' but time_unit is 'min'"),
    ("time [kg],T\n0,1\n100,2\n", CSV_PROFILE, "its header says 'kg', which is not a unit of time"),
    ("t,T\n0,1\n100,2\n", '{ csv = { file = "p.csv", column = "T", time_unit = "m" } }',
     "time_unit is 'm', which is not a unit of time"),
    ("t,T\n0,10\n200000,10\n", '{ csv = { file = "p.csv", column = "T" }, repeat = "1 d" }',
     "repeat goes inside the csv table"),
])
def test_time_unit_conflicts_refused(tmp_path, cli, csv_text, profile, fragment):
    line = _one_line_error(cli, tmp_path, _scenario(tmp_path, csv_text, profile))
    assert fragment in line, line
    assert "s.toml" in line


@pytest.mark.parametrize("header,column,unit,expected", [
    # 50 degF = 10 degC (T/degC = (T/degF - 32) / 1.8, NIST SP 811, B.8); 2 kW = 2000 W
    ("T [degF]", "T", None, 10.0), ("T [degF]", "T [degF]", None, 10.0),
    ("T [degF]", "T", "degree_Fahrenheit", 10.0), ("T", "T", "degF", 10.0), ("T", "T", None, 50.0),
    ("T (north)", "T (north)", None, 50.0),      # parentheses: a note, not a unit
])
def test_csv_value_units_in_headers_are_honoured(tmp_path, header, column, unit, expected):
    (tmp_path / "p.csv").write_text(f"time [h],{header}\n0,50\n48,50\n")
    prof = Table.from_csv(tmp_path / "p.csv", column, unit=unit).bind("temperature", "k")
    assert prof.value(3600.0) == pytest.approx(expected, abs=1e-12)


def test_csv_power_header_in_kilowatts(tmp_path):
    (tmp_path / "p.csv").write_text("t,P [kW]\n0,2\n10,2\n")
    assert Table.from_csv(tmp_path / "p.csv", "P").bind("power").value(5.0) == 2000.0


@pytest.mark.parametrize("header,unit,fragment", [
    ("T [degF]", "degC", "column 'T [degF]': its header says 'degF' but unit is 'degC'"),
    ("T [W]", None, "boundaries.out.temperature: p.csv column 'T [W]': expected a temperature"),
])
def test_csv_value_unit_conflicts_refused(tmp_path, cli, header, unit, fragment):
    profile = '{ csv = { file = "p.csv", column = "T"%s } }' % (
        f', unit = "{unit}"' if unit else "")
    line = _one_line_error(cli, tmp_path, _scenario(tmp_path, f"t,{header}\n0,1\n200000,2\n",
                                                    profile))
    assert fragment in line, line


def test_fit_log_refuses_a_header_unit_that_disagrees_with_time_unit(tmp_path):
    (tmp_path / "log.csv").write_text("time [h],a\n0,1\n1,2\n2,3\n")
    assert read_log(tmp_path / "log.csv", ["a"], []).time[-1] == 7200.0   # 2 h
    with pytest.raises(InputError, match="its header says 'h' but time_unit is 's'"):
        read_log(tmp_path / "log.csv", ["a"], [], time_unit="s")


def test_fit_log_timestamps_under_a_header_note_are_not_units(tmp_path):
    # "(UTC)" after a timestamp column names a clock, not a unit: only numbers take a unit
    (tmp_path / "log.csv").write_text("time (UTC),a\n2021-07-01T00:00,1\n2021-07-01T01:00,2\n")
    assert read_log(tmp_path / "log.csv", ["a"], []).time.tolist() == [0.0, 3600.0]


# ---- 2. mixed UTC offsets ----------------------------------------------------------------------
# The rows: 01:30+02:00 (23:30Z), 02:30+02:00 (00:30Z), 02:30+01:00 (01:30Z, after the autumn
# change), 02:30Z, 03:30-01:00 (04:30Z): hour steps except the last two (1 h and 2 h).
# Offsets per ISO 8601-1:2019 (local time = UTC + offset); elapsed seconds by hand.
MIXED = ("time,T\n2021-10-31T01:30+02:00,10\n2021-10-31T02:30+02:00,11\n"
         "2021-10-31T02:30+01:00,12\n2021-10-31T02:30Z,13\n2021-10-31T03:30-01:00,14\n")
MIXED_SECONDS = [0.0, 3600.0, 7200.0, 10800.0, 18000.0]


def test_profile_with_mixed_offsets_is_on_one_clock(tmp_path):
    (tmp_path / "p.csv").write_text(MIXED)
    frame = read_time_series(tmp_path / "p.csv", ["T"])
    np.testing.assert_array_equal(frame.index.to_numpy(), MIXED_SECONDS)
    start = read_time_series(tmp_path / "p.csv", ["T"], start="2021-10-30T23:00Z")
    np.testing.assert_array_equal(start.index.to_numpy(), np.add(MIXED_SECONDS, 1800.0))


def test_fit_log_with_mixed_offsets_is_on_one_clock(tmp_path):
    (tmp_path / "log.csv").write_text(MIXED.replace("T", "a", 1).replace("time,T", "time,a"))
    log = read_log(tmp_path / "log.csv", ["a"], [])
    np.testing.assert_array_equal(log.time, MIXED_SECONDS)
    assert str(log.start_time) == "2021-10-31 01:30:00+02:00"   # the first row's clock


def test_scenario_with_mixed_offsets_runs(tmp_path, cli):
    rows = "\n".join(f"2021-10-31T{h:02d}:00Z,5" for h in range(0, 24))
    text = MIXED.split("\n")[0] + "\n2021-10-30T22:00+02:00,5\n" + rows + \
        "\n2021-11-02T03:00+01:00,5\n"
    path = _scenario(tmp_path, text)
    r = cli("run", path)
    assert r.exit_code == 0, r.output


def test_rows_with_and_without_offsets_are_refused_by_line(tmp_path, cli):
    text = "time,T\n2021-10-31T01:30+02:00,10\n2021-10-31T02:30,11\n2021-11-03T02:30Z,12\n"
    line = _one_line_error(cli, tmp_path, _scenario(tmp_path, text))
    assert "p.csv" in line and "line 3" in line and "has no UTC offset" in line


# ---- 3. separators, tables of one point, [simulation] keys -----------------------------------
@pytest.mark.parametrize("sep,name", [(";", "semicolons"), ("\t", "tabs")])
def test_other_separators_say_what_was_found(tmp_path, cli, sep, name):
    text = f"time{sep}T\n0{sep}10\n200000{sep}20,5\n"
    line = _one_line_error(cli, tmp_path, _scenario(tmp_path, text))
    assert f"separated by {name}" in line and "rcsim reads comma-separated files" in line
    assert "p.csv" in line


@pytest.mark.parametrize("sep", [";", "\t"])
def test_fit_log_other_separators(tmp_path, sep):
    (tmp_path / "log.csv").write_text(f"time{sep}a\n0{sep}1\n1{sep}2\n")
    with pytest.raises(InputError, match="log.csv: its header .* is one column separated by"):
        read_log(tmp_path / "log.csv", ["a"], [])


@pytest.mark.parametrize("csv_text,profile,fragment", [
    ("t,T\n0,10\n", CSV_PROFILE, "csv.file (p.csv): a table needs at least two points"),
    (None, '{ table = { times = [0], values = [1] } }',
     "boundaries.out.temperature.table: a table needs at least two points"),
    (None, '{ steps = { at = [0, 10], values = [1] } }',
     "boundaries.out.temperature.steps: a list of steps has 2 times but 1 values"),
])
def test_small_tables_name_file_and_key(tmp_path, cli, csv_text, profile, fragment):
    line = _one_line_error(cli, tmp_path, _scenario(tmp_path, csv_text, profile))
    assert "s.toml" in line and fragment in line, line


@pytest.mark.parametrize("step,fragment", [
    ("3 d", "s.toml: simulation.step: step (259200 s) is longer than the duration"),
    ("1 ms", "s.toml: simulation.step: 1.73e+08 output samples are too many"),
])
def test_step_errors_name_file_and_key(tmp_path, cli, step, fragment):
    path = _scenario(tmp_path, profile='"5 degC"')
    path.write_text(path.read_text().replace('step = "1 h"', f'step = "{step}"'))
    line = _one_line_error(cli, tmp_path, path)
    assert fragment in line, line


# ---- 4. below absolute zero --------------------------------------------------------------------
# absolute zero is 0 K = -273.15 degC (SI brochure, 9th ed., 2.3.1: T/degC = T/K - 273.15);
# -300 degF = -184.4 degC is above it, -500 degF = -295.6 degC below it
THERMOSTAT = """
[thermostats.h]
node = "a"
setpoint = "SETPOINT"
band = "1 K"
power = "1 kW"
"""


@pytest.mark.parametrize("csv_text,profile,extra,fragment", [
    ("t,T\n0,20\n3600,-300\n200000,10\n", CSV_PROFILE, "",
     "boundaries.out.temperature: p.csv line 3 column 'T': -300 degC is below absolute zero"),
    ("t,T\n0,20\n3600,\n7200,-1\n200000,10\n",
     '{ csv = { file = "p.csv", column = "T", unit = "K", missing = "interpolate" } }', "",
     "p.csv line 4 column 'T': -274.15 degC is below absolute zero"),
    (None, '"-300 degC"', "", "boundaries.out.temperature: '-300 degC' is below absolute zero"),
    (None, '"-500 degF"', "", "below absolute zero"),
    (None, '{ steps = { at = [0, 10], values = [1, -300] } }', "",
     "values[1]: -300 is below absolute zero"),
    (None, '{ table = { times = [0, 1e6], values = ["1 degC", "-1 K"] } }', "",
     "values[1]: '-1 K' is below absolute zero"),
    (None, '{ sine = { mean = "-270 degC", amplitude = "5 K", period = "1 d" } }', "",
     "the sine falls to -275 degC, below absolute zero"),
    (None, '"5 degC"', THERMOSTAT.replace("SETPOINT", "-300 degC"),
     "thermostats.h.setpoint: '-300 degC' is below absolute zero"),
    (None, '"5 degC"', '\n[limits.a]\nmin = "-500 degF"\n', "limits.a.min: '-500 degF' is below"),
    (None, '"5 degC"', "", "nodes.a.initial: '-300 degC' is below absolute zero"),
])
def test_below_absolute_zero_refused_at_input(tmp_path, cli, csv_text, profile, extra, fragment):
    path = _scenario(tmp_path, csv_text, profile, extra)
    if "nodes.a.initial" in fragment:
        path.write_text(path.read_text().replace('initial = "20 degC"', 'initial = "-300 degC"'))
    line = _one_line_error(cli, tmp_path, path)
    assert fragment in line and "s.toml" in line, line


def test_melting_point_below_absolute_zero_refused(tmp_path, cli):
    path = _scenario(tmp_path, profile='"5 degC"')
    path.write_text(path.read_text().replace(
        'capacity = "100 kJ/K"',
        'mass = "2 kg"\nphase_change = { latent_heat = "333.55 kJ/kg", melting = ["-300 degC", '
        '"0 degC"], specific_heat_solid = "2.05 kJ/(kg*K)", specific_heat_liquid = '
        '"4.18 kJ/(kg*K)" }'))
    line = _one_line_error(cli, tmp_path, path)
    assert "nodes.a.phase_change.melting[0]: '-300 degC' is below absolute zero" in line, line


@pytest.mark.parametrize("text,fragment", [
    ("time,a,out\n0,20,10\n60,-300,10\n120,20,10\n", "column 'a' line 3: -300 degC is below"),
    ("time,a,out\n0,20,10\n60,20,10\n120,20,-274\n", "column 'out' line 4: -274 degC is below"),
])
def test_fit_log_temperatures_below_absolute_zero_refused(tmp_path, text, fragment):
    (tmp_path / "log.csv").write_text(text)
    with pytest.raises(InputError) as err:
        read_log(tmp_path / "log.csv", ["a"], ["out"])
    assert str(err.value).startswith("log.csv: ") and fragment in str(err.value), str(err.value)


def test_absolute_zero_itself_and_just_above_are_accepted():
    from rcsim.units import to_si

    assert to_si("0 K", "temperature") == pytest.approx(-273.15, abs=1e-12)
    assert to_si(-273.15, "temperature") == -273.15
    assert Table([0, 1], [-273.15, 20.0]).bind("temperature").value(0.0) == -273.15


def test_weather_record_other_separator(tmp_path):
    from rcsim.weather import read_weather

    (tmp_path / "w.csv").write_text("time [h];T_air\n0;20,5\n1;21,0\n")
    with pytest.raises(InputError, match="w.csv: its header .* separated by semicolons"):
        read_weather(tmp_path / "w.csv", {"air_temperature": "T_air"})


# ---- 5. units in words, duplicated TOML keys ---------------------------------------------------
@pytest.mark.parametrize("value,kind,fragment", [
    ("5 W*K/m^2", "heat_transfer_coefficient",
     "expected a heat transfer coefficient, got '5 W*K/m^2' (K*kg/s^3 in SI base units: not a "
     "quantity rcsim uses) (write a heat transfer coefficient such as '10 W/(m^2*K)')"),
    ("3 m/s^2", "capacity", "(m/s^2 in SI base units: not a quantity rcsim uses) "
                            "(write a heat capacity such as '8.4 kJ/K')"),
    ("3 kg", "length", "expected a length, got '3 kg' (a mass) (write a length such as '50 mm')"),
    ("3 m", "temperature", "(a length) (write a temperature such as '25 degC')"),
    ("3 W", "temperature_difference", "(a power) (write a temperature difference such as '7 K')"),
    ("2 m", "dimensionless", "expected a plain number, got '2 m' (a length)"),
])
def test_wrong_dimensions_are_said_in_words_with_an_example(value, kind, fragment):
    from rcsim.units import to_si

    with pytest.raises(InputError) as err:
        to_si(value, kind, "a.b")
    text = str(err.value)
    assert fragment in text, text
    assert "[" not in text   # never the unit library's notation, "[mass] * [temperature] / ..."


def test_every_kind_has_an_example_of_its_own_dimension():
    from rcsim.units import EXAMPLE_UNITS, KINDS, to_si

    assert set(EXAMPLE_UNITS) == set(KINDS)
    for kind, example in EXAMPLE_UNITS.items():
        to_si(example, kind)   # each example is a valid value of its kind


@pytest.mark.parametrize("addition,fragment", [
    ('\n[nodes.b]\ncapacity = "1 kJ/K"\ninitial = "5 degC"\ncapacity = "2 kJ/K"\n',
     "s.toml line 18: key 'nodes.b.capacity' is given twice (first at line 16)"),
    ('\n[links.w]\nresistance = "1 K/W"\n', "s.toml line 15: table [links.w] is declared twice "
                                           "(first at line 11)"),
    ('\n[nodes.b]\ncapacity = "1 kJ/K"\n"capacity" = 3',
     "s.toml line 17: key 'nodes.b.capacity' is given twice (first at line 16)"),
    ('\n[nodes.b]\nphase_change = { latent_heat = 1, latent_heat = 2 }\n',
     "s.toml line 16: key 'nodes.b.phase_change.latent_heat' is given twice in one inline table"),
])
def test_duplicated_toml_keys_are_named_with_their_lines(tmp_path, cli, addition, fragment):
    # the line numbers counted by hand in SCENARIO + addition (line 1 is the empty first line)
    path = _scenario(tmp_path, profile='"5 degC"', extra=addition)
    line = _one_line_error(cli, tmp_path, path)
    assert fragment in line, line


# ---- 6. cylinder and sphere parts: every key documented, diameters accepted -------------------
def test_readme_documents_every_key_of_cylinder_and_sphere_parts():
    import os
    import re

    from conftest import ROOT
    from rcsim.parts import RADIAL_PART_KEYS

    text = open(os.path.join(ROOT, "README.md"), encoding="utf-8").read()
    start = text.index("**Cylinder and sphere parts**")
    paragraph = text[start:text.index("\n\n", start)]
    documented = set(re.findall(r"`([a-z_]+)(?: = [^`]*)?`", paragraph))
    assert set(RADIAL_PART_KEYS) | {"length"} <= documented


CYLINDER = SCENARIO.replace('resistance = "0.1 K/W"', 'parts = [ { cylinder = { k = "0.04 W/(m*K)", '
                            'inner_diameter = "60 mm", outer_diameter = "110 mm", length = "2 m" } } ]')


def test_cylinder_and_sphere_by_diameters_match_the_closed_forms(tmp_path):
    import math

    from rcsim.errors import InputError

    (tmp_path / "c.toml").write_text(CYLINDER.replace("PROFILE", '"5 degC"'))
    sc = rcsim.load(tmp_path / "c.toml")
    # Incropera & DeWitt, Fundamentals of Heat and Mass Transfer, 6th ed., eq. 3.28:
    # R = ln(r2/r1) / (2 pi L k); r1 = 30 mm, r2 = 55 mm
    expected = math.log(0.055 / 0.030) / (2 * math.pi * 2.0 * 0.04)
    assert sc.network.links["w"].parts[0].resistance == pytest.approx(expected, rel=1e-12)
    # the diameter is a key path for sweeps and fits: 150 mm outside
    wider = sc.with_values({"links.w.parts[0].cylinder.outer_diameter": "150 mm"})
    assert wider.network.links["w"].parts[0].resistance == pytest.approx(
        math.log(0.075 / 0.030) / (2 * math.pi * 2.0 * 0.04), rel=1e-12)
    # eq. 3.36: R = (1/r1 - 1/r2) / (4 pi k); 20 mm inside, 10 mm thick
    net = rcsim.Network()
    net.add_node("a", capacity=1.0)
    net.add_boundary("b", temperature=0.0)
    net.add_link("a", "b", parts=[{"sphere": {"k": 0.5, "inner_diameter": "40 mm",
                                              "thickness": "10 mm"}}])
    assert net.links["a-b"].parts[0].resistance == pytest.approx(
        (1 / 0.02 - 1 / 0.03) / (4 * math.pi * 0.5), rel=1e-12)
    with pytest.raises(InputError, match="give inner_radius or inner_diameter, not both"):
        net.add_link("a", "b", name="x", parts=[{"sphere": {
            "k": 1, "inner_radius": "1 cm", "inner_diameter": "2 cm", "outer_radius": "3 cm"}}])


# ---- temperature units in fit-log headers --------------------------------------------------------
def test_fit_log_temperature_headers_with_units_are_converted(tmp_path):
    # 32 degF = 0 degC, 212 degF = 100 degC, 50 degF = 10 degC (the Fahrenheit scale's definition);
    # 293.15 K = 20 degC. Before: 'a [degF]' matched no node, and mapped it was read as degC.
    (tmp_path / "log.csv").write_text("time [h],a [degF],amb [K]\n0,32,293.15\n1,212,293.15\n"
                                      "2,50,293.15\n")
    log = read_log(tmp_path / "log.csv", ["a"], ["amb"])
    assert log.targets == {"a [degF]": "a", "amb [K]": "amb"}
    np.testing.assert_allclose(log.values["a [degF]"].to_numpy(), [0.0, 100.0, 10.0], atol=1e-12)
    np.testing.assert_allclose(log.values["amb [K]"].to_numpy(), 20.0, atol=1e-12)
    mapped = read_log(tmp_path / "log.csv", ["probe"], ["amb"], columns={"a [degF]": "probe"})
    np.testing.assert_allclose(mapped.values["a [degF]"].to_numpy(), [0.0, 100.0, 10.0],
                               atol=1e-12)
    (tmp_path / "bad.csv").write_text("time,a [W]\n0,1\n1,2\n")
    with pytest.raises(InputError, match="temperature"):
        read_log(tmp_path / "bad.csv", ["a"], [])
