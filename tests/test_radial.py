"""Radial slicing: slice sums against the whole-shell relations, capacities against true volumes,
and a ladder of slices cooling by convection against the Bessel-series solution."""

import numpy as np
import pytest
from radial_reference import ALPHA, BI, CP, H, K_, R0, RHO, series_slice_means
from scipy.integrate import solve_ivp
from scipy.special import j0, j1

from rcsim import radial
from rcsim.errors import InputError


# -- sums -----------------------------------------------------------------------------------------
@pytest.mark.parametrize("spacing", ["thickness", "resistance"])
@pytest.mark.parametrize("n", [1, 3, 17])
def test_cylinder_slices_add_up_to_the_shell(spacing, n):
    a, b, k, L, rho, c = 0.03, 0.08, 0.04, 2.0, 35.0, 1300.0
    s = radial.cylinder_slices(a, b, k, L, n, spacing=spacing, density=rho, specific_heat=c)
    # ln(b/a) / (2 pi k L) (Incropera eq. 3.33) and rho c pi (b^2 - a^2) L, written out here
    assert s.total_resistance == pytest.approx(np.log(b / a) / (2 * np.pi * k * L), rel=1e-12)
    assert s.capacities.sum() == pytest.approx(rho * c * np.pi * (b * b - a * a) * L, rel=1e-12)
    assert np.allclose(s.inner_half + s.outer_half, s.resistances, rtol=1e-12)
    assert s.ladder().sum() == pytest.approx(s.total_resistance, rel=1e-12)
    assert np.allclose(s.masses, rho * s.volumes)
    if spacing == "resistance":
        assert np.allclose(s.resistances, s.resistances[0], rtol=1e-10)
    else:
        assert np.allclose(np.diff(s.edges), (b - a) / n)


@pytest.mark.parametrize("spacing", ["thickness", "resistance"])
def test_sphere_slices_add_up_to_the_shell(spacing):
    a, b, k, rho, c = 0.1, 0.16, 0.03, 50.0, 1500.0
    s = radial.sphere_slices(a, b, k, 9, spacing=spacing, density=rho, specific_heat=c)
    # (1/a - 1/b) / (4 pi k) (Incropera eq. 3.41) and rho c 4/3 pi (b^3 - a^3)
    assert s.total_resistance == pytest.approx((1 / a - 1 / b) / (4 * np.pi * k), rel=1e-12)
    assert s.capacities.sum() == pytest.approx(rho * c * 4 / 3 * np.pi * (b ** 3 - a ** 3),
                                               rel=1e-12)


def test_plane_slices_match_the_plane_ladder():
    s = radial.plane_slices(0.05, 0.033, 0.8, 4, density=30.0, specific_heat=1400.0)
    # R = t/(kA) split in equal slices with the node at mid-thickness (rcsim's plane ladder)
    assert np.allclose(s.inner_half, 0.05 / 4 / (0.033 * 0.8) / 2)
    assert s.capacities.sum() == pytest.approx(0.05 * 0.8 * 30.0 * 1400.0)


def test_solid_core_has_no_inner_face():
    s = radial.cylinder_slices(0.0, 0.02, 0.5, 1.0, 4)
    assert np.isinf(s.inner_half[0]) and np.isinf(s.ladder()[0])
    # mean of a uniformly heated core to its surface: q'''(b^2 - r^2)/(4k) averaged over the
    # disc is q''' b^2/(8k) = q'/(8 pi k) (closed form by hand)
    assert s.outer_half[0] == pytest.approx(1 / (8 * np.pi * 0.5), rel=1e-12)
    with pytest.raises(InputError, match="equal-resistance slices need an inner radius above 0"):
        radial.cylinder_slices(0.0, 0.02, 0.5, 1.0, 4, spacing="resistance")


# -- transient: a solid cylinder and a sphere suddenly exposed to convection ----------------------
# the case and its series solution live in radial_reference.py (shared with the scenario tests)


def ladder_response(geometry, n, times):
    """Node temperatures (fraction of the initial excess) of an n-slice ladder built from
    rcsim.radial, integrated by scipy's solve_ivp (Radau, analytic Jacobian)."""
    if geometry == "cylinder":
        s = radial.cylinder_slices(0.0, R0, K_, 1.0, n, density=RHO, specific_heat=CP)
        area = 2 * np.pi * R0
    else:
        s = radial.sphere_slices(0.0, R0, K_, n, density=RHO, specific_heat=CP)
        area = 4 * np.pi * R0 ** 2
    lad = s.ladder()
    g = 1.0 / lad[1:-1]
    K = np.zeros((n, n))
    i = np.arange(n - 1)
    K[i, i] += g
    K[i + 1, i + 1] += g
    K[i, i + 1] -= g
    K[i + 1, i] -= g
    K[-1, -1] += 1.0 / (lad[-1] + 1.0 / (H * area))
    A = -K / s.capacities[:, None]
    sol = solve_ivp(lambda t, y: A @ y, (0.0, times[-1]), np.ones(n), method="Radau", jac=A,
                    t_eval=times, rtol=1e-10, atol=1e-12)
    assert sol.success
    return s, sol.y.T


@pytest.mark.parametrize("geometry, bounds", [
    # measured largest errors at N = 5, 10, 20 (Fo 0.05 to 1, Bi = 1), fraction of T_i - T_inf:
    # cylinder 6.1e-3, 1.8e-3, 5.1e-4; sphere 1.2e-2, 4.0e-3, 1.2e-3
    ("cylinder", (7e-3, 2e-3, 6e-4)),
    ("sphere", (1.4e-2, 4.5e-3, 1.4e-3)),
])
def test_ladder_converges_to_the_series_solution(geometry, bounds):
    fourier = np.linspace(0.05, 1.0, 20)
    times = fourier * R0 ** 2 / ALPHA
    errors = []
    for n in (5, 10, 20):
        s, T = ladder_response(geometry, n, times)
        exact = series_slice_means(geometry, s.edges, fourier)
        errors.append(float(np.abs(T - exact).max()))
    assert errors[0] < bounds[0] and errors[1] < bounds[1] and errors[2] < bounds[2]
    # better than first order: each halving of the slices cuts the error by more than 2.8
    assert errors[0] / errors[1] > 2.8 and errors[1] / errors[2] > 2.8
    # energy: the mean temperature of 20 slices against Q/Q0 of the series (one number)
    s, T = ladder_response(geometry, 20, times)
    exact_mean = series_slice_means(geometry, s.edges[[0, -1]], fourier)[:, 0]
    ladder_mean = T @ s.volumes / s.total_volume
    assert np.abs(ladder_mean - exact_mean).max() < 1e-3


def test_one_term_solution_agrees_at_late_times():
    # Incropera's one-term approximation (eq. 5.52a, Bi = 1: zeta1 = 1.2558, C1 = 1.2071 for a
    # cylinder, from Table 5.1 as remembered) at Fo = 1 against 20 slices, centre slice
    fourier = np.array([1.0])
    s, T = ladder_response("cylinder", 20, fourier * R0 ** 2 / ALPHA)
    z1, c1 = 1.2558, 1.2071
    assert z1 * j1(z1) / j0(z1) == pytest.approx(BI, abs=2e-4)
    r_mid = s.nodes[0] / R0
    one_term = c1 * np.exp(-z1 ** 2) * j0(z1 * r_mid)
    assert T[0, 0] == pytest.approx(one_term, abs=3e-3)


# -- radii from diameters and bad input -----------------------------------------------------------
def test_radii_from_diameters_and_thickness():
    assert radial.radii_from(inner_diameter=0.06, outer_diameter=0.1) == (0.03, 0.05)
    assert radial.radii_from(outer_radius=0.05, thickness=0.02) == pytest.approx((0.03, 0.05))
    with pytest.raises(InputError, match="give exactly two"):
        radial.radii_from(inner_radius=0.01, outer_radius=0.05, thickness=0.04)
    with pytest.raises(InputError, match="inner_radius or inner_diameter, not both"):
        radial.radii_from(inner_radius=0.01, inner_diameter=0.02, thickness=0.01)
    with pytest.raises(InputError, match="exceeds the outer radius"):
        radial.radii_from(outer_diameter=0.04, thickness=0.03)


def test_bad_slicing_input_is_refused():
    with pytest.raises(InputError, match=r"pipe.slices: slices must be a whole number"):
        radial.cylinder_slices(0.01, 0.02, 0.04, 1.0, 0, where="pipe")
    with pytest.raises(InputError, match="outer_radius must exceed inner_radius"):
        radial.sphere_slices(0.05, 0.05, 0.04, 3)
    with pytest.raises(InputError, match=r"tank.conductivity: conductivity must be positive"):
        radial.sphere_slices(0.05, 0.1, -1.0, 3, where="tank")
    with pytest.raises(InputError, match="spacing must be one of"):
        radial.cylinder_slices(0.01, 0.02, 0.04, 1.0, 3, spacing="log")
    with pytest.raises(InputError, match="give both density and specific_heat"):
        radial.cylinder_slices(0.01, 0.02, 0.04, 1.0, 3, density=30.0)
    with pytest.raises(InputError, match="need the layer's density"):
        radial.cylinder_slices(0.01, 0.02, 0.04, 1.0, 3).masses
