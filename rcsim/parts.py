"""Link parts: the physical pieces a link is made of, in series.

A part is described by a one-key mapping, the same in a scenario file and in Python::

    {"conduction": {"k": "0.033 W/(m*K)", "thickness": "50 mm", "area": "0.8 m^2"}}
    {"convection": {"h": "10 W/(m^2*K)", "area": "0.9 m^2"}}
    {"resistance": "2.5 K/W"}

:func:`make_part` checks the keys (unknown ones are refused with the nearest valid key suggested),
converts units and computes the part's resistance with :mod:`rcsim.elements`. A conduction part
with ``slices`` (or an explicit density and specific heat) stores heat: the network turns it into
a ladder of internal nodes. Cylinder and sphere shells store heat the same way, slice by slice with
their true shell volumes (:mod:`rcsim.radial`); a ``box`` is a thick-walled box whose edges and
corners add to its walls (:mod:`rcsim.shapefactors`). A sliced layer of a phase-change material
(or with ``phase_change``) melts slice by slice: each slice node carries the enthalpy curve of its
own mass.

To add a part kind: write its physics in :mod:`rcsim.elements`, add a builder here and register it
in ``PART_KINDS`` with its schema.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field
from typing import Any, Callable

import numpy as np

from . import elements, radial, shapefactors
from .errors import InputError
from .materials import get_material, suggest
from .phase import make_phase_change
from .units import to_si

__all__ = ["Part", "make_part", "part_kinds", "PART_KINDS", "check_keys",
           "varying_conductance_part"]


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
    #: a rcsim.radial.Slices with each slice's resistances and capacity (None: equal slices)
    layer: object | None = None
    #: the enthalpy curve (per kg) of a phase-change layer; each slice gets its own mass
    phase_change: object | None = None
    #: the temperature all slices start at [degC] (None: the steady profile of the start)
    initial: float | None = None
    #: a rcsim.shapefactors.BoxConduction for a box part (walls, edges and corners)
    box: object | None = None
    #: conductance profile [W/K] of a part whose conductance varies in time (resistance then
    #: holds its value at t = 0); see :mod:`rcsim.varying`
    varying: object | None = None

    @property
    def is_massive(self) -> bool:
        return self.slices > 0

    @property
    def is_core(self) -> bool:
        """A solid cylinder or sphere (inner radius 0): the link's first point is its centre."""
        return self.layer is not None and self.layer.geometry != "plane" and \
            float(self.layer.edges[0]) == 0.0

    def ladder(self):
        """(inner half, outer half [K/W], capacity [J/K]) of each slice, arrays of ``slices``.

        Equal slices of R/n and C/n unless the part carries its own :attr:`layer`.
        """
        n = self.slices
        if self.layer is not None:
            return self.layer.inner_half, self.layer.outer_half, self.layer.capacities
        r_slice = self.resistance / n
        half = np.full(n, 0.5 * r_slice)
        return half, half.copy(), np.full(n, self.capacity / n)

    def slice_phase_changes(self) -> list:
        """One enthalpy curve per slice, each with its slice's mass (empty without phase change)."""
        if self.phase_change is None:
            return []
        masses = self.layer.masses if self.layer is not None else \
            np.full(self.slices, self.params["density"] * self.params["thickness"]
                    * self.area / self.slices)
        return [dataclasses.replace(self.phase_change, mass=float(m)) for m in masses]

    @property
    def is_nonlinear(self) -> bool:
        return self.law is not None

    def describe(self) -> str:
        keys = ", ".join(f"{k}={v:.4g}" for k, v in self.params.items() if isinstance(v, float))
        names = ", ".join(f"{k}={v}" for k, v in self.params.items() if isinstance(v, str))
        keys = ", ".join(x for x in (names, keys) if x)
        extra = f", {self.slices} slice(s), C={self.capacity:.4g} J/K" if self.slices else ""
        if self.phase_change is not None:
            extra += ", phase change"
        if self.box is not None:
            extra += (f", edges and corners {100 * self.box.edge_corner_share:.1f} % of the flow"
                      f" ({100 * self.box.edge_corner_ratio:.1f} % on top of the walls)")
        r = "nonlinear" if self.is_nonlinear else f"R={self.resistance:.4g} K/W"
        if self.varying is not None:
            r += " at t = 0, varying in time"
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
                      "slices", "phase_change", "initial"}, ["thickness", "area"], where)
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
    store = _storage(spec, material, where)
    capacity = 0.0
    if store.phase_change is not None:
        capacity = thickness * area * store.capacity_per_volume
    elif store.slices:
        capacity = thickness * area * store.density * store.specific_heat
    params = {"k": k, "thickness": thickness, "area": area}
    if store.slices:
        params.update(density=store.density, specific_heat=store.specific_heat)
    return Part("conduction", elements.resistance_plane_layer(thickness, k, area), area,
                capacity, store.slices, params, where, phase_change=store.phase_change,
                initial=store.initial)


@dataclass
class _Storage:
    """What makes a layer store heat: its slices, density, specific heat, phase change, start."""

    slices: int = 0
    density: float | None = None
    specific_heat: float | None = None
    phase_change: object | None = None
    initial: float | None = None

    @property
    def capacity_per_volume(self) -> float:
        """rho c [J/(m^3 K)]; for a phase-change layer the liquid's (nominal, as for a node)."""
        c = self.specific_heat if self.phase_change is None else \
            self.phase_change.specific_heat_liquid
        return self.density * c


def _storage(spec: dict, material, where: str) -> _Storage:
    """Slices, density, specific heat, phase change and starting temperature of a layer.

    A layer stores heat with ``slices`` (or an explicit density and specific heat: one slice).
    A phase-change material, or a ``phase_change`` table, melts in every slice (``phase_change =
    false`` keeps a phase-change material's sensible heat only).
    """
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
    pc_spec = spec.get("phase_change")
    if pc_spec is None and material is not None and material.is_phase_change and slices:
        pc_spec = {}  # a phase-change material melts unless told otherwise (as in a node)
    phase = None
    if pc_spec is not None and pc_spec is not False:
        phase = make_phase_change(pc_spec, _w(where, "phase_change"), material=material)
        slices = slices or 1
        if density is None:
            raise InputError("a phase-change layer needs its density (or a material)", where,
                             "add density = '...' to give each slice its mass")
        specific_heat = specific_heat or phase.specific_heat_liquid
    if slices and (density is None or specific_heat is None):
        raise InputError("a sliced (massive) layer needs density and specific_heat, or a material",
                         where)
    if ("density" in spec) != ("specific_heat" in spec) and not slices:
        raise InputError("give both density and specific_heat (or slices with a material)", where)
    initial = None
    if "initial" in spec:
        initial = to_si(spec["initial"], "temperature", _w(where, "initial"))
        if initial <= -273.15:
            raise InputError("temperature at or below absolute zero", _w(where, "initial"))
        if not slices:
            raise InputError("initial is the starting temperature of a layer's slices, and this "
                             "layer has none", _w(where, "initial"),
                             "add slices (and a material, or density and specific_heat)")
    return _Storage(slices, density, specific_heat, phase, initial)


_RADIAL_KEYS = ("inner_radius", "outer_radius", "inner_diameter", "outer_diameter", "thickness")


def _radii(spec: dict, where: str) -> tuple[float, float]:
    """(inner, outer) radius [m] of a shell from any two of: the inner side (``inner_radius`` or
    ``inner_diameter``), the outer side (``outer_radius`` or ``outer_diameter``), ``thickness``
    (:func:`rcsim.radial.radii_from`); an inner radius of 0 is a solid core."""
    given = {key: to_si(spec[key], "length", _w(where, key)) for key in _RADIAL_KEYS
             if key in spec}
    if "inner_radius" in given and "outer_radius" in given and \
            given["outer_radius"] <= given["inner_radius"]:
        raise InputError(f"outer_radius must exceed inner_radius ({given['outer_radius']:g} m <= "
                         f"{given['inner_radius']:g} m)", where)
    return radial.radii_from(**given, where=where)


#: keys of a cylinder or sphere part (a cylinder has ``length`` too; README "Cylinder and sphere
#: parts" documents each)
RADIAL_PART_KEYS = frozenset({"k", "material", *_RADIAL_KEYS, "density", "specific_heat",
                              "slices", "spacing", "phase_change", "initial"})
_RADIAL_PART_KEYS = RADIAL_PART_KEYS


def _radial(spec: dict, where: str, geometry: str) -> Part:
    """A cylinder or sphere shell; with slices (and a density) it stores heat slice by slice."""
    keys = _RADIAL_PART_KEYS | ({"length"} if geometry == "cylinder" else set())
    check_keys(spec, keys, ["length"] if geometry == "cylinder" else [], where)
    k = _k_or_material(spec, where)
    material = get_material(spec["material"], _w(where, "material")) if "material" in spec \
        else None
    r1, r2 = _radii(spec, where)
    params = {"k": k, "inner_radius": r1, "outer_radius": r2}
    length = None
    if geometry == "cylinder":
        length = _positive(spec["length"], "length", _w(where, "length"))
        params["length"] = length
    store = _storage(spec, material, where)
    spacing = spec.get("spacing", "thickness")
    if "spacing" in spec and not store.slices:
        raise InputError("spacing says how slices are cut, and this layer has none",
                         _w(where, "spacing"), "add slices")
    if not store.slices:
        if r1 == 0.0:
            raise InputError("a solid core (inner radius 0) needs slices: its centre is no face",
                             where, "add slices and a material (or density and specific_heat)")
        r = elements.resistance_cylinder_shell(r1, r2, k, length) if geometry == "cylinder" \
            else float(elements.resistance_sphere_shell(r1, r2, k))
        return Part(geometry, r, None, 0.0, 0, params, where)
    cut = radial.cylinder_slices(r1, r2, k, length, store.slices, spacing=spacing,
                                 density=store.density, specific_heat=1.0, where=where) \
        if geometry == "cylinder" else \
        radial.sphere_slices(r1, r2, k, store.slices, spacing=spacing, density=store.density,
                             specific_heat=1.0, where=where)
    cut = radial.with_centre(dataclasses.replace(
        cut, capacities=cut.volumes * store.capacity_per_volume))
    params.update(density=store.density, specific_heat=store.specific_heat)
    return Part(geometry, float(cut.ladder().sum()), None, float(cut.capacities.sum()),
                store.slices, params, where, layer=cut, phase_change=store.phase_change,
                initial=store.initial)


def _cylinder(spec: dict, where: str) -> Part:
    return _radial(spec, where, "cylinder")


def _sphere(spec: dict, where: str) -> Part:
    return _radial(spec, where, "sphere")


def _lengths(value, key: str, where: str) -> list:
    if not isinstance(value, (list, tuple)) or len(value) != 3:
        raise InputError(f"{key} must be three lengths [length, width, height], got {value!r:.60}",
                         _w(where, key))
    return [_positive(v, "length", _w(where, f"{key}[{i}]")) for i, v in enumerate(value)]


def _box(spec: dict, where: str) -> Part:
    """A thick-walled box: its six walls plus the edge and corner shape factors; with slices it
    stores heat in nested shells of the box's own shape."""
    check_keys(spec, {"inside", "outside", "thickness", "k", "material", "density",
                      "specific_heat", "slices", "phase_change", "initial"}, ["inside"], where)
    k = _k_or_material(spec, where)
    material = get_material(spec["material"], _w(where, "material")) if "material" in spec \
        else None
    inside = _lengths(spec["inside"], "inside", where)
    outside = _lengths(spec["outside"], "outside", where) if "outside" in spec else None
    thickness = _positive(spec["thickness"], "length", _w(where, "thickness")) \
        if "thickness" in spec else None
    box = shapefactors.box_conduction(inside, k, thickness=thickness, outside=outside,
                                      where=where)
    store = _storage(spec, material, where)
    area = box.total * box.thickness / k   # the plane wall of the same conductance
    params = {"k": k, "thickness": box.thickness, "effective_area": area,
              "edge_corner_share": box.edge_corner_share}
    layer = None
    if store.slices:
        volumes = shapefactors.box_shell_volumes(inside, box.thickness, store.slices)
        layer = radial.plane_slices(box.thickness, k, area, store.slices, density=store.density,
                                    specific_heat=1.0, where=where)
        layer = dataclasses.replace(layer, volumes=volumes,
                                    capacities=volumes * store.capacity_per_volume)
        params.update(density=store.density, specific_heat=store.specific_heat)
    return Part("box", box.resistance, area, 0.0 if layer is None else float(layer.capacities.sum()),
                store.slices, params, where, layer=layer, phase_change=store.phase_change,
                initial=store.initial, box=box)


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
    law = FilmLaw(corr, area, dims, surface_first=(surface == "first"), where=where)
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
    params = {"emissivity": eps1, "area": a1, "view_factor": f12,
              "exchange_area": 1.0 / r_s}   # 1/R_s [m^2] (called surface_factor before)
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
    from .profiles import Profile

    if isinstance(value, Profile):
        if not value.is_constant:
            return varying_conductance_part(value, where)
        value = value.bind("conductance", where).value(0.0)
    g = _positive(value, "conductance", where)
    return Part("conductance", 1.0 / g, None, 0.0, 0, {"conductance": g}, where)


def varying_conductance_part(profile, where: str) -> Part:
    """A part whose conductance [W/K] follows ``profile`` (bound here as a conductance); see
    :mod:`rcsim.varying`. Its ``resistance`` is 1/G(0), the value built into the conductance
    matrix."""
    bound = profile.bind("conductance", where)
    start, end = bound.span()
    g0 = float(bound.value(0.0)) if start <= 0.0 <= end else math.nan
    if not (math.isfinite(g0) and g0 > 0):
        raise InputError(f"a conductance must be positive at t = 0, got {g0:g} W/K", where,
                         "a link that can close entirely needs a small conductance left")
    return Part("conductance", 1.0 / g0, None, 0.0, 0, {"conductance": g0}, where,
                varying=bound)


#: kind name -> builder(spec, where) -> Part
PART_KINDS: dict[str, Callable[[Any, str], Part]] = {
    "conduction": _conduction,
    "cylinder": _cylinder,
    "sphere": _sphere,
    "box": _box,
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
