"""View factors of diffuse surfaces: closed forms, enclosure matrices, checks and a registry.

A view factor F_ij is the fraction of the radiation leaving diffuse surface i that reaches
surface j. The package holds

* :mod:`~rcsim.viewfactors.formulas`: closed forms for two surfaces (Incropera et al. Tables
  13.1 and 13.2, Howell's catalogue),
* :mod:`~rcsim.viewfactors.enclosures`: full matrices of closed shapes (concentric cylinders and
  spheres, a cylinder cavity, the inside of a box) and :func:`check_view_factors` (reciprocity,
  summation, ranges),
* :mod:`~rcsim.viewfactors.registry`: :data:`SHAPES` by name, :func:`describe_shapes`,
  :func:`view_factor`, :func:`enclosure_view_factors`.

Everything is re-exported here.
"""

from .formulas import (  # noqa: F401  (re-exported)
    parallel_rectangles_aligned,
    parallel_rectangles,
    perpendicular_rectangles_common_edge,
    coaxial_discs,
    parallel_strips,
    perpendicular_strips_common_edge,
    inclined_strips_common_edge,
    three_sided_enclosure,
    cylinder_and_parallel_strip,
    parallel_cylinders,
    plane_and_row_of_cylinders,
)
from .enclosures import (  # noqa: F401  (re-exported)
    concentric_cylinders,
    concentric_spheres,
    cylinder_cavity,
    box_interior,
    BOX_FACES,
    check_view_factors,
)
from .registry import (  # noqa: F401  (re-exported)
    Shape,
    SHAPES,
    describe_shapes,
    view_factor,
    enclosure_view_factors,
)

__all__ = [
    "parallel_rectangles_aligned",
    "parallel_rectangles",
    "perpendicular_rectangles_common_edge",
    "coaxial_discs",
    "parallel_strips",
    "perpendicular_strips_common_edge",
    "inclined_strips_common_edge",
    "three_sided_enclosure",
    "cylinder_and_parallel_strip",
    "parallel_cylinders",
    "plane_and_row_of_cylinders",
    "concentric_cylinders",
    "concentric_spheres",
    "cylinder_cavity",
    "box_interior",
    "BOX_FACES",
    "check_view_factors",
    "Shape",
    "SHAPES",
    "describe_shapes",
    "view_factor",
    "enclosure_view_factors",
]
