"""Names and words that must not mislead (issue 15, items 4, 9-13, 15, 16, 21): what the commands
print and the tables carry, each checked against a closed form derived here."""

from __future__ import annotations

import math

import h5py
import numpy as np
import pytest

import rcsim
from rcsim.units import format_duration

DAY = 86400.0


# -- item 4: a massless node's starting value is ignored, and check says so ----------------------
JUNCTION = """
[simulation]
duration = "1 h"
step = "1 min"
[nodes.body]
capacity = "10 kJ/K"
initial = "20 degC"
[nodes.face]
capacity = 0
initial = "4 degC"
[boundaries.room]
temperature = "30 degC"
[links.inner]
between = ["body", "face"]
resistance = "1 K/W"
[links.outer]
between = ["face", "room"]
resistance = "3 K/W"
"""


def test_check_says_a_massless_nodes_initial_value_is_ignored(cli, write):
    path = write("junction.toml", JUNCTION)
    out = cli("check", path).output
    line = next(x for x in out.splitlines() if x.strip().startswith("face"))
    assert "ignored" in line and "massless" in line, line
    assert "initial 4 degC" not in line
    # and it is ignored: at t = 0 the massless face sits where its two links put it, the
    # conductance-weighted mean of its neighbours (closed form: (20/1 + 30/3) / (1/1 + 1/3))
    res = rcsim.loads(JUNCTION).run()
    assert res.temperatures["face"].iloc[0] == pytest.approx((20 / 1 + 30 / 3) / (1 + 1 / 3),
                                                            abs=1e-9)


# -- items 9, 10, 13: the periodic table and the first crossing of a periodic run ---------------
C, R = 3.6e6, 0.01        # tau = 36000 s = 10 h
MEAN, AMP, PEAK = 20.0, 6.0, 15 * 3600.0
LIMIT = 21.0
PERIODIC = f"""
[simulation]
duration = "24 h"
step = "1 min"
initial = "periodic"
[nodes.room]
capacity = "{C} J/K"
[boundaries.outdoor]
temperature = {{ sine = {{ mean = "{MEAN} degC", amplitude = "{AMP} K", period = "24 h", peak = "15 h" }} }}
[links.wall]
between = ["room", "outdoor"]
resistance = "{R} K/W"
[limits.room]
max = "{LIMIT} degC"
"""


def _first_order_response():
    """Closed form of C dT/dt = (T_out - T)/R under T_out = MEAN + AMP cos(w (t - PEAK)):
    T = MEAN + AMP r cos(w (t - PEAK) - phi), r = 1/sqrt(1 + (w tau)^2), phi = atan(w tau)."""
    w, tau = 2 * math.pi / DAY, R * C
    return 1 / math.sqrt(1 + (w * tau) ** 2), math.atan(w * tau) / w


def test_periodic_table_names_range_and_amplitude_ratio():
    ratio, lag = _first_order_response()
    pr = rcsim.loads(PERIODIC).run().periodic_response()
    row = pr.loc["room"]
    assert row["amplitude ratio [-]"] == pytest.approx(ratio, rel=1e-6)
    assert row["lag [s]"] == pytest.approx(lag, abs=1.0)
    # range is max - min of the samples: for a sinusoid twice its amplitude (within the 1 min
    # sampling of the crest: 1 - cos(w 30 s) ~ 2e-5 of the amplitude)
    assert row["range [K]"] == pytest.approx(2 * AMP * ratio, rel=1e-4)
    # the former names stay as columns with the same values (public API, kept)
    assert row["swing [K]"] == row["range [K]"]
    assert row["decrement [-]"] == row["amplitude ratio [-]"]


def test_run_prints_range_amplitude_ratio_and_a_clock_time(cli, write):
    path = write("room.toml", PERIODIC)
    out = cli("run", path).output
    assert "range [K]" in out and "amplitude ratio" in out
    assert "swing" not in out and "decrement" not in out
    # the first crossing of 21 degC on the rising side, closed form:
    # cos(w (t - PEAK) - phi) = (LIMIT - MEAN)/(AMP r), rising branch
    ratio, lag = _first_order_response()
    w = 2 * math.pi / DAY
    t = (PEAK + lag - math.acos((LIMIT - MEAN) / (AMP * ratio)) / w) % DAY
    minutes = round(t / 60.0)
    assert abs(t / 60.0 - minutes) < 0.4      # not near a half minute: the rounding is safe
    clock = f"{minutes // 60:02d}:{minutes % 60:02d}"
    assert f"first above {LIMIT:g} degC at {clock}" in out, out
    assert "hold time" not in out


# -- item 11: the radiation part's 1/R_s is an exchange area -------------------------------------
def test_radiation_exchange_area_keeps_its_old_name_working():
    from rcsim.laws import RadiationLaw
    from rcsim.parts import make_part

    eps, area = 0.9, 1.3
    part = make_part({"radiation": {"emissivity": eps, "area": area}}, "p")
    # small body in large surroundings: 1/R_s = eps A (Incropera et al., 6th ed., eq. 1.7)
    assert part.params["exchange_area"] == pytest.approx(eps * area, rel=1e-12)
    assert "exchange_area=1.17" in part.describe() and "surface_factor" not in part.describe()
    old = RadiationLaw(surface_factor=2.0)
    assert old.exchange_area == 2.0 and old.surface_factor == 2.0
    assert RadiationLaw(2.0).params() == {"exchange_area": 2.0}


# -- item 12: U only for constructions, G/A for films and pads ----------------------------------
LINKS = """
[nodes.a]
capacity = "1 kJ/K"
initial = "20 degC"
[nodes.b]
capacity = "1 kJ/K"
initial = "20 degC"
[boundaries.out]
temperature = "0 degC"
[links.film]
between = ["a", "b"]
parts = [{ convection = { h = "7.69 W/(m^2*K)", area = "2 m^2" } }]
[links.pad]
between = ["a", "b"]
parts = [{ conduction = { k = "1.5 W/(m*K)", thickness = "0.5 mm", area = "3 cm^2" } },
         { contact = { resistance = "1e-4 m^2*K/W", area = "3 cm^2" } }]
[links.wall]
between = ["b", "out"]
parts = [{ conduction = { k = "1.35 W/(m*K)", thickness = "200 mm", area = "2 m^2" } },
         { conduction = { k = "0.035 W/(m*K)", thickness = "120 mm", area = "2 m^2" } },
         { convection = { h = "25 W/(m^2*K)", area = "2 m^2" } }]
"""


def test_U_is_printed_for_constructions_and_G_per_area_for_films_and_pads(cli, write):
    path = write("links.toml", LINKS)
    out = cli("check", path).output
    lines = {x.split()[0]: x for x in out.splitlines() if x.startswith("  ") and "->" in x}
    # film: G/A = h; pad: 1/(R'' + L/k) = 1/(1e-4 + 0.5e-3/1.5); wall: U = 1/(sum L/k + 1/h)
    # (ISO 6946 clause 6.7 sum, here without the inside film, which is not in the link)
    assert "G/A = 7.69 W/(m^2*K)" in lines["film"] and "U =" not in lines["film"]
    g_pad = 1 / (1e-4 + 0.5e-3 / 1.5)
    assert f"G/A = {g_pad:.4g} W/(m^2*K)" in lines["pad"] and "U =" not in lines["pad"]
    u_wall = 1 / (0.2 / 1.35 + 0.12 / 0.035 + 1 / 25)
    assert f"U = {u_wall:.4g} W/(m^2*K)" in lines["wall"]
    steady = cli("steady", path).output
    assert f"U {u_wall:<12.4g}" in steady and "G/A 7.69" in steady


# -- item 15: names a reader cannot mistake, the old ones kept --------------------------------
def test_energy_balance_error_and_its_former_name():
    from conftest import make_single_node

    res = make_single_node().simulate("2 h", "1 min")
    assert res.energy_balance_error == res.energy_balance
    assert 0 <= res.energy_balance_error < 1e-9      # the exact path closes the balance


# -- item 16: one precision rule for printed times ---------------------------------------------
@pytest.mark.parametrize("seconds, text", [
    (1.00006, "1.000 s"),          # known to better than 4 figures: the zeros are printed
    (1.0, "1 s"), (600.0, "10 min"), (72 * 3600.0, "72 h"),  # exact: no trailing zeros
    (47.3211 * 3600, "47.32 h"), (2.3551 * 3600, "2.355 h"), (0.5, "0.5 s"),
    (5e5, "5.787 d"),
])
def test_times_are_printed_to_four_significant_figures(seconds, text):
    assert format_duration(seconds) == text


def test_modes_prints_a_time_constant_to_four_figures(cli, write):
    # one node, tau = R C = 1.00006 s (closed form)
    path = write("tau.toml", '[nodes.x]\ncapacity = "1.00006 J/K"\ninitial = "1 degC"\n'
                             '[boundaries.a]\ntemperature = "0 degC"\n'
                             '[links.r]\nbetween = ["x", "a"]\nresistance = "1 K/W"\n')
    out = cli("modes", path).output
    assert "1.000 s" in out, out


# -- item 21: cautions where results travel ----------------------------------------------------
@pytest.mark.parametrize("command", ["check", "steady", "modes"])
def test_summaries_print_the_caution(cli, write, command):
    path = write("links.toml", LINKS)
    r = cli(command, path)
    assert r.exit_code == 0, r.output
    assert "caution: a simulation supports, and never replaces" in r.output


def test_materials_says_its_values_are_typical_not_design_values(cli):
    out = cli("materials").output
    assert "typical values" in out and "not design values" in out


def test_saved_figures_and_result_files_carry_the_caution(tmp_path):
    from conftest import make_heated_box

    from rcsim.caution import CAUTION, FIGURE_CAUTION
    from rcsim.plotting import save_figure

    res = make_heated_box().simulate("24 h", "10 min")
    drawn = res.plot("history")
    before = len(drawn.figure.texts)
    save_figure(drawn.figure, tmp_path / "h.svg")
    assert len(drawn.figure.texts) == before            # the caller's figure is unchanged
    svg = (tmp_path / "h.svg").read_text(encoding="utf-8")
    assert 'id="rcsim-caution"' in svg
    save_figure(drawn.figure, tmp_path / "h.png")     # PNG and PDF go the same way
    assert "Model result" in FIGURE_CAUTION
    res.save(tmp_path / "r.h5")
    with h5py.File(tmp_path / "r.h5", "r") as h5:
        caution = h5.attrs["caution"]
    assert (caution.decode() if isinstance(caution, bytes) else caution) == CAUTION
    assert np.isfinite(rcsim.Result.load(tmp_path / "r.h5").energy_balance_error)
    # a run streamed to its file carries it too
    make_heated_box().simulate("2 h", "10 min", output=tmp_path / "s.h5")
    with h5py.File(tmp_path / "s.h5", "r") as h5:
        caution = h5.attrs["caution"]
    assert (caution.decode() if isinstance(caution, bytes) else caution) == CAUTION


def test_reports_show_the_time_outside_the_band_in_hours_under_either_name():
    # the sizing report scales time outputs to hours (1/3600, closed form), whatever their name
    from rcsim.report.sizing import output_in_report

    for name in ("time_outside_band.payload", "time_out.payload"):
        assert output_in_report(name) == (1.0 / 3600.0, "h")
