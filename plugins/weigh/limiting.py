"""The limiting reagent, which equivalents and the 1:1 yield estimate are reckoned from.

Plugin ``limiting`` (``masstrail_choose_limiting``), among the lines with an amount of
substance: the line whose role says it (``limiting reagent``), else the one stated as
``1 equiv``, else the reactant with the fewest mmol, else (in prose alone) the first
reaction-stage material given in mmol: the substrate is usually named first, with its
amount of substance (common practice).
"""

from __future__ import annotations

from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import MaterialLine
from masstrail_plugins.prose import LIMITING_ROLES, REACTANT_ROLES


@hookimpl(trylast=True, specname="masstrail_choose_limiting")
def choose_limiting(materials: list[MaterialLine], config: LabConfig) -> MaterialLine | None:
    """Marked by role, else stated as 1 equiv, else the scarcest reactant, else the first in
    mmol."""
    known = [m for m in materials if m.moles_mmol]
    for m in known:
        if (m.role or "").casefold() in LIMITING_ROLES:
            return m
    for m in known:
        if any(a.kind == "equivalents" and abs(a.value - 1.0) < 1e-9 for a in m.amounts):
            return m
    reactants = [m for m in known if (m.role or "").casefold() in REACTANT_ROLES]
    if reactants:
        return min(reactants, key=lambda m: m.moles_mmol)
    return next(
        (m for m in known if m.stage == "reaction" and any(a.kind == "amount" for a in m.amounts)),
        None,
    )
