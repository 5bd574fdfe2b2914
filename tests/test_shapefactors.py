"""Box edges and corners: the shape-factor table against a worked example and against our own
finite-volume solutions (2-D edge, 3-D box octant, scipy.sparse), the validity warning and bad
input."""

import warnings

import pytest
from box_reference import extrapolated

from rcsim import shapefactors as sf
from rcsim.errors import InputError


# -- the table against a worked example and our own numerical solutions ---------------------------
def test_cubical_furnace_worked_example():
    # Holman, Heat Transfer, 10th ed., section 3-4, worked example (from memory): a 50 cm cube
    # inside, 10 cm fireclay brick walls, k = 1.04 W/(m K), 500 degC inside and 50 degC outside:
    # walls 6 x 2.5 m, edges 12 x 0.27 m, corners 8 x 0.015 m, S = 18.36 m, q = 8.592 kW
    box = sf.box_conduction([0.5, 0.5, 0.5], 1.04, thickness=0.1)
    assert box.walls / 1.04 == pytest.approx(15.0)
    assert box.edges / 1.04 == pytest.approx(3.24)
    assert box.corners / 1.04 == pytest.approx(0.12)
    assert float(box.heat_flow(500.0, 50.0)) == pytest.approx(8592.0, abs=1.0)


def test_edge_factor_against_a_two_dimensional_solution():
    # a long square duct (inside 4 L wide) solved here: the flow beyond the four plane walls
    # (inside widths) is four edges; per unit length each is 0.559 k (the table's 0.54 is 3 %
    # low: Incropera et al., 6th ed., Table 4.1 gives S = 0.54 D for the edge of two adjoining walls)
    L = 1.0
    q = extrapolated([2.0, 2.0], L, 0.02, 0.01)
    edge = (q - 4 * 4.0 / L) / 4
    assert edge == pytest.approx(0.559, abs=2e-3)
    assert sf.EDGE_FACTOR == pytest.approx(edge, rel=0.04)


@pytest.mark.slow
def test_cube_shipper_against_a_three_dimensional_solution():
    # 0.3 m cube inside, 50 mm walls (inside / thickness = 6): the table's walls + edges + corners
    # against our octant solution at 10 mm and 5 mm cells, extrapolated: within 1 % (measured
    # -0.4 %). The edges and corners carry 15.7 % of the whole (18.6 % on top of the plane walls).
    box = sf.box_conduction([0.3, 0.3, 0.3], 1.0, thickness=0.05)
    fd = extrapolated([0.15, 0.15, 0.15], 0.05, 0.01, 0.005)
    assert box.total == pytest.approx(fd, rel=0.01)
    assert box.edge_corner_share == pytest.approx((12 * 0.54 * 0.3 + 8 * 0.15 * 0.05) / 12.804,
                                                  rel=1e-9)
    assert box.edge_corner_share == pytest.approx(0.157, abs=1e-3)
    # a plane-wall model (inside areas) misses 15 % of the heat leak of this box
    assert 1 - box.walls / fd > 0.14


def test_rectangular_shipper_against_a_three_dimensional_solution():
    # 0.4 x 0.3 x 0.2 m inside, 40 mm walls: within 1 %
    box = sf.box_conduction([0.4, 0.3, 0.2], 0.03, outside=[0.48, 0.38, 0.28])
    assert box.thickness == pytest.approx(0.04)
    fd = 0.03 * extrapolated([0.2, 0.15, 0.1], 0.04, 0.01, 0.005)
    assert box.total == pytest.approx(fd, rel=0.01)


def test_thick_walls_warn_where_the_factors_over_predict():
    # inside = half the wall thickness: our solution shows the table 10 % high, so rcsim warns
    with pytest.warns(sf.ShapeFactorWarning, match="below the wall thickness"):
        box = sf.box_conduction([0.1, 0.1, 0.1], 1.0, thickness=0.2)
    assert not box.valid
    fd = extrapolated([0.05, 0.05, 0.05], 0.2, 0.025, 0.0125)  # 0.1 % from 10 mm / 5 mm cells
    assert box.total / fd - 1 == pytest.approx(0.10, abs=0.02)
    # below a fifth of the thickness the table's own condition is broken as well
    with pytest.warns(sf.ShapeFactorWarning, match="table's own condition"):
        sf.box_conduction([0.03, 0.5, 0.5], 1.0, thickness=0.2)
    # at inside = thickness the factors hold (measured +1.7 %): no warning
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        assert sf.box_conduction([0.1, 0.1, 0.1], 1.0, thickness=0.1).valid


# -- bad input ------------------------------------------------------------------------------------
def test_bad_box_input_is_refused_in_one_line():
    with pytest.raises(InputError, match="give the wall thickness or the outside dimensions"):
        sf.box_conduction([0.3, 0.3, 0.3], 0.03)
    with pytest.raises(InputError, match="give the wall thickness or the outside dimensions"):
        sf.box_conduction([0.3, 0.3, 0.3], 0.03, thickness=0.05, outside=[0.4, 0.4, 0.4])
    with pytest.raises(InputError, match=r"box.inside\[1\]: inside\[1\] must be a positive"):
        sf.box_conduction([0.3, -0.3, 0.3], 0.03, thickness=0.05)
    with pytest.raises(InputError, match=r"box.outside: outside\[2\] .* is not larger"):
        sf.box_conduction([0.3, 0.3, 0.3], 0.03, outside=[0.4, 0.4, 0.3])
    with pytest.raises(InputError, match="walls differ in thickness.*one thickness"):
        sf.box_conduction([0.3, 0.3, 0.3], 0.03, outside=[0.4, 0.4, 0.5])
    with pytest.raises(InputError, match="shipper.conductivity: conductivity must be positive"):
        sf.box_conduction([0.3, 0.3, 0.3], 0.0, thickness=0.05, where="shipper")
    with pytest.raises(InputError, match="three lengths"):
        sf.box_conduction([0.3, 0.3], 0.03, thickness=0.05)
