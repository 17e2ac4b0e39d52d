"""The HTML report: self-contained, and its figures agree with the store."""

from __future__ import annotations

import re
import shutil
import sqlite3
import statistics
from html.parser import HTMLParser

import pytest
from click.testing import CliRunner

from capture.cli import cli

from conftest import EXAMPLES


class _Text(HTMLParser):
    def __init__(self):
        super().__init__()
        self.ids: dict[str, str] = {}
        self._id = None
        self.tags: list[str] = []
        self.srcs: list[str] = []

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        self.tags.append(tag)
        if "id" in a:
            self._id = a["id"]
        for key in ("src", "href"):
            if key in a and tag in {"script", "link", "img", "iframe"}:
                self.srcs.append(a[key])

    def handle_data(self, data):
        if self._id and data.strip():
            self.ids.setdefault(self._id, data.strip())
            self._id = None


@pytest.fixture
def lab(tmp_path):
    root = tmp_path / "lab"
    shutil.copytree(EXAMPLES, root, ignore=shutil.ignore_patterns("*.waste.*", ".masstrail"))
    return root


def test_report_is_self_contained_and_agrees_with_the_store(lab, tmp_path):
    out = tmp_path / "report.html"
    res = CliRunner().invoke(cli, ["report", str(lab), "-o", str(out)])
    assert res.exit_code == 0, res.output
    html = out.read_text()
    page = _Text()
    page.feed(html)
    assert page.srcs == [] and "script" not in page.tags  # no network, no CDN, no scripts
    assert html.count("<svg") >= 3  # matplotlib charts inlined
    db = sqlite3.connect(lab / ".masstrail" / "records.db")
    assert int(page.ids["n-entries"]) == db.execute("SELECT COUNT(*) FROM entries").fetchone()[0]
    es = [e for (e,) in db.execute("SELECT e_factor FROM metrics WHERE e_factor IS NOT NULL")]
    # shown as the terminal shows figures: three significant figures
    assert page.ids["median-e"] == format(statistics.median(es), ".3g")
    assert "not a hazard assessment" in html and "screening aid" in html


def test_waste_by_stream_is_shown_per_group_and_per_gram_of_product(lab, tmp_path):
    """The pilot bay's kilograms and the bench's grams are not added into one column: each
    group's streams are its own, with their waste per gram of that group's product."""
    from capture.notebook import Notebook
    from capture.scan import scan
    from capture.views.filters import GapFilter
    from capture.views.report import figures

    results = scan(Notebook.open(lab)).results
    rows = figures(results, GapFilter())["streams"]
    groups = {g for g, _, _, _ in rows}
    assert {"Pilot bay", "Fenwick"} <= groups
    pilot = [r for r in results if r.meta.get("group") == "Pilot bay" and r.waste]
    product = sum(r.product.mass_g for r in pilot)
    for g, stream, grams, per in rows:
        if g == "Pilot bay":
            want = sum(r.waste.streams.get(stream, 0) for r in pilot)
            assert grams == pytest.approx(want, abs=1e-3) and per == pytest.approx(
                want / product, abs=1e-3
            )


def test_report_filters(lab, tmp_path):
    out = tmp_path / "r.html"
    CliRunner().invoke(cli, ["report", str(lab), "-o", str(out), "--group", "Pilot bay"])
    page = _Text()
    page.feed(out.read_text())
    assert page.ids["n-entries"] == "2"
    assert not re.search(r"entry-FW-0412", out.read_text())


def test_report_renders_in_headless_chromium(lab, tmp_path):
    chromium = shutil.which("chromium") or shutil.which("chromium-browser")
    if chromium is None:
        pytest.skip("Chromium is not installed on this machine (apt-get install chromium)")
    import subprocess

    out = tmp_path / "r.html"
    CliRunner().invoke(cli, ["report", str(lab), "-o", str(out)])
    shot = tmp_path / "shot.png"
    subprocess.run([chromium, "--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                    f"--screenshot={shot}", "--window-size=1200,2000", out.as_uri()],
                   check=True, capture_output=True, timeout=120)  # fmt: skip
    assert shot.stat().st_size > 20_000


def test_streamed_figures_equal_the_reference_summaries(lab):
    """The report counts gaps as it reads results one by one; capture.views.gaplist.summarise,
    which holds every result, is the reference."""
    import json

    from capture.notebook import Notebook
    from capture.paths import sidecar_path
    from capture.scan import scan
    from capture.views.filters import GapFilter
    from capture.views.gaplist import summarise
    from capture.views.report import figures

    nb = Notebook.open(lab)
    results = scan(nb).results
    for flt in (GapFilter(), GapFilter(severity="major"), GapFilter(group="Fenwick group")):
        sidecars = (json.loads(sidecar_path(lab / r.entry.path).read_text()) for r in results)
        got = figures(sidecars, flt)
        assert got["gaps_by_author"] == summarise(results, flt, "author")
        assert got["gaps_by_group"] == summarise(results, flt, "group")
        kept = [r for r in results if flt.keeps(r)]
        assert got["n_entries"] == len(kept) and len(got["cards"]) == len(kept)
    assert figures(results, GapFilter())["gaps_by_author"] == summarise(
        results, GapFilter(), "author"
    )


def test_cards_are_capped_and_the_worst_entries_get_them(lab, tmp_path):
    out = tmp_path / "r.html"
    res = CliRunner().invoke(cli, ["report", str(lab), "-o", str(out), "--cards", "3"])
    assert res.exit_code == 0, res.output
    html = out.read_text()
    page = _Text()
    page.feed(html)
    assert page.ids["n-entries"] == "10" and page.ids["n-cards"] == "3"
    assert html.count('class="card"') == 3
    import sqlite3

    db = sqlite3.connect(lab / ".masstrail" / "records.db")
    worst = db.execute(
        "SELECT e.id FROM entries e JOIN entry_gaps g ON g.path = e.path "
        "ORDER BY g.blocking DESC, g.major DESC, g.minor DESC, e.date DESC LIMIT 3"
    ).fetchall()
    assert [f'id="entry-{i}"' in html for (i,) in worst] == [True, True, True]


def test_no_cards_at_all_is_a_report_of_figures_only(lab, tmp_path):
    out = tmp_path / "r.html"
    res = CliRunner().invoke(cli, ["report", str(lab), "-o", str(out), "--cards", "0"])
    assert res.exit_code == 0, res.output  # it once failed on an empty heap
    html = out.read_text()
    assert html.count('class="card"') == 0 and '<span id="n-entries">10</span>' in html


def test_a_name_with_dollar_signs_is_drawn_as_text(tmp_path):
    """'$…$' is matplotlib's math markup; a material named '$\\alpha$-pinene$' or 'Cu$_2$O' must
    not break the report."""
    from helpers import entry_md

    root = tmp_path / "nb"
    root.mkdir()
    (root / "e.md").write_text(
        entry_md("""
        title: dollars
        product: {name: p, mass: 1.00 g}
        materials: [{name: "$\\\\frac{1}{$x", amount: 2.0 g}, {name: "Cu$_2$O", amount: 1 g}]
        """)
    )
    out = tmp_path / "r.html"
    res = CliRunner().invoke(cli, ["report", str(root), "-o", str(out)])
    assert res.exit_code == 0, res.output
    assert out.read_text().count("<svg") >= 2  # the charts were drawn
