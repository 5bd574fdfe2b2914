"""The registry of view-factor shapes: each with its parameters, what it returns and its source.

:func:`describe_shapes` lists it; :func:`view_factor` and :func:`enclosure_view_factors` call a
shape by name with checked dimensions (the scenario reader's way in).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

from ..base import suggest
from ..errors import InputError
from . import enclosures as _enc
from . import formulas as _f

__all__ = [
    "Shape",
    "SHAPES",
    "describe_shapes",
    "view_factor",
    "enclosure_view_factors",
]


# -- the registry ---------------------------------------------------------------------------
@dataclass(frozen=True)
class Shape:
    """A view-factor shape: its function, parameters (SI lengths [m] unless said), its result.

    ``returns`` is ``"factor"`` (one view factor) or ``"enclosure"`` (areas and a full matrix,
    with ``surfaces`` naming the rows).
    """

    name: str
    function: Callable
    parameters: tuple
    returns: str
    description: str
    source: str
    surfaces: tuple = ()
    angles: tuple = ()      # parameters that are angles [rad], not lengths
    signed: tuple = ()      # parameters that may be zero or negative (positions)


_T132 = "Incropera et al., 6th ed., Table 13.2"
_T131 = "Incropera et al., 6th ed., Table 13.1"
SHAPES: dict[str, Shape] = {s.name: s for s in (
    Shape("parallel_rectangles_aligned", _f.parallel_rectangles_aligned,
          ("length_x", "length_y", "distance"), "factor",
          "equal, directly opposed parallel rectangles", _T132),
    Shape("parallel_rectangles", lambda **d: _f.parallel_rectangles(
        (d["x1"], d["x2"], d["y1"], d["y2"]), (d["xi1"], d["xi2"], d["eta1"], d["eta2"]),
        d["distance"]),
        ("x1", "x2", "y1", "y2", "xi1", "xi2", "eta1", "eta2", "distance"), "factor",
        "parallel rectangles of any size and position", "Howell et al., catalogue",
        signed=("x1", "x2", "y1", "y2", "xi1", "xi2", "eta1", "eta2")),
    Shape("perpendicular_rectangles", _f.perpendicular_rectangles_common_edge,
          ("common", "width_from", "width_to"), "factor",
          "perpendicular rectangles with a common edge", _T132),
    Shape("coaxial_discs", _f.coaxial_discs, ("radius_from", "radius_to", "distance"), "factor",
          "coaxial parallel discs", _T132),
    Shape("parallel_strips", _f.parallel_strips, ("width_from", "width_to", "distance"), "factor",
          "long parallel strips, midlines on one perpendicular", _T131),
    Shape("perpendicular_strips", _f.perpendicular_strips_common_edge,
          ("width_from", "width_to"), "factor", "long perpendicular strips, common edge", _T131),
    Shape("inclined_strips", _f.inclined_strips_common_edge, ("angle",), "factor",
          "long equal strips with a common edge at an angle [rad]", _T131, angles=("angle",)),
    Shape("three_sided_enclosure", _f.three_sided_enclosure,
          ("width_from", "width_to", "width_other"), "factor", "long three-sided enclosure",
          _T131),
    Shape("cylinder_and_parallel_strip", _f.cylinder_and_parallel_strip,
          ("radius", "distance", "edge_1", "edge_2"), "factor",
          "long strip to a parallel long cylinder", _T131, signed=("edge_1", "edge_2")),
    Shape("parallel_cylinders", _f.parallel_cylinders, ("radius", "gap"), "factor",
          "long parallel cylinders of equal radius", "Howell et al., catalogue",
          signed=("gap",)),
    Shape("plane_and_row_of_cylinders", _f.plane_and_row_of_cylinders, ("diameter", "pitch"),
          "factor", "infinite plane to a row of long cylinders", _T131),
    Shape("concentric_cylinders", _enc.concentric_cylinders, ("inner_radius", "outer_radius",
                                                          "length"), "enclosure",
          "long concentric cylinders", "Incropera et al., 6th ed., section 13.1",
          surfaces=("inner", "outer")),
    Shape("concentric_spheres", _enc.concentric_spheres, ("inner_radius", "outer_radius"),
          "enclosure", "concentric spheres", "Incropera et al., 6th ed., section 13.1",
          surfaces=("inner", "outer")),
    Shape("cylinder_cavity", _enc.cylinder_cavity, ("radius", "length"), "enclosure",
          "closed right circular cylinder (discs and side)", _T132,
          surfaces=("bottom", "top", "side")),
    Shape("box_interior", _enc.box_interior, ("length", "width", "height"), "enclosure",
          "the six inside faces of a rectangular box", _T132, surfaces=_enc.BOX_FACES),
)}


def describe_shapes() -> str:
    """One line per registered shape: name, parameters, what it returns, source.

    >>> print(describe_shapes().splitlines()[3])  # doctest: +NORMALIZE_WHITESPACE
    coaxial_discs(radius_from, radius_to, distance) -> factor: coaxial parallel discs
    [Incropera et al., 6th ed., Table 13.2]
    """
    return "\n".join(f"{s.name}({', '.join(s.parameters)}) -> {s.returns}: {s.description} "
                     f"[{s.source}]" for s in SHAPES.values())


def _call(name: str, dims: dict, returns: str, where: str):
    if name not in SHAPES:
        raise InputError(f"unknown view-factor shape {name!r}", where, suggest(name, SHAPES))
    shape = SHAPES[name]
    if shape.returns != returns:
        other = "enclosure_view_factors" if shape.returns == "enclosure" else "view_factor"
        gives, wanted = ("a matrix", "one factor") if returns == "factor" else \
            ("one factor", "a matrix")
        raise InputError(f"shape {name!r} gives {gives}, not {wanted}", where, f"use {other}")
    optional = {"length"} if name == "concentric_cylinders" else set()
    for key in dims:
        if key not in shape.parameters:
            raise InputError(f"unknown parameter {key!r} of shape {name!r}", f"{where}.{key}",
                             suggest(key, shape.parameters))
    for key in shape.parameters:
        if key not in dims and key not in optional:
            raise InputError(f"missing parameter {key!r} of shape {name!r}", where,
                             f"{name} takes {', '.join(shape.parameters)}")
    values = {}
    for key, value in dims.items():
        try:
            x = float(value)
        except (TypeError, ValueError):
            raise InputError(f"expected a number, got {value!r}", f"{where}.{key}") from None
        if not np.isfinite(x) or (key not in shape.signed and x <= 0):
            raise InputError(f"{key} must be a positive finite number, got {value!r}",
                             f"{where}.{key}")
        values[key] = x
    _check_geometry(name, values, where)
    return shape.function(**values)


def _check_geometry(name: str, d: dict, where: str) -> None:
    """Refuse dimensions a shape's formula does not cover."""
    def fail(message, hint=None):
        raise InputError(message, where, hint)

    if name in ("concentric_cylinders", "concentric_spheres") and \
            d["outer_radius"] <= d["inner_radius"]:
        fail("outer_radius must exceed inner_radius")
    if name == "inclined_strips" and d["angle"] > np.pi:
        fail(f"angle {d['angle']:g} rad is above pi", "give the included angle in radians")
    if name == "plane_and_row_of_cylinders" and d["diameter"] > d["pitch"]:
        fail("the cylinders overlap (diameter above pitch)")
    if name == "cylinder_and_parallel_strip":
        if d["distance"] <= d["radius"]:
            fail("the strip's plane cuts the cylinder (distance <= radius)")
        if d["edge_1"] <= d["edge_2"]:
            fail("edge_1 must exceed edge_2")
    if name == "parallel_cylinders" and d["gap"] < 0:
        fail("the cylinders overlap (negative gap)")
    if name == "parallel_rectangles" and (d["x2"] <= d["x1"] or d["y2"] <= d["y1"]
                                          or d["xi2"] <= d["xi1"] or d["eta2"] <= d["eta1"]):
        fail("each rectangle needs x1 < x2 and y1 < y2 (xi1 < xi2, eta1 < eta2)")
    if name == "three_sided_enclosure":
        w = sorted((d["width_from"], d["width_to"], d["width_other"]))
        if w[2] >= w[0] + w[1]:
            fail("these three widths do not close a triangle")


def view_factor(shape: str, where: str = "view_factor", **dimensions) -> float:
    """One view factor of a registered shape, with checked dimensions [m] (angles [rad]).

    >>> round(view_factor("coaxial_discs", radius_from=1, radius_to=1, distance=1), 3)
    0.382
    """
    return _call(shape, dimensions, "factor", where)


def enclosure_view_factors(shape: str, where: str = "shape", **dimensions):
    """(areas [m^2], F, surface names) of a registered enclosure shape.

    >>> a, f, names = enclosure_view_factors("concentric_spheres", inner_radius=1, outer_radius=2)
    >>> names
    ('inner', 'outer')
    """
    areas, F = _call(shape, dimensions, "enclosure", where)
    return areas, F, SHAPES[shape].surfaces
