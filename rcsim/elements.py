"""Element physics: thermal resistances and heat capacities, SI floats in and out.

Every function here is pure: SI numbers (or numpy arrays) in, SI out, no units, no state. Radiation
works in kelvin internally; its temperature arguments are in degC like everywhere else in rcsim.

References
----------
.. [1] F. P. Incropera, D. P. DeWitt, T. L. Bergman, A. S. Lavine, *Fundamentals of Heat and Mass
   Transfer*, 6th ed., Wiley, 2007, ch. 1.2 and 3.1-3.4 (plane wall, cylinder, sphere, contact,
   radiation coefficient).
.. [2] ISO 6946:2017, *Building components and building elements - Thermal resistance and thermal
   transmittance - Calculation methods*.
.. [3] Y. A. Cengel, A. J. Ghajar, *Heat and Mass Transfer: Fundamentals and Applications*, 5th ed.,
   McGraw-Hill, 2015, ch. 3 (thermal resistance networks).
"""

from __future__ import annotations

import numpy as np
from scipy.constants import Stefan_Boltzmann, zero_Celsius

__all__ = [
    "STEFAN_BOLTZMANN",
    "resistance_plane_layer",
    "resistance_cylinder_shell",
    "resistance_sphere_shell",
    "resistance_convection",
    "radiation_coefficient_linearised",
    "resistance_radiation_linearised",
    "resistance_contact",
    "resistance_series",
    "resistance_parallel",
    "capacity_from_mass",
    "capacity_from_volume",
    "biot_number",
]

#: Stefan-Boltzmann constant [W/(m^2*K^4)], CODATA value as carried by scipy.constants.
STEFAN_BOLTZMANN = Stefan_Boltzmann


def _plain(value):
    """A Python float for a scalar result, the array otherwise."""
    return float(value) if np.ndim(value) == 0 else value


def resistance_plane_layer(thickness, conductivity, area):
    r"""Conduction resistance of a plane layer [K/W].

    .. math:: R = \frac{L}{k A}

    Parameters
    ----------
    thickness : float
        Layer thickness L [m], > 0.
    conductivity : float
        Thermal conductivity k [W/(m*K)], > 0.
    area : float
        Area normal to the heat flow A [m^2], > 0.

    Notes
    -----
    One-dimensional steady conduction through a homogeneous layer with constant conductivity
    (Fourier's law); valid where edge effects are negligible (lateral size much larger than L).
    Source: Incropera et al. [1]_ eq. 3.6; ISO 6946 [2]_ clause 6.7.1 (R = d/lambda per unit area).

    Examples
    --------
    50 mm of insulation with k = 0.033 W/(m*K) over 0.8 m^2:

    >>> round(resistance_plane_layer(0.05, 0.033, 0.8), 6)
    1.893939
    """
    return thickness / (conductivity * area)


def resistance_cylinder_shell(inner_radius, outer_radius, conductivity, length):
    r"""Radial conduction resistance of a cylindrical shell [K/W].

    .. math:: R = \frac{\ln(r_2 / r_1)}{2 \pi k L}

    Parameters
    ----------
    inner_radius, outer_radius : float
        Radii r1 < r2 [m].
    conductivity : float
        k [W/(m*K)].
    length : float
        Axial length L [m].

    Notes
    -----
    Steady radial conduction, constant k, no axial flow. Source: Incropera et al. [1]_ eq. 3.33.

    Examples
    --------
    A 20 mm pipe insulation shell (r 30 mm to 50 mm), k = 0.04 W/(m*K), 1 m long:

    >>> round(resistance_cylinder_shell(0.03, 0.05, 0.04, 1.0), 6)
    2.032511
    """
    return _plain(np.log(outer_radius / inner_radius) / (2.0 * np.pi * conductivity * length))


def resistance_sphere_shell(inner_radius, outer_radius, conductivity):
    r"""Radial conduction resistance of a spherical shell [K/W].

    .. math:: R = \frac{1}{4 \pi k} \left( \frac{1}{r_1} - \frac{1}{r_2} \right)

    Notes
    -----
    Steady radial conduction, constant k. Source: Incropera et al. [1]_ eq. 3.41.

    Examples
    --------
    >>> round(resistance_sphere_shell(0.1, 0.15, 0.05), 6)
    5.305165
    """
    return _plain((1.0 / inner_radius - 1.0 / outer_radius) / (4.0 * np.pi * conductivity))


def resistance_convection(heat_transfer_coefficient, area):
    r"""Convection film resistance [K/W].

    .. math:: R = \frac{1}{h A}

    Notes
    -----
    Newton's law of cooling with a given film coefficient h [W/(m^2*K)]. Source: Incropera et
    al. [1]_ eq. 3.9. ISO 6946 [2]_ tabulates surface resistances R_s = 1/h per unit area
    (horizontal heat flow: Rsi = 0.13, Rse = 0.04 m^2*K/W).

    Examples
    --------
    >>> resistance_convection(10.0, 0.5)
    0.2
    """
    return 1.0 / (heat_transfer_coefficient * area)


def radiation_coefficient_linearised(emissivity, surface_temperature, surroundings_temperature):
    r"""Linearised radiation heat transfer coefficient [W/(m^2*K)].

    .. math:: h_r = \varepsilon \sigma (T_s^2 + T_\infty^2)(T_s + T_\infty)

    with T in kelvin, so that :math:`h_r (T_s - T_\infty) = \varepsilon\sigma(T_s^4 - T_\infty^4)`
    exactly.

    Parameters
    ----------
    emissivity : float
        Grey surface emissivity, 0 < eps <= 1.
    surface_temperature, surroundings_temperature : float
        Temperatures [degC] (converted to kelvin inside).

    Notes
    -----
    Small grey surface in large isothermal surroundings. Source: Incropera et al. [1]_ eq. 1.9.

    Examples
    --------
    A black surface at 30 degC facing surroundings at 20 degC:

    >>> round(radiation_coefficient_linearised(1.0, 30.0, 20.0), 4)
    6.0131
    """
    ts = np.asarray(surface_temperature, dtype=float) + zero_Celsius
    tinf = np.asarray(surroundings_temperature, dtype=float) + zero_Celsius
    return _plain(emissivity * STEFAN_BOLTZMANN * (ts * ts + tinf * tinf) * (ts + tinf))


def resistance_radiation_linearised(emissivity, area, surface_temperature,
                                    surroundings_temperature):
    r"""Linearised radiation resistance 1/(h_r A) [K/W].

    See :func:`radiation_coefficient_linearised` for h_r. Source: Incropera et al. [1]_ eq. 3.13.

    Examples
    --------
    >>> round(resistance_radiation_linearised(0.9, 2.0, 30.0, 20.0), 5)
    0.09239
    """
    return 1.0 / (radiation_coefficient_linearised(emissivity, surface_temperature,
                                                   surroundings_temperature) * area)


def resistance_contact(area_resistance, area):
    r"""Thermal contact resistance R''/A [K/W].

    .. math:: R = \frac{R''_{tc}}{A}

    Parameters
    ----------
    area_resistance : float
        Contact resistance per unit area R''_tc [m^2*K/W] (typ. 1e-5 to 1e-3 for metal joints).
    area : float
        Contact area [m^2].

    Notes
    -----
    Source: Incropera et al. [1]_ eq. 3.20 and Table 3.1.

    Examples
    --------
    >>> resistance_contact(2e-4, 0.01)
    0.02
    """
    return area_resistance / area


def resistance_series(resistances):
    r"""Resistances in series [K/W]: :math:`R = \sum_i R_i`.

    Source: Incropera et al. [1]_ eq. 3.18.

    >>> resistance_series([0.1, 0.2, 0.3])
    0.6000000000000001
    """
    return float(np.sum(np.asarray(resistances, dtype=float)))


def resistance_parallel(resistances):
    r"""Resistances in parallel [K/W]: :math:`1/R = \sum_i 1/R_i`.

    Source: Incropera et al. [1]_ section 3.1.3 (composite walls, parallel paths).

    >>> resistance_parallel([2.0, 2.0])
    1.0
    """
    r = np.asarray(resistances, dtype=float)
    return float(1.0 / np.sum(1.0 / r))


def capacity_from_mass(mass, specific_heat):
    r"""Heat capacity C = m c_p [J/K].

    >>> capacity_from_mass(2.0, 4180.0)
    8360.0
    """
    return mass * specific_heat


def capacity_from_volume(volume, density, specific_heat):
    r"""Heat capacity C = V rho c_p [J/K].

    >>> capacity_from_volume(0.001, 1000.0, 4180.0)
    4180.0
    """
    return volume * density * specific_heat


def biot_number(heat_transfer_coefficient, characteristic_length, conductivity):
    r"""Biot number Bi = h L / k [-].

    A body may be treated as one lumped node when Bi < 0.1 (Incropera et al. [1]_ eq. 5.10).

    >>> biot_number(10.0, 0.1, 1.0)
    1.0
    """
    return heat_transfer_coefficient * characteristic_length / conductivity
