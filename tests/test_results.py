"""Results: HDF5 layout (DESIGN.md), round trip, atomic write, streaming, CSV, limits."""

import math
import os

import h5py
import numpy as np
import pytest

import rcsim
from conftest import make_heated_box as box
from rcsim.limits import excursion_stats


def test_hdf5_layout_and_round_trip(tmp_path):
    res = box().simulate("24 h", "10 min")
    path = tmp_path / "run.h5"
    res.save(path)
    with h5py.File(path, "r") as h5:
        for key in ("time", "temperature", "heat_flow", "boundary_temperature", "source_power"):
            assert key in h5
        assert [n.decode() for n in h5["temperature"].attrs["names"]] == ["payload", "air"]
        assert [n.decode() for n in h5["heat_flow"].attrs["names"]] == ["film", "wall"]
        for attr in ("rcsim_version", "scenario", "solver", "energy_balance", "created"):
            assert attr in h5.attrs
        assert h5["temperature"].shape == (145, 2)
    back = rcsim.Result.load(path)
    np.testing.assert_array_equal(back.temperatures.to_numpy(), res.temperatures.to_numpy())
    np.testing.assert_array_equal(back.heat_flows.to_numpy(), res.heat_flows.to_numpy())
    assert back.energy_balance == res.energy_balance
    assert back.limits["hold_time [s]"].iloc[1] == res.limits["hold_time [s]"].iloc[1]
    assert list(back.source_powers.columns) == ["fan"]
    assert not [p for p in os.listdir(tmp_path) if p.endswith(".tmp")]


def test_streamed_output_equals_memory(tmp_path):
    net = box()
    mem = net.simulate("10 d", "1 min")
    path = tmp_path / "stream.h5"
    streamed = net.simulate("10 d", "1 min", output=path)
    assert path.exists()
    np.testing.assert_allclose(streamed.temperatures.to_numpy(), mem.temperatures.to_numpy(),
                               atol=1e-12)
    assert streamed.energy_balance < 1e-9


def test_failed_run_leaves_no_file(tmp_path):
    net = box()
    path = tmp_path / "run.h5"
    path.write_bytes(b"previous content")

    def boom(fraction):
        raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        net.simulate("2 d", "1 min", output=path, progress=boom)
    assert path.read_bytes() == b"previous content"
    assert [p.name for p in tmp_path.iterdir()] == ["run.h5"]


def test_csv_export(tmp_path):
    res = box().simulate("2 h", "10 min")
    path = tmp_path / "h.csv"
    res.to_csv(path)
    text = path.read_text().splitlines()
    assert text[0].startswith("time [s],T:payload,T:air,boundary:outdoor,source:fan,flow:film")
    assert len(text) == 14  # header + 13 samples (0 to 2 h every 10 min)


def test_hold_time_matches_closed_form(single_node):
    # single node warming from 5 to 25 degC with tau = RC: T crosses 8 degC at
    # t = -tau ln((8 - 25)/(5 - 25)) (Newton cooling solved for t)
    C, R = 8400.0, 2.5
    net = single_node(C, R, Ti=5.0, ambient=25.0)
    net.add_limit("x", max=8.0)
    res = net.simulate("24 h", "1 min")
    row = res.limits.iloc[0]
    t_cross = -R * C * math.log((8 - 25) / (5 - 25))
    assert row["hold_time [s]"] == pytest.approx(t_cross, abs=0.5)
    assert row["time_out [s]"] == pytest.approx(86400 - t_cross, abs=0.5)
    T_end = 25 + (5 - 25) * math.exp(-86400 / (R * C))
    assert row["worst [K]"] == pytest.approx(T_end - 8, abs=1e-9)
    # degree-hours: integral of T - 8 from t_cross to the end, in closed form
    tau = R * C
    area = 17 * (86400 - t_cross) - 20 * tau * (math.exp(-t_cross / tau) - math.exp(-86400 / tau))
    assert row["degree_hours [K*h]"] == pytest.approx(area / 3600, rel=1e-4)


def test_excursion_stats_on_a_triangle():
    # a triangle 0 -> 10 -> 0 over 0..20 s against max 5: out from 5 s to 15 s, area 25 K*s
    t = np.array([0.0, 10.0, 20.0])
    T = np.array([0.0, 10.0, 0.0])
    st = excursion_stats(t, T, 5.0, "max")
    assert st["hold_time [s]"] == pytest.approx(5.0)
    assert st["time_out [s]"] == pytest.approx(10.0)
    assert st["degree_hours [K*h]"] * 3600 == pytest.approx(25.0)
    assert st["worst [K]"] == pytest.approx(5.0)
    low = excursion_stats(t, T + 3, 1.0, "min")
    assert math.isnan(low["hold_time [s]"])
    assert low["margin [K]"] == pytest.approx(2.0)


def test_load_rejects_other_files(tmp_path):
    p = tmp_path / "x.h5"
    with h5py.File(p, "w") as h5:
        h5["a"] = [1, 2]
    with pytest.raises(rcsim.InputError, match="not an rcsim result file"):
        rcsim.Result.load(p)
    q = tmp_path / "y.h5"
    q.write_text("hello")
    with pytest.raises(rcsim.InputError, match="cannot be read as HDF5"):
        rcsim.Result.load(q)
