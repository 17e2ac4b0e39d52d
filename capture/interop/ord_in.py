"""Import from the Open Reaction Database (ORD): one masstrail entry per ``Reaction``.

Each reaction becomes ``ID.md`` (Markdown with YAML front matter) in the target folder:

- ``id``: the reaction id; ``title``: "ORD <id>"; ``date`` and ``author`` from the
  provenance (``experiment_start``, ``experimenter``);
- ``materials``: every input component (reactant — ``limiting reagent`` where
  ``is_limiting`` —, reagent, solvent, catalyst, workup) and every workup's components (as
  ``workup``, or the role the workup type implies: extraction solvent, wash, drying agent,
  filtration, eluent), each named by its NAME (else its SMILES) with its amount in the unit
  ORD gives, so masstrail's own conversion and its basis apply;
- ``product``: the desired product's name, SMILES, mass (the AMOUNT measurement) and, where
  only a yield is given, ``yield`` (masstrail then derives the mass from the yield, the
  limiting reactant's moles and the product's molar mass, and says no mass was recorded);
- the body: ``notes.procedure_details``, with ``amounts_from_text: false``: the record's
  structured amounts are the entry's, the text only describes (it still shows the
  operations whose records the gap rules look for);
- ``recovered``: what masstrail's own export kept in ``masstrail.recovered``.

What masstrail has no use for (conditions, analyses, other identifiers) is ignored, never an
error. Existing files are never overwritten.
"""

from __future__ import annotations

import contextlib
import json
from dataclasses import dataclass, field
from decimal import Decimal
from pathlib import Path
from typing import Any

from capture.interop.ord_out import ord_modules

_MASS = {"KILOGRAM": "kg", "GRAM": "g", "MILLIGRAM": "mg", "MICROGRAM": "µg"}
_VOLUME = {"LITER": "L", "MILLILITER": "mL", "MICROLITER": "µL", "NANOLITER": "nL"}
_MOLES = {"MOLE": "mol", "MILLIMOLE": "mmol", "MICROMOLE": "µmol", "NANOMOLE": "nmol"}
_ROLES = {"REACTANT": "reactant", "REAGENT": "reagent", "SOLVENT": "solvent",
          "CATALYST": "catalyst", "WORKUP": "workup"}  # fmt: skip
_WORKUP_ROLES = {"EXTRACTION": "extraction solvent", "WASH": "wash",
                 "DRY_WITH_MATERIAL": "drying agent", "FILTRATION": "filtration",
                 "FLASH_CHROMATOGRAPHY": "eluent", "OTHER_CHROMATOGRAPHY": "eluent",
                 "DISTILLATION": "distillation"}  # fmt: skip
# a CUSTOM workup named by its operation (as masstrail writes them): that operation's role
_CUSTOM_ROLES = {"recrystallisation": "recrystallisation", "trituration": "trituration",
                 "purification": "purification", "quench": "quench"}  # fmt: skip


def _text(value: float) -> str:
    """A number in plain decimals (masstrail refuses exponent notation): 5.11e-05 → 0.0000511.
    ORD's values are 32-bit floats, good to about 7 digits: 2.4100000858 is written 2.41."""
    return format(Decimal(f"{float(value):.7g}").normalize(), "f")


def amount_text(amount, r) -> str | None:
    """An ORD Amount as masstrail writes an amount, in ORD's own unit ("0.41 g", "2.5 mL")."""
    kind = amount.WhichOneof("kind")
    if kind == "mass" and amount.mass.value:
        unit = _MASS.get(r.Mass.MassUnit.Name(amount.mass.units), "g")
        return f"{_text(amount.mass.value)} {unit}"
    if kind == "volume" and amount.volume.value:
        unit = _VOLUME.get(r.Volume.VolumeUnit.Name(amount.volume.units), "mL")
        return f"{_text(amount.volume.value)} {unit}"
    if kind == "moles" and amount.moles.value:
        unit = _MOLES.get(r.Moles.MolesUnit.Name(amount.moles.units), "mmol")
        return f"{_text(amount.moles.value)} {unit}"
    return None


def _name(compound, r) -> tuple[str | None, str | None]:
    """(name, SMILES) of a compound: its NAME (else its SMILES) and its SMILES."""
    by_type: dict[str, str] = {}
    for ident in compound.identifiers:
        kind = r.CompoundIdentifier.CompoundIdentifierType.Name(ident.type)
        by_type.setdefault(kind, ident.value)
    smiles = by_type.get("SMILES")
    return by_type.get("NAME") or by_type.get("IUPAC_NAME") or smiles, smiles


def _material(compound, r, role: str | None = None) -> dict | None:
    name, _ = _name(compound, r)
    if not name:
        return None
    item: dict[str, Any] = {"name": name}
    said = amount_text(compound.amount, r) if compound.HasField("amount") else None
    if said:
        item["amount"] = said
    role_name = r.ReactionRole.ReactionRoleType.Name(compound.reaction_role)
    item["role"] = role or _ROLES.get(role_name, "reagent")
    if role == "eluent" and compound.amount.WhichOneof("kind") == "mass":
        item["role"] = "stationary phase"  # a column's weighed solid: silica, alumina
    if compound.is_limiting and role_name == "REACTANT":
        item["role"] = "limiting reagent"
    return item


def _product(rx, r) -> dict:
    products = [p for o in rx.outcomes for p in o.products]
    if not products:
        return {}
    chosen = next((p for p in products if p.is_desired_product), products[0])
    name, smiles = _name(chosen, r)
    out: dict[str, Any] = {"name": name or "product"}
    if smiles:
        out["smiles"] = smiles
    for m in chosen.measurements:
        kind = r.ProductMeasurement.ProductMeasurementType.Name(m.type)
        if kind == "AMOUNT" and "mass" not in out and m.HasField("amount"):
            said = amount_text(m.amount, r)
            if said and m.amount.WhichOneof("kind") == "mass":
                out["mass"] = said
        elif kind == "YIELD" and m.HasField("percentage") and "yield" not in out:
            out["yield"] = f"{m.percentage.value:g}%"
    return out


def entry_text(rx, r, index: int) -> tuple[str, str]:
    """(file stem, Markdown entry) for one ORD reaction."""
    import yaml

    rid = rx.reaction_id or f"reaction-{index:05d}"
    prov = rx.provenance
    title = prov.reaction_metadata.get("masstrail.title")  # a masstrail export's entry title
    front: dict[str, Any] = {"id": rid, "title": title.string_value if title else f"ORD {rid}"}
    if prov.experimenter.name:
        front["author"] = prov.experimenter.name
    day = prov.experiment_start.value[:10]
    if len(day) == 10 and day[4] == "-" and day[7] == "-":
        front["date"] = day
    product = _product(rx, r)
    if product:
        front["product"] = product
    materials = []
    for key in rx.inputs:
        for comp in rx.inputs[key].components:
            item = _material(comp, r)
            if item:
                materials.append(item)
    for workup in rx.workups:
        kind = r.ReactionWorkup.ReactionWorkupType.Name(workup.type)
        role = _WORKUP_ROLES.get(kind) or _CUSTOM_ROLES.get(workup.details.strip().lower(),
                                                            "workup")  # fmt: skip
        for comp in workup.input.components:
            item = _material(comp, r, role)
            if item:
                materials.append(item)
    if materials:
        front["materials"] = materials
    recovered = prov.reaction_metadata.get("masstrail.recovered")
    if recovered is not None and recovered.string_value:
        with contextlib.suppress(ValueError):
            kept = json.loads(recovered.string_value)
            front["recovered"] = [x for x in kept if isinstance(x, dict) and x.get("name")
                                  and x.get("amount")]  # fmt: skip
    front["amounts_from_text"] = False  # the record's structured fields hold the amounts
    text = "---\n" + yaml.safe_dump(front, sort_keys=False, allow_unicode=True, width=1000)
    body = rx.notes.procedure_details.strip()
    return _safe_stem(rid), text + "---\n" + (body + "\n" if body else "")


def _safe_stem(rid: str) -> str:
    keep = "".join(c if c.isalnum() or c in "-_." else "-" for c in rid).strip(".-")
    return keep[:120] or "reaction"


@dataclass
class OrdImport:
    """What an import wrote and what it skipped, with why."""

    written: list[Path] = field(default_factory=list)
    skipped: list[tuple[str, str]] = field(default_factory=list)


def load_dataset(path: Path) -> Any:
    """An ORD ``Dataset`` from a binary (``.pb``, ``.pb.gz``), text (``.pbtxt``) or JSON
    (``.json``) file, by its ending."""
    _, d, helpers, _ = ord_modules()
    return helpers.load_message(path, d.Dataset)


def import_ord(source: Path, folder: Path) -> OrdImport:
    """Write one entry per reaction of the dataset ``source`` into ``folder`` (created if
    needed), never over an existing file."""
    r = ord_modules()[0]
    dataset = load_dataset(source)
    folder.mkdir(parents=True, exist_ok=True)
    done = OrdImport()
    for i, rx in enumerate(dataset.reactions):
        stem, text = entry_text(rx, r, i)
        target = folder / f"{stem}.md"
        if target.exists():
            done.skipped.append((target.name, "a file of that name exists; left as it is"))
            continue
        with open(target, "x", encoding="utf-8") as fh:  # never over a file made meanwhile
            fh.write(text)
        done.written.append(target)
    return done
