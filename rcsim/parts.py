"""Link parts: the physical pieces a link is made of, in series.

A part is described by a one-key mapping, the same in a scenario file and in Python::

    {"conduction": {"k": "0.033 W/(m*K)", "thickness": "50 mm", "area": "0.8 m^2"}}
    {"convection": {"h": "10 W/(m^2*K)", "area": "0.9 m^2"}}
    {"resistance": "2.5 K/W"}

:func:`make_part` checks the keys (unknown ones are refused with the nearest valid key suggested),
converts units and computes the part's resistance with :mod:`rcsim.elements`. A conduction part
with ``slices`` (or an explicit density and specific heat) stores heat: the network turns it into
a ladder of internal nodes.

To add a part kind: write its physics in :mod:`rcsim.elements`, add a builder here and register it
in ``PART_KINDS`` with its schema.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Callable

from . import elements
from .errors import InputError
from .materials import get_material, suggest
from .units import to_si

__all__ = ["Part", "make_part", "part_kinds", "PART_KINDS", "check_keys"]


@dataclass
class Part:
    """One series element of a link.

    Attributes
    ----------
    kind : str
        Registered kind name.
    resistance : float
        Resistance of the whole part [K/W].
    area : float or None
        Area normal to the flow [m^2] where the part has one.
    capacity : float
        Heat capacity of the part [J/K] (0 unless it is a massive layer).
    slices : int
        Number of internal nodes the part becomes (0: a pure resistance).
    params : dict
        The SI parameters, for display and for the Biot check.
    where : str
        Key path of the part.
    """

    kind: str
    resistance: float
    area: float | None = None
    capacity: float = 0.0
    slices: int = 0
    params: dict = field(default_factory=dict)
    where: str = ""
    law: object | None = None  # a rcsim.laws law when the part is nonlinear

    @property
    def is_massive(self) -> bool:
        return self.slices > 0

    @property
    def is_nonlinear(self) -> bool:
        return self.law is not None

    def describe(self) -> str:
        keys = ", ".join(f"{k}={v:.4g}" for k, v in self.params.items() if isinstance(v, float))
        names = ", ".join(f"{k}={v}" for k, v in self.params.items() if isinstance(v, str))
        keys = ", ".join(x for x in (names, keys) if x)
        extra = f", {self.slices} slice(s), C={self.capacity:.4g} J/K" if self.slices else ""
        r = "nonlinear" if self.is_nonlinear else f"R={self.resistance:.4g} K/W"
        return f"{self.kind}({keys}) {r}{extra}"


def check_keys(spec: dict, allowed, required, where: str) -> None:
    """Refuse unknown keys (suggesting the nearest) and report missing ones."""
    if not isinstance(spec, dict):
        raise InputError(f"expected a table of keys, got {type(spec).__name__} {spec!r:.60}", where)
    for key in spec:
        if key not in allowed:
            raise InputError(f"unknown key {key!r}", where, suggest(key, sorted(allowed)))
    for key in required:
        if key not in spec:
            raise InputError(f"missing key {key!r}", where)


def _positive(value, kind, where, allow_zero=False) -> float:
    x = to_si(value, kind, where)
    if x < 0 or (x == 0 and not allow_zero):
        raise InputError(f"must be {'non-negative' if allow_zero else 'positive'}, got {value!r}",
                         where)
    return x


def _w(where: str, key: str) -> str:
    return f"{where}.{key}" if where else key


def _conduction(spec: dict, where: str) -> Part:
    check_keys(spec, {"k", "thickness", "area", "material", "density", "specific_heat",
                      "slices"}, ["thickness", "area"], where)
    material = None
    if "material" in spec:
        material = get_material(spec["material"], _w(where, "material"))
    if "k" in spec:
        k = _positive(spec["k"], "conductivity", _w(where, "k"))
    elif material is not None:
        k = material.conductivity
    else:
        raise InputError("missing key 'k' (or 'material')", where)
    thickness = _positive(spec["thickness"], "length", _w(where, "thickness"))
    area = _positive(spec["area"], "area", _w(where, "area"))
    density = specific_heat = None
    if "density" in spec:
        density = _positive(spec["density"], "density", _w(where, "density"))
    elif material is not None:
        density = material.density
    if "specific_heat" in spec:
        specific_heat = _positive(spec["specific_heat"], "specific_heat", _w(where, "specific_heat"))
    elif material is not None:
        specific_heat = material.specific_heat
    explicit_mass = "density" in spec and "specific_heat" in spec
    slices = 0
    if "slices" in spec:
        s = spec["slices"]
        if isinstance(s, bool) or not isinstance(s, int) or s < 1 or s > 10_000:
            raise InputError(f"slices must be a whole number from 1 to 10000, got {s!r}",
                             _w(where, "slices"))
        slices = s
    elif explicit_mass:
        slices = 1
    if slices and (density is None or specific_heat is None):
        raise InputError("a sliced (massive) layer needs density and specific_heat, or a material",
                         where)
    if ("density" in spec) != ("specific_heat" in spec) and not slices:
        raise InputError("give both density and specific_heat (or slices with a material)", where)
    capacity = thickness * area * density * specific_heat if slices else 0.0
    params = {"k": k, "thickness": thickness, "area": area}
    if slices:
        params.update(density=density, specific_heat=specific_heat)
    return Part("conduction", elements.resistance_plane_layer(thickness, k, area), area,
                capacity, slices, params, where)


def _cylinder(spec: dict, where: str) -> Part:
    check_keys(spec, {"k", "material", "inner_radius", "outer_radius", "length"},
               ["inner_radius", "outer_radius", "length"], where)
    k = _k_or_material(spec, where)
    r1 = _positive(spec["inner_radius"], "length", _w(where, "inner_radius"))
    r2 = _positive(spec["outer_radius"], "length", _w(where, "outer_radius"))
    if r2 <= r1:
        raise InputError(f"outer_radius must exceed inner_radius ({r2:g} m <= {r1:g} m)", where)
    length = _positive(spec["length"], "length", _w(where, "length"))
    return Part("cylinder", elements.resistance_cylinder_shell(r1, r2, k, length), None, 0.0, 0,
                {"k": k, "inner_radius": r1, "outer_radius": r2, "length": length}, where)


def _sphere(spec: dict, where: str) -> Part:
    check_keys(spec, {"k", "material", "inner_radius", "outer_radius"},
               ["inner_radius", "outer_radius"], where)
    k = _k_or_material(spec, where)
    r1 = _positive(spec["inner_radius"], "length", _w(where, "inner_radius"))
    r2 = _positive(spec["outer_radius"], "length", _w(where, "outer_radius"))
    if r2 <= r1:
        raise InputError(f"outer_radius must exceed inner_radius ({r2:g} m <= {r1:g} m)", where)
    return Part("sphere", float(elements.resistance_sphere_shell(r1, r2, k)), None, 0.0, 0,
                {"k": k, "inner_radius": r1, "outer_radius": r2}, where)


def _k_or_material(spec, where) -> float:
    if "k" in spec:
        return _positive(spec["k"], "conductivity", _w(where, "k"))
    if "material" in spec:
        return get_material(spec["material"], _w(where, "material")).conductivity
    raise InputError("missing key 'k' (or 'material')", where)


def _convection(spec: dict, where: str) -> Part:
    if isinstance(spec, dict) and "correlation" in spec:
        return _convection_correlation(spec, where)
    check_keys(spec, {"h", "area", "correlation"}, ["h", "area"], where)
    h = _positive(spec["h"], "heat_transfer_coefficient", _w(where, "h"))
    area = _positive(spec["area"], "area", _w(where, "area"))
    return Part("convection", elements.resistance_convection(h, area), area, 0.0, 0,
                {"h": h, "area": area}, where)


def _convection_correlation(spec: dict, where: str) -> Part:
    from .correlations import get_correlation
    from .laws import FilmLaw

    name = spec["correlation"]
    corr = get_correlation(name, _w(where, "correlation"))
    allowed = {"correlation", "area", corr.length_key, "surface", *corr.extra_keys}
    check_keys(spec, allowed, ["correlation", "area", corr.length_key], where)
    if "h" in spec:  # pragma: no cover - check_keys refuses it first
        raise InputError("give h or correlation, not both", where)
    area = _positive(spec["area"], "area", _w(where, "area"))
    dims = {corr.length_key: _positive(spec[corr.length_key], "length",
                                       _w(where, corr.length_key))}
    if "velocity" in corr.extra_keys:
        if "velocity" not in spec:
            raise InputError("missing key 'velocity'", where)
        dims["velocity"] = _positive(spec["velocity"], "velocity", _w(where, "velocity"))
        regime = spec.get("regime", "auto")
        if regime not in ("auto", "laminar", "turbulent", "mixed"):
            raise InputError(f"regime must be auto, laminar, turbulent or mixed, got {regime!r}",
                             _w(where, "regime"))
        dims["regime"] = regime
    surface = spec.get("surface", "first")
    if surface not in ("first", "second"):
        raise InputError(f"surface must be 'first' or 'second', got {surface!r}",
                         _w(where, "surface"), "the side of the link's first or second point")
    law = FilmLaw(corr, area, dims, surface_first=(surface == "first"))
    params = {"correlation": name, "area": area, **{k: v for k, v in dims.items()}}
    return Part("convection", float("nan"), area, 0.0, 0, params, where, law=law)


def _radiation(spec: dict, where: str) -> Part:
    """Grey-body radiation: small body in large surroundings, or two surfaces with a view factor.

    Without ``temperatures`` the exchange is sigma (T1^4 - T2^4) / R_s (nonlinear); with
    ``temperatures = [T1, T2]`` it is linearised there: h_r A = sigma (T1^2 + T2^2)(T1 + T2) / R_s.
    """
    check_keys(spec, {"emissivity", "area", "emissivity_2", "area_2", "view_factor",
                      "temperatures"}, ["emissivity", "area"], where)
    eps1 = _emissivity(spec["emissivity"], _w(where, "emissivity"))
    a1 = _positive(spec["area"], "area", _w(where, "area"))
    two = ("emissivity_2" in spec) or ("area_2" in spec)
    if two and not ("emissivity_2" in spec and "area_2" in spec):
        raise InputError("a two-surface exchange needs both emissivity_2 and area_2", where)
    f12 = 1.0
    if "view_factor" in spec:
        f12 = to_si(spec["view_factor"], "dimensionless", _w(where, "view_factor"))
        if not (0.0 < f12 <= 1.0):
            raise InputError(f"view_factor must be in (0, 1], got {spec['view_factor']!r}",
                             _w(where, "view_factor"))
    if two:
        eps2 = _emissivity(spec["emissivity_2"], _w(where, "emissivity_2"))
        a2 = _positive(spec["area_2"], "area", _w(where, "area_2"))
        if a1 * f12 > a2 * (1 + 1e-9):
            raise InputError(f"view factor {f12:g} from {a1:g} m^2 onto {a2:g} m^2 breaks "
                             "reciprocity (A1 F12 = A2 F21 needs F21 <= 1)", where)
        r_s = (1 - eps1) / (eps1 * a1) + 1 / (a1 * f12) + (1 - eps2) / (eps2 * a2)
    else:
        r_s = (1 - eps1) / (eps1 * a1) + 1 / (a1 * f12)
    params = {"emissivity": eps1, "area": a1, "exchange_area": 1.0 / r_s}   # 1/R_s [m^2]
    if "temperatures" not in spec:
        from .laws import RadiationLaw

        return Part("radiation", float("nan"), a1, 0.0, 0, params, where,
                    law=RadiationLaw(1.0 / r_s))
    temps = spec["temperatures"]
    if not isinstance(temps, (list, tuple)) or len(temps) != 2:
        raise InputError("temperatures must be a list of two temperatures (first and second "
                         "surface) at which the radiation is linearised", _w(where, "temperatures"))
    t1 = to_si(temps[0], "temperature", _w(where, "temperatures[0]"))
    t2 = to_si(temps[1], "temperature", _w(where, "temperatures[1]"))
    for t, i in ((t1, 0), (t2, 1)):
        if t <= -273.15:
            raise InputError("temperature at or below absolute zero",
                             _w(where, f"temperatures[{i}]"))
    # h_r A with the grey-body factor: sigma (T1^2+T2^2)(T1+T2) / R_s (eq. 1.9 generalised)
    h_r_area = elements.radiation_coefficient_linearised(1.0, t1, t2) / r_s
    params["h_r_area"] = h_r_area
    return Part("radiation", 1.0 / h_r_area, a1, 0.0, 0, params, where)


def _emissivity(value, where) -> float:
    eps = to_si(value, "dimensionless", where)
    if not (0.0 < eps <= 1.0):
        raise InputError(f"emissivity must be in (0, 1], got {value!r}", where)
    return eps


def _contact(spec: dict, where: str) -> Part:
    check_keys(spec, {"resistance", "conductance", "area"}, ["area"], where)
    area = _positive(spec["area"], "area", _w(where, "area"))
    if ("resistance" in spec) == ("conductance" in spec):
        raise InputError("give one of 'resistance' (per area, m^2*K/W) or 'conductance' "
                         "(W/(m^2*K))", where)
    if "resistance" in spec:
        r_area = _positive(spec["resistance"], "area_resistance", _w(where, "resistance"))
    else:
        r_area = 1.0 / _positive(spec["conductance"], "heat_transfer_coefficient",
                                 _w(where, "conductance"))
    return Part("contact", elements.resistance_contact(r_area, area), area, 0.0, 0,
                {"area_resistance": r_area, "area": area}, where)


def _resistance(value: Any, where: str) -> Part:
    r = _positive(value, "resistance", where)
    return Part("resistance", r, None, 0.0, 0, {"resistance": r}, where)


def _conductance(value: Any, where: str) -> Part:
    g = _positive(value, "conductance", where)
    return Part("conductance", 1.0 / g, None, 0.0, 0, {"conductance": g}, where)


#: kind name -> builder(spec, where) -> Part
PART_KINDS: dict[str, Callable[[Any, str], Part]] = {
    "conduction": _conduction,
    "cylinder": _cylinder,
    "sphere": _sphere,
    "convection": _convection,
    "radiation": _radiation,
    "contact": _contact,
    "resistance": _resistance,
    "conductance": _conductance,
}


def part_kinds() -> list[str]:
    """Names of the part kinds a link accepts."""
    return list(PART_KINDS)


def make_part(spec, where: str = "") -> Part:
    """Build a :class:`Part` from a one-key mapping (or return a Part unchanged)."""
    if isinstance(spec, Part):
        return spec
    if not isinstance(spec, dict) or len(spec) != 1:
        raise InputError("a part is a table with exactly one key naming its kind, e.g. "
                         "{ conduction = { k = ..., thickness = ..., area = ... } }", where,
                         "kinds: " + ", ".join(PART_KINDS))
    (kind, body), = spec.items()
    if kind not in PART_KINDS:
        raise InputError(f"unknown part kind {kind!r}", where, suggest(kind, PART_KINDS))
    part = PART_KINDS[kind](body, _w(where, kind))
    if part.is_nonlinear:
        return part
    if not (math.isfinite(part.resistance) and part.resistance > 0):
        raise InputError(f"resistance of this part is not a positive finite number "
                         f"({part.resistance!r} K/W)", where)
    return part
