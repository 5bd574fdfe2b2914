"""View factors of diffuse surfaces: closed forms, enclosure matrices and their checks.

Every function is pure: SI lengths in (numbers or numpy arrays, broadcast), view factors out. A
view factor F_ij is the fraction of the radiation leaving diffuse surface i that reaches surface j.
Two rules hold for every set of view factors (Incropera et al. [1]_ eqs. 13.3 and 13.4):

* reciprocity   A_i F_ij = A_j F_ji
* summation     sum_j F_ij = 1 in a closed enclosure (at most 1 for surfaces that see a part only)

:func:`check_view_factors` enforces both on a matrix with one-line errors naming the row.

The registry :data:`SHAPES` lists each shape with its parameters, what it returns and its source;
:func:`describe_shapes` prints it, :func:`view_factor` and :func:`enclosure_view_factors` call a
shape by name with checked dimensions.

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

from dataclasses import dataclass
from typing import Callable

import numpy as np

from .base import suggest
from .errors import InputError

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
    "check_view_factors",
    "Shape",
    "SHAPES",
    "describe_shapes",
    "view_factor",
    "enclosure_view_factors",
]


def _plain(value):
    """A Python float for a scalar result, the array otherwise."""
    return float(value) if np.ndim(value) == 0 else value


def _arr(*values):
    return [np.asarray(v, dtype=float) for v in values]


# -- three-dimensional geometries (Incropera Table 13.2) -----------------------------------------
def parallel_rectangles_aligned(length_x, length_y, distance):
    r"""View factor between two equal, directly opposed parallel rectangles [-].

    .. math::
        F = \frac{2}{\pi \bar X \bar Y}\Big\{\ln\Big[\frac{(1+\bar X^2)(1+\bar Y^2)}
        {1+\bar X^2+\bar Y^2}\Big]^{1/2} + \bar X\sqrt{1+\bar Y^2}\tan^{-1}\frac{\bar X}
        {\sqrt{1+\bar Y^2}} + \bar Y\sqrt{1+\bar X^2}\tan^{-1}\frac{\bar Y}{\sqrt{1+\bar X^2}}
        - \bar X\tan^{-1}\bar X - \bar Y\tan^{-1}\bar Y\Big\}

    with X̄ = X/L, Ȳ = Y/L.

    Parameters
    ----------
    length_x, length_y : float or array
        Side lengths X, Y of each rectangle [m].
    distance : float or array
        Distance L between the planes [m].

    Notes
    -----
    Source: Incropera et al. [1]_ Table 13.2 (aligned parallel rectangles). Any positive sizes.

    Examples
    --------
    Two unit squares one unit apart (published value 0.1998):

    >>> round(parallel_rectangles_aligned(1.0, 1.0, 1.0), 4)
    0.1998
    """
    x, y, d = _arr(length_x, length_y, distance)
    X, Y = x / d, y / d
    ax, ay = np.sqrt(1 + X * X), np.sqrt(1 + Y * Y)
    f = (0.5 * np.log((1 + X * X) * (1 + Y * Y) / (1 + X * X + Y * Y))
         + X * ay * np.arctan(X / ay) + Y * ax * np.arctan(Y / ax)
         - X * np.arctan(X) - Y * np.arctan(Y))
    return _plain(2.0 / (np.pi * X * Y) * f)


def _parallel_term(dx, dy, c):
    """Howell's primitive G(u, v) for parallel rectangles (see :func:`parallel_rectangles`);
    c > 0, so no term is singular."""
    ux = np.sqrt(dx * dx + c * c)
    uy = np.sqrt(dy * dy + c * c)
    return (dy * ux * np.arctan(dy / ux) + dx * uy * np.arctan(dx / uy)
            - 0.5 * c * c * np.log(dx * dx + dy * dy + c * c))


def parallel_rectangles(first, second, distance):
    r"""View factor from one rectangle to a parallel one of any size and position [-].

    Rectangle 1 spans x in [x1, x2], y in [y1, y2] in its plane; rectangle 2 spans xi in
    [xi1, xi2], eta in [eta1, eta2] in a parallel plane at distance c, both in the same axes:

    .. math::
        A_1 F_{12} = \frac{1}{2\pi}\sum_{l=1}^{2}\sum_{k=1}^{2}\sum_{j=1}^{2}\sum_{i=1}^{2}
        (-1)^{i+j+k+l}\, G(x_i - \xi_k,\; y_j - \eta_l)

    .. math::
        G(u, v) = v\sqrt{u^2+c^2}\tan^{-1}\frac{v}{\sqrt{u^2+c^2}} + u\sqrt{v^2+c^2}
        \tan^{-1}\frac{u}{\sqrt{v^2+c^2}} - \frac{c^2}{2}\ln(u^2+v^2+c^2)

    Parameters
    ----------
    first, second : sequence of 4 floats (or arrays)
        ``(x1, x2, y1, y2)`` and ``(xi1, xi2, eta1, eta2)`` [m], with x1 < x2 and y1 < y2.
    distance : float or array
        Distance c between the planes [m], > 0.

    Notes
    -----
    Source: Howell et al. [2]_ catalogue, parallel rectangles of any size and position (the
    primitive from the contour integral of the view factor). Reduces to
    :func:`parallel_rectangles_aligned` for equal, opposed rectangles.

    Examples
    --------
    >>> round(parallel_rectangles((0, 1, 0, 1), (0, 1, 0, 1), 1.0), 4)
    0.1998
    """
    x1, x2, y1, y2 = _arr(*first)
    a1, a2, b1, b2 = _arr(*second)
    c = np.asarray(distance, dtype=float)
    total = 0.0
    for i, x in ((1, x1), (2, x2)):
        for j, y in ((1, y1), (2, y2)):
            for k, xi in ((1, a1), (2, a2)):
                for m, eta in ((1, b1), (2, b2)):
                    total = total + (-1.0) ** (i + j + k + m) * _parallel_term(x - xi, y - eta, c)
    area = (x2 - x1) * (y2 - y1)
    return _plain(total / (2.0 * np.pi * area))


def perpendicular_rectangles_common_edge(common, width_from, width_to):
    r"""View factor between two perpendicular rectangles sharing an edge [-].

    With H = Z/X, W = Y/X (X the common edge, Y the width of the emitting rectangle i, Z that of
    the receiving rectangle j):

    .. math::
        F_{ij} = \frac{1}{\pi W}\Big(W\tan^{-1}\frac1W + H\tan^{-1}\frac1H - \sqrt{H^2+W^2}
        \tan^{-1}\frac{1}{\sqrt{H^2+W^2}} + \frac14\ln\Big\{\frac{(1+W^2)(1+H^2)}{1+W^2+H^2}
        \Big[\frac{W^2(1+W^2+H^2)}{(1+W^2)(W^2+H^2)}\Big]^{W^2}
        \Big[\frac{H^2(1+H^2+W^2)}{(1+H^2)(H^2+W^2)}\Big]^{H^2}\Big\}\Big)

    Parameters
    ----------
    common : float or array
        Length X of the common edge [m].
    width_from, width_to : float or array
        Widths Y (emitter) and Z (receiver) perpendicular to the common edge [m].

    Notes
    -----
    Source: Incropera et al. [1]_ Table 13.2 (perpendicular rectangles with a common edge).

    Examples
    --------
    Two unit squares at a right angle (published value 0.2000):

    >>> round(perpendicular_rectangles_common_edge(1.0, 1.0, 1.0), 4)
    0.2
    """
    x, y, z = _arr(common, width_from, width_to)
    H, W = z / x, y / x
    h2, w2 = H * H, W * W
    s = np.sqrt(h2 + w2)
    log_term = (np.log((1 + w2) * (1 + h2) / (1 + w2 + h2))
                + w2 * np.log(w2 * (1 + w2 + h2) / ((1 + w2) * (w2 + h2)))
                + h2 * np.log(h2 * (1 + h2 + w2) / ((1 + h2) * (h2 + w2))))
    f = W * np.arctan(1 / W) + H * np.arctan(1 / H) - s * np.arctan(1 / s) + 0.25 * log_term
    return _plain(f / (np.pi * W))


def coaxial_discs(radius_from, radius_to, distance):
    r"""View factor between two coaxial parallel discs [-].

    .. math::
        R_i = r_i/L,\; R_j = r_j/L,\; S = 1 + \frac{1+R_j^2}{R_i^2},\;
        F_{ij} = \tfrac12\Big\{S - \big[S^2 - 4(r_j/r_i)^2\big]^{1/2}\Big\}

    Parameters
    ----------
    radius_from, radius_to : float or array
        Radii r_i (emitter) and r_j (receiver) [m].
    distance : float or array
        Distance L between the discs [m].

    Notes
    -----
    Source: Incropera et al. [1]_ Table 13.2 (coaxial parallel disks).

    Examples
    --------
    Equal discs, radius equal to the gap (published value 0.382):

    >>> round(coaxial_discs(1.0, 1.0, 1.0), 4)
    0.382
    """
    ri, rj, d = _arr(radius_from, radius_to, distance)
    Ri, Rj = ri / d, rj / d
    S = 1 + (1 + Rj * Rj) / (Ri * Ri)
    return _plain(0.5 * (S - np.sqrt(S * S - 4 * (rj / ri) ** 2)))


# -- two-dimensional geometries (long surfaces, Incropera Table 13.1) ----------------------------
def parallel_strips(width_from, width_to, distance):
    r"""Long parallel strips with their midlines on one perpendicular [-].

    .. math:: F_{ij} = \frac{[(W_i+W_j)^2+4]^{1/2} - [(W_j-W_i)^2+4]^{1/2}}{2W_i},\quad W = w/L

    Source: Incropera et al. [1]_ Table 13.1 (parallel plates with midlines connected by
    perpendicular).

    >>> round(parallel_strips(1.0, 1.0, 1.0), 4)
    0.4142
    """
    wi, wj, d = _arr(width_from, width_to, distance)
    Wi, Wj = wi / d, wj / d
    return _plain((np.sqrt((Wi + Wj) ** 2 + 4) - np.sqrt((Wj - Wi) ** 2 + 4)) / (2 * Wi))


def perpendicular_strips_common_edge(width_from, width_to):
    r"""Long perpendicular strips sharing an edge [-].

    .. math:: F_{ij} = \tfrac12\Big[1 + \frac{w_j}{w_i} - \Big(1 + \frac{w_j^2}{w_i^2}\Big)^{1/2}\Big]

    Source: Incropera et al. [1]_ Table 13.1 (perpendicular plates with a common edge).

    >>> round(perpendicular_strips_common_edge(1.0, 1.0), 4)
    0.2929
    """
    wi, wj = _arr(width_from, width_to)
    r = wj / wi
    return _plain(0.5 * (1 + r - np.sqrt(1 + r * r)))


def inclined_strips_common_edge(angle):
    r"""Long strips of equal width sharing an edge, at an included angle alpha [rad] [-].

    .. math:: F_{ij} = 1 - \sin(\alpha/2)

    Source: Incropera et al. [1]_ Table 13.1 (inclined parallel plates of equal width and a
    common edge). Angle in (0, pi].

    >>> round(inclined_strips_common_edge(np.pi / 2), 4)
    0.2929
    """
    a = np.asarray(angle, dtype=float)
    return _plain(1.0 - np.sin(0.5 * a))


def three_sided_enclosure(width_from, width_to, width_other):
    r"""Long three-sided enclosure (a triangular duct) [-].

    .. math:: F_{ij} = \frac{w_i + w_j - w_k}{2 w_i}

    Source: Incropera et al. [1]_ Table 13.1 (three-sided enclosure); the crossed-strings rule.

    >>> three_sided_enclosure(1.0, 1.0, 1.0)
    0.5
    """
    wi, wj, wk = _arr(width_from, width_to, width_other)
    return _plain((wi + wj - wk) / (2 * wi))


def cylinder_and_parallel_strip(radius, distance, edge_1, edge_2):
    r"""From a long cylinder to a long parallel strip [-].

    .. math:: F_{ij} = \frac{r}{s_1 - s_2}\Big[\tan^{-1}\frac{s_1}{L} - \tan^{-1}\frac{s_2}{L}\Big]

    Parameters
    ----------
    radius : float
        Cylinder radius r [m].
    distance : float
        Distance L from the cylinder axis to the strip's plane [m], > r.
    edge_1, edge_2 : float
        Positions s1 > s2 of the strip's edges along its plane, measured from the foot of the
        perpendicular from the axis [m].

    Source: Incropera et al. [1]_ Table 13.1 (cylinder and parallel rectangle), where i is the
    strip and j the cylinder. The reverse factor follows by reciprocity: from the cylinder, the
    strip takes the fraction (tan^-1(s1/L) - tan^-1(s2/L)) / (2 pi) of its radiation.

    >>> round(cylinder_and_parallel_strip(0.5, 1.0, 1.0, -1.0), 4)
    0.3927
    """
    r, d, s1, s2 = _arr(radius, distance, edge_1, edge_2)
    return _plain(r / (s1 - s2) * (np.arctan(s1 / d) - np.arctan(s2 / d)))


def parallel_cylinders(radius, gap):
    r"""Between two long parallel cylinders of equal radius [-].

    .. math:: F = \frac1\pi\Big[\sqrt{X^2-1} + \sin^{-1}\frac1X - X\Big],\quad X = 1 + \frac{s}{2r}

    with s the gap between the surfaces. Source: Howell et al. [2]_ catalogue (two infinitely
    long parallel cylinders of the same diameter); the crossed-strings rule.

    >>> round(parallel_cylinders(1.0, 0.0), 4)
    0.1817
    """
    r, s = _arr(radius, gap)
    X = 1 + s / (2 * r)
    return _plain((np.sqrt(X * X - 1) + np.arcsin(1 / X) - X) / np.pi)


def plane_and_row_of_cylinders(diameter, pitch):
    r"""From an infinite plane to a row of long cylinders (pitch s, diameter D) [-].

    .. math:: F_{ij} = 1 - \big[1-(D/s)^2\big]^{1/2} + \frac Ds\tan^{-1}
        \Big(\frac{s^2-D^2}{D^2}\Big)^{1/2}

    Source: Incropera et al. [1]_ Table 13.1 (infinite plane and row of cylinders). D <= s.

    >>> round(plane_and_row_of_cylinders(1.0, 1.0), 4)
    1.0
    """
    dd, s = _arr(diameter, pitch)
    q = dd / s
    return _plain(1 - np.sqrt(1 - q * q) + q * np.arctan(np.sqrt((s * s - dd * dd) / (dd * dd))))


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
    Shape("parallel_rectangles_aligned", parallel_rectangles_aligned,
          ("length_x", "length_y", "distance"), "factor",
          "equal, directly opposed parallel rectangles", _T132),
    Shape("parallel_rectangles", lambda **d: parallel_rectangles(
        (d["x1"], d["x2"], d["y1"], d["y2"]), (d["xi1"], d["xi2"], d["eta1"], d["eta2"]),
        d["distance"]),
        ("x1", "x2", "y1", "y2", "xi1", "xi2", "eta1", "eta2", "distance"), "factor",
        "parallel rectangles of any size and position", "Howell et al., catalogue",
        signed=("x1", "x2", "y1", "y2", "xi1", "xi2", "eta1", "eta2")),
    Shape("perpendicular_rectangles", perpendicular_rectangles_common_edge,
          ("common", "width_from", "width_to"), "factor",
          "perpendicular rectangles with a common edge", _T132),
    Shape("coaxial_discs", coaxial_discs, ("radius_from", "radius_to", "distance"), "factor",
          "coaxial parallel discs", _T132),
    Shape("parallel_strips", parallel_strips, ("width_from", "width_to", "distance"), "factor",
          "long parallel strips, midlines on one perpendicular", _T131),
    Shape("perpendicular_strips", perpendicular_strips_common_edge,
          ("width_from", "width_to"), "factor", "long perpendicular strips, common edge", _T131),
    Shape("inclined_strips", inclined_strips_common_edge, ("angle",), "factor",
          "long equal strips with a common edge at an angle [rad]", _T131, angles=("angle",)),
    Shape("three_sided_enclosure", three_sided_enclosure,
          ("width_from", "width_to", "width_other"), "factor", "long three-sided enclosure",
          _T131),
    Shape("cylinder_and_parallel_strip", cylinder_and_parallel_strip,
          ("radius", "distance", "edge_1", "edge_2"), "factor",
          "long strip to a parallel long cylinder", _T131, signed=("edge_1", "edge_2")),
    Shape("parallel_cylinders", parallel_cylinders, ("radius", "gap"), "factor",
          "long parallel cylinders of equal radius", "Howell et al., catalogue",
          signed=("gap",)),
    Shape("plane_and_row_of_cylinders", plane_and_row_of_cylinders, ("diameter", "pitch"),
          "factor", "infinite plane to a row of long cylinders", _T131),
    Shape("concentric_cylinders", concentric_cylinders, ("inner_radius", "outer_radius",
                                                          "length"), "enclosure",
          "long concentric cylinders", "Incropera et al., 6th ed., section 13.1",
          surfaces=("inner", "outer")),
    Shape("concentric_spheres", concentric_spheres, ("inner_radius", "outer_radius"),
          "enclosure", "concentric spheres", "Incropera et al., 6th ed., section 13.1",
          surfaces=("inner", "outer")),
    Shape("cylinder_cavity", cylinder_cavity, ("radius", "length"), "enclosure",
          "closed right circular cylinder (discs and side)", _T132,
          surfaces=("bottom", "top", "side")),
    Shape("box_interior", box_interior, ("length", "width", "height"), "enclosure",
          "the six inside faces of a rectangular box", _T132, surfaces=BOX_FACES),
)}


def describe_shapes() -> str:
    """One line per registered shape: name, parameters, what it returns, source.

    >>> print(describe_shapes().splitlines()[0])
    parallel_rectangles_aligned(length_x, length_y, distance) -> factor: equal, directly opposed parallel rectangles [Incropera et al., 6th ed., Table 13.2]
    """
    return "\n".join(f"{s.name}({', '.join(s.parameters)}) -> {s.returns}: {s.description} "
                     f"[{s.source}]" for s in SHAPES.values())


def _call(name: str, dims: dict, returns: str, where: str):
    if name not in SHAPES:
        raise InputError(f"unknown view-factor shape {name!r}", where, suggest(name, SHAPES))
    shape = SHAPES[name]
    if shape.returns != returns:
        other = "enclosure_view_factors" if shape.returns == "enclosure" else "view_factor"
        raise InputError(f"shape {name!r} gives {'a matrix' if returns == 'factor' else 'one factor'}"
                         f", not {'one factor' if returns == 'factor' else 'a matrix'}", where,
                         f"use {other}")
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
