"""Effective sky temperature (rcsim.sky) against the published formulas, written out here.

Sources (formulas as published; the coefficients are from memory of the papers and of Duffie &
Beckman, Solar Engineering of Thermal Processes, section 3.9):
Swinbank (1963) T_sky = 0.0552 T_air^1.5; Idso & Jackson (1969)
eps = 1 - 0.261 exp(-7.77e-4 (273 - T)^2); Berdahl & Martin (1984)
eps = 0.711 + 0.56 (T_dp/100) + 0.73 (T_dp/100)^2 + 0.013 cos(2 pi t/24) + 0.00012 (p - 1000);
Clark & Allen (1978) eps = 0.787 + 0.764 ln(T_dp/273), cloud factor
1 + 0.0224 N - 0.0035 N^2 + 0.00028 N^3 (N tenths); Unsworth & Monteith (1975)
eps = (1 - 0.84 c) eps_clear + 0.84 c; ISO 13790:2008 11.4.6: sky 11 K below air on average.
"""

import math

import numpy as np
import pytest
from scipy.optimize import brentq

from rcsim import sky
from rcsim.errors import InputError

AIR = [-15.0, 0.0, 12.5, 25.0, 38.0]           # degC
DEW = [-22.0, -6.0, 7.0, 18.0, 21.0]            # degC, below AIR


def _sky_from_emissivity(eps, air_c):
    return eps ** 0.25 * (air_c + 273.15) - 273.15


@pytest.mark.parametrize("air", AIR)
def test_swinbank(air):
    expected = 0.0552 * (air + 273.15) ** 1.5 - 273.15
    assert sky.sky_temperature(air, model="swinbank") == pytest.approx(expected, abs=1e-9)


@pytest.mark.parametrize("air", AIR)
def test_idso_jackson(air):
    eps = 1 - 0.261 * math.exp(-7.77e-4 * (273 - (air + 273.15)) ** 2)
    assert sky.sky_temperature(air, model="idso_jackson") == pytest.approx(
        _sky_from_emissivity(eps, air), abs=1e-9)


@pytest.mark.parametrize("air, dew", list(zip(AIR, DEW)))
def test_berdahl_martin_clear_sky(air, dew):
    eps = 0.711 + 0.56 * (dew / 100) + 0.73 * (dew / 100) ** 2
    assert sky.sky_temperature(air, dew_point=dew) == pytest.approx(
        _sky_from_emissivity(eps, air), abs=1e-9)


def test_berdahl_martin_diurnal_and_pressure_terms():
    air, dew, hour, pressure = 20.0, 10.0, 3.0, 85000.0   # 850 mbar
    eps = (0.711 + 0.56 * 0.1 + 0.73 * 0.01 + 0.013 * math.cos(2 * math.pi * hour / 24)
           + 0.00012 * (850 - 1000))
    got = sky.sky_temperature(air, dew_point=dew, hour=hour, pressure=pressure)
    assert got == pytest.approx(_sky_from_emissivity(eps, air), abs=1e-9)


@pytest.mark.parametrize("air, dew", list(zip(AIR, DEW)))
@pytest.mark.parametrize("cover", [0.0, 0.3, 0.7, 1.0])
def test_clark_allen_clear_and_cloudy(air, dew, cover):
    n = 10 * cover
    eps = (0.787 + 0.764 * math.log((dew + 273.15) / 273)) * (
        1 + 0.0224 * n - 0.0035 * n ** 2 + 0.00028 * n ** 3)
    got = sky.sky_temperature(air, model="clark_allen", dew_point=dew, sky_cover=cover,
                              cloud="clark_allen")
    assert got == pytest.approx(_sky_from_emissivity(eps, air), abs=1e-9)


@pytest.mark.parametrize("cover", [0.0, 0.25, 0.8, 1.0])
def test_unsworth_monteith_cloud_correction_on_swinbank(cover):
    air = 10.0
    clear = (0.0552 * (air + 273.15) ** 1.5 / (air + 273.15)) ** 4
    eps = (1 - 0.84 * cover) * clear + 0.84 * cover
    got = sky.sky_temperature(air, model="swinbank", sky_cover=cover, cloud="unsworth_monteith")
    assert got == pytest.approx(_sky_from_emissivity(eps, air), abs=1e-9)


def test_full_overcast_brings_the_sky_near_air_temperature():
    # Unsworth & Monteith: eps = 0.16 eps_clear + 0.84 under full cover -> within a few K of air
    got = sky.sky_temperature(np.array([0.0, 20.0]), dew_point=np.array([-5.0, 10.0]),
                              sky_cover=1.0, cloud="unsworth_monteith")
    assert np.all(got < [0.0, 20.0]) and np.all(got > [-6.0, 14.0])


def test_constant_depression_option():
    got = sky.sky_temperature(np.array([5.0, 25.0]), model="depression")
    np.testing.assert_allclose(got, [5.0 - 11.0, 25.0 - 11.0], atol=1e-9)  # ISO 13790 11.4.6
    np.testing.assert_allclose(sky.sky_temperature(5.0, model="depression", depression=9.0),
                               -4.0, atol=1e-9)


def test_models_agree_on_the_order_of_a_clear_night_sky():
    # common practice: a clear sky at 15 degC air and 8 degC dew point is some 10-25 K colder
    # than the air; the models differ, but not by more than about 10 K
    values = [float(sky.sky_temperature(15.0, model=m, dew_point=8.0))
              for m in ("swinbank", "idso_jackson", "berdahl_martin", "clark_allen")]
    assert all(-10.0 < v < 5.0 for v in values), values
    assert max(values) - min(values) < 10.0


def _buck_saturation(celsius):
    """Saturation vapour pressure over water [hPa], Buck (1981, revised 1996):
    6.1121 exp((18.678 - T/234.5) T / (257.14 + T)), a different fit from Magnus'."""
    return 6.1121 * math.exp((18.678 - celsius / 234.5) * celsius / (257.14 + celsius))


@pytest.mark.parametrize("air, humidity", [(20.0, 0.5), (30.0, 0.6), (-5.0, 0.8), (35.0, 0.2),
                                           (10.0, 1.0)])
def test_dew_point_from_humidity_agrees_with_another_saturation_curve(air, humidity):
    # the dew point is where the saturation pressure equals RH times that at air temperature
    target = humidity * _buck_saturation(air)
    expected = brentq(lambda t: _buck_saturation(t) - target, -80.0, 60.0)
    assert sky.dew_point_from_humidity(air, humidity) == pytest.approx(expected, abs=0.05)


def test_dew_point_handbook_value():
    # psychrometric table (common practice, from memory): 20 degC at 50 % -> 9.3 degC
    assert sky.dew_point_from_humidity(20.0, 0.5) == pytest.approx(9.3, abs=0.05)


def test_bad_inputs_are_refused_with_the_valid_names():
    with pytest.raises(InputError, match="needs the dew point"):
        sky.sky_temperature(10.0, model="berdahl_martin")
    with pytest.raises(InputError) as err:
        sky.sky_temperature(10.0, model="swinbak")
    assert "did you mean 'swinbank'" in str(err.value) and "berdahl_martin" in str(err.value)
    with pytest.raises(InputError, match="valid: none, clark_allen, unsworth_monteith"):
        sky.sky_temperature(10.0, model="swinbank", cloud="x")
    with pytest.raises(InputError, match="sky_cover must be between 0 and 1"):
        sky.sky_temperature(10.0, model="swinbank", sky_cover=8.0)
    with pytest.raises(InputError, match="absolute zero"):
        sky.sky_temperature(-300.0, model="swinbank")
    with pytest.raises(InputError, match="percentage"):
        sky.dew_point_from_humidity(20.0, 50.0)
