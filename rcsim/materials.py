"""Named materials: conductivity, density, specific heat (and latent heat for phase-change ones).

The table is a data file shipped in the package (``rcsim/data/materials.csv``); each row names its
source and its basis (a standard's tabulated value, a handbook's, a textbook property of a pure
substance, or a typical value). The values are typical, for a first model: not design values.
``material_names()`` lists what is there; an unknown name raises an error that lists the nearest
valid names.
"""

from __future__ import annotations

import csv
import math
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources

from .base import suggest  # noqa: F401  (re-exported: older imports)
from .errors import InputError

__all__ = ["Material", "get_material", "material_names", "materials_table", "suggest"]


@dataclass(frozen=True)
class Material:
    """Thermal properties of a material, SI units.

    Attributes
    ----------
    name, category, source : str
    conductivity : float  [W/(m*K)]
    density : float  [kg/m^3]
    specific_heat : float  [J/(kg*K)]
    latent_heat : float or None  [J/kg], phase-change materials only
    melting_low, melting_high : float or None  [degC], melting range
    specific_heat_solid, specific_heat_liquid : float or None  [J/(kg*K)]
    basis : str
        What kind of value the row holds (the header of ``rcsim/data/materials.csv``):
        ``standard`` (ISO 10456 tabulated design value), ``handbook`` (a handbook table),
        ``textbook`` (a measured property of a pure substance at a stated temperature) or
        ``typical`` (no single source). None of them is the design value of a product.
    """

    name: str
    category: str
    conductivity: float
    density: float
    specific_heat: float
    source: str
    latent_heat: float | None = None
    melting_low: float | None = None
    melting_high: float | None = None
    specific_heat_solid: float | None = None
    specific_heat_liquid: float | None = None
    basis: str = ""

    @property
    def is_phase_change(self) -> bool:
        return self.latent_heat is not None


def _optional(text: str) -> float | None:
    text = text.strip()
    return float(text) if text else None


@lru_cache(maxsize=1)
def _table() -> dict[str, Material]:
    text = resources.files("rcsim").joinpath("data/materials.csv").read_text(encoding="utf-8")
    lines = [line for line in text.splitlines() if line.strip() and not line.startswith("#")]
    out: dict[str, Material] = {}
    for row in csv.DictReader(lines):
        m = Material(
            name=row["name"].strip(),
            category=row["category"].strip(),
            conductivity=float(row["conductivity"]),
            density=float(row["density"]),
            specific_heat=float(row["specific_heat"]),
            source=row["source"].strip(),
            latent_heat=_optional(row["latent_heat"]),
            melting_low=_optional(row["melting_low"]),
            melting_high=_optional(row["melting_high"]),
            specific_heat_solid=_optional(row["specific_heat_solid"]),
            specific_heat_liquid=_optional(row["specific_heat_liquid"]),
            basis=(row.get("basis") or "").strip(),
        )
        for value in (m.conductivity, m.density, m.specific_heat):
            if not (math.isfinite(value) and value > 0):  # pragma: no cover - data file check
                raise RuntimeError(f"materials.csv: bad row for {m.name}")
        out[m.name] = m
    return out


def material_names() -> list[str]:
    """Names of the materials in the table, in table order."""
    return list(_table())


def get_material(name: str, where: str | None = None) -> Material:
    """Look up a material by name.

    Raises
    ------
    InputError
        Unknown name; the message suggests the nearest names.
    """
    table = _table()
    if not isinstance(name, str) or name not in table:
        raise InputError(f"unknown material {name!r}", where, suggest(name, table))
    return table[name]


def materials_table():
    """The material table as a pandas DataFrame indexed by name."""
    import pandas as pd

    rows = [m.__dict__ for m in _table().values()]
    return pd.DataFrame(rows).set_index("name")
