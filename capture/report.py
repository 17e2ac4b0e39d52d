"""The lab manager's report: one self-contained HTML file (no network, no CDN).

Sections: the lab overview (entries, median E-factor and PMI by group, project and
month; waste by stream; the largest contributors), gaps by author and group, and
a card per entry with its waste breakdown. Charts are drawn by matplotlib and
inlined as SVG. Filters (group, project, author, date range) are those of
:class:`capture.reports.GapFilter`.
"""

from __future__ import annotations

import heapq
import io
import json
import statistics
from collections import Counter
from collections.abc import Iterable

from capture.models import Result
from capture.reports import GapFilter, GroupSummary


def _svg(fig) -> str:
    buf = io.StringIO()
    fig.savefig(buf, format="svg", bbox_inches="tight",
                metadata={"Creator": None, "Date": None, "Format": None, "Type": None})  # fmt: skip
    import matplotlib.pyplot as plt

    plt.close(fig)
    text = buf.getvalue()
    return text[text.index("<svg") :]  # drop the XML prolog and DOCTYPE: inline SVG


def bar_chart(labels: list[str], values: list[float], xlabel: str, width: float = 6.0) -> str:
    """A horizontal bar chart as inline SVG."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    plt.rcParams["svg.fonttype"] = "none"  # text stays text in the SVG
    plt.rcParams["svg.hashsalt"] = "masstrail"  # the same data gives the same file
    fig, ax = plt.subplots(figsize=(width, 0.35 * len(labels) + 0.8))
    ax.barh(labels[::-1], values[::-1], color="#4a7a8c")
    ax.set_xlabel(xlabel)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    return _svg(fig)


def _median(values: list[float]) -> float | None:
    return round(statistics.median(values), 3) if values else None


class _CardChart:
    """One matplotlib figure, redrawn for each card (building a figure costs more than
    drawing on it)."""

    def __init__(self) -> None:
        self.fig = None

    def draw(self, cats: dict[str, float]) -> str:
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt

        plt.rcParams["svg.fonttype"] = "none"
        plt.rcParams["svg.hashsalt"] = "masstrail"
        if self.fig is None:
            self.fig, self.ax = plt.subplots()
        ax = self.ax
        ax.clear()
        labels, values = list(cats), list(cats.values())
        self.fig.set_size_inches(4.5, 0.35 * len(labels) + 0.8)
        ax.barh(labels[::-1], values[::-1], color="#4a7a8c")
        ax.set_xlabel("input mass, g")
        for side in ("top", "right"):
            ax.spines[side].set_visible(False)
        buf = io.StringIO()
        no_stamp = {"Creator": None, "Date": None, "Format": None, "Type": None}
        self.fig.savefig(buf, format="svg", bbox_inches="tight", metadata=no_stamp)
        text = buf.getvalue()
        return text[text.index("<svg") :]

    def close(self) -> None:
        if self.fig is not None:
            import matplotlib.pyplot as plt

            plt.close(self.fig)


_RANK = {"blocking": 0, "major": 1, "minor": 2}
_ZERO = {"entries": 0, "with_gaps": 0, "blocking": 0, "major": 0, "minor": 0, "allowance_g": 0.0}


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
    ctx = figures(results, flt, cards)
    return env.get_template("report.html.j2").render(title=title, caution=caution, **ctx)


def figures(results: Iterable[dict | Result], flt: GapFilter, cards: int = 100) -> dict:
    """Every figure of the report, from results given one at a time (sidecar dicts as read from
    ``NAME.waste.json``, or :class:`Result` objects), kept no longer than needed: a report
    over 100,000 entries holds their figures, not their results.

    Every section covers every entry the filter keeps; cards (with their waste-breakdown
    chart) are drawn for at most ``cards`` entries: all of them when there are no more,
    else those with the most serious gaps first (then the newest).
    """
    n_kept = n_errors = 0
    e_all: list[float] = []
    pmi_all: list[float] = []
    by: dict[str, dict[str, list]] = {"group": {}, "project": {}, "month": {}}  # [n, es, pmis]
    streams: Counter[str] = Counter()
    contributors: Counter[str] = Counter()
    gap_sums: dict[str, dict[str, dict]] = {"author": {}, "group": {}}
    heap: list[tuple] = []  # the `cards` entries most in need, as (rank key, n, result)
    errors: list[dict] = []
    wanted = _RANK[flt.severity]
    for n, r in enumerate(results):
        if isinstance(r, Result):
            r = json.loads(r.sidecar_json())
        meta = r.get("meta") or {}
        if not flt.keeps_meta(meta):
            continue
        n_kept += 1
        gaps = r.get("gaps") or []
        if r.get("status") == "error":
            n_errors += 1
            if len(errors) < 1000:
                errors.append(r)
            rows = [("blocking", 0.0)]  # an unreadable entry counts as one blocking gap
        else:
            m = r.get("metrics") or {}
            e, pmi = m.get("e_factor"), m.get("pmi")
            e_all += [e] if e is not None else []
            pmi_all += [pmi] if pmi is not None else []
            month = (meta.get("date") or "")[:7] or None
            for label, key in (("group", meta.get("group")), ("project", meta.get("project")),
                               ("month", month)):  # fmt: skip
                cell = by[label].setdefault(key or "(none)", [0, [], []])
                cell[0] += 1
                if e is not None:
                    cell[1].append(e)
                if pmi is not None:
                    cell[2].append(pmi)
            streams.update((r.get("waste") or {}).get("streams") or {})
            for x in r.get("materials") or []:
                if x.get("mass_g"):
                    contributors[x.get("resolved") or x["name"]] += x["mass_g"]
            rows = [(g["severity"], g.get("allowance_g") or 0.0) for g in gaps
                    if _RANK[g["severity"]] <= wanted]  # fmt: skip
        for label in ("author", "group"):
            cell = gap_sums[label].setdefault(meta.get(label) or "(none)", dict(_ZERO))
            cell["entries"] += 1
            cell["with_gaps"] += bool(rows)
            for severity, allowance in rows:
                cell[severity] += 1
                cell["allowance_g"] += allowance
        if r.get("status") == "ok":
            count = Counter(g["severity"] for g in gaps)
            key = (count["blocking"], count["major"], count["minor"], meta.get("date") or "", -n)
            if len(heap) < cards:
                heapq.heappush(heap, (key, n, r))
            elif key > heap[0][0]:
                heapq.heapreplace(heap, (key, n, r))
    n_ok = n_kept - n_errors
    chosen = [r for _, _, r in sorted(heap, reverse=True)] if n_ok > cards else \
        [r for _, _, r in sorted(heap, key=lambda t: t[1])]  # fmt: skip
    chart = _CardChart()
    try:
        card_list = []
        for r in chosen:
            cats = (r.get("breakdown") or {}).get("by_category") or {}
            card_list.append({"r": r, "chart": chart.draw(cats) if cats else ""})
    finally:
        chart.close()
    top = contributors.most_common(10)

    def table(label: str) -> list[tuple[str, int, float | None, float | None]]:
        return [(k, c[0], _median(c[1]), _median(c[2])) for k, c in sorted(by[label].items())]

    def gap_table(label: str) -> list[GroupSummary]:
        return [
            GroupSummary(key=k, entries=c["entries"], entries_with_gaps=c["with_gaps"],
                         blocking=c["blocking"], major=c["major"], minor=c["minor"],
                         allowance_g=round(c["allowance_g"], 4))
            for k, c in sorted(gap_sums[label].items())
        ]  # fmt: skip

    return dict(
        flt=flt,
        n_entries=n_kept,
        n_errors=n_errors,
        n_ok=n_ok,
        medians={"e_factor": _median(e_all), "pmi": _median(pmi_all)},
        by_group=table("group"),
        by_project=table("project"),
        by_month=table("month"),
        streams=sorted(streams.items(), key=lambda kv: -kv[1]),
        stream_chart=bar_chart(
            [k for k, _ in streams.most_common()], [v for _, v in streams.most_common()], "waste, g"
        )
        if streams
        else "",
        top=top,
        top_chart=bar_chart([k for k, _ in top], [v for _, v in top], "input mass, g")
        if top
        else "",
        gaps_by_author=gap_table("author"),
        gaps_by_group=gap_table("group"),
        cards=card_list,
        errors=errors,
    )
