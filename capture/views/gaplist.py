"""The gap list for lab managers: every entry that lacks records, and what is missing.

:func:`gap_list` scans a notebook and returns its rows; :func:`summarise` counts them per
author, group or project; :func:`rows_to_csv` writes them for a spreadsheet. The command
line only formats what these return.
"""

from __future__ import annotations

import csv
import io
from collections import Counter
from collections.abc import Iterable
from typing import TYPE_CHECKING

from pydantic import BaseModel, Field

from capture.models import SEVERITY_RANK, Result
from capture.views.filters import GapFilter, GroupKey

if TYPE_CHECKING:
    from capture.notebook import Notebook


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
            if SEVERITY_RANK[g.severity] <= SEVERITY_RANK[flt.severity]:
                rows.append(
                    GapRow(entry=r.entry.path, id=r.entry.id, severity=g.severity, kind=g.kind,
                           item=g.item, allowance_g=g.allowance_g, message=g.message, **meta)
                )  # fmt: skip
    return rows


def gap_rows_of_store(lines: Iterable[tuple], flt: GapFilter) -> list[GapRow]:
    """The rows :func:`gap_rows` gives, from the shared store's ``gap_lines`` (its tables, not
    its results): an unreadable entry as one blocking gap, as there."""
    rows: list[GapRow] = []
    told = None  # the unreadable entry last told (its last good gaps are joined too)
    for entry, id_, author, group, project, date, status, error, *gap in lines:
        meta = {"author": author, "group": group, "project": project, "date": date}
        if not flt.keeps_meta(meta):
            continue
        if status == "error":
            if entry != told:
                rows.append(GapRow(entry=entry, id=id_, severity="blocking",
                                   kind="unreadable_entry", item=entry, allowance_g=None,
                                   message=error or "", **meta))  # fmt: skip
                told = entry
            continue
        severity, kind, item, allowance, message = gap
        if severity is not None and SEVERITY_RANK[severity] <= SEVERITY_RANK[flt.severity]:
            rows.append(GapRow(entry=entry, id=id_, severity=severity, kind=kind, item=item,
                               allowance_g=allowance, message=message or "", **meta))  # fmt: skip
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


def defuse(value: object) -> object:
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
        writer.writerow({k: defuse(v) for k, v in row.model_dump().items()})
    return buf.getvalue()


def late_rows(nb: Notebook, results: list[Result], flt: GapFilter) -> list[GapRow]:
    """Amounts first recorded more than ``[store] late_record_days`` after the experiment
    (from the store's history; ALCOA+: records should be contemporaneous), as gap rows."""
    from capture.store import late_records
    from capture.store.upkeep import open_store

    conn = open_store(nb)[0]
    kept = {r.entry.path: r for r in results if flt.keeps(r)}
    rows = []
    for x in late_records(conn, nb.config.store.late_record_days):
        r = kept.get(x["entry"])
        if r is None:
            continue
        rows.append(GapRow(
            entry=x["entry"], id=r.entry.id, author=r.meta.get("author"),
            group=r.meta.get("group"), project=r.meta.get("project"), date=x["experiment"],
            severity="minor", kind="late_record", item=x["what"], allowance_g=None,
            message=f"first recorded on {x['first_recorded']}, {x['days_after']} days after "
            "the experiment; records should be made at the time (ALCOA+)",
        ))  # fmt: skip
    return rows


def gap_list(nb: Notebook, flt: GapFilter, late: bool = False) -> tuple[list[GapRow], list[Result]]:
    """Every gap of the notebook's entries that ``flt`` keeps, and the results they came from.

    The entries are computed afresh (nothing is written next to them); with ``late``, the
    scan writes, so that the store's history is current, and late records are added.
    """
    from capture.scan import scan

    results = scan(nb, write=late).results
    rows = gap_rows(results, flt)
    if late:
        rows += late_rows(nb, results, flt)
    return rows, results
