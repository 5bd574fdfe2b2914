"""Sun position and irradiance on a tilted surface (rcsim.solar).

Sources: the worked example of the NREL solar position algorithm (Reda & Andreas 2004); the
low-precision solar coordinates of the Astronomical Almanac (written out here); the isotropic and
Hay-Davies transposition and Erbs' decomposition from Duffie & Beckman, Solar Engineering of
Thermal Processes (written out here, independently of the library behind rcsim.solar).
"""

import math

import numpy as np
import pandas as pd
import pytest

from rcsim import solar
from rcsim.errors import InputError


# ------------------------------------------------------------------------------------------ sun
def test_sun_position_matches_the_worked_example_of_the_algorithm_paper():
    # Reda & Andreas (2004), Solar Energy 76, 577-589, Table A4/A5 (from memory): 2003-10-17
    # 12:30:30 local time at -7 h, 39.742476 N, 105.1786 W, 1830.14 m, 820 mbar, 11 degC,
    # delta T 67 s: topocentric zenith 50.11162 deg (refraction included), topocentric azimuth
    # 194.34024 deg, topocentric elevation without refraction e0 = 39.872046 deg.
    times = pd.DatetimeIndex(["2003-10-17 12:30:30-07:00"])
    sun = solar.solar_position(times, 39.742476, -105.1786, 1830.14, pressure=82000.0,
                               temperature=11.0, delta_t=67.0)
    assert sun["zenith"].iloc[0] == pytest.approx(50.11162, abs=1e-5)
    assert sun["azimuth"].iloc[0] == pytest.approx(194.34024, abs=1e-5)
    assert sun["geometric_zenith"].iloc[0] == pytest.approx(90.0 - 39.872046, abs=1e-5)
    assert list(sun.index) == list(times)


def _almanac_sun(times, latitude, longitude):
    """Geocentric zenith and azimuth [deg] by the low-precision formulas of the Astronomical
    Almanac (about 0.01 deg for 1950-2050); azimuth from north, clockwise (Meeus' A + 180)."""
    unix = (times.tz_convert("UTC") - pd.Timestamp("1970-01-01", tz="UTC")).total_seconds()
    n = np.asarray(unix) / 86400.0 + 2440587.5 - 2451545.0
    mean_longitude = np.mod(280.460 + 0.9856474 * n, 360.0)
    anomaly = np.radians(np.mod(357.528 + 0.9856003 * n, 360.0))
    ecliptic = np.radians(mean_longitude + 1.915 * np.sin(anomaly) + 0.020 * np.sin(2 * anomaly))
    obliquity = np.radians(23.439 - 0.0000004 * n)
    right_ascension = np.arctan2(np.cos(obliquity) * np.sin(ecliptic), np.cos(ecliptic))
    declination = np.arcsin(np.sin(obliquity) * np.sin(ecliptic))
    sidereal = np.mod(280.46061837 + 360.98564736629 * n, 360.0)
    hour_angle = np.radians(sidereal + longitude) - right_ascension
    phi = math.radians(latitude)
    cos_zenith = (math.sin(phi) * np.sin(declination)
                  + math.cos(phi) * np.cos(declination) * np.cos(hour_angle))
    azimuth = np.degrees(np.arctan2(np.sin(hour_angle), np.cos(hour_angle) * math.sin(phi)
                                    - np.tan(declination) * math.cos(phi))) + 180.0
    return np.degrees(np.arccos(cos_zenith)), np.mod(azimuth, 360.0)


@pytest.mark.parametrize("latitude, longitude, zone", [
    (47.38, 8.54, "Europe/Zurich"),
    (-33.87, 151.21, "Australia/Sydney"),
    (36.10, -79.95, "America/New_York"),
])
def test_sun_position_agrees_with_the_almanac_formulas_over_a_year(latitude, longitude, zone):
    times = pd.date_range("2021-01-01 00:00", "2021-12-31 23:00", freq="97min", tz=zone)
    sun = solar.solar_position(times, latitude, longitude)
    zenith, azimuth = _almanac_sun(times, latitude, longitude)
    up = (zenith > 5) & (zenith < 85)   # azimuth is ill-conditioned near the zenith
    assert up.sum() > 1500
    # geocentric formulas vs topocentric algorithm: parallax 0.0024 deg, formula error ~0.01 deg
    assert np.max(np.abs(sun["geometric_zenith"].to_numpy()[up] - zenith[up])) < 0.02
    difference = np.mod(sun["azimuth"].to_numpy()[up] - azimuth[up] + 180.0, 360.0) - 180.0
    assert np.max(np.abs(difference * np.sin(np.radians(zenith[up])))) < 0.02


def test_the_same_instant_in_any_time_zone_gives_the_same_sun():
    utc = pd.date_range("2021-03-28 00:00", periods=6, freq="h", tz="UTC")  # across a DST change
    a = solar.solar_position(utc, 47.38, 8.54)
    b = solar.solar_position(utc.tz_convert("Europe/Zurich"), 47.38, 8.54)
    np.testing.assert_array_equal(a.to_numpy(), b.to_numpy())
    assert str(b.index.tz) == "Europe/Zurich"


def test_naive_times_and_bad_sites_are_refused():
    with pytest.raises(InputError, match="no time zone") as err:
        solar.solar_position(pd.date_range("2021-06-01", periods=3, freq="h"), 47.0, 8.0)
    assert "\n" not in str(err.value)
    with pytest.raises(InputError, match="latitude"):
        solar.solar_position(pd.Timestamp("2021-06-01", tz="UTC"), 95.0, 8.0)
    with pytest.raises(InputError, match="longitude"):
        solar.solar_position(pd.Timestamp("2021-06-01", tz="UTC"), 45.0, 200.0)


def test_missing_pvlib_is_named_with_the_extra_to_install(monkeypatch):
    import sys

    monkeypatch.setitem(sys.modules, "pvlib", None)   # import pvlib now raises ImportError
    with pytest.raises(InputError, match=r"rcsim\[outdoors\]"):
        solar.solar_position(pd.Timestamp("2021-06-01 12:00", tz="UTC"), 47.0, 8.0)


# ------------------------------------------------------------------------- tilted surfaces
def _cos_incidence(tilt, azimuth, zenith, sun_azimuth):
    """cos(AOI) = cos z cos b + sin z sin b cos(g_s - g)  (Duffie & Beckman eq. 1.6.3 form)."""
    z, b = np.radians(zenith), np.radians(tilt)
    return np.cos(z) * np.cos(b) + np.sin(z) * np.sin(b) * np.cos(np.radians(sun_azimuth
                                                                              - azimuth))


CASES = [  # tilt, azimuth, zenith, sun azimuth, DNI, DHI, albedo
    (90.0, 180.0, 30.0, 180.0, 850.0, 110.0, 0.2),   # south wall, sun due south
    (30.0, 90.0, 60.0, 100.0, 600.0, 150.0, 0.3),    # east roof, morning sun
    (90.0, 0.0, 40.0, 200.0, 700.0, 120.0, 0.2),     # north wall, sun behind it
    (0.0, 180.0, 50.0, 250.0, 500.0, 200.0, 0.2),    # horizontal
    (180.0, 0.0, 35.0, 150.0, 800.0, 100.0, 0.25),   # facing down: ground only
    (60.0, 225.0, 70.0, 260.0, 300.0, 180.0, 0.6),   # south-west, snow
]


@pytest.mark.parametrize("tilt, azimuth, zenith, sun_azimuth, dni, dhi, albedo", CASES)
def test_isotropic_sky_matches_the_hand_calculation(tilt, azimuth, zenith, sun_azimuth, dni,
                                                     dhi, albedo):
    # Liu & Jordan isotropic sky, Duffie & Beckman eq. 2.15.1:
    # I_T = DNI max(cos AOI, 0) + DHI (1 + cos b)/2 + rho GHI (1 - cos b)/2
    ghi = dni * math.cos(math.radians(zenith)) + dhi
    beam = dni * max(_cos_incidence(tilt, azimuth, zenith, sun_azimuth), 0.0)
    sky = dhi * (1 + math.cos(math.radians(tilt))) / 2
    ground = albedo * ghi * (1 - math.cos(math.radians(tilt))) / 2
    got = solar.tilted_irradiance(tilt, azimuth, [zenith], [sun_azimuth], [dni], [ghi], [dhi],
                                  model="isotropic", albedo=albedo)
    assert got["beam"].iloc[0] == pytest.approx(beam, abs=1e-9)
    assert got["sky_diffuse"].iloc[0] == pytest.approx(sky, abs=1e-9)
    assert got["ground_reflected"].iloc[0] == pytest.approx(ground, abs=1e-9)
    assert got["total"].iloc[0] == pytest.approx(beam + sky + ground, abs=1e-9)


def _spencer_extraterrestrial(day_of_year):
    """G_on = G_sc (1.000110 + 0.034221 cos B + 0.001280 sin B + 0.000719 cos 2B
    + 0.000077 sin 2B), B = 2 pi (n - 1)/365 (Spencer 1971; Duffie & Beckman eq. 1.4.1b), with
    the solar constant 1366.1 W/m^2 that rcsim.solar states."""
    b = 2 * math.pi * (day_of_year - 1) / 365
    return 1366.1 * (1.000110 + 0.034221 * math.cos(b) + 0.001280 * math.sin(b)
                     + 0.000719 * math.cos(2 * b) + 0.000077 * math.sin(2 * b))


def test_extraterrestrial_irradiance_follows_spencer():
    times = pd.DatetimeIndex(["2021-01-03 12:00", "2021-07-04 12:00", "2021-10-10 12:00"],
                             tz="UTC")
    expected = [_spencer_extraterrestrial(t.day_of_year) for t in times]
    np.testing.assert_allclose(solar.extraterrestrial_normal(times), expected, rtol=1e-12)


@pytest.mark.parametrize("tilt, azimuth, zenith, sun_azimuth, dni, dhi, albedo", CASES[:4])
def test_hay_davies_sky_matches_the_hand_calculation(tilt, azimuth, zenith, sun_azimuth, dni,
                                                      dhi, albedo):
    # Hay & Davies (1980), Duffie & Beckman eq. 2.16.4 without the beam and ground terms:
    # sky = DHI [A R_b + (1 - A)(1 + cos b)/2], A = DNI / G_on, R_b = max(cos AOI, 0) / cos z
    time = pd.DatetimeIndex(["2021-06-10 12:00"], tz="UTC")
    anisotropy = dni / _spencer_extraterrestrial(time[0].day_of_year)
    ratio = max(_cos_incidence(tilt, azimuth, zenith, sun_azimuth), 0.0) / math.cos(
        math.radians(zenith))
    sky = dhi * (anisotropy * ratio + (1 - anisotropy) * (1 + math.cos(math.radians(tilt))) / 2)
    ghi = dni * math.cos(math.radians(zenith)) + dhi
    got = solar.tilted_irradiance(tilt, azimuth, [zenith], [sun_azimuth], [dni], [ghi], [dhi],
                                  model="hay_davies", albedo=albedo, times=time)
    assert got["sky_diffuse"].iloc[0] == pytest.approx(sky, rel=1e-9)


@pytest.mark.parametrize("model", ["isotropic", "hay_davies", "perez", "reindl"])
def test_a_horizontal_plane_receives_the_global_horizontal_irradiance(model):
    # closed form derived here: for tilt 0 the models' sky term reduces to DHI (AOI = zenith,
    # R_b = 1, the horizon-band terms vanish) and the ground term to 0, so the total is
    # DNI cos z + DHI = GHI (for zenith < 85 deg, where the models do not clip cos z)
    times = pd.date_range("2021-05-01 06:00", periods=6, freq="2h", tz="UTC")
    zenith = np.array([80.0, 62.0, 41.0, 30.0, 47.0, 75.0])
    dni = np.array([150.0, 600.0, 820.0, 880.0, 300.0, 50.0])
    dhi = np.array([60.0, 120.0, 95.0, 90.0, 250.0, 70.0])
    ghi = dni * np.cos(np.radians(zenith)) + dhi
    got = solar.tilted_irradiance(0.0, 180.0, zenith, np.full(6, 150.0), dni, ghi, dhi,
                                  model=model, times=times)
    np.testing.assert_allclose(got["total"].to_numpy(), ghi, rtol=1e-9)


def _erbs_diffuse_fraction(kt):
    """Erbs, Klein & Duffie (1982), Duffie & Beckman eq. 2.10.1."""
    if kt <= 0.22:
        return 1 - 0.09 * kt
    if kt <= 0.80:
        return 0.9511 - 0.1604 * kt + 4.388 * kt ** 2 - 16.638 * kt ** 3 + 12.336 * kt ** 4
    return 0.165


@pytest.mark.parametrize("ghi, zenith", [(60.0, 50.0), (400.0, 40.0), (900.0, 25.0),
                                         (250.0, 75.0)])
def test_erbs_decomposition_matches_the_published_correlation(ghi, zenith):
    time = pd.DatetimeIndex(["2021-04-15 12:00"], tz="UTC")
    cos_z = math.cos(math.radians(zenith))
    kt = ghi / (_spencer_extraterrestrial(time[0].day_of_year) * cos_z)
    dhi = _erbs_diffuse_fraction(kt) * ghi
    dni = (ghi - dhi) / cos_z
    got = solar.decompose_global([ghi], [zenith], time, model="erbs")
    assert got["clearness_index"].iloc[0] == pytest.approx(kt, rel=1e-9)
    assert got["diffuse_horizontal"].iloc[0] == pytest.approx(dhi, rel=1e-9)
    assert got["direct_normal"].iloc[0] == pytest.approx(dni, rel=1e-9)


def test_missing_components_follow_from_closure():
    # GHI = DNI cos z + DHI (definition of the components)
    zenith = np.array([20.0, 60.0, 95.0])
    dni = np.array([800.0, 400.0, 0.0])
    dhi = np.array([100.0, 150.0, 10.0])
    ghi = dni * np.clip(np.cos(np.radians(zenith)), 0, None) + dhi
    for given in ({"dni": dni, "dhi": dhi}, {"ghi": ghi, "dhi": dhi}, {"ghi": ghi, "dni": dni}):
        g, n, d = solar.complete_components(zenith, **given)
        np.testing.assert_allclose(g, ghi, atol=1e-9)
        np.testing.assert_allclose(n, dni, atol=1e-9)
        np.testing.assert_allclose(d, dhi, atol=1e-9)
    with pytest.raises(InputError, match="global horizontal"):
        solar.complete_components(zenith, dni=dni)


def test_surface_chain_equals_its_parts():
    times = pd.date_range("2021-06-21 05:00", periods=16, freq="h", tz="Europe/Zurich")
    ghi = 800 * np.sin(np.linspace(0.1, np.pi - 0.1, 16))
    chain = solar.surface_irradiance(times, 47.38, 8.54, 90.0, 180.0, ghi=ghi,
                                     model="hay_davies", albedo=0.25, elevation=400)
    sun = solar.solar_position(times, 47.38, 8.54, 400)
    split = solar.decompose_global(ghi, sun["zenith"], times)
    parts = solar.tilted_irradiance(90.0, 180.0, sun["zenith"], sun["azimuth"],
                                    split["direct_normal"], ghi, split["diffuse_horizontal"],
                                    model="hay_davies", albedo=0.25, times=times)
    np.testing.assert_allclose(chain["total"], parts["total"], rtol=1e-12)
    assert (chain["total"] >= 0).all()


def test_unknown_model_names_list_the_valid_ones():
    with pytest.raises(InputError) as err:
        solar.tilted_irradiance(30, 180, [40], [180], [500], [600], [100], model="perezz")
    assert "did you mean 'perez'" in str(err.value)
    assert "isotropic, hay_davies, perez" in str(err.value)
    with pytest.raises(InputError, match="valid: erbs, boland"):
        solar.decompose_global([300], [40], pd.DatetimeIndex(["2021-01-01"], tz="UTC"),
                               model="nope")


def test_bad_surface_angles_and_albedo_are_refused():
    with pytest.raises(InputError, match="tilt"):
        solar.tilted_irradiance(190, 180, [40], [180], [500], [600], [100])
    with pytest.raises(InputError, match="albedo"):
        solar.tilted_irradiance(30, 180, [40], [180], [500], [600], [100], albedo=1.5)
