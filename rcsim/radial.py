"""Slicing plane, cylindrical and spherical layers into a series ladder of massive slices.

A layer that stores heat becomes a chain of slices; each slice is one node with its capacity
(density x specific heat x the slice's *true* volume) between two resistances that join it to the
slice's inner and outer faces:

    inner face --R_in[0]-- node 0 --R_out[0]--+--R_in[1]-- node 1 --R_out[1]--+ ... outer face

Radial slice resistances are the exact steady shell relations (Incropera et al. [1]_ eqs. 3.6,
3.33, 3.41, 3.36):

* plane     R = t / (k A)
* cylinder  R = ln(b/a) / (2 pi k L)
* sphere    R = (1/a - 1/b) / (4 pi k)

so the slices of a layer always add up to the whole layer's resistance. Each node sits at the
middle of its slice's thickness, (a + b)/2, as in rcsim's plane ladder, with the exact shell
resistances from there to each face (a finite-volume ladder; against the series solution of a
suddenly cooled solid cylinder this placement converges faster than nodes at the geometric or
volume-halving radius, see tests/test_radial.py). A solid core
(inner radius 0) has no inner face: its node joins the outer face through the resistance between
the mean temperature of a core with uniform heating and its surface, 1/(8 pi k L) for a cylinder
and 1/(20 pi k b) for a sphere (closed form derived here from T(r) - T(b) = q'''(b^2 - r^2)/(4k)
and q'''(b^2 - r^2)/(6k)), and ``inner_half[0]`` is infinite; ``nodes[0]`` is the radius where
that profile equals its mean (b/sqrt 2 and b sqrt 0.6).

Slicing: ``"thickness"`` gives slices of equal thickness; ``"resistance"`` slices of equal
resistance (cylinder radii in geometric progression, sphere radii with 1/r in arithmetic
progression), which puts thinner slices where the heat flow crowds, at the inner radius.

Phase change in a sliced layer needs each slice's mass, ``density * volumes``
(:attr:`Slices.masses`): each slice node then carries the enthalpy curve of that mass.

References
----------
.. [1] F. P. Incropera, D. P. DeWitt, T. L. Bergman, A. S. Lavine, *Fundamentals of Heat and Mass
   Transfer*, 6th ed., Wiley, 2007, sections 3.1-3.3 (plane wall, cylinder, sphere) and 5.6
   (radial systems with convection). Cited from memory.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from .errors import InputError

__all__ = [
    "Slices",
    "plane_slices",
    "cylinder_slices",
    "sphere_slices",
    "slice_edges",
    "volume_cylinder_shell",
    "volume_sphere_shell",
    "radii_from",
    "with_centre",
    "SPACINGS",
]

#: slicing rules
SPACINGS = ("thickness", "resistance")


@dataclass(frozen=True)
class Slices:
    """A layer cut into slices, inner face first (arrays of length n, ``edges`` n + 1).

    Attributes
    ----------
    geometry : str
        ``"plane"``, ``"cylinder"`` or ``"sphere"``.
    edges : array
        Slice faces: radii [m] (positions from the first face for a plane layer).
    nodes : array
        Where each node sits [m]: mid-thickness (see the module notes for a solid core).
    resistances : array
        Each slice's face-to-face resistance [K/W] (infinite for a solid core).
    inner_half, outer_half : array
        Node to inner face and node to outer face [K/W].
    volumes : array
        True slice volumes [m^3].
    capacities : array or None
        rho c V [J/K] when density and specific heat were given.
    density : float or None
        [kg/m^3], for :attr:`masses`.
    """

    geometry: str
    edges: np.ndarray
    nodes: np.ndarray
    resistances: np.ndarray
    inner_half: np.ndarray
    outer_half: np.ndarray
    volumes: np.ndarray
    capacities: np.ndarray | None = None
    density: float | None = None

    @property
    def count(self) -> int:
        return int(self.volumes.size)

    @property
    def total_resistance(self) -> float:
        """Resistance from the inner to the outer face [K/W] (inf for a solid core)."""
        return float(self.resistances.sum())

    @property
    def total_volume(self) -> float:
        return float(self.volumes.sum())

    @property
    def masses(self) -> np.ndarray:
        """Slice masses [kg] (for phase change in the slices); needs the density."""
        if self.density is None:
            raise InputError("the slices' masses need the layer's density", "density")
        return self.density * self.volumes

    def ladder(self) -> np.ndarray:
        """The n + 1 series resistances of the ladder [K/W]: inner face to node 0, node i to
        node i+1, node n-1 to the outer face (the first is infinite for a solid core)."""
        inner = np.concatenate([self.inner_half, [0.0]])
        outer = np.concatenate([[0.0], self.outer_half])
        return inner + outer


def _number(value, key, where, *, allow_zero=False) -> float:
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{key} must be a number, got {value!r}", f"{where}.{key}") from None
    if not np.isfinite(x) or x < 0 or (x == 0 and not allow_zero):
        raise InputError(f"{key} must be {'non-negative' if allow_zero else 'positive'}, "
                         f"got {value!r}", f"{where}.{key}")
    return x


def _count(slices, where) -> int:
    if isinstance(slices, bool) or not isinstance(slices, (int, np.integer)) or \
            not 1 <= slices <= 10_000:
        raise InputError(f"slices must be a whole number from 1 to 10000, got {slices!r}",
                         f"{where}.slices")
    return int(slices)


def slice_edges(inner, outer, slices, spacing="thickness", geometry="cylinder",
                where: str = "layer"):
    """Faces of ``slices`` slices between ``inner`` and ``outer`` [m], inner first.

    >>> slice_edges(1.0, 4.0, 2, "resistance").tolist()
    [1.0, 2.0, 4.0]
    >>> slice_edges(1.0, 2.0, 2, "resistance", "sphere").round(6).tolist()
    [1.0, 1.333333, 2.0]
    """
    n = _count(slices, where)
    if spacing not in SPACINGS:
        raise InputError(f"spacing must be one of {', '.join(SPACINGS)}, got {spacing!r}",
                         f"{where}.spacing")
    frac = np.linspace(0.0, 1.0, n + 1)
    if spacing == "thickness" or geometry == "plane":
        edges = inner + (outer - inner) * frac
    elif inner == 0.0:
        raise InputError("equal-resistance slices need an inner radius above 0 (a solid core "
                         "has infinite radial resistance at its axis)", f"{where}.spacing",
                         "use spacing = 'thickness' for a solid cylinder or sphere")
    elif geometry == "cylinder":
        edges = inner * (outer / inner) ** frac
    else:
        edges = 1.0 / (1.0 / inner + (1.0 / outer - 1.0 / inner) * frac)
    edges[0], edges[-1] = inner, outer
    return edges


def volume_cylinder_shell(inner_radius, outer_radius, length):
    """pi (b^2 - a^2) L [m^3].

    >>> round(volume_cylinder_shell(0.0, 1.0, 1.0), 6)
    3.141593
    """
    a, b = np.asarray(inner_radius, dtype=float), np.asarray(outer_radius, dtype=float)
    out = np.pi * (b * b - a * a) * length
    return float(out) if out.ndim == 0 else out


def volume_sphere_shell(inner_radius, outer_radius):
    """4/3 pi (b^3 - a^3) [m^3].

    >>> round(volume_sphere_shell(0.0, 1.0), 6)
    4.18879
    """
    a, b = np.asarray(inner_radius, dtype=float), np.asarray(outer_radius, dtype=float)
    out = 4.0 / 3.0 * np.pi * (b ** 3 - a ** 3)
    return float(out) if out.ndim == 0 else out


def _capacities(volumes, density, specific_heat, where):
    if (density is None) != (specific_heat is None):
        raise InputError("give both density and specific_heat (or neither)", where)
    if density is None:
        return None, None
    rho = _number(density, "density", where)
    c = _number(specific_heat, "specific_heat", where)
    return rho * c * volumes, rho


def plane_slices(thickness, conductivity, area, slices, *, density=None, specific_heat=None,
                 where: str = "layer") -> Slices:
    """Equal slices of a plane layer (R = t/(kA) each, node at mid-thickness).

    >>> s = plane_slices(0.05, 0.033, 0.8, 5, density=30.0, specific_heat=1400.0)
    >>> round(s.total_resistance, 6), round(float(s.capacities.sum()), 3)
    (1.893939, 1680.0)
    """
    t = _number(thickness, "thickness", where)
    k = _number(conductivity, "conductivity", where)
    a = _number(area, "area", where)
    edges = slice_edges(0.0, t, slices, "thickness", "plane", where)
    r = np.diff(edges) / (k * a)
    volumes = np.diff(edges) * a
    caps, rho = _capacities(volumes, density, specific_heat, where)
    return Slices("plane", edges, 0.5 * (edges[:-1] + edges[1:]), r, 0.5 * r, 0.5 * r, volumes,
                  caps, rho)


def _radii(inner_radius, outer_radius, where):
    a = _number(inner_radius, "inner_radius", where, allow_zero=True)
    b = _number(outer_radius, "outer_radius", where)
    if b <= a:
        raise InputError(f"outer_radius must exceed inner_radius ({b:g} m <= {a:g} m)", where)
    return a, b


def cylinder_slices(inner_radius, outer_radius, conductivity, length, slices, *,
                    spacing: str = "thickness", density=None, specific_heat=None,
                    where: str = "layer") -> Slices:
    r"""Slices of a cylindrical shell (or a solid cylinder, inner radius 0).

    Parameters
    ----------
    inner_radius, outer_radius : float
        a >= 0, b > a [m].
    conductivity : float
        k [W/(m K)].
    length : float
        Axial length L [m] (radial conduction only).
    slices : int
        Number of slices (1 to 10000).
    spacing : "thickness" or "resistance"
        Equal thickness or equal resistance.
    density, specific_heat : float, optional
        For the capacities [kg/m^3], [J/(kg K)].

    Examples
    --------
    The slices of a shell add up to ln(b/a)/(2 pi k L) (Incropera et al. [1]_ eq. 3.33):

    >>> s = cylinder_slices(0.03, 0.05, 0.04, 1.0, 4)
    >>> round(s.total_resistance, 6)
    2.032511
    """
    a, b = _radii(inner_radius, outer_radius, where)
    k = _number(conductivity, "conductivity", where)
    L = _number(length, "length", where)
    e = slice_edges(a, b, slices, spacing, "cylinder", where)
    two_pi_kl = 2.0 * np.pi * k * L
    inner, outer = e[:-1], e[1:]
    nodes = 0.5 * (inner + outer)
    with np.errstate(divide="ignore"):
        r = np.log(outer / inner) / two_pi_kl
        inner_half = np.log(nodes / inner) / two_pi_kl
    outer_half = np.log(outer / nodes) / two_pi_kl
    if a == 0.0:  # solid core: mean of a uniformly heated core to its surface
        nodes[0] = outer[0] / np.sqrt(2.0)
        inner_half[0] = np.inf
        outer_half[0] = 1.0 / (4.0 * two_pi_kl)
    volumes = volume_cylinder_shell(inner, outer, L)
    caps, rho = _capacities(volumes, density, specific_heat, where)
    return Slices("cylinder", e, nodes, r, inner_half, outer_half, volumes, caps, rho)


def sphere_slices(inner_radius, outer_radius, conductivity, slices, *,
                  spacing: str = "thickness", density=None, specific_heat=None,
                  where: str = "layer") -> Slices:
    r"""Slices of a spherical shell (or a solid sphere, inner radius 0).

    Parameters as :func:`cylinder_slices` without the length.

    Examples
    --------
    The slices add up to (1/a - 1/b)/(4 pi k) (Incropera et al. [1]_ eq. 3.41):

    >>> s = sphere_slices(0.1, 0.15, 0.05, 3, spacing="resistance")
    >>> round(s.total_resistance, 6), bool(np.allclose(s.resistances, s.resistances[0]))
    (5.305165, True)
    """
    a, b = _radii(inner_radius, outer_radius, where)
    k = _number(conductivity, "conductivity", where)
    e = slice_edges(a, b, slices, spacing, "sphere", where)
    inner, outer = e[:-1], e[1:]
    nodes = 0.5 * (inner + outer)
    with np.errstate(divide="ignore"):
        r = (1.0 / inner - 1.0 / outer) / (4.0 * np.pi * k)
        inner_half = (1.0 / inner - 1.0 / nodes) / (4.0 * np.pi * k)
    outer_half = (1.0 / nodes - 1.0 / outer) / (4.0 * np.pi * k)
    if a == 0.0:  # solid core: mean of a uniformly heated core to its surface
        nodes[0] = outer[0] * np.sqrt(0.6)
        inner_half[0] = np.inf
        outer_half[0] = 1.0 / (20.0 * np.pi * k * outer[0])
    volumes = volume_sphere_shell(inner, outer)
    caps, rho = _capacities(volumes, density, specific_heat, where)
    return Slices("sphere", e, nodes, r, inner_half, outer_half, volumes, caps, rho)


def with_centre(slices: Slices) -> Slices:
    """A solid core's slices with a finite ``inner_half[0]``: the centre to the core's mean.

    A network joins a solid cylinder or sphere at its centre (the axis or the middle point), so
    the core slice needs a resistance from the centre to its node as well. With the core's heat
    spread evenly (the profile behind ``outer_half[0]``), T(0) - T_mean is q b^2/(8k) for a
    cylinder and q b^2/(10k) for a sphere (q the heat per volume), i.e. 1/(8 pi k L) (equal to
    the mean-to-surface resistance) and 3/(40 pi k b) (1.5 times it); centre to surface then adds
    up to the steady relations 1/(4 pi k L) and 1/(8 pi k b) of a uniformly heated core (closed
    forms derived here from T(r) - T(b) = q (b^2 - r^2)/(4k) and q (b^2 - r^2)/(6k)). Shells are
    returned as they are.

    >>> s = with_centre(cylinder_slices(0.0, 0.02, 0.5, 1.0, 1))
    >>> round(float(s.ladder().sum() * 4 * np.pi * 0.5), 12)
    1.0
    """
    if slices.geometry == "plane" or float(slices.edges[0]) != 0.0:
        return slices
    inner = slices.inner_half.copy()
    inner[0] = slices.outer_half[0] * (1.0 if slices.geometry == "cylinder" else 1.5)
    return dataclasses.replace(slices, inner_half=inner)


def radii_from(*, inner_radius=None, outer_radius=None, inner_diameter=None,
               outer_diameter=None, thickness=None, where: str = "layer"):
    """(inner radius, outer radius) [m] from any two of radius, diameter and thickness.

    Give the inner side (radius or diameter) or the outer side or both, and ``thickness`` when one
    side is missing; each side once only.

    >>> radii_from(inner_diameter=0.06, thickness=0.02)
    (0.03, 0.05)
    """
    def one(radius, diameter, name):
        if radius is not None and diameter is not None:
            raise InputError(f"give {name}_radius or {name}_diameter, not both", where)
        if radius is not None:
            return _number(radius, f"{name}_radius", where, allow_zero=(name == "inner"))
        if diameter is not None:
            return 0.5 * _number(diameter, f"{name}_diameter", where, allow_zero=(name == "inner"))
        return None

    a = one(inner_radius, inner_diameter, "inner")
    b = one(outer_radius, outer_diameter, "outer")
    t = None if thickness is None else _number(thickness, "thickness", where)
    given = sum(x is not None for x in (a, b, t))
    if given != 2:
        raise InputError("give exactly two of the inner side (radius or diameter), the outer "
                         f"side (radius or diameter) and the thickness ({given} given)", where)
    if a is None:
        a = b - t
        if a < 0:
            raise InputError(f"thickness {t:g} m exceeds the outer radius {b:g} m", where)
    elif b is None:
        b = a + t
    if b <= a:
        raise InputError(f"the outer radius must exceed the inner one ({b:g} m <= {a:g} m)", where)
    return a, b
