"""The recording layer and thread control: long name lists in result files (datasets beside
the 64 KiB-limited attribute), files written the old way, histories preallocated, and the number
of BLAS threads rcsim's kernels use."""

from __future__ import annotations

import h5py
import numpy as np
import pytest

import rcsim
from rcsim import threads
from rcsim.recording import H5Sink, MemorySink, names_dataset, read_names


def _write(path, names, rows=3):
    sink = H5Sink(path)
    sink.reserve(rows)
    sink.declare("time", [])
    sink.declare("temperature", names)
    sink.append("time", np.arange(rows, dtype=float))
    data = np.arange(rows * len(names), dtype=float).reshape(rows, len(names))
    sink.append("temperature", np.asfortranarray(data))     # a column-major chunk
    sink.finish({"rcsim_version": "test"})
    return data


def test_a_hundred_thousand_names_go_to_a_dataset(tmp_path):
    # an HDF5 attribute must fit in a 64 KiB object header (the HDF5 format's limit): 100,000
    # names of 11 characters (1.1 MB) could not be stored as one; the dataset holds them
    names = [f"node{i:07d}" for i in range(100_000)]
    data = _write(tmp_path / "big.h5", names)
    with h5py.File(tmp_path / "big.h5", "r") as h5:
        assert "names" not in h5["temperature"].attrs
        assert read_names(h5, "temperature") == names
        np.testing.assert_array_equal(h5["temperature"][()], data)
    back = rcsim.Result.load(tmp_path / "big.h5")
    assert list(back.temperatures.columns) == names
    assert back.temperatures.iloc[2, 99_999] == data[2, 99_999]


def test_short_name_lists_keep_the_attribute_for_older_readers(tmp_path):
    names = ["payload", "air", "wall.1", "pâte"]               # UTF-8 as well
    _write(tmp_path / "small.h5", names)
    with h5py.File(tmp_path / "small.h5", "r") as h5:
        attr = [n.decode("utf-8") for n in h5["temperature"].attrs["names"]]
        assert attr == names and read_names(h5, "temperature") == names


def test_files_written_with_the_attribute_only_are_read(tmp_path, single_node):
    # the layout before the names datasets: only the attribute 'names' on each series
    res = single_node().simulate("1 h", "10 min")
    res.save(tmp_path / "r.h5")
    with h5py.File(tmp_path / "r.h5", "a") as h5:
        for key in ("temperature", "heat_flow", "boundary_temperature", "source_power",
                    "energy/links", "energy/sources"):
            if names_dataset(key) in h5:
                del h5[names_dataset(key)]
    back = rcsim.Result.load(tmp_path / "r.h5")
    assert list(back.temperatures.columns) == ["x"]
    assert list(back.heat_flows.columns) == ["skin"]
    np.testing.assert_array_equal(back.temperatures["x"], res.temperatures["x"])


@pytest.mark.slow
def test_a_run_with_more_names_than_an_attribute_holds_streams_to_a_file(tmp_path):
    # 7,000 nodes named 'segment_node_<i>' (about 130 KB of names): the run streams to HDF5
    # (large-linear path) and the file reads back with every name; the solution is checked
    # against its own steady state (a constant ambient, started there: nothing moves)
    n = 7000
    net = rcsim.Network()
    net.add_boundary("amb", temperature=15.0)
    for i in range(n):
        net.add_node(f"segment_node_{i}", capacity=1e3, initial=15.0)
    for i in range(n - 1):
        net.add_link(f"segment_node_{i}", f"segment_node_{i + 1}", resistance=0.05)
    net.add_link("segment_node_0", "amb", resistance=1.0)
    res = net.simulate("1 h", "10 min", output=tmp_path / "run.h5")
    assert res.run_info.path == "large-linear"
    back = rcsim.Result.load(tmp_path / "run.h5")
    assert list(back.temperatures.columns) == [f"segment_node_{i}" for i in range(n)]
    np.testing.assert_allclose(back.temperatures.to_numpy(), 15.0, atol=1e-9)


def test_memory_histories_are_allocated_once_and_grow_when_a_run_delivers_more():
    sink = MemorySink()
    sink.reserve(4)
    sink.declare("time", [])
    sink.declare("temperature", ["a", "b"])
    first = sink.buffers["temperature"].data
    sink.append("time", np.array([0.0, 1.0, 2.0]))
    sink.append("temperature", np.array([[0.0, 1.0], [2.0, 3.0], [4.0, 5.0]]))
    assert sink.buffers["temperature"].data is first                # no reallocation
    sink.append("time", np.array([3.0, 4.0]))
    sink.append("temperature", np.array([[6.0, 7.0], [8.0, 9.0]]))   # one more than announced
    out = sink.arrays()
    np.testing.assert_array_equal(out["time"], [0, 1, 2, 3, 4])
    np.testing.assert_array_equal(out["temperature"], np.arange(10.0).reshape(5, 2))


def _blas_threads():
    from threadpoolctl import threadpool_info

    return [p["num_threads"] for p in threadpool_info() if p["user_api"] == "blas"]


def test_rcsim_kernels_run_on_the_threads_it_is_told(monkeypatch):
    monkeypatch.delenv(threads.ENVIRONMENT_VARIABLE, raising=False)
    # one thread by default: the documented policy, chosen by measurement (rcsim.threads;
    # bench_transient.py --threads); what a user observes is in tests/test_threads.py
    assert threads.current() == threads.DEFAULT_THREADS == 1
    outside = _blas_threads()
    with threads.kernels():
        assert set(_blas_threads()) <= {1}
    assert _blas_threads() == outside                   # the caller's setting is restored
    monkeypatch.setenv(threads.ENVIRONMENT_VARIABLE, "2")
    assert threads.current() == 2
    monkeypatch.setenv(threads.ENVIRONMENT_VARIABLE, "auto")
    assert threads.current() == "auto"
    previous = threads.limit(3)
    try:
        assert threads.current() == 3                   # limit() wins over the environment
    finally:
        threads.limit(previous if previous != "auto" else None)
    monkeypatch.setenv(threads.ENVIRONMENT_VARIABLE, "many")
    with pytest.raises(rcsim.InputError, match="RCSIM_THREADS"):
        threads.current()
    with pytest.raises(rcsim.InputError, match="whole number"):
        threads.limit(-2)


def test_scratch_arrays_kept_after_a_run_are_given_back_on_request():
    import tracemalloc

    from rcsim.recording import release_work_arrays, work_arrays_kept
    from rcsim.transient.exact import CHUNK_ELEMENTS

    hours = np.arange(0, 30 * 24 + 2) * 3600.0
    net = rcsim.Network()
    net.add_boundary("outdoor", temperature=rcsim.Table(hours, 8 + 6 * np.sin(hours / 86400)))
    net.add_boundary("indoor", temperature=20.0)
    net.add_node("inner", capacity=2000.0, initial=18.0)
    net.add_link("indoor", "inner", resistance=0.01, name="film")
    net.add_link("inner", "outdoor", name="wall", parts=[
        {"conduction": {"material": "concrete-medium", "thickness": 0.2, "area": 10,
                        "slices": 49}}])
    release_work_arrays()
    tracemalloc.start()
    try:
        res = net.simulate("30 d", "10 min")
        kept = work_arrays_kept()
        before = tracemalloc.get_traced_memory()[0]
        freed = release_work_arrays()
        after = tracemalloc.get_traced_memory()[0]
    finally:
        tracemalloc.stop()
    # the sizes of the arrays themselves: n modes (every node has a capacity, eigenvalues from
    # scipy.linalg.eigh of (K, C)), I = 2 inputs and K = 4 input rows; a chunk of c output
    # intervals (CHUNK_ELEMENTS numbers over n + I rows, a multiple of 32); the modes split
    # into n_s scanned ones and fast ones folded over J taps (fast_taps, for 50 recorded
    # temperatures plus 2 boundary segments and the stored energy); the forcing of the scanned
    # modes n_s x (c/16 blocks x 17) and the stacked rows (n_s + I + 4 J) x c; 8 bytes a number.
    # The heat flows are written into their history, their link ends gathered from the
    # temperature history's rows: no scratch array for them
    import scipy.linalg

    from rcsim.transient.exact_chunks import fast_taps

    asm = net.assemble()
    lam = scipy.linalg.eigh(asm.K.toarray(), np.diag(asm.capacity), eigvals_only=True)
    n, I = res.temperatures.shape[1], 2
    J, fast = fast_taps(np.exp(-600.0 * lam), 4, n + 2 + 1)
    n_s = n - int(fast.sum())
    assert J >= 1 and 0 < n_s < n                       # some modes of each kind
    c = CHUNK_ELEMENTS // (n + I)
    c -= c % 32
    assert n == 50 and res.time.size - 1 > c          # full chunks were run
    expected = 8 * (n_s * (c // 16) * 17 + (n_s + I + 4 * J) * c)
    assert kept == freed == expected
    assert before - after >= 0.99 * expected            # the memory itself went back
    assert work_arrays_kept() == 0
    again = net.simulate("30 d", "10 min")               # made again by the next run
    np.testing.assert_array_equal(again.temperatures.to_numpy(), res.temperatures.to_numpy())


@pytest.mark.parametrize("record", [None, ["n17", "n0", "n1", "n2", "n3", "n4", "n5", "n9"]])
def test_heat_flows_are_conductance_times_the_recorded_end_difference(record):
    # the heat flow of a linear link is its conductance times the difference of its end
    # temperatures (the thermal analogue of Ohm's law, any heat transfer textbook), computed
    # here with numpy from the recorded temperatures and boundary values. A chain n0..n19
    # (links in runs of consecutive nodes, taken as slices), cross links, links to a boundary
    # at either end; every node recorded (the flows' ends gathered from the strided history)
    # or some (from one block of temperatures; only links with both ends recorded are kept)
    rng = np.random.default_rng(2)
    net = rcsim.Network()
    net.add_boundary("out", temperature=rcsim.Table([0, 172800], [-5.0, 15.0]))
    net.add_boundary("in", temperature=20.0)
    for i in range(20):
        net.add_node(f"n{i}", capacity=float(rng.uniform(1e4, 1e5)), initial=float(10 + i))
    links = {}
    pairs = [(f"n{i}", f"n{i + 1}") for i in range(19)] + [
        ("n3", "n9"), ("n17", "n2"), ("out", "n0"), ("n19", "in"), ("n9", "out")]
    for k, (a, b) in enumerate(pairs):
        g = float(rng.uniform(1, 9))
        links[net.add_link(a, b, conductance=g, name=f"link{k}")] = (a, b, g)
    res = net.simulate("2 d", "10 min", record=record)
    T = res.temperatures
    ends = {**{k: T[k].to_numpy() for k in T.columns},
            **{k: res.boundary_temperatures[k].to_numpy() for k in ("out", "in")}}
    flows = res.heat_flows
    expected_links = [k for k, (a, b, _) in links.items() if a in ends and b in ends]
    assert sorted(flows.columns) == sorted(expected_links)
    for name in expected_links:
        a, b, g = links[name]
        np.testing.assert_allclose(flows[name].to_numpy(), g * (ends[a] - ends[b]),
                                   rtol=1e-14, atol=1e-12)
