"""Mass metrics: E-factor, simple E-factor, PMI, and where the mass goes.

Definitions (fractions and ratios are plain numbers):

- complete E-factor = (Σ inputs − product − recovered) / product, every
  recorded input counted: reactants, reagents, catalysts, solvents, water and
  auxiliaries (Sheldon, Chem. Ind. 1992, 903; complete E-factor as in
  Roschangar, Sheldon & Senanayake, Green Chem. 2015, 17, 752). With
  ``[e_factor] include_water = false`` the water in the inputs is left out.
- simple E-factor = (Σ reaction-stage inputs that are not solvents or water −
  product) / product (Roschangar et al. 2015). Our reading: workup and
  purification materials are excluded as well, since sEF counts raw materials
  and reagents only.
- PMI = Σ inputs / product (Jiménez-González et al., Org. Process Res. Dev.
  2011, 15, 912). With nothing recovered and water counted, PMI = E + 1.
- estimated E-factor: the complete E-factor with the gaps' allowances added
  to the waste; the allowances are assumed masses, never recorded ones.
"""

from __future__ import annotations

from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import Breakdown, Gap, MaterialLine, MetricsReport, ProductOut, Totals

NON_SIMPLE_CATEGORIES = {"solvent", "water", "aqueous"}

# Sheldon, Green Chem. 2007, 9, 1273: E-factors by industry sector (kg waste/kg product).
SECTOR_BANDS: list[tuple[str, float, float, str]] = [
    ("oil refining", 0.0, 0.1, "ca. 0.1"),
    ("bulk chemicals", 0.0, 5.0, "< 1–5"),
    ("fine chemicals", 5.0, 50.0, "5 to > 50"),
    ("pharmaceuticals", 25.0, float("inf"), "25 to > 100"),
]
SECTOR_SOURCE = "Sheldon, Green Chem. 2007, 9, 1273"


def sector_context(e: float) -> str:
    """Where an E-factor sits among Sheldon's industry-sector bands, in words."""
    inside = [f"{name} ({band})" for name, lo, hi, band in SECTOR_BANDS if lo <= e <= hi]
    if e <= 0.1:
        inside = [f"{name} ({band})" for name, _, _, band in SECTOR_BANDS[:2]]
    text = " and ".join(inside)
    return (
        f"E = {e:.3g} lies in the band of {text} ({SECTOR_SOURCE}). Those bands describe "
        "industrial production; laboratory-scale E-factors are usually far higher, because "
        "solvents and purification dominate at small scale (common practice)."
    )


def _r(x: float | None, digits: int = 4) -> float | None:
    return None if x is None else round(x, digits)


def _simple(line: MaterialLine) -> bool:
    if line.category in NON_SIMPLE_CATEGORIES:
        return False
    if line.stage is not None:
        return line.stage == "reaction"
    return line.category in {"reagent", "catalyst", None}


def breakdown(weighed: list[MaterialLine], inputs: float) -> Breakdown:
    """Where the input mass goes: by category, by stage, and the largest single input."""
    by_category: dict[str, float] = {}
    by_stage: dict[str, float] = {}
    for m in weighed:
        cat = m.category or "unknown"
        by_category[cat] = by_category.get(cat, 0.0) + m.mass_g
        stage = m.stage or "unassigned"
        by_stage[stage] = by_stage.get(stage, 0.0) + m.mass_g
    largest = None
    if weighed and inputs > 0:
        top = max(weighed, key=lambda m: m.mass_g)
        largest = (
            f"{top.resolved or top.name}, {top.mass_g:.4g} g ({top.mass_g / inputs:.0%} of inputs)"
        )
    return Breakdown(
        by_category={k: round(v, 4) for k, v in sorted(by_category.items())},
        by_stage={k: round(v, 4) for k, v in sorted(by_stage.items())},
        largest=largest,
    )


@hookimpl(specname="masstrail_compute_metrics")
def mass_metrics(
    materials: list[MaterialLine],
    product: ProductOut,
    recovered: list[MaterialLine],
    gaps: list[Gap],
    config: LabConfig,
) -> MetricsReport:
    """E-factor (complete, simple, estimated), PMI, totals and the mass breakdown."""
    weighed = [m for m in materials if m.mass_g is not None]
    inputs = sum(m.mass_g for m in weighed)
    water = sum(m.water_g or 0.0 for m in weighed)
    credit = sum(r.mass_g for r in recovered if r.mass_g is not None)
    p = product.mass_g
    allowance = sum(g.allowance_g for g in gaps if g.allowance_g and g.in_estimate)
    unsized = [g.item for g in gaps if g.missing_mass and g.in_estimate and g.allowance_g is None]
    metrics: dict[str, float | None] = {
        "e_factor": None,
        "e_factor_simple": None,
        "e_factor_estimated": None,
        "pmi": None,
        "completeness": round(inputs / (inputs + allowance), 4)
        if inputs + allowance > 0 and not unsized
        else None,
    }
    context: dict[str, str] = {}
    if unsized and inputs > 0:  # a missing mass with no estimate: any share would be invented
        context["completeness"] = (
            f"{len(unsized)} missing record(s) cannot be sized ({', '.join(unsized[:3])}"
            f"{', …' if len(unsized) > 3 else ''}), so no completeness is given"
        )
    waste = None
    if p is not None and p > 0 and inputs - credit < p:
        # more product than recorded inputs: no waste figure can be right (a negative
        # E-factor would only mislead); say what is missing instead
        context["mass_balance"] = (
            f"the product ({p:.4g} g) outweighs the recorded inputs ({inputs - credit:.4g} g "
            "net of recovered material), so no E-factor or PMI is given; record the inputs' "
            "masses"
        )
    elif p is not None and p > 0:
        waste = inputs - p - credit
        counted = waste if config.e_factor.include_water else waste - water
        e = counted / p
        simple_in = sum(m.mass_g for m in weighed if _simple(m))
        metrics.update(
            e_factor=_r(e),
            e_factor_simple=_r((simple_in - p) / p) if simple_in >= p else None,
            e_factor_estimated=_r((counted + allowance) / p),
            pmi=_r(inputs / p),
        )
        if simple_in < p:  # the same rule as the E-factor's: never a negative figure
            context["simple_mass_balance"] = (
                f"the product ({p:.4g} g) outweighs the recorded reagents ({simple_in:.4g} g, "
                "solvents and workup left out), so no simple E-factor is given; record the "
                "reagents' masses"
            )
        context["sector"] = sector_context(e)
        unweighed = [m.name for m in materials if m.mass_g is None]
        if unweighed:
            context["lower_bound"] = (
                f"{len(unweighed)} input(s) have no mass ({', '.join(unweighed)}), so the "
                "E-factor and PMI are lower bounds"
            )
        if not config.e_factor.include_water:
            context["water"] = (
                "water is left out of the E-factor ([e_factor] include_water = false)"
            )
    return MetricsReport(
        metrics=metrics,
        totals=Totals(
            inputs_g=round(inputs, 4),
            product_g=_r(p),
            recovered_g=round(credit, 4),
            waste_g=_r(waste),
            water_g=round(water, 4),
        ),
        breakdown=breakdown(weighed, inputs),
        context=context,
    )
