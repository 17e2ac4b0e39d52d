"""Merging what the text says with what the entry lists: every material counted once.

Plugin ``merge`` (``masstrail_merge_materials``):

- a text mention that repeats a structured line (same material, same stage, same amount
  within 0.5 %) is counted once, from the structured line;
- a text mention of the same material at the same stage with a different amount of the
  same kind is counted once, from the structured line, with a minor ``conflicting_amounts``
  gap naming both; an amount of another kind (a mass in the text, a volume in the table)
  is a second line;
- the same material at another stage (the reaction solvent, then the recrystallisation
  solvent) is a second use and counts;
- a text mention named like the entry's product is not an input; the first product mention
  (``… to give the amide (2.41 g)``) is handed on as the product's text record.

Stages are compared only when both lines know theirs: ``washed with ice-cold ethanol
(2 × 5 mL)`` is not the ``ethanol, 10 mL`` used as the reaction solvent.
"""

from __future__ import annotations

from capture.chem import material_key
from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import AmountMention, Entry, Gap, MaterialLine, MergedMaterials

STRUCTURED = {"front-matter", "table"}


def _key(line: MaterialLine) -> str:
    return material_key(line.resolved or line.name)


def same_amount(a: AmountMention, b: AmountMention) -> bool:
    """Two amounts that say the same (same kind, multiplier, value within 0.5 %)."""
    return (
        a.kind == b.kind
        and a.multiplier == b.multiplier
        and abs(a.value - b.value) <= 0.005 * max(a.value, b.value)
    )


def same_stage(a: MaterialLine, b: MaterialLine) -> bool:
    """Two lines belong to one step unless both know their stage and the stages differ."""
    return not (a.stage and b.stage and a.stage != b.stage)


def _conflict(kept: MaterialLine, line: MaterialLine) -> Gap:
    return Gap(
        kind="conflicting_amounts",
        item=line.name,
        severity="minor",
        evidence=line.evidence,
        message=f"{kept.name} is recorded as {kept.stated!r} ({kept.origin}) and as "
        f"{line.stated!r} in the text at the same stage; the {kept.origin} amount is counted. "
        "Correct whichever is wrong",
    )


@hookimpl(specname="masstrail_merge_materials")
def merge_text_with_records(
    entry: Entry, lines: list[MaterialLine], config: LabConfig
) -> MergedMaterials:
    """Structured lines first; the text's lines that add a use; the product's mention apart."""
    apart = {"recovered", "product"}
    structured = [m for m in lines if m.origin in STRUCTURED and m.role not in apart]
    recovered = [m for m in lines if m.role == "recovered"]
    mention = next((m for m in lines if m.role == "product"), None)
    product_key = material_key(entry.product.name) if entry.product.name else None
    materials, gaps = list(structured), []
    for line in lines:
        if line.origin in STRUCTURED or line.role in apart:
            continue
        if _key(line) == product_key:
            continue
        same = [o for o in structured if _key(o) == _key(line) and same_stage(o, line)]
        if not same:
            materials.append(line)
            continue
        if any(same_amount(a, b) for o in same for a in line.amounts for b in o.amounts):
            continue  # the text repeats the structured record: counted once
        kinds = {a.kind for a in line.amounts}
        if not any(kinds & {b.kind for b in o.amounts} for o in same):
            materials.append(line)  # e.g. a mass in the text, a volume in the table
            continue
        gaps.append(_conflict(same[0], line))
    return MergedMaterials(materials=materials, recovered=recovered, product_mention=mention,
                           gaps=gaps)  # fmt: skip
