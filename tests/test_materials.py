"""The bundled material table: every row names a source and a basis; the rows taken from a
standard or a handbook are checked against an independent copy of the same table (the `ht`
library), by its exact key."""

import re

import pytest

from rcsim.errors import InputError
from rcsim.materials import get_material, material_names, materials_table

BASES = ("standard", "handbook", "textbook", "typical")


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


def _ht_key(source: str) -> str:
    found = re.search(r"ht key '([^']+)'", source)
    assert found, f"no ht key in {source!r}"
    return found.group(1)


def test_every_row_says_what_kind_of_value_it_holds():
    # issue 15, item 17: textbook properties of pure substances are not design values, and a
    # value recalled without a source says so
    table = materials_table()
    assert set(table["basis"]) <= set(BASES)
    for name, row in table.iterrows():
        if row["basis"] in ("standard", "handbook"):
            _ht_key(row["source"])                   # checked below, by its key
            assert "from memory" not in row["source"], name
        elif row["basis"] == "textbook":
            assert "Incropera et al., 6th ed." in row["source"], name
            assert "design" not in row["source"], name
        else:
            assert "from memory" in row["source"] or "common practice" in row["source"], name
    for metal in ("aluminium", "copper"):
        assert table.at[metal, "basis"] == "textbook"
    assert table.at["ice", "basis"] == "textbook"


def test_rows_from_the_building_materials_standard_match_its_table():
    # ISO 10456:2007 Table 3 carries the generic design values of EN 12524:2000 Table 1; the
    # `ht` library ships that table (ht.insulation.building_materials: density, conductivity,
    # specific heat). Each "standard" row must equal its row there exactly.
    insulation = pytest.importorskip("ht.insulation")
    table = materials_table()
    rows = table[table["basis"] == "standard"]
    assert len(rows) >= 7
    for name, row in rows.iterrows():
        rho, k, cp = insulation.building_materials[_ht_key(row["source"])]
        assert (row["density"], row["conductivity"], row["specific_heat"]) == (rho, k, cp), name
    # gypsum board is the standard's plasterboard row (900 kg/m3, 0.25 W/(m K), 1000 J/(kg K))
    gypsum = get_material("gypsum-board")
    assert (gypsum.density, gypsum.conductivity, gypsum.specific_heat) == (900.0, 0.25, 1000.0)


def test_rows_from_the_handbook_match_its_table():
    # the table of building and insulating materials of the ASHRAE Handbook - Fundamentals,
    # as shipped by `ht` (ht.insulation.ASHRAE: density, specific heat, conductivity, ...)
    insulation = pytest.importorskip("ht.insulation")
    table = materials_table()
    rows = table[table["basis"] == "handbook"]
    assert len(rows) >= 3
    for name, row in rows.iterrows():
        rho, cp, k = insulation.ASHRAE[_ht_key(row["source"])][:3]
        assert (row["density"], row["specific_heat"], row["conductivity"]) == (rho, cp, k), name


def test_known_values_from_handbook():
    # Incropera et al., 6th ed., Table A.1, pure copper at 300 K: k = 401 W/(m K) (from memory)
    assert get_material("copper").conductivity == pytest.approx(401.0)
    # latent heat of fusion of water 333.55 kJ/kg (common handbook value; from memory)
    assert get_material("water-ice").latent_heat == pytest.approx(333.55e3, rel=1e-3)


def test_unknown_material_suggests():
    with pytest.raises(InputError, match="did you mean 'copper'"):
        get_material("coper")
