"""Reference solutions for radial conduction, shared by tests: transient conduction in a solid
cylinder or sphere suddenly exposed to convection, as the multi-term series solution.

The default case: k = 0.5 W/(m K), rho = 1000 kg/m^3, c = 4000 J/(kg K), h = 25 W/(m^2 K),
outer radius 20 mm (Bi = h r0 / k = 1).
"""

import numpy as np
from scipy.optimize import brentq
from scipy.special import j0, j1

K_, RHO, CP, H, R0 = 0.5, 1000.0, 4000.0, 25.0, 0.02        # Bi = h r0 / k = 1
ALPHA = K_ / (RHO * CP)
BI = H * R0 / K_


def roots(f, count):
    """The first ``count`` positive roots of f, bracketed on a fine grid and refined by brentq."""
    grid = np.linspace(1e-9, 4.0 * count + 10.0, 40 * count + 400)
    v = f(grid)
    idx = np.flatnonzero(np.sign(v[:-1]) != np.sign(v[1:]))
    return np.array([brentq(f, grid[i], grid[i + 1], xtol=1e-14) for i in idx[:count]])


def series_slice_means(geometry, edges, fourier, terms=80, *, radius=R0, biot=BI):
    """(T - T_inf)/(T_i - T_inf) averaged over each slice, from the multi-term series solution
    (Incropera et al., 6th ed., section 5.6, eqs. 5.49 and 5.50; Carslaw and Jaeger):

    cylinder: zeta J1(zeta) / J0(zeta) = Bi, C = 2 J1 / (zeta (J0^2 + J1^2)), profile J0(zeta r*)
    sphere:   1 - zeta cot(zeta) = Bi,     C = 4 (sin - zeta cos) / (2 zeta - sin 2 zeta),
              profile sin(zeta r*) / (zeta r*)

    Slice averages use the antiderivatives r J0(z r) -> r J1(z r)/z and r sin(z r) -> (sin(z r)
    - z r cos(z r))/z^2 (closed forms by hand). ``edges`` are the slice faces [m], ``fourier``
    the Fourier numbers alpha t / r0^2."""
    a = edges[:-1][None, :] / radius
    b = edges[1:][None, :] / radius
    if geometry == "cylinder":
        z = roots(lambda x: x * j1(x) - biot * j0(x), terms)[:, None]
        C = 2 / z * j1(z) / (j0(z) ** 2 + j1(z) ** 2)
        mean = 2 / z * (b * j1(z * b) - a * j1(z * a)) / (b * b - a * a)
    else:
        z = roots(lambda x: (1 - biot) * np.sin(x) - x * np.cos(x), terms)[:, None]
        C = 4 * (np.sin(z) - z * np.cos(z)) / (2 * z - np.sin(2 * z))

        def prim(x):
            return (np.sin(z * x) - z * x * np.cos(z * x)) / z ** 2

        mean = 3 * (prim(b) - prim(a)) / (z * (b ** 3 - a ** 3))
    return np.exp(-np.outer(np.atleast_1d(fourier), z[:, 0] ** 2)) @ (C * mean)
