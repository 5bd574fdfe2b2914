import math

import pytest

from rcsim.errors import UnitError
from rcsim.units import to_si


@pytest.mark.parametrize("text,kind,expected", [
    ("50 mm", "length", 0.05),
    ("0.8 m^2", "area", 0.8),
    ("3 kJ/K", "capacity", 3000.0),
    ("72 h", "time", 259200.0),
    ("5 min", "time", 300.0),
    ("68 degF", "temperature", 20.0),          # (68 - 32) * 5/9
    ("300 K", "temperature", 26.85),
    ("7 K", "temperature_difference", 7.0),
    ("9 delta_degF", "temperature_difference", 5.0),
    ("3 W/(m^2*K)", "heat_transfer_coefficient", 3.0),
    ("3 W/(m^2*degC)", "heat_transfer_coefficient", 3.0),
    ("0.033 W/(m*K)", "conductivity", 0.033),
    ("333.55 kJ/kg", "specific_energy", 333550.0),
    ("2.5 K/W", "resistance", 2.5),
    ("1 kW", "power", 1000.0),
    ("25 °C", "temperature", 25.0),
])
def test_conversions(text, kind, expected):
    # unit definitions: SI brochure (BIPM) and pint's registry
    assert to_si(text, kind) == pytest.approx(expected, rel=1e-12)


def test_plain_numbers_are_si():
    assert to_si(5, "temperature") == 5.0
    assert to_si(0.05, "length") == 0.05


def test_wrong_dimension_names_key_and_both():
    with pytest.raises(UnitError) as err:
        to_si("3 kg", "length", "links.wall.parts[1].conduction.thickness")
    msg = str(err.value)
    assert "links.wall.parts[1].conduction.thickness: expected a length, got '3 kg'" in msg
    assert "mass" in msg


def test_absolute_and_difference_kept_apart():
    with pytest.raises(UnitError, match="temperature difference"):
        to_si("7 degC", "temperature_difference")
    with pytest.raises(UnitError, match="absolute temperature"):
        to_si("7 delta_degC", "temperature")


@pytest.mark.parametrize("bad", ["abc", "3 parsecs per fortnight squared ##", "nan", "inf K",
                                 True, None, [1, 2], "1e999 m"])
def test_bad_values(bad):
    with pytest.raises(UnitError):
        to_si(bad, "length", "x")


def test_non_finite_rejected():
    with pytest.raises(UnitError, match="finite"):
        to_si(math.nan, "length", "x")


@pytest.mark.parametrize("value, kind", [(2.2e-309, "resistance"), (3.6e307, "capacity"),
                                         ("1e40 W", "power"), ("1e-35 m", "length")])
def test_magnitudes_beyond_any_network_are_refused(value, kind):
    # products of such numbers overflow double precision (IEEE 754 max about 1.8e308); far
    # outside anything physical, so refused with the key named instead of computed with
    with pytest.raises(UnitError, match="outside the range") as err:
        to_si(value, kind, "links.x.value")
    assert str(err.value).startswith("links.x.value")
