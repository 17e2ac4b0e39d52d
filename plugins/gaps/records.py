"""Gaps in the records every figure needs: the product and each material's mass.

- ``product_mass_gaps``: no product mass (blocking), or one that cannot be read;
- ``weighing_gaps``: a material with no amount, an amount that cannot be read, a
  volume with no density, moles or equivalents with no molar mass, equivalents
  with no limiting reagent; each with an allowance where one can be estimated;
- ``recovered_gaps``: recovered material that cannot be weighed is not credited;
- ``product_sanity_gaps``: a product heavier than all recorded inputs together
  (blocking: a record is wrong), a yield above 100 % or below 1 % (major), the product
  counted as an input too (major).
"""

from __future__ import annotations

import re

from capture.chem import material_key, prose_key
from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import Entry, Gap, MaterialLine, ProductOut, ReactionFigures, RecordCheck
from masstrail_plugins.gaps import allowances as al


@hookimpl(specname="masstrail_find_gaps")
def product_mass_gaps(entry: Entry, product: ProductOut) -> list[Gap]:
    """No product mass: no E-factor and no PMI."""
    if product.mass_g is not None:
        return []
    stated = entry.product.mass
    if stated:
        return [
            Gap(
                kind="product_mass_unreadable",
                item=product.name or "product",
                severity="blocking",
                evidence=f"product.mass: {stated}",
                message=f"the product mass {stated!r} could not be read ({product.basis}); "
                "write it as e.g. '3.21 g'",
            )
        ]
    return [
        Gap(
            kind="product_mass_missing",
            item=product.name or "product",
            severity="blocking",
            evidence="product.mass is not recorded",
            message="no product mass is recorded, so there is no E-factor or PMI"
            + (f" ({product.basis})" if product.basis else "")
            + "; weigh the dried product and add it as product: {mass: '… g'}",
        )
    ]


_DROPS = re.compile(r"(\d+|a few|few|several|a|one)?\s*drops?\b", re.I)


def _volume(line: MaterialLine) -> float | None:
    vol = next((a for a in line.amounts if a.kind == "volume"), None)
    return vol.total if vol else None


def _allowance(
    line: MaterialLine, scale: al.Scale, config: LabConfig
) -> tuple[float | None, str | None]:
    """An estimate of the mass a line is missing, with its basis; (None, None) if there is none."""
    kind = line.problem_kind
    if kind in {"no_density", "unknown_material"}:
        ml = _volume(line)
        if ml:
            d, basis = al.value("assumed_density_g_ml", config)
            return ml * d, f"{ml:g} mL × assumed {d:g} g/mL ({basis})"
    if kind == "no_molar_mass" and line.moles_mmol:
        mw, basis = al.value("assumed_molar_mass_g_mol", config)
        return (
            line.moles_mmol * mw / 1000,
            f"{line.moles_mmol:g} mmol × assumed {mw:g} g/mol ({basis})",
        )
    stated = line.stated or ""
    if kind == "unreadable_amount" and _DROPS.search(stated):
        m = _DROPS.search(stated)
        n = int(m.group(1)) if m.group(1) and m.group(1).isdigit() else 3
        ml, basis = al.value("drop_ml", config)
        return n * ml, f"{n} drop(s) × {ml:g} mL × 1 g/mL ({basis})"
    if line.stated is None:  # listed with no amount at all
        if line.category in {"solvent", "water", "aqueous"}:
            ml = scale.reaction_solvent_ml
            if ml:
                return ml, f"{ml:g} mL, the entry's other solvent volume, × 1 g/mL (assumed)"
            ml, basis = al.value("liquid_ml", config)
            return ml, f"{ml:g} mL × 1 g/mL ({basis})"
        if line.category == "drying agent":
            per100, basis = al.value("drying_agent_g_per_100_ml", config)
            ml = scale.organic_ml or al.value("organic_phase_ml", config)[0]
            return per100 * ml / 100, f"{per100:g} g per 100 mL × {ml:g} mL ({basis})"
        if line.category == "filter medium":
            return al.filter_paper_g(config)
        if line.category == "catalyst" or (line.role or "").lower() == "catalyst":
            return al.value("catalytic_amount_g", config)
    return scale.typical_reagent()  # any other input without a mass still counts in the estimate


@hookimpl(specname="masstrail_find_gaps")
def weighing_gaps(
    materials: list[MaterialLine],
    product: ProductOut,
    checks: list[RecordCheck],
    config: LabConfig,
) -> list[Gap]:
    """Inputs that have no mass: no amount, an unreadable amount, no density, no molar mass.

    An input that an operation's check already reports ("a crystal of DMAP") gets that
    check's gap, which says more than "listed with no amount"."""
    scale = al.Scale.of(materials, product)
    specific = {material_key(c.gap.item) for c in checks if c.gap is not None}
    gaps = []
    for line in materials:
        if line.mass_g is not None:
            continue
        if line.stated is None and material_key(line.name) in specific:
            continue
        where = line.evidence or f"{line.origin}: {line.name}: {line.stated or '(no amount)'}"
        if line.stated is None:
            kind = "no_amount"
            message = f"{line.name} is listed with no amount; record the mass or volume used"
        else:
            kind = line.problem_kind or "unweighed"
            message = line.problem or f"{line.name}: no mass could be worked out"
        grams, basis = _allowance(line, scale, config)
        gaps.append(
            Gap(
                kind=kind,
                item=line.name,
                severity="major",
                evidence=where,
                message=message,
                allowance_g=None if grams is None else round(grams, 4),
                allowance_basis=basis,
                missing_mass=True,
            )
        )
    return gaps


@hookimpl(specname="masstrail_find_gaps")
def recovered_gaps(recovered: list[MaterialLine]) -> list[Gap]:
    """Recovered material without a mass is not credited against the waste."""
    return [
        Gap(kind=line.problem_kind or "unweighed", item=line.name, severity="minor",
            evidence=f"recovered: {line.name}: {line.stated}",
            message=(line.problem or "no mass") + "; it is not credited")
        for line in recovered
        if line.mass_g is None
    ]  # fmt: skip


@hookimpl(specname="masstrail_find_gaps")
def product_sanity_gaps(
    entry: Entry,
    materials: list[MaterialLine],
    product: ProductOut,
    limiting: MaterialLine | None,
    reaction: ReactionFigures | None,
    set_aside: list[MaterialLine],
) -> list[Gap]:
    """A product heavier than every recorded input together, a yield above 100 % or below
    1 % (unless the text states that yield too), the product counted as an input."""
    if product.mass_g is None:
        return []
    weighed = [m for m in materials if m.mass_g is not None]
    inputs = sum(m.mass_g for m in weighed)
    gaps = []
    if not weighed:
        gaps.append(_nothing_weighed(materials, product))
    elif product.mass_g > inputs:
        gaps.append(
            Gap(
                kind="product_heavier_than_inputs",
                item=product.name or "product",
                severity="blocking",
                evidence=f"product {product.mass_g:g} g; all recorded inputs {inputs:.4g} g",
                message="the product weighs more than all recorded inputs together; a mass is "
                "wrong (g for mg?) or an input is missing. Check the records before using the "
                "E-factor",
            )
        )
    y, basis = None, ""
    if entry.equation:
        fig = reaction
        if fig is not None and fig.yield_ is not None:  # else the reaction metrics say why
            y = fig.yield_
            basis = (f"{product.mass_g:g} g of product against {fig.theoretical_yield_g:.4g} g "
                     f"theoretical from {fig.limiting} (the entry's equation)")  # fmt: skip
    else:
        if limiting is not None and limiting.moles_mmol and product.molar_mass:
            product_mmol = product.mass_g / product.molar_mass * 1000
            y = product_mmol / limiting.moles_mmol
            basis = (f"{product_mmol:.4g} mmol of product from {limiting.moles_mmol:g} mmol of "
                     f"{limiting.name} (1:1 assumed: the entry gives no equation)")  # fmt: skip
    gaps += _product_among_inputs(materials, product)
    stated = [m.stated_yield for m in set_aside if m.role == "product" and m.stated_yield]
    if y is not None and y < 0.01 and not any(abs(v - y) <= max(0.2 * y, 0.0005) for v in stated):
        gaps.append(Gap(
            kind="yield_below_1", item=product.name or "product", severity="major",
            evidence=basis,
            message=f"the yield works out at {y:.2%}; a unit may be wrong (mg for g?) or the "
            "mass may be a sample's only. Check the product mass before using the E-factor",
        ))  # fmt: skip
    if y is not None and 0.995 <= y <= 1.0 and not any(v >= 0.99 for v in stated):
        gaps.append(Gap(  # an electronic notebook's reaction table lists the theoretical mass
            kind="yield_theoretical", item=product.name or "product", severity="minor",
            evidence=basis,
            message=f"the product mass gives a yield of {y:.1%}, the theoretical mass; if it "
            "is the theoretical yield (a reaction table lists it), record the mass isolated",
        ))  # fmt: skip
    if y is not None and y > 1.0:
        gaps.append(
            Gap(
                kind="yield_above_100",
                item=product.name or "product",
                severity="major",
                evidence=basis,
                message=f"the yield works out at {y:.0%}; the product may be wet or impure, "
                "or a mass is wrong. Dry to constant mass and weigh again",
            )
        )
    return gaps


def _product_among_inputs(materials: list[MaterialLine], product: ProductOut) -> list[Gap]:
    """The product counted as an input too: usually the text's mention of the product (or of
    what was isolated: "a liquid was recovered comprising 24.7 g of X") read as an addition.
    Said, not removed: a product can be an input as well (seed crystals, a second pass)."""
    key = prose_key(product.name or "")  # the same comparison as the merge's
    if not key:
        return []
    same = [m for m in materials if m.mass_g is not None
            and key in {prose_key(m.name), material_key(m.resolved or "")}]  # fmt: skip
    if not same:
        return []
    line = same[0]
    twin = abs(line.mass_g - product.mass_g) <= 0.02 * product.mass_g
    why = (f"it weighs what the product weighs ({product.mass_g:g} g), so it is very likely the "
           "product's own mention" if twin else "check whether this is an addition")  # fmt: skip
    return [Gap(
        kind="product_among_inputs", item=product.name, severity="major", evidence=line.evidence,
        message=f"the product, {product.name}, is counted as an input too ({line.stated}); {why}. "
        f"If it is not an input, the inputs and the E-factor are too high by {line.mass_g:.4g} g: "
        "record the inputs in the front matter, or write the product after 'gave' or 'was "
        "obtained'",
    )]  # fmt: skip


def _nothing_weighed(materials: list[MaterialLine], product: ProductOut) -> Gap:
    """The product has a mass but no input has one: say why, so no figure is silently absent."""
    if not materials:
        why = "no input with an amount was found in the entry"
    else:
        reasons = "; ".join(f"{m.name}: {m.problem or 'no amount'}" for m in materials[:4])
        more = f" (and {len(materials) - 4} more)" if len(materials) > 4 else ""
        why = f"none of the {len(materials)} inputs found could be weighed ({reasons}{more})"
    return Gap(
        kind="no_weighed_input", item=product.name or "product", severity="blocking",
        evidence=f"product {product.mass_g:g} g; no input with a mass",
        message=f"{why}, so there is no E-factor or PMI; record the inputs' amounts as "
        "'NAME (amount)' or in the front matter",
    )  # fmt: skip
