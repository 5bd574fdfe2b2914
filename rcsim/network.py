"""The network model: nodes, boundaries, links, sources, limits; assembly to sparse matrices.

A *node* has a heat capacity C [J/K] (0 for a massless junction) and an initial temperature.
A *boundary* has an imposed temperature profile. A *link* joins two points (node or boundary) through
parts in series; several links between the same two points act in parallel. A *source* injects a
power profile into a node. Heat flows are positive from a link's first point to its second.

Assembly (:mod:`rcsim.assembly`) turns this into::

    C dT/dt = -K T + B u(t) + P s(t)

with K (nodes x nodes) the conductance matrix including the conductances to boundaries, B (nodes x
boundaries) the boundary coupling, P (nodes x sources) the source map. Massive conduction layers
become ladders of internal nodes named ``"<link>.<i>"`` (numbered from the first point).

Solvers live in :mod:`rcsim.steady`, :mod:`rcsim.modes` and :mod:`rcsim.transient`; the methods
:meth:`Network.steady`, :meth:`Network.time_constants` and :meth:`Network.simulate` hand off to them.
"""

from __future__ import annotations

import re
import unicodedata
from dataclasses import dataclass

import numpy as np

from . import elements
from .assembly import Assembled, assemble_network, conductance_matrices
from .base import suggest
from .conditioning import check_stiff_groups
from .errors import InputError, NetworkError
from .materials import get_material
from .parts import Part, make_part
from .phase import make_phase_change
from .profiles import Profile, as_profile
from .thermostat import Thermostat, make_thermostat
from .units import to_si

__all__ = ["Network", "Node", "Boundary", "Link", "Source", "Limit", "Assembled"]

#: older name of :func:`rcsim.assembly.conductance_matrices`
_conductance_matrices = conductance_matrices

_NAME_OK = re.compile(r'^[^.\[\]"\x00-\x1f]{1,100}$')


def _check_name(name, what: str) -> str:
    """The name in Unicode normal form C (any script; README "Names"), or NetworkError."""
    if isinstance(name, str):
        name = unicodedata.normalize("NFC", name)
    if not isinstance(name, str) or not _NAME_OK.match(name) or name.strip() != name:
        raise NetworkError(f"invalid {what} name {name!r}", None,
                           "use 1 to 100 characters without '.', '[', ']', quotes or "
                           "leading/trailing spaces")
    return name


def _nfc(ref):
    """A name referred to (a link's end, a source's node) in the form names are kept in."""
    return unicodedata.normalize("NFC", ref) if isinstance(ref, str) else ref


@dataclass
class Node:
    name: str
    capacity: float
    initial: float | None = None
    where: str = ""
    phase_change: object | None = None  # a rcsim.phase.PhaseChange, when the node melts/freezes
    mass: float | None = None
    freezes_at: float | None = None     # declared freezing point [degC] (a run warns past it)


@dataclass
class Boundary:
    name: str
    profile: Profile
    where: str = ""


@dataclass
class Link:
    name: str
    a: str
    b: str
    parts: list[Part]
    area: float | None = None
    where: str = ""

    @property
    def is_nonlinear(self) -> bool:
        return any(p.is_nonlinear for p in self.parts)

    @property
    def resistance(self) -> float:
        """Total series resistance [K/W] (massive layers counted with their full resistance).

        NaN when a part is nonlinear (its resistance depends on the temperatures).
        """
        return float(sum(p.resistance for p in self.parts))

    @property
    def u_value(self) -> float | None:
        """U = 1/(R A) [W/(m^2*K)] when the link has an area and is linear, else None."""
        if self.is_nonlinear:
            return None
        area = self.area
        if area is None:
            areas = {p.area for p in self.parts if p.area is not None}
            if len(areas) == 1 and all(p.area is not None for p in self.parts):
                area = areas.pop()
        return None if area is None else 1.0 / (self.resistance * area)

    @property
    def capacity(self) -> float:
        return float(sum(p.capacity for p in self.parts))


@dataclass
class Source:
    name: str
    node: str
    profile: Profile
    where: str = ""


@dataclass
class Limit:
    node: str
    min: float | None = None
    max: float | None = None
    where: str = ""


class Network:
    """A thermal RC network built from physical descriptions.

    Examples
    --------
    >>> import rcsim
    >>> net = rcsim.Network()
    >>> _ = net.add_node("payload", capacity=8400.0, initial=5.0)
    >>> _ = net.add_boundary("outdoor", temperature=25.0)
    >>> _ = net.add_link("payload", "outdoor", resistance=2.5, name="wall")
    >>> float(net.steady().temperatures["payload"])
    25.0
    """

    def __init__(self, title: str | None = None):
        self.title = title
        self.nodes: dict[str, Node] = {}
        self.boundaries: dict[str, Boundary] = {}
        self.links: dict[str, Link] = {}
        self.sources: dict[str, Source] = {}
        self.limits: dict[str, Limit] = {}
        self.thermostats: dict[str, Thermostat] = {}   # settings; a run never changes them
        self.surfaces: dict = {}   # exposed surfaces (rcsim.surfaces.Surface) by name
        self.exchanges: dict = {}   # radiation elements and enclosures, by name (their links)
        self._assembled: Assembled | None = None
        self.source_text: str | None = None  # scenario text, when built from a file
        self.source_name: str | None = None  # its file name (messages start with it)

    # -- building -----------------------------------------------------------------------------
    def mark_changed(self) -> None:
        """Forget the assembly: call after changing nodes, links or profiles in place."""
        self._assembled = None

    _changed = mark_changed   # older name

    def _point_exists(self, name) -> bool:
        return name in self.nodes or name in self.boundaries

    def add_node(self, name: str, capacity=None, initial=None, *, mass=None, specific_heat=None,
                 material=None, volume=None, density=None, phase_change=None,
                 freezes_at=None, where: str | None = None) -> str:
        """Add a node.

        Parameters
        ----------
        name : str
            Unique among nodes and boundaries.
        capacity : float or str, optional
            Heat capacity [J/K] (e.g. ``"8.4 kJ/K"``); 0 for a massless junction.
        initial : float or str, optional
            Initial temperature [degC]; may be left out when the run starts from the steady or
            periodic state.
        mass, specific_heat, material, volume, density : optional
            Instead of ``capacity``: mass x specific heat; a named material with a mass or a
            volume; or volume x density x specific heat. Explicit values override the material's.
        phase_change : dict or rcsim.phase.PhaseChange, optional
            Latent heat and melting range; the node then carries an enthalpy state
            (needs ``mass``).
        freezes_at : float or str, optional
            Freezing point [degC] of a node without latent heat (a water-based payload): a run
            warns once when the node passes it (its temperatures beyond it are wrong).

        Returns
        -------
        str
            The name.
        """
        where = where or f"nodes.{name}"
        name = _check_name(name, "node")
        if self._point_exists(name):
            raise NetworkError(f"duplicate name {name!r} (nodes and boundaries share names)", where)
        w = lambda k: f"{where}.{k}"  # noqa: E731
        mat = get_material(material, w("material")) if material is not None else None
        m = _nonneg(mass, "mass", w("mass")) if mass is not None else None
        given = [k for k, v in (("capacity", capacity), ("mass", mass), ("volume", volume))
                 if v is not None]
        if len(given) > 1:
            raise NetworkError(f"give only one of capacity, mass or volume (got {', '.join(given)})",
                               where)
        pc = None
        if phase_change is None and mat is not None and mat.is_phase_change:
            phase_change = {}  # a phase-change material melts unless told otherwise
        if phase_change is not None and phase_change is not False:
            pc = make_phase_change(phase_change, w("phase_change"), material=mat)
            if m is None:
                raise NetworkError("a phase-change node needs its mass", where,
                                   "add mass = '...'")
            if capacity is not None or volume is not None:
                raise NetworkError("a phase-change node takes its mass, not capacity or volume",
                                   where)
            pc.mass = m
        cp = None
        if specific_heat is not None:
            cp = _nonneg(specific_heat, "specific_heat", w("specific_heat"), positive=True)
        elif mat is not None:
            cp = mat.specific_heat
        rho = None
        if density is not None:
            rho = _nonneg(density, "density", w("density"), positive=True)
        elif mat is not None:
            rho = mat.density
        if capacity is not None:
            if mat is not None or specific_heat is not None or density is not None:
                raise NetworkError("capacity is given, so material, specific_heat and density "
                                   "are not used; remove them", where)
            c = _nonneg(capacity, "capacity", w("capacity"))
        elif m is not None:
            if pc is not None:
                c = m * pc.specific_heat_liquid  # nominal; the enthalpy curve is what counts
            else:
                if cp is None:
                    raise NetworkError("mass is given but no specific_heat or material", where)
                c = elements.capacity_from_mass(m, cp)
        elif volume is not None:
            v = _nonneg(volume, "volume", w("volume"))
            if rho is None or cp is None:
                raise NetworkError("volume is given but no material (or density and "
                                   "specific_heat)", where)
            c = elements.capacity_from_volume(v, rho, cp)
            m = v * rho
        else:
            if mat is not None or specific_heat is not None or density is not None:
                raise NetworkError("give a mass or a volume with the material or specific heat",
                                   where)
            c = 0.0
        t0 = None if initial is None else to_si(initial, "temperature", w("initial"))
        if t0 is not None and t0 <= -273.15:
            raise NetworkError(f"initial temperature {t0:g} degC is below absolute zero",
                               w("initial"))
        tf = None if freezes_at is None else to_si(freezes_at, "temperature", w("freezes_at"))
        if tf is not None and tf <= -273.15:
            raise NetworkError(f"freezing point {tf:g} degC is below absolute zero",
                               w("freezes_at"))
        self.nodes[name] = Node(name, c, t0, where, pc, m, tf)
        self.mark_changed()
        return name

    def add_boundary(self, name: str, temperature, where: str | None = None) -> str:
        """Add a boundary with an imposed temperature: a number, a string or a profile."""
        where = where or f"boundaries.{name}"
        name = _check_name(name, "boundary")
        if self._point_exists(name):
            raise NetworkError(f"duplicate name {name!r} (nodes and boundaries share names)", where)
        prof = as_profile(temperature, "temperature", f"{where}.temperature")
        self.boundaries[name] = Boundary(name, prof, where)
        self.mark_changed()
        return name

    def add_link(self, a: str, b: str, resistance=None, *, conductance=None, parts=None,
                 name: str | None = None, area=None, where: str | None = None) -> str:
        """Join points ``a`` and ``b``.

        Give exactly one of ``resistance`` [K/W], ``conductance`` [W/K] or ``parts`` (a list of
        part mappings in series, from ``a`` to ``b``; see :mod:`rcsim.parts`). ``area`` [m^2]
        sets the area used for the U-value. The name defaults to ``"a-b"``.
        """
        a, b = _nfc(a), _nfc(b)
        name = name if name is not None else f"{a}-{b}"
        where = where or f"links.{name}"
        name = _check_name(name, "link")
        if name in self.links:
            raise NetworkError(f"duplicate link name {name!r}", where,
                               "give parallel links distinct names")
        for end, key in ((a, "between[0]"), (b, "between[1]")):
            if not self._point_exists(end):
                raise NetworkError(f"unknown node or boundary {end!r}", f"{where}.{key}",
                                   suggest(end, list(self.nodes) + list(self.boundaries)))
        if a == b:
            raise NetworkError(f"a link from {a!r} to itself", where)
        given = [k for k, v in (("resistance", resistance), ("conductance", conductance),
                                ("parts", parts)) if v is not None]
        if len(given) != 1:
            raise NetworkError("give exactly one of resistance, conductance or parts"
                               + (f" (got {', '.join(given)})" if given else ""), where)
        if resistance is not None:  # make_part adds the kind to the key path
            part_list = [make_part({"resistance": resistance}, where)]
        elif conductance is not None:
            part_list = [make_part({"conductance": conductance}, where)]
        else:
            if not isinstance(parts, (list, tuple)) or not parts:
                raise NetworkError("parts must be a non-empty list of parts in series",
                                   f"{where}.parts")
            part_list = [make_part(p, f"{where}.parts[{i}]") for i, p in enumerate(parts)]
        if a in self.boundaries and b in self.boundaries and not any(p.is_massive
                                                                        for p in part_list):
            raise NetworkError(f"a link between two boundaries ({a!r}, {b!r}) changes no node",
                               where, "link at least one node, or give the link a massive "
                               "layer with slices")
        link_area = None
        if area is not None:
            link_area = _nonneg(area, "area", f"{where}.area", positive=True)
        self.links[name] = Link(name, a, b, part_list, link_area, where)
        self.mark_changed()
        return name

    def add_radiation(self, name: str, surface: str, area, emissivity, sees, *,
                      temperatures=None, where: str | None = None):
        """Radiation from one grey surface to several nodes or boundaries, one surface resistance.

        ``sees`` lists ``{"node": point, "view_factor": F}`` (or maps point to F); view factors
        sum to at most 1. Exact in T^4 unless ``temperatures = [surface, surroundings]`` (or one
        per seen point) linearises it. Adds links ``<name>:<point>``; see
        :func:`rcsim.radiation_links.add_radiation`.
        """
        from .radiation_links import add_radiation

        return add_radiation(self, name, surface, area, emissivity, sees,
                             temperatures=temperatures, where=where)

    def add_enclosure(self, name: str, surfaces, emissivities, *, areas=None, view_factors=None,
                      shape=None, reradiating=None, temperatures=None,
                      where: str | None = None):
        """A grey diffuse enclosure of N surfaces (a view-factor matrix or a closed shape), wired
        as one radiation link ``<name>:<a>-<b>`` per pair of points; see
        :func:`rcsim.radiation_links.add_enclosure`.
        """
        from .radiation_links import add_enclosure

        return add_enclosure(self, name, surfaces, emissivities, areas=areas,
                             view_factors=view_factors, shape=shape, reradiating=reradiating,
                             temperatures=temperatures, where=where)

    def add_source(self, node: str, power, name: str | None = None,
                   where: str | None = None) -> str:
        """Inject ``power`` [W] (number, string or profile) into ``node``."""
        node = _nfc(node)
        name = name if name is not None else node
        where = where or f"sources.{name}"
        name = _check_name(name, "source")
        if name in self.sources:
            raise NetworkError(f"duplicate source name {name!r}", where)
        if node not in self.nodes:
            hint = ("sources heat nodes; a boundary's temperature is imposed"
                    if node in self.boundaries else suggest(node, list(self.nodes)))
            raise NetworkError(f"unknown node {node!r}", f"{where}.node", hint)
        prof = as_profile(power, "power", f"{where}.power")
        self.sources[name] = Source(name, node, prof, where)
        self.mark_changed()
        return name

    def add_limit(self, node: str, min=None, max=None, where: str | None = None) -> str:  # noqa: A002
        """A temperature band for ``node``: min and/or max [degC]."""
        node = _nfc(node)
        where = where or f"limits.{node}"
        if node not in self.nodes and not self.is_internal_name(node):
            raise NetworkError(f"unknown node {node!r}", where, suggest(node, list(self.nodes)))
        lo = None if min is None else to_si(min, "temperature", f"{where}.min")
        hi = None if max is None else to_si(max, "temperature", f"{where}.max")
        if lo is None and hi is None:
            raise NetworkError("a limit needs min, max or both", where)
        if lo is not None and hi is not None and lo >= hi:
            raise NetworkError(f"min ({lo:g} degC) must be below max ({hi:g} degC)", where)
        self.limits[node] = Limit(node, lo, hi, where)
        return node

    def add_thermostat(self, name: str, node: str, setpoint, band, power, *, sensor=None,
                       mode: str = "heat", control: str = "on-off", initially=None,
                       where: str | None = None) -> str:
        """A heater (``mode='heat'``) or cooler (``'cool'``) of ``power`` [W] on ``node``.

        It senses ``sensor`` (default ``node``). ``control='on-off'`` switches with a dead band
        ``band`` [K] centred on ``setpoint``; ``'proportional'`` varies the power linearly across
        the band. See :class:`rcsim.thermostat.Thermostat`.
        """
        where = where or f"thermostats.{name}"
        name = _check_name(name, "thermostat")
        if name in self.thermostats or name in self.sources:
            raise NetworkError(f"duplicate name {name!r} (sources and thermostats share names)",
                               where)
        spec = {"node": _nfc(node), "setpoint": setpoint, "band": band, "power": power, "mode": mode,
                "control": control}
        if sensor is not None:
            spec["sensor"] = _nfc(sensor)
        if initially is not None:
            spec["initially"] = initially
        self.thermostats[name] = make_thermostat(name, spec, where, self.nodes)
        self.mark_changed()
        return name

    def add_surface(self, name: str, node: str, *, area, absorptance, emissivity, air,
                    irradiance=0.0, sky_temperature=None, tilt=None, sky_view=None, film=None,
                    shading=0.0, ground_temperature=None, linearise_radiation=None, sky=None,
                    where: str | None = None) -> str:
        """An exposed surface of ``node``: absorbed sun, long-wave exchange with the sky and the
        ground, and an outside film to the boundary ``air`` (fixed h, or following the wind).

        ``film`` is ``{"h": "20 W/(m^2*K)"}`` or ``{"wind": <wind speed profile [m/s]>,
        "model": "iso6946"}``; ``irradiance`` [W/m^2 on the plane], ``sky_temperature`` [degC]
        and ``shading`` (0..1) are numbers, strings with units or profiles; ``sky`` names an
        existing sky boundary instead. Runs record the surface's sol-air temperature
        (``Result.sol_air``). See :func:`rcsim.surfaces.add_surface`.
        """
        from .surfaces import add_surface   # the model's own floor: builds parts of this network

        return add_surface(self, name, node, area=area, absorptance=absorptance,
                           emissivity=emissivity, air=air, irradiance=irradiance,
                           sky_temperature=sky_temperature, tilt=tilt, sky_view=sky_view,
                           film=film, shading=shading, ground_temperature=ground_temperature,
                           linearise_radiation=linearise_radiation, sky=sky, where=where)

    def is_internal_name(self, name: str) -> bool:
        """Whether ``name`` is that of an internal node of a massive layer (``<link>.<i>``)."""
        link, _, idx = name.rpartition(".")
        return link in self.links and idx.isdigit()

    _is_internal_name = is_internal_name   # older name

    # -- assembly -----------------------------------------------------------------------------
    def assemble(self, check: bool = True) -> Assembled:
        """Assemble (and cache) the sparse matrices. Warns on doubtful lumped layers.

        ``check`` (default) refuses links too stiff for double precision next to their
        neighbours (:func:`rcsim.conditioning.check_stiff_groups`); computations that need no
        matrix sums (the equivalent resistance) pass False.
        """
        if self._assembled is None:
            self._assembled = assemble_network(self)
            self._stiff_checked = False
        if check and not getattr(self, "_stiff_checked", False):
            check_stiff_groups(self._assembled)  # links too stiff for double precision
            self._stiff_checked = True
        return self._assembled

    # -- analysis (hand-offs to the solver modules) --------------------------------------------
    def steady(self, at: float = 0.0):
        """Steady state with boundaries and sources at their values at time ``at`` (default 0)."""
        from .steady import solve_steady  # solver layer above the model; thin hand-off

        return solve_steady(self, at=at)

    def equivalent_resistance(self, a: str, b: str, at: float = 0.0) -> float:
        """Equivalent resistance [K/W] between two points, nonlinear links at their secant
        value in the steady state at ``at`` [s] (see :func:`rcsim.steady.equivalent_resistance`)."""
        from .steady import equivalent_resistance

        return equivalent_resistance(self, a, b, at=at)

    def time_constants(self) -> np.ndarray:
        """Time constants of the network's modes [s], longest first (inf for floating groups)."""
        from .modes import time_constants

        return time_constants(self)

    def modes(self):
        """Modes with time constants and the nodes taking part most (see :func:`rcsim.modes.modes_table`)."""
        from .modes import modes_table

        return modes_table(self)

    def simulate(self, duration, step, *, initial=None, solver: str = "auto", record=None,
                 output=None, rtol: float = 1e-6, atol: float = 1e-6, progress=None,
                 start_time=None, scenario_text=None, times=None):
        """Integrate the network over time and return a :class:`rcsim.Result`.

        Parameters
        ----------
        duration, step : float or str
            Simulated span and output interval (``"72 h"``, ``"5 min"``).
        initial : None, 'given', 'steady', 'periodic' or dict
            Initial state: the nodes' own initial temperatures (default), the steady state at
            t = 0, the periodic regime of periodic inputs, or a {node: temperature} mapping.
        solver : 'auto', 'exact', 'piecewise' or 'stiff'
            The transient paths of :data:`rcsim.transient.registry.PATHS`: 'exact' (modal,
            closed form) for linear networks of up to 2000 states; 'piecewise' (closed form
            between phase-change and thermostat events, waveform relaxation for radiation and
            film correlations) for networks of up to 200 states; 'stiff' (BDF with an analytic
            sparse Jacobian) for any network; 'auto' takes the first of them that takes the run,
            falling back to the next where one does not suit. The reasons of the paths that
            declined are kept in ``result.run_info.declined`` (and the piecewise path's in
            ``meta['stats']['piecewise_declined']``).
        record : list of str, optional
            Nodes whose histories are kept (default all).
        output : str or path, optional
            Stream the histories to this HDF5 file in chunks (bounded memory).
        rtol, atol : float
            Tolerances of the piecewise and stiff paths.
        progress : callable, optional
            Called with the fraction done (0..1), a growing number.
        times : array, optional
            Output at these times [s] (any spacing) instead of every ``step``; t = 0 and the
            end are always included.
        """
        from .transient import simulate  # thin hand-off to the solver layer

        return simulate(self, duration, step, initial=initial, solver=solver, record=record,
                        output=output, rtol=rtol, atol=atol, progress=progress,
                        start_time=start_time, scenario_text=scenario_text, times=times)

    def summary(self) -> str:
        """A plain-text summary of the network (used by ``rcsim check``)."""
        from .steady import network_summary

        return network_summary(self)


def _nonneg(value, kind, where, positive=False) -> float:
    x = to_si(value, kind, where)
    if x < 0 or (positive and x == 0):
        raise InputError(f"must be {'positive' if positive else 'non-negative'}, got {value!r}",
                         where)
    return x
