"""The outdoor sections of a scenario: ``[site]``, ``[weather]`` and ``[surfaces.<name>]``.

``[site]`` places the scenario on the Earth and on a clock; ``[weather]`` reads a weather record
(:func:`rcsim.weather.read_weather`) onto that clock; ``[surfaces.<name>]`` adds exposed surfaces
(:func:`rcsim.surfaces.add_surface`) whose irradiance comes from the sun's geometry
(:func:`rcsim.solar.surface_irradiance`) and whose sky temperature from a sky model
(:func:`rcsim.sky.sky_temperature`) unless given; and any profile may be a column of the record,
``{ weather = "<quantity>" }``.

**The clock.** With a ``[site]`` time zone, ``simulation.start`` is a reading of the site's local
clock (or an instant, with a UTC offset), t = 0 of the run. Elapsed times of profiles (a sine's
peak, steps, tables, repeats) count exact seconds from it. Timestamped records (the weather
record, ``{ csv = ... }`` profiles) are placed by their instants: rows with UTC offsets are exact
instants, rows without are local clock readings of the site's zone with its daylight-saving
changes, and a local time the clock skips or shows twice is refused naming the row
(:mod:`rcsim.clock`).

This module sits beside the scenario reader: it gets the reader's profile builder as an argument
rather than importing it.
"""

from __future__ import annotations

import functools
import os
from dataclasses import dataclass, field
from typing import Any, Callable

import numpy as np

from .base import suggest
from .errors import ProfileError, ScenarioError
from .inputfiles import resolve_input
from .profiles import Repeat, Table
from .profiles.base import LEVEL_KIND
from .surfaces import degrees
from .units import to_si

__all__ = ["SITE_KEYS", "WEATHER_KEYS", "SCENARIO_SURFACE_KEYS", "Site", "Outdoors",
           "read_outdoors", "weather_profile", "csv_reader", "csv_profile", "add_surfaces", "RecordSeries",
           "plane_irradiance", "record_sky_temperature"]

SITE_KEYS = {"latitude", "longitude", "elevation", "time_zone", "albedo"}
WEATHER_KEYS = {"file", "columns", "time", "time_unit", "max_gap", "missing_values",
                "irradiance_period", "decomposition", "sky_model", "cloud_correction", "repeat"}
SCENARIO_SURFACE_KEYS = {"node", "area", "tilt", "azimuth", "absorptance", "emissivity",
                         "sky_view", "irradiance", "sky_temperature", "ground_temperature",
                         "film", "air", "shading", "linearise_radiation", "diffuse_model",
                         "albedo"}
_IRRADIANCE = {"global_horizontal": "ghi", "direct_normal": "dni", "diffuse_horizontal": "dhi"}


@dataclass(frozen=True)
class Site:
    """Where the scenario is: degrees (east positive), metres, ground reflectance."""

    latitude: float
    longitude: float
    elevation: float = 0.0
    albedo: float = 0.2


@dataclass
class Outdoors:
    """What the outdoor sections of one scenario hold.

    Attributes
    ----------
    site : Site or None
    zone : tzinfo or None
        The site's time zone.
    start : pandas.Timestamp or None
        The instant of t = 0 (naive without a zone).
    record : rcsim.weather.WeatherRecord or None
    weather : dict
        The ``[weather]`` options (models, repeat period [s]).
    sky_boundary : str or None
        The boundary at the record's sky temperature, once a surface has made it.
    """

    site: Site | None = None
    zone: Any = None
    start: Any = None
    record: Any = None
    weather: dict = field(default_factory=dict)
    sky_boundary: str | None = None

    @property
    def repeat(self) -> float | None:
        return self.weather.get("repeat")


def _table_of(value, where) -> dict:
    if not isinstance(value, dict):
        raise ScenarioError(f"expected a table, got {type(value).__name__} {value!r:.60}", where)
    return value


def _check_keys(spec: dict, allowed, where: str, required=()) -> None:
    for key in spec:
        if key not in allowed:
            raise ScenarioError(f"unknown key {key!r}", where, suggest(key, sorted(allowed)))
    for key in required:
        if key not in spec:
            raise ScenarioError(f"missing key {key!r}", where)


def _fraction(value, where) -> float:
    x = to_si(value, "dimensionless", where)
    if not 0.0 <= x <= 1.0:
        raise ScenarioError(f"must be between 0 and 1, got {value!r}", where)
    return float(x)


def _name(value, valid, what: str, where: str) -> str:
    if value not in valid:
        raise ScenarioError(f"unknown {what} {value!r}", where,
                            f"valid: {', '.join(valid)}")
    return value


# -- reading the sections ----------------------------------------------------------------------
def read_outdoors(data: dict, start, base_dir: str, allow_absolute: bool) -> Outdoors | None:
    """The ``[site]`` and ``[weather]`` sections of a parsed scenario (None without either).

    ``start`` is ``simulation.start`` as written (or None).
    """
    from .clock import parse_time_zone, to_instant

    if "site" not in data and "weather" not in data:
        return None
    out = Outdoors()
    if "site" in data:
        site = _table_of(data["site"], "site")
        _check_keys(site, SITE_KEYS, "site", ["latitude", "longitude"])
        out.site = Site(degrees(site["latitude"], "site.latitude", -90.0, 90.0),
                        degrees(site["longitude"], "site.longitude", -180.0, 180.0),
                        to_si(site.get("elevation", 0.0), "length", "site.elevation"),
                        _fraction(site.get("albedo", 0.2), "site.albedo"))
        out.zone = parse_time_zone(site.get("time_zone"), "site.time_zone")
    if start is not None:
        out.start = to_instant(str(start), out.zone, "simulation.start")
    if "weather" in data:
        out.weather, out.record = _read_weather(_table_of(data["weather"], "weather"), out,
                                                base_dir, allow_absolute)
    return out


def _read_weather(spec: dict, out: Outdoors, base_dir: str, allow_absolute: bool):
    from .sky import CLOUD_CORRECTIONS, SKY_MODELS
    from .solar import DECOMPOSITION_MODELS
    from .weather import read_weather

    _check_keys(spec, WEATHER_KEYS, "weather", ["file", "columns"])
    file = spec["file"]
    if not isinstance(file, str) or not file:
        raise ScenarioError("file must be a path", "weather.file")
    full = resolve_input(file, base_dir, allow_absolute, "weather.file")  # inside the folder
    if not isinstance(spec["columns"], dict):
        raise ScenarioError("columns maps quantities to columns, e.g. columns = { "
                            "air_temperature = \"T_air\" }", "weather.columns")
    for key in ("time", "time_unit", "irradiance_period"):
        if key in spec and not isinstance(spec[key], str):
            raise ScenarioError(f"{key} must be a string", f"weather.{key}")
    missing = spec.get("missing_values", [])
    if not isinstance(missing, list):
        raise ScenarioError("missing_values must be a list of numbers", "weather.missing_values")
    options = {
        "decomposition": _name(spec.get("decomposition", "erbs"), DECOMPOSITION_MODELS,
                               "decomposition model", "weather.decomposition"),
        "sky_model": _name(spec.get("sky_model", "berdahl_martin"), SKY_MODELS,
                           "sky temperature model", "weather.sky_model"),
        "cloud_correction": _name(spec.get("cloud_correction", "clark_allen"),
                                  CLOUD_CORRECTIONS, "cloud correction",
                                  "weather.cloud_correction"),
        "repeat": None,
        "file": os.path.basename(file),
    }
    if "repeat" in spec:
        options["repeat"] = to_si(spec["repeat"], "time", "weather.repeat")
        if not options["repeat"] > 0:
            raise ScenarioError("repeat must be a positive time", "weather.repeat")
    record = read_weather(full, spec["columns"], time=spec.get("time"),
                          time_unit=spec.get("time_unit"), time_zone=out.zone, start=out.start,
                          max_gap=spec.get("max_gap"), missing_values=missing,
                          irradiance_period=spec.get("irradiance_period", "instant"),
                          where=f"weather.file ({file})")
    return options, record


# -- profiles from the record ------------------------------------------------------------------
class RecordSeries(Table):
    """A column of a weather record as a profile (linear between rows), SI values.

    It drives what its quantity's kind drives (an air temperature a boundary); ``scale`` (a
    quantity with units) turns it into another kind (an irradiance times ``"2 m^2"`` a power).
    Binding it to anything else is refused.
    """

    def __init__(self, times, values, quantity: str, kind: str, scale=None, source=None):
        super().__init__(times, values, source=source)
        self.quantity, self.kind, self.scale = quantity, kind, scale

    def _bind(self, kind, where):
        target = LEVEL_KIND[kind]
        factor = self._factor(target, where)
        out = Table(self.times, self.values * factor, outside=self.outside, source=self.source)
        return out

    def _factor(self, target: str, where) -> float:
        from .units import registry, si_unit

        mine = "dimensionless" if self.kind == "fraction" else self.kind
        if self.scale is None:
            if mine != target:
                raise ProfileError(f"the weather quantity {self.quantity!r} is {_kind_text(mine)}, "
                                   f"but this input is {_kind_text(target)}", where,
                                   "map another column, or give a scale, e.g. { weather = { "
                                   "quantity = \"global_horizontal\", scale = \"2 m^2\" } }")
            return 1.0
        if mine == "temperature":
            raise ProfileError("a temperature cannot be scaled", where)
        ureg = registry()
        try:
            scale = ureg.Quantity(self.scale) if isinstance(self.scale, str) \
                else ureg.Quantity(float(self.scale))
            value = (ureg.Quantity(1.0, si_unit(mine)) * scale).to(si_unit(target))
        except Exception:  # noqa: BLE001 - pint raises many kinds
            raise ProfileError(f"scale {self.scale!r} does not turn {_kind_text(mine)} into "
                               f"{_kind_text(target)}", where) from None
        return float(value.magnitude)

    def _ready(self) -> bool:
        return True


def _kind_text(kind: str) -> str:
    from .units import KINDS

    return KINDS[kind][1] if kind in KINDS else kind


def _record_profile(outdoors: Outdoors, times, values, quantity: str, kind: str, scale=None):
    """A profile of record values (repeated with ``[weather] repeat`` when given)."""
    source = f"{outdoors.weather.get('file', outdoors.record.source)}:{quantity}"
    period = outdoors.repeat
    if period is None:
        return RecordSeries(times, values, quantity, kind, scale, source)
    t, v = _one_period(np.asarray(times, float), np.asarray(values, float), period,
                       outdoors.record.step, source)
    return Repeat(RecordSeries(t, v, quantity, kind, scale, source), period)


def _one_period(times, values, period, step, where):
    """Points covering [0, period] of a record repeated with ``period``: its rows in that span,
    and the values at 0 and at ``period`` (the same instant of the cycle) interpolated across
    the wrap, from the last row to the first a period later."""
    keep = (times >= 0.0) & (times <= period)
    t, v = times[keep], values[keep]
    if t.size < 2:
        raise ProfileError(f"the record has fewer than two rows within one repeat period "
                           f"({period:g} s) from the start", where)
    if t[0] > 0.0 or t[-1] < period:
        gap = t[0] + period - t[-1]
        if gap > 2.0 * step * (1.0 + 1e-6):
            raise ProfileError(f"the record does not cover one repeat period: {gap / 3600:g} h "
                               "lie between its last row and its first a period later", where,
                               "give a repeat period the record covers")
        wrap = v[-1] + (v[0] - v[-1]) * (period - t[-1]) / gap
        if t[0] > 0.0:
            t, v = np.concatenate([[0.0], t]), np.concatenate([[wrap], v])
        if t[-1] < period:
            t, v = np.concatenate([t, [period]]), np.concatenate([v, [wrap]])
    return t, v


def weather_profile(body, where: str, outdoors: Outdoors | None):
    """``{ weather = "<quantity>" }`` or ``{ weather = { quantity = ..., scale = ... } }``."""
    if outdoors is None or outdoors.record is None:
        raise ScenarioError("a weather profile needs a [weather] record", where,
                            "add [weather] with file and columns")
    if isinstance(body, dict):
        _check_keys(body, {"quantity", "scale"}, where, ["quantity"])
        quantity, scale = body["quantity"], body.get("scale")
        if scale is not None and not isinstance(scale, (str, int, float)):
            raise ScenarioError("scale is a quantity with units, e.g. \"2 m^2\"", f"{where}.scale")
    else:
        quantity, scale = body, None
    record = outdoors.record
    if not isinstance(quantity, str) or quantity not in record:
        raise ScenarioError(f"the weather record has no quantity {quantity!r}", where,
                            suggest(str(quantity), record.quantities) + " (map a column to it "
                            "in [weather] columns)")
    times, values = record.series(quantity)
    return _record_profile(outdoors, times, values, quantity, record.kinds[quantity], scale)


def csv_reader(outdoors: Outdoors | None):
    """What reads a ``{ csv = ... }`` profile: :meth:`Table.from_csv`, or :func:`csv_profile`
    on the site's clock when the scenario has a time zone."""
    if outdoors is None or outdoors.zone is None:
        return Table.from_csv
    return functools.partial(csv_profile, outdoors=outdoors)


def csv_profile(path: str, column: str, time=None, start=None, unit=None, time_unit=None,
                missing="error", outside="error", where=None, *, outdoors: Outdoors) -> Table:
    """A ``{ csv = ... }`` profile placed on the site's clock: timestamps by the rule of
    :mod:`rcsim.clock` (offsets exact, local readings in the site's zone), counted from the
    start instant (``outdoors.start``; ``start`` as written is not used)."""
    from .clock import parse_timestamps
    from .profiles.timeseries import read_series

    read = read_series(path, [column], time=time, start=None, time_unit=time_unit,
                       missing=missing, where=where)
    frame = read.frame
    times = frame.index.to_numpy(dtype=float)
    if frame.attrs.get("is_datetime"):   # the time column's text, as read: placed on the site's clock
        tcol = time if time is not None else read.time_column
        stamps = parse_timestamps(read.time_text.str.strip(), outdoors.zone, where, tcol)
        origin = outdoors.start if outdoors.start is not None else stamps[0]
        times = (stamps - origin).total_seconds().to_numpy(dtype=float)
    return Table.from_columns(path, column, times, frame[column].to_numpy(dtype=float),
                              unit=unit, missing=missing, outside=outside, where=where,
                              header=frame.attrs["headers"][column])


# -- sun and sky from the record ---------------------------------------------------------------
def plane_irradiance(outdoors: Outdoors, tilt: float, azimuth: float, *, model="perez",
                     albedo=None, where="irradiance"):
    """Irradiance on a plane [W/m^2] from the record's components and the sun's geometry, as a
    profile (:func:`rcsim.solar.surface_irradiance`: sun position, missing components,
    transposition by ``model``, ground reflection)."""
    from .solar import surface_irradiance

    record, site = outdoors.record, outdoors.site
    given = [q for q in _IRRADIANCE if record is not None and q in record]
    if site is None or not given:
        raise ScenarioError("no irradiance: the sun's geometry needs [site] and a [weather] "
                            "record with global_horizontal (or two irradiance components)",
                            where, "give irradiance = <profile> (W/m^2 on the surface)")
    times = record.times_of(given[0])
    if times is None or getattr(times, "tz", None) is None:
        raise ScenarioError("the sun's geometry needs the record's rows as instants", where,
                            "give [site] time_zone (and timestamps in the record, or "
                            "simulation.start)")
    components = {_IRRADIANCE[q]: record.values[q] for q in given}
    frame = surface_irradiance(times, site.latitude, site.longitude, tilt, azimuth,
                               elevation=site.elevation, model=model,
                               albedo=site.albedo if albedo is None else albedo,
                               decomposition=outdoors.weather["decomposition"], **components)
    seconds = record.series(given[0])[0]
    return _record_profile(outdoors, seconds, frame["total"].to_numpy(), "irradiance on the "
                           "plane", "heat_flux")


def record_sky_temperature(outdoors: Outdoors, where="sky_temperature"):
    """Effective sky temperature [degC] from the record (air temperature, dew point or
    relative humidity, sky cover where mapped) by the ``[weather]`` sky model, as a profile."""
    from .sky import SKY_MODELS, dew_point_from_humidity, sky_temperature

    record = outdoors.record
    if record is None or "air_temperature" not in record:
        raise ScenarioError("no sky temperature: the sky model needs a [weather] record with "
                            "air_temperature", where, "give sky_temperature = <profile>")
    model = outdoors.weather["sky_model"]
    air = record.values["air_temperature"]
    dew = record.values.get("dew_point")
    if dew is None and "relative_humidity" in record:
        dew = dew_point_from_humidity(air, record.values["relative_humidity"])
    if SKY_MODELS[model][0] and dew is None:
        raise ScenarioError(f"the {model} sky model needs the dew point", "weather.sky_model",
                            "map dew_point or relative_humidity, or choose sky_model = "
                            "\"swinbank\"")
    cover = record.values.get("sky_cover")
    values = sky_temperature(air, model=model, dew_point=dew, sky_cover=cover,
                             cloud=outdoors.weather["cloud_correction"])
    times = record.series("air_temperature")[0]
    return _record_profile(outdoors, times, values, "sky temperature", "temperature")


# -- surfaces --------------------------------------------------------------------------------
def add_surfaces(network, table, outdoors: Outdoors | None,
                 profile_of: Callable[[Any, str], Any]) -> None:
    """Add every ``[surfaces.<name>]`` to ``network``; ``profile_of(spec, where)`` is the
    scenario reader's profile builder."""
    from .solar import SKY_MODELS as DIFFUSE_MODELS

    if table is None:
        return
    outdoors = outdoors or Outdoors()
    for name, spec in _table_of(table, "surfaces").items():
        w = f"surfaces.{name}"
        spec = _table_of(spec, w)
        _check_keys(spec, SCENARIO_SURFACE_KEYS, w, ["node", "area", "absorptance",
                                                     "emissivity", "air", "film"])
        if "tilt" not in spec and "sky_view" not in spec:
            raise ScenarioError("missing key 'tilt' (or 'sky_view')", w)
        kwargs = {key: spec[key] for key in ("area", "absorptance", "emissivity", "tilt",
                                             "sky_view", "linearise_radiation") if key in spec}
        for key in ("irradiance", "sky_temperature", "shading", "ground_temperature"):
            if key in spec:
                kwargs[key] = profile_of(spec[key], f"{w}.{key}")
        if "irradiance" not in spec:
            if "tilt" not in spec:
                raise ScenarioError("missing key 'tilt': the sun's geometry needs it", w,
                                    "give tilt (and azimuth), or irradiance = <profile>")
            tilt = degrees(spec["tilt"], f"{w}.tilt", 0.0, 180.0)
            azimuth = degrees(spec.get("azimuth", 180.0), f"{w}.azimuth", 0.0, 360.0)
            if "azimuth" not in spec and tilt > 0:
                raise ScenarioError("missing key 'azimuth' (degrees from north, clockwise)", w)
            model = _name(spec.get("diffuse_model", "perez"), DIFFUSE_MODELS,
                          "diffuse sky model", f"{w}.diffuse_model")
            albedo = _fraction(spec["albedo"], f"{w}.albedo") if "albedo" in spec else None
            kwargs["irradiance"] = plane_irradiance(outdoors, tilt, azimuth, model=model,
                                                    albedo=albedo, where=f"{w}.irradiance")
        if "sky_temperature" not in spec and _sees_sky(spec, w):
            kwargs["sky"] = _shared_sky(network, outdoors, f"{w}.sky_temperature")
        kwargs["film"] = _film_spec(spec["film"], f"{w}.film", outdoors, profile_of)
        if not isinstance(spec["node"], str) or not isinstance(spec["air"], str):
            raise ScenarioError("node and air are names (of a node and of a boundary)", w)
        network.add_surface(name, spec["node"], air=spec["air"], where=w, **kwargs)


def _shared_sky(network, outdoors: Outdoors, where: str) -> str:
    """The one boundary at the record's sky temperature that surfaces share: ``sky`` (or
    ``weather:sky`` when the scenario has a point named ``sky`` of its own)."""
    if outdoors.sky_boundary is None:
        name = "sky" if "sky" not in network.boundaries and "sky" not in network.nodes \
            else "weather:sky"
        network.add_boundary(name, record_sky_temperature(outdoors, where), where=where)
        outdoors.sky_boundary = name
    return outdoors.sky_boundary


def _sees_sky(spec, where) -> bool:
    from .exposure import sky_view_of_tilt

    emissivity = to_si(spec["emissivity"], "dimensionless", f"{where}.emissivity")
    view = spec.get("sky_view")
    if view is None:
        view = sky_view_of_tilt(degrees(spec["tilt"], f"{where}.tilt", 0.0, 180.0))
    return emissivity > 0 and to_si(view, "dimensionless", f"{where}.sky_view") > 0


def _film_spec(film, where: str, outdoors: Outdoors, profile_of) -> dict:
    """The film of a surface for :func:`rcsim.surfaces.add_surface`: ``wind = true`` takes the
    record's wind speed, ``wind = <profile>`` a profile of its own."""
    if not isinstance(film, dict):
        raise ScenarioError("film is { h = \"...\" } or { wind = true }", where)
    out = dict(film)
    if "wind" in film:
        wind = film["wind"]
        if wind is True:
            record = outdoors.record
            if record is None or "wind_speed" not in record:
                raise ScenarioError("wind = true needs a [weather] record with wind_speed",
                                    f"{where}.wind", "map a column to wind_speed, or give "
                                    "h = \"...\"")
            times, values = record.series("wind_speed")
            out["wind"] = _record_profile(outdoors, times, values, "wind_speed", "velocity")
        elif wind is False:
            raise ScenarioError("wind = false: give h = \"...\" for a fixed film", f"{where}.wind")
        else:
            out["wind"] = profile_of(wind, f"{where}.wind")
    if "model" in film and not isinstance(film["model"], str):
        raise ScenarioError("model must be a name", f"{where}.model")
    return out
