"""The lab manager's report: one self-contained HTML file (no network, no CDN).

Sections: the lab overview (entries, median E-factor and PMI by group, project and
month; waste by stream; the largest contributors), gaps by author and group, and
a card per entry with its waste breakdown. Charts are drawn by matplotlib and
inlined as SVG. Filters (group, project, author, date range) are those of
:class:`capture.reports.GapFilter`.
"""

from __future__ import annotations

import io
import statistics
from collections import Counter, defaultdict

from capture.models import Result
from capture.reports import GapFilter, summarise


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


def _by(results: list[Result], key) -> list[tuple[str, int, float | None, float | None]]:
    groups: dict[str, list[Result]] = defaultdict(list)
    for r in results:
        groups[key(r) or "(none)"].append(r)
    rows = []
    for k in sorted(groups):
        rs = groups[k]
        es = [r.metrics.e_factor for r in rs if r.metrics.e_factor is not None]
        ps = [r.metrics.pmi for r in rs if r.metrics.pmi is not None]
        rows.append((k, len(rs), _median(es), _median(ps)))
    return rows


def build(results: list[Result], flt: GapFilter, caution: str, title: str) -> str:
    """The report's HTML text."""
    import jinja2

    kept = [r for r in results if flt.keeps(r)]
    ok = [r for r in kept if r.status == "ok"]
    streams: Counter[str] = Counter()
    contributors: Counter[str] = Counter()
    for r in ok:
        if r.waste:
            streams.update(r.waste.streams)
        for m in r.materials:
            if m.mass_g:
                contributors[m.resolved or m.name] += m.mass_g
    top = contributors.most_common(10)
    cards = []
    for r in ok:
        cats = r.breakdown.by_category if r.breakdown else {}
        chart = (
            bar_chart(list(cats), list(cats.values()), "input mass, g", width=4.5) if cats else ""
        )
        cards.append({"r": r, "chart": chart})
    env = jinja2.Environment(
        loader=jinja2.PackageLoader("capture", "templates"),
        autoescape=jinja2.select_autoescape(["html", "j2"]),
        trim_blocks=True,
        lstrip_blocks=True,
    )
    return env.get_template("report.html.j2").render(
        title=title,
        flt=flt,
        n_entries=len(kept),
        n_errors=len(kept) - len(ok),
        medians={
            "e_factor": _median([r.metrics.e_factor for r in ok if r.metrics.e_factor is not None]),
            "pmi": _median([r.metrics.pmi for r in ok if r.metrics.pmi is not None]),
        },
        by_group=_by(ok, lambda r: r.meta.get("group")),
        by_project=_by(ok, lambda r: r.meta.get("project")),
        by_month=_by(ok, lambda r: (r.meta.get("date") or "")[:7] or None),
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
        gaps_by_author=summarise(kept, flt, "author"),
        gaps_by_group=summarise(kept, flt, "group"),
        cards=cards,
        errors=[r for r in kept if r.status == "error"],
        caution=caution,
    )
