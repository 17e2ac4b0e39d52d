"""The teaching-lab audit (library and command)."""

from __future__ import annotations

from click.testing import CliRunner
from test_gaplist import lab_of_three

from capture.cli import cli
from capture.views.audit import audit


def test_audit_checklist_and_markdown(notebook, tmp_path):
    results = lab_of_three(notebook)
    report = audit(results, "alder")
    assert report.group == "Alder" and len(report.entries) == 2
    one = report.entries[0]
    assert [(c.needs, c.item, c.recorded) for c in one.checklist] == [
        ("drying agent mass", "MgSO4", False),
        ("liquid volume", "brine", False),
        ("product mass", "p", True),
    ]
    assert len(one.next_time) == 2 and {n.split(":")[0] for n in one.next_time} == {
        "brine",
        "MgSO4",
    }
    md = tmp_path / "audit.md"
    res = CliRunner().invoke(
        cli, ["audit", str(notebook.root), "--group", "Alder", "--markdown", str(md)]
    )
    assert res.exit_code == 0, res.output
    text = md.read_text()
    assert (
        "| ✗ | drying | drying agent mass | MgSO4 |" in text and "not a hazard assessment" in text
    )
    res = CliRunner().invoke(cli, ["audit", str(notebook.root), "--group", "Nobody"])
    assert res.exit_code == 2 and "no entries of group 'Nobody'" in res.output
    assert "the groups there are: 'Alder', 'Birch'" in " ".join(res.output.split())
