"""Merging what the text says with what the entry lists: every material counted once.

Plugin ``merge`` (``masstrail_merge_materials``):

- a text mention that repeats a structured line (same material, same stage, same amount
  within 0.5 %) is counted once, from the structured line; so is a table's row that repeats
  the front matter's (an entry that lists its materials in both);
- a text mention of the same material at the same stage with a different amount of the
  same kind is counted once, from the structured line, with a minor ``conflicting_amounts``
  gap naming both; an amount of another kind (a mass in the text, a volume in the table)
  is a second line;
- the same material at another stage (the reaction solvent, then the recrystallisation
  solvent) is a second use and counts;
- a text mention named like the entry's product is not an input: it is set aside as a
  mention of the product, with every other quantity that is not an input (intermediates,
  samples, equipment, conditions, characterisation, unread);
- a text mention of what an earlier step of the same text put out ("… to produce an MEM
  form (4.98 g). The resultant MEM form (4.98 g) and …"): two of the same name, the same
  mass, and "the resultant", "the resulting", "the above" … before it, is that output
  carried forward, an intermediate, not a second input;
- an output of the text named as the product (a part of what was recovered, what was
  collected) is a mention of the product;
- the product's text record is its last isolated mention (``… to give the amide (2.41 g)``),
  else its last crude one: a recrystallised product wins over the crude mass before it; a
  further crop after the last whole mention (``a second crop (0.35 g)``) is added to it.

Stages are compared only when both lines know theirs: ``washed with ice-cold ethanol
(2 × 5 mL)`` is not the ``ethanol, 10 mL`` used as the reaction solvent.
"""

from __future__ import annotations

import re

from capture.chem import material_key, prose_key
from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import (
    SET_ASIDE_ROLES,
    AmountMention,
    Entry,
    Gap,
    MaterialLine,
    MergedMaterials,
)
from capture.quantities import first_of

STRUCTURED = {"front-matter", "table"}
# words by which the text takes up what an earlier step put out
_CARRIED = re.compile(
    r"^(?:the\s+)?(?:resultant|resulting|above|above-mentioned|aforementioned|said|"
    r"previously\s+obtained|thus\s+obtained)\s+",
    re.I,
)


def _start(line: MaterialLine) -> int:
    return min((a.span[0] for a in line.amounts if a.span), default=-1)


def _grams(line: MaterialLine) -> float | None:
    mass = first_of(line.amounts, "mass")
    return mass.total if mass else None


def _as_product(line: MaterialLine, product_key: str | None) -> MaterialLine:
    """An output of the text named as the entry's product ("a solid was recovered comprising
    1.40 g of the ester", "the ester (1.40 g) was collected") is a mention of the product."""
    if line.role != "intermediate" or line.origin != "text" or not product_key:
        return line
    if product_key not in {_key(line), prose_key(line.name)}:
        return line
    return line.model_copy(update={"role": "product"})


def _carried_forward(line: MaterialLine, outputs: list[MaterialLine]) -> MaterialLine | None:
    """The earlier output of the same text that ``line`` takes up again, if any."""
    at, key = _start(line), material_key(_CARRIED.sub("", line.name))
    grams, carried = _grams(line), bool(_CARRIED.match(line.name))
    for out in outputs:
        if not 0 <= _start(out) < at:
            continue
        same_name = key and key == material_key(_CARRIED.sub("", out.name))
        made = _grams(out)
        same_mass = grams and made and abs(grams - made) <= 0.01 * made
        # a name alone is not enough: "toluene (30 mL) was added" after 30 mL were
        # distilled off is fresh toluene, an input
        if (same_name and (same_mass or carried)) or (carried and same_mass):
            return out
    return None


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
    where = "in a materials table" if line.origin == "table" else "in the text"
    return Gap(
        kind="conflicting_amounts",
        item=line.name,
        severity="minor",
        evidence=line.evidence,
        message=f"{kept.name} is recorded as {kept.stated!r} ({kept.origin}) and as "
        f"{line.stated!r} {where} at the same stage; the {kept.origin} amount is counted. "
        "Correct whichever is wrong",
    )


def _repeats(line: MaterialLine, records: list[MaterialLine], gaps: list[Gap]) -> bool:
    """True when ``line`` repeats a record (same material, same stage, the same amount, or a
    different amount of the same kind: then a conflict gap, the record counted); a line
    that adds a use, or an amount of another kind, does not."""
    same = [o for o in records if _key(o) == _key(line) and same_stage(o, line)]
    if not same:
        return False
    if any(same_amount(a, b) for o in same for a in line.amounts for b in o.amounts):
        return True  # the same record twice: counted once
    kinds = {a.kind for a in line.amounts}
    if not any(kinds & {b.kind for b in o.amounts} for o in same):
        return False  # e.g. a mass in the text, a volume in the table
    gaps.append(_conflict(same[0], line))
    return True


def _product_mention(set_aside: list[MaterialLine]) -> MaterialLine | None:
    """The last isolated mention of the product, else the last crude one; further crops after
    the last whole mention ("… a second crop (0.21 g)") are added to it."""
    mentions = [m for m in set_aside if m.role == "product" and m.amounts]
    isolated = [m for m in mentions if m.note != "crude"]
    chosen = (isolated or mentions or [None])[-1]
    if chosen is None or chosen.note != "crop":
        return chosen
    whole = [i for i, m in enumerate(isolated) if m.note != "crop"]
    return _with_crops(isolated[whole[-1] :]) if whole else chosen


def _with_crops(parts: list[MaterialLine]) -> MaterialLine:
    """One mention of the product: a whole mass and the crops after it, added (each must be a
    mass; else the last crop, as before)."""
    masses = [first_of(m.amounts, "mass") for m in parts]
    if any(a is None for a in masses):
        return parts[-1]
    said = " + ".join(f"{a.text} ({m.name})" if m.note == "crop" else a.text
                      for m, a in zip(parts, masses, strict=True))  # fmt: skip
    total = AmountMention(value=sum(a.total for a in masses), unit="g", kind="mass", text=said)
    return parts[0].model_copy(update={"amounts": [total], "stated": said,
                                       "note": "crops added"})  # fmt: skip


@hookimpl(specname="masstrail_merge_materials")
def merge_text_with_records(
    entry: Entry, lines: list[MaterialLine], config: LabConfig
) -> MergedMaterials:
    """Structured lines first; the text's lines that add a use; the rest set aside."""
    apart = SET_ASIDE_ROLES | {"recovered"}
    front = [m for m in lines if m.origin == "front-matter" and m.role not in apart]
    gaps: list[Gap] = []
    structured = front + [m for m in lines if m.origin == "table" and m.role not in apart
                          and not _repeats(m, front, gaps)]  # fmt: skip
    recovered = [m for m in lines if m.role == "recovered"]
    product_key = prose_key(entry.product.name) if entry.product.name else None
    set_aside = [_as_product(m, product_key) for m in lines if m.role in SET_ASIDE_ROLES]
    materials = list(structured)
    outputs = [m for m in set_aside if m.role in {"product", "intermediate"} and m.origin == "text"]
    for line in lines:
        if line.origin in STRUCTURED or line.role in apart:
            continue
        if _key(line) == product_key:
            set_aside.append(line.model_copy(update={"role": "product", "stage": None}))
            continue
        made = _carried_forward(line, outputs) if line.origin == "text" else None
        if made is not None:
            note = f"what the text put out earlier ({made.name}, {made.stated}), taken up again"
            set_aside.append(line.model_copy(update={"role": "intermediate", "stage": None,
                                                     "note": note}))  # fmt: skip
            continue
        if not _repeats(line, structured, gaps):
            materials.append(line)
    set_aside.sort(key=lambda m: min((a.span[0] for a in m.amounts if a.span), default=0))
    return MergedMaterials(materials=materials, recovered=recovered,
                           product_mention=_product_mention(set_aside), set_aside=set_aside,
                           gaps=gaps)  # fmt: skip
