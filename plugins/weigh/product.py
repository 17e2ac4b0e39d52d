"""The product and its mass: what the front matter records, the text reports, the balance read.

Plugin ``product`` (``masstrail_product``):

- the front matter's ``product.mass`` is weighed like any amount (a mass as recorded; a
  volume with the product's density; mmol with its molar mass from ``product.formula``,
  from ``product.smiles`` through RDKit when installed, or from its name);
- without one, the mass the text reports (``… to give the amide (2.41 g, 86%)``) is used,
  and its basis quotes the sentence;
- when both exist and differ by more than 0.5 %, the front matter wins and a minor
  ``conflicting_product_mass`` gap names both;
- a balance reading labelled ``product`` (or with the product's name) wins over both: the
  balance is the original record.
"""

from __future__ import annotations

import re
from collections.abc import Callable

from capture.chem import formula_from_smiles, looks_like_smiles
from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import (
    BalanceMass,
    Entry,
    Gap,
    MaterialInfo,
    MaterialLine,
    ProductFinding,
    ProductOut,
)
from capture.quantities import AmountError, disagreement, first_of, parse_amounts
from masstrail_plugins.resolve.knowledge import info_from_formula


def _recorded_line(name: str, mass: str) -> MaterialLine:
    line = MaterialLine(name=name, role="product", stated=mass, origin="front-matter",
                        evidence=f"front matter: product.mass: {mass}")  # fmt: skip
    try:
        line.amounts = parse_amounts(mass)
    except AmountError as exc:
        line.problem = f"amount could not be read: {exc}"
        line.problem_kind = "unreadable_amount"
    return line


def _mass_of(mention: MaterialLine | None):
    """The mass a product's mention states, if it states one ("10.0 mmol, 1682 mg": 1682 mg;
    a mention in mmol or mL alone gives no mass: it is never read as grams)."""
    return first_of(mention.amounts, "mass") if mention else None


def _where(mention: MaterialLine) -> str:
    return "a materials table" if mention.origin == "table" else "the text"


def _from_text(entry: Entry, formula: str | None, mention: MaterialLine) -> ProductOut:
    said = _mass_of(mention)
    mm = info_from_formula(entry.product.name or "product", formula) if formula else None
    return ProductOut(
        name=entry.product.name,
        formula=formula,
        mass_g=round(said.total, 4),
        basis=f"{said.text} as reported in {_where(mention)}: {mention.evidence}",
        molar_mass=mm.molar_mass if mm else None,
    )


def _from_yield(
    p, formula: str | None, limiting: MaterialLine | None, resolve: Callable
) -> tuple[ProductOut, list[Gap]]:
    """The product's mass from a stated yield: yield × the limiting reagent's moles × the
    product's molar mass (a 1:1 reaction assumed, as the yield itself assumes), with a
    major gap: no mass was recorded. Without the moles or the molar mass, no mass, and the
    basis says why."""
    m = re.fullmatch(r"\s*(\d+(?:\.\d+)?)\s*%?\s*", str(p.model_extra["yield"]))
    info = info_from_formula(p.name or "product", formula) if formula else (
        resolve(p.name) if p.name else None)  # fmt: skip
    mw = info.molar_mass if info else None
    out = ProductOut(name=p.name, mass_g=None, formula=formula, molar_mass=mw)
    if m is None or limiting is None or not limiting.moles_mmol or not mw:
        missing = (
            "a yield that can be read"
            if m is None
            else "a limiting reagent with moles"
            if limiting is None or not limiting.moles_mmol
            else "the product's molar mass"
        )
        why = (
            f"the stated yield ({p.model_extra['yield']}) cannot give a mass without "
            f"{missing}"
        )  # the product-mass rule's blocking gap says it
        return out.model_copy(update={"basis": why}), []
    grams = float(m.group(1)) / 100 * limiting.moles_mmol * mw / 1000
    basis = (f"derived: yield {m.group(1)} % × {limiting.moles_mmol:g} mmol of {limiting.name} "
             f"(limiting) × {mw:g} g/mol; no mass was recorded")  # fmt: skip
    out = out.model_copy(update={"mass_g": round(grams, 4), "basis": basis})
    return out, [Gap(kind="product_mass_from_yield", item=p.name or "product", severity="major",
                     evidence=f"product: yield {p.model_extra['yield']}",
                     message=f"no product mass was recorded: {grams:.4g} g is derived from the "
                     "stated yield, the limiting reagent's moles and the product's molar mass; "
                     "the E-factor and PMI rest on it. Record the weighed mass")]  # fmt: skip


@hookimpl(trylast=True, specname="masstrail_product")
def product_of_entry(
    entry: Entry,
    mention: MaterialLine | None,
    reading: BalanceMass | None,
    limiting: MaterialLine | None,
    resolve: Callable[[str], MaterialInfo | None],
    weigh: Callable[[MaterialLine, MaterialInfo | None], None],
    config: LabConfig,
) -> ProductFinding:
    """The balance's reading, else the front matter's mass, else the text's, else the mass a
    stated yield gives (with a gap: no mass was recorded)."""
    p = entry.product
    formula = p.formula or (formula_from_smiles(p.smiles) if p.smiles else None) or (
        formula_from_smiles(p.name) if p.name and looks_like_smiles(p.name) else None)  # fmt: skip
    said = _mass_of(mention)
    gaps: list[Gap] = []
    if not p.mass:
        if said is None:
            out = ProductOut(name=p.name, mass_g=None, formula=formula)
            if reading is None and (p.model_extra or {}).get("yield"):
                out, gaps = _from_yield(p, formula, limiting, resolve)
        else:
            out = _from_text(entry, formula, mention)
    else:
        info = info_from_formula(p.name or "product", formula) if formula else None
        if info is None and p.name:
            info = resolve(p.name)
        line = _recorded_line(p.name or "product", p.mass)
        weigh(line, info)
        out = ProductOut(name=p.name, formula=formula, mass_g=line.mass_g,
                         basis=line.basis or line.problem,
                         molar_mass=info.molar_mass if info and formula else None)  # fmt: skip
        if said is not None and out.mass_g is not None and \
                abs(said.total - out.mass_g) > 0.005 * out.mass_g:  # fmt: skip
            gaps.append(Gap(kind="conflicting_product_mass", item=p.name or "product",
                            severity="minor", evidence=mention.evidence,
                            message=f"the front matter gives {p.mass} and {_where(mention)} "
                            f"{said.text}; the front matter is used. Correct whichever is "
                            "wrong"))  # fmt: skip
    if reading is not None:
        typed = f"; the front matter says {p.mass}" if p.mass else ""
        gaps = []  # the balance settles what the typed records disagree on
        far = disagreement(reading.mass_g, out.mass_g) if out.mass_g else None
        if far is not None:
            said = p.mass or (said.text if said else f"{out.mass_g:g} g")
            gaps.append(Gap(kind="balance_disagrees", item=p.name or "product",
                            severity="major" if far[1] else "minor", evidence=reading.basis,
                            message=f"the balance gives {reading.mass_g:g} g for the product and "
                            f"the entry says {said}: {far[0]}; the balance's mass is used, "
                            "correct the typed record"))  # fmt: skip
        out = out.model_copy(update={"mass_g": round(reading.mass_g, 4),
                                     "basis": reading.basis + typed})  # fmt: skip
    return ProductFinding(product=out, gaps=gaps)
