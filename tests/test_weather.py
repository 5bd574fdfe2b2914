"""Weather records (rcsim.weather): clock rule, units, gaps, and a real year from a registry
package.

Sources: the daylight-saving rules of the IANA time zone database (Europe/Zurich changes at
01:00 UTC on the last Sundays of March and October); unit definitions (68 degF = 20 degC,
3.6 km/h = 1 m/s, 1 okta = 1/8); for the real year, the typical meteorological year of Greensboro,
North Carolina that pvlib ships as test data (read here through rcsim.weather only), checked
against the definition GHI = DNI cos z + DHI, the standard atmosphere, the Magnus/Alduchov-Eskridge
dew point and plausible climate figures (marked).
"""

import importlib.resources
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import rcsim.weather as weather
from rcsim import sky, solar
from rcsim.errors import DataError, InputError, UnitError

DATA = Path(__file__).parent / "data" / "weather"
ZURICH = "Europe/Zurich"


def _write(tmp_path, text, name="record.csv"):
    path = tmp_path / name
    path.write_text(text.strip() + "\n", encoding="utf-8")
    return path


def _error(exc_type, *args, **kwargs):
    """The error a read raises, checked to be one line."""
    with pytest.raises(exc_type) as err:
        weather.read_weather(*args, **kwargs)
    assert "\n" not in str(err.value)
    return err.value


# ------------------------------------------------------------------------------------ clock
def test_mixed_offsets_across_a_daylight_saving_change_are_one_clock():
    columns = {"air_temperature": "T_air", "global_horizontal": "GHI", "wind_speed": "wind",
               "sky_cover": "cover"}
    record = weather.read_weather(DATA / "spring-change-offsets.csv", columns, time_zone=ZURICH)
    # Z, +01:00 and +02:00 rows are hourly instants
    np.testing.assert_array_equal(record.seconds, np.arange(9) * 3600.0)
    assert str(record.timestamps[0]) == "2021-03-28 00:00:00+01:00"
    assert str(record.timestamps[2]) == "2021-03-28 03:00:00+02:00"   # clock skipped 02:00
    np.testing.assert_allclose(record.values["wind_speed"][:3], [2.0, 2.0, 3.0])  # km/h
    np.testing.assert_allclose(record.values["sky_cover"][:3], [1.0, 1.0, 0.75])  # okta
    # a naive start is a local clock reading: 06:00 CEST is the 6th row (04:00Z)
    later = weather.read_weather(DATA / "spring-change-offsets.csv", columns, time_zone=ZURICH,
                                 start="2021-03-28T06:00")
    np.testing.assert_array_equal(later.seconds, (np.arange(9) - 5) * 3600.0)
    # without a zone the instants are the same, shown in UTC
    bare = weather.read_weather(DATA / "spring-change-offsets.csv", columns)
    np.testing.assert_array_equal(bare.seconds, record.seconds)
    assert str(bare.timestamps.tz) == "UTC"


def test_local_clock_follows_the_zones_daylight_saving_rule():
    columns = {"air_temperature": "T_air"}
    record = weather.read_weather(DATA / "spring-change-local.csv", columns, time_zone=ZURICH)
    # 01:00 CET to 03:00 CEST is one hour
    np.testing.assert_array_equal(record.seconds, np.arange(5) * 3600.0)
    # the same readings as standard time all year (+01:00): 01:00 to 03:00 is a 2 h gap
    err = _error(DataError, DATA / "spring-change-local.csv", columns, time_zone="+01:00")
    assert err.where.endswith("lines 3-4") and "no rows between" in err.message
    filled = weather.read_weather(DATA / "spring-change-local.csv", columns, time_zone="+01:00",
                                  max_gap="2 h")
    np.testing.assert_array_equal(filled.seconds, [0.0, 3600.0, 10800.0, 14400.0, 18000.0])


def test_autumn_change_with_offsets_keeps_the_repeated_hour_apart():
    record = weather.read_weather(DATA / "autumn-change-offsets.csv",
                                  {"air_temperature": "T_air"}, time_zone=ZURICH)
    np.testing.assert_array_equal(record.seconds, np.arange(4) * 3600.0)


def test_local_times_the_clock_repeats_or_skips_are_refused(tmp_path):
    repeated = _write(tmp_path, """
time,T
2021-10-31T01:00,9
2021-10-31T02:00,8
2021-10-31T03:00,8
""")
    err = _error(DataError, repeated, {"air_temperature": "T"}, time_zone=ZURICH)
    assert err.where == "record.csv line 3" and "occurs twice" in err.message
    skipped = _write(tmp_path, """
time,T
2021-03-28T01:30,4
2021-03-28T02:30,4
2021-03-28T03:30,4
""")
    err = _error(DataError, skipped, {"air_temperature": "T"}, time_zone=ZURICH)
    assert err.where == "record.csv line 3" and "does not exist" in err.message


def test_wrong_offsets_are_refused_naming_the_row(tmp_path):
    # +01:00 in July: Zurich is at +02:00 then, and the record's offsets vary
    wrong = _write(tmp_path, """
time,T
2021-07-01T10:00+02:00,20
2021-07-01T11:00+02:00,21
2021-07-01T11:00+01:00,22
2021-07-01T13:00+02:00,23
""")
    err = _error(DataError, wrong, {"air_temperature": "T"}, time_zone=ZURICH)
    assert err.where == "record.csv line 4" and "is at +02:00" in err.message
    out_of_range = _write(tmp_path, """
time,T
2021-07-01T10:00+02:00,20
2021-07-01T11:00+15:00,21
""")
    err = _error(DataError, out_of_range, {"air_temperature": "T"})
    assert err.where == "record.csv line 3" and "+15:00" in err.message
    mixed = _write(tmp_path, """
time,T
2021-07-01T10:00+02:00,20
2021-07-01T11:00,21
""")
    err = _error(DataError, mixed, {"air_temperature": "T"}, time_zone=ZURICH)
    assert err.where == "record.csv line 3" and "has no UTC offset" in err.message
    naive = _write(tmp_path, "time,T\n2021-07-01T10:00,20\n2021-07-01T11:00,21")
    err = _error(InputError, naive, {"air_temperature": "T"}, start="2021-07-01T10:00Z")
    assert "disagree on time zones" in err.message
    err = _error(InputError, naive, {"air_temperature": "T"}, time_zone="Mars/Olympus")
    assert "unknown time zone" in err.message


def test_a_constant_offset_needs_no_zone_rules(tmp_path):
    # standard time all year, stamped +01:00 in July: exact instants, accepted as they are
    record = _write(tmp_path, "time,T\n2021-07-01T10:00+01:00,20\n2021-07-01T11:00+01:00,21")
    got = weather.read_weather(record, {"air_temperature": "T"}, time_zone=ZURICH)
    assert str(got.timestamps[0]) == "2021-07-01 11:00:00+02:00"


def test_elapsed_time_with_its_unit_in_the_header():
    columns = {"air_temperature": "T_air", "relative_humidity": "RH", "wind_speed": "wind",
               "global_horizontal": "GHI"}
    record = weather.read_weather(DATA / "elapsed-hours.csv", columns)
    np.testing.assert_array_equal(record.seconds, np.arange(5) * 3600.0)
    assert record.timestamps is None
    np.testing.assert_allclose(record.values["air_temperature"], [0, 5, 10, 15, 20], atol=1e-12)
    np.testing.assert_allclose(record.values["relative_humidity"], [0.8, 0.7, 0.6, 0.5, 0.4])
    np.testing.assert_allclose(record.values["global_horizontal"], [0, 100, 300, 500, 200])
    placed = weather.read_weather(DATA / "elapsed-hours.csv", columns, time_zone=ZURICH,
                                  start="2021-06-01T06:00")
    assert str(placed.timestamps[2]) == "2021-06-01 08:00:00+02:00"


def test_numeric_times_need_a_unit(tmp_path):
    path = _write(tmp_path, "time,T\n0,1\n1,2\n2,3")
    err = _error(DataError, path, {"air_temperature": "T"})
    assert "no unit" in err.message and "time [h]" in err.hint
    got = weather.read_weather(path, {"air_temperature": "T"}, time_unit="min")
    np.testing.assert_array_equal(got.seconds, [0.0, 60.0, 120.0])


def test_unsorted_and_duplicated_times_are_refused_naming_the_row(tmp_path):
    unsorted = _write(tmp_path, """
time,T
2021-07-01T10:00Z,20
2021-07-01T12:00Z,21
2021-07-01T11:00Z,22
""")
    err = _error(DataError, unsorted, {"air_temperature": "T"})
    assert err.where == "record.csv line 4" and "earlier than" in err.message
    duplicated = _write(tmp_path, """
time,T
2021-07-01T10:00Z,20
2021-07-01T11:00Z,21
2021-07-01T13:00+02:00,22
""")
    err = _error(DataError, duplicated, {"air_temperature": "T"})
    assert err.where == "record.csv line 4" and "repeats the time" in err.message


# ------------------------------------------------------------------------------------ units
def test_units_from_the_header_or_the_mapping(tmp_path):
    path = _write(tmp_path, "time [h],Dry bulb,T2 [K],cover\n0,50,300,5\n1,59,301,10")
    record = weather.read_weather(path, {
        "air_temperature": {"column": "Dry bulb", "unit": "degF"},
        "outdoor_copy": {"column": "T2", "kind": "temperature"},
        "sky_cover": {"column": "cover", "unit": "tenths"}})
    np.testing.assert_allclose(record.values["air_temperature"], [10.0, 15.0], atol=1e-12)
    np.testing.assert_allclose(record.values["outdoor_copy"], [26.85, 27.85], atol=1e-12)
    np.testing.assert_allclose(record.values["sky_cover"], [0.5, 1.0])


def test_a_unit_that_disagrees_with_the_quantity_names_the_column(tmp_path):
    path = _write(tmp_path, "time [h],T_air [W/m^2],GHI [degC]\n0,1,2\n1,2,3")
    err = _error(UnitError, path, {"air_temperature": "T_air"})
    assert err.where == "record.csv column 'T_air [W/m^2]'" and "temperature" in err.message
    err = _error(UnitError, path, {"global_horizontal": "GHI"})
    assert err.where == "record.csv column 'GHI [degC]'" and "heat flux" in err.message
    path = _write(tmp_path, "time [h],T_air [degF]\n0,1\n1,2")
    err = _error(UnitError, path, {"air_temperature": {"column": "T_air", "unit": "degC"}})
    assert "header says 'degF' but the mapping says 'degC'" in err.message
    path = _write(tmp_path, "time [h],RH [%]\n0,50\n1,150")
    err = _error(DataError, path, {"relative_humidity": "RH"})
    assert err.where == "record.csv line 3" and "out of range" in err.message


def test_each_column_is_converted_once(monkeypatch, tmp_path):
    # one conversion per column (two unit look-ups for the affine map), not one per value
    rows = "\n".join(f"{i},{50 + i % 7},{i % 5}" for i in range(2000))
    path = _write(tmp_path, "time [h],T [degF],v [km/h]\n" + rows)
    calls = []
    real = weather.to_si
    monkeypatch.setattr(weather, "to_si", lambda *a, **k: calls.append(a) or real(*a, **k))
    record = weather.read_weather(path, {"air_temperature": "T", "wind_speed": "v"})
    assert len(calls) <= 6
    np.testing.assert_allclose(record.values["wind_speed"][:3], [0.0, 1 / 3.6, 2 / 3.6])


def test_unknown_quantities_and_columns_are_named(tmp_path):
    path = _write(tmp_path, "time [h],T\n0,1\n1,2")
    err = _error(InputError, path, {"air_temperatur": "T"})
    assert "did you mean 'air_temperature'" in err.hint
    err = _error(DataError, path, {"air_temperature": "T_air"})
    assert "no column 'T_air'" in err.message
    err = _error(InputError, path, {"air_temperature": {"column": "T", "units": "K"}})
    assert "unknown key 'units'" in err.message


# ------------------------------------------------------------------------------------- gaps
GAPPY = """
time,T,G
2021-07-01T10:00Z,20,100
2021-07-01T11:00Z,,200
2021-07-01T12:00Z,,300
2021-07-01T13:00Z,23,NA
2021-07-01T14:00Z,24,500
"""


def test_gaps_are_errors_unless_filling_is_asked_for(tmp_path):
    path = _write(tmp_path, GAPPY)
    columns = {"air_temperature": "T", "global_horizontal": "G"}
    err = _error(DataError, path, columns)
    assert err.where == "record.csv lines 3-4" and "column 'T'" in err.message
    err = _error(DataError, path, columns, max_gap="2 h")
    assert err.where == "record.csv lines 3-4" and "longer than max_gap" in err.message
    record = weather.read_weather(path, columns, max_gap="3 h")
    # linear in time between the values around each gap
    np.testing.assert_allclose(record.values["air_temperature"], [20, 21, 22, 23, 24])
    np.testing.assert_allclose(record.values["global_horizontal"], [100, 200, 300, 400, 500])
    assert record.filled == {"air_temperature": 2, "global_horizontal": 1}


def test_gaps_at_the_ends_and_missing_rows(tmp_path):
    path = _write(tmp_path, "time,T\n2021-07-01T10:00Z,20\n2021-07-01T11:00Z,21\n"
                            "2021-07-01T12:00Z,")
    err = _error(DataError, path, {"air_temperature": "T"}, max_gap="10 h")
    assert err.where == "record.csv line 4" and "start or end" in err.message
    rows = _write(tmp_path, "time,T\n2021-07-01T10:00Z,20\n2021-07-01T11:00Z,21\n"
                            "2021-07-01T15:00Z,25\n2021-07-01T16:00Z,26")
    err = _error(DataError, rows, {"air_temperature": "T"})
    assert err.where == "record.csv lines 3-4" and "4 h" in err.message
    err = _error(DataError, rows, {"air_temperature": "T"}, max_gap="3 h")
    assert "longer than max_gap" in err.hint
    assert weather.read_weather(rows, {"air_temperature": "T"}, max_gap="4 h").seconds[-1] == \
        6 * 3600.0


def test_missing_value_flags(tmp_path):
    path = _write(tmp_path, "time [h],T\n0,20\n1,-9999\n2,22")
    err = _error(DataError, path, {"air_temperature": "T"})
    assert err.where == "record.csv line 3" and "below absolute zero" in err.message
    assert "missing_values" in err.hint
    record = weather.read_weather(path, {"air_temperature": "T"}, missing_values=[-9999],
                                  max_gap="2 h")
    np.testing.assert_allclose(record.values["air_temperature"], [20, 21, 22])
    text = _write(tmp_path, "time [h],T\n0,20\n1,warm\n2,22")
    err = _error(DataError, text, {"air_temperature": "T"})
    assert err.where == "record.csv line 3" and "'warm' is not a number" in err.message


def test_interval_means_are_placed_at_mid_interval():
    columns = {"air_temperature": "T_air", "global_horizontal": "GHI"}
    record = weather.read_weather(DATA / "elapsed-hours.csv", columns,
                                  irradiance_period="ending")
    times, _ = record.series("global_horizontal")
    np.testing.assert_array_equal(times, np.arange(5) * 3600.0 - 1800.0)
    np.testing.assert_array_equal(record.series("air_temperature")[0], np.arange(5) * 3600.0)
    with pytest.raises(InputError, match="no quantity 'wind_speed'"):
        record.series("wind_speed")


# ------------------------------------------------------------------------- a real year
def _typical_year_as_weather_csv(tmp_path):
    """pvlib's typical meteorological year of Greensboro NC, its date and hour columns turned
    into one ISO-8601 column (local standard time, offset from the file's first line; months of
    different years placed on 1999); the value columns kept as they are."""
    source = importlib.resources.files("pvlib") / "data" / "723170TYA.CSV"
    with source.open(encoding="utf-8") as fh:
        meta = fh.readline().strip().split(",")
    frame = pd.read_csv(source, skiprows=1)
    date = pd.to_datetime(frame["Date (MM/DD/YYYY)"], format="%m/%d/%Y")
    hour = frame["Time (HH:MM)"].str.slice(0, 2).astype(int)   # hour ending, 1..24
    stamps = pd.to_datetime(pd.DataFrame({"year": 1999, "month": date.dt.month,
                                          "day": date.dt.day})) + pd.to_timedelta(hour, unit="h")
    hours, minutes = divmod(int(round(float(meta[3]) * 60)), 60)
    offset = f"{'-' if float(meta[3]) < 0 else '+'}{abs(hours):02d}:{minutes:02d}"
    keep = ["Dry-bulb (C)", "Dew-point (C)", "RHum (%)", "GHI (W/m^2)", "DNI (W/m^2)",
            "DHI (W/m^2)", "Wspd (m/s)", "TotCld (tenths)", "Pressure (mbar)"]
    out = frame[keep].copy()
    out.insert(0, "time", stamps.dt.strftime("%Y-%m-%dT%H:%M") + offset)
    path = tmp_path / "greensboro.csv"
    out.to_csv(path, index=False)
    site = {"latitude": float(meta[4]), "longitude": float(meta[5]), "elevation": float(meta[6])}
    return path, site


TYPICAL_YEAR_COLUMNS = {
    "air_temperature": {"column": "Dry-bulb (C)", "unit": "degC"},
    "dew_point": {"column": "Dew-point (C)", "unit": "degC"},
    "relative_humidity": {"column": "RHum (%)", "unit": "%"},
    "global_horizontal": {"column": "GHI (W/m^2)", "unit": "W/m^2"},
    "direct_normal": {"column": "DNI (W/m^2)", "unit": "W/m^2"},
    "diffuse_horizontal": {"column": "DHI (W/m^2)", "unit": "W/m^2"},
    "wind_speed": {"column": "Wspd (m/s)", "unit": "m/s"},
    "sky_cover": {"column": "TotCld (tenths)", "unit": "tenths"},
    "pressure": {"column": "Pressure (mbar)", "unit": "mbar"},
}


def test_a_real_typical_year_reads_into_plausible_si_arrays(tmp_path):
    path, site = _typical_year_as_weather_csv(tmp_path)
    record = weather.read_weather(path, TYPICAL_YEAR_COLUMNS, time_zone="America/New_York",
                                  irradiance_period="ending")
    values = record.values
    assert record.seconds.size == 8760 and record.step == 3600.0
    np.testing.assert_array_equal(np.diff(record.seconds), 3600.0)
    assert str(record.timestamps[0]) == "1999-01-01 01:00:00-05:00"
    # row 4500 is 13:00 local standard time on 7 July: 14:00 on the summer clock (EDT)
    assert str(record.timestamps[4500]) == "1999-07-07 14:00:00-04:00"
    # climate figures (from memory): Greensboro's annual mean near 15 degC; North Carolina
    # receives some 4-5 kWh/m^2 a day on the horizontal (170-210 W/m^2 on average)
    assert 12.0 < values["air_temperature"].mean() < 17.0
    assert 150.0 < values["global_horizontal"].mean() < 220.0
    for name in ("global_horizontal", "direct_normal", "diffuse_horizontal"):
        assert values[name].min() >= 0.0
    # mbar -> Pa: the standard atmosphere at 273 m gives 98.1 kPa (ICAO barometric formula)
    standard = 101325.0 * (1 - 2.25577e-5 * site["elevation"]) ** 5.25588
    assert abs(values["pressure"].mean() - standard) < 1500.0
    # % -> fraction: the dew point from humidity (Alduchov-Eskridge) matches the dew-point column
    derived = sky.dew_point_from_humidity(values["air_temperature"], values["relative_humidity"])
    assert np.median(np.abs(derived - values["dew_point"])) < 0.5


def test_a_real_typical_year_closes_the_irradiance_components(tmp_path):
    # definition: GHI = DNI cos z + DHI. The record's irradiance is the mean of the hour ending
    # at the stamp, so the sun is taken at mid-hour (irradiance_period = "ending").
    path, site = _typical_year_as_weather_csv(tmp_path)
    record = weather.read_weather(path, TYPICAL_YEAR_COLUMNS, time_zone="America/New_York",
                                  irradiance_period="ending")
    ghi = record.values["global_horizontal"]
    dni, dhi = record.values["direct_normal"], record.values["diffuse_horizontal"]

    def closure(times):
        sun = solar.solar_position(times, site["latitude"], site["longitude"],
                                   site["elevation"])
        cos_z = np.clip(np.cos(np.radians(sun["zenith"].to_numpy())), 0.0, None)
        return dni * cos_z + dhi

    middle = closure(record.times_of("global_horizontal"))
    assert abs(middle.sum() / ghi.sum() - 1.0) < 0.01            # annual, within 1 %
    bright = ghi > 200.0
    error_middle = np.abs(middle[bright] - ghi[bright]) / ghi[bright]
    assert np.percentile(error_middle, 95) < 0.02                # hourly, within 2 % mostly
    # the sun at the end-of-hour stamps closes the set worse: the placement matters
    end = closure(record.timestamps)
    error_end = np.abs(end[bright] - ghi[bright]) / ghi[bright]
    assert np.median(error_end) > 3 * np.median(error_middle)


def test_a_real_typical_year_gives_a_sky_of_the_standards_order(tmp_path):
    # ISO 13790:2008 11.4.6 takes the sky 11 K below the air on average in intermediate
    # climates (9 K tropical, 13 K sub-polar); the dew-point model with cloud correction over a
    # real year should give an average depression of that order
    path, _site = _typical_year_as_weather_csv(tmp_path)
    record = weather.read_weather(path, TYPICAL_YEAR_COLUMNS, time_zone="America/New_York")
    values = record.values
    cloudy = sky.sky_temperature(values["air_temperature"], dew_point=values["dew_point"],
                                 sky_cover=values["sky_cover"])
    clear = sky.sky_temperature(values["air_temperature"], dew_point=values["dew_point"])
    depression = values["air_temperature"] - cloudy
    assert 8.0 < depression.mean() < 16.0
    assert np.all(cloudy >= clear - 1e-9)                       # clouds never cool the sky


def test_malformed_files_and_arguments(tmp_path):
    twice = _write(tmp_path, "time [h],T,T\n0,1,2\n1,2,3")
    err = _error(DataError, twice, {"air_temperature": "T"})
    assert err.where == "record.csv line 1" and "two columns named 'T'" in err.message
    same_name = _write(tmp_path, "time [h],T [degC],T [degF]\n0,1,2\n1,2,3")
    err = _error(DataError, same_name, {"air_temperature": "T"})
    assert "the same name" in err.message
    path = _write(tmp_path, "time [h],T\n0,1\n1,2")
    err = _error(InputError, path, {"air_temperature": "T"}, missing_values="none")
    assert err.where == "record.csv: missing_values"
    err = _error(InputError, path, {"air_temperature": "T"}, irradiance_period="hourly")
    assert "valid: instant, ending, beginning" in err.hint
    err = _error(DataError, tmp_path / "absent.csv", {"air_temperature": "T"})
    assert "file not found" in err.message
    stamp = _write(tmp_path, "time,T\n2021-07-01T10:00Z,1\nlater,2")
    err = _error(DataError, stamp, {"air_temperature": "T"})
    assert err.where == "record.csv line 3" and "not an ISO-8601 timestamp" in err.message
