"""Units outside the common list go through pint's registry: every unit of pint is there."""

import pytest

import rcsim.units

# units outside rcsim.units.COMMON_UNITS, through pint's registry, against their exact
# definitions (NIST Special Publication 811, 2008 ed., Appendix B.8 and B.9)
EXACT = [
    ("2 yd", "length", 2 * 0.9144),
    ("1 mile", "length", 1609.344),
    ("1 gallon", "volume", 231 * 0.0254 ** 3),                    # US gallon = 231 in^3
    ("1 psi", "pressure", 0.45359237 * 9.80665 / 0.0254 ** 2),    # lbf/in^2
    ("1 cal/(g*K)", "specific_heat", 4184.0),                     # thermochemical calorie
    ("3 ft^2", "area", 3 * 0.3048 ** 2),
]


@pytest.mark.parametrize("text,kind,expected", EXACT)
def test_units_outside_the_common_list_keep_their_exact_values(text, kind, expected):
    assert rcsim.units.to_si(text, kind) == pytest.approx(expected, rel=1e-14)
