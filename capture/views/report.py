"""The lab manager's report: one self-contained HTML file (no network, no CDN).

Sections: the lab overview (entries, median E-factor and PMI by group, project and
month; waste by stream; the largest contributors), gaps by author and group, and
a card per entry with its waste breakdown. Charts are drawn by matplotlib and
inlined as SVG. Filters (group, project, author, date range) are those of
:class:`capture.views.filters.GapFilter`.
"""

from __future__ import annotations

import heapq
import json
import statistics
from collections import Counter
from collections.abc import Iterable
from typing import TYPE_CHECKING

from capture.models import SEVERITY_RANK, Result
from capture.views.charts import CardChart, bar_chart
from capture.views.figures import figure_text
from capture.views.filters import GapFilter
from capture.views.gaplist import GroupSummary

if TYPE_CHECKING:
    from capture.notebook import Notebook


_ZERO = {"entries": 0, "with_gaps": 0, "blocking": 0, "major": 0, "minor": 0, "allowance_g": 0.0}


def _median(values: list[float]) -> float | None:
    return round(statistics.median(values), 3) if values else None


def build(
    results: Iterable[dict | Result], flt: GapFilter, caution: str, title: str, cards: int = 100
) -> str:
    """The report's HTML text: :func:`figures` rendered with the report template."""
    import jinja2

    env = jinja2.Environment(
        loader=jinja2.PackageLoader("capture", "templates"),
        autoescape=jinja2.select_autoescape(["html", "j2"]),
        trim_blocks=True,
        lstrip_blocks=True,
    )
    env.filters["fig"] = figure_text  # the terminal's rule: three significant figures
    ctx = figures(results, flt, cards)
    return env.get_template("report.html.j2").render(title=title, caution=caution, **ctx)


class _Tally:
    """The report's figures, added up one entry at a time (a report over 100,000 entries
    holds their figures, not their results)."""

    def __init__(self, flt: GapFilter, cards: int) -> None:
        self.flt, self.cards = flt, cards
        self.n_kept = self.n_errors = 0
        self.e_all: list[float] = []
        self.pmi_all: list[float] = []
        self.by: dict[str, dict[str, list]] = {"notebook": {}, "group": {}, "project": {},
                                               "month": {}}  # fmt: skip
        self.streams: dict[str, Counter[str]] = {}  # group → stream → waste, g
        self.products: dict[str, float] = {}  # group → product, g (of entries with streams)
        self.contributors: Counter[str] = Counter()
        self.gap_sums: dict[str, dict[str, dict]] = {"author": {}, "group": {}, "notebook": {}}
        self.heap: list[tuple] = []  # the `cards` entries most in need: (rank key, n, result)
        self.errors: list[dict] = []

    def add(self, n: int, r: dict) -> None:
        meta = r.get("meta") or {}
        if not self.flt.keeps_meta(meta):
            return
        self.n_kept += 1
        gaps = r.get("gaps") or []
        if r.get("status") == "error":
            self.n_errors += 1
            if len(self.errors) < 1000:
                self.errors.append(r)
            rows = [("blocking", 0.0)]  # an unreadable entry counts as one blocking gap
        else:
            self._figures(r, meta)
            wanted = SEVERITY_RANK[self.flt.severity]
            rows = [(g["severity"], g.get("allowance_g") or 0.0) for g in gaps
                    if SEVERITY_RANK[g["severity"]] <= wanted]  # fmt: skip
        for label in ("author", "group", "notebook"):
            key = r.get("notebook") if label == "notebook" else meta.get(label)
            if label == "notebook" and key is None:
                continue  # a notebook's own report: no notebook column
            cell = self.gap_sums[label].setdefault(key or "(none)", dict(_ZERO))
            cell["entries"] += 1
            cell["with_gaps"] += bool(rows)
            for severity, allowance in rows:
                cell[severity] += 1
                cell["allowance_g"] += allowance
        if r.get("status") == "ok":
            count = Counter(g["severity"] for g in gaps)
            key = (count["blocking"], count["major"], count["minor"], meta.get("date") or "", -n)
            if len(self.heap) < self.cards:
                heapq.heappush(self.heap, (key, n, r))
            elif self.heap and key > self.heap[0][0]:  # (none kept with --cards 0)
                heapq.heapreplace(self.heap, (key, n, r))

    def _figures(self, r: dict, meta: dict) -> None:
        m = r.get("metrics") or {}
        e, pmi = m.get("e_factor"), m.get("pmi")
        self.e_all += [e] if e is not None else []
        self.pmi_all += [pmi] if pmi is not None else []
        month = (meta.get("date") or "")[:7] or None
        for label, key in (("group", meta.get("group")), ("project", meta.get("project")),
                           ("month", month), ("notebook", r.get("notebook"))):  # fmt: skip
            if label == "notebook" and key is None:
                continue
            cell = self.by[label].setdefault(key or "(none)", [0, [], []])
            cell[0] += 1
            if e is not None:
                cell[1].append(e)
            if pmi is not None:
                cell[2].append(pmi)
        streams = (r.get("waste") or {}).get("streams") or {}
        product = (r.get("product") or {}).get("mass_g")
        if streams and product:  # each group at its own scale: bench grams, pilot kilograms
            group = meta.get("group") or "(none)"
            self.streams.setdefault(group, Counter()).update(streams)
            self.products[group] = self.products.get(group, 0.0) + product
        for x in r.get("materials") or []:
            if x.get("mass_g"):
                self.contributors[x.get("resolved") or x["name"]] += x["mass_g"]

    def cards_drawn(self) -> list[dict]:
        n_ok = self.n_kept - self.n_errors
        chosen = [r for _, _, r in sorted(self.heap, reverse=True)] if n_ok > self.cards else \
            [r for _, _, r in sorted(self.heap, key=lambda t: t[1])]  # fmt: skip
        chart = CardChart()
        try:
            return [{"r": r, "chart": chart.draw(cats) if cats else ""}
                    for r in chosen
                    for cats in [(r.get("breakdown") or {}).get("by_category") or {}]]  # fmt: skip
        finally:
            chart.close()

    def stream_rows(self) -> list[tuple[str, str, float, float]]:
        """(group, stream, waste g, waste g per g of product) by group, largest first: a lab's
        pilot plant and its bench are not added up in one column of grams."""
        return [(g, k, round(v, 4), round(v / self.products[g], 4))
                for g in sorted(self.streams)
                for k, v in self.streams[g].most_common()]  # fmt: skip

    def table(self, label: str) -> list[tuple[str, int, float | None, float | None]]:
        return [(k, c[0], _median(c[1]), _median(c[2])) for k, c in sorted(self.by[label].items())]

    def gap_table(self, label: str) -> list[GroupSummary]:
        return [
            GroupSummary(key=k, entries=c["entries"], entries_with_gaps=c["with_gaps"],
                         blocking=c["blocking"], major=c["major"], minor=c["minor"],
                         allowance_g=round(c["allowance_g"], 4))
            for k, c in sorted(self.gap_sums[label].items())
        ]  # fmt: skip


def figures(results: Iterable[dict | Result], flt: GapFilter, cards: int = 100) -> dict:
    """Every figure of the report, from results given one at a time (sidecar dicts as read from
    ``NAME.waste.json``, or :class:`Result` objects), kept no longer than needed.

    Every section covers every entry the filter keeps; cards (with their waste-breakdown
    chart) are drawn for at most ``cards`` entries: all of them when there are no more,
    else those with the most serious gaps first (then the newest).
    """
    t = _Tally(flt, cards)
    for n, r in enumerate(results):
        t.add(n, json.loads(r.sidecar_json()) if isinstance(r, Result) else r)
    streams, top = t.stream_rows(), t.contributors.most_common(10)
    return dict(
        flt=flt,
        n_entries=t.n_kept,
        n_errors=t.n_errors,
        n_ok=t.n_kept - t.n_errors,
        medians={"e_factor": _median(t.e_all), "pmi": _median(t.pmi_all)},
        by_notebook=t.table("notebook"),
        gaps_by_notebook=t.gap_table("notebook"),
        by_group=t.table("group"),
        by_project=t.table("project"),
        by_month=t.table("month"),
        streams=streams,
        stream_chart=bar_chart([f"{g}: {k}" for g, k, _, _ in streams],
                               [per for _, _, _, per in streams], "waste, g per g of product")
        if streams else "",
        top=top,
        top_chart=bar_chart([k for k, _ in top], [v for _, v in top], "input mass, g")
        if top else "",
        gaps_by_author=t.gap_table("author"),
        gaps_by_group=t.gap_table("group"),
        cards=t.cards_drawn(),
        errors=t.errors,
    )  # fmt: skip


def lab_report(nb: Notebook, flt: GapFilter, title: str, cards: int = 100,
               jobs: int = 1) -> tuple[str, int]:  # fmt: skip
    """The notebook's report as HTML, and how many entries it covers. Entries changed since
    the last scan are computed (and written) first; the figures come from the sidecars."""
    from capture.paths import sidecar_path
    from capture.run import CAUTION
    from capture.safeio import read_small
    from capture.scan import scan

    done = scan(nb, reuse=True, keep=False, jobs=jobs)

    def sidecars():
        for s in done.summaries:
            try:
                yield json.loads(read_small(sidecar_path(nb.root / s.path)) or "")
            except (OSError, ValueError):  # gone or damaged since the scan: say so in the report
                why = s.error or "its result file could not be read"
                yield {"status": "error", "entry": {"path": s.path, "id": s.path}, "meta": {},
                       "error": {"message": why}}  # fmt: skip

    return build(sidecars(), flt, CAUTION, title, cards=cards), len(done.summaries)


def shared_report(url: str, notebook: str | None, flt: GapFilter, title: str,
                  cards: int = 100) -> tuple[str, int]:  # fmt: skip
    """The report over the shared store's current results (all notebooks, or one), with a
    breakdown by notebook, and how many entries it covers."""
    from capture.run import CAUTION
    from capture.store import shared

    with shared.connect(url) as conn:
        shared.require_current(conn, url)
        counted = []

        def results():
            for r in shared.results(conn, notebook):
                counted.append(1)
                yield r

        html = build(results(), flt, CAUTION, title, cards=cards)
    return html, len(counted)
