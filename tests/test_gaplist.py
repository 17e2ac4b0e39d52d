"""The lab manager's gap list (library and command)."""

from __future__ import annotations

import csv
import io
import json

from click.testing import CliRunner

from capture.cli import cli
from capture.notebook import Notebook
from capture.scan import scan
from capture.views.filters import GapFilter
from capture.views.gaplist import gap_rows, rows_to_csv, summarise

from helpers import entry_md


def lab_of_three(notebook):
    notebook.write(
        "a/one.md",
        entry_md(
            """
        author: "=HYPERLINK(1)"
        group: Alder
        project: P1
        date: 2026-10-01
        product: {name: p, mass: 1.00 g}
        """,
            "The acid (5.00 g) in EtOAc (50 mL) was washed with brine and dried over MgSO4.",
        ),
    )
    notebook.write(
        "a/two.md",
        entry_md("""
        author: B. Chen
        group: Alder
        project: P2
        date: 2026-11-15
        materials: [{name: acid, amount: 5.00 g}]
        """),
    )
    notebook.write(
        "b/three.md",
        entry_md("""
        author: B. Chen
        group: Birch
        project: P2
        date: 2026-11-20
        product: {name: p, mass: 1.00 g}
        materials: [{name: acid, amount: 5.00 g}]
        """),
    )
    return scan(Notebook.open(notebook.root), write=False).results


def test_gap_rows_filter_by_author_date_and_severity(notebook):
    results = lab_of_three(notebook)
    every = gap_rows(results, GapFilter())
    assert {(r.entry, r.kind) for r in every} == {
        ("a/one.md", "liquid_volume"), ("a/one.md", "drying_agent_mass"),
        ("a/two.md", "product_mass_missing"),
    }  # fmt: skip
    assert {r.entry for r in gap_rows(results, GapFilter(author="b. chen"))} == {"a/two.md"}
    import datetime as dt

    since = GapFilter(since=dt.date(2026, 11, 1))
    assert {r.entry for r in gap_rows(results, since)} == {"a/two.md"}
    assert [r.kind for r in gap_rows(results, GapFilter(severity="blocking"))] == [
        "product_mass_missing"
    ]


def test_summary_by_group_counts_entries_and_gaps(notebook):
    results = lab_of_three(notebook)
    rows = {s.key: s for s in summarise(results, GapFilter(), "group")}
    assert (rows["Alder"].entries, rows["Alder"].entries_with_gaps, rows["Alder"].blocking) == (
        2,
        2,
        1,
    )
    assert (rows["Birch"].entries, rows["Birch"].entries_with_gaps) == (1, 0)


def test_csv_defuses_formulas(notebook):
    text = rows_to_csv(gap_rows(lab_of_three(notebook), GapFilter()))
    rows = list(csv.DictReader(io.StringIO(text)))
    # OWASP / CWE-1236: a cell that starts with = is prefixed with '
    assert {r["author"] for r in rows if r["entry"] == "a/one.md"} == {"'=HYPERLINK(1)"}


def test_gaps_command_exit_codes_json_and_csv(notebook, tmp_path):
    lab_of_three(notebook)
    runner = CliRunner()
    res = runner.invoke(cli, ["gaps", str(notebook.root), "--json"])
    assert res.exit_code == 1  # a blocking gap exists
    assert len(json.loads(res.output)) == 3
    res = runner.invoke(cli, ["gaps", str(notebook.root), "--group", "Birch"])
    assert res.exit_code == 0
    res = runner.invoke(cli, ["gaps", str(notebook.root), "--by", "project", "--json"])
    assert {s["key"]: s["entries"] for s in json.loads(res.output)} == {"P1": 1, "P2": 2}
    out = tmp_path / "gaps.csv"
    res = runner.invoke(
        cli, ["gaps", str(notebook.root), "--csv", str(out)], env={"COLUMNS": "200"}
    )
    assert res.exit_code == 1 and out.read_text().startswith("entry,id,author")
    res = runner.invoke(cli, ["gaps", str(notebook.root), "--since", "2026-13-01"])
    assert res.exit_code == 2 and "is not a date" in res.output
    assert not list(notebook.root.rglob("*.waste.json"))  # gaps writes nothing


def test_the_gap_table_shows_the_first_rows_and_says_how_to_see_them_all(notebook):
    """Hundreds of gaps (a department's store) are not a table to read: the first 200 are
    shown, the title says how many there are and how to get them all; JSON lists every one."""
    for n in range(205):
        notebook.write(f"e{n:03d}.md", "---\ntitle: unweighed\n---\nStirred.\n")
    res = CliRunner().invoke(cli, ["gaps", str(notebook.root)])
    said = " ".join(res.output.split())  # the terminal's width folds the title
    assert "(the first 200 of 205 shown: --csv FILE or --json for all" in said
    assert "205 gap(s) in 205 entries" in said and said.count("e204.md") == 0
    rows = json.loads(CliRunner().invoke(cli, ["gaps", str(notebook.root), "--json"]).output)
    assert len(rows) == 205
