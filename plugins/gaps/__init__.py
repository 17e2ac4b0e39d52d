"""Record gaps: what the waste figure needs but the entry lacks, and how much it may weigh.

The built-in rules run in this order:

1. ``operations`` (``masstrail_check_records``): the operations in the procedure
   text that consume material (filtration, drying, washes, extractions, quenches,
   chromatography, recrystallisation, trituration, aspirators, unmeasured
   additions), each checked against the entry's records;
2. ``records`` (``masstrail_find_gaps``): the product mass, every material without
   a mass, no input weighed at all, a product heavier than its inputs, a yield above 100 %;
   ``reading`` (``masstrail_find_gaps``): quantities the text states that were not read,
   tables of materials with no amount column masstrail reads, a procedure written
   elsewhere, a product isolated several times, masses that disagree with their moles,
   stated yields that disagree with the masses;
3. ``grading`` (``masstrail_grade_gaps``): each gap's severity from its allowance.

Allowances come from ``allowances`` and ``data/allowances.toml`` (whose version is part of
every result's fingerprint, ``masstrail_knowledge_versions``); a lab overrides them in
``masstrail.toml``.
"""

from masstrail_plugins.gaps.allowances import allowances_version
from masstrail_plugins.gaps.grading import grade_by_estimate
from masstrail_plugins.gaps.operations import check_operations
from masstrail_plugins.gaps.reading import (
    plausibility_gaps,
    procedure_elsewhere_gaps,
    several_products_gaps,
    unread_gaps,
    unread_table_gaps,
)
from masstrail_plugins.gaps.records import (
    product_mass_gaps,
    product_sanity_gaps,
    recovered_gaps,
    weighing_gaps,
)

__all__ = [
    "allowances_version",
    "check_operations",
    "grade_by_estimate",
    "plausibility_gaps",
    "procedure_elsewhere_gaps",
    "product_mass_gaps",
    "product_sanity_gaps",
    "recovered_gaps",
    "several_products_gaps",
    "unread_gaps",
    "unread_table_gaps",
    "weighing_gaps",
]
