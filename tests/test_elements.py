"""Element physics against handbook formulas, the ht library and independent quadrature."""

import math

import numpy as np
import pytest
from scipy.constants import Stefan_Boltzmann as SIGMA
from scipy.integrate import quad

from rcsim import elements as el


def test_plane_layer_matches_fourier_quadrature():
    # Fourier's law integrated across a plane layer: R = int dx / (k A) (Incropera et al., 6th
    # ed., eq. 3.6)
    r_quad, _ = quad(lambda x: 1.0 / (0.04 * 2.0), 0.0, 0.12)
    assert el.resistance_plane_layer(0.12, 0.04, 2.0) == pytest.approx(r_quad, rel=1e-12)


def test_cylinder_shell_matches_ht_library():
    ht = pytest.importorskip("ht")
    # ht.conduction.R_cylinder(Di, Do, k, L) takes diameters
    expected = ht.conduction.R_cylinder(0.06, 0.1, 0.04, 2.5)
    assert el.resistance_cylinder_shell(0.03, 0.05, 0.04, 2.5) == pytest.approx(expected, rel=1e-12)


def test_cylinder_shell_matches_radial_quadrature():
    # radial conduction: R = int_r1^r2 dr / (k 2 pi r L) (Incropera et al., 6th ed., section 3.3)
    r_quad, _ = quad(lambda r: 1.0 / (0.2 * 2 * math.pi * r * 1.5), 0.01, 0.04)
    assert el.resistance_cylinder_shell(0.01, 0.04, 0.2, 1.5) == pytest.approx(r_quad, rel=1e-10)


def test_sphere_shell_matches_radial_quadrature():
    # radial conduction in a sphere: R = int_r1^r2 dr / (k 4 pi r^2) (Incropera et al., 6th ed.,
    # section 3.3, the sphere)
    r_quad, _ = quad(lambda r: 1.0 / (0.05 * 4 * math.pi * r * r), 0.1, 0.15)
    assert el.resistance_sphere_shell(0.1, 0.15, 0.05) == pytest.approx(r_quad, rel=1e-10)


@pytest.mark.parametrize("eps,t1,t2", [(1.0, 30.0, 20.0), (0.9, 80.0, -5.0), (0.3, 500.0, 25.0)])
def test_radiation_coefficient_identity(eps, t1, t2):
    # identity eps*sigma*(T1^4 - T2^4) = h_r (T1 - T2), T in kelvin (Incropera et al., 6th ed.,
    # eq. 1.9)
    T1, T2 = t1 + 273.15, t2 + 273.15
    h_r = el.radiation_coefficient_linearised(eps, t1, t2)
    assert h_r * (t1 - t2) == pytest.approx(eps * SIGMA * (T1 ** 4 - T2 ** 4), rel=1e-12)


def test_series_parallel_and_contact():
    # series: the resistances add (Incropera et al., 6th ed., eq. 3.19, R_tot = sum R_t)
    assert el.resistance_series([0.5, 0.25, 1.0]) == pytest.approx(1.75)
    # parallel: the conductances add, 1/R = 1/2 + 1/3 + 1/6 = 1 (closed form derived here: the
    # same temperature difference across every path, the flows summed)
    assert el.resistance_parallel([2.0, 3.0, 6.0]) == pytest.approx(1.0)
    # contact: R''/A with R'' = 2e-4 m2K/W over 50 cm2 (the order of magnitude of Incropera et
    # al., 6th ed., Table 3.1; the check itself is the closed form R''/A)
    assert el.resistance_contact(2e-4, 50e-4) == pytest.approx(0.04)


def test_capacities():
    # water: 2 kg x 4180 J/(kg K) = 8360 J/K (handbook cp, from memory)
    assert el.capacity_from_mass(2.0, 4180.0) == 8360.0
    assert el.capacity_from_volume(0.5, 2300.0, 880.0) == pytest.approx(0.5 * 2300 * 880)


def test_vectorised_inputs():
    h = el.radiation_coefficient_linearised(0.8, np.array([20.0, 40.0]), 20.0)
    assert h.shape == (2,)
    assert h[1] > h[0]
