"""Closed-form view factors between two diffuse surfaces (3-D and long 2-D geometries).

Pure functions: SI lengths in (numbers or numpy arrays, broadcast), the view factor F_ij from the
first surface named (i, the emitter) to the second (j) out [-].

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

    .. math::
        F_{ij} = \tfrac12\Big[1 + \frac{w_j}{w_i} - \Big(1 + \frac{w_j^2}{w_i^2}\Big)^{1/2}\Big]

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
