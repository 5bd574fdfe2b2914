"""Periodic thermal characteristics of a layered wall by the heat transfer matrix method of
ISO 13786 (thermal performance of building components, dynamic thermal characteristics).

A layered construction under a sinusoidal temperature of period T (a day, usually) is described by
the 2 x 2 complex *heat transfer matrix* Z linking the amplitudes of temperature and heat flow
density on its two sides, [theta_2, q_2] = Z [theta_1, q_1]. Side 1 is the first layer's side (the
inside, by the standard's habit), side 2 the last layer's.

* A homogeneous layer of thickness d, conductivity lambda, density rho and specific heat c, with
  the periodic penetration depth delta = sqrt(lambda T / (pi rho c)) and xi = d / delta:

      Z11 = Z22 = cosh((1 + i) xi)
      Z12 = -delta / (lambda (1 + i)) sinh((1 + i) xi)
      Z21 = -lambda (1 + i) / delta sinh((1 + i) xi)

  (the standard writes the same matrix with real functions: Z11 = cosh xi cos xi + i sinh xi sin
  xi, and so on); a layer without heat capacity is [[1, -R], [0, 1]] with R = d / lambda, and so
  is a surface (boundary layer) of resistance R_s.
* The construction from environment to environment: Z = Z_s2 Z_N ... Z_1 Z_s1.
* Periodic thermal admittances Y11 = -Z11 / Z12, Y22 = -Z22 / Z12 [W/(m^2 K)]; periodic thermal
  transmittance Y12 = -1 / Z12 [W/(m^2 K)].
* Decrement factor f = |Y12| / U, U the steady-state thermal transmittance (1 / the sum of all
  resistances); its time shift, reported here as the lag of the flow on side 1 behind the
  temperature on side 2, (T / 2 pi) (-arg Y12) taken in [0, T).
* Areal heat capacities kappa1 = (T / 2 pi) |(Z11 - 1) / Z12|, kappa2 = (T / 2 pi)
  |(Z22 - 1) / Z12| [J/(m^2 K)].

These are properties of the wall alone, between two environments held by surface resistances:
not the amplitude ratio of a node in a network (``Result.periodic_response``), which includes the
room, its gains and its other links.

Source: ISO 13786:2017, clause 6 (heat transfer matrix) and clause 7 (dynamic thermal
characteristics). Surface resistances default to ISO 6946's R_si = 0.13 and R_se = 0.04 m^2 K/W
(horizontal heat flow).
"""

from __future__ import annotations

import cmath
import math
from dataclasses import dataclass, field

from .errors import InputError

__all__ = ["Layer", "PeriodicCharacteristics", "layer_matrix", "resistance_matrix",
           "periodic_characteristics", "layers_of_link"]

_DAY = 86400.0


@dataclass(frozen=True)
class Layer:
    """A homogeneous plane layer, SI: thickness d [m], conductivity [W/(m K)], density [kg/m^3]
    and specific heat [J/(kg K)] (both 0, or None, for a layer without heat capacity); or a
    pure resistance [m^2 K/W] (``resistance``, with thickness 0)."""

    thickness: float
    conductivity: float = math.inf
    density: float | None = None
    specific_heat: float | None = None
    resistance: float | None = None
    name: str = ""

    @property
    def area_resistance(self) -> float:
        """R [m^2 K/W]."""
        if self.resistance is not None:
            return float(self.resistance)
        return self.thickness / self.conductivity

    @property
    def is_massive(self) -> bool:
        return bool(self.density) and bool(self.specific_heat) and self.thickness > 0


def resistance_matrix(r: float) -> list[list[complex]]:
    """Heat transfer matrix of a resistance without heat capacity [[1, -R], [0, 1]]."""
    return [[1.0 + 0j, complex(-r)], [0j, 1.0 + 0j]]


def layer_matrix(layer: Layer, period: float = _DAY) -> list[list[complex]]:
    """Heat transfer matrix of one layer for a period [s] (see the module docstring)."""
    if not layer.is_massive:
        return resistance_matrix(layer.area_resistance)
    lam, d = layer.conductivity, layer.thickness
    delta = math.sqrt(lam * period / (math.pi * layer.density * layer.specific_heat))
    x = (1 + 1j) * d / delta
    k = (1 + 1j) / delta
    return [[cmath.cosh(x), -cmath.sinh(x) / (lam * k)],
            [-lam * k * cmath.sinh(x), cmath.cosh(x)]]


def _product(a, b):
    return [[a[0][0] * b[0][0] + a[0][1] * b[1][0], a[0][0] * b[0][1] + a[0][1] * b[1][1]],
            [a[1][0] * b[0][0] + a[1][1] * b[1][0], a[1][0] * b[0][1] + a[1][1] * b[1][1]]]


@dataclass
class PeriodicCharacteristics:
    """The dynamic thermal characteristics of a construction (ISO 13786, clause 7).

    Attributes
    ----------
    period : float
        [s].
    matrix : list
        Z from environment 1 to environment 2 (complex 2 x 2).
    u_value : float
        Steady-state thermal transmittance U [W/(m^2 K)].
    admittance_1, admittance_2 : complex
        Y11, Y22 [W/(m^2 K)].
    transmittance : complex
        Periodic thermal transmittance Y12 [W/(m^2 K)].
    layers : list of Layer
    r_s1, r_s2 : float
        Surface resistances [m^2 K/W].
    """

    period: float
    matrix: list
    u_value: float
    layers: list = field(default_factory=list)
    r_s1: float = 0.13
    r_s2: float = 0.04

    @property
    def admittance_1(self) -> complex:
        return -self.matrix[0][0] / self.matrix[0][1]

    @property
    def admittance_2(self) -> complex:
        return -self.matrix[1][1] / self.matrix[0][1]

    @property
    def transmittance(self) -> complex:
        return -1.0 / self.matrix[0][1]

    @property
    def decrement_factor(self) -> float:
        """f = |Y12| / U [-]."""
        return abs(self.transmittance) / self.u_value

    def _lag(self, value: complex) -> float:
        return ((-cmath.phase(value)) % (2 * math.pi)) * self.period / (2 * math.pi)

    @property
    def time_shift(self) -> float:
        """Lag [s] of the flow on side 1 behind the temperature on side 2, in [0, period)."""
        return self._lag(self.transmittance)

    @property
    def admittance_1_lead(self) -> float:
        """Time [s] by which the flow into side 1 leads the temperature there, in [0, period)."""
        return (cmath.phase(self.admittance_1) % (2 * math.pi)) * self.period / (2 * math.pi)

    @property
    def areal_heat_capacity_1(self) -> float:
        """kappa1 [J/(m^2 K)]."""
        z = self.matrix
        return self.period / (2 * math.pi) * abs((z[0][0] - 1) / z[0][1])

    @property
    def areal_heat_capacity_2(self) -> float:
        """kappa2 [J/(m^2 K)]."""
        z = self.matrix
        return self.period / (2 * math.pi) * abs((z[1][1] - 1) / z[0][1])

    def report(self) -> str:
        """The characteristics as a short plain-text report."""
        from .units import format_duration, significant

        lines = [f"periodic thermal characteristics (ISO 13786), period "
                 f"{format_duration(self.period)}, R_s1 = {self.r_s1:g} and R_s2 = "
                 f"{self.r_s2:g} m^2*K/W",
                 f"  U (steady state)                  {significant(self.u_value)} W/(m^2*K)",
                 f"  periodic transmittance |Y12|      {significant(abs(self.transmittance))} "
                 f"W/(m^2*K)",
                 f"  decrement factor f = |Y12|/U      {significant(self.decrement_factor)}",
                 f"  time shift (side 1 lags side 2)   {format_duration(self.time_shift)}",
                 f"  admittance |Y11| (side 1)         {significant(abs(self.admittance_1))} "
                 f"W/(m^2*K), leading by {format_duration(self.admittance_1_lead)}",
                 f"  admittance |Y22| (side 2)         {significant(abs(self.admittance_2))} "
                 f"W/(m^2*K)",
                 f"  areal heat capacity kappa1        "
                 f"{significant(self.areal_heat_capacity_1 / 1000)} kJ/(m^2*K)",
                 f"  areal heat capacity kappa2        "
                 f"{significant(self.areal_heat_capacity_2 / 1000)} kJ/(m^2*K)",
                 "  (properties of the wall between two environments; not a node's amplitude "
                 "ratio in a network)"]
        return "\n".join(lines)


def periodic_characteristics(layers, period: float = _DAY, r_s1: float = 0.13,
                             r_s2: float = 0.04) -> PeriodicCharacteristics:
    """The characteristics of ``layers`` (from side 1 to side 2) between surface resistances
    ``r_s1`` and ``r_s2`` [m^2 K/W], for a period [s] (ISO 13786, clauses 6 and 7)."""
    if not layers:
        raise InputError("a construction needs at least one layer", "layers")
    if not (period > 0 and math.isfinite(period)):
        raise InputError(f"the period must be a positive time, got {period!r}", "period")
    z = resistance_matrix(r_s1)
    for layer in layers:
        z = _product(layer_matrix(layer, period), z)
    z = _product(resistance_matrix(r_s2), z)
    total = r_s1 + r_s2 + sum(layer.area_resistance for layer in layers)
    return PeriodicCharacteristics(period, z, 1.0 / total, list(layers), r_s1, r_s2)


def layers_of_link(link) -> tuple[list[Layer], float | None, float | None]:
    """The layers of a link (from its first point to its second) and the surface resistances
    its own films give at either end (None where the link has no film there).

    Plane layers (``conduction``) become layers (massive with density and specific heat);
    ``contact`` parts and plain resistances per area become resistances; a ``convection`` part
    with a fixed h at either end is that side's surface resistance 1/h. Anything else (radial
    shells, radiation, a correlation film, a film between layers) has no place in the method and
    is refused.
    """
    parts = list(link.parts)
    r_first = r_last = None
    if parts and parts[0].kind == "convection" and "h" in parts[0].params:
        r_first = 1.0 / parts[0].params["h"]
        parts = parts[1:]
    if parts and parts[-1].kind == "convection" and "h" in parts[-1].params:
        r_last = 1.0 / parts[-1].params["h"]
        parts = parts[:-1]
    layers = []
    for part in parts:
        p = part.params
        if part.kind == "conduction" and "k" in p and "thickness" in p:
            layers.append(Layer(p["thickness"], p["k"], p.get("density"), p.get("specific_heat"),
                                name=part.where))
        elif part.kind == "contact" and part.area:
            layers.append(Layer(0.0, resistance=part.resistance * part.area, name=part.where))
        else:
            raise InputError(f"a {part.kind} part has no place in a plane construction "
                             "(ISO 13786 takes plane layers between two surfaces)", part.where
                             or link.name)
    if not layers:
        raise InputError("the link holds no plane layer", link.name)
    return layers, r_first, r_last
