"""Radiation elements of a network: one grey surface seeing several surroundings, and grey diffuse
enclosures of N surfaces, both wired as pairwise radiation links.

Both reduce exactly to grey-body exchanges between pairs of points, q = sigma S_ij (T_i^4 - T_j^4)
with S_ij the exchange areas of :mod:`rcsim.radiosity` (the radiosity network with its surface and
space resistances, eliminated once). So each pair becomes one link holding one radiation law, and
the piecewise and stiff paths, the steady solver and the energy balance treat them as any other
radiation link. Linearised at given temperatures, each pair is a conductance
S_ij sigma (T_i^2 + T_j^2)(T_i + T_j) exact there.

* :func:`add_radiation`: a surface (emissivity e, area A) seeing points j with view factors F_j
  (sum at most 1): links ``<name>:<j>`` of e A F_j, and links ``<name>:<j>-<k>`` of
  (1 - e) A F_j F_k between two seen points (radiation of one reflected by the surface onto the
  other) where one of them is a node. The surface's flow is e sigma A sum_j F_j (T^4 - T_j^4)
  exactly: one surface resistance, however many surroundings (Incropera et al., 6th ed., eq. 13.21
  split by view factor).
* :func:`add_enclosure`: N surfaces with areas, emissivities and a view-factor matrix (given, or
  from a closed shape of :mod:`rcsim.viewfactors`), checked for reciprocity and summation; each
  surface belongs to a node or boundary (several surfaces may share one), or is reradiating
  (adiabatic, no point). Pairs between the same two points add up into one link
  ``<name>:<a>-<b>``.
* :func:`warn_separate_radiation_links`: several two-surface radiation links leaving one grey
  surface with view factors below 1 count its surface resistance once each, so together they
  carry too much heat; the warning states how much (:func:`rcsim.radiosity.separate_links_excess`).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field

import numpy as np

from . import radiosity
from .base import suggest
from .errors import InputError, NetworkError, RcsimWarning
from .laws import RadiationLaw
from .parts import Part
from .units import to_si
from .viewfactors import enclosure_view_factors

__all__ = ["RadiationExchange", "SeparateRadiationLinksWarning", "add_radiation",
           "add_enclosure", "warn_separate_radiation_links", "radiation_from_scenario",
           "enclosures_from_scenario"]


class SeparateRadiationLinksWarning(RcsimWarning):
    """Several radiation links leave one grey surface: its surface resistance is counted in each."""


@dataclass
class RadiationExchange:
    """A radiation element as built into a network.

    Attributes
    ----------
    name : str
    kind : str
        ``"surroundings"`` (one surface seeing several points) or ``"enclosure"``.
    points : list of str
        The network points taking part (the surface first for ``"surroundings"``).
    exchange_areas : dict
        {(point a, point b): S [m^2]} of every pair wired (and of boundary pairs left out).
    links : list of str
        Names of the links made.
    enclosure : rcsim.radiosity.Enclosure or None
        The enclosure (its heat flows, radiosities, reradiating surface temperatures).
    labels : tuple of str
        The enclosure's surface names, in the order of its matrices.
    """

    name: str
    kind: str
    points: list
    exchange_areas: dict = field(default_factory=dict)
    links: list = field(default_factory=list)
    enclosure: object | None = None
    labels: tuple = ()


def _radiation_part(exchange_area: float, where: str, linearised_at=None) -> Part:
    """One pair as a link part: exact sigma S (T1^4 - T2^4), or its conductance at two
    temperatures [degC] (Incropera et al. eq. 1.9)."""
    params = {"exchange_area": exchange_area}
    if linearised_at is None:
        return Part("radiation", float("nan"), None, 0.0, 0, params, where,
                    law=RadiationLaw(exchange_area))
    g = radiosity.linearised_conductance(exchange_area, *linearised_at)
    params["h_r_area"] = float(g)
    return Part("radiation", 1.0 / float(g), None, 0.0, 0, params, where)


def _point(network, name, where: str) -> str:
    if not isinstance(name, str) or not (name in network.nodes or name in network.boundaries):
        raise NetworkError(f"unknown node or boundary {name!r}", where,
                           suggest(str(name), list(network.nodes) + list(network.boundaries)))
    return name


def _free_names(network, element: str, links, where: str) -> None:
    """Refuse an element whose name or link names are in use (before adding any link)."""
    if element in network.exchanges:
        raise NetworkError(f"duplicate radiation element name {element!r}", where)
    taken = next((n for n in links if n in network.links), None)
    if taken is not None:
        raise NetworkError(f"link name {taken!r} is taken", where,
                           "give the element another name")


def _temperature(value, where: str) -> float:
    t = to_si(value, "temperature", where)
    if t <= -273.15:
        raise InputError("temperature at or below absolute zero", where)
    return t


def _fraction(value, where: str) -> float:
    x = to_si(value, "dimensionless", where)
    if not math.isfinite(x):
        raise InputError(f"expected a finite number, got {value!r}", where)
    return x


def _sees(sees, where: str) -> tuple[list, list]:
    """(points, view factors) from [{node = ..., view_factor = ...}, ...] or {point: F}."""
    if isinstance(sees, dict):
        sees = [{"node": k, "view_factor": v} for k, v in sees.items()]
    if not isinstance(sees, (list, tuple)) or not sees:
        raise InputError("sees must list what the surface sees, e.g. sees = [{ node = \"sky\", "
                         "view_factor = 0.5 }, { node = \"ground\", view_factor = 0.5 }]", where)
    points, factors = [], []
    for j, item in enumerate(sees):
        w = f"{where}[{j}]"
        if not isinstance(item, dict):
            raise InputError(f"expected a table {{ node = ..., view_factor = ... }}, got "
                             f"{item!r:.60}", w)
        for key in item:
            if key not in ("node", "view_factor"):
                raise InputError(f"unknown key {key!r}", w, suggest(key, ["node", "view_factor"]))
        for key in ("node", "view_factor"):
            if key not in item:
                raise InputError(f"missing key {key!r}", w)
        points.append(item["node"])
        factors.append(_fraction(item["view_factor"], f"{w}.view_factor"))
    return points, factors


def add_radiation(network, name: str, surface: str, area, emissivity, sees, *,
                  temperatures=None, where: str | None = None) -> RadiationExchange:
    """Radiation from one grey surface to several nodes or boundaries, with one surface resistance.

    Parameters
    ----------
    network : rcsim.Network
    name : str
        Names the element; its links are ``<name>:<point>`` and ``<name>:<a>-<b>``.
    surface : str
        The radiating surface's node (or boundary).
    area : float or str
        Its area A [m^2].
    emissivity : float
        e in (0, 1].
    sees : list of {"node": str, "view_factor": float}, or {point: view factor}
        What the surface sees; view factors in (0, 1] summing to at most 1 (the rest of its view
        is taken to see surroundings at its own temperature: no exchange).
    temperatures : list, optional
        Linearise at these temperatures: ``[surface, surroundings]`` (one for all) or ``[surface,
        one per seen point]``. Without it the exchange is exact in T^4.

    Returns
    -------
    RadiationExchange

    Notes
    -----
    q = e sigma A sum_j F_j (T^4 - T_j^4) from the surface (Incropera et al., 6th ed., eq. 13.21
    split by view factor); the surroundings are black or large. See
    :func:`rcsim.radiosity.surroundings_exchange_areas`.
    """
    where = where or f"radiation.{name}"
    surface = _point(network, surface, f"{where}.surface")
    a = to_si(area, "area", f"{where}.area")
    e = _fraction(emissivity, f"{where}.emissivity")
    points, factors = _sees(sees, f"{where}.sees")
    for j, p in enumerate(points):
        _point(network, p, f"{where}.sees[{j}].node")
        if p == surface:
            raise InputError(f"the surface {p!r} cannot see itself", f"{where}.sees[{j}].node",
                             "a flat or convex surface has no view of itself")
        if p in points[:j]:
            raise InputError(f"{p!r} is listed twice", f"{where}.sees[{j}].node",
                             "add the view factors into one entry")
    to, between = radiosity.surroundings_exchange_areas(e, a, factors, where)
    if all(p in network.boundaries for p in [surface] + points):
        raise NetworkError("the surface and everything it sees are boundaries: the exchange "
                           "changes no node", where, "make the surface a node")
    at = _linearise_surroundings(temperatures, len(points), f"{where}.temperatures")
    _free_names(network, name, [f"{name}:{p}" for p in points]
                + [f"{name}:{p}-{q}" for j, p in enumerate(points) for q in points[j + 1:]],
                where)
    made = RadiationExchange(name, "surroundings", [surface] + points)
    for j, p in enumerate(points):
        made.exchange_areas[(surface, p)] = float(to[j])
        pair_at = None if at is None else (at[0], at[j + 1])
        made.links.append(network.add_link(
            surface, p, parts=[_radiation_part(float(to[j]), f"{where}.sees[{j}]", pair_at)],
            name=f"{name}:{p}", where=f"{where}.sees[{j}]"))
    for j in range(len(points)):
        for k in range(j + 1, len(points)):
            s = float(between[j, k])
            pj, pk = points[j], points[k]
            made.exchange_areas[(pj, pk)] = s
            if s <= 0.0 or (pj in network.boundaries and pk in network.boundaries):
                continue   # black surface, or two boundaries: nothing for a node
            pair_at = None if at is None else (at[j + 1], at[k + 1])
            made.links.append(network.add_link(
                pj, pk, parts=[_radiation_part(s, where, pair_at)], name=f"{name}:{pj}-{pk}",
                where=where))
    network.exchanges[name] = made
    return made


def _linearise_surroundings(temperatures, n: int, where: str):
    if temperatures is None:
        return None
    if not isinstance(temperatures, (list, tuple)) or len(temperatures) not in (2, n + 1):
        raise InputError(f"temperatures must list the surface's temperature and then one for all "
                         f"surroundings or one per seen point ({2 if n == 1 else f'2 or {n + 1}'} "
                         "values)", where)
    values = [_temperature(t, f"{where}[{i}]") for i, t in enumerate(temperatures)]
    return values if len(values) == n + 1 else [values[0]] + [values[1]] * n


# -- enclosures ---------------------------------------------------------------------------------
def _per_surface(value, labels, key: str, where: str, *, required=(), scalar_ok=True):
    """One value per enclosure surface: a number (all alike), a list in surface order, or a table
    by surface name. Surfaces not given in a table are None (an error if in ``required``)."""
    if isinstance(value, dict):
        for k in value:
            if k not in labels:
                raise InputError(f"unknown surface {k!r}", f"{where}.{key}",
                                 suggest(str(k), list(labels)))
        out = [value.get(lb) for lb in labels]
    elif isinstance(value, (list, tuple)):
        if len(value) != len(labels):
            raise InputError(f"{len(value)} values for {len(labels)} surfaces ("
                             + ", ".join(labels) + ")", f"{where}.{key}")
        out = list(value)
    elif scalar_ok and value is not None and not isinstance(value, bool):
        out = [value] * len(labels)
    else:
        raise InputError(f"{key} must be a list in surface order or a table by surface name",
                         f"{where}.{key}")
    for i in required:
        if out[i] is None:
            raise InputError(f"no value for surface {labels[i]!r}", f"{where}.{key}")
    return out


def _enclosure_geometry(shape, surfaces, areas, view_factors, where: str):
    """(labels, areas, F, {label: point or None}) from a shape or from areas and a matrix."""
    if shape is not None:
        if areas is not None or view_factors is not None:
            raise InputError("give shape, or areas and view_factors, not both", where)
        if not isinstance(shape, dict) or len(shape) != 1 or \
                not isinstance(next(iter(shape.values())), dict):
            raise InputError("shape is a table with one key naming the shape, e.g. shape = "
                             "{ box_interior = { length = \"0.4 m\", width = \"0.3 m\", height = "
                             "\"0.3 m\" } }", f"{where}.shape")
        (kind, dims), = shape.items()
        w = f"{where}.shape.{kind}"
        dims_si = {k: to_si(v, "length", f"{w}.{k}") for k, v in dims.items()}
        a, F, labels = enclosure_view_factors(kind, where=w, **dims_si)
        labels = tuple(labels)
        if isinstance(surfaces, (list, tuple)):
            mapped = _per_surface(surfaces, labels, "surfaces", where, scalar_ok=False)
        elif isinstance(surfaces, dict):
            mapped = _per_surface(surfaces, labels, "surfaces", where, scalar_ok=False)
        else:
            raise InputError(f"surfaces must map the faces of {kind!r} ("
                             + ", ".join(labels) + ") to nodes or boundaries", f"{where}.surfaces")
        return labels, a, F, dict(zip(labels, mapped))
    if areas is None or view_factors is None:
        raise InputError("an enclosure needs areas and view_factors, or a shape", where,
                         "e.g. shape = { box_interior = { length = ..., width = ..., height = ... } }")
    if not isinstance(surfaces, (list, tuple)) or not surfaces or \
            not all(isinstance(x, str) for x in surfaces):
        raise InputError("surfaces must list the surfaces' nodes or boundaries (or names of "
                         "reradiating surfaces), in the order of areas and view_factors",
                         f"{where}.surfaces")
    labels = tuple(surfaces)
    if len(set(labels)) != len(labels):
        dup = next(x for x in labels if labels.count(x) > 1)
        raise InputError(f"surface {dup!r} is listed twice", f"{where}.surfaces",
                         "give each surface once (merge their areas), or use a shape")
    if not isinstance(areas, (list, tuple)) or len(areas) != len(labels):
        raise InputError(f"areas must list {len(labels)} areas (one per surface; inf for large "
                         "surroundings)", f"{where}.areas")
    a = np.array([math.inf if isinstance(x, float) and math.isinf(x) and x > 0
                  else to_si(x, "area", f"{where}.areas[{i}]") for i, x in enumerate(areas)])
    if not isinstance(view_factors, (list, tuple)) or \
            not all(isinstance(row, (list, tuple)) for row in view_factors):
        raise InputError("view_factors must be a matrix: a list of rows, one per surface",
                         f"{where}.view_factors")
    F = [[_fraction(x, f"{where}.view_factors[{i}][{j}]") for j, x in enumerate(row)]
         for i, row in enumerate(view_factors)]
    if any(len(row) != len(labels) for row in F) or len(F) != len(labels):
        raise InputError(f"view_factors must be a {len(labels)} x {len(labels)} matrix (one row "
                         "and one column per surface)", f"{where}.view_factors")
    return labels, a, np.array(F), {lb: lb for lb in labels}


def add_enclosure(network, name: str, surfaces, emissivities, *, areas=None, view_factors=None,
                  shape=None, reradiating=None, temperatures=None,
                  where: str | None = None) -> RadiationExchange:
    """A grey diffuse enclosure of N surfaces, wired as one radiation link per pair of points.

    Parameters
    ----------
    network : rcsim.Network
    name : str
        Names the element; its links are ``<name>:<a>-<b>``.
    surfaces : list of str, or {face: point}
        With ``areas`` and ``view_factors``: the surfaces in matrix order, each a node or boundary
        (or the name of a reradiating surface). With ``shape``: the node or boundary of each face
        of the shape (a table by face name, or a list in the shape's order); several faces may
        share one point, and reradiating faces need none.
    emissivities : float, list or {surface: float}
        e in (0, 1] of each surface (one number for all); not needed for reradiating surfaces.
    areas : list, optional
        Areas [m^2] (``inf`` for large surroundings, whose row of view factors is 0 apart from 1
        on the diagonal).
    view_factors : list of lists, optional
        F_ij, checked for reciprocity and summation (rows sum to 1 within 0.01).
    shape : {shape name: {dimension: length}}, optional
        A closed shape of :data:`rcsim.viewfactors.SHAPES` (``box_interior``,
        ``cylinder_cavity``, ``concentric_cylinders``, ``concentric_spheres``).
    reradiating : list of str, optional
        Adiabatic surfaces (no net flow; their temperature follows from the others').
    temperatures : list or {surface: temperature}, optional
        Linearise each pair at these temperatures of its points (exact in T^4 without).

    Returns
    -------
    RadiationExchange

    Notes
    -----
    Incropera et al., 6th ed., section 13.3 (radiosity networks, the reradiating surface);
    reduced exactly to exchange areas by :class:`rcsim.radiosity.Enclosure`.
    """
    where = where or f"enclosures.{name}"
    labels, a, F, point_of = _enclosure_geometry(shape, surfaces, areas, view_factors, where)
    rerad = set()
    if reradiating is not None:
        if not isinstance(reradiating, (list, tuple)) or \
                not all(isinstance(x, str) for x in reradiating):
            raise InputError("reradiating must list surface names", f"{where}.reradiating")
        for i, x in enumerate(reradiating):
            if x not in labels:
                raise InputError(f"unknown surface {x!r}", f"{where}.reradiating[{i}]",
                                 suggest(x, list(labels)))
            rerad.add(x)
    for lb in labels:
        p = point_of[lb]
        if lb in rerad:
            if shape is None and (p in network.nodes or p in network.boundaries):
                raise InputError(f"reradiating surface {lb!r} is a node or boundary", where,
                                 "a reradiating surface has no temperature of its own: give it "
                                 "a name that is not a node")
            if shape is not None and p is not None:
                raise InputError(f"face {lb!r} is reradiating and also mapped to {p!r}",
                                 f"{where}.surfaces", "a reradiating face has no node: leave it "
                                 "out of surfaces")
            point_of[lb] = None
        elif p is None:
            raise InputError(f"face {lb!r} has no node or boundary", f"{where}.surfaces",
                             "map it to one, or list it in reradiating")
        else:
            _point(network, p, f"{where}.surfaces" + (f".{lb}" if shape is not None else
                                                       f"[{labels.index(lb)}]"))
    active = [i for i, lb in enumerate(labels) if lb not in rerad]
    eps = _per_surface(emissivities, labels, "emissivities", where, required=active)
    eps = np.array([math.nan if lb in rerad else _fraction(eps[i], f"{where}.emissivities")
                    for i, lb in enumerate(labels)])
    enc = radiosity.Enclosure(a, eps, F, names=labels, reradiating=[lb in rerad for lb in labels],
                              where=where)
    at = None
    if temperatures is not None:
        values = _per_surface(temperatures, labels, "temperatures", where, required=active,
                              scalar_ok=False)
        at = {}
        for i in active:
            t = _temperature(values[i], f"{where}.temperatures")
            p = point_of[labels[i]]
            if p in at and at[p] != t:
                raise InputError(f"two temperatures for {p!r} ({at[p]:g} and {t:g} degC)",
                                 f"{where}.temperatures", "surfaces of one point share one")
            at[p] = t
    return _wire_pairs(network, name, enc, labels, point_of, at, where)


def _wire_pairs(network, name, enc, labels, point_of, at, where) -> RadiationExchange:
    """Add the enclosure's pairs, summed by pair of points, as links."""
    total: dict = {}
    for i, j, s in enc.pairs():
        pi, pj = point_of[labels[i]], point_of[labels[j]]
        if pi == pj:
            continue   # faces of one node exchange nothing that changes it
        key = (pi, pj) if (pj, pi) not in total else (pj, pi)
        total[key] = total.get(key, 0.0) + s
    points = list(dict.fromkeys(p for p in point_of.values() if p is not None))
    if all(p in network.boundaries for p in points):
        raise NetworkError("every surface of the enclosure is a boundary: it changes no node",
                           where, "make at least one surface a node")
    _free_names(network, name, [f"{name}:{a}-{b}" for a, b in total], where)
    made = RadiationExchange(name, "enclosure", points, dict(total), enclosure=enc,
                             labels=labels)
    for (pa, pb), s in total.items():
        if pa in network.boundaries and pb in network.boundaries:
            continue
        pair_at = None if at is None else (at[pa], at[pb])
        made.links.append(network.add_link(pa, pb, parts=[_radiation_part(s, where, pair_at)],
                                           name=f"{name}:{pa}-{pb}", where=where))
    network.exchanges[name] = made
    return made


# -- the warning on separate links ------------------------------------------------------------
def warn_separate_radiation_links(network, stacklevel: int = 2) -> None:
    """Warn where two or more two-surface radiation parts leave one grey surface with view
    factors below 1 (the same first point, emissivity and area): each counts the surface
    resistance (1 - e)/(e A) in full, so together they carry too much heat. The excess at one
    surroundings temperature is :func:`rcsim.radiosity.separate_links_excess`."""
    groups: dict = {}
    for link in network.links.values():
        for part in link.parts:
            p = part.params
            if part.kind != "radiation" or "view_factor" not in p:
                continue
            if p["emissivity"] < 1.0 and p["view_factor"] < 1.0:
                key = (link.a, p["emissivity"], p["area"])
                groups.setdefault(key, []).append((link.name, p["view_factor"]))
    for (surface, e, area), items in groups.items():
        if len(items) < 2:
            continue
        factors = [f for _, f in items]
        if sum(factors) > 1.0 + 1e-9:
            continue   # not one surface's views (they would exceed its whole view)
        excess = radiosity.separate_links_excess(e, factors)
        names = ", ".join(repr(n) for n, _ in items)
        warnings.warn(f"links {names} each carry the surface resistance of {surface!r} "
                      f"(emissivity {e:g}, {area:g} m^2, view factors "
                      + ", ".join(f"{f:g}" for f in factors) + f"): together they carry "
                      f"{100 * excess:.1f} % too much heat; describe the surface once with a "
                      "[radiation.<name>] element that sees all of them",
                      SeparateRadiationLinksWarning, stacklevel=stacklevel)


# -- scenario sections ------------------------------------------------------------------------
_RADIATION_KEYS = {"surface", "area", "emissivity", "sees", "temperatures"}
_ENCLOSURE_KEYS = {"surfaces", "emissivities", "areas", "view_factors", "shape", "reradiating",
                   "temperatures"}


def _check_table(spec, allowed, required, where: str) -> dict:
    if not isinstance(spec, dict):
        raise InputError(f"expected a table, got {type(spec).__name__} {spec!r:.60}", where)
    for key in spec:
        if key not in allowed:
            raise InputError(f"unknown key {key!r}", where, suggest(key, sorted(allowed)))
    for key in required:
        if key not in spec:
            raise InputError(f"missing key {key!r}", where)
    return spec


def radiation_from_scenario(network, tables: dict) -> None:
    """Add every ``[radiation.<name>]`` table (surface, area, emissivity, sees, temperatures)."""
    for name, spec in _check_table(tables, tables, (), "radiation").items():
        w = f"radiation.{name}"
        spec = _check_table(spec, _RADIATION_KEYS, ("surface", "area", "emissivity", "sees"), w)
        add_radiation(network, name, spec["surface"], spec["area"], spec["emissivity"],
                      spec["sees"], temperatures=spec.get("temperatures"), where=w)


def enclosures_from_scenario(network, tables: dict) -> None:
    """Add every ``[enclosures.<name>]`` table (surfaces, emissivities, and areas with
    view_factors or a shape; reradiating, temperatures)."""
    for name, spec in _check_table(tables, tables, (), "enclosures").items():
        w = f"enclosures.{name}"
        spec = _check_table(spec, _ENCLOSURE_KEYS, ("surfaces", "emissivities"), w)
        add_enclosure(network, name, spec["surfaces"], spec["emissivities"],
                      areas=spec.get("areas"), view_factors=spec.get("view_factors"),
                      shape=spec.get("shape"), reradiating=spec.get("reradiating"),
                      temperatures=spec.get("temperatures"), where=w)
