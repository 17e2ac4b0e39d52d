"""Record gaps found while weighing: what the waste figure needs but the entry lacks.

The rules here cover what the capture core itself runs into: no product mass,
amounts that cannot be read, materials that cannot be weighed. Each gap names
the item, the evidence and what to do. Severity: ``blocking`` when no headline
figure is possible, ``major`` when a whole input is missing from the sum.
"""

from __future__ import annotations

from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import Entry, Gap, MaterialLine, ProductOut


@hookimpl(specname="masstrail_find_gaps")
def product_mass_gaps(entry: Entry, product: ProductOut) -> list[Gap]:
    """No product mass: no E-factor and no PMI."""
    if product.mass_g is not None:
        return []
    stated = entry.product.mass
    if stated:
        # the product mass was written but could not be read; the weighing gap says why
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
            message="no product mass is recorded, so there is no E-factor or PMI; weigh the "
            "dried product and add it as product: {mass: '… g'}",
        )
    ]


@hookimpl(specname="masstrail_find_gaps")
def weighing_gaps(materials: list[MaterialLine], config: LabConfig) -> list[Gap]:
    """Inputs that have no mass: unreadable amounts, no amount, no density, no molar mass."""
    gaps = []
    for line in materials:
        if line.mass_g is not None:
            continue
        where = line.evidence or f"{line.origin}: {line.name}: {line.stated or '(no amount)'}"
        if line.stated is None:
            kind = "no_amount"
            message = f"{line.name} is listed with no amount; record the mass or volume used"
        else:
            kind = line.problem_kind or "unweighed"
            message = line.problem or f"{line.name}: no mass could be worked out"
        gaps.append(
            Gap(
                kind=kind,
                item=line.name,
                severity="major",
                evidence=where,
                message=message,
            )
        )
    return gaps
