"""Exposed surfaces wired into networks and scenarios (rcsim.surfaces, rcsim.outdoors).

Sources: the sol-air relation T_s = T_a + alpha I / h_o - eps dR / h_o (ASHRAE Handbook -
Fundamentals, "sol-air temperature"), with h_o = h_c + h_r and h_r the secant
eps sigma (T_a^2 + T_s^2)(T_a + T_s) (energy balance derived here); scipy's brentq on the
surface's heat balance written here; ISO 6946:2017 Annex C (h_c = 4 + 4 v, h_r = 4 eps sigma
T^3); Berdahl & Martin (1984) and Clark & Allen (1978) sky emissivities written out here from
their papers' formulas; the solar noon from the equation of time (Duffie & Beckman eq. 1.5.3,
from memory); a typical meteorological year shipped with pvlib (read at test time, never
committed) for the year-long check.
"""

import importlib.resources
import math
import os

import numpy as np
import pandas as pd
import pytest
from scipy.optimize import brentq

import rcsim
from conftest import SCENARIOS
from rcsim.errors import InputError

SIGMA = 5.670374419e-8      # CODATA 2018
K0 = 273.15


def sol_air_by_hand(t_air, t_surface, irradiance, alpha, eps, h_c, view, t_sky, t_ground=None):
    """The handbook relation with the exact secant h_r (derived here)."""
    t_ground = t_air if t_ground is None else t_ground
    a, s = t_air + K0, t_surface + K0
    h_r = eps * SIGMA * (a ** 2 + s ** 2) * (a + s)
    deficit = SIGMA * (view * (a ** 4 - (t_sky + K0) ** 4)
                       + (1 - view) * (a ** 4 - (t_ground + K0) ** 4))
    return t_air + alpha * irradiance / (h_c + h_r) - eps * deficit / (h_c + h_r)


def exposed_panel(capacity=20.0, tilt=0.0, **surface):
    net = rcsim.Network()
    net.add_node("skin", capacity=capacity, initial=20.0)
    net.add_boundary("outdoor", temperature=30.0)
    options = dict(area=2.0, absorptance=0.8, emissivity=0.9, air="outdoor", irradiance=800.0,
                   sky_temperature=10.0, tilt=tilt, film={"h": 15})
    options.update(surface)
    net.add_surface("roof", "skin", **options)
    return net


# -- a thin surface in steady sun -------------------------------------------------------------
@pytest.mark.parametrize("tilt, view", [(0.0, 1.0), (90.0, 0.5)])
def test_a_thin_surface_in_steady_sun_sits_at_its_sol_air_temperature(tilt, view):
    net = exposed_panel(tilt=tilt)
    t_s = float(net.steady().temperatures["skin"])
    # the handbook relation holds at the surface's own temperature (h_r the secant there)
    assert t_s == pytest.approx(sol_air_by_hand(30.0, t_s, 800.0, 0.8, 0.9, 15.0, view, 10.0),
                                abs=1e-8)

    def balance(t):   # absorbed sun + film + sky + ground at air temperature = 0 (derived here)
        s = t + K0
        return (0.8 * 800 + 15 * (30 - t) + 0.9 * SIGMA * view * ((10 + K0) ** 4 - s ** 4)
                + 0.9 * SIGMA * (1 - view) * ((30 + K0) ** 4 - s ** 4))

    assert t_s == pytest.approx(brentq(balance, -50, 200, xtol=1e-12), abs=1e-8)
    # a long run gets there too, and its sol-air record is the surface temperature (no heat
    # goes anywhere else)
    res = net.simulate("3 h", "1 min")
    assert res.temperatures["skin"].iloc[-1] == pytest.approx(t_s, abs=1e-5)
    assert res.sol_air["roof"].iloc[-1] == pytest.approx(t_s, abs=1e-5)
    assert res.surfaces == {"roof": "skin"}
    assert res.energy_balance < 1e-9


def test_sol_air_gives_the_heat_flow_into_a_wall():
    # q into the wall = h_o A (T_sa - T_s) (the definition of the sol-air temperature)
    net = exposed_panel(capacity=50.0, tilt=90.0)
    net.add_boundary("inside", temperature=20.0)
    net.add_link("skin", "inside", resistance=0.4, name="wall")
    res = net.simulate("4 h", "5 min", initial="steady")
    t_s = res.temperatures["skin"].to_numpy()
    t_sa = res.sol_air["roof"].to_numpy()
    a, s = 30.0 + K0, t_s + K0
    h_o_area = 2.0 * (15.0 + 0.9 * SIGMA * (a ** 2 + s ** 2) * (a + s))
    np.testing.assert_allclose(h_o_area * (t_sa - t_s), res.heat_flows["wall"].to_numpy(),
                               rtol=1e-7)
    np.testing.assert_allclose(t_sa, sol_air_by_hand(30.0, t_s, 800.0, 0.8, 0.9, 15.0, 0.5,
                                                     10.0), rtol=1e-12)


def test_linearised_radiation_keeps_the_network_linear():
    # h_r = 4 eps sigma T_m^3 (ISO 6946 Annex C): T_s = (alpha I + (h_c + h_r) T_a - h_r F
    # (T_a - T_sky)) / (h_c + h_r) for a surface that passes no heat on (derived here)
    net = exposed_panel(linearise_radiation="20 degC")
    res = net.simulate("3 h", "10 min")
    assert res.run_info.path == "exact"
    h_r = 4 * 0.9 * SIGMA * (20 + K0) ** 3
    expected = (0.8 * 800 + (15 + h_r) * 30 - h_r * (30 - 10)) / (15 + h_r)
    assert res.temperatures["skin"].iloc[-1] == pytest.approx(expected, abs=1e-6)
    assert res.sol_air["roof"].iloc[-1] == pytest.approx(expected, abs=1e-6)


def test_a_wind_film_is_a_conductance_that_follows_the_wind():
    wind = rcsim.Table([0, 3600, 7200], [0.5, 6.0, 2.0])
    net = exposed_panel(film={"wind": wind}, irradiance=rcsim.Table([0, 7200], [200.0, 900.0]))
    res = net.simulate("2 h", "1 min", solver="stiff", rtol=1e-8, atol=1e-8)
    # the same network built by hand: h_c A = 2 (4 + 4 v) (ISO 6946 Annex C), radiation to a
    # sky boundary, the absorbed sun as a source
    ref = rcsim.Network()
    ref.add_node("skin", capacity=20.0, initial=20.0)
    ref.add_boundary("outdoor", temperature=30.0)
    ref.add_boundary("sky", temperature=10.0)
    ref.add_link("skin", "outdoor", conductance=rcsim.Table([0, 3600, 7200],
                                                             [2 * 6.0, 2 * 28.0, 2 * 12.0]))
    ref.add_link("skin", "sky", parts=[{"radiation": {"emissivity": 0.9, "area": 2.0}}])
    ref.add_source("skin", rcsim.Table([0, 7200], [1.6 * 200, 1.6 * 900]))
    expected = ref.simulate("2 h", "1 min", solver="stiff", rtol=1e-8, atol=1e-8)
    np.testing.assert_allclose(res.temperatures["skin"], expected.temperatures["skin"],
                               atol=1e-6)
    # the sol-air record uses h_c(t): q in from outside = h_o A (T_sa - T_s)
    t = res.time
    t_s = res.temperatures["skin"].to_numpy()
    q_in = (res.source_powers["roof:sun"] - res.heat_flows["roof:film"]
            - res.heat_flows["roof:sky"]).to_numpy()
    h_c = 4 + 4 * wind.value(t)
    s, a = t_s + K0, 30.0 + K0
    h_o_area = 2.0 * (h_c + 0.9 * SIGMA * (a ** 2 + s ** 2) * (a + s))
    # (the stiff path's flows come from temperatures corrected towards the stored-energy
    # rates, within the run's tolerance of the recorded ones: h_o A ~ 60 W/K times ~1e-7 K)
    np.testing.assert_allclose(h_o_area * (res.sol_air["roof"].to_numpy() - t_s), q_in,
                               rtol=1e-7, atol=1e-5)
    assert res.run_info.declined == {}     # stiff asked for by name
    assert "exact" in exposed_panel(film={"wind": wind}).simulate(600, 60).run_info.declined


def test_shading_surfaces_sharing_a_sky_and_bad_descriptions():
    net = exposed_panel(shading=0.25)
    assert net.sources["roof:sun"].profile.value(0.0) == pytest.approx(2.0 * 0.8 * 0.75 * 800)
    shade = rcsim.Steps([0, 3600], [0.0, 0.5])
    net = exposed_panel(shading=shade)
    p = net.sources["roof:sun"].profile
    assert p.value(10.0) == pytest.approx(1280.0) and p.value(4000.0) == pytest.approx(640.0)
    net.add_node("wall", capacity=100.0, initial=20.0)
    net.add_surface("south", "wall", area=1.0, absorptance=0.5, emissivity=0.9, air="outdoor",
                    tilt=90, sky="roof:sky", film={"h": "20 W/(m^2*K)"})
    assert "south:sky" not in net.boundaries and net.links["south:sky"].b == "roof:sky"
    cases = [({"film": None}, "missing film"), ({"absorptance": 1.5}, "between 0 and 1"),
             ({"tilt": None}, "tilt"), ({"sky_temperature": None}, "sky_temperature"),
             ({"film": {"h": 10, "wind": 2}}, "film"), ({"air": "skin"}, "not a boundary"),
             ({"tilt": "200 deg"}, "angle"), ({"film": {"wind": 1, "model": "x"}}, "model")]
    for change, text in cases:
        with pytest.raises(InputError) as err:
            exposed_panel(**change)
        assert text in str(err.value) and "\n" not in str(err.value)
    with pytest.raises(InputError, match="no heat capacity"):
        exposed_panel(capacity=0.0)
    # a massless surface is fine when its exchange is linear
    assert exposed_panel(capacity=0.0, linearise_radiation=20).steady().solver == "linear"


def test_the_sol_air_history_is_saved_read_and_drawn(tmp_path):
    net = exposed_panel(capacity=200.0, irradiance=rcsim.Table([0, 3600, 7200],
                                                                [0.0, 900.0, 100.0]))
    res = net.simulate("2 h", "5 min")
    res.save(tmp_path / "r.h5")
    back = rcsim.Result.load(tmp_path / "r.h5")
    np.testing.assert_array_equal(back.sol_air.to_numpy(), res.sol_air.to_numpy())
    assert back.surfaces == {"roof": "skin"}
    streamed = net.simulate("2 h", "5 min", output=tmp_path / "s.h5")
    np.testing.assert_allclose(rcsim.Result.load(streamed.path).sol_air.to_numpy(),
                               res.sol_air.to_numpy(), rtol=1e-12)
    drawn = back.plot("history")
    line = drawn.lines["roof:sol-air"]
    np.testing.assert_array_equal(line.get_ydata(), back.sol_air["roof"].to_numpy())
    assert "roof:sol-air" not in back.plot("history", sol_air=False).lines


# -- scenarios: the clock, weather profiles, records ----------------------------------------------
RECORD = """time,T_air [degC],GHI [W/m^2],wind [m/s]
2026-03-28T23:00Z,1.0,0,2.0
2026-03-29T00:00Z,2.0,0,2.5
2026-03-29T01:00Z,3.0,0,3.0
2026-03-29T02:00Z,4.0,0,3.5
2026-03-29T03:00Z,5.0,0,4.0
2026-03-29T04:00Z,6.0,50,4.5
2026-03-29T05:00Z,7.0,150,5.0
"""
LOCAL_LOG = """time,T_room
2026-03-29T00:00,10.0
2026-03-29T01:00,11.0
2026-03-29T03:00,13.0
2026-03-29T04:00,14.0
2026-03-29T06:00,16.0
"""


def zurich_scenario(extra="", start="2026-03-29T00:00:00", boundaries=None):
    boundaries = boundaries or ('[boundaries.outdoor]\n'
                                'temperature = { weather = "air_temperature" }\n'
                                '[boundaries.room]\n'
                                'temperature = { csv = { file = "log.csv", column = "T_room" } }\n')
    return f"""
[simulation]
duration = "4 h"
step = "1 h"
start = {start}
[site]
latitude = 47.37
longitude = 8.54
time_zone = "Europe/Zurich"
[weather]
file = "record.csv"
columns = {{ air_temperature = "T_air", global_horizontal = "GHI", wind_speed = "wind" }}
{boundaries}
[nodes.box]
capacity = "1 kJ/K"
initial = "5 degC"
[links.a]
between = ["box", "outdoor"]
resistance = "1 K/W"
{extra}
"""


def test_records_and_csv_profiles_are_placed_on_the_site_clock(write):
    # the clock goes from 02:00 CET to 03:00 CEST on 29 March 2026 (EU rule): the start,
    # 00:00 local = 23:00Z; 01:00 local = 00:00Z is 1 h in; 03:00 local (CEST) = 01:00Z, 2 h in
    write("record.csv", RECORD)
    write("log.csv", LOCAL_LOG)
    text = zurich_scenario('[links.b]\nbetween = ["box", "room"]\nresistance = "1 K/W"\n')
    sc = rcsim.load(write("zurich.toml", text))
    outdoor = sc.network.boundaries["outdoor"].profile
    room = sc.network.boundaries["room"].profile
    np.testing.assert_allclose(outdoor.value(np.arange(5) * 3600.0), [1, 2, 3, 4, 5])
    np.testing.assert_allclose(room.value(np.array([0, 3600, 7200, 10800, 18000.0])),
                               [10, 11, 13, 14, 16])
    res = sc.run()
    np.testing.assert_allclose(res.boundary_temperatures["outdoor"], [1, 2, 3, 4, 5])
    # a local time the clock skips is refused naming the row
    write("log.csv", LOCAL_LOG.replace("2026-03-29T03:00", "2026-03-29T02:30"))
    with pytest.raises(InputError) as err:
        rcsim.load(write("zurich.toml", text))
    assert "line 4" in str(err.value) and "does not exist" in str(err.value)
    # the start may carry its offset: the same instant
    write("log.csv", LOCAL_LOG)
    same = rcsim.load(write("z2.toml", zurich_scenario(start='"2026-03-28T23:00:00Z"')))
    assert same.network.boundaries["outdoor"].profile.value(3600.0) == 2.0


def test_weather_columns_drive_any_input_of_the_right_kind(write):
    write("record.csv", RECORD)
    write("log.csv", LOCAL_LOG)
    extra = ('[sources.panel]\nnode = "box"\npower = { weather = { quantity = '
             '"global_horizontal", scale = "2 m^2" } }\n')
    sc = rcsim.load(write("s.toml", zurich_scenario(extra)))
    # 06:00 local = 04:00Z: 50 W/m^2 x 2 m^2, 5 h into the run
    assert sc.network.sources["panel"].profile.value(5 * 3600.0) == pytest.approx(100.0)
    bad = zurich_scenario(boundaries='[boundaries.outdoor]\ntemperature = { weather = '
                                     '"global_horizontal" }\n')
    with pytest.raises(InputError) as err:
        rcsim.load(write("b.toml", bad))
    message = str(err.value)
    assert "boundaries.outdoor.temperature" in message and "heat flux" in message
    bad = zurich_scenario(extra.replace("2 m^2", "2 m"))
    with pytest.raises(InputError, match="scale"):
        rcsim.load(write("b.toml", bad))
    bad = zurich_scenario(boundaries='[boundaries.outdoor]\ntemperature = { weather = '
                                     '"dew_point" }\n')
    with pytest.raises(InputError, match="no quantity 'dew_point'"):
        rcsim.load(write("b.toml", bad))


def test_a_repeated_record_wraps_from_its_last_row_to_its_first(write):
    # hour-ending stamps 01:00 .. 24:00 repeated daily: t = 0 is the row at 24:00 (the same
    # instant of the cycle), t = 25 h the row at 01:00
    rows = "\n".join(f"2026-07-0{1 + h // 24}T{h % 24:02d}:00,{10 + h}" for h in range(1, 25))
    write("day.csv", "time,T [degC]\n" + rows + "\n")
    text = """
[simulation]
duration = "3 days"
step = "1 h"
start = 2026-07-01T00:00:00
[site]
latitude = 0
longitude = 0
time_zone = "+00:00"
[weather]
file = "day.csv"
columns = { air_temperature = "T" }
repeat = "24 h"
[boundaries.out]
temperature = { weather = "air_temperature" }
[nodes.n]
capacity = "1 kJ/K"
[links.l]
between = ["n", "out"]
resistance = "1 K/W"
"""
    sc = rcsim.load(write("rep.toml", text))
    profile = sc.network.boundaries["out"].profile
    assert profile.value(0.0) == 34.0 and profile.value(25 * 3600.0) == 11.0
    assert profile.value(48 * 3600.0 + 1800.0) == pytest.approx(22.5)
    res = sc.run(initial="periodic")
    T = res.temperatures["n"].to_numpy()
    assert T[24] == pytest.approx(T[0], abs=1e-6)      # the periodic regime (definition)


BAD_RECORDS = [
    ("unit clash", "time,T_air [m/s],GHI [W/m^2],wind [m/s]\n2026-03-29T00:00Z,1,0,1\n"
                   "2026-03-29T01:00Z,2,0,1\n", "T_air"),
    ("a gap", "time,T_air [degC],GHI [W/m^2],wind [m/s]\n2026-03-29T00:00Z,1,0,1\n"
              "2026-03-29T01:00Z,,0,1\n2026-03-29T02:00Z,3,0,1\n", "line 3"),
    ("unsorted", "time,T_air [degC],GHI [W/m^2],wind [m/s]\n2026-03-29T01:00Z,1,0,1\n"
                 "2026-03-29T00:00Z,2,0,1\n", "line 3"),
    ("wrong offset", "time,T_air [degC],GHI [W/m^2],wind [m/s]\n2026-03-29T00:00+01:00,1,0,1\n"
                     "2026-03-29T01:00+01:00,2,0,1\n2026-03-29T04:00+03:00,3,0,1\n", "line 4"),
    ("times only", "time\n2026-03-29T00:00Z\n2026-03-29T01:00Z\n",
     "has no value columns besides its time column 'time' (add the weather columns 'T_air'"),
]


@pytest.mark.parametrize("case, text, named", BAD_RECORDS, ids=[c[0] for c in BAD_RECORDS])
def test_bad_weather_records_are_one_line_errors_naming_the_row(write, cli, tmp_path, case, text,
                                                                 named):
    write("record.csv", text)
    write("log.csv", LOCAL_LOG)
    scenario = write("bad.toml", zurich_scenario())
    with pytest.raises(InputError) as err:
        rcsim.load(scenario)
    assert named in str(err.value) and "record.csv" in str(err.value)
    assert "\n" not in str(err.value)
    out = tmp_path / "never.h5"
    r = cli("run", scenario, "-o", out)
    assert r.exit_code == 2 and "Traceback" not in r.output and named in r.output
    assert len(r.output.strip().splitlines()) == 1
    assert not out.exists()


def surface_section(**changes):
    keys = {"node": '"box"', "area": '"1 m^2"', "tilt": "0", "absorptance": "0.5",
            "emissivity": "0.9", "air": '"outdoor"', "film": "{ wind = true }",
            "sky_temperature": '"-5 degC"'}
    keys.update(changes)
    return "[surfaces.lid]\n" + "".join(f"{k} = {v}\n" for k, v in keys.items() if v is not None)


def test_surface_sections_are_checked(write):
    write("record.csv", RECORD)
    write("log.csv", LOCAL_LOG)
    sc = rcsim.load(write("ok.toml", zurich_scenario(surface_section())))
    assert set(sc.network.surfaces) == {"lid"}
    # the wind film follows the record's wind speed: h_c A = 1 m^2 (4 + 4 v), v = 2.5 m/s 1 h in
    film = sc.network.links["lid:film"].parts[0].varying
    assert film.value(3600.0) == pytest.approx(14.0)
    cases = [(dict(emissivity=None, emisivity="0.9"), "did you mean 'emissivity'"),
             (dict(film="{ wind = false }"), "surfaces.lid.film.wind"),
             (dict(tilt="90"), "azimuth"),
             (dict(air='"nowhere"'), "surfaces.lid.air"),
             (dict(sky_temperature=None), "dew point"),
             (dict(diffuse_model='"perz"'), "perez")]
    for changes, named in cases:
        with pytest.raises(InputError) as err:
            rcsim.load(write("bad.toml", zurich_scenario(surface_section(**changes))))
        assert named in str(err.value) and "\n" not in str(err.value), str(err.value)
    no_weather = zurich_scenario(surface_section(irradiance='"0 W/m^2"')).replace(
        "[weather]", "[unused]")
    with pytest.raises(InputError):
        rcsim.load(write("nw.toml", no_weather))


# -- the worked scenario: a battery cabinet in the sun ---------------------------------------------
@pytest.fixture(scope="module")
def cabinet():
    sc = rcsim.load(os.path.join(SCENARIOS, "outdoor-cabinet.toml"))
    return sc, sc.run(record=list(sc.network.nodes))


def test_cabinet_faces_follow_the_sun(cabinet):
    # solar noon on the local summer clock at 6.0 W in early July: 12:00 + (30 + 6) degrees /
    # 15 degrees per hour - equation of time (about -4.6 min on 9 July, Duffie & Beckman eq.
    # 1.5.3) = 14:29. The sun on the east face peaks in the morning, on the west face as far
    # into the afternoon (mirrored about solar noon on a clear day), on the roof at noon; the
    # panels' temperatures follow (east before noon, west after)
    _sc, res = cabinet
    b = 2 * math.pi * (190 - 1) / 365
    eot = 229.2 * (0.000075 + 0.001868 * math.cos(b) - 0.032077 * math.sin(b)
                   - 0.014615 * math.cos(2 * b) - 0.04089 * math.sin(2 * b))
    noon = 12.0 + 36.0 / 15.0 - eot / 60.0
    assert 14.3 < noon < 14.6
    hours = (res.time / 3600.0) % 24
    for day in (0, 1, 2, 4, 5):                       # the clear days
        on_day = (res.time >= day * 86400) & (res.time < (day + 1) * 86400)

        def peak(series):
            return hours[on_day][np.argmax(series.to_numpy()[on_day])]

        sun = {face: peak(res.source_powers[f"{face}:sun"]) for face in ("east", "west", "roof")}
        assert sun["east"] < noon - 3 and sun["west"] > noon + 3
        assert abs((sun["east"] + sun["west"]) / 2 - noon) < 0.75
        assert abs(sun["roof"] - noon) < 0.75
        assert peak(res.temperatures["east"]) < noon - 2
        assert peak(res.temperatures["west"]) > noon + 2


def test_cabinet_roof_sol_air_against_a_hand_computation(cabinet):
    # a horizontal roof receives the global horizontal irradiance itself; the sky from
    # Berdahl-Martin eps = 0.711 + 0.56 x + 0.73 x^2 (x = T_dp/100 degC) with Clark-Allen's
    # cloud factor 1 + 0.0224 N - 0.0035 N^2 + 0.00028 N^3 (N in tenths); h_c = 4 + 4 v
    _sc, res = cabinet
    record = pd.read_csv(os.path.join(SCENARIOS, "cabinet-week.csv"))
    hourly = np.arange(0, res.time.size, 6)            # 10-min steps: the record's rows
    assert np.allclose(res.time[hourly], np.arange(len(record)) * 3600.0)
    air, dew = record["T_air [degC]"].to_numpy(), record["T_dew [degC]"].to_numpy()
    ghi, wind = record["GHI [W/m^2]"].to_numpy(), record["wind [m/s]"].to_numpy()
    n = record["cloud [%]"].to_numpy() / 10.0
    x = dew / 100.0
    eps_sky = (0.711 + 0.56 * x + 0.73 * x ** 2) * (1 + 0.0224 * n - 0.0035 * n ** 2
                                                    + 0.00028 * n ** 3)
    t_sky = eps_sky ** 0.25 * (air + K0) - K0
    np.testing.assert_allclose(res.boundary_temperatures["sky"].to_numpy()[hourly], t_sky,
                               atol=1e-9)
    t_roof = res.temperatures["roof"].to_numpy()[hourly]
    expected = sol_air_by_hand(air, t_roof, ghi, 0.5, 0.9, 4 + 4 * wind, 1.0, t_sky)
    sunny = ghi > 200            # away from sunrise and sunset (the diffuse model's cut-offs)
    np.testing.assert_allclose(res.sol_air["roof"].to_numpy()[hourly][sunny], expected[sunny],
                               atol=1e-6)
    night = ghi == 0
    np.testing.assert_allclose(res.sol_air["roof"].to_numpy()[hourly][night], expected[night],
                               atol=1e-9)


def test_cabinet_panels_peak_near_their_sol_air_temperature(cabinet):
    # a 1.5 mm steel panel lined with foam is nearly massless: about 5.7 kJ/(m^2 K) against an
    # outside coefficient h_o of 10-30 W/(m^2 K) is a time constant of some 3-10 min, and the
    # foam passes on about 1 W/(m^2 K). Its peak comes within a couple of kelvin of its
    # sol-air peak (which it lags a little) and well above the hottest air.
    _sc, res = cabinet
    air = res.boundary_temperatures["outdoor"].to_numpy()
    for face in ("roof", "front", "east", "west"):
        t, sol = res.temperatures[face].to_numpy(), res.sol_air[face].to_numpy()
        assert air.max() + 4.0 < t.max() < sol.max() + 0.1
        assert sol.max() - t.max() < 2.5
    assert res.energy_balance < 1e-9


# -- a real weather year drives a wall ------------------------------------------------------------
def typical_year_csv(tmp_path):
    """pvlib's bundled typical meteorological year (Greensboro, NC; TMY3 format) as a weather
    CSV with ISO-8601 stamps in local standard time (offset from the file's first line)."""
    source = importlib.resources.files("pvlib") / "data" / "723170TYA.CSV"
    with source.open(encoding="utf-8") as fh:
        meta = fh.readline().strip().split(",")
    frame = pd.read_csv(source, skiprows=1)
    date = pd.to_datetime(frame["Date (MM/DD/YYYY)"], format="%m/%d/%Y")
    hour = frame["Time (HH:MM)"].str.slice(0, 2).astype(int)         # hour ending, 1..24
    stamps = pd.to_datetime(pd.DataFrame({"year": 1999, "month": date.dt.month,
                                          "day": date.dt.day})) + pd.to_timedelta(hour, unit="h")
    offset = f"-{abs(int(float(meta[3]))):02d}:00"
    out = frame[["Dry-bulb (C)", "Dew-point (C)", "GHI (W/m^2)", "DNI (W/m^2)", "DHI (W/m^2)",
                 "TotCld (tenths)"]].copy()
    out.columns = ["T", "Tdp", "GHI", "DNI", "DHI", "cover"]
    out.insert(0, "time", stamps.dt.strftime("%Y-%m-%dT%H:%M") + offset)
    path = tmp_path / "typical-year.csv"
    out.to_csv(path, index=False)
    return path, float(meta[4]), float(meta[5]), float(meta[6])


WALL_YEAR = """
[simulation]
duration = "8760 h"
step = "1 h"
start = 1999-01-01T00:00:00
initial = "periodic"
[site]
latitude = {lat}
longitude = {lon}
elevation = "{elev} m"
time_zone = "-05:00"
[weather]
file = "typical-year.csv"
columns = {{ air_temperature = {{ column = "T", unit = "degC" }}, dew_point = {{ column = "Tdp", unit = "degC" }}, global_horizontal = {{ column = "GHI", unit = "W/m^2" }}, direct_normal = {{ column = "DNI", unit = "W/m^2" }}, diffuse_horizontal = {{ column = "DHI", unit = "W/m^2" }}, sky_cover = {{ column = "cover", unit = "tenths" }} }}
irradiance_period = "ending"
repeat = "8760 h"
[boundaries.outdoor]
temperature = {{ weather = "air_temperature" }}
[boundaries.ground]
temperature = "15 degC"
[nodes.outer]
capacity = "30 kJ/K"                 # 10 m^2 of render
initial = "15 degC"
[nodes.room]
capacity = "300 kJ/K"
initial = "15 degC"
[surfaces.south]
node = "outer"
area = "10 m^2"
tilt = 90
azimuth = 180
absorptance = 0.6
emissivity = 0.9
air = "outdoor"
film = {{ h = "20 W/(m^2*K)" }}
linearise_radiation = "15 degC"
[links.wall]
between = ["outer", "room"]
parts = [ {{ conduction = {{ material = "concrete-medium", thickness = "150 mm", area = "10 m^2", slices = 6 }} }},
          {{ conduction = {{ material = "eps", thickness = "80 mm", area = "10 m^2" }} }},
          {{ convection = {{ h = "7.7 W/(m^2*K)", area = "10 m^2" }} }} ]
[links.floor]
between = ["room", "ground"]
conductance = "8 W/K"
"""


def test_a_typical_year_drives_a_wall(write, tmp_path):
    # A linear network: a fixed film (a wind film would make a conductance vary in time) and
    # the long-wave exchange linearised (sigma T^4 is not linear); the sky temperature and the
    # sun are inputs either way. In the periodic regime of a linear network the mean over a
    # period of every temperature is the steady state under the period's mean inputs (the
    # stored energy returns to itself: K mean(T) = B mean(u) + P mean(s)).
    path, lat, lon, elev = typical_year_csv(tmp_path)
    sc = rcsim.load(write("wall.toml", WALL_YEAR.format(lat=lat, lon=lon, elev=elev)))
    res = sc.run()
    assert res.run_info.path == "exact"
    assert res.energy_balance < 1e-9
    asm = sc.network.assemble()
    period = 8760 * 3600.0
    u_mean = np.array([p.integral(0.0, period) / period for p in asm.boundary_profiles])
    s_mean = np.array([p.integral(0.0, period) / period for p in asm.source_profiles])
    from rcsim.steady import steady_temperatures

    steady = dict(zip(asm.node_names, steady_temperatures(asm, u_mean, s_mean)))
    t = res.time
    for node in ("room", "outer"):
        mean = np.trapezoid(res.temperatures[node].to_numpy(), t) / period
        # hourly samples of a periodic regime: the trapezoid's end corrections cancel
        # (Euler-Maclaurin), so the sampled mean is the period's mean to far below 1e-6 K
        assert mean == pytest.approx(steady[node], abs=1e-6)
    # order of magnitude: the south wall's surface peaks above the year's hottest air and
    # below its own hottest sol-air temperature, at 30-60 degC (the handbook's sol-air
    # temperatures of sunlit walls); at 36 N the low winter sun heats a south wall most, so in
    # January its surface rises well above the air (alpha I / h_o ~ 0.6 x 600 / 24 = 15 K)
    air = res.boundary_temperatures["outdoor"].to_numpy()
    outer = res.temperatures["outer"].to_numpy()
    sol = res.sol_air["south"].to_numpy()
    assert air.max() < outer.max() < sol.max() and 30.0 < outer.max() < 60.0
    january = t < 31 * 86400
    assert (outer - air)[january].max() > 8.0 and (sol - air)[january].max() > 10.0
    assert air.min() < res.temperatures["room"].min() < res.temperatures["room"].max() < air.max()
    assert 12.0 < np.trapezoid(air, t) / period < 17.0     # Greensboro's climate (from memory)
