"""The sun: its position, and irradiance on a tilted surface.

SI in and out: irradiance in W/m^2, angles in degrees, times as timezone-aware timestamps.
Azimuths (of the sun and of a surface) are measured from north, clockwise (east = 90 degrees);
a surface's tilt is its angle from horizontal (0 = facing up, 90 = a wall, 180 = facing down) and
its azimuth the direction its outward normal points to.

The geometry and the sky models are those of the pvlib library (imported only when a function
here is called; it is the optional extra ``rcsim[outdoors]``):

* sun position: the NREL solar position algorithm (Reda & Andreas 2004, Solar Energy 76(5),
  577-589), topocentric, with atmospheric refraction;
* sky models (:data:`SKY_MODELS`): isotropic (Liu & Jordan 1963; Duffie & Beckman, Solar
  Engineering of Thermal Processes, eq. 2.15.1), Hay-Davies (Hay & Davies 1980; Duffie & Beckman
  eq. 2.16.4), Perez (Perez et al. 1990, Solar Energy 44(5), 271-289), Klucher (1979), Reindl
  (Reindl et al. 1990);
* ground reflection: isotropic, ``albedo * GHI * (1 - cos tilt) / 2``;
* splitting global horizontal irradiance (:data:`DECOMPOSITION_MODELS`): Erbs, Klein & Duffie
  (1982, Solar Energy 28(4), 293-302; Duffie & Beckman eq. 2.10.1) and Boland, Ridley & Brown
  (2008, Renewable Energy 33(4), 575-584).
"""

from __future__ import annotations

import math

import numpy as np

from .arguments import check_name
from .errors import InputError

__all__ = ["SKY_MODELS", "DECOMPOSITION_MODELS", "solar_position", "decompose_global",
           "complete_components", "tilted_irradiance", "surface_irradiance",
           "extraterrestrial_normal"]

#: sky diffuse models by rcsim name -> (pvlib name, description)
SKY_MODELS = {
    "isotropic": ("isotropic", "uniform sky (Liu & Jordan 1963)"),
    "hay_davies": ("haydavies", "circumsolar + isotropic (Hay & Davies 1980)"),
    "perez": ("perez", "circumsolar + horizon brightening (Perez et al. 1990)"),
    "klucher": ("klucher", "isotropic with clear-sky brightening (Klucher 1979)"),
    "reindl": ("reindl", "Hay-Davies with horizon brightening (Reindl et al. 1990)"),
}
#: decomposition models by rcsim name -> description
DECOMPOSITION_MODELS = {
    "erbs": "diffuse fraction from the clearness index (Erbs, Klein & Duffie 1982)",
    "boland": "logistic diffuse fraction (Boland, Ridley & Brown 2008)",
}
_NEEDS_EXTRATERRESTRIAL = {"hay_davies", "perez", "reindl"}
_PVLIB_HINT = "pip install 'rcsim[outdoors]' (it installs pvlib)"


def _pvlib():
    try:
        # heavy (1-3 s with its dependencies): imported only when the sun is needed
        import pvlib.atmosphere
        import pvlib.irradiance
        import pvlib.solarposition
    except ImportError:
        raise InputError("sun geometry needs the pvlib package, which is not installed", None,
                         _PVLIB_HINT) from None
    return pvlib


def _times(times, where="times"):
    """A timezone-aware DatetimeIndex, or an InputError for naive or unreadable times."""
    import pandas as pd

    try:
        index = pd.DatetimeIndex(times if not isinstance(times, (str, pd.Timestamp))
                                 else [times])
    except (TypeError, ValueError) as exc:
        raise InputError(f"cannot read the times: {exc}", where) from None
    if index.tz is None:
        raise InputError("times have no time zone: the sun cannot be placed on them", where,
                         "localize them, e.g. times.tz_localize('Europe/Zurich'), or give "
                         "offsets such as 2021-07-01T12:00+02:00")
    return index


def _angle(value, low, high, name) -> float:
    value = float(value)
    if not (math.isfinite(value) and low <= value <= high):
        raise InputError(f"{name} must be between {low:g} and {high:g} degrees, got {value!r}",
                         name)
    return value


def solar_position(times, latitude, longitude, elevation=0, *, pressure=None, temperature=12.0,
                   delta_t=None):
    """Where the sun is, seen from a site: zenith and azimuth in degrees.

    The NREL solar position algorithm (Reda & Andreas 2004; stated uncertainty +-0.0003 degrees
    for years -2000 to 6000), topocentric, with the atmospheric refraction of the algorithm.

    Parameters
    ----------
    times : DatetimeIndex, sequence of timestamps or one timestamp
        Timezone-aware instants (naive times are refused).
    latitude, longitude : float
        Site [degrees], north and east positive.
    elevation : float
        Site height above sea level [m].
    pressure : float, optional
        Air pressure for refraction [Pa]; default from elevation by the standard atmosphere.
    temperature : float
        Air temperature for refraction [degC] (default 12, the algorithm's own).
    delta_t : float, optional
        TT - UT1 [s]; default estimated from the year.

    Returns
    -------
    pandas.DataFrame
        Indexed by ``times``: ``zenith`` (apparent, refraction included; the algorithm's
        topocentric zenith angle), ``azimuth`` (from north, clockwise) and
        ``geometric_zenith`` (without refraction), all in degrees.

    Raises
    ------
    InputError
        Naive times, latitude or longitude out of range, pvlib missing.
    """
    import pandas as pd

    index = _times(times)
    latitude = _angle(latitude, -90.0, 90.0, "latitude")
    longitude = _angle(longitude, -180.0, 180.0, "longitude")
    elevation = float(elevation)
    if not (math.isfinite(elevation) and -500.0 <= elevation <= 9000.0):
        raise InputError(f"elevation must be between -500 and 9000 m, got {elevation!r}",
                         "elevation")
    pvlib = _pvlib()
    if pressure is None:
        pressure = pvlib.atmosphere.alt2pres(elevation)
    position = pvlib.solarposition.spa_python(index, latitude, longitude, altitude=elevation,
                                              pressure=float(pressure),
                                              temperature=float(temperature), delta_t=delta_t)
    return pd.DataFrame({"zenith": position["apparent_zenith"].to_numpy(dtype=float),
                         "azimuth": position["azimuth"].to_numpy(dtype=float),
                         "geometric_zenith": position["zenith"].to_numpy(dtype=float)},
                        index=index)


def extraterrestrial_normal(times) -> np.ndarray:
    """Irradiance outside the atmosphere on a plane facing the sun [W/m^2].

    Solar constant 1366.1 W/m^2 times Spencer's (1971) Fourier series of the Earth-Sun distance
    (Duffie & Beckman eq. 1.4.1b).
    """
    index = _times(times)
    pvlib = _pvlib()
    return np.asarray(pvlib.irradiance.get_extra_radiation(_day_of_year(index), method="spencer"),
                      dtype=float)


def _day_of_year(index) -> np.ndarray:
    """Day of the year (1..366) of each instant, counted in UTC."""
    return np.asarray(index.tz_convert("UTC").day_of_year, dtype=float)


def decompose_global(ghi, zenith, times, model: str = "erbs"):
    """Split global horizontal irradiance into direct normal and diffuse horizontal.

    Parameters
    ----------
    ghi : array_like
        Global horizontal irradiance [W/m^2].
    zenith : array_like
        Solar zenith [degrees] at ``times``.
    times : DatetimeIndex
        Timezone-aware instants (for the day of year, i.e. the extraterrestrial irradiance).
    model : str
        A name of :data:`DECOMPOSITION_MODELS`.

    Returns
    -------
    pandas.DataFrame
        ``direct_normal``, ``diffuse_horizontal`` [W/m^2] and ``clearness_index``, indexed by
        ``times``. Where the sun is below the horizon (zenith > 87 degrees, the models' limit),
        all of GHI is diffuse.
    """
    import pandas as pd

    check_name(model, DECOMPOSITION_MODELS, "decomposition model")
    index = _times(times)
    ghi = np.broadcast_to(np.asarray(ghi, dtype=float), (index.size,))
    zenith = np.broadcast_to(np.asarray(zenith, dtype=float), (index.size,))
    pvlib = _pvlib()
    split = getattr(pvlib.irradiance, model)(ghi, zenith, _day_of_year(index))
    return pd.DataFrame({"direct_normal": np.asarray(split["dni"], dtype=float),
                         "diffuse_horizontal": np.asarray(split["dhi"], dtype=float),
                         "clearness_index": np.asarray(split["kt"], dtype=float)}, index=index)


def complete_components(zenith, *, ghi=None, dni=None, dhi=None, times=None,
                        decomposition: str = "erbs"):
    """All three irradiance components from those given.

    GHI = DNI cos(zenith) + DHI closes the set: with two given, the third follows (DNI from GHI
    and DHI only where cos(zenith) > 0.065, about 86 degrees, else 0; DHI clipped at 0); with GHI
    alone, ``decomposition`` splits it (needs ``times``); all three are used as given.

    Returns
    -------
    tuple of ndarray
        (ghi, dni, dhi) [W/m^2].
    """
    zenith = np.asarray(zenith, dtype=float)
    given = {name for name, v in (("ghi", ghi), ("dni", dni), ("dhi", dhi)) if v is not None}
    cos_z = np.cos(np.radians(zenith))
    up = np.clip(cos_z, 0.0, None)
    as_array = lambda v: np.broadcast_to(np.asarray(v, dtype=float), zenith.shape)  # noqa: E731
    if given == {"ghi", "dni", "dhi"}:
        return as_array(ghi), as_array(dni), as_array(dhi)
    if given == {"dni", "dhi"}:
        dni, dhi = as_array(dni), as_array(dhi)
        return dni * up + dhi, dni, dhi
    if given == {"ghi", "dhi"}:
        ghi, dhi = as_array(ghi), as_array(dhi)
        dni = np.where(cos_z > 0.065, np.clip(ghi - dhi, 0.0, None) / np.maximum(cos_z, 0.065),
                       0.0)
        return ghi, dni, dhi
    if given == {"ghi", "dni"}:
        ghi, dni = as_array(ghi), as_array(dni)
        return ghi, dni, np.clip(ghi - dni * up, 0.0, None)
    if given == {"ghi"}:
        if times is None:
            raise InputError("splitting global horizontal irradiance needs the times")
        split = decompose_global(ghi, zenith, times, decomposition)
        return (as_array(ghi), split["direct_normal"].to_numpy(),
                split["diffuse_horizontal"].to_numpy())
    raise InputError("irradiance needs global horizontal, or two of global horizontal, direct "
                     "normal and diffuse horizontal", None,
                     "map a column to global_horizontal (the others are optional)")


def tilted_irradiance(tilt, azimuth, zenith, sun_azimuth, dni, ghi, dhi, *,
                      model: str = "isotropic", albedo=0.2, times=None):
    """Irradiance on a plane of given tilt and azimuth from the three components.

    beam = DNI max(cos AOI, 0), with cos AOI = cos z cos b + sin z sin b cos(g_s - g);
    ground = albedo GHI (1 - cos b)/2; sky diffuse by ``model`` (isotropic: DHI (1 + cos b)/2).

    Parameters
    ----------
    tilt, azimuth : float
        The plane [degrees]: tilt from horizontal 0..180, azimuth from north clockwise 0..360.
    zenith, sun_azimuth : array_like
        Sun position [degrees] (:func:`solar_position`).
    dni, ghi, dhi : array_like
        Direct normal, global horizontal, diffuse horizontal irradiance [W/m^2].
    model : str
        A name of :data:`SKY_MODELS`.
    albedo : float or array_like
        Ground reflectance 0..1.
    times : DatetimeIndex, optional
        Timezone-aware; needed by the models that use the extraterrestrial irradiance
        (hay_davies, perez, reindl).

    Returns
    -------
    pandas.DataFrame
        ``total``, ``beam``, ``sky_diffuse``, ``ground_reflected`` [W/m^2] (indexed by ``times``
        if given).
    """
    import pandas as pd

    check_name(model, SKY_MODELS, "sky model")
    tilt = _angle(tilt, 0.0, 180.0, "tilt")
    azimuth = _angle(azimuth, 0.0, 360.0, "azimuth")
    albedo_array = np.asarray(albedo, dtype=float)
    if not np.all((albedo_array >= 0) & (albedo_array <= 1)):
        raise InputError(f"albedo must be between 0 and 1, got {albedo!r}", "albedo")
    zenith = np.asarray(zenith, dtype=float)
    arrays = [np.broadcast_to(np.asarray(v, dtype=float), zenith.shape)
              for v in (sun_azimuth, dni, ghi, dhi)]
    extra, airmass = None, None
    pvlib = _pvlib()
    if model in _NEEDS_EXTRATERRESTRIAL:
        if times is None:
            raise InputError(f"the {model} sky model needs the times (for the extraterrestrial "
                             "irradiance)")
        extra = extraterrestrial_normal(times)
    if model == "perez":
        airmass = np.asarray(pvlib.atmosphere.get_relative_airmass(zenith), dtype=float)
    parts = pvlib.irradiance.get_total_irradiance(
        tilt, azimuth, zenith, arrays[0], arrays[1], arrays[2], arrays[3], dni_extra=extra,
        airmass=airmass, albedo=albedo_array, model=SKY_MODELS[model][0])
    index = None if times is None else _times(times)
    columns = {"total": "poa_global", "beam": "poa_direct", "sky_diffuse": "poa_sky_diffuse",
               "ground_reflected": "poa_ground_diffuse"}
    frame = pd.DataFrame({name: np.broadcast_to(np.nan_to_num(np.asarray(parts[key],
                                                                         dtype=float)),
                                                zenith.shape)
                          for name, key in columns.items()}, index=index)
    return frame


def surface_irradiance(times, latitude, longitude, tilt, azimuth, *, ghi=None, dni=None,
                       dhi=None, elevation=0.0, model: str = "isotropic", albedo=0.2,
                       decomposition: str = "erbs"):
    """Irradiance on a surface at a site from weather components: the whole chain.

    Sun position (:func:`solar_position`), the missing components (:func:`complete_components`),
    then :func:`tilted_irradiance`. For a weather record whose irradiance values are interval
    means, pass the interval midpoints as ``times``.

    Returns
    -------
    pandas.DataFrame
        ``total``, ``beam``, ``sky_diffuse``, ``ground_reflected`` [W/m^2] and the sun's
        ``zenith`` and ``azimuth`` [degrees], indexed by ``times``.
    """
    index = _times(times)
    check_name(model, SKY_MODELS, "sky model")
    check_name(decomposition, DECOMPOSITION_MODELS, "decomposition model")
    sun = solar_position(index, latitude, longitude, elevation)
    zenith = sun["zenith"].to_numpy()
    ghi, dni, dhi = complete_components(zenith, ghi=ghi, dni=dni, dhi=dhi, times=index,
                                        decomposition=decomposition)
    frame = tilted_irradiance(tilt, azimuth, zenith, sun["azimuth"].to_numpy(), dni, ghi, dhi,
                              model=model, albedo=albedo, times=index)
    frame["zenith"] = zenith
    frame["azimuth"] = sun["azimuth"].to_numpy()
    return frame
