"""Material properties for the reducer checks, read from ``sim/data/materials.toml``.

Each value in the data file carries its source (or is marked "from memory"); the table is read
strictly (unknown keys are errors). A part file names its materials by key (``"pla"``,
``"steel_52100"``); :func:`get_material` turns a name into a :class:`Material`.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache
from pathlib import Path

from sim.core.config import Field, load_toml, validate
from sim.core.errors import InputError

MATERIALS_FILE = Path(__file__).resolve().parent.parent / "data" / "materials.toml"

_VALUE_KEYS = ("youngs_modulus_pa", "poisson_ratio", "density_kg_m3", "bending_allowable_pa",
               "contact_allowable_pa")


def _sourced(doc: str, max_: float | None = None) -> dict[str, Field]:
    return {"value": Field(float, doc, required=True, min=0.0, min_inclusive=False, max=max_),
            "source": Field(str, "where the value comes from", required=True,
                            check=lambda s: None if s.strip() else "a non-empty source")}


_SPEC = {
    "description": Field(str, required=True),
    "youngs_modulus_pa": _sourced("Young's modulus, Pa"),
    "poisson_ratio": _sourced("Poisson's ratio", max_=0.5),
    "density_kg_m3": _sourced("density, kg/m^3"),
    "bending_allowable_pa": _sourced("allowable bending stress, Pa"),
    "contact_allowable_pa": _sourced("allowable Hertz peak pressure, Pa"),
}


@dataclass(frozen=True)
class Material:
    """Elastic constants, density and static allowables (SI). ``sources`` maps key -> source."""

    name: str
    description: str
    youngs_modulus_pa: float
    poisson_ratio: float
    density_kg_m3: float
    bending_allowable_pa: float
    contact_allowable_pa: float
    sources: tuple[tuple[str, str], ...]


def load_materials(path: str | Path = MATERIALS_FILE) -> dict[str, Material]:
    """Read a materials file into ``{name: Material}``."""
    data = load_toml(path, "materials file")
    out: dict[str, Material] = {}
    for name, table in data.items():
        v = validate(table, _SPEC, file=path, prefix=name + ".")
        values = {k: float(v[k]["value"]) for k in _VALUE_KEYS}
        out[name] = Material(name=name, description=v["description"], **values,
                             sources=tuple((k, v[k]["source"]) for k in _VALUE_KEYS))
    return out


@cache
def _default_materials() -> dict[str, Material]:
    return load_materials(MATERIALS_FILE)


def get_material(name: str, file: str | None = None, key: str | None = None) -> Material:
    """The material called ``name`` in the default table; else an error naming file and key."""
    table = _default_materials()
    if name not in table:
        raise InputError(file, key, "a known material: " + ", ".join(sorted(table)), name)
    return table[name]
