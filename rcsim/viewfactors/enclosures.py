"""View-factor matrices of closed enclosures, and the checks every matrix must pass.

Two rules hold for every set of view factors (Incropera et al. [1]_ eqs. 13.3 and 13.4):

* reciprocity   A_i F_ij = A_j F_ji
* summation     sum_j F_ij = 1 in a closed enclosure (at most 1 for surfaces that see a part only)

:func:`check_view_factors` enforces both with one-line errors naming the row.

References
----------
.. [1] F. P. Incropera, D. P. DeWitt, T. L. Bergman, A. S. Lavine, *Fundamentals of Heat and Mass
   Transfer*, 6th ed., Wiley, 2007, section 13.1, Table 13.1 (two-dimensional geometries) and
   Table 13.2 (three-dimensional geometries). Table numbers as in the 6th edition (the 7th edition
   keeps the same tables); cited from memory.
.. [2] J. R. Howell, M. P. Menguc, R. Siegel, *Thermal Radiation Heat Transfer*, 6th ed., CRC
   Press, 2015, appendix C and the online catalogue of configuration factors (cases for parallel
   rectangles of any size and position, parallel cylinders); cited from memory.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from .formulas import (coaxial_discs, parallel_rectangles_aligned,
                       perpendicular_rectangles_common_edge)

__all__ = [
    "concentric_cylinders",
    "concentric_spheres",
    "cylinder_cavity",
    "box_interior",
    "BOX_FACES",
    "check_view_factors",
]


# -- enclosures: areas and full matrices ------------------------------------------------------
def concentric_cylinders(inner_radius, outer_radius, length=1.0):
    r"""Long concentric cylinders: (areas [m^2], F [2 x 2]), surfaces (inner, outer).

    F_11 = 0, F_12 = 1, F_21 = r1/r2, F_22 = 1 - r1/r2; areas 2 pi r L (end effects ignored:
    long cylinders). Source: Incropera et al. [1]_ section 13.1 (concentric cylinders, by
    summation and reciprocity).

    >>> concentric_cylinders(1.0, 2.0)[1].tolist()
    [[0.0, 1.0], [0.5, 0.5]]
    """
    r1, r2, L = float(inner_radius), float(outer_radius), float(length)
    ratio = r1 / r2
    areas = np.array([2 * np.pi * r1 * L, 2 * np.pi * r2 * L])
    return areas, np.array([[0.0, 1.0], [ratio, 1.0 - ratio]])


def concentric_spheres(inner_radius, outer_radius):
    r"""Concentric spheres: (areas [m^2], F [2 x 2]), surfaces (inner, outer).

    F_12 = 1, F_21 = (r1/r2)^2, F_22 = 1 - (r1/r2)^2. Source: Incropera et al. [1]_ section 13.1.

    >>> concentric_spheres(1.0, 2.0)[1].tolist()
    [[0.0, 1.0], [0.25, 0.75]]
    """
    r1, r2 = float(inner_radius), float(outer_radius)
    ratio = (r1 / r2) ** 2
    areas = np.array([4 * np.pi * r1 * r1, 4 * np.pi * r2 * r2])
    return areas, np.array([[0.0, 1.0], [ratio, 1.0 - ratio]])


def cylinder_cavity(radius, length):
    r"""Closed right circular cylinder: (areas, F [3 x 3]), surfaces (bottom, top, side).

    F_bottom,top from :func:`coaxial_discs`; F_disc,side = 1 - F_bottom,top by summation;
    F_side,disc by reciprocity; F_side,side by summation. An open end is the disc surface of the
    opening (give it emissivity 1 at the surroundings' temperature). Source: Incropera et al. [1]_
    Table 13.2 with eqs. 13.3-13.4.

    >>> a, f = cylinder_cavity(0.0375, 0.15)
    >>> round(float(f[0, 1]), 4), round(float(f[2, 0]), 4)
    (0.0557, 0.118)
    """
    r, L = float(radius), float(length)
    f_dd = coaxial_discs(r, r, L)
    a_disc, a_side = np.pi * r * r, 2 * np.pi * r * L
    f_ds = 1.0 - f_dd
    f_sd = a_disc * f_ds / a_side
    F = np.array([[0.0, f_dd, f_ds], [f_dd, 0.0, f_ds], [f_sd, f_sd, 1.0 - 2 * f_sd]])
    return np.array([a_disc, a_disc, a_side]), F


#: face names of :func:`box_interior`, in order
BOX_FACES = ("floor", "lid", "front", "back", "left", "right")


def box_interior(length, width, height):
    r"""The six inside faces of a rectangular box: (areas, F [6 x 6]), faces :data:`BOX_FACES`.

    ``length`` runs along x (front/back faces lie across it), ``width`` along y (left/right),
    ``height`` along z (floor/lid). Opposite faces from :func:`parallel_rectangles_aligned`,
    adjacent ones from :func:`perpendicular_rectangles_common_edge`; rows sum to 1 exactly.
    Source: Incropera et al. [1]_ Table 13.2.

    >>> a, f = box_interior(1.0, 1.0, 1.0)
    >>> round(float(f[0, 1]), 4), round(float(f[0, 2]), 4), round(float(f.sum(axis=1).max()), 12)
    (0.1998, 0.2, 1.0)
    """
    L, W, H = float(length), float(width), float(height)
    # face: (size along its first axis, size along its second axis, normal axis, distance apart)
    dims = {"floor": (L, W, "z"), "lid": (L, W, "z"), "front": (W, H, "x"), "back": (W, H, "x"),
            "left": (L, H, "y"), "right": (L, H, "y")}
    span = {"x": L, "y": W, "z": H}
    axes_of = {"z": ("x", "y"), "x": ("y", "z"), "y": ("x", "z")}
    areas = np.array([dims[f][0] * dims[f][1] for f in BOX_FACES])
    F = np.zeros((6, 6))
    for i, fi in enumerate(BOX_FACES):
        ni = dims[fi][2]
        for j, fj in enumerate(BOX_FACES):
            nj = dims[fj][2]
            if i == j:
                continue
            if ni == nj:
                F[i, j] = parallel_rectangles_aligned(dims[fi][0], dims[fi][1], span[ni])
            else:
                common = ({"x", "y", "z"} - {ni, nj}).pop()
                from_width = span[[a for a in axes_of[ni] if a != common][0]]
                to_width = span[[a for a in axes_of[nj] if a != common][0]]
                F[i, j] = perpendicular_rectangles_common_edge(span[common], from_width, to_width)
    return areas, F


# -- checks ---------------------------------------------------------------------------------
def check_view_factors(areas, view_factors, *, names=None, closed: bool = True,
                       tolerance: float = 0.01, where: str = "view_factors"):
    """Check a view-factor matrix and return it (and the areas) as float arrays.

    Rules: a square matrix with one row per area; areas positive (``inf`` marks large black
    surroundings, whose row must be zero apart from its own diagonal); every F_ij in [0, 1];
    each row sums to at most 1 + ``tolerance`` (and at least 1 - ``tolerance`` when ``closed``);
    reciprocity |A_i F_ij - A_j F_ji| <= ``tolerance`` * max(A_i F_ij, A_j F_ji).

    Raises
    ------
    InputError
        Naming the row (and column) and what would fix it.

    Examples
    --------
    >>> a, f = check_view_factors([1.0, 2.0], [[0.0, 1.0], [0.5, 0.5]])
    >>> f[1].tolist()
    [0.5, 0.5]
    """
    A = np.asarray(areas, dtype=float)
    F = np.asarray(view_factors, dtype=float)
    n = A.size
    label = (lambda i: f"row {i} ({names[i]!r})") if names is not None else (lambda i: f"row {i}")
    if A.ndim != 1 or n == 0:
        raise InputError("areas must be a list of surface areas", where)
    if F.shape != (n, n):
        raise InputError(f"the view factors must be a {n} x {n} matrix (one row and one column "
                         f"per surface), got shape {F.shape}", where)
    if names is not None and len(names) != n:
        raise InputError(f"{len(names)} names for {n} surfaces", where)
    for i in range(n):
        if not (A[i] > 0):  # also refuses NaN
            raise InputError(f"area of surface {i} must be positive, got {A[i]!r}", where,
                             "give the area in m^2 (inf for large surroundings)")
    if not np.all(np.isfinite(F)):
        i, j = np.argwhere(~np.isfinite(F))[0]
        raise InputError(f"{label(i)}, column {j}: view factor is not a number", where)
    bad = (F < 0) | (F > 1)
    if bad.any():
        i, j = np.argwhere(bad)[0]
        raise InputError(f"{label(i)}, column {j}: view factor {F[i, j]:g} outside [0, 1]", where)
    big = np.isinf(A)
    for i in np.flatnonzero(big):
        off = np.delete(F[i], i)
        if off.any():
            raise InputError(f"{label(i)}: large surroundings (infinite area) see none of the "
                             "finite surfaces", where, "set its row to 0 apart from 1 on its "
                             "own diagonal")
    sums = F.sum(axis=1)
    for i in range(n):
        if sums[i] > 1 + tolerance:
            raise InputError(f"{label(i)}: view factors sum to {sums[i]:.4g} > 1", where,
                             "a surface cannot send more than all its radiation; lower the "
                             "largest entries of the row")
        if closed and sums[i] < 1 - tolerance:
            raise InputError(f"{label(i)}: view factors sum to {sums[i]:.4g} < 1 in a closed "
                             "enclosure", where, "add the missing surfaces (an opening is a "
                             "surface of emissivity 1 at the surroundings' temperature) or set "
                             f"F_{i}{i} = {1 - sums[i] + F[i, i]:.4g} for a concave surface")
    fin = ~big
    for i in range(n):
        for j in range(i + 1, n):
            if not (fin[i] and fin[j]):
                continue
            g_ij, g_ji = A[i] * F[i, j], A[j] * F[j, i]
            if abs(g_ij - g_ji) > tolerance * max(g_ij, g_ji):
                raise InputError(f"{label(i)}, column {j}: reciprocity A_i F_ij = A_j F_ji "
                                 f"fails ({g_ij:.4g} m^2 against {g_ji:.4g} m^2)", where,
                                 f"with these areas F_{j}{i} would be {g_ij / A[j]:.4g}")
    return A, F
