"""Results of a run: histories as pandas, energy balance, limit excursions; HDF5 write and read.

File layout (HDF5)::

    /time                   [s]
    /temperature            time x node [degC]
    /temperature_names      the node names (UTF-8 strings), one per column
    /heat_flow              time x link [W] (positive from first to second point)
    /heat_flow_names        the link names
    /boundary_temperature   time x boundary [degC]  (and /boundary_temperature_names)
    /source_power           time x source [W]       (and /source_power_names)
    /energy/stored          time [J], change of stored energy since t = 0
    /energy/links           time x boundary link [J], heat that entered the nodes through it
                            (and /energy/links_names)
    /energy/sources         time x source [J]   (and /energy/sources_names)
    /liquid_fraction        time x phase-change node [-] (when there are any)
    /sol_air                time x exposed surface [degC] (when there are any; root attr
                            surfaces: JSON {surface: node})
    /limits/<column>        one dataset per column of the limit table
    /nodes/<column>         per-node min, max, final
    root attrs: rcsim_version, scenario (source text), solver, energy_balance (the relative
                closure error), caution (what a simulation is and is not), created,
                stats (JSON: the run's statistics, see rcsim.runinfo.RunInfo), ...

Every 2-D series has its column names in a dataset ``<series>_names`` (any number and length of
names) and, while they fit in 32 KiB, also in the series' attribute ``names`` (the only place
files written before the datasets existed have them; an HDF5 attribute is limited to 64 KiB, too
small for the names of a 100,000-node run). Readers take the dataset when there is one, else the
attribute.

A file is written to a temporary name in the same folder and renamed when complete, so a crash
never leaves a half-written file under the requested name. Long runs stream their chunks to the
file as they come (:class:`H5Sink`), so memory stays bounded.
"""

from __future__ import annotations

import datetime as _dt
import json
import os

import numpy as np
import pandas as pd

from .base import package_version, suggest
from .caution import CAUTION
from .errors import DataError
# the recording machinery lives in rcsim.recording; re-exported for older imports
from .recording import (Chunk, H5Sink, MemorySink, Recorder, read_frame, read_names,  # noqa: F401
                        write_frame)
from .runinfo import RunInfo

__all__ = ["Result", "Recorder", "MemorySink", "H5Sink", "Chunk", "h5_attributes"]

_SERIES = ["temperature", "heat_flow", "boundary_temperature", "source_power",
           "energy/stored", "energy/links", "energy/sources", "liquid_fraction",
           "thermostat_power", "sol_air"]

#: metadata kept as JSON text in a result file and as Python objects in memory
_JSON_META = ("stats", "energy_terms", "time_constants", "surfaces", "warnings")


# -- the result ------------------------------------------------------------------------------
class Result:
    """Histories and summaries of one run.

    Attributes
    ----------
    temperatures : DataFrame
        index time [s], one column per recorded node [degC].
    heat_flows : DataFrame
        one column per recorded link [W], positive from first to second point, measured at the
        link's first end.
    boundary_temperatures, source_powers : DataFrame
    energy : DataFrame
        cumulative energy [J]: ``stored`` (change since t = 0), one ``link:<name>`` column per link
        touching a boundary (heat that entered the nodes through it), one ``source:<name>`` column
        per source.
    energy_balance_error : float
        Relative closure error of stored vs. exchanged energy (``energy_balance``: its former
        name, kept).
    limits : DataFrame
        One row per limit: hold time, time out, worst excursion, degree-hours, margin.
    nodes : DataFrame
        min, max and final temperature of every tracked node.
    thermostats : DataFrame
        per thermostat: duty (fraction of the time on; mean power over full power for
        proportional control), on_time [s], switches, energy [J].
    liquid_fraction, thermostat_power : DataFrame
        histories of phase-change nodes [-] and thermostat powers [W, into the node].
    sol_air : DataFrame
        sol-air temperature of each exposed surface [degC]; ``surfaces`` maps each to its node.
    solver : str
    warnings : list of str
        What the run warned about (also raised as warnings while it ran).
    run_info : rcsim.runinfo.RunInfo
        How the run was made: the path, why others declined, counts, wall time [s].
    stats : dict
        The same as a plain dict (``meta["stats"]``; steps, evaluations, ``wall_time`` [s],
        ``piecewise_declined`` when that path declined, ...).
    """

    def __init__(self, arrays: dict | None = None, names: dict | None = None, meta: dict | None = None,
                 limits: pd.DataFrame | None = None, nodes: pd.DataFrame | None = None,
                 path: str | None = None, thermostats: pd.DataFrame | None = None,
                 run_info: RunInfo | None = None):
        self._arrays = arrays if arrays is not None else {}
        self._names = names or {}
        self.meta = dict(meta or {})
        for key in _JSON_META:          # a loaded file holds these as JSON text
            if isinstance(self.meta.get(key), str):
                self.meta[key] = _from_json(self.meta[key], [] if key in ("time_constants", "warnings")
                                            else {})
        if run_info is not None:
            self.meta["stats"] = run_info.as_dict()
        elif "stats" in self.meta:
            self.meta["stats"] = dict(self.meta["stats"])
        self._run_info = run_info
        self.limits = limits if limits is not None else pd.DataFrame()
        self.nodes = nodes if nodes is not None else pd.DataFrame()
        self.thermostats = thermostats if thermostats is not None else pd.DataFrame()
        self.path = path

    # -- metadata ----------------------------------------------------------------------------
    @property
    def solver(self) -> str:
        return str(self.meta.get("solver", ""))

    @property
    def warnings(self) -> list[str]:
        """What the run warned about, each text once, in order (rcsim's warnings raised while
        it was made: nodes with no path to a boundary, a freezing point passed without latent
        heat, a correlation outside its range, ...); kept in a result file too."""
        return [str(w) for w in self.meta.get("warnings", [])]

    @property
    def energy_balance_error(self) -> float:
        """Relative closure error of the energy balance [-]: |change of stored energy - energy
        in through boundary links and from sources| over the sum of the magnitudes of those
        terms (at least the energy that moves every capacity by 1 K); 0 is a perfect balance."""
        return float(self.meta.get("energy_balance", np.nan))

    @property
    def energy_balance(self) -> float:
        """The former name of :attr:`energy_balance_error` (the same number), kept for older
        code; it is an error, not a balance."""
        return self.energy_balance_error

    @property
    def stats(self) -> dict:
        """The run's statistics as a plain dict (see :attr:`run_info` for the typed form)."""
        return dict(self.meta.get("stats", {}))

    @property
    def run_info(self) -> RunInfo:
        """How the run was made (path, declined paths, counts, wall time [s])."""
        if self._run_info is None:
            self._run_info = RunInfo.from_dict(self.meta.get("stats", {}), self.solver)
        return self._run_info

    @property
    def time_constants(self) -> np.ndarray:
        """Time constants [s] of the network's linear part, longest first (empty if unknown)."""
        return np.asarray(self.meta.get("time_constants", []), dtype=float)

    @property
    def scenario(self) -> str:
        return str(self.meta.get("scenario", ""))

    @property
    def start_time(self):
        s = self.meta.get("start_time", "")
        return pd.Timestamp(s) if s else None

    # -- histories ---------------------------------------------------------------------------
    def _array(self, key: str) -> np.ndarray:
        if key not in self._arrays and self.path is not None:
            from .profiles import check_fits_in_memory
            from .resultfile import open_result, reading

            label = os.path.basename(self.path)
            # the file was checked through at load (links, shapes, memory for all of it); the
            # memory left now is checked again for this history
            with open_result(self.path) as h5, reading(label):
                if key in h5:
                    ds = h5[key]
                    check_fits_in_memory(ds.size * ds.dtype.itemsize * 2, f"{label}: /{key}",
                                         "loading this history")
                    self._arrays[key] = np.asarray(ds[()], dtype=float)
        return self._arrays.get(key, np.empty((0, 0)))

    def _frame(self, key: str) -> pd.DataFrame:
        # the history wrapped once without copying it (a run's column-major arrays are pandas'
        # own layout); each caller gets a shallow copy, which pandas copies on its first write,
        # so the Result's history never changes
        frames = self.__dict__.setdefault("_frames", {})
        frame = frames.get(key)
        if frame is None:
            data = self._array(key)
            names = self._names.get(key, [])
            t = self._array("time")
            if data.size == 0 and not names:
                return pd.DataFrame(index=pd.Index(t, name="time [s]"))
            frame = frames[key] = pd.DataFrame(data, index=pd.Index(t, name="time [s]"),
                                               columns=names, copy=False)
        return frame.copy(deep=False)

    @property
    def time(self) -> np.ndarray:
        return self._array("time")

    @property
    def temperatures(self) -> pd.DataFrame:
        return self._frame("temperature")

    @property
    def heat_flows(self) -> pd.DataFrame:
        return self._frame("heat_flow")

    @property
    def boundary_temperatures(self) -> pd.DataFrame:
        return self._frame("boundary_temperature")

    @property
    def source_powers(self) -> pd.DataFrame:
        return self._frame("source_power")

    @property
    def liquid_fraction(self) -> pd.DataFrame:
        return self._frame("liquid_fraction")

    @property
    def thermostat_power(self) -> pd.DataFrame:
        return self._frame("thermostat_power")

    @property
    def sol_air(self) -> pd.DataFrame:
        """Sol-air temperature [degC] of each exposed surface (one column per surface; empty
        without any): the air temperature that would give the same heat flow into the surface
        without sun and with the sky at air temperature (see :mod:`rcsim.surfaces`)."""
        return self._frame("sol_air")

    @property
    def surfaces(self) -> dict:
        """{exposed surface: its node} of the network that made the run."""
        return dict(self.meta.get("surfaces") or {})

    @property
    def energy(self) -> pd.DataFrame:
        t = self._array("time")
        cols = {"stored": self._array("energy/stored")}
        for j, nm in enumerate(self._names.get("energy/links", [])):
            cols[f"link:{nm}"] = self._array("energy/links")[:, j]
        for j, nm in enumerate(self._names.get("energy/sources", [])):
            cols[f"source:{nm}"] = self._array("energy/sources")[:, j]
        return pd.DataFrame(cols, index=pd.Index(t, name="time [s]"))

    # -- output ------------------------------------------------------------------------------
    def save(self, path) -> None:
        """Write to HDF5 (atomically: a temporary file renamed when complete)."""
        import h5py  # noqa: F401 - imported by H5Sink

        sink = H5Sink(path)
        sink.reserve(self._array("time").size)
        try:
            for key in ["time"] + _SERIES:
                arr = self._array(key)
                if key != "time" and key not in self._names and arr.size == 0:
                    continue
                sink.declare(key, self._names.get(key, []))
                if arr.size:
                    sink.append(key, arr)
            sink.write_table("limits", self.limits)
            sink.write_table("nodes", self.nodes)
            if len(self.thermostats):
                sink.write_table("thermostats", self.thermostats)
            sink.finish(h5_attributes(self.meta))
        except BaseException:
            sink.abort()
            raise

    @classmethod
    def load(cls, path) -> "Result":
        """Read a result file written by :meth:`save` or by a streamed run.

        Histories are read lazily, on first access.
        """
        from .resultfile import inspect_result, open_result, reading

        path = os.fspath(path)
        label = os.path.basename(path) or path
        with open_result(path) as h5:          # a regular file that HDF5 opens
            inspect_result(h5, label)          # links, shapes, types, memory: all checked first
            with reading(label):
                names = {}
                for key in _SERIES:
                    found = read_names(h5, key) if key in h5 else None
                    if found is not None:
                        names[key] = found
                meta = {k: (v.decode() if isinstance(v, bytes) else v)
                        for k, v in h5.attrs.items()}
                meta = {k: (v.item() if hasattr(v, "item") and np.ndim(v) == 0 else v)
                        for k, v in meta.items()}
                limits = read_frame(h5, "limits")
                nodes = read_frame(h5, "nodes")
                thermostats = read_frame(h5, "thermostats")
        return cls({}, names, meta, limits, nodes, path=path, thermostats=thermostats)

    def to_csv(self, path) -> None:
        """Write temperatures, boundary temperatures, source powers and heat flows to one CSV.

        Columns are prefixed ``T:``, ``boundary:``, ``source:`` and ``flow:``; written atomically.
        """
        frames = [self.temperatures.add_prefix("T:"),
                  self.boundary_temperatures.add_prefix("boundary:"),
                  self.source_powers.add_prefix("source:"),
                  self.heat_flows.add_prefix("flow:")]
        table = pd.concat(frames, axis=1)
        from .atomic import atomic_path

        with atomic_path(path, ".csv.tmp") as tmp:
            table.to_csv(tmp, float_format="%.10g")

    @property
    def period(self) -> float | None:
        """Period of the inputs [s] when the run started in its periodic regime, else None."""
        p = self.meta.get("period")
        return float(p) if p not in (None, "", 0, 0.0) else None

    def periodic_response(self, reference: str | None = None, period=None) -> pd.DataFrame:
        """Mean, range, amplitude, time of peak, lag and amplitude ratio of every node over one
        period.

        Uses the last full period of the run (``period`` [s]; default the inputs' period stored
        with a run that started periodic). The amplitude and phase are those of the first
        harmonic (the discrete Fourier coefficient at 2 pi / period over one period of samples),
        so the lag of a node behind the reference boundary is the phase difference over omega,
        and the amplitude ratio is the ratio of their amplitudes. ``reference`` defaults to the
        boundary with the largest first harmonic.

        Columns: ``mean [degC]``, ``range [K]`` (max - min over the period), ``amplitude [K]``,
        ``peak [s]`` (time of the maximum within the period, from its start), ``lag [s]``,
        ``amplitude ratio [-]`` (the node's first-harmonic amplitude over the reference's: a
        property of the whole network with its gains, not a wall's decrement factor in the
        sense of ISO 13786). The former names ``swing [K]`` and ``decrement [-]`` follow as
        columns with the same values, for code written before.
        """
        from .units import to_si

        P = self.period if period is None else to_si(period, "time", "period")
        if P is None:
            raise DataError("the run did not start periodic, so give the period", "period")
        t = self.time
        step = float(np.median(np.diff(t))) if t.size > 1 else 0.0
        n = int(round(P / step)) if step > 0 else 0
        if n < 4 or t.size < n + 1 or abs(n * step - P) > 1e-6 * P:
            raise DataError(f"the run needs at least one period ({P:g} s) of evenly spaced "
                            f"samples whose step divides it", "period")
        sel = slice(t.size - 1 - n, t.size - 1)          # the last full period, end excluded
        tt = t[sel]
        omega = 2 * np.pi / P
        basis = np.exp(-1j * omega * tt)
        frames = {**{c: self.temperatures[c].to_numpy()[sel] for c in self.temperatures.columns}}
        bounds = {c: self.boundary_temperatures[c].to_numpy()[sel]
                  for c in self.boundary_temperatures.columns}

        def harmonic(x):
            return 2.0 / n * np.sum(x * basis)

        bh = {c: harmonic(v) for c, v in bounds.items()}
        if reference is None:
            if not bh:
                raise DataError("no boundary to compare with", "reference")
            reference = max(bh, key=lambda c: abs(bh[c]))
        if reference not in bh:
            raise DataError(f"unknown boundary {reference!r}", "reference", suggest(reference, bh))
        ref = bh[reference]
        rows = []
        for name, x in list(frames.items()) + [(f"{c} (boundary)", v) for c, v in bounds.items()]:
            h = harmonic(x)
            lag = ((np.angle(ref) - np.angle(h)) / omega) % P if abs(ref) > 0 and abs(h) > 0 \
                else np.nan
            spread = float(np.max(x) - np.min(x))
            ratio = float(abs(h) / abs(ref)) if abs(ref) > 0 else np.nan
            rows.append({"node": name, "mean [degC]": float(np.mean(x)),
                         "range [K]": spread,
                         "amplitude [K]": float(abs(h)),
                         "peak [s]": float((tt[int(np.argmax(x))] - tt[0]) % P),
                         "lag [s]": float(lag),
                         "amplitude ratio [-]": ratio,
                         "swing [K]": spread, "decrement [-]": ratio})   # former names
        out = pd.DataFrame(rows).set_index("node")
        out.attrs["reference"] = reference
        out.attrs["period"] = P
        return out

    def plot(self, kind: str = "history", **kwargs):
        """Draw the result (see :mod:`rcsim.plotting`); returns what was drawn."""
        from . import plotting  # plotting sits above results; thin hand-off

        return plotting.plot_result(self, kind=kind, **kwargs)

    def report(self, path=None, *, scenario=None, **options):
        """A self-contained HTML report of the run (see :mod:`rcsim.report`): written to ``path``
        (.html; the path is returned), or its text when ``path`` is None.

        ``scenario``: the Scenario (or Network) that gave this result, needed for its inputs and
        its picture; ``options`` go to :func:`rcsim.report.build_run_report` (``warnings``,
        ``figures``, ``expand_layers``, ``title``).
        """
        from .report.dispatch import report_page  # the report sits above results; thin hand-off

        return report_page(self, path, scenario, **options)

    def summary(self) -> str:
        """Plain-text summary of the run."""
        lines = []
        lines.append(f"solver {self.solver}, {len(self.time)} samples, energy balance "
                     f"error {self.energy_balance_error:.2e}")
        return "\n".join(lines)


def _from_json(text: str, empty):
    """The object a JSON text of a result file holds (``empty`` for no text or bad text)."""
    try:
        value = json.loads(text) if text else empty
    except json.JSONDecodeError:
        return empty
    return value if isinstance(value, type(empty)) else empty


def h5_attributes(meta: dict) -> dict:
    """Root attributes of a result file from a result's metadata: dicts and lists as JSON text,
    None as an empty string, with ``rcsim_version`` and ``created`` added when missing."""
    out = {}
    for k, v in meta.items():
        if isinstance(v, (dict, list)):
            v = json.dumps(v)
        if v is None:
            v = ""
        out[k] = v
    out.setdefault("rcsim_version", package_version())
    out.setdefault("caution", CAUTION)
    out.setdefault("created", _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"))
    return out


_h5_attrs = h5_attributes   # older name
