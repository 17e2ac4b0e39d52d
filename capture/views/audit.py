"""The teaching-lab audit: per entry of a group, a checklist of the operations found (✓
recorded, ✗ missing), its completeness and the three records most worth taking next time.
"""

from __future__ import annotations

import statistics
from collections import Counter
from collections.abc import Iterable
from typing import TYPE_CHECKING

from pydantic import BaseModel, Field

from capture.models import Result

if TYPE_CHECKING:
    from capture.notebook import Notebook


class AuditLine(BaseModel):
    operation: str
    needs: str
    item: str
    recorded: bool


class EntryAudit(BaseModel):
    """One entry's checklist for a teaching-lab group."""

    entry: str
    title: str | None
    author: str | None
    status: str
    completeness: float | None
    e_factor: float | None
    checklist: list[AuditLine]
    next_time: list[str] = Field(description="the three records most worth taking next time")


class GroupAudit(BaseModel):
    group: str
    entries: list[EntryAudit]
    median_completeness: float | None
    most_missed: list[tuple[str, int]] = Field(description="(record, entries missing it)")
    groups: list[str] = Field(default_factory=list, description="every group of the notebook")


def _next_time(r: Result) -> list[str]:
    # unknown size first (cannot even be estimated), then the largest allowances
    ranked = sorted(
        (g for g in r.gaps if g.kind not in {"conflicting_amounts", "conflicting_product_mass"}),
        key=lambda g: (g.severity != "blocking", g.allowance_g is not None, -(g.allowance_g or 0)),
    )
    out = []
    for g in ranked:
        size = f" (about {g.allowance_g:.3g} g)" if g.allowance_g else ""
        line = f"{g.item}: {g.message}{size}"
        if line not in out:
            out.append(line)
        if len(out) == 3:
            break
    return out


def audit(results: Iterable[Result], group: str) -> GroupAudit:
    """The checklist of every entry of ``group``, and the group's summary."""
    entries = []
    missed: Counter[str] = Counter()
    results = list(results)
    results_kept = [
        r for r in results if (r.meta.get("group") or "").casefold() == group.casefold()
    ]
    for r in results_kept:
        checklist = [AuditLine(operation=c.operation, needs=c.needs, item=c.item,
                               recorded=c.recorded) for c in r.checks]  # fmt: skip
        for m in r.materials:
            if m.mass_g is None:  # the recorded ones are on the list through their operation
                checklist.append(AuditLine(operation=m.operation or m.stage or "—", needs="mass",
                                           item=m.name, recorded=False))  # fmt: skip
        checklist.append(AuditLine(operation="product", needs="product mass",
                                   item=r.product.name or "product",
                                   recorded=r.product.mass_g is not None))  # fmt: skip
        for line in checklist:
            if not line.recorded:
                missed[f"{line.needs}: {line.item}" if line.needs == "mass" else line.needs] += 1
        entries.append(
            EntryAudit(
                entry=r.entry.path,
                title=r.meta.get("title"),
                author=r.meta.get("author"),
                status=r.status,
                completeness=r.metrics.completeness,
                e_factor=r.metrics.e_factor,
                checklist=checklist,
                next_time=_next_time(r) if r.status == "ok" else [r.error.message],
            )
        )
    scores = [e.completeness for e in entries if e.completeness is not None]
    named = next((r.meta.get("group") for r in results_kept if r.meta.get("group")), group)
    return GroupAudit(
        group=named,
        entries=entries,
        median_completeness=round(statistics.median(scores), 4) if scores else None,
        most_missed=missed.most_common(5),
        groups=sorted({str(r.meta["group"]) for r in results if r.meta.get("group")}),
    )


def audit_markdown(report: GroupAudit, caution: str) -> str:
    """The audit as a Markdown handout (Jinja2 template ``templates/audit.md.j2``)."""
    from capture.views.filters import markdown_environment

    return markdown_environment().get_template("audit.md.j2").render(a=report, caution=caution)


def audit_notebook(nb: Notebook, group: str) -> GroupAudit:
    """The audit of ``group`` over the notebook's entries, computed afresh (nothing written)."""
    from capture.scan import scan

    return audit(scan(nb, write=False).results, group)
