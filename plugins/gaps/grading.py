"""Severity from the size of what is missing, not from the rule's name.

- blocking: no headline figure is possible (no product mass, a product heavier
  than all inputs);
- major: the allowance exceeds ``[gaps] major_fraction`` (default 5 %) of the
  recorded waste, or the size cannot be estimated at all;
- minor: the rest. Conflicting records, an eluent without its ratio and
  aspirator water are minor by nature: they do not change the recorded mass.
- as found: a typed mass far from the balance's (major when a power of ten apart).
"""

from __future__ import annotations

from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import Gap, MaterialLine, ProductOut

BLOCKING = {
    "product_mass_missing",
    "product_mass_unreadable",
    "product_heavier_than_inputs",
    "no_weighed_input",
}
ALWAYS_MINOR = {"conflicting_amounts", "conflicting_product_mass", "eluent_composition",
                "aspirator_water", "unassigned_reading", "unstable_reading",
                "balance_reading_date", "balance_row_unreadable", "yield_mismatch",
                "yield_theoretical"}  # fmt: skip
ALWAYS_MAJOR = {"yield_above_100", "balance_log_refused", "balance_log_unreadable",
                "balance_difference_not_positive", "mass_moles_mismatch",
                "procedure_elsewhere", "product_mass_from_yield"}  # fmt: skip
# the rule that found these knows their weight: a balance and a typed mass a factor of ten apart
# (a slip) is major, 5-20 % apart minor
AS_FOUND = {"balance_disagrees"}


@hookimpl(trylast=True, specname="masstrail_grade_gaps")
def grade_by_estimate(
    gaps: list[Gap], materials: list[MaterialLine], product: ProductOut, config: LabConfig
) -> list[Gap]:
    """Blocking by kind; major or minor by the allowance against the recorded waste."""
    inputs = sum(m.mass_g for m in materials if m.mass_g is not None)
    waste = inputs - product.mass_g if product.mass_g is not None else inputs
    threshold = config.gaps.major_fraction * max(waste, 0.0)
    out = []
    for g in gaps:
        if g.kind in BLOCKING:
            severity = "blocking"
        elif g.kind in ALWAYS_MINOR:
            severity = "minor"
        elif g.kind in AS_FOUND:
            severity = g.severity
        elif g.kind in ALWAYS_MAJOR or g.allowance_g is None:
            severity = "major"
        else:
            severity = "major" if g.allowance_g > threshold else "minor"
        out.append(g.model_copy(update={"severity": severity}))
    return out
