"""The materials an entry lists itself: front matter, Markdown tables, recovered material.

Plugin ``structured`` (``masstrail_extract_amounts``, first): one material line per item of
the front matter's ``materials`` (origin ``front-matter``) and of a materials table (origin
``table``), and one per ``recovered`` item (role ``recovered``). Each amount is parsed by
:func:`capture.quantities.parse_amounts`; one that cannot be read leaves the line with an
``unreadable_amount`` problem, which the gap rules report. A ``formula`` the entry gives for
a material is kept on its line: it wins over any name lookup for the molar mass.
"""

from __future__ import annotations

from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import Entry, MaterialLine, StructuredMaterial
from capture.quantities import AmountError, parse_amounts
from masstrail_plugins.prose import operation_of_role


def line_of(item: StructuredMaterial, origin: str, role: str | None = None) -> MaterialLine:
    """The material line for one structured item, its amount parsed."""
    line = MaterialLine(
        name=item.name.strip(),
        role=role or item.role,
        operation=operation_of_role(role or item.role),  # "drying agent": drying
        stage=item.stage,
        stated=item.amount,
        origin=origin,
        evidence=_evidence(item, origin),
    )
    if item.amount:
        try:
            line.amounts = parse_amounts(item.amount)
        except AmountError as exc:
            line.problem = f"amount could not be read: {exc}"
            line.problem_kind = "unreadable_amount"
    return line


def _evidence(item: StructuredMaterial, origin: str) -> str:
    if origin == "table":
        line = (item.model_extra or {}).get("line")
        return f"materials table, line {line} of the text: {item.name} | {item.amount or ''}"
    return f"front matter: materials: {item.name}: {item.amount or '(no amount)'}"


@hookimpl(tryfirst=True, specname="masstrail_extract_amounts")
def structured_materials(entry: Entry, config: LabConfig) -> list[MaterialLine]:
    """The front matter's and the tables' materials, then the recovered material."""
    lines = []
    tables = entry.table_materials if entry.amounts_from_text else []  # the body only describes
    for items, origin in ((entry.materials, "front-matter"), (tables, "table")):
        for item in items:
            line = line_of(item, origin)
            own = (item.model_extra or {}).get("formula")
            line.formula = str(own) if own else None
            lines.append(line)
    for rec in entry.recovered:
        lines.append(line_of(StructuredMaterial(name=rec.name, amount=rec.amount),
                             "front-matter", role="recovered"))  # fmt: skip
    return lines
