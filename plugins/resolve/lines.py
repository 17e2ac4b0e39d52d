"""What one material line is: the knowledge it is weighed with, and its stage.

Plugin ``lines``:

- ``masstrail_line_material``: the material knowledge of the line's name; a formula the
  entry gives for the line wins over any name lookup for the formula and molar mass; a
  solution (``s-BuLi (1.4 M in cyclohexane, …)``) is weighed with its own density where
  the data has it (``s-BuLi 1.4 M in cyclohexane``), else with its solvent's, and the
  basis says which;
- ``masstrail_material_stage``: the stage from the line's role (``eluent`` →
  purification), else from its category (a drying agent → workup), by the vocabulary of
  :mod:`masstrail_plugins.prose`.
"""

from __future__ import annotations

from collections.abc import Callable

from capture.chem import inorganic
from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import MaterialInfo, MaterialLine, Stage
from masstrail_plugins.prose import CATEGORY_STAGE, stage_of_role
from masstrail_plugins.resolve.knowledge import info_from_formula, name_and_alias


def solvent_stand_in(
    line: MaterialLine, info: MaterialInfo | None, resolve: Callable[[str], MaterialInfo | None]
) -> MaterialInfo | None:
    """A solution weighed with its own density where known, else with its solvent's."""
    conc = next((a for a in line.amounts if a.kind == "concentration"), None)
    if conc is not None:
        own = resolve(f"{line.name} {conc.value:g} M in {line.solvent}")
        if own is not None and own.density_g_ml:
            return own
    solvent = resolve(line.solvent or "")
    if solvent is None or not solvent.density_g_ml:
        return info
    base = info or MaterialInfo(
        name=line.name, category="reagent", source="named in the text; not in the data"
    )
    temp = f", {solvent.density_temp_c:g} °C" if solvent.density_temp_c is not None else ""
    return base.model_copy(
        update={
            "density_g_ml": solvent.density_g_ml,
            "density_temp_c": solvent.density_temp_c,
            "density_source": f"density of the solvent, {solvent.name}{temp}, "
            f"{solvent.density_source}; the solution's own density is not known",
        }
    )


def _named(name: str, resolve: Callable[[str], MaterialInfo | None]) -> MaterialInfo | None:
    """The knowledge of a name, or of the name before its short form in brackets
    ("iodotrimethylsilane (TMSI)"); never of the short form alone, which may name several
    compounds (TMSI is iodotrimethylsilane and N-trimethylsilylimidazole)."""
    info = resolve(name)
    if info is None and (parts := name_and_alias(name)):
        info = resolve(parts[0])
    return info


@hookimpl(trylast=True, specname="masstrail_line_material")
def material_of_line(
    line: MaterialLine, resolve: Callable[[str], MaterialInfo | None], config: LabConfig
) -> MaterialInfo | None:
    """The name's knowledge (or, failing that, of the name before its short form in brackets),
    the entry's own formula, and a solution's solvent stand-in."""
    info = _named(line.name, resolve)
    if line.formula:
        own = info_from_formula(line.name, line.formula)
        if own is not None and info is not None:
            own = info.model_copy(update={"formula": own.formula, "molar_mass": own.molar_mass})
        info = own or info
    if line.solvent and (info is None or not info.density_g_ml):
        info = solvent_stand_in(line, info, resolve)
    elif info is not None and not info.density_g_ml and inorganic(info.formula) and any(
            a.kind == "volume" for a in line.amounts):  # fmt: skip
        line.solvent = "water"  # "sodium hydrogen carbonate (25 ml)": an aqueous solution
        info = solvent_stand_in(line, info, resolve)
    return info


@hookimpl(trylast=True, specname="masstrail_material_stage")
def stage_of_line(line: MaterialLine, config: LabConfig) -> Stage | None:
    """The stage from the role, else from the category."""
    return stage_of_role(line.role) or CATEGORY_STAGE.get(line.category or "")
