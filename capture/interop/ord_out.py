"""Export to the Open Reaction Database (ORD) schema: one ``Dataset``, one ``Reaction`` per entry.

ORD is an open standard (protocol buffers; the ``ord-schema`` package, masstrail's optional
``ord`` extra). The mapping, which the README's table repeats:

- reaction-stage materials → ``inputs`` (one input per material), each a ``Compound`` with
  a NAME identifier (and SMILES where the name is one), its amount as recorded in the ORD
  unit nearest to the one written (an amount given only in equivalents: the mass masstrail
  worked out; none at all: an ``unmeasured`` amount saying what was written), and a role:
  REACTANT (``is_limiting`` for the limiting reagent), SOLVENT, CATALYST or REAGENT;
- workup and purification materials → ``workups``, one per operation (EXTRACTION, WASH,
  DRY_WITH_MATERIAL, FILTRATION, FLASH_CHROMATOGRAPHY, DISTILLATION, or CUSTOM with the
  operation's name), their components with role WORKUP;
- the product → an ``outcome`` with the desired product, its measured mass (AMOUNT) and
  masstrail's yield (YIELD) where computable;
- the procedure text → ``notes.procedure_details``; author and date → ``provenance``
  (``experimenter``, ``experiment_start``); who exported → ``provenance.record_created``;
- masstrail's own figures → ``provenance.reaction_metadata``, every key prefixed
  ``masstrail.`` (e_factor, e_factor_estimated, pmi, completeness, gaps_open, gaps,
  recovered — JSON of the recovered material, which ORD has no place for —, generator,
  entry_id, entry_path): a map of free data the schema provides, so no standard field is
  redefined.

Lost on the way out: quantities set aside (samples, equipment, conditions, unread amounts),
the bases of the masses, the balance readings (their masses travel as the amounts) and the
lab's configuration (density overrides, own materials: the importing lab's apply).
"""

from __future__ import annotations

import datetime as dt
import hashlib
import json
import os
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

from capture.chem import looks_like_smiles
from capture.safeio import InputError, read_bounded

if TYPE_CHECKING:
    from capture.models import AmountMention, Entry, MaterialLine, Result
    from capture.notebook import Notebook
    from capture.views.filters import GapFilter

ORD_EXTRA = ("the ORD commands need the ord extra: pip install 'masstrail[ord]' (from a checkout: "
             "pip install -e '.[ord]')")  # fmt: skip
LIMITING = {"limiting reagent", "limiting reactant", "limiting"}
REACTANT = {"reactant", "starting material", "substrate"}


class OrdUnavailable(RuntimeError):
    """ord-schema is not installed."""


def ord_modules() -> tuple[Any, Any, Any, Any]:
    """(reaction_pb2, dataset_pb2, message_helpers, validations), or OrdUnavailable."""
    try:
        from ord_schema import message_helpers, validations
        from ord_schema.proto import dataset_pb2, reaction_pb2
    except ImportError as exc:
        raise OrdUnavailable(ORD_EXTRA) from exc
    return reaction_pb2, dataset_pb2, message_helpers, validations


# the unit as written → (Amount field, ORD unit name, factor from masstrail's canonical unit)
_UNITS = {
    "g": ("mass", "GRAM", 1.0), "mg": ("mass", "MILLIGRAM", 1e3), "kg": ("mass", "KILOGRAM", 1e-3),
    "μg": ("mass", "MICROGRAM", 1e6), "ml": ("volume", "MILLILITER", 1.0),
    "l": ("volume", "LITER", 1e-3), "μl": ("volume", "MICROLITER", 1e3),
    "mmol": ("moles", "MILLIMOLE", 1.0), "mol": ("moles", "MOLE", 1e-3),
    "μmol": ("moles", "MICROMOLE", 1e3),
}  # fmt: skip
_CANONICAL = {"mass": ("mass", "GRAM"), "volume": ("volume", "MILLILITER"),
              "amount": ("moles", "MILLIMOLE")}  # fmt: skip
_WRITTEN_UNIT = re.compile(r"([A-Za-zµμ]+)\.?\s*$")
WORKUP_TYPES = {"extraction": "EXTRACTION", "wash": "WASH", "drying": "DRY_WITH_MATERIAL",
                "filtration": "FILTRATION", "chromatography": "FLASH_CHROMATOGRAPHY",
                "distillation": "DISTILLATION"}  # fmt: skip


def _set_amount(target, a: AmountMention, r) -> None:
    """``target`` (an ORD Amount) from a masstrail amount, in the unit nearest the written one."""
    m = _WRITTEN_UNIT.search(a.text or "")
    written = m.group(1).replace("µ", "μ").lower() if m else ""
    fld, unit, factor = _UNITS.get(written) or (*_CANONICAL[a.kind], 1.0)
    if _CANONICAL[a.kind][0] != fld:  # the written unit is of another kind: the canonical one
        fld, unit, factor = *_CANONICAL[a.kind], 1.0
    sub = getattr(target, fld)
    sub.value = round(a.total * factor, 6)
    sub.units = getattr(getattr(r, {"mass": "Mass", "volume": "Volume", "moles": "Moles"}[fld]),
                        unit)  # fmt: skip


def _compound(comp, m: MaterialLine, role: str, r) -> None:
    comp.identifiers.add(type="NAME", value=m.name)
    if looks_like_smiles(m.name):
        comp.identifiers.add(type="SMILES", value=m.name)
    recorded = next((a for a in m.amounts if a.kind in _CANONICAL), None)
    if recorded is not None:
        _set_amount(comp.amount, recorded, r)
    elif m.mass_g is not None:  # equivalents only: the mass masstrail worked out
        comp.amount.mass.value = round(m.mass_g, 6)
        comp.amount.mass.units = r.Mass.GRAM
    else:  # "a crystal of", no amount: said so, as the standard allows
        comp.amount.unmeasured.type = r.UnmeasuredAmount.CUSTOM
        comp.amount.unmeasured.details = m.stated or "no amount recorded"
    comp.reaction_role = getattr(r.ReactionRole, role)


def _role(m: MaterialLine) -> str:
    role = (m.role or "").strip().casefold()
    if role in LIMITING or role in REACTANT:
        return "REACTANT"
    if m.category in {"solvent", "water"} or "solvent" in role:
        return "SOLVENT"
    if m.category == "catalyst" or role in {"catalyst", "ligand"}:
        return "CATALYST"
    return "REAGENT"


def reaction_of(entry: Entry, result: Result, creator: tuple[str, str], r) -> Any:
    """The ORD ``Reaction`` of one entry and its result (not yet validated)."""
    rx = r.Reaction()
    rx.reaction_id = "ord-" + hashlib.sha256(f"{entry.path}\0{entry.id}".encode()).hexdigest()[:32]
    names: set[str] = set()
    workups: dict[str, Any] = {}
    for m in result.materials:
        if m.stage == "reaction":
            key = m.name if m.name not in names else f"{m.name} ({len(names) + 1})"
            names.add(key)
            comp = rx.inputs[key].components.add()
            _compound(comp, m, _role(m), r)
            if (m.role or "").casefold() in LIMITING:
                comp.is_limiting = True
        else:
            op = m.operation or m.stage or "workup"
            if op not in workups:
                kind = WORKUP_TYPES.get(op, "CUSTOM")
                workups[op] = rx.workups.add(type=kind, details="" if kind != "CUSTOM" else op)
            _compound(workups[op].input.components.add(), m, "WORKUP", r)
    product = rx.outcomes.add().products.add()
    product.identifiers.add(type="NAME", value=result.product.name or "product")
    if entry.product.smiles or looks_like_smiles(result.product.name or ""):
        product.identifiers.add(type="SMILES", value=entry.product.smiles or result.product.name)
    product.is_desired_product = True
    product.reaction_role = r.ReactionRole.PRODUCT
    if result.product.mass_g is not None:
        amount = product.measurements.add(type="AMOUNT").amount
        amount.mass.value, amount.mass.units = round(result.product.mass_g, 6), r.Mass.GRAM
    if result.metrics.yield_ is not None:
        product.measurements.add(type="YIELD").percentage.value = round(
            100 * result.metrics.yield_, 3
        )
    if entry.body.strip():
        rx.notes.procedure_details = entry.body.strip()
    _provenance(rx.provenance, entry, result, creator)
    return rx


def _provenance(prov, entry: Entry, result: Result, creator: tuple[str, str]) -> None:
    prov.record_created.time.value = dt.datetime.now(dt.UTC).isoformat(timespec="seconds")
    prov.record_created.person.name, prov.record_created.person.email = creator
    if entry.author:
        prov.experimenter.name = entry.author
    if entry.date:
        prov.experiment_start.value = entry.date.isoformat()
    meta = prov.reaction_metadata
    figures = {"e_factor": result.metrics.e_factor, "pmi": result.metrics.pmi,
               "e_factor_estimated": result.metrics.e_factor_estimated,
               "completeness": result.metrics.completeness}  # fmt: skip
    for key, value in figures.items():
        if value is not None:
            meta[f"masstrail.{key}"].float_value = value
    meta["masstrail.gaps_open"].integer_value = len(result.gaps)
    if result.gaps:
        meta["masstrail.gaps"].string_value = "; ".join(
            f"{g.severity} {g.kind}: {g.item}" for g in result.gaps)[:2000]  # fmt: skip
    if result.recovered:  # ORD has no place for it: masstrail's own, for a round trip
        meta["masstrail.recovered"].string_value = json.dumps(
            [{"name": m.name, "amount": m.stated} for m in result.recovered if m.stated]
        )
    meta["masstrail.generator"].string_value = result.generator
    meta["masstrail.entry_id"].string_value = entry.id
    if entry.title:
        meta["masstrail.title"].string_value = entry.title
    meta["masstrail.entry_path"].string_value = entry.path


@dataclass
class OrdExport:
    """What an export wrote and what it left out, with why."""

    written: int = 0
    skipped: list[tuple[str, str]] = field(default_factory=list)


def export_ord(nb: Notebook, out: Path, creator: tuple[str, str], flt: GapFilter) -> OrdExport:
    """Write the notebook's entries (those ``flt`` keeps) as one ORD ``Dataset`` to ``out``:
    binary (``.pb``, ``.pb.gz``), text (``.pbtxt``) or JSON (``.json``) by its ending. Every
    reaction passes ord-schema's validation; one that cannot is left out, with the reason."""
    from capture.run import compute, read_entry

    r, d, helpers, validations = ord_modules()
    report = OrdExport()
    dataset = d.Dataset(name=nb.root.name, description=f"masstrail export of {nb.root.name}")
    for path in nb.entry_files():
        rel = nb.relpath(path)
        try:
            entry = read_entry(nb, path, read_bounded(path, nb.config.scan.max_entry_bytes), rel)
            result = compute(nb, entry)
        except InputError as exc:
            report.skipped.append((rel, f"could not be read: {exc.message}"))
            continue
        if not flt.keeps(result):
            continue
        if not any(m.stage == "reaction" for m in result.materials):
            report.skipped.append((rel, "no reaction-stage input"))
            continue
        rx = reaction_of(entry, result, creator, r)
        errors = validations.validate_message(rx, raise_on_error=False).errors
        if errors:
            report.skipped.append((rel, f"not a valid ORD record: {errors[0]}"))
            continue
        dataset.reactions.append(rx)
    helpers.save_message(dataset, out)
    mask = os.umask(0)
    os.umask(mask)
    os.chmod(out, 0o666 & ~mask)  # as any file the user writes (the library's temp file is 0600)
    report.written = len(dataset.reactions)
    return report
