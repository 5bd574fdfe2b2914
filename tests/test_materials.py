import pytest

from rcsim.errors import InputError
from rcsim.materials import get_material, material_names, materials_table


def test_table_has_required_materials_with_sources():
    names = material_names()
    assert len(names) >= 20
    table = materials_table()
    for cat in ("masonry", "concrete", "timber", "boards", "insulation", "glass", "metal"):
        assert (table["category"] == cat).any(), cat
    for required in ("water", "ice", "air", "gel-pack"):
        assert required in names
    assert (table["category"] == "insulation").sum() >= 3
    assert table["source"].str.len().min() > 10  # every row names where it comes from
    assert (table[["conductivity", "density", "specific_heat"]] > 0).all().all()


def test_known_values_from_handbook():
    # Incropera et al. Table A.1, pure copper at 300 K: k = 401 W/(m K) (from memory)
    assert get_material("copper").conductivity == pytest.approx(401.0)
    # latent heat of fusion of water ~333.6 kJ/kg (handbook value)
    assert get_material("water-ice").latent_heat == pytest.approx(333.55e3, rel=1e-3)


def test_unknown_material_suggests():
    with pytest.raises(InputError, match="did you mean 'copper'"):
        get_material("coper")
