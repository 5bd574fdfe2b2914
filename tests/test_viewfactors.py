"""View factors: closed forms against published values, independent numerical integration and
Monte Carlo ray tracing, the summation and reciprocity rules, and the checks on bad input."""

import numpy as np
import pytest
from scipy.special import roots_legendre

from rcsim import viewfactors as vf
from rcsim.errors import InputError


# -- independent methods, written here ------------------------------------------------------------
def _cosine_rays(rng, n):
    """Directions with a cosine (Lambert) distribution about +z."""
    u1, u2 = rng.random(n), rng.random(n)
    r, phi = np.sqrt(u1), 2 * np.pi * u2
    return np.column_stack([r * np.cos(phi), r * np.sin(phi), np.sqrt(1 - u1)])


def monte_carlo(emit, hit, n=2_000_000, seed=1, chunk=500_000):
    """Fraction of diffuse rays from ``emit`` (points, local frame) that ``hit`` accepts.

    ``emit(rng, m)`` returns (origins (m, 3), frame (3, 3) with the normal as last row);
    ``hit(origins, directions)`` returns a bool mask. Standard error sqrt(F(1-F)/n).
    """
    rng = np.random.default_rng(seed)
    hits = 0
    for start in range(0, n, chunk):
        m = min(chunk, n - start)
        p, frame = emit(rng, m)
        d = _cosine_rays(rng, m) @ frame
        hits += int(hit(p, d).sum())
    return hits / n


def _plane_hit(normal_axis, offset, lo, hi):
    """Hits on the axis-aligned rectangle {x[normal_axis] = offset, lo <= other coords <= hi}."""
    others = [a for a in range(3) if a != normal_axis]

    def hit(p, d):
        with np.errstate(divide="ignore", invalid="ignore"):
            t = (offset - p[:, normal_axis]) / d[:, normal_axis]
        ok = t > 1e-12
        q = p + t[:, None] * d
        for a, low, high in zip(others, lo, hi):
            ok &= (q[:, a] >= low) & (q[:, a] <= high)
        return ok
    return hit


def gauss_parallel(x, y, c, order=24):
    """F between equal opposed rectangles by tensor Gauss-Legendre quadrature of the double area
    integral of cos1 cos2 / (pi s^2) = c^2 / (pi s^4) (Incropera eq. 13.1)."""
    t, w = roots_legendre(order)
    xs, wx = 0.5 * x * (t + 1), 0.5 * x * w
    ys, wy = 0.5 * y * (t + 1), 0.5 * y * w
    dx = xs[:, None] - xs[None, :]
    dy = ys[:, None] - ys[None, :]
    s2 = dx[:, :, None, None] ** 2 + dy[None, None, :, :] ** 2 + c * c
    kern = c * c / (np.pi * s2 ** 2)
    total = np.einsum("i,j,k,l,ijkl->", wx, wx, wy, wy, kern)
    return total / (x * y)


# -- published values (Incropera Table 13.2 charts / Howell's catalogue; from memory) -------------
def test_published_values_of_unit_squares_and_discs():
    # unit squares one unit apart: 0.1998; at a right angle with a common edge: 0.2000;
    # equal coaxial discs with r = L: (3 - sqrt 5)/2 = 0.382 (Howell catalogue, from memory)
    assert vf.parallel_rectangles_aligned(1, 1, 1) == pytest.approx(0.19982, abs=2e-5)
    assert vf.perpendicular_rectangles_common_edge(1, 1, 1) == pytest.approx(0.20004, abs=2e-5)
    assert vf.coaxial_discs(1, 1, 1) == pytest.approx((3 - np.sqrt(5)) / 2, rel=1e-12)
    # touching equal cylinders: 1/2 - 1/pi (crossed strings, closed form derived by hand)
    assert vf.parallel_cylinders(0.3, 0.0) == pytest.approx(0.5 - 1 / np.pi, rel=1e-12)


def test_parallel_rectangles_against_gauss_quadrature_of_the_area_integral():
    # independent: the defining double area integral, 24-point Gauss-Legendre per axis
    for x, y, c in [(1.0, 1.0, 1.0), (2.0, 0.5, 0.7), (0.3, 0.4, 1.5)]:
        assert vf.parallel_rectangles_aligned(x, y, c) == pytest.approx(
            gauss_parallel(x, y, c), rel=2e-6)


def test_general_parallel_rectangles_reduce_to_the_aligned_case_and_match_monte_carlo():
    x = np.array([0.5, 1.0, 2.0])
    # aligned special case (Incropera Table 13.2) from the general formula (Howell)
    assert np.allclose(vf.parallel_rectangles((0, x, 0, 1.0), (0, x, 0, 1.0), 0.8),
                       vf.parallel_rectangles_aligned(x, 1.0, 0.8), rtol=1e-12)
    # offset, unequal rectangles: Monte Carlo ray tracing with a fixed seed (2e6 rays,
    # standard error < 3.5e-4)
    first, second, c = (0.0, 1.0, 0.0, 1.0), (0.3, 2.0, -0.5, 0.7), 0.8

    def emit(rng, m):
        p = np.column_stack([rng.random(m), rng.random(m), np.zeros(m)])
        return p, np.eye(3)

    mc = monte_carlo(emit, _plane_hit(2, c, (0.3, -0.5), (2.0, 0.7)))
    assert vf.parallel_rectangles(first, second, c) == pytest.approx(mc, abs=1.5e-3)
    # reciprocity A1 F12 = A2 F21 of the general formula
    f12 = vf.parallel_rectangles(first, second, c)
    f21 = vf.parallel_rectangles(second, first, c)
    assert 1.0 * f12 == pytest.approx(1.7 * 1.2 * f21, rel=1e-10)


def test_perpendicular_rectangles_against_monte_carlo():
    # emitter in z = 0, x in [0, X] (common edge along x at y = 0), y in [0, Y]; receiver in
    # y = 0, x in [0, X], z in [0, Z]
    X, Y, Z = 1.0, 0.6, 1.4

    def emit(rng, m):
        p = np.column_stack([X * rng.random(m), Y * rng.random(m), np.zeros(m)])
        return p, np.eye(3)

    mc = monte_carlo(emit, _plane_hit(1, 0.0, (0.0, 0.0), (X, Z)))
    assert vf.perpendicular_rectangles_common_edge(X, Y, Z) == pytest.approx(mc, abs=1.5e-3)


def test_coaxial_discs_against_monte_carlo():
    r1, r2, L = 0.5, 0.8, 0.6

    def emit(rng, m):
        rad = r1 * np.sqrt(rng.random(m))
        phi = 2 * np.pi * rng.random(m)
        return np.column_stack([rad * np.cos(phi), rad * np.sin(phi), np.zeros(m)]), np.eye(3)

    def hit(p, d):
        t = (L - p[:, 2]) / d[:, 2]
        q = p + t[:, None] * d
        return (t > 0) & (q[:, 0] ** 2 + q[:, 1] ** 2 <= r2 * r2)

    assert vf.coaxial_discs(r1, r2, L) == pytest.approx(monte_carlo(emit, hit), abs=1.5e-3)


def test_long_rectangles_tend_to_the_two_dimensional_strips():
    # Table 13.2 (3-D) against Table 13.1 (2-D): very long rectangles behave as strips
    long = 1e5
    assert vf.parallel_rectangles_aligned(0.7, long, 0.4) == pytest.approx(
        vf.parallel_strips(0.7, 0.7, 0.4), rel=1e-4)
    assert vf.perpendicular_rectangles_common_edge(long, 0.5, 1.3) == pytest.approx(
        vf.perpendicular_strips_common_edge(0.5, 1.3), rel=1e-4)
    # the inclined strips at a right angle are the perpendicular strips of equal width
    assert vf.inclined_strips_common_edge(np.pi / 2) == pytest.approx(
        vf.perpendicular_strips_common_edge(1.0, 1.0), rel=1e-12)


def _crossed_strings(a1, a2, b1, b2):
    """Hottel's crossed-strings rule for 2-D surfaces a1-a2 and b1-b2 (unobstructed):
    F_ab = [(|a1 b2| + |a2 b1|) - (|a1 b1| + |a2 b2|)] / (2 |a1 a2|)."""
    d = lambda p, q: np.hypot(*(np.subtract(p, q)))  # noqa: E731
    return (d(a1, b2) + d(a2, b1) - d(a1, b1) - d(a2, b2)) / (2 * d(a1, a2))


def test_two_dimensional_strips_against_crossed_strings():
    # parallel strips, midlines on one perpendicular: wi = 1.2 at y = 0, wj = 0.5 at y = 0.8
    assert vf.parallel_strips(1.2, 0.5, 0.8) == pytest.approx(
        _crossed_strings((-0.6, 0), (0.6, 0), (-0.25, 0.8), (0.25, 0.8)), rel=1e-12)
    # three-sided enclosure: a triangle with sides 3, 4, 5
    assert vf.three_sided_enclosure(3.0, 4.0, 5.0) == pytest.approx(
        _crossed_strings((0, 0), (3, 0), (0, 0), (0, 4)), rel=1e-12)


def test_cylinder_and_strip_and_row_of_cylinders_against_monte_carlo_in_two_dimensions():
    # rays leave a strip (y = 0, x in [s2, s1]) upwards with a 2-D cosine law (sin of a uniform
    # variate in [-1, 1]); a cylinder of radius r on the axis (0, L) receives them
    rng = np.random.default_rng(7)
    r, L, s1, s2, n = 0.3, 1.0, 1.5, -0.4, 2_000_000
    x0 = s2 + (s1 - s2) * rng.random(n)
    sin_t = 2 * rng.random(n) - 1
    dx, dy = sin_t, np.sqrt(1 - sin_t ** 2)
    # distance from the axis to the ray's line, for rays heading towards it
    px, py = -x0, L
    along = px * dx + py * dy
    miss2 = px ** 2 + py ** 2 - along ** 2
    hit = (along > 0) & (miss2 <= r * r)
    assert vf.cylinder_and_parallel_strip(r, L, s1, s2) == pytest.approx(hit.mean(), abs=1.5e-3)
    # a plane under a row of cylinders (diameter D, pitch s): one period, same 2-D rays
    D, s, n = 0.5, 1.2, 1_000_000
    x0 = s * rng.random(n) - s / 2
    sin_t = 2 * rng.random(n) - 1
    dx, dy = sin_t, np.sqrt(1 - sin_t ** 2)
    hit = np.zeros(n, dtype=bool)
    for j in range(-60, 61):  # cylinders at (j s, 1); far ones subtend a negligible angle
        px, py = j * s - x0, 1.0
        along = px * dx + py * dy
        hit |= (along > 0) & (px ** 2 + py ** 2 - along ** 2 <= (D / 2) ** 2)
    assert vf.plane_and_row_of_cylinders(D, s) == pytest.approx(hit.mean(), abs=3e-3)


# -- enclosures: summation and reciprocity --------------------------------------------------------
@pytest.mark.parametrize("shape, dims", [
    ("box_interior", dict(length=0.4, width=0.3, height=0.2)),
    ("cylinder_cavity", dict(radius=0.0375, length=0.15)),
    ("concentric_cylinders", dict(inner_radius=0.02, outer_radius=0.05, length=2.0)),
    ("concentric_spheres", dict(inner_radius=0.1, outer_radius=0.3)),
])
def test_enclosure_shapes_obey_summation_and_reciprocity(shape, dims):
    areas, F, names = vf.enclosure_view_factors(shape, **dims)
    assert len(names) == len(areas) == F.shape[0]
    # Incropera eqs. 13.3-13.4; the box rows sum to one only because the parallel and the
    # perpendicular formulas (two independent tables) agree
    assert np.allclose(F.sum(axis=1), 1.0, atol=1e-12)
    G = areas[:, None] * F
    assert np.allclose(G, G.T, rtol=1e-12, atol=1e-15)
    vf.check_view_factors(areas, F, names=names, tolerance=1e-9)


def test_box_floor_to_wall_against_monte_carlo():
    L, W, H = 0.4, 0.3, 0.2
    areas, F, names = vf.enclosure_view_factors("box_interior", length=L, width=W, height=H)

    def emit(rng, m):
        return np.column_stack([L * rng.random(m), W * rng.random(m), np.zeros(m)]), np.eye(3)

    # floor -> front face (the face x = 0, spanning y in [0, W], z in [0, H])
    mc = monte_carlo(emit, _plane_hit(0, 0.0, (0, 0), (W, H)))
    assert F[names.index("floor"), names.index("front")] == pytest.approx(mc, abs=1.5e-3)


def test_the_registry_lists_itself_and_calls_shapes_by_name():
    text = vf.describe_shapes()
    for name, shape in vf.SHAPES.items():
        assert text.count(f"{name}(") == 1 and shape.source in text
    assert vf.view_factor("parallel_strips", width_from=1, width_to=1, distance=1) == \
        pytest.approx(np.sqrt(2) - 1, rel=1e-12)  # (sqrt 8 - 2)/2, closed form by hand


# -- bad input ------------------------------------------------------------------------------------
def test_a_row_summing_above_one_is_refused_naming_the_row():
    with pytest.raises(InputError, match=r"row 1 \('lid'\): view factors sum to 1.1 > 1"):
        vf.check_view_factors([1.0, 1.0], [[0.0, 1.0], [1.0, 0.1]], names=["floor", "lid"])


def test_reciprocity_violation_says_what_the_factor_would_be():
    with pytest.raises(InputError, match=r"reciprocity .* would be 0.5"):
        vf.check_view_factors([1.0, 2.0], [[0.0, 1.0], [1.0, 0.0]], closed=False)


def test_negative_area_and_out_of_range_factor_and_open_enclosure_are_refused():
    with pytest.raises(InputError, match="area of surface 0 must be positive"):
        vf.check_view_factors([-1.0, 1.0], [[0, 1], [1, 0]])
    with pytest.raises(InputError, match=r"row 0, column 1: view factor -0.2 outside \[0, 1\]"):
        vf.check_view_factors([1.0, 1.0], [[0, -0.2], [1, 0]])
    with pytest.raises(InputError, match="< 1 in a closed enclosure.*opening"):
        vf.check_view_factors([1.0, 1.0], [[0, 0.5], [0.5, 0]])
    with pytest.raises(InputError, match="2 x 2 matrix"):
        vf.check_view_factors([1.0, 1.0], [[0, 1, 0], [1, 0, 0]])


def test_unknown_shape_and_parameter_and_bad_dimension_are_refused():
    with pytest.raises(InputError, match="shape 'coaxial_disks'.*did you mean 'coaxial_discs'"):
        vf.view_factor("coaxial_disks", radius_from=1, radius_to=1, distance=1)
    with pytest.raises(InputError, match="unknown parameter 'radius'.*radius_from"):
        vf.view_factor("coaxial_discs", radius=1, radius_to=1, distance=1)
    with pytest.raises(InputError, match="distance must be a positive"):
        vf.view_factor("coaxial_discs", radius_from=1, radius_to=1, distance=-1)
    with pytest.raises(InputError, match="do not close a triangle"):
        vf.view_factor("three_sided_enclosure", width_from=1, width_to=1, width_other=3)
    with pytest.raises(InputError, match="use enclosure_view_factors"):
        vf.view_factor("box_interior", length=1, width=1, height=1)
