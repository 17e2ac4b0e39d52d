"""Material knowledge: what a name stands for.

Three resolvers answer ``masstrail_resolve_material``, first answer wins:

1. ``lab`` (tryfirst): the lab's own ``[[materials]]`` and ``[densities]`` in
   ``masstrail.toml``;
2. ``builtin``: the data file ``data/materials.toml`` (over 100 common lab
   materials, hand-checked, every number with its source; see
   :mod:`masstrail_plugins.resolve.knowledge`), then the generated compound table
   ``data/compounds.sqlite`` (about 13,000 substances and the lab abbreviations; see
   :mod:`masstrail_plugins.resolve.compounds`), then a name written as SMILES;
3. ``chemicals`` (trylast, plugin ``names``): the offline name database of the ``chemicals``
   library, when it is installed (formula and molar mass only, no density).

A name none of them knows resolves to nothing, and the gap rules say so.
"""

from __future__ import annotations

import re

from capture.chem import (
    formula_from_smiles,
    inorganic,
    looks_like_smiles,
    material_key,
    molar_mass,
)
from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import MaterialInfo
from masstrail_plugins.resolve.compounds import look_up, table_version
from masstrail_plugins.resolve.knowledge import (
    GENERIC_CLASS_NAMES,
    apply_lab_density,
    builtin_data,
    data_version,
    name_and_alias,
)


@hookimpl(specname="masstrail_knowledge_versions")
def knowledge_versions(config: LabConfig) -> list[tuple[str, str]]:
    """The versions of the curated materials data and of the compound table."""
    return [("masstrail's curated materials (materials.toml)", data_version()),
            ("the compound table (compounds.sqlite, curation.toml)", table_version())]  # fmt: skip


@hookimpl(tryfirst=True, specname="masstrail_resolve_material")
def resolve_from_lab(name: str, config: LabConfig) -> MaterialInfo | None:
    """The lab's own materials from masstrail.toml."""
    key = material_key(name)
    for extra in config.materials:
        if key in {material_key(n) for n in [extra.name, *extra.synonyms]}:
            info = MaterialInfo(
                name=extra.name,
                formula=extra.formula,
                molar_mass=round(molar_mass(extra.formula), 4) if extra.formula else None,
                density_g_ml=extra.density_g_ml,
                density_temp_c=extra.density_temp_c,
                density_source=extra.source if extra.density_g_ml else None,
                category=extra.category,
                halogenated=extra.halogenated,
                water_fraction=extra.water_fraction,
                source=f"lab material in masstrail.toml: {extra.source}",
            )
            return apply_lab_density(info, name, config)
    return None


@hookimpl(specname="masstrail_resolve_material")
def resolve_builtin(name: str, config: LabConfig) -> MaterialInfo | None:
    """masstrail's curated material data, then its generated compound table, then a name
    written as SMILES (its formula)."""
    data = builtin_data()
    rec = data.index.get(material_key(name))
    if rec is not None:
        return apply_lab_density(data.info(rec), name, config)
    if material_key(name) in GENERIC_CLASS_NAMES:
        return None  # "the acid" is a class, not one compound
    info = look_up(name)
    if info is not None and (rec := data.index.get(material_key(info.name))) is not None:
        return apply_lab_density(data.info(rec), name, config)  # "CC1=CC=CC=C1": curated toluene
    info = info or _from_smiles(name) or _dilute_solution(name, config)
    if info is None and (parts := name_and_alias(name)):  # "N,N-diisopropylethylamine (DIPEA)"
        return resolve_builtin(parts[0], config)  # never by the short form: "TMSI" is two
    return None if info is None else apply_lab_density(info, name, config)


_DILUTE = re.compile(r"^(\d+(?:\.\d+)?) ([mn]) (.+)$")
DILUTE_MAX_M = 2.0


def _dilute_solution(name: str, config: LabConfig) -> MaterialInfo | None:
    """'1 M aqueous lithium hydroxide', '0.5 N H2SO4': an aqueous solution of at most 2 M of an
    inorganic compound the data knows, weighed with water's density as a stand-in (within
    about 5-8 % for the common acids, bases and salts at 2 M; common practice), its water
    fraction from the molarity. Stronger solutions need their own density: none is given."""
    m = _DILUTE.match(material_key(name))
    if m is None or float(m[1]) > DILUTE_MAX_M:
        return None
    solute = resolve_builtin(m[3], config)
    if solute is None or not solute.molar_mass or not inorganic(solute.formula):
        return None
    water = builtin_data().info(builtin_data().index["water"])
    solute_g_per_ml = float(m[1]) * solute.molar_mass / 1000
    return MaterialInfo(
        name=name,
        category="aqueous",
        density_g_ml=water.density_g_ml,
        density_temp_c=water.density_temp_c,
        density_source=f"water's, as a stand-in: the density of a {m[1]} {m[2].upper()} aqueous "
        f"solution of {solute.name} is not in the data (within about 5-8 % of water's up to "
        f"2 M; common practice)",
        water_fraction=round(1 - solute_g_per_ml / water.density_g_ml, 4),
        source=f"an aqueous solution of {solute.name} ({solute.source})",
    )


def _from_smiles(name: str) -> MaterialInfo | None:
    """A material named by its SMILES, as notebook records do: its formula and molar mass."""
    if not looks_like_smiles(name):
        return None
    formula = formula_from_smiles(name)
    return MaterialInfo(name=name, formula=formula, molar_mass=round(molar_mass(formula), 4),
                        source="the formula of its SMILES (masstrail's SMILES reader)")  # fmt: skip
