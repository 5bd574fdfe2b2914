"""Grey diffuse radiation exchange: one surface seeing several surroundings, N-surface enclosures,
their Jacobians, the multi-terminal solve behind series resistances, and bad input."""

import numpy as np
import pytest
from radiation_reference import kelvin, radiosity_equations
from scipy.constants import Stefan_Boltzmann as SIGMA
from scipy.constants import zero_Celsius
from scipy.optimize import brentq, fsolve

from rcsim import radiosity as rad
from rcsim import viewfactors as vf
from rcsim.errors import InputError


# -- one surface, several surroundings (issue 18's sky/ground case) -------------------------------
SKY, GROUND, POWER, AREA = -10.0, 10.0, 100.0, 1.0


@pytest.mark.parametrize("eps", [0.1, 0.2, 0.3, 0.5, 0.7, 0.9, 1.0])
def test_sky_and_ground_plate_against_the_exact_relation_solved_with_brentq(eps):
    # exact relation q = e sigma A sum F_j (T^4 - T_j^4) (Incropera eq. 13.21 split by view
    # factor), solved here for the plate temperature that sheds 100 W
    def excess(t):
        return eps * SIGMA * AREA * (0.5 * (kelvin(t) ** 4 - kelvin(SKY) ** 4)
                                     + 0.5 * (kelvin(t) ** 4 - kelvin(GROUND) ** 4)) - POWER

    t_plate = brentq(excess, -5.0, 500.0, xtol=1e-12)
    r = rad.surface_to_surroundings(t_plate, [SKY, GROUND], eps, AREA, [0.5, 0.5])
    assert float(r.surface) == pytest.approx(POWER, rel=1e-10)
    assert float(r.received.sum()) == pytest.approx(POWER, rel=1e-10)
    # the same plate as a three-surface enclosure with large (black) sky and ground
    enc = rad.Enclosure([AREA, np.inf, np.inf], [eps, 1.0, 1.0],
                        [[0.0, 0.5, 0.5], [0, 1, 0], [0, 0, 1]], names=["plate", "sky", "ground"])
    q = enc.heat_flows([t_plate, SKY, GROUND])
    assert q[0] == pytest.approx(POWER, rel=1e-10)
    # what each surrounding receives: A F_j (J - E_b,j), J = e E_b + (1 - e) sum F_k E_b,k
    # (radiosity of the plate with black surroundings, Incropera eq. 13.15)
    eb = SIGMA * kelvin([t_plate, SKY, GROUND]) ** 4
    J = eps * eb[0] + (1 - eps) * 0.5 * (eb[1] + eb[2])
    expected = AREA * 0.5 * (J - eb[1:])
    assert np.allclose(r.received, expected, rtol=1e-10)
    assert np.allclose(-q[1:], expected, rtol=1e-10)


def test_separate_links_reproduce_the_errors_measured_in_issue_18():
    # issue 18 measured the plate (1 m^2) 1.0, 7.7 and 38.7 K too cold at e = 0.9, 0.5, 0.1 when
    # each surrounding is its own radiation link (surface resistance counted twice)
    for eps, low in [(0.9, 1.0), (0.5, 7.7), (0.1, 38.7)]:
        exact = brentq(lambda t: float(rad.surface_to_surroundings(
            t, [SKY, GROUND], eps, AREA, [0.5, 0.5]).surface) - POWER, -5, 500, xtol=1e-10)
        links = brentq(lambda t: float(rad.separate_links_flow(
            t, [SKY, GROUND], eps, AREA, [0.5, 0.5])) - POWER, -5, 500, xtol=1e-10)
        assert exact - links == pytest.approx(low, abs=0.05)


def test_surroundings_exchange_areas_rebuild_the_flows_and_derivatives():
    eps, area, F = 0.6, 2.0, np.array([0.3, 0.5, 0.1])   # 0.1 of the view is not listed
    to, between = rad.surroundings_exchange_areas(eps, area, F)
    T = np.array([[35.0, -5.0, 12.0, 20.0], [10.0, 0.0, 30.0, -20.0]])   # plate, three
    r = rad.surface_to_surroundings(T[:, 0], T[:, 1:], eps, area, F)
    eb = SIGMA * kelvin(T) ** 4
    # closed form: e A sum F_j (E - E_j) (exact relation) and its derivatives by hand
    assert np.allclose(r.surface, eps * area * ((eb[:, :1] - eb[:, 1:]) * F).sum(axis=1))
    assert np.allclose(r.d_surface, 4 * SIGMA * eps * area * F.sum() * kelvin(T[:, 0]) ** 3)
    assert np.allclose(r.d_surroundings, -4 * SIGMA * eps * area * F * kelvin(T[:, 1:]) ** 3)
    # the pairwise form: e A F_j to the plate, (1 - e) A F_j F_k between surroundings
    assert np.allclose(to, eps * area * F)
    assert between[0, 1] == pytest.approx((1 - eps) * area * F[0] * F[1])
    assert np.allclose(r.received.sum(axis=1), r.surface)


def test_linearised_conductance_is_exact_at_its_temperatures():
    # h_r = sigma (T1^2 + T2^2)(T1 + T2) makes G (T1 - T2) = sigma S (T1^4 - T2^4)
    # (Incropera eq. 1.9)
    g = rad.linearised_conductance(0.7, 80.0, 15.0)
    assert g * 65.0 == pytest.approx(0.7 * SIGMA * (kelvin(80.0) ** 4 - kelvin(15.0) ** 4),
                                     rel=1e-12)


# -- enclosures against textbook worked examples --------------------------------------------------
def test_two_plates_in_a_large_room():
    # Holman, Heat Transfer, 10th ed., ch. 8, worked example (from memory): plates 0.5 m x 1.0 m,
    # 0.5 m apart, at 1000 degC (e = 0.2) and 500 degC (e = 0.5), in a room at 27 degC;
    # F12 = 0.285 from the chart. Published: J1 = 33.469 and J2 = 15.054 kW/m^2; q1 = 14.425 kW,
    # q2 = 2.594 kW, the room receives 17.02 kW (sigma = 5.669e-8 in the book: 0.03 % apart).
    F = [[0.0, 0.285, 0.715], [0.285, 0.0, 0.715], [0.0, 0.0, 1.0]]
    enc = rad.Enclosure([0.5, 0.5, np.inf], [0.2, 0.5, 1.0], F, names=["hot", "warm", "room"])
    T = [1000.0, 500.0, 27.0]
    q = enc.heat_flows(T)
    J = enc.radiosities(T)
    assert q[0] == pytest.approx(14425.0, rel=2e-3)
    assert q[1] == pytest.approx(2594.0, rel=2e-3)
    assert -q[2] == pytest.approx(17020.0, rel=2e-3)
    assert J[:2] == pytest.approx([33469.0, 15054.0], rel=2e-3)
    # the chart's 0.285 against the closed form (Incropera Table 13.2): 0.2859
    assert vf.parallel_rectangles_aligned(0.5, 1.0, 0.5) == pytest.approx(0.285, abs=1.5e-3)


def test_furnace_cavity_open_to_the_surroundings():
    # Incropera et al., 6th ed., ch. 13, worked example of a black cylindrical furnace cavity
    # (from memory): 75 mm diameter, 150 mm deep, bottom 1650 degC, side 1350 degC, opening to
    # surroundings at 27 degC; the power to hold it is 1830 W.
    areas, F, names = vf.enclosure_view_factors("cylinder_cavity", radius=0.0375, length=0.15)
    enc = rad.Enclosure(areas, [1.0, 1.0, 1.0], F, names=names)   # bottom, top = opening, side
    q = enc.heat_flows([1650.0, 27.0, 1350.0])
    assert q[0] + q[2] == pytest.approx(1830.0, rel=3e-3)
    assert q.sum() == pytest.approx(0.0, abs=1e-9)


def test_triangular_oven_with_a_reradiating_wall():
    # Incropera et al., 6th ed., ch. 13, worked example of a paint-baking oven (from memory): a
    # long duct of equilateral triangular section, 1 m sides; heater at 1200 K (e = 0.8), panels at
    # 500 K (e = 0.4), the third wall insulated (reradiating). Published: 37 kW per metre, the
    # insulated wall at 1102 K (recomputed here by hand from the example's network: 1102.2 K).
    F = np.full((3, 3), 0.5)
    np.fill_diagonal(F, 0.0)
    enc = rad.Enclosure([1.0, 1.0, 1.0], [0.8, 0.4, np.nan], F, reradiating=[False, False, True])
    T = [1200.0 - zero_Celsius, 500.0 - zero_Celsius, np.nan]
    q = enc.heat_flows(T)
    assert q[0] == pytest.approx(37000.0, rel=2e-3)
    assert q[2] == 0.0 and q[1] == pytest.approx(-q[0], rel=1e-12)
    assert enc.surface_temperatures(T)[2] + zero_Celsius == pytest.approx(1102.0, abs=1.0)
    # the reradiating wall's temperature makes its own net flow zero (eq. 13.15 solved directly)
    Tall = enc.surface_temperatures(T)
    q_direct, _ = radiosity_equations(Tall, [1.0, 1.0, 1.0], [0.8, 0.4, 0.8], F)
    assert q_direct[2] == pytest.approx(0.0, abs=1e-6 * q[0])


# -- general enclosures against the direct radiosity equations ------------------------------------
def test_a_shipper_interior_against_the_radiosity_equations_with_the_rules_of_exchange():
    rng = np.random.default_rng(3)
    areas, F, names = vf.enclosure_view_factors("box_interior", length=0.5, width=0.4, height=0.3)
    eps = rng.uniform(0.05, 1.0, 6)
    eps[2] = 1.0
    enc = rad.Enclosure(areas, eps, F, names=names)
    T = rng.uniform(-20.0, 60.0, (7, 6))
    q = enc.heat_flows(T)
    for row, qrow in zip(T, q):
        q_direct, J_direct = radiosity_equations(row, areas, eps, F)
        assert np.allclose(qrow, q_direct, rtol=1e-9, atol=1e-9)
    assert np.allclose(enc.radiosities(T[0]), radiosity_equations(T[0], areas, eps, F)[1])
    # energy: net flows sum to zero; exchange areas symmetric and non-negative
    assert np.allclose(q.sum(axis=1), 0.0, atol=1e-9)
    S = enc.exchange_areas
    assert np.allclose(S, S.T) and (S >= 0).all()
    # equal temperatures exchange nothing (summation)
    assert np.allclose(enc.heat_flows(np.full(6, 25.0)), 0.0, atol=1e-10)
    # the pairs rebuild the flows: q_i = sum_j S_ij sigma (T_i^4 - T_j^4)
    eb = SIGMA * kelvin(T[0]) ** 4
    rebuilt = np.zeros(6)
    for i, j, s in enc.pairs():
        rebuilt[i] += s * (eb[i] - eb[j])
        rebuilt[j] -= s * (eb[i] - eb[j])
    assert np.allclose(rebuilt, q[0], rtol=1e-10, atol=1e-10)


def test_two_surface_enclosures_match_the_series_resistance_formula():
    # concentric spheres and cylinders: q = sigma (T1^4 - T2^4) / [(1-e1)/(e1 A1) + 1/(A1 F12)
    # + (1-e2)/(e2 A2)] (Incropera eq. 13.18 with Table 13.3's cases)
    for shape, dims in [("concentric_spheres", dict(inner_radius=0.1, outer_radius=0.25)),
                        ("concentric_cylinders", dict(inner_radius=0.02, outer_radius=0.06))]:
        areas, F, _ = vf.enclosure_view_factors(shape, **dims)
        e1, e2 = 0.3, 0.7
        enc = rad.Enclosure(areas, [e1, e2], F)
        R = (1 - e1) / (e1 * areas[0]) + 1 / areas[0] + (1 - e2) / (e2 * areas[1])
        expected = SIGMA * (kelvin(80.0) ** 4 - kelvin(5.0) ** 4) / R
        assert enc.heat_flows([80.0, 5.0])[0] == pytest.approx(expected, rel=1e-12)


def test_jacobian_against_central_differences():
    areas, F, _ = vf.enclosure_view_factors("cylinder_cavity", radius=0.2, length=0.5)
    enc = rad.Enclosure(areas, [0.3, 0.9, 0.6], F)
    T = np.array([[40.0, 5.0, 20.0], [300.0, -30.0, 80.0]])
    jac = enc.jacobian(T)
    assert jac.shape == (2, 3, 3)
    d = 1e-3
    for j in range(3):
        up, down = T.copy(), T.copy()
        up[:, j] += d
        down[:, j] -= d
        fd = (enc.heat_flows(up) - enc.heat_flows(down)) / (2 * d)
        assert np.allclose(jac[:, :, j], fd, rtol=1e-6, atol=1e-9)


def test_flows_through_series_resistances_against_fsolve():
    # each surface behind a conduction resistance from its node: faces theta solve
    # theta = T - R q(theta); checked with scipy's fsolve and central differences
    areas, F, _ = vf.enclosure_view_factors("box_interior", length=0.4, width=0.3, height=0.3)
    enc = rad.Enclosure(areas, [0.9, 0.9, 0.1, 0.5, 0.9, 0.9], F)
    R = np.array([0.5, 0.0, 1.0, 2.0, 0.2, 0.05])
    T = np.array([[60.0, 10.0, 25.0, -5.0, 30.0, 20.0], [5.0, 5.0, 6.0, 4.0, 5.0, 5.5]])
    q, dq, faces = enc.heat_flows_through(T, R)
    for row in range(2):
        def residual(theta, row=row):
            return theta - T[row] + R * enc.heat_flows(theta)
        theta = fsolve(residual, T[row], xtol=1e-13)
        assert np.allclose(faces[row], theta, atol=1e-8)
        assert np.allclose(q[row], enc.heat_flows(theta), rtol=1e-8, atol=1e-9)
    d = 1e-4
    for j in range(6):
        up, down = T.copy(), T.copy()
        up[:, j] += d
        down[:, j] -= d
        fd = (enc.heat_flows_through(up, R)[0] - enc.heat_flows_through(down, R)[0]) / (2 * d)
        assert np.allclose(dq[:, :, j], fd, rtol=1e-5, atol=1e-8)


# -- bad input ------------------------------------------------------------------------------------
def test_bad_enclosures_and_surfaces_are_refused_in_one_line():
    F = [[0.0, 1.0], [1.0, 0.0]]
    with pytest.raises(InputError, match=r"emissivities\[1\] \('lid'\).*emissivity must be in "
                                         r"\(0, 1\], got 1.2"):
        rad.Enclosure([1.0, 1.0], [0.5, 1.2], F, names=["floor", "lid"])
    with pytest.raises(InputError, match="emissivity must be in"):
        rad.Enclosure([1.0, 1.0], [0.0, 0.5], F)
    with pytest.raises(InputError, match="area of surface 1 must be positive"):
        rad.Enclosure([1.0, -2.0], [0.5, 0.5], F)
    with pytest.raises(InputError, match=r"view_factors: row 0 \('a'\): view factors sum to 1.3"):
        rad.Enclosure([1.0, 1.0], [0.5, 0.5], [[0.3, 1.0], [1.0, 0.0]], names=["a", "b"])
    with pytest.raises(InputError, match="reciprocity"):
        rad.Enclosure([1.0, 3.0], [0.5, 0.5], [[0.0, 1.0], [1.0, 0.0]])
    with pytest.raises(InputError, match="every surface is reradiating"):
        rad.Enclosure([1.0, 1.0], [0.5, 0.5], F, reradiating=[True, True])
    with pytest.raises(InputError, match=r"radiation.sees: view factors sum to 1.2 > 1"):
        rad.surface_to_surroundings(20.0, [0.0, 0.0], 0.9, 1.0, [0.6, 0.6])
    with pytest.raises(InputError, match=r"radiation.area: area must be positive"):
        rad.surface_to_surroundings(20.0, [0.0], 0.9, -1.0, [0.6])
    with pytest.raises(InputError, match=r"sees\[0\].view_factor: view factor -0.1"):
        rad.surface_to_surroundings(20.0, [0.0], 0.9, 1.0, [-0.1])


def test_linearised_pair_conductances_give_the_exact_flows_at_their_temperatures():
    areas, F, _ = vf.enclosure_view_factors("cylinder_cavity", radius=0.1, length=0.3)
    enc = rad.Enclosure(areas, [0.2, 0.8, 0.5], F)
    T = np.array([70.0, -10.0, 25.0])
    G = enc.linearised_conductances(T)
    # sum_j G_ij (T_i - T_j) = q_i by the identity (a^4 - b^4) = (a^2 + b^2)(a + b)(a - b)
    assert np.allclose((G * (T[:, None] - T[None, :])).sum(axis=1), enc.heat_flows(T),
                       rtol=1e-12)


def test_separate_links_excess_matches_the_flows_at_one_surroundings_temperature():
    for eps, F in [(0.1, [0.5, 0.5]), (0.5, [0.2, 0.3, 0.4]), (1.0, [0.5, 0.5]), (0.3, [1.0])]:
        exact = rad.surface_to_surroundings(40.0, [5.0] * len(F), eps, 1.0, F).surface
        links = rad.separate_links_flow(40.0, [5.0] * len(F), eps, 1.0, F)
        assert rad.separate_links_excess(eps, F) == pytest.approx(links / exact - 1, abs=1e-12)


def test_a_reradiating_surface_that_sees_nothing_with_a_temperature_is_refused():
    # surfaces 0 and 1 see each other only; 2 and 3 (reradiating) see each other only
    F = [[0, 1, 0, 0], [1, 0, 0, 0], [0, 0, 0, 1], [0, 0, 1, 0]]
    with pytest.raises(InputError, match=r"reradiating surfaces 'c', 'd' see no surface"):
        rad.Enclosure([1.0] * 4, [0.5, 0.5, 0.5, 0.5], F, names=list("abcd"),
                      reradiating=[False, False, True, True])
    # and a tiny surface beside a huge one is fine (no conditioning test involved)
    enc = rad.Enclosure([1e-6, np.inf], [0.999999, 1.0], [[0, 1], [0, 1]])
    assert enc.heat_flows([100.0, 0.0])[0] == pytest.approx(
        0.999999 * 1e-6 * SIGMA * (kelvin(100.0) ** 4 - kelvin(0.0) ** 4), rel=1e-9)


# -- the wiring plan, tried on the network of today: enclosures as pairwise radiation laws ---
@pytest.mark.parametrize("solver", ["stiff", "piecewise"])
def test_enclosure_pairs_as_radiation_links_follow_the_radiosity_equations(solver):
    # a closed can (bottom and lid are nodes with capacity, the side wall a boundary at 20 degC);
    # each pair of surfaces becomes one grey-body radiation law with surface_factor = S_ij.
    # Reference: scipy's solve_ivp of C dT/dt = -q(T), q from the radiosity equations above.
    import rcsim
    from scipy.integrate import solve_ivp

    from rcsim.laws import RadiationLaw
    from rcsim.parts import Part

    areas, F, names = vf.enclosure_view_factors("cylinder_cavity", radius=0.15, length=0.3)
    eps = np.array([0.8, 0.3, 0.9])
    enc = rad.Enclosure(areas, eps, F, names=names)
    capacity = {"bottom": 3000.0, "top": 1500.0}
    net = rcsim.Network()
    net.add_node("bottom", capacity=capacity["bottom"], initial=90.0)
    net.add_node("top", capacity=capacity["top"], initial=-5.0)
    net.add_boundary("side", temperature=20.0)
    for i, j, s in enc.pairs():
        law = RadiationLaw(s)
        net.add_link(names[i], names[j], name=f"{names[i]}-{names[j]}",
                     parts=[Part("radiation", float("nan"), None, 0.0, 0,
                                 {"surface_factor": s}, "", law=law)])
    res = net.simulate("3 h", "10 min", solver=solver, rtol=1e-8, atol=1e-8)

    def rhs(t, y):
        q, _ = radiosity_equations(np.array([y[0], y[1], 20.0]), areas, eps, F)
        return [-q[0] / capacity["bottom"], -q[1] / capacity["top"]]

    ref = solve_ivp(rhs, (0.0, 3 * 3600.0), [90.0, -5.0], method="Radau", t_eval=res.time,
                    rtol=1e-10, atol=1e-10)
    got = res.temperatures[["bottom", "top"]].to_numpy()
    assert np.abs(got - ref.y.T).max() < 2e-3


def test_sky_and_ground_as_pairwise_radiation_links_give_the_exact_steady_plate():
    # the plate seeing sky and ground wired as two radiation laws of e A F_j each (the pair
    # between the two boundaries changes no node and is left out); steady state against brentq
    # on the exact relation (Incropera eq. 13.21 split by view factor)
    import rcsim
    from rcsim.laws import RadiationLaw
    from rcsim.parts import Part

    eps = 0.3
    to, _ = rad.surroundings_exchange_areas(eps, AREA, [0.5, 0.5])
    net = rcsim.Network()
    net.add_node("plate", capacity=1000.0, initial=20.0)
    net.add_boundary("sky", temperature=SKY)
    net.add_boundary("ground", temperature=GROUND)
    net.add_source("plate", POWER)
    for other, s in zip(("sky", "ground"), to):
        net.add_link("plate", other, name=f"plate-{other}",
                     parts=[Part("radiation", float("nan"), None, 0.0, 0, {}, "",
                                 law=RadiationLaw(float(s)))])
    t_exact = brentq(lambda t: eps * SIGMA * AREA * 0.5 * (
        2 * kelvin(t) ** 4 - kelvin(SKY) ** 4 - kelvin(GROUND) ** 4) - POWER, -5, 500,
        xtol=1e-12)
    assert float(net.steady().temperatures["plate"]) == pytest.approx(t_exact, abs=1e-6)
