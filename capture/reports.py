"""Reports over a whole notebook: the gap list for lab managers and the audit for teaching labs.

Both work on the results of one scan (:func:`capture.pipeline.scan`); the CLI
only formats what these functions return.
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import statistics
from collections import Counter
from collections.abc import Iterable
from typing import Literal

from pydantic import BaseModel, Field

from capture.models import Result

SEVERITIES = ("blocking", "major", "minor")
_RANK = {s: i for i, s in enumerate(SEVERITIES)}
GroupKey = Literal["author", "group", "project"]


class GapRow(BaseModel):
    """One gap of one entry, with the entry's metadata."""

    entry: str
    id: str
    author: str | None
    group: str | None
    project: str | None
    date: str | None
    severity: str
    kind: str
    item: str
    allowance_g: float | None
    message: str


class GapFilter(BaseModel):
    """Which entries and gaps a report covers; None means any."""

    author: str | None = None
    group: str | None = None
    project: str | None = None
    since: dt.date | None = None
    until: dt.date | None = None
    severity: Literal["blocking", "major", "minor"] = "minor"

    def keeps(self, r: Result) -> bool:
        """True when the entry ``r`` belongs in the report."""
        return self.keeps_meta(r.meta)

    def keeps_meta(self, meta: dict) -> bool:
        """True when an entry with this ``meta`` (title, author, group, project, date)
        belongs in the report."""
        for key in ("author", "group", "project"):
            want = getattr(self, key)
            if want is not None and (meta.get(key) or "").casefold() != want.casefold():
                return False
        if self.since or self.until:
            if not meta.get("date"):
                return False
            day = dt.date.fromisoformat(meta["date"])
            if (self.since and day < self.since) or (self.until and day > self.until):
                return False
        return True


def gap_rows(results: Iterable[Result], flt: GapFilter) -> list[GapRow]:
    """Every gap at or above ``flt.severity`` in the entries ``flt`` keeps; errors as blocking."""
    rows = []
    for r in results:
        if not flt.keeps(r):
            continue
        meta = {k: r.meta.get(k) for k in ("author", "group", "project", "date")}
        if r.status == "error":
            rows.append(
                GapRow(entry=r.entry.path, id=r.entry.id, severity="blocking",
                       kind="unreadable_entry", item=r.entry.path, allowance_g=None,
                       message=r.error.message, **meta)
            )  # fmt: skip
            continue
        for g in r.gaps:
            if _RANK[g.severity] <= _RANK[flt.severity]:
                rows.append(
                    GapRow(entry=r.entry.path, id=r.entry.id, severity=g.severity, kind=g.kind,
                           item=g.item, allowance_g=g.allowance_g, message=g.message, **meta)
                )  # fmt: skip
    return rows


class GroupSummary(BaseModel):
    """Gap counts for one author, group or project."""

    key: str
    entries: int
    entries_with_gaps: int
    blocking: int
    major: int
    minor: int
    allowance_g: float = Field(description="sum of the gaps' allowances")


def summarise(results: Iterable[Result], flt: GapFilter, by: GroupKey) -> list[GroupSummary]:
    """Gap counts per ``by`` (author, group or project) over the entries ``flt`` keeps."""
    results = [r for r in results if flt.keeps(r)]
    rows = gap_rows(results, flt)
    out = []
    keys = sorted({r.meta.get(by) or "(none)" for r in results})
    for key in keys:
        mine = [x for x in rows if (getattr(x, by) or "(none)") == key]
        count = Counter(x.severity for x in mine)
        out.append(
            GroupSummary(
                key=key,
                entries=sum(1 for r in results if (r.meta.get(by) or "(none)") == key),
                entries_with_gaps=len({x.entry for x in mine}),
                blocking=count["blocking"],
                major=count["major"],
                minor=count["minor"],
                allowance_g=round(sum(x.allowance_g or 0.0 for x in mine), 4),
            )
        )
    return out


_FORMULA_START = ("=", "+", "-", "@", "\t", "\r", "\0")


def _defuse(value: object) -> object:
    """Spreadsheet-formula injection guard (OWASP, CWE-1236): text starting with = + - @ gets '."""
    if isinstance(value, str) and value.startswith(_FORMULA_START):
        return "'" + value
    return value


def rows_to_csv(rows: list[GapRow]) -> str:
    """The rows as CSV text, with formula-like cells defused."""
    buf = io.StringIO()
    fields = list(GapRow.model_fields)
    writer = csv.DictWriter(buf, fieldnames=fields, lineterminator="\n")
    writer.writeheader()
    for row in rows:
        writer.writerow({k: _defuse(v) for k, v in row.model_dump().items()})
    return buf.getvalue()


# ------------------------------------------------------------------ teaching-lab audit
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
    )


def audit_markdown(report: GroupAudit, caution: str) -> str:
    """The audit as a Markdown handout (Jinja2 template ``templates/audit.md.j2``)."""
    import jinja2

    env = jinja2.Environment(
        loader=jinja2.PackageLoader("capture", "templates"),
        autoescape=False,
        keep_trailing_newline=True,
        trim_blocks=True,
        lstrip_blocks=True,
    )
    return env.get_template("audit.md.j2").render(a=report, caution=caution)
