"""Material knowledge: what a name stands for.

Three resolvers answer ``masstrail_resolve_material``, first answer wins:

1. ``lab`` (tryfirst): the lab's own ``[[materials]]`` and ``[densities]`` in
   ``masstrail.toml``;
2. ``builtin``: the data file ``data/materials.toml`` (over 100 common lab
   materials, every number with its source; see :mod:`masstrail_plugins.resolve.knowledge`);
3. ``chemicals`` (trylast, plugin ``names``): the offline name database of the ``chemicals``
   library, when it is installed (formula and molar mass only, no density).

A name none of them knows resolves to nothing, and the gap rules say so.
"""

from __future__ import annotations

from capture.chem import material_key, molar_mass
from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import MaterialInfo
from masstrail_plugins.resolve.knowledge import apply_lab_density, builtin_data


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
    """The built-in material table."""
    data = builtin_data()
    rec = data.index.get(material_key(name))
    if rec is None:
        return None
    return apply_lab_density(data.info(rec), name, config)
