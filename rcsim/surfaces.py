"""Exposed surfaces as ordinary parts of a network, and their sol-air temperature.

An exposed surface belongs to a node (a roof sheet, a wall's outer layer, a shipper's lid) and
adds, under its own name ``<s>``:

* a source ``<s>:sun`` on the node: the absorbed sun, A alpha (1 - shading) max(I, 0) [W], I the
  irradiance on the surface's plane [W/m^2];
* a boundary ``<s>:sky`` at the effective sky temperature and a radiation link ``<s>:sky`` to it:
  q = eps sigma A F_sky (T_s^4 - T_sky^4), a grey surface in large black surroundings of area
  A F_sky (exact for any view factor; :mod:`rcsim.parts` radiation without a second surface);
* a radiation link ``<s>:ground`` with area A (1 - F_sky) to the rest of its surroundings: the
  air boundary, or a boundary ``<s>:ground`` at a given ground temperature;
* a convection link ``<s>:film`` to the air boundary: h_c A with a fixed h_c, or h_c = a + b v(t)
  following the wind (:data:`rcsim.exposure.FILM_MODELS`) as a conductance that varies in time
  (:mod:`rcsim.varying`).

With ``linearise_radiation = T_m`` both radiation links are linear, h_r = 4 eps sigma T_m^3 (ISO
6946:2017 Annex C), and a surface with a fixed film leaves a linear network linear.

**Sol-air temperature.** For each surface a run records the air temperature that would give the
same heat flow into the surface without sun and with the sky at air temperature:

    T_sa = T_air + (P_sun - eps A dR) / (h_o A),    h_o = h_c + h_r

(ASHRAE Handbook - Fundamentals, "sol-air temperature"), with h_r the exact secant
eps sigma (T_air^2 + T_s^2)(T_air + T_s) at the surface's own temperature T_s (or the linearised
coefficient) and eps A dR = eps sigma A [F_sky (T_air^4 - T_sky^4) + (1 - F_sky)(T_air^4 -
T_ground^4)]. Then the heat flow into the surface from outside is exactly h_o A (T_sa - T_s).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .arguments import KELVIN
from .errors import NetworkError
from .exposure import FILM_MODELS, STEFAN_BOLTZMANN, sky_view_of_tilt
from .profiles import Constant, Profile, Table, as_profile
from .profiles.combined import Product, Scaled
from .units import to_si

__all__ = ["Surface", "add_surface", "SolAirSeries", "sol_air_series", "SURFACE_KEYS", "degrees"]

#: Keys of an exposed surface (scenario ``[surfaces.<name>]`` and :meth:`Network.add_surface`).
SURFACE_KEYS = ("node", "area", "tilt", "azimuth", "absorptance", "emissivity", "sky_view",
                "irradiance", "sky_temperature", "ground_temperature", "film", "air", "shading",
                "linearise_radiation")


@dataclass(frozen=True)
class Surface:
    """An exposed surface of a network (what :func:`add_surface` added, for the sol-air record).

    Attributes
    ----------
    name, node, air : str
        The surface, its node and the air boundary of its film.
    area : float
        [m^2]
    absorptance, emissivity, sky_view : float
        Solar absorptance, long-wave emissivity, view factor to the sky (0..1).
    sun : str or None
        Its source of absorbed sun (None when no sun reaches it).
    sky, ground : str or None
        The boundaries its long-wave links end at (None without that link); ``ground`` is the air
        boundary unless a ground temperature was given.
    film : float or Profile
        The film conductance h_c A [W/K], fixed or varying in time.
    linearised_at : float or None
        Temperature [degC] the radiation is linearised about, or None (exact sigma T^4).
    """

    name: str
    node: str
    air: str
    area: float
    absorptance: float
    emissivity: float
    sky_view: float
    sun: str | None
    sky: str | None
    ground: str | None
    film: object
    linearised_at: float | None = None


def degrees(value, name: str, low: float, high: float) -> float:
    """An angle in degrees from a number (degrees) or a string with an angle unit
    (``"90 deg"``, ``"1.2 rad"``), checked to lie in [low, high]; ``name`` is its key path."""
    x = math.nan
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        x = float(value)
    elif isinstance(value, str):
        try:
            x = float(value)
        except ValueError:
            from .units import registry

            try:
                x = float(registry().Quantity(value).to("degree").magnitude)
            except Exception:  # noqa: BLE001 - pint raises many kinds
                raise NetworkError(f"expected an angle in degrees, got {value!r}", name,
                                   "write e.g. 90 or \"90 deg\"") from None
    if not (math.isfinite(x) and low <= x <= high):
        raise NetworkError(f"must be an angle from {low:g} to {high:g} degrees, got {value!r}",
                           name)
    return x


def _fraction(value, name, where) -> float:
    x = to_si(value, "dimensionless", f"{where}.{name}")
    if not (0.0 <= x <= 1.0):
        raise NetworkError(f"{name} must be between 0 and 1, got {value!r}", f"{where}.{name}")
    return float(x)


def _positive(value, kind, name, where) -> float:
    x = to_si(value, kind, f"{where}.{name}")
    if not (x > 0 and math.isfinite(x)):
        raise NetworkError(f"{name} must be positive, got {value!r}", f"{where}.{name}")
    return float(x)


def _clipped(profile: Profile) -> Profile:
    """An irradiance with negative values (pyranometer offsets at night) taken as 0."""
    if isinstance(profile, Table) and np.any(profile.values < 0):
        out = Table(profile.times, np.clip(profile.values, 0.0, None), outside=profile.outside,
                    source=profile.source)
        out.where, out.bound_kind = profile.where, profile.bound_kind
        return out
    return profile


def _check_range(profile: Profile, low: float, high: float, what: str, where: str) -> None:
    """Tables, steps and constants checked point by point to lie within [low, high]."""
    values = getattr(profile, "values", None)
    if isinstance(profile, Constant):
        values = np.array([profile.value(0.0)])
    if values is not None and (np.min(values) < low or np.max(values) > high):
        raise NetworkError(f"{what} must stay between {low:g} and {high:g}", where)


def _film(film, area: float, where: str):
    """The film conductance h_c A [W/K]: a number, or a profile following the wind."""
    if film is None:
        raise NetworkError("missing film", where, "give film = { h = \"20 W/(m^2*K)\" } (ISO "
                           "6946's convection at 4 m/s) or film = { wind = true }")
    if not isinstance(film, dict) or not film or set(film) - {"h", "wind", "model"} or \
            ("h" in film) == ("wind" in film):
        raise NetworkError("film is { h = <coefficient> } or { wind = <wind speed> } (with "
                           "model = \"iso6946\", \"mcadams\" or \"watmuff\")", f"{where}.film")
    if "h" in film:
        if "model" in film:
            raise NetworkError("a fixed film takes h alone", f"{where}.film.model")
        return area * _positive(film["h"], "heat_transfer_coefficient", "film.h", where)
    model = film.get("model", "iso6946")
    if model not in FILM_MODELS or model == "fixed":
        valid = ", ".join(m for m in FILM_MODELS if m != "fixed")
        raise NetworkError(f"unknown wind film model {model!r}", f"{where}.film.model",
                           f"valid: {valid}")
    (a, b), _ = FILM_MODELS[model]
    wind = as_profile(film["wind"], "velocity", f"{where}.film.wind")
    _check_range(wind, 0.0, math.inf, "the wind speed", f"{where}.film.wind")
    if wind.is_constant:
        return area * (a + b * wind.value(0.0))
    return Scaled(wind, area * b, area * a)


def add_surface(network, name: str, node: str, *, area, absorptance, emissivity, air,
                irradiance=0.0, sky_temperature=None, tilt=None, sky_view=None, film=None,
                shading=0.0, ground_temperature=None, linearise_radiation=None, sky=None,
                where: str | None = None) -> str:
    """Add an exposed surface on ``node`` (see the module text for what it adds).

    Parameters
    ----------
    name : str
        The surface; its parts are named ``<name>:sun``, ``<name>:sky``, ``<name>:ground``,
        ``<name>:film``.
    node : str
        The node the surface belongs to.
    area : float or str
        [m^2]
    absorptance, emissivity : float
        Solar absorptance and long-wave emissivity, 0..1.
    air : str
        The boundary of the outside air (the film's other end).
    irradiance : number, str or Profile
        Solar irradiance on the surface's plane [W/m^2] (negative table values count as 0).
    sky_temperature : number, str or Profile
        Effective sky temperature [degC]; needed when the surface sees the sky.
    tilt : float, optional
        Degrees from horizontal (0 faces up, 90 a wall); gives the default sky view
        (1 + cos tilt)/2 (Duffie & Beckman 2.15).
    sky_view : float, optional
        View factor to the sky 0..1 (default from ``tilt``).
    film : dict
        ``{"h": <W/(m^2 K)>}`` or ``{"wind": <m/s, number or profile>, "model": "iso6946"}``.
    shading : number or Profile
        Fraction of the irradiance blocked, 0..1.
    ground_temperature : number, str or Profile, optional
        Temperature [degC] of what the surface sees besides the sky; default the air.
    linearise_radiation : number or str, optional
        Temperature [degC] the long-wave exchange is linearised about (h_r = 4 eps sigma T^3).
    sky : str, optional
        An existing boundary at the sky temperature to exchange with (surfaces under one sky
        may share one), instead of a boundary ``<name>:sky`` made from ``sky_temperature``.
    """
    where = where or f"surfaces.{name}"
    surface = _build(network, name, node, area, absorptance, emissivity, air, irradiance,
                     sky_temperature, tilt, sky_view, film, shading, ground_temperature,
                     linearise_radiation, sky, where)
    network.surfaces[name] = surface
    return name


def _build(network, name, node, area, absorptance, emissivity, air, irradiance, sky_temperature,
           tilt, sky_view, film, shading, ground_temperature, linearise, sky_boundary,
           where) -> Surface:
    if not isinstance(node, str) or node not in network.nodes:
        raise NetworkError(f"unknown node {node!r}", f"{where}.node",
                           "an exposed surface belongs to a node of the network")
    if not isinstance(air, str) or air not in network.boundaries:
        raise NetworkError(f"{air!r} is not a boundary", f"{where}.air",
                           "air names the boundary of the outside air")
    if name in network.surfaces:
        raise NetworkError(f"duplicate surface name {name!r}", where)
    area = _positive(area, "area", "area", where)
    alpha = _fraction(absorptance, "absorptance", where)
    eps = _fraction(emissivity, "emissivity", where)
    if sky_view is None:
        if tilt is None:
            raise NetworkError("give the surface's tilt (or its sky_view)", where)
        sky_view = sky_view_of_tilt(degrees(tilt, f"{where}.tilt", 0.0, 180.0))
    view = _fraction(sky_view, "sky_view", where)
    t_lin = None if linearise is None else to_si(linearise, "temperature",
                                                 f"{where}.linearise_radiation")
    film_g = _film(film, area, where)
    radiates = eps > 0
    if network.nodes[node].capacity == 0 and ((radiates and t_lin is None)
                                              or isinstance(film_g, Profile)):
        raise NetworkError(f"node {node!r} has no heat capacity, but its surface exchanges "
                           "radiation or has a film that follows the wind", f"{where}.node",
                           "give the node a small capacity, or set linearise_radiation")
    # the sun: A alpha (1 - s) max(I, 0)
    sun = None
    sun_in = _clipped(as_profile(irradiance, "heat_flux", f"{where}.irradiance"))
    shade = as_profile(shading, "fraction", f"{where}.shading")
    _check_range(shade, 0.0, 1.0, "shading", f"{where}.shading")
    if alpha > 0 and not (sun_in.is_constant and sun_in.value(0.0) == 0.0):
        if shade.is_constant:
            power = Scaled(sun_in, area * alpha * (1.0 - shade.value(0.0)))
        else:
            power = Product(Scaled(sun_in, area * alpha), Scaled(shade, -1.0, 1.0))
        sun = network.add_source(node, power, name=f"{name}:sun", where=f"{where}.irradiance")
    # long-wave exchange with the sky and the rest of the surroundings
    sky = ground = None
    if radiates and view > 0:
        if sky_boundary is not None:
            if sky_boundary not in network.boundaries or sky_temperature is not None:
                raise NetworkError(f"sky {sky_boundary!r} must be a boundary, given instead of "
                                   "sky_temperature", f"{where}.sky")
            sky = sky_boundary
        elif sky_temperature is None:
            raise NetworkError("missing sky_temperature", where, "give sky_temperature, or a "
                               "weather record with the air temperature (for the sky model)")
        else:
            sky = network.add_boundary(f"{name}:sky", sky_temperature,
                                       where=f"{where}.sky_temperature")
        network.add_link(node, sky, parts=[_radiation(eps, area * view, t_lin)],
                         name=f"{name}:sky", where=f"{where}.sky_view")
    if radiates and view < 1:
        ground = air
        if ground_temperature is not None:
            ground = network.add_boundary(f"{name}:ground", ground_temperature,
                                          where=f"{where}.ground_temperature")
        network.add_link(node, ground, parts=[_radiation(eps, area * (1.0 - view), t_lin)],
                         name=f"{name}:ground", where=f"{where}.sky_view")
    network.add_link(node, air, conductance=film_g, name=f"{name}:film", where=f"{where}.film")
    return Surface(name, node, air, area, alpha, eps, view, sun, sky, ground, film_g, t_lin)


def _radiation(emissivity: float, area: float, linearised_at) -> dict:
    """A grey surface in large black surroundings of area ``area``: 1/R_s = eps A."""
    spec = {"emissivity": emissivity, "area": area}
    if linearised_at is not None:
        spec["temperatures"] = [linearised_at, linearised_at]
    return {"radiation": spec}


class SolAirSeries:
    """The sol-air temperature of every exposed surface, from what a run records.

    A recorded series (key ``sol_air``, one column per surface): the recorder hands it each
    chunk's node temperatures (of :attr:`nodes`), boundary temperatures and source powers.
    """

    key = "sol_air"

    def __init__(self, surfaces, asm):
        self.surfaces = list(surfaces)
        self.names = [s.name for s in self.surfaces]
        self.nodes = [asm.node_index(s.node) for s in self.surfaces]
        bnd = {nm: j for j, nm in enumerate(asm.boundary_names)}
        src = {nm: j for j, nm in enumerate(asm.source_names)}
        self._air = [bnd[s.air] for s in self.surfaces]
        self._sun = [src.get(s.sun) if s.sun is not None else None for s in self.surfaces]
        # long-wave surroundings of each surface: (eps A F, boundary column)
        self._long_wave = [[(s.emissivity * s.area * f, bnd[b])
                            for f, b in ((s.sky_view, s.sky), (1.0 - s.sky_view, s.ground))
                            if b is not None] for s in self.surfaces]

    def values(self, t, T, u, s) -> np.ndarray:
        """Sol-air temperatures [degC], (len(t), surfaces), from the surfaces' node temperatures
        ``T`` (len(t), surfaces), boundary temperatures ``u`` and source powers ``s``."""
        out = np.empty((np.size(t), len(self.surfaces)))
        for k, surf in enumerate(self.surfaces):
            t_air = u[:, self._air[k]]
            power = s[:, self._sun[k]] if self._sun[k] is not None else 0.0
            h_c = surf.film.value(t) if isinstance(surf.film, Profile) else surf.film
            air_k, surface_k = t_air + KELVIN, T[:, k] + KELVIN
            h_r = np.zeros_like(t_air)
            deficit = np.zeros_like(t_air)
            for eps_area, col in self._long_wave[k]:
                other_k = u[:, col] + KELVIN
                if surf.linearised_at is None:
                    h_r = h_r + eps_area * STEFAN_BOLTZMANN * (air_k ** 2 + surface_k ** 2) \
                        * (air_k + surface_k)
                    deficit = deficit + eps_area * STEFAN_BOLTZMANN * (air_k ** 4 - other_k ** 4)
                else:
                    h_lin = eps_area * 4.0 * STEFAN_BOLTZMANN * (surf.linearised_at + KELVIN) ** 3
                    h_r = h_r + h_lin
                    deficit = deficit + h_lin * (air_k - other_k)
            out[:, k] = t_air + (power - deficit) / (h_c + h_r)
        return out


def sol_air_series(network, asm) -> list:
    """The recorded series a network's exposed surfaces ask for (empty without any)."""
    surfaces = getattr(network, "surfaces", None)
    return [SolAirSeries(surfaces.values(), asm)] if surfaces else []
