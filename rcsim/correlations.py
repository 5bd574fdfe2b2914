"""Convection coefficients from correlations, with air properties at the film temperature.

Pure functions, SI in and out (temperatures in degC, converted to kelvin inside). A correlation is
chosen by name from :data:`CORRELATIONS`; :func:`correlation_names` lists them and an unknown name
raises an error listing the valid ones.

References
----------
.. [1] F. P. Incropera, D. P. DeWitt, T. L. Bergman, A. S. Lavine, *Fundamentals of Heat and Mass
   Transfer*, 6th ed., Wiley, 2007 (the edition rcsim cites throughout): eq. 7.30 (laminar flat
   plate, average), 7.38 with A = 0 (turbulent from the leading edge, average), 7.38-7.39 (mixed);
   eq. 9.26 (vertical plate), 9.30-9.32 (horizontal plates), 9.34 (horizontal cylinder).
.. [2] S. W. Churchill, H. H. S. Chu, "Correlating equations for laminar and turbulent free
   convection from a vertical plate", Int. J. Heat Mass Transfer 18 (1975) 1323-1329; and "...from
   a horizontal cylinder", Int. J. Heat Mass Transfer 18 (1975) 1049-1053.
.. [3] W. H. McAdams, *Heat Transmission*, 3rd ed., McGraw-Hill, 1954 (horizontal plates).
.. [4] F. M. White, *Viscous Fluid Flow*, 3rd ed., McGraw-Hill, 2006, Table 1-2 and 1-3
   (Sutherland's law for the viscosity and conductivity of air).

Validity ranges
---------------
Each correlation holds over the range of Rayleigh (natural convection) or Reynolds (forced) and
Prandtl numbers its source states (:data:`VALIDITY`, read by :func:`validity_ranges`);
:func:`outside_validity` finds the samples of a run outside them, and a run warns once per film
that leaves its range (rcsim.run_warnings). The published bounds are approximate (written
"less than about" in [1]), so a number counts as outside when it passes a bound by more than
:data:`VALIDITY_MARGIN` (5 %, common practice).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np
from scipy.constants import g as GRAVITY, zero_Celsius

from .errors import InputError

__all__ = [
    "air_properties",
    "nusselt_vertical_plate",
    "nusselt_horizontal_plate",
    "nusselt_horizontal_cylinder",
    "nusselt_flat_plate_forced",
    "natural_convection_coefficient",
    "forced_convection_coefficient",
    "Correlation",
    "CORRELATIONS",
    "correlation_names",
    "get_correlation",
    "ValidityRange",
    "VALIDITY",
    "VALIDITY_MARGIN",
    "validity_ranges",
    "dimensionless_numbers",
    "outside_validity",
]

_R_AIR = 287.05           # J/(kg K), specific gas constant of dry air (common practice)
_P_ATM = 101325.0         # Pa
_MU0, _T_MU, _S_MU = 1.716e-5, 273.15, 110.4      # Sutherland, viscosity [4]
_K0, _T_K, _S_K = 0.0241, 273.15, 194.0            # Sutherland form, conductivity [4]


def air_properties(temperature, pressure=_P_ATM):
    r"""Properties of dry air at ``temperature`` [degC] and ``pressure`` [Pa].

    Returns a dict with density rho [kg/m^3] (ideal gas), specific heat cp [J/(kg K)],
    dynamic viscosity mu [Pa s] and conductivity k [W/(m K)] from Sutherland's law, kinematic
    viscosity nu, diffusivity alpha [m^2/s], Prandtl number Pr and expansion coefficient
    beta = 1/T [1/K] (ideal gas).

    .. math:: \mu = \mu_0 \left(\frac{T}{T_0}\right)^{3/2} \frac{T_0 + S}{T + S}

    Valid roughly from -100 to 400 degC at ordinary pressures (Sutherland fits [4]); cp uses a
    quadratic fit to tabulated values between 250 and 400 K (common practice, within 0.3 %).

    >>> p = air_properties(26.85)
    >>> round(float(p["Pr"]), 3), round(float(p["nu"]) * 1e6, 2)
    (0.707, 15.69)
    """
    T = np.asarray(temperature, dtype=float) + zero_Celsius
    rho = pressure / (_R_AIR * T)
    cp = 1002.5 + 275e-6 * (T - 200.0) ** 2
    mu = _MU0 * (T / _T_MU) ** 1.5 * (_T_MU + _S_MU) / (T + _S_MU)
    k = _K0 * (T / _T_K) ** 1.5 * (_T_K + _S_K) / (T + _S_K)
    nu = mu / rho
    alpha = k / (rho * cp)
    return {"rho": rho, "cp": cp, "mu": mu, "k": k, "nu": nu, "alpha": alpha, "Pr": nu / alpha,
            "beta": 1.0 / T}


#: g beta / (nu alpha) of air at 1 atm is _RA_FACTOR cp (T + S_mu)(T + S_k) / T^6 [1/(K m^3)]
#: (air_properties' laws gathered: rho = P/(R T), beta = 1/T, nu alpha = mu k / (rho^2 cp))
_RA_FACTOR = (GRAVITY * _P_ATM ** 2 * _T_MU ** 1.5 * _T_K ** 1.5
              / (_R_AIR ** 2 * _MU0 * _K0 * (_T_MU + _S_MU) * (_T_K + _S_K)))
#: Pr = mu cp / k = _PR_FACTOR cp (T + S_k) / (T + S_mu)
_PR_FACTOR = _MU0 * (_T_MU + _S_MU) * _T_K ** 1.5 / (_K0 * (_T_K + _S_K) * _T_MU ** 1.5)


def _film_air(film_temperature):
    """(Ra / (|dT| L^3) [1/(K m^3)], Pr, k [W/(m K)]) of air at 1 atm at the film temperature
    [degC]: what a natural-convection correlation needs, the laws of :func:`air_properties`
    gathered into closed forms with one square root and no other power (the hot path of the
    film links; equal to :func:`air_properties` to rounding)."""
    T = np.asarray(film_temperature, dtype=float) + zero_Celsius
    cp = T - 200.0
    cp *= cp
    cp *= 275e-6
    cp += 1002.5
    t_mu = T + _S_MU
    t_k = T + _S_K
    T2 = T * T
    ra = _RA_FACTOR * cp * t_mu * t_k / (T2 * T2 * T2)
    pr = _PR_FACTOR * cp * t_k / t_mu
    k = (_K0 * (_T_K + _S_K) / _T_K ** 1.5) * T * np.sqrt(T) / t_k
    return ra, pr, k


def nusselt_vertical_plate(rayleigh, prandtl):
    r"""Churchill-Chu correlation for a vertical plate, all Ra [1, 2] (Incropera eq. 9.26).

    .. math:: Nu_L = \left\{0.825 + \frac{0.387 Ra_L^{1/6}}
              {[1 + (0.492/Pr)^{9/16}]^{8/27}}\right\}^2

    >>> round(float(nusselt_vertical_plate(1e9, 0.71)), 1)
    122.9
    """
    ra = np.asarray(rayleigh, dtype=float)
    root = 0.825 + 0.387 * np.sqrt(np.cbrt(ra)) / (1 + (0.492 / prandtl) ** (9 / 16)) ** (8 / 27)
    return root * root


def nusselt_horizontal_plate(rayleigh, buoyancy_lifts):
    r"""Horizontal plate, McAdams' correlations as given by Incropera eqs. 9.30-9.32 [1, 3].

    ``buoyancy_lifts`` is True for the upper surface of a hot plate or the lower surface of a cold
    one (Nu = 0.54 Ra^1/4 up to Ra = 1e7, 0.15 Ra^1/3 above); False for the lower surface of a
    hot plate or the upper surface of a cold one (Nu = 0.27 Ra^1/4, 0.15 Ra^1/3 above 1e10).
    Characteristic length: area / perimeter.

    >>> round(float(nusselt_horizontal_plate(1e6, True)), 3), round(float(nusselt_horizontal_plate(1e6, False)), 3)
    (17.076, 8.538)
    """
    ra = np.asarray(rayleigh, dtype=float)
    up = np.where(ra <= 1e7, 0.54 * ra ** 0.25, 0.15 * ra ** (1 / 3))
    down = np.where(ra <= 1e10, 0.27 * ra ** 0.25, 0.15 * ra ** (1 / 3))
    return np.where(buoyancy_lifts, up, down)


def nusselt_horizontal_cylinder(rayleigh, prandtl):
    r"""Churchill-Chu correlation for a long horizontal cylinder, Ra_D <= 1e12 [1, 2] (eq. 9.34).

    .. math:: Nu_D = \left\{0.60 + \frac{0.387 Ra_D^{1/6}}
              {[1 + (0.559/Pr)^{9/16}]^{8/27}}\right\}^2

    >>> round(float(nusselt_horizontal_cylinder(1e5, 0.71)), 3)
    7.778
    """
    ra = np.asarray(rayleigh, dtype=float)
    root = 0.60 + 0.387 * np.sqrt(np.cbrt(ra)) / (1 + (0.559 / prandtl) ** (9 / 16)) ** (8 / 27)
    return root * root


def nusselt_flat_plate_forced(reynolds, prandtl, regime="auto", critical_reynolds=5e5):
    r"""Average Nusselt number over a flat plate in parallel flow [1] (eqs. 7.30, 7.36, 7.38).

    * laminar: Nu = 0.664 Re^1/2 Pr^1/3
    * turbulent (tripped at the leading edge): Nu = 0.037 Re^4/5 Pr^1/3
    * mixed (laminar then turbulent beyond Re_c = 5e5): Nu = (0.037 Re^4/5 - 871) Pr^1/3
    * auto: laminar below Re_c, mixed above.

    Valid for 0.6 <= Pr <= 60.

    >>> round(float(nusselt_flat_plate_forced(1e5, 0.71)), 2)
    187.32
    """
    re = np.asarray(reynolds, dtype=float)
    cbrt = prandtl ** (1 / 3)
    lam = 0.664 * re ** 0.5 * cbrt
    if regime == "laminar":
        return lam
    if regime == "turbulent":
        return 0.037 * re ** 0.8 * cbrt
    # Incropera et al. [1] eq. 7.39: A = 0.037 Re_c^4/5 - 0.664 Re_c^1/2, 871 for Re_c = 5e5
    a = 871.0 if critical_reynolds == 5e5 else \
        0.037 * critical_reynolds ** 0.8 - 0.664 * critical_reynolds ** 0.5
    mixed = (0.037 * re ** 0.8 - a) * cbrt
    if regime == "mixed":
        return mixed
    return np.where(re < critical_reynolds, lam, mixed)


def natural_convection_coefficient(geometry, surface_temperature, fluid_temperature, length,
                                   surface_faces="up"):
    """Natural-convection film coefficient h [W/(m^2 K)] of air, properties at the film temperature.

    Parameters
    ----------
    geometry : {'vertical-plate', 'horizontal-plate', 'horizontal-cylinder'}
    surface_temperature, fluid_temperature : float or array [degC]
    length : float
        Height (vertical plate), area/perimeter (horizontal plate) or diameter (cylinder) [m].
    surface_faces : {'up', 'down'}
        For horizontal plates: which way the surface faces.

    Returns h >= 0 (zero when the two temperatures are equal).

    >>> round(float(natural_convection_coefficient('vertical-plate', 60.0, 20.0, 0.3)), 3)
    5.245
    """
    ts = np.asarray(surface_temperature, dtype=float)
    tf = np.asarray(fluid_temperature, dtype=float)
    ra_unit, pr, k = _film_air(0.5 * (ts + tf))
    dT = np.abs(ts - tf)
    ra = ra_unit * dT * length ** 3
    if geometry == "vertical-plate":
        nu = nusselt_vertical_plate(ra, pr)
    elif geometry == "horizontal-cylinder":
        nu = nusselt_horizontal_cylinder(ra, pr)
    elif geometry == "horizontal-plate":
        hot = ts > tf
        lifts = hot if surface_faces == "up" else ~hot
        nu = nusselt_horizontal_plate(ra, lifts)
    else:  # pragma: no cover - guarded by the registry
        raise ValueError(geometry)
    h = nu * k / length
    return np.where(dT > 0, h, _limit_at_zero(geometry, k, length)) if np.ndim(h) else (
        float(h) if dT > 0 else float(_limit_at_zero(geometry, k, length)))


def _limit_at_zero(geometry, k, length):
    """h as the temperature difference goes to zero (Ra -> 0): the conduction limit of Nu."""
    if geometry == "vertical-plate":
        nu0 = 0.825 ** 2
    elif geometry == "horizontal-cylinder":
        nu0 = 0.60 ** 2
    else:
        nu0 = 0.0
    return nu0 * k / length


def forced_convection_coefficient(velocity, surface_temperature, fluid_temperature, length,
                                  regime="auto"):
    """Forced-convection film coefficient h [W/(m^2 K)] of air over a flat plate of ``length``.

    >>> round(float(forced_convection_coefficient(2.0, 40.0, 20.0, 0.5)), 3)
    7.834
    """
    props = air_properties(0.5 * (np.asarray(surface_temperature, dtype=float)
                                  + np.asarray(fluid_temperature, dtype=float)))
    re = velocity * length / props["nu"]
    return nusselt_flat_plate_forced(re, props["Pr"], regime) * props["k"] / length


@dataclass(frozen=True)
class Correlation:
    """A named convection correlation and the keys it needs."""

    name: str
    description: str
    length_key: str
    coefficient: Callable  # (surface_T, fluid_T, params) -> h
    extra_keys: tuple = ()
    symmetric: bool = True  # False when the result depends on which side is the surface


def _h_vertical(ts, tf, p):
    return natural_convection_coefficient("vertical-plate", ts, tf, p["height"])


def _h_horizontal_up(ts, tf, p):
    return natural_convection_coefficient("horizontal-plate", ts, tf, p["length"], "up")


def _h_horizontal_down(ts, tf, p):
    return natural_convection_coefficient("horizontal-plate", ts, tf, p["length"], "down")


def _h_cylinder(ts, tf, p):
    return natural_convection_coefficient("horizontal-cylinder", ts, tf, p["diameter"])


def _h_forced(ts, tf, p):
    return forced_convection_coefficient(p["velocity"], ts, tf, p["length"],
                                         p.get("regime", "auto"))


#: name -> Correlation
CORRELATIONS: dict[str, Correlation] = {
    "vertical-plate": Correlation("vertical-plate", "natural convection, vertical plate "
                                  "(Churchill-Chu)", "height", _h_vertical),
    "horizontal-plate-up": Correlation("horizontal-plate-up", "natural convection, horizontal "
                                       "plate facing up (McAdams)", "length", _h_horizontal_up,
                                       symmetric=False),
    "horizontal-plate-down": Correlation("horizontal-plate-down", "natural convection, "
                                         "horizontal plate facing down (McAdams)", "length",
                                         _h_horizontal_down, symmetric=False),
    "horizontal-cylinder": Correlation("horizontal-cylinder", "natural convection, horizontal "
                                       "cylinder (Churchill-Chu)", "diameter", _h_cylinder),
    "flat-plate-forced": Correlation("flat-plate-forced", "forced parallel flow over a flat "
                                     "plate (laminar, turbulent or mixed)", "length", _h_forced,
                                     extra_keys=("velocity", "regime")),
}


def correlation_names() -> list[str]:
    """Names accepted by ``{ convection = { correlation = ... } }``."""
    return list(CORRELATIONS)


def get_correlation(name, where=None) -> Correlation:
    if name not in CORRELATIONS:
        from .materials import suggest

        raise InputError(f"unknown correlation {name!r}", where, suggest(name, CORRELATIONS))
    return CORRELATIONS[name]


# -- validity ranges ---------------------------------------------------------------------------
@dataclass(frozen=True)
class ValidityRange:
    """Where a correlation holds: ``low <= number <= high`` for ``number`` 'Ra', 'Re' or 'Pr'.

    ``applies`` says to which samples: 'all', 'lifts' / 'sinks' (a horizontal plate whose
    buoyancy lifts the fluid off it, or presses it against it), 'laminar' (Ra at most 1e7 on a
    lifting plate, where eq. 9.30 of [1] asks Pr >= 0.7). ``source`` names where the range is
    stated.
    """

    number: str
    low: float
    high: float
    source: str
    applies: str = "all"


_CC_PLATE = ("Churchill & Chu (1975) [2], vertical plate: data correlated from Ra = 1e-1 to "
             "1e12 (from memory)")
_CC_CYLINDER = ("Churchill & Chu (1975) [2], horizontal cylinder: Ra_D from 1e-5 (their lower "
                "limit) to 1e12 (Incropera et al. [1] eq. 9.34)")
_MCADAMS_UP = "McAdams [3] as in Incropera et al. [1] eqs. 9.30-9.31: 1e4 <= Ra <= 1e11"
_MCADAMS_UP_PR = "Incropera et al. [1] eq. 9.30: Pr >= 0.7 (Ra <= 1e7)"
_MCADAMS_DOWN = ("McAdams [3] as in Incropera et al. [1] (6th ed.) eq. 9.32: 1e5 <= Ra <= 1e10 "
                 "(from memory)")
_FLAT_PR = "Incropera et al. [1] eqs. 7.30, 7.36, 7.38: 0.6 <= Pr <= 60"

#: correlation name (and, for flat-plate-forced, regime) -> its published validity ranges
VALIDITY: dict[str, tuple[ValidityRange, ...]] = {
    "vertical-plate": (ValidityRange("Ra", 1e-1, 1e12, _CC_PLATE),),
    "horizontal-cylinder": (ValidityRange("Ra", 1e-5, 1e12, _CC_CYLINDER),),
    "horizontal-plate": (
        ValidityRange("Ra", 1e4, 1e11, _MCADAMS_UP, "lifts"),
        ValidityRange("Pr", 0.7, np.inf, _MCADAMS_UP_PR, "laminar"),
        ValidityRange("Ra", 1e5, 1e10, _MCADAMS_DOWN, "sinks"),
    ),
    "flat-plate-forced:laminar": (
        ValidityRange("Re", 0.0, 5e5, "Incropera et al. [1] eq. 7.30: laminar up to the "
                      "transition, Re_c = 5e5"),
        ValidityRange("Pr", 0.6, np.inf, "Incropera et al. [1] eq. 7.30: Pr >= 0.6")),
    "flat-plate-forced:turbulent": (
        ValidityRange("Re", 0.0, 1e8, "Incropera et al. [1] eq. 7.36: Re <= 1e8"),
        ValidityRange("Pr", 0.6, 60.0, _FLAT_PR)),
    "flat-plate-forced:mixed": (
        ValidityRange("Re", 0.0, 1e8, "Incropera et al. [1] eq. 7.38: Re_c <= Re <= 1e8"),
        ValidityRange("Pr", 0.6, 60.0, _FLAT_PR)),
}
VALIDITY["flat-plate-forced:auto"] = VALIDITY["flat-plate-forced:mixed"]

#: relative amount by which a number may pass a published (approximate) bound unflagged
VALIDITY_MARGIN = 0.05

_GEOMETRY = {"vertical-plate": "vertical-plate", "horizontal-plate-up": "horizontal-plate",
             "horizontal-plate-down": "horizontal-plate",
             "horizontal-cylinder": "horizontal-cylinder"}


def validity_ranges(name: str, regime: str = "auto") -> tuple[ValidityRange, ...]:
    """The published validity ranges of correlation ``name`` (see :data:`VALIDITY`).

    >>> [(r.number, r.low, r.high) for r in validity_ranges("vertical-plate")]
    [('Ra', 0.1, 1000000000000.0)]
    """
    get_correlation(name)
    if name == "flat-plate-forced":
        return VALIDITY[f"flat-plate-forced:{regime}"]
    return VALIDITY[_GEOMETRY[name]]


def dimensionless_numbers(name: str, surface_temperature, fluid_temperature, params) -> dict:
    """The numbers a correlation's validity is stated in, at the film temperature.

    Natural convection: ``Ra`` = g beta |T_s - T_f| L^3 / (nu alpha) and ``Pr``; forced:
    ``Re`` = v L / nu and ``Pr``; arrays shaped like the temperatures [degC]. ``params`` holds
    the correlation's length key (and ``velocity``), as in a scenario's convection part.

    >>> n = dimensionless_numbers("flat-plate-forced", 40.0, 20.0, {"length": 0.5, "velocity": 2.0})
    >>> round(float(n["Re"]))
    62576
    """
    corr = get_correlation(name)
    ts = np.asarray(surface_temperature, dtype=float)
    tf = np.asarray(fluid_temperature, dtype=float)
    props = air_properties(0.5 * (ts + tf))
    length = params[corr.length_key]
    if name == "flat-plate-forced":
        return {"Re": params["velocity"] * length / props["nu"], "Pr": props["Pr"]}
    ra = GRAVITY * props["beta"] * np.abs(ts - tf) * length ** 3 / (props["nu"] * props["alpha"])
    return {"Ra": ra, "Pr": props["Pr"]}


def outside_validity(name: str, surface_temperature, fluid_temperature, params) -> list:
    """Where correlation ``name`` leaves its published ranges, sample by sample.

    Returns a list of (ValidityRange, values of its number, mask of the samples outside the
    range by more than :data:`VALIDITY_MARGIN`). Samples where the surface and the fluid are at
    the same temperature are never outside (no correlation applies there, and the film carries
    no heat).

    >>> out = outside_validity("horizontal-plate-up", [20.001, 60.0], 20.0, {"length": 0.1})
    >>> [(r.number, r.applies, m.tolist()) for r, _, m in out if m.any()]
    [('Ra', 'lifts', [True, False])]
    """
    ts = np.asarray(surface_temperature, dtype=float)
    tf = np.asarray(fluid_temperature, dtype=float)
    ts, tf = np.broadcast_arrays(ts, tf)
    numbers = dimensionless_numbers(name, ts, tf, params)
    hot = ts > tf
    lifts = {"horizontal-plate-up": hot, "horizontal-plate-down": ~hot}.get(name)
    moving = ts != tf
    out = []
    for rng in validity_ranges(name, params.get("regime", "auto")):
        values = numbers[rng.number]
        applies = moving.copy()
        if rng.applies == "lifts":
            applies &= lifts
        elif rng.applies == "sinks":
            applies &= ~lifts
        elif rng.applies == "laminar":
            applies &= lifts & (numbers["Ra"] <= 1e7)
        low, high = rng.low * (1 - VALIDITY_MARGIN), rng.high * (1 + VALIDITY_MARGIN)
        out.append((rng, values, applies & ((values < low) | (values > high))))
    return out
