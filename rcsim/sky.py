"""The sky as a long-wave radiator: its effective temperature, clear and cloudy.

A surface exchanges long-wave radiation with the sky as with a black body at the effective sky
temperature T_sky = eps_sky^(1/4) T_air (kelvin), where eps_sky is the sky's apparent emissivity
(the downward long-wave radiation over sigma T_air^4). Clear-sky models (:data:`SKY_MODELS`) give
T_sky, or eps_sky, from air and dew-point temperature; a cloud correction
(:data:`CLOUD_CORRECTIONS`) raises eps_sky with the sky cover where it is given.

Temperatures in and out are degC (rcsim's convention for absolute temperatures); inside the
formulas kelvin, 273.15 K = 0 degC. Sky cover is a fraction 0..1.
"""

from __future__ import annotations

import numpy as np

from .arguments import KELVIN, bounded, check_name, kelvin
from .errors import InputError

__all__ = ["SKY_MODELS", "CLOUD_CORRECTIONS", "sky_temperature", "clear_sky_emissivity",
           "cloudy_sky_emissivity", "dew_point_from_humidity", "DEFAULT_SKY_DEPRESSION"]

#: Clear-sky models: name -> (needs the dew point, description)
SKY_MODELS = {
    "swinbank": (False, "T_sky = 0.0552 T_air^1.5 (Swinbank 1963)"),
    "idso_jackson": (False, "eps = 1 - 0.261 exp(-7.77e-4 (273 - T_air)^2) (Idso & Jackson 1969)"),
    "berdahl_martin": (True, "eps = 0.711 + 0.56 (T_dp/100) + 0.73 (T_dp/100)^2 "
                             "(Berdahl & Martin 1984)"),
    "clark_allen": (True, "eps = 0.787 + 0.764 ln(T_dp/273) (Clark & Allen 1978)"),
    "depression": (False, "T_sky = T_air - a fixed depression (ISO 13790: 11 K in intermediate "
                          "climates)"),
}
#: Cloud corrections of the sky emissivity: name -> description
CLOUD_CORRECTIONS = {
    "none": "no correction",
    "clark_allen": "eps = eps_clear (1 + 0.0224 N - 0.0035 N^2 + 0.00028 N^3), N in tenths "
                   "(Clark & Allen 1978)",
    "unsworth_monteith": "eps = (1 - 0.84 c) eps_clear + 0.84 c (Unsworth & Monteith 1975)",
}
#: Average depression of the sky temperature below the air temperature in intermediate climates
#: [K] (ISO 13790:2008 section 11.4.6; 9 K in the tropics, 13 K in sub-polar regions).
DEFAULT_SKY_DEPRESSION = 11.0


def clear_sky_emissivity(air, dew_point=None, *, model: str = "berdahl_martin", hour=None,
                         pressure=None, depression: float = DEFAULT_SKY_DEPRESSION):
    """Apparent emissivity of a clear sky, eps = (T_sky / T_air)^4 [-].

    Parameters
    ----------
    air : array_like
        Air temperature near the ground [degC].
    dew_point : array_like, optional
        Dew-point temperature [degC]; needed by ``berdahl_martin`` and ``clark_allen``.
    model : str
        A name of :data:`SKY_MODELS`:

        * ``swinbank``: T_sky = 0.0552 T_air^1.5, T in K (Swinbank, Q. J. R. Meteorol. Soc. 89
          (1963) 339-348; Duffie & Beckman, Solar Engineering of Thermal Processes, eq. 3.9.1);
          eps = 0.0552^4 T_air^2.
        * ``idso_jackson``: eps = 1 - 0.261 exp(-7.77e-4 (273 - T_air)^2), T in K (Idso &
          Jackson, J. Geophys. Res. 74 (1969) 5397-5403).
        * ``berdahl_martin``: eps = 0.711 + 0.56 (T_dp/100) + 0.73 (T_dp/100)^2, T_dp in degC
          (Berdahl & Martin, Solar Energy 32 (1984) 663-664; fitted for T_dp -13..24 degC), with
          their diurnal term + 0.013 cos(2 pi hour / 24) where ``hour`` (solar hours from
          midnight) is given, and their pressure term + 0.00012 (p - 1000 mbar) where
          ``pressure`` [Pa] is given.
        * ``clark_allen``: eps = 0.787 + 0.764 ln(T_dp / 273), T_dp in K (Clark & Allen, Proc.
          2nd National Passive Solar Conference (1978) 675-678).
        * ``depression``: T_sky = T_air - ``depression`` [K] (ISO 13790:2008, 11.4.6).
    hour, pressure : array_like, optional
        See ``berdahl_martin``.
    depression : float
        See ``depression`` [K].
    """
    check_name(model, SKY_MODELS, "sky temperature model")
    t_air = kelvin(air, "air temperature")
    if SKY_MODELS[model][0] and dew_point is None:
        raise InputError(f"the {model} sky model needs the dew point", None,
                         "give the dew point or relative humidity, or choose model 'swinbank'")
    if model == "swinbank":
        return 0.0552 ** 4 * t_air ** 2
    if model == "idso_jackson":
        return 1.0 - 0.261 * np.exp(-7.77e-4 * (273.0 - t_air) ** 2)
    if model == "depression":
        return ((t_air - float(depression)) / t_air) ** 4
    t_dp = kelvin(dew_point, "dew point")
    if model == "clark_allen":
        return 0.787 + 0.764 * np.log(t_dp / 273.0)
    x = (t_dp - KELVIN) / 100.0
    eps = 0.711 + 0.56 * x + 0.73 * x ** 2
    if hour is not None:
        eps = eps + 0.013 * np.cos(2.0 * np.pi * np.asarray(hour, dtype=float) / 24.0)
    if pressure is not None:
        eps = eps + 0.00012 * (np.asarray(pressure, dtype=float) / 100.0 - 1000.0)
    return eps


def cloudy_sky_emissivity(clear, sky_cover, correction: str = "clark_allen"):
    """Sky emissivity under a partly or fully covered sky [-].

    * ``clark_allen``: eps = eps_clear (1 + 0.0224 N - 0.0035 N^2 + 0.00028 N^3), N the sky
      cover in tenths (Clark & Allen 1978). Under full cover it gives 1.154 eps_clear, which
      can exceed 1 (the published relation is not clipped).
    * ``unsworth_monteith``: eps = (1 - 0.84 c) eps_clear + 0.84 c, c the cover fraction
      (Unsworth & Monteith, Q. J. R. Meteorol. Soc. 101 (1975) 13-24).
    * ``none``: eps_clear.

    Parameters
    ----------
    clear : array_like
        Clear-sky emissivity.
    sky_cover : array_like
        Cloud cover fraction 0..1.
    """
    check_name(correction, CLOUD_CORRECTIONS, "cloud correction")
    clear = np.asarray(clear, dtype=float)
    cover = bounded(sky_cover, "sky_cover")
    if correction == "none":
        return clear + 0.0 * cover
    if correction == "clark_allen":
        tenths = 10.0 * cover
        return clear * (1.0 + 0.0224 * tenths - 0.0035 * tenths ** 2 + 0.00028 * tenths ** 3)
    return (1.0 - 0.84 * cover) * clear + 0.84 * cover


def sky_temperature(air, *, model: str = "berdahl_martin", dew_point=None, sky_cover=None,
                    cloud: str = "clark_allen", hour=None, pressure=None,
                    depression: float = DEFAULT_SKY_DEPRESSION):
    """Effective sky temperature [degC]: T_sky = eps_sky^(1/4) T_air (in kelvin).

    eps_sky from :func:`clear_sky_emissivity` (``model``), corrected by ``cloud``
    (:func:`cloudy_sky_emissivity`) where ``sky_cover`` is given.

    >>> round(float(sky_temperature(20.0, model="swinbank")), 3)   # 0.0552 * 293.15^1.5 - 273.15
    3.91
    """
    eps = clear_sky_emissivity(air, dew_point, model=model, hour=hour, pressure=pressure,
                               depression=depression)
    if sky_cover is not None:
        eps = cloudy_sky_emissivity(eps, sky_cover, cloud)
    else:
        check_name(cloud, CLOUD_CORRECTIONS, "cloud correction")
    return np.asarray(eps, dtype=float) ** 0.25 * kelvin(air, "air temperature") - KELVIN


def dew_point_from_humidity(air, relative_humidity):
    """Dew point [degC] from air temperature [degC] and relative humidity (fraction 0..1).

    Magnus form over water with the coefficients of Alduchov & Eskridge (J. Appl. Meteor. 35
    (1996) 601-609): e_s(T) = 6.1094 exp(17.625 T / (T + 243.04)) hPa, so
    T_dp = 243.04 g / (17.625 - g) with g = ln(RH) + 17.625 T / (T + 243.04); within about
    0.1 K for -40..50 degC. Relative humidity 0 has no dew point and is refused.
    """
    air = np.asarray(air, dtype=float)
    humidity = np.asarray(relative_humidity, dtype=float)
    if not np.all((humidity > 0.0) & (humidity <= 1.0 + 1e-9)):
        raise InputError("relative humidity must be a fraction above 0 and at most 1",
                         "relative_humidity", "a percentage? divide by 100 (or give unit '%')")
    gamma = np.log(np.minimum(humidity, 1.0)) + 17.625 * air / (air + 243.04)
    return 243.04 * gamma / (17.625 - gamma)
