"""An exposed outside surface: the outside film, sky exchange, absorbed sun and sol-air temperature.

SI in and out (W, m^2, W/(m^2 K), degC for absolute temperatures, fractions 0..1), arrays over
time where inputs vary. The heat flow into an exposed surface at temperature T_s is

    q = alpha I + h_c (T_air - T_s) + eps sigma F_sky (T_sky^4 - T_s^4)
        + eps sigma (1 - F_sky) (T_air^4 - T_s^4)                       [W/m^2]

(absorbed sun, convection to the outside air, long-wave exchange with the sky and with the rest of
the surroundings, taken at air temperature; grey surface, surroundings much larger than it).
Written with h_r = eps sigma (T_air^2 + T_s^2)(T_air + T_s) and
dR = F_sky sigma (T_air^4 - T_sky^4), that is exactly

    q = h_o (T_sa - T_s),  h_o = h_c + h_r,  T_sa = T_air + alpha I / h_o - eps dR / h_o,

the sol-air temperature of the handbook relation (ASHRAE Handbook - Fundamentals, chapter on
nonresidential heating and cooling loads, "sol-air temperature"): the air temperature that would
give the same heat flow into the surface without sun and with the sky at air temperature.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .arguments import bounded, check_name, kelvin
from .errors import InputError

__all__ = ["STEFAN_BOLTZMANN", "FILM_MODELS", "film_coefficient", "radiative_coefficient",
           "external_surface_resistance", "long_wave_deficit", "sol_air_temperature",
           "absorbed_solar_power", "sky_view_of_tilt", "ExposureTerms", "exposure_terms"]

#: Stefan-Boltzmann constant [W/(m^2 K^4)] (CODATA 2018, exact)
STEFAN_BOLTZMANN = 5.670374419e-8
#: Outside film relations: name -> (a, b) in h = a + b v [W/(m^2 K)], description
FILM_MODELS = {
    "iso6946": ((4.0, 4.0), "h_c = 4 + 4 v, convection at exposed external surfaces "
                            "(ISO 6946:2017, Annex C)"),
    "mcadams": ((5.7, 3.8), "h = 5.7 + 3.8 v (McAdams 1954, from Juerges' plate data; "
                            "includes some radiation)"),
    "watmuff": ((2.8, 3.0), "h_c = 2.8 + 3.0 v (Watmuff, Charters & Proctor 1977; Duffie & "
                            "Beckman section 3.15)"),
    "fixed": (None, "a fixed coefficient h"),
}


def film_coefficient(wind_speed=None, *, model: str = "iso6946", h=None):
    """Convective coefficient of the outside film [W/(m^2 K)], following the wind or fixed.

    Parameters
    ----------
    wind_speed : array_like, optional
        Wind speed at the surface [m/s], >= 0 (not needed for ``fixed``).
    model : str
        A name of :data:`FILM_MODELS`. ``iso6946``: h_c = 4 + 4 v (ISO 6946:2017 Annex C; the
        standard's conventional external surface resistance 0.04 m^2 K/W follows from v = 4 m/s
        with the radiative part, see :func:`external_surface_resistance`).
    h : float, optional
        The coefficient of the ``fixed`` model (giving ``h`` alone chooses ``fixed``).

    >>> float(film_coefficient(4.0))
    20.0
    >>> float(film_coefficient(h=25.0))
    25.0
    """
    if h is not None and model == "iso6946":
        model = "fixed"
    check_name(model, FILM_MODELS, "outside film model")
    if model == "fixed":
        if h is None:
            raise InputError("a fixed outside film needs h", "film.h",
                             "give h, e.g. 25 W/(m^2*K)")
        return bounded(h, "film.h", low=1e-9, high=1e6)
    if h is not None:
        raise InputError(f"the {model} film follows the wind: give h or a wind model, not both",
                         "film")
    if wind_speed is None:
        raise InputError(f"the {model} film needs the wind speed", "film",
                         "map a weather column to wind_speed, or give a fixed h")
    speed = bounded(wind_speed, "wind speed", high=np.inf)
    a, b = FILM_MODELS[model][0]
    return a + b * speed


def radiative_coefficient(emissivity, temperature, other=None):
    """Long-wave radiative coefficient h_r [W/(m^2 K)] of a grey surface to large surroundings.

    With ``other``: the exact secant h_r = eps sigma (T1^2 + T2^2)(T1 + T2), so that
    h_r (T1 - T2) = eps sigma (T1^4 - T2^4). Without: the tangent at T1, h_r = 4 eps sigma T1^3
    (ISO 6946:2017 Annex C: h_r = eps h_r0, h_r0 = 4 sigma T_m^3; h_r0 = 5.1 W/(m^2 K) at 10 degC).
    Temperatures in degC.

    >>> round(float(radiative_coefficient(1.0, 10.0)), 2)
    5.15
    """
    eps = bounded(emissivity, "emissivity")
    t1 = kelvin(temperature, "temperature")
    if other is None:
        return 4.0 * eps * STEFAN_BOLTZMANN * t1 ** 3
    t2 = kelvin(other, "temperature")
    return eps * STEFAN_BOLTZMANN * (t1 ** 2 + t2 ** 2) * (t1 + t2)


def external_surface_resistance(wind_speed, emissivity=0.9, mean_temperature=0.0):
    """External surface resistance R_se = 1 / (h_c + h_r) [m^2 K/W] of ISO 6946:2017 Annex C.

    h_c = 4 + 4 v, h_r = eps 4 sigma T_m^3. With v = 4 m/s, eps = 0.9 and T_m = 0 degC it gives
    the standard's conventional R_se = 0.04 m^2 K/W.
    """
    return 1.0 / (film_coefficient(wind_speed) + radiative_coefficient(emissivity,
                                                                       mean_temperature))


def sky_view_of_tilt(tilt):
    """View factor from a tilted plane to the unobstructed sky dome: (1 + cos tilt) / 2.

    Tilt in degrees from horizontal (Duffie & Beckman, Solar Engineering of Thermal Processes,
    section 2.15). The rest, (1 - cos tilt) / 2, sees the ground.

    >>> sky_view_of_tilt(0.0), sky_view_of_tilt(90.0), sky_view_of_tilt(180.0)
    (1.0, 0.5, 0.0)
    """
    tilt = bounded(tilt, "tilt", high=180.0)
    value = np.round(0.5 * (1.0 + np.cos(np.radians(tilt))), 15)
    return float(value) if value.ndim == 0 else value


def long_wave_deficit(air, sky_temperature, sky_view):
    """dR = F_sky sigma (T_air^4 - T_sky^4) [W/m^2]: long-wave radiation a black surface at air
    temperature loses, the rest of its surroundings being at air temperature.

    The handbook's dR: the difference between the long-wave radiation incident on the surface from
    sky and surroundings and that emitted by a black body at outdoor air temperature (ASHRAE
    Handbook - Fundamentals, sol-air temperature; it quotes about 63 W/m^2 for a horizontal
    surface under a clear sky, 0 for vertical ones when surroundings are at air temperature).
    """
    t_air = kelvin(air, "air temperature")
    t_sky = kelvin(sky_temperature, "sky temperature")
    view = bounded(sky_view, "sky_view")
    return view * STEFAN_BOLTZMANN * (t_air ** 4 - t_sky ** 4)


def sol_air_temperature(air, irradiance, *, absorptance, h_outside, emissivity=0.0,
                        long_wave=0.0):
    """Sol-air temperature T_sa = T_air + alpha I / h_o - eps dR / h_o [degC].

    The handbook relation (ASHRAE Handbook - Fundamentals, "sol-air temperature"; see the module
    text for when it is exact).

    Parameters
    ----------
    air : array_like
        Outside air temperature [degC].
    irradiance : array_like
        Solar irradiance on the surface plane [W/m^2].
    absorptance : float
        Solar absorptance alpha 0..1.
    h_outside : array_like
        Outside coefficient h_o = h_c + h_r [W/(m^2 K)].
    emissivity : float
        Long-wave emissivity eps 0..1.
    long_wave : array_like
        dR [W/m^2] (:func:`long_wave_deficit`).

    >>> round(float(sol_air_temperature(30.0, 800.0, absorptance=0.9, h_outside=17.0,
    ...                                 emissivity=1.0, long_wave=63.0)), 6)  # 30 + 720/17 - 63/17
    68.647059
    """
    alpha = bounded(absorptance, "absorptance")
    eps = bounded(emissivity, "emissivity")
    h_o = bounded(h_outside, "h_outside", low=1e-9, high=np.inf)
    return (np.asarray(air, dtype=float) + alpha * np.asarray(irradiance, dtype=float) / h_o
            - eps * np.asarray(long_wave, dtype=float) / h_o)


def absorbed_solar_power(area, absorptance, irradiance, shading=0.0):
    """Solar power absorbed by a surface [W]: P = A alpha (1 - s) max(I, 0).

    ``shading`` s (0..1, may vary in time) is the fraction of the surface's irradiance blocked;
    negative irradiance (pyranometer offsets at night) counts as 0.
    """
    area = bounded(area, "area", low=0.0, high=np.inf)
    alpha = bounded(absorptance, "absorptance")
    shade = bounded(shading, "shading")
    return area * alpha * (1.0 - shade) * np.clip(np.asarray(irradiance, dtype=float), 0.0, None)


@dataclass(frozen=True)
class ExposureTerms:
    """What an exposed surface adds to a network, on the inputs' time grid.

    Attributes
    ----------
    absorbed_power : ndarray
        Source on the surface's node [W].
    sky_temperature : ndarray
        Temperature of the sky boundary [degC].
    sky_radiation : float
        eps A F_sky [m^2]: radiation q = sigma eps A F_sky (T_s^4 - T_sky^4) to the sky boundary.
    ground_radiation : float
        eps A (1 - F_sky) [m^2]: radiation to the rest of the surroundings (the air boundary).
    film_conductance : ndarray
        h_c A [W/K] to the outside air.
    air, irradiance : ndarray
        Outside air temperature [degC] and irradiance on the plane after shading [W/m^2].
    area, absorptance, emissivity, sky_view : float
        The surface.
    """

    absorbed_power: np.ndarray
    sky_temperature: np.ndarray
    sky_radiation: float
    ground_radiation: float
    film_conductance: np.ndarray
    air: np.ndarray
    irradiance: np.ndarray
    area: float
    absorptance: float
    emissivity: float
    sky_view: float

    def heat_flow(self, surface) -> np.ndarray:
        """Heat flow into the surface [W] at surface temperature ``surface`` [degC] (the module's
        balance, radiation not linearised)."""
        t_s = kelvin(surface, "surface temperature")
        t_air = kelvin(self.air, "air temperature")
        t_sky = kelvin(self.sky_temperature, "sky temperature")
        return (self.absorbed_power + self.film_conductance * (t_air - t_s)
                + STEFAN_BOLTZMANN * self.sky_radiation * (t_sky ** 4 - t_s ** 4)
                + STEFAN_BOLTZMANN * self.ground_radiation * (t_air ** 4 - t_s ** 4))

    def sol_air(self, surface=None) -> np.ndarray:
        """Sol-air temperature [degC] of the surface.

        With the surface temperature [degC] given, h_r is the secant between air and surface, so
        that ``h_o A (T_sa - T_s)`` equals :meth:`heat_flow` exactly; without it, the tangent at
        air temperature (ISO 6946's h_r = 4 eps sigma T^3).
        """
        h_c = self.film_conductance / self.area
        h_r = radiative_coefficient(self.emissivity, self.air, surface)
        long_wave = long_wave_deficit(self.air, self.sky_temperature, self.sky_view)
        return sol_air_temperature(self.air, self.irradiance, absorptance=self.absorptance,
                                   h_outside=h_c + h_r, emissivity=self.emissivity,
                                   long_wave=long_wave)


def exposure_terms(*, area, absorptance, emissivity, irradiance, air, sky_temperature,
                   sky_view=None, tilt=None, wind_speed=None, film_model: str = "iso6946",
                   h=None, shading=0.0) -> ExposureTerms:
    """The network terms of an exposed surface from its description and its inputs.

    All time-varying inputs are arrays on one time grid (or scalars).

    Parameters
    ----------
    area : float
        Surface area [m^2].
    absorptance, emissivity : float
        Solar absorptance and long-wave emissivity, 0..1.
    irradiance : array_like
        Solar irradiance on the surface plane [W/m^2] (e.g. ``surface_irradiance(...)['total']``).
    air : array_like
        Outside air temperature [degC].
    sky_temperature : array_like
        Effective sky temperature [degC] (:func:`rcsim.sky.sky_temperature`, or given).
    sky_view : float, optional
        View factor to the sky, 0..1; default :func:`sky_view_of_tilt` of ``tilt``.
    tilt : float, optional
        Degrees from horizontal; needed only when ``sky_view`` is not given.
    wind_speed : array_like, optional
        [m/s], for a film that follows the wind.
    film_model, h :
        See :func:`film_coefficient`.
    shading : float or array_like
        Fraction of the irradiance blocked, 0..1.
    """
    if sky_view is None:
        if tilt is None:
            raise InputError("an exposed surface needs its sky_view or its tilt", "sky_view")
        sky_view = sky_view_of_tilt(tilt)
    view = float(bounded(sky_view, "sky_view"))
    area = float(bounded(area, "area", low=1e-30, high=np.inf))
    alpha = float(bounded(absorptance, "absorptance"))
    eps = float(bounded(emissivity, "emissivity"))
    h_c = film_coefficient(wind_speed, model=film_model, h=h)
    air = np.asarray(air, dtype=float)
    shade = bounded(shading, "shading")
    on_plane = (1.0 - shade) * np.clip(np.asarray(irradiance, dtype=float), 0.0, None)
    shape = np.broadcast_shapes(air.shape, on_plane.shape, np.shape(sky_temperature),
                                np.shape(h_c))
    grid = lambda v: np.broadcast_to(np.asarray(v, dtype=float), shape).copy()  # noqa: E731
    kelvin(sky_temperature, "sky temperature")
    return ExposureTerms(absorbed_power=grid(area * alpha * on_plane),
                         sky_temperature=grid(sky_temperature),
                         sky_radiation=eps * area * view,
                         ground_radiation=eps * area * (1.0 - view),
                         film_conductance=grid(h_c * area), air=grid(air),
                         irradiance=grid(on_plane), area=area, absorptance=alpha,
                         emissivity=eps, sky_view=view)
