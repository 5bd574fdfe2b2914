"""CSV time series read numbers first (rcsim.profiles.numeric_csv): the same result as the text
pass, cell by cell, and the text pass's messages wherever a file has a problem."""

import io
import random

import numpy as np
import pandas as pd
import pytest

from rcsim.errors import DataError, InputError
from rcsim.fitting import read_log
from rcsim.profiles import Table, numeric_csv, read_time_series, timeseries


def write(tmp_path, text, name="s.csv", encoding="utf-8"):
    path = tmp_path / name
    path.write_bytes(text.encode(encoding) if isinstance(text, str) else text)
    return path


def outcome(read):
    """What a read gives: ('ok', frame) or ('error', its message)."""
    try:
        return "ok", read()
    except DataError as err:
        return "error", str(err)


def both_passes(monkeypatch, read):
    """The outcome with the numbers-first parse, and with the text pass alone (as before)."""
    fast = outcome(read)
    with monkeypatch.context() as m:
        m.setattr(numeric_csv, "ENABLED", False)
        text = outcome(read)
    return fast, text


def same_frame(a, b):
    assert list(a.columns) == list(b.columns)
    assert a.attrs == b.attrs
    for x, y in [(a.index.to_numpy(), b.index.to_numpy())] + \
            [(a[c].to_numpy(), b[c].to_numpy()) for c in a.columns]:
        assert x.dtype == y.dtype == np.float64
        # bit for bit: the same numbers, NaN in the same places, zeros of the same sign
        assert np.array_equal(x.view(np.int64), y.view(np.int64))


TEN = "\n".join(f"{60 * i},{20 + 0.1 * i:.1f}" for i in range(10))

# (file text, keyword arguments of read_time_series): files the numbers-first parse reads and
# files it must leave to the text pass; each is read both ways and must give the same frame or
# the same message (the subtle cases of the text pass: units in headers, blank cells, timestamps
# against elapsed times, times repeated once rounded, quoted fields, BOM, trailing separators)
CASES = {
    "plain": ("time,T\n" + TEN + "\n", {}),
    "units_in_headers": ("time [min], T [degF], P [kW]\n0, 68, 1.5\n1, 70.5, 2\n2, 72, 2.5\n", {}),
    "time_unit_key": ("t,T\n0,1\n1.5,2\n3,3\n", dict(time_unit="h")),
    "time_by_bare_name": ("hour [h],T\n0,1\n1,2\n", dict(time="hour", columns=["T"])),
    "column_by_bare_name": ("time,T [degF]\n0,50\n1,51\n", dict(columns=["T"])),
    "header_and_time_unit_disagree": ("time [h],T\n0,1\n1,2\n", dict(time_unit="min")),
    "time_unit_not_time": ("time [m],T\n0,1\n1,2\n", {}),
    "crlf": ("time,T\r\n0,1\r\n60,2\r\n", {}),
    "bom": ("\ufefftime,T\n0,1\n60,2\n", {}),
    "blank_lines": ("time,T\n\n0,1\n\n60,2\n\n", {}),
    "quoted": ('"time","T"\n"0","1.5"\n"60","2.5"\n', {}),
    "spaces": ("time , T\n 0 , 1.5 \n  60,\t2.5\n", {}),
    "non_breaking_space": ("time,T\n0,\u00a01.5\n60,2.5\n", {}),
    "scientific": ("time,T\n0,1e1\n6E1,-2.5E-3\n1.2e+2,.5\n", {}),
    "many_digits": ("time,T\n0,0.1000000000000000055511151231257827\n1,20.000000000000001\n", {}),
    "negative_zero_time": ("time,T\n-0,1\n1,2\n", {}),
    "negative_zero_float": ("time,T\n0,-0.0\n1,2\n", {}),
    "negative_zero_int": ("time,T\n0,-0\n1,2\n", {}),
    "negative_zero_among_decimals": ("time,T\n0,-0.0000\n1,2.5\n2,-0\n", {}),
    "boolean_words": ("time,T\n0,True\n1,false\n", {}),   # the C reader: 1.0 and 0.0
    "boolean_words_mixed_case": ("time,T\n0,fAlSe\n1,TRUE\n", {}),
    "boolean_word_among_numbers": ("time,T\n0,1\n1,True\n", {}),
    "true_in_header_only": ("time,is_true\n0,1\n1,2\n", {}),
    "trailing_separator_everywhere": ("time,T,\n0,1,\n60,2,\n", {}),
    "trailing_separator_named": ("time,T,\n0,1,\n60,2,\n", dict(columns=["T"])),
    "trailing_separator_rows_only": ("time,T\n0,1,\n60,2,\n", {}),
    "ragged_row": ("time,T\n0,1\n60,2,3\n", {}),
    "short_row": ("time,T,U\n0,1,2\n60,2\n", dict(columns=["T"])),
    "empty_cell": ("time,T\n0,1\n60,\n120,3\n", {}),
    "empty_cell_interpolate": ("time,T\n0,1\n60,\n120,3\n", dict(missing="interpolate")),
    "na_text_interpolate": ("time,T\n0,1\n60,NA\n120,3\n", dict(missing="interpolate")),
    "text_cell": ("time,T\n0,1\n60,warm\n120,3\n", {}),
    "decimal_comma_quoted": ('time,T\n0,"20,5"\n60,21\n', {}),
    "infinite_value": ("time,T\n0,1\n60,inf\n", {}),
    "infinite_value_interpolate": ("time,T\n0,1\n60,inf\n120,2\n", dict(missing="interpolate")),
    "all_empty": ("time,T\n0,\n60,\n", dict(missing="interpolate")),
    "text_in_other_column": ("time,T,note\n0,1,door open\n60,2,\n", dict(columns=["T"])),
    "repeated_time": ("time,T\n0,1\n60,2\n60,3\n", {}),
    "decreasing_time": ("time,T\n0,1\n60,2\n30,3\n", {}),
    "repeated_once_rounded": ("time,T\n0,1\n0.1,2\n0.10000000000000000001,3\n", {}),
    "time_too_large": ("time [min],T\n0,1\n1e306,2\n", {}),
    "empty_time": ("time,T\n0,1\n,2\n", {}),
    "number_then_text_time": ("time,T\n0,1\nnoon,2\n", {}),
    "timestamps": ("time,T\n2026-07-01T00:00,1\n2026-07-01T01:00,2\n", {}),
    "timestamps_start": ("time,T\n2026-07-01T00:00,1\n2026-07-01T01:00,2\n",
                         dict(start="2026-06-30T23:00")),
    "timestamps_mixed_offsets": ("time,T\n2021-10-31T02:30+02:00,1\n2021-10-31T02:00+01:00,2\n"
                                 "2021-10-31T01:45Z,3\n", {}),
    "timestamps_offset_and_none": ("time,T\n2026-07-01T00:00Z,1\n2026-07-01T01:00,2\n", {}),
    "timestamps_repeated": ("time,T\n2026-07-01T00:00,1\n2026-07-01T00:00 ,2\n", {}),
    "timestamps_and_bad_value": ("time,T\n2026-07-01T00:00,1\n2026-07-01T01:00,x\n", {}),
    "timestamp_then_number": ("time,T\n2026-07-01T00:00,1\n3600,2\n", {}),
    "semicolons": ("time;T\n0;20,5\n60;21\n", {}),
    "header_only": ("time,T\n", {}),
    "empty_file": ("", {}),
    "one_column": ("time\n0\n60\n", {}),
    "duplicate_names": ("time,T,T \n0,1,2\n60,2,3\n", {}),
    "missing_column": ("time,T\n0,1\n60,2\n", dict(columns=["U"])),
    "missing_time_column": ("time,T\n0,1\n60,2\n", dict(time="clock")),
    "not_utf8": (b"time,T\xe9\n0,1\n60,2\n", {}),
    "integers_beyond_2_53": ("time,T\n0,9007199254740993\n1,12345678901234567890123\n", {}),
}


@pytest.mark.parametrize("name", list(CASES))
def test_numbers_first_gives_what_the_text_pass_gives(tmp_path, monkeypatch, name):
    text, kwargs = CASES[name]
    path = write(tmp_path, text)
    fast, slow = both_passes(monkeypatch, lambda: read_time_series(path, **kwargs))
    assert fast[0] == slow[0], (fast, slow)
    if fast[0] == "ok":
        same_frame(fast[1], slow[1])
    else:
        assert fast[1] == slow[1]


@pytest.mark.parametrize("name", ["plain", "units_in_headers", "quoted", "bom", "spaces",
                                  "timestamps", "empty_cell_interpolate", "crlf",
                                  "text_in_other_column", "negative_zero_among_decimals"])
def test_a_clean_file_is_never_read_as_text(tmp_path, monkeypatch, name):
    text, kwargs = CASES[name]
    path = write(tmp_path, text)

    def refuse(*args, **kw):
        raise AssertionError("the text pass ran")

    monkeypatch.setattr(timeseries, "read_csv_text", refuse)
    frame = read_time_series(path, **kwargs)
    assert frame.shape[0] >= 2


def test_numbers_are_those_written(tmp_path):
    # the values as written in the file, converted by Python's float() (correctly rounded,
    # IEEE 754 round-half-even, the Python language reference), not by pandas: random cells of
    # every form (fixed, exponent, long digit strings, integers past 2^53) over several reads
    # of the stream's buffer
    rng = random.Random(14)
    cells = []
    for _ in range(60000):
        k = rng.random()
        if k < 0.3:
            cells.append(repr(rng.uniform(-1e3, 1e3)))
        elif k < 0.5:
            cells.append(f"{rng.uniform(-1e6, 1e6):.{rng.randint(0, 20)}f}")
        elif k < 0.7:
            cells.append(f"{rng.uniform(-1, 1) * 10 ** rng.randint(-300, 300):.{rng.randint(0, 25)}e}")
        elif k < 0.85:
            cells.append(str(rng.randint(1, 10 ** 25) * rng.choice([1, -1])))
        else:
            digits = "".join(rng.choice("0123456789") for _ in range(rng.randint(1, 30)))
            cells.append(digits + "." + "".join(rng.choice("0123456789")
                                                for _ in range(rng.randint(0, 30))))
    body = "\n".join(f"{i},{c}" for i, c in enumerate(cells))
    path = write(tmp_path, "time,x\n" + body + "\n")
    frame = read_time_series(path, ["x"])
    expected = np.array([float(c) for c in cells])
    assert np.array_equal(frame["x"].to_numpy(), expected)


def test_a_boolean_word_split_between_two_reads_is_found():
    # the stream looks at each read with the end of the one before: 'tr' + 'ue' is found
    text = b"time,x\n0,1\n1,tr" + b"ue\n"

    class Trickle(io.RawIOBase):          # a file that gives at most 3 bytes per read
        def __init__(self, data):
            self.data = io.BytesIO(data)

        def readinto(self, buffer):
            chunk = self.data.read(min(3, len(buffer)))
            buffer[:len(chunk)] = chunk
            return len(chunk)

    stream = numeric_csv._CappedStream(Trickle(text), None)
    buf = bytearray(3)
    while stream.readinto(buf):
        pass
    assert stream.boolean_word
    quiet = numeric_csv._CappedStream(Trickle(b"true,x\n0,1\n"), None)   # the header only
    while quiet.readinto(buf):
        pass
    assert not quiet.boolean_word


def test_a_bad_row_in_a_long_file_is_named_by_the_text_pass(tmp_path):
    # 300,000 rows (several reads of the stream, several chunks of the C reader), one bad cell
    rows = [f"{60 * i},{20 + (i % 7) * 0.25}" for i in range(300_000)]
    rows[250_001] = "15000060,warm"
    path = write(tmp_path, "time,T\n" + "\n".join(rows) + "\n")
    with pytest.raises(DataError) as err:
        Table.from_csv(path, "T")
    # the header is line 1: row 250,001 (from 0) is line 250,003
    assert str(err.value) == ("s.csv: column 'T' line 250003 is not a finite number ('warm') "
                              "(fix the row or set missing = 'interpolate')")


def test_more_than_the_cap_is_refused_as_before(tmp_path):
    path = write(tmp_path, "time,T\n" + TEN + "\n")
    with pytest.raises(DataError, match=r"s.csv: is more than 50 bytes, the most allowed here"):
        read_time_series(path, max_bytes=50)


LOG = ("time [min],block,room\n0,20.0,25\n1,20.5,\n2,,25\n3,21.4,25\n4,21.8,NA\n5,22.1,25\n")


@pytest.mark.parametrize("text", [LOG, LOG.replace("NA", "warm"), LOG.replace("NA", "inf"),
                                  LOG.replace("time [min]", "stamp").replace("\n0,", "\nx,"),
                                  "time,block,room\n" + "".join(
                                      f"2026-07-01T00:0{i}+02:00,{20 + i},25\n" for i in range(6)),
                                  "clock,room\n0,20\n1,21\n"])
def test_fit_logs_read_the_same_both_ways(tmp_path, monkeypatch, text):
    path = write(tmp_path, text, "log.csv")
    fast, slow = both_passes(monkeypatch, lambda: read_log(path, ["block"], ["room"]))
    assert fast[0] == slow[0], (fast, slow)
    if fast[0] == "error":
        assert fast[1] == slow[1]
        return
    a, b = fast[1], slow[1]
    pd.testing.assert_frame_equal(a.values, b.values, check_exact=True)
    assert np.array_equal(a.time, b.time) and a.start_time == b.start_time
    assert a.first_time == b.first_time and np.array_equal(a.lines, b.lines)


PERIODIC = """title = "periodic start under a logged day"
[simulation]
duration = "1 d"
step = "1 h"
initial = "periodic"
[nodes.payload]
capacity = "50 kJ/K"
initial = "10 degC"
[boundaries.out]
temperature = {{ csv = {{ file = "day.csv", column = "t_out"{repeat} }} }}
[links.wall]
between = ["payload", "out"]
resistance = "2 K/W"
"""


@pytest.mark.parametrize("repeat", ["", ', repeat = "24 h"'])
def test_periodic_start_under_a_csv_that_does_not_repeat(tmp_path, monkeypatch, cli, repeat):
    # the refusal is the one of before (the check needs the profile, not its rows: the file is
    # still read when the scenario is loaded, as `rcsim check` and `rcsim steady` use it too,
    # but by the numbers-first parse, never as text)
    day = "\n".join(f"{3600 * h},{18 + 6 * np.sin(2 * np.pi * (h - 9) / 24):.3f}"
                    for h in range(25))
    write(tmp_path, "time [s],t_out\n" + day + "\n", "day.csv")
    write(tmp_path, PERIODIC.format(repeat=repeat), "per.toml")

    def refuse(*args, **kw):
        raise AssertionError("the text pass ran")

    monkeypatch.setattr(timeseries, "read_csv_text", refuse)
    result = cli("run", tmp_path / "per.toml")
    if not repeat:
        assert result.exit_code == 2
        assert result.output.strip() == (
            "error: per.toml: boundaries.out.temperature: a periodic start needs periodic inputs, "
            "but this profile does not repeat (add repeat = '<period>' or start from given "
            "temperatures)")
    else:
        # repeated daily, the run starts in its periodic regime: the same temperature a day
        # later (the definition of the periodic regime)
        assert result.exit_code == 0, result.output
        import rcsim
        res = rcsim.load(str(tmp_path / "per.toml")).run()
        T = res.temperatures["payload"]
        assert T.loc[86400.0] == pytest.approx(T.loc[0.0], abs=1e-9)


# -- weather records: the same numbers-first read (rcsim.weather) ------------------------------
from rcsim import weather  # noqa: E402

W_COLUMNS = {"air_temperature": "T_air", "wind_speed": "wind"}
HOURS = "".join(f"2026-01-0{1 + h // 24}T{h % 24:02d}:00,{2 + 0.5 * (h % 7)},{h % 5}\n"
                for h in range(30))
WEATHER = {
    "timestamps": ("time,T_air,wind\n" + HOURS, {}),
    "timestamps_zone": ("time,T_air,wind\n" + HOURS, dict(time_zone="Europe/Zurich")),
    "timestamps_utc": ("time,T_air,wind\n" + HOURS.replace(":00,", ":00Z,"), {}),
    "units_in_headers": ("time,T_air [degF],wind [km/h]\n" + HOURS, {}),
    "unit_in_mapping": ("time,T_air,wind\n" + HOURS,
                        dict(columns={"air_temperature": {"column": "T_air", "unit": "degF"},
                                      "wind_speed": "wind"})),
    "units_disagree": ("time,T_air [degF],wind\n" + HOURS,
                       dict(columns={"air_temperature": {"column": "T_air", "unit": "degC"},
                                     "wind_speed": "wind"})),
    "elapsed_hours": ("time [h],T_air,wind\n0,1,2\n1,2,3\n2,3,4\n", {}),
    "elapsed_with_start": ("t,T_air,wind\n0,1,2\n1,2,3\n2,3,4\n",
                           dict(time_unit="h", start="2026-07-01T00:00", time_zone="+02:00")),
    "elapsed_without_unit": ("t,T_air,wind\n0,1,2\n1,2,3\n", {}),
    "empty_cell_no_max_gap": ("time [h],T_air,wind\n0,1,2\n1,,3\n2,3,4\n", {}),
    "empty_cell_filled": ("time [h],T_air,wind\n0,1,2\n1,,3\n2,3,4\n", dict(max_gap="3 h")),
    "empty_cell_at_the_end": ("time [h],T_air,wind\n0,1,2\n1,2,3\n2,,4\n", dict(max_gap="3 h")),
    "na_text": ("time [h],T_air,wind\n0,1,2\n1,NA,3\n2,3,4\n", dict(max_gap="3 h")),
    "flag": ("time [h],T_air,wind\n0,1,2\n1,-9999,3\n2,3,4\n",
             dict(max_gap="3 h", missing_values=[-9999])),
    "flag_not_listed": ("time [h],T_air,wind\n0,1,2\n1,-9999,3\n2,3,4\n", {}),
    "text_value": ("time [h],T_air,wind\n0,1,2\n1,warm,3\n2,3,4\n", {}),
    "infinite_value": ("time [h],T_air,wind\n0,1,2\n1,inf,3\n2,3,4\n", {}),
    "negative_wind": ("time [h],T_air,wind\n0,1,2\n1,2,-3\n2,3,4\n", {}),
    "repeated_time": ("time [h],T_air,wind\n0,1,2\n1,2,3\n1,3,4\n", {}),
    "step_gap": ("time [h],T_air,wind\n0,1,2\n1,2,3\n2,3,4\n9,3,4\n", {}),
    "bom": ("\ufefftime [h],T_air,wind\n0,1,2\n1,2,3\n", {}),
    "bom_time_named": ("\ufefftime [h],T_air,wind\n0,1,2\n1,2,3\n", dict(time="time")),
    "duplicate_names": ("time [h],T_air,wind,wind\n0,1,2,2\n1,2,3,3\n", {}),
    "note_column": ("time [h],T_air,note,wind\n0,1,door open,2\n1,2,,3\n", {}),
    "one_column": ("time [h]\n0\n1\n", {}),
    "no_such_column": ("time [h],T_air,speed\n0,1,2\n1,2,3\n", {}),
    "semicolons": ("time [h];T_air;wind\n0;1;2\n1;2;3\n", {}),
    "ragged": ("time [h],T_air,wind\n0,1,2\n1,2,3,4\n", {}),
    "header_only": ("time [h],T_air,wind\n", {}),
    "irradiance_ending": ("time,T_air,wind,GHI\n" + HOURS.replace("\n", ",100\n"),
                          dict(columns={**W_COLUMNS, "global_horizontal": "GHI"},
                               irradiance_period="ending")),
}


def record_outcome(read):
    try:
        return "ok", read()
    except InputError as err:
        return "error", f"{type(err).__name__}: {err}"


@pytest.mark.parametrize("name", list(WEATHER))
def test_weather_numbers_first_gives_what_the_text_pass_gives(tmp_path, monkeypatch, name):
    text, kwargs = WEATHER[name]
    kwargs = {"columns": W_COLUMNS, **kwargs}
    path = write(tmp_path, text, "w.csv")
    fast = record_outcome(lambda: weather.read_weather(path, **kwargs))
    with monkeypatch.context() as m:
        m.setattr(numeric_csv, "ENABLED", False)
        slow = record_outcome(lambda: weather.read_weather(path, **kwargs))
    assert fast[0] == slow[0], (fast, slow)
    if fast[0] == "error":
        assert fast[1] == slow[1]
        return
    a, b = fast[1], slow[1]
    assert np.array_equal(a.seconds, b.seconds)
    assert (a.timestamps is None and b.timestamps is None) or a.timestamps.equals(b.timestamps)
    assert a.start == b.start and a.step == b.step and a.shifts == b.shifts
    assert a.filled == b.filled and a.kinds == b.kinds and a.columns == b.columns
    assert list(a.values) == list(b.values)
    for q in a.values:
        assert np.array_equal(a.values[q].view(np.int64), b.values[q].view(np.int64))


@pytest.mark.parametrize("name", ["timestamps_zone", "units_in_headers", "elapsed_hours",
                                  "empty_cell_filled", "flag", "note_column", "bom"])
def test_a_clean_weather_record_is_never_read_as_text(tmp_path, monkeypatch, name):
    text, kwargs = WEATHER[name]
    path = write(tmp_path, text, "w.csv")

    def refuse(*args, **kw):
        raise AssertionError("the text pass ran")

    monkeypatch.setattr(weather, "_read_text", refuse)
    record = weather.read_weather(path, **{"columns": W_COLUMNS, **kwargs})
    assert record.seconds.size >= 2


# -- timestamps: split once per shape (rcsim.clock.split_stamps) --------------------------------
STAMPS = ["2021-07-01T12:00", "2021-07-01T12:00Z", "2021-07-01 12:00:30+02:00", "2021-07-01T9:05",
          "2021-07-01T12:00:00.123456-0530", "2021-07-01T12:00 +02", "2021-07-01", "noon",
          "2021-07-01T12:00z", "2021-07-01T12:00+2", "2021-07-01T12", "", "12:00",
          "2021-07-01T12:00:00,5Z", "2021-07-01T\u0661\u0662:00", "2021-07-01T12:00+02:00:00",
          "2021-13-45T99:99", "x T1", "2021-07-01T12:00\n+02:00", "2021-07-01T12:00 "]


@pytest.mark.parametrize("many", [False, True])
def test_stamps_split_by_shape_as_the_pattern_splits_each_row(many):
    # the reference: the pattern matched on every row (pandas str.extract); each stamp above
    # repeated with other digits, in a column of few shapes and of more shapes than are grouped
    from rcsim.clock import _STAMP, split_stamps

    rng = random.Random(3)
    cells = []
    for _ in range(40 if not many else 10):
        for stamp in STAMPS:
            cells.append("".join(rng.choice("0123456789") if c.isdigit() and c.isascii() else c
                                 for c in stamp))
    if many:   # more than 64 shapes: the row-by-row split
        cells += [f"2021-07-01T12:00{'0' * k}" for k in range(80)]
    for dtype in (str, object):
        text = pd.Series(cells, dtype=dtype)
        pd.testing.assert_frame_equal(split_stamps(text), text.str.extract(_STAMP))


# -- timestamps read from their bytes (rcsim.clock._fixed_shape_stamps) ------------------------
def _stamp_outcome(monkeypatch, cells, zone, fast):
    """parse_timestamps of a column, with the byte reading or with pandas' alone (the reading
    by text, as before: split_stamps and pandas.to_datetime with format='ISO8601')."""
    from rcsim import clock

    if not fast:
        monkeypatch.setattr(clock, "_fixed_shape_stamps", lambda text: None)
    try:
        index = clock.parse_timestamps(pd.Series(cells, dtype=str), zone, "r.csv", "time")
        return "ok", index
    except DataError as err:
        return "error", str(err)
    finally:
        monkeypatch.undo()


def _random_stamps(rng, n, shape):
    """``n`` increasing stamps of one ``shape`` (a strftime pattern and an offset text)."""
    pattern, offset = shape
    start = rng.randrange(-60_000, 90_000) * 86400 + rng.randrange(86400)   # days from 1970
    steps = np.cumsum([rng.choice([1, 59, 60, 3600, 86399, 31 * 86400]) for _ in range(n)])
    out = []
    for s in start + steps:
        t = pd.Timestamp(0, unit="s") + pd.Timedelta(seconds=int(s))
        text = t.strftime(pattern)
        if "%f" in pattern:
            text = text[:len(text) - rng.choice([0, 3, 5])]
        out.append(text + offset)
    return out


SHAPES = [("%Y-%m-%dT%H:%M:%S", ""), ("%Y-%m-%dT%H:%M", ""), ("%Y-%m-%d %H:%M:%S", ""),
          ("%Y-%m-%dT%H", ""), ("%Y-%m-%dT%H:%M:%S.%f", ""), ("%Y-%m-%dT%H:%M:%S", "Z"),
          ("%Y-%m-%dT%H:%M", "+02:00"), ("%Y-%m-%dT%H:%M:%S", "-0530"),
          ("%Y-%m-%dT%H:%M:%S.%f", "+14"), ("%Y-%m-%d %H:%M", "Z"), ("%Y-%m-%dT%H:%M", "-12:00")]


@pytest.mark.parametrize("shape", SHAPES)
def test_stamps_read_from_their_bytes_are_pandas_own(monkeypatch, shape):
    # the reference: pandas.to_datetime(format='ISO8601') on the same texts (the reading by
    # text); random instants from the year 1805 to 2216 (so a nanosecond clock holds them too),
    # with and without a site zone (placed by the same rule after)
    from rcsim import clock

    rng = random.Random(SHAPES.index(shape))
    cells = _random_stamps(rng, 300, shape)
    assert clock._fixed_shape_stamps(pd.Series(cells, dtype=str)) is not None  # the byte reading
    for zone in (None, clock.parse_time_zone("+03:00"), clock.parse_time_zone("Europe/Madrid")):
        fast = _stamp_outcome(monkeypatch, cells, zone, True)
        slow = _stamp_outcome(monkeypatch, cells, zone, False)
        assert fast[0] == slow[0]
        if fast[0] == "ok":
            pd.testing.assert_index_equal(fast[1], slow[1], exact=True)
            assert fast[1].dtype == slow[1].dtype
        else:
            assert fast[1] == slow[1]


BAD_OR_ODD = [
    ["2021-07-01T12:00", "2021-13-01T12:00"], ["2021-02-29T12:00", "2021-03-01T00:00"],
    ["2020-02-29T12:00", "2020-04-31T00:00"], ["2021-07-01T24:00"], ["2021-07-01T23:59:60"],
    ["0000-01-01T00:00"], ["2021-07-01T12:00+15:00"], ["2021-07-01T12:00-12:30"],
    ["2021-07-01T12:00+02:60"], ["2021-07-01T12:00Z", "2021-07-01T13:00"],
    ["2021-07-01T12:00", "2021-07-01T13:00+01:00"], ["2021-07-01T12:00:00.1234567"],
    ["2021-07-01T12:00:00,5"], ["2021-07-01T12:00z"], ["2021-7-01T12:00"], ["2021-07-01T12:00 +02:00"],
    ["2021-07-01T12:00\x00"], ["2021-07-01T12:0\u0661"], ["2021-07-01T12:00", "2021-07-01"],
    ["2021-03-28T02:30", "2021-03-28T03:30"], ["2021-10-31T02:30"],
    ["2021-03-28T01:30+01:00", "2021-03-28T03:30+02:00", "2021-03-28T04:00+01:00"],
    ["1600-01-01T00:00:00.1234567"], ["2021-07-01T12:00:00.000001", "2021-07-01T12:00:01"],
    [f"2021-07-01T12:{m:02d}{'Z' if m % 2 else '+00:00'}" for m in range(20)],
    [f"2021-07-01T12:00:{s:02d}.{'5' * (1 + s % 9)}" for s in range(20)],
]


@pytest.mark.parametrize("cells", BAD_OR_ODD, ids=range(len(BAD_OR_ODD)))
def test_stamps_out_of_range_or_odd_give_the_same_outcome(monkeypatch, cells):
    # each refused with the same message, or read to the same instants, as by text (a month
    # 13, 29 February of a common year, an hour 24, a leap second, offsets out of range or
    # mixed with none, a fraction of 7 digits, a decimal comma, a local time the clock skips,
    # an offset against the zone's rules, more shapes than are read from bytes, ...)
    from rcsim import clock

    for zone in (None, clock.parse_time_zone("Europe/Madrid")):
        fast = _stamp_outcome(monkeypatch, cells, zone, True)
        slow = _stamp_outcome(monkeypatch, cells, zone, False)
        assert fast[0] == slow[0], (fast, slow)
        if fast[0] == "ok":
            pd.testing.assert_index_equal(fast[1], slow[1], exact=True)
        else:
            assert fast[1] == slow[1]
