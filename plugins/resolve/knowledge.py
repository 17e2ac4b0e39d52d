"""masstrail's material knowledge as data: the built-in table, the lab's density overrides,
and the words that name a class of compounds rather than one.

A public module, not a plugin: the resolvers ``materials`` and ``names`` both use it.
"""

from __future__ import annotations

import functools
import re
import tomllib
from pathlib import Path
from typing import Any

from capture.chem import material_key, molar_mass
from capture.config import LabConfig
from capture.models import MaterialInfo

DATA_FILE = Path(__file__).parent.parent / "data" / "materials.toml"
BUILTIN_SOURCE = "masstrail material data (plugins/data/materials.toml)"


class MaterialData:
    """The built-in material table, indexed by every name and synonym."""

    def __init__(self, raw: dict[str, Any]) -> None:
        self.sources: dict[str, str] = raw.get("sources", {})
        self.records: list[dict[str, Any]] = raw.get("material", [])
        self.index: dict[str, dict[str, Any]] = {}
        for rec in self.records:
            for name in [rec["name"], *rec.get("synonyms", [])]:
                key = material_key(name)
                other = self.index.get(key)
                if other is not None and other is not rec:
                    raise ValueError(
                        f"{DATA_FILE}: the name {name!r} is given to both "
                        f"{other['name']!r} and {rec['name']!r}"
                    )
                self.index[key] = rec

    def source(self, key: str | None) -> str | None:
        if key is None:
            return None
        return self.sources.get(key, key)

    def info(self, rec: dict[str, Any]) -> MaterialInfo:
        formula = rec.get("formula")
        return MaterialInfo(
            name=rec["name"],
            formula=formula,
            molar_mass=round(molar_mass(formula), 4) if formula else None,
            density_g_ml=rec.get("density"),
            density_temp_c=rec.get("density_temp_c"),
            density_source=self.source(rec.get("density_source")),
            category=rec.get("category", "reagent"),
            halogenated=bool(rec.get("halogenated", False)),
            water_fraction=rec.get("water_fraction"),
            chem21=rec.get("chem21"),
            reactive=bool(rec.get("reactive", False)),
            source=BUILTIN_SOURCE,
        )


@functools.lru_cache(maxsize=1)
def data_version() -> str:
    """The first 12 hex digits of the sha256 of ``materials.toml``: its version, for results'
    fingerprints."""
    import hashlib

    return hashlib.sha256(DATA_FILE.read_bytes()).hexdigest()[:12]


@functools.lru_cache(maxsize=1)
def builtin_data() -> MaterialData:
    """The built-in material table, loaded once per process."""
    return MaterialData(tomllib.loads(DATA_FILE.read_text(encoding="utf-8")))


def lab_density(info: MaterialInfo, asked: str, config: LabConfig) -> float | None:
    """The lab's density for this material, whichever of its names the lab used."""
    names = {material_key(asked), material_key(info.name)}
    index = builtin_data().index
    for k, v in config.densities.items():
        key = material_key(k)
        rec = index.get(key)
        if key in names or (rec is not None and rec["name"] == info.name):
            return v
    return None


def apply_lab_density(info: MaterialInfo, asked: str, config: LabConfig) -> MaterialInfo:
    """A density from [densities] in masstrail.toml wins, under any of the material's names."""
    if not config.densities:
        return info
    value = lab_density(info, asked, config)
    if value is None:
        return info
    return info.model_copy(
        update={
            "density_g_ml": value,
            "density_temp_c": None,
            "density_source": "lab override in masstrail.toml",
        }
    )


# Words for a class of compounds, which a name database would resolve to one member
# ("alcohol" → ethanol, "aldehyde" → acetaldehyde, "salt" → sodium chloride).
GENERIC_CLASS_NAMES = {
    "alcohol", "aldehyde", "ketone", "amine", "acid", "base", "ester", "salt", "bromide",
    "chloride", "iodide", "fluoride", "halide", "alkene", "alkyne", "olefin", "arene", "diol",
    "substrate", "catalyst", "ligand", "reagent", "solvent", "product", "starting material",
    "intermediate", "nitrile", "amide", "carbamate", "enolate", "ylide", "anion", "cation",
    "oxide", "hydride", "boronic acid", "acid chloride", "anhydride", "gas", "nitro compound",
    "alkoxide", "phenoxide", "carboxylic acid", "acetal", "ketal", "epoxide", "azide", "imine",
    "lactone", "lactam", "peptide", "polymer", "resin", "dye", "sugar", "protein", "nitroarene",
    "aryl bromide", "aryl halide", "alkyl halide", "sulfonate", "mesylate", "tosylate", "ether",
}  # fmt: skip


def info_from_formula(name: str, formula: str) -> MaterialInfo | None:
    """Material knowledge from a formula the entry gives itself (None if it cannot be read)."""
    try:
        mm = molar_mass(formula)
    except ValueError:
        return None
    return MaterialInfo(
        name=name,
        formula=formula,
        molar_mass=round(mm, 4),
        category="reagent",
        source="the formula given in the entry",
    )


# a name followed by its short form: "iodotrimethylsilane (TMSI)", "N,N-diisopropylethylamine
# (DIPEA)"; not a bracket that is part of the name ("… (E)-…", "bis(…)", "(2S)-…")
_ALIAS = re.compile(r"^(?P<name>.*\S)\s+\((?P<alias>[A-Za-z][\w+-]{1,11})\)$")


def name_and_alias(name: str) -> tuple[str, str] | None:
    """(the name, its short form) for a name written with its short form in brackets."""
    m = _ALIAS.match(name.strip())
    return (m["name"], m["alias"]) if m else None
