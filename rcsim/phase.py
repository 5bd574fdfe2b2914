"""Phase change: the enthalpy curve of a melting/freezing mass.

A phase-change node carries its enthalpy H [J] as state, so latent heat is conserved exactly: the
temperature follows from H through a piecewise-linear curve,

* solid, T < T_low:            H = m c_s (T - T_low)
* melting, T_low <= T <= T_high: H = m (c_s + L / (T_high - T_low)) (T - T_low)
* liquid, T > T_high:          H = m (c_s (T_high - T_low) + L) + m c_l (T - T_high)

(H = 0 at the start of melting). A zero-width range (T_low = T_high) is allowed: the temperature
then stays at the melting point while H crosses the latent band [0, m L]. A single melting
temperature T_m (as handbooks give it) melts over T_m +- 0.25 K (:data:`MELTING_HALF_WIDTH`).

Not modelled: supercooling (a liquid that stays liquid below its freezing point), hysteresis
between melting and freezing temperatures, the dependence of the melting range on the rate, and
the conduction inside the pack (the node is lumped: its surface and core share one temperature).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .errors import InputError
from .units import to_si

__all__ = ["PhaseChange", "make_phase_change", "PHASE_KEYS", "MELTING_HALF_WIDTH"]

PHASE_KEYS = {"latent_heat", "melting", "specific_heat_solid", "specific_heat_liquid",
              "liquid_fraction", "material"}

#: A single melting temperature T_m (``melting = "0 degC"``) melts over [T_m - 0.25 K,
#: T_m + 0.25 K] [K]: narrow enough for a pure substance's plateau (0.5 K wide), wide enough that
#: the temperature still follows the enthalpy smoothly (common practice for enthalpy methods).
MELTING_HALF_WIDTH = 0.25


@dataclass
class PhaseChange:
    """Enthalpy curve of a mass m that melts between ``melting_low`` and ``melting_high`` [degC].

    Parameters are SI: latent_heat [J/kg], specific heats [J/(kg K)]. ``mass`` [kg] is set when the
    node is built. ``initial_liquid_fraction`` resolves the state of a node that starts exactly at
    a zero-width melting point.

    >>> pc = PhaseChange(333.55e3, 0.0, 0.0, 2050.0, 4180.0, mass=1.0)
    >>> pc.temperature(pc.enthalpy(-5.0))[0], pc.temperature(1000.0)[0]
    (-5.0, 0.0)
    >>> round(pc.liquid_fraction(1000.0), 6)
    0.002998
    """

    latent_heat: float
    melting_low: float
    melting_high: float
    specific_heat_solid: float
    specific_heat_liquid: float
    mass: float = 1.0
    initial_liquid_fraction: float | None = None

    # -- derived quantities ------------------------------------------------------------------
    @property
    def width(self) -> float:
        return self.melting_high - self.melting_low

    @property
    def h_melt_end(self) -> float:
        """Enthalpy [J] at the end of melting."""
        return self.mass * (self.specific_heat_solid * self.width + self.latent_heat)

    def enthalpy(self, T: float) -> float:
        """H [J] at temperature T [degC] (solid at a zero-width melting point unless told)."""
        m, cs, cl = self.mass, self.specific_heat_solid, self.specific_heat_liquid
        lo, hi = self.melting_low, self.melting_high
        if T < lo:
            return m * cs * (T - lo)
        if T > hi:
            return self.h_melt_end + m * cl * (T - hi)
        if self.width == 0.0:
            f = self.initial_liquid_fraction or 0.0
            return f * m * self.latent_heat
        return m * (cs + self.latent_heat / self.width) * (T - lo)

    def temperature(self, H: float):
        """(T [degC], dT/dH [K/J]) for enthalpy H."""
        m, cs, cl = self.mass, self.specific_heat_solid, self.specific_heat_liquid
        if H < 0.0:
            return self.melting_low + H / (m * cs), 1.0 / (m * cs)
        top = self.h_melt_end
        if H > top:
            return self.melting_high + (H - top) / (m * cl), 1.0 / (m * cl)
        if self.width == 0.0:
            return self.melting_low, 0.0
        slope = 1.0 / (m * (cs + self.latent_heat / self.width))
        return self.melting_low + H * slope, slope

    def temperature_array(self, H: np.ndarray) -> np.ndarray:
        m, cs, cl = self.mass, self.specific_heat_solid, self.specific_heat_liquid
        H = np.asarray(H, dtype=float)
        top = self.h_melt_end
        solid = self.melting_low + H / (m * cs)
        liquid = self.melting_high + (H - top) / (m * cl)
        if self.width == 0.0:
            mid = np.full_like(H, self.melting_low)
        else:
            mid = self.melting_low + H / (m * (cs + self.latent_heat / self.width))
        return np.where(H < 0.0, solid, np.where(H > top, liquid, mid))

    def liquid_fraction(self, H: float) -> float:
        return float(self.liquid_fraction_array(np.asarray([H]))[0])

    def liquid_fraction_array(self, H: np.ndarray) -> np.ndarray:
        """Liquid fraction [-] for enthalpy H: 0 solid, 1 liquid, linear across the melting band.

        In the band H = f h_end with h_end = m (c_s (T_high - T_low) + L), so f = H / h_end.
        """
        return np.clip(np.asarray(H, dtype=float) / self.h_melt_end, 0.0, 1.0)


def make_phase_change(spec, where: str, material=None) -> PhaseChange:
    """Build a :class:`PhaseChange` from a mapping (scenario or API) or return one unchanged.

    Keys: ``latent_heat``, ``melting = [low, high]`` (or one melting temperature T_m, which melts
    over T_m +- :data:`MELTING_HALF_WIDTH` = 0.25 K), ``specific_heat_solid``,
    ``specific_heat_liquid``, optional ``liquid_fraction`` (initial, for a node starting at a
    zero-width melting point) and ``material`` (a phase-change material of the table, whose values
    fill the keys not given). The node's own ``material`` is used the same way.
    """
    if isinstance(spec, PhaseChange):
        import dataclasses

        return dataclasses.replace(spec)  # the node sets its mass: never change the caller's
    if isinstance(spec, str):
        spec = {"material": spec}
    if not isinstance(spec, dict):
        raise InputError("phase_change must be a table of keys or a material name", where)
    from .materials import get_material, suggest

    for key in spec:
        if key not in PHASE_KEYS:
            raise InputError(f"unknown key {key!r}", where, suggest(key, sorted(PHASE_KEYS)))
    if "material" in spec:
        material = get_material(spec["material"], f"{where}.material")
    values = {}
    if material is not None and material.is_phase_change:
        values = dict(latent_heat=material.latent_heat,
                      melting=[material.melting_low, material.melting_high],
                      specific_heat_solid=material.specific_heat_solid,
                      specific_heat_liquid=material.specific_heat_liquid)
    elif material is not None and "material" in spec:
        raise InputError(f"material {material.name!r} has no latent heat", f"{where}.material",
                         "use a phase-change material, e.g. water-ice, gel-pack")
    values.update({k: v for k, v in spec.items() if k != "material"})
    for key in ("latent_heat", "melting", "specific_heat_solid", "specific_heat_liquid"):
        if key not in values:
            raise InputError(f"missing key {key!r}", where)
    latent = to_si(values["latent_heat"], "specific_energy", f"{where}.latent_heat")
    if latent <= 0:
        raise InputError("latent_heat must be positive", f"{where}.latent_heat")
    lo, hi = _melting_range(values["melting"], f"{where}.melting")
    if lo > hi:
        raise InputError(f"melting range is inverted ({lo:g} degC above {hi:g} degC)",
                         f"{where}.melting", "give [low, high]")
    cs = to_si(values["specific_heat_solid"], "specific_heat", f"{where}.specific_heat_solid")
    cl = to_si(values["specific_heat_liquid"], "specific_heat", f"{where}.specific_heat_liquid")
    for c, key in ((cs, "specific_heat_solid"), (cl, "specific_heat_liquid")):
        if c <= 0:
            raise InputError(f"{key} must be positive", f"{where}.{key}")
    frac = None
    if "liquid_fraction" in values:
        frac = to_si(values["liquid_fraction"], "dimensionless", f"{where}.liquid_fraction")
        if not (0.0 <= frac <= 1.0):
            raise InputError("liquid_fraction must be between 0 and 1",
                             f"{where}.liquid_fraction")
    if not all(math.isfinite(x) for x in (latent, lo, hi, cs, cl)):  # pragma: no cover
        raise InputError("phase-change values must be finite", where)
    return PhaseChange(latent, lo, hi, cs, cl, 1.0, frac)


def _melting_range(melt, where: str) -> tuple[float, float]:
    """(low, high) [degC] of ``melting``: a list [low, high], or one melting temperature T_m
    taken as [T_m - 0.25 K, T_m + 0.25 K] (:data:`MELTING_HALF_WIDTH`)."""
    if isinstance(melt, (list, tuple)):
        if len(melt) != 2:
            raise InputError(f"melting must be one temperature or a list of two temperatures "
                             f"[low, high], got a list of {len(melt)}", where,
                             'write e.g. melting = "0 degC" or melting = ["-0.5 degC", "0 degC"]')
        lo = to_si(melt[0], "temperature", f"{where}[0]")
        hi = to_si(melt[1], "temperature", f"{where}[1]")
    elif isinstance(melt, (int, float, str)) and not isinstance(melt, bool):
        mid = to_si(melt, "temperature", where)
        lo, hi = mid - MELTING_HALF_WIDTH, mid + MELTING_HALF_WIDTH
    else:
        raise InputError("melting must be one temperature or a list of two temperatures "
                         "[low, high]", where, 'write e.g. melting = "0 degC"')
    if lo <= -273.15:
        raise InputError(f"melting temperature {lo:g} degC is at or below absolute zero", where)
    return lo, hi
