"""The command line, through click's CliRunner and, once, as a real process."""

from __future__ import annotations

import json
import subprocess
import sys

from click.testing import CliRunner

from capture.cli import cli

from helpers import entry_md

GOOD = entry_md("""
    title: good
    product: {name: p, mass: 1.00 g}
    materials: [{name: A, amount: 3.00 g}]
    """)
NO_PRODUCT = entry_md("materials: [{name: A, amount: 3.00 g}]")


def test_scan_prints_a_table_and_exits_0_with_gaps(notebook):
    notebook.write("good.md", GOOD)
    notebook.write("open.md", NO_PRODUCT)
    res = CliRunner().invoke(cli, ["scan", str(notebook.root)], env={"COLUMNS": "200"})
    assert res.exit_code == 0, res.output
    assert "good.md" in res.output and "2" in res.output and "open.md" in res.output
    assert "2 entries, 2 result file(s) written, 0 could not be read" in res.output
    assert "not a hazard assessment" in res.output


def test_scan_json_and_fail_on(notebook):
    notebook.write("good.md", GOOD)
    notebook.write("open.md", NO_PRODUCT)
    res = CliRunner().invoke(cli, ["scan", str(notebook.root), "--json", "--fail-on", "blocking"])
    assert res.exit_code == 1
    rows = [json.loads(line) for line in res.output.splitlines()]
    assert [(r["entry"], r["metrics"]["e_factor"], r["gaps"]["blocking"]) for r in rows] == [
        ("good.md", 2.0, 0),
        ("open.md", None, 1),
    ]
    assert rows[0]["sidecar"] == "good.waste.json"


def test_fail_on_major_passes_a_clean_notebook(notebook):
    notebook.write("good.md", GOOD)
    res = CliRunner().invoke(cli, ["scan", str(notebook.root), "--fail-on", "major"])
    assert res.exit_code == 0


def test_bad_config_exits_2_naming_the_key(notebook):
    notebook.write("masstrail.toml", "[output]\ncards = true\n")
    res = CliRunner().invoke(cli, ["scan", str(notebook.root)])
    assert res.exit_code == 2
    assert "key 'output.cards': unknown key" in res.output


def test_missing_path_is_a_usage_error(tmp_path):
    res = CliRunner().invoke(cli, ["scan", str(tmp_path / "nowhere")])
    assert res.exit_code == 2


def test_show_prints_basis_gaps_and_metrics(notebook):
    notebook.write("masstrail.toml", '[densities]\n"toluene" = 0.87\n')
    notebook.write(
        "sub/e.md",
        entry_md("""
        product: {name: p, mass: 1 g}
        materials: [{name: toluene, amount: 10 mL}, {name: DMAP}]
        """),
    )
    res = CliRunner().invoke(cli, ["show", str(notebook.root / "sub/e.md")], env={"COLUMNS": "200"})
    assert res.exit_code == 0, res.output
    assert "10 mL × 0.87 g/mL (toluene; lab override in masstrail.toml)" in res.output
    assert "[densities]" not in res.output or "under [densities]" in res.output
    assert "DMAP is listed with no amount" in res.output
    assert "E-factor 7.7" in res.output
    assert not (notebook.root / "sub/e.waste.json").exists()  # show writes nothing


def test_show_says_which_product_mentions_are_crude_a_crop_or_a_total(notebook):
    """The quantities that are not inputs say what a product's mention is, so a chemist sees
    why the product mass is the one it is."""
    notebook.write("e.md", entry_md("product: {name: acetanilide}",
                                    "The product (2.0 g) was recrystallised from water (30 mL) "
                                    "to give acetanilide (1.92 g). A second crop (0.35 g) was "
                                    "obtained, giving a total of 2.27 g."))  # fmt: skip
    res = CliRunner().invoke(cli, ["show", str(notebook.root / "e.md")], env={"COLUMNS": "300"})
    assert res.exit_code == 0, res.output
    assert (
        "Not inputs: product 2.0 g (product, crude); acetanilide 1.92 g (product); second "
        "crop 0.35 g (product, crop); product 2.27 g (product, total)"
    ) in res.output


def test_show_json_is_the_sidecar_content(notebook):
    path = notebook.write("e.md", GOOD)
    res = CliRunner().invoke(cli, ["show", "--json", str(path)])
    assert json.loads(res.output)["metrics"]["e_factor"] == 2.0


def test_show_reports_an_unreadable_entry(notebook):
    path = notebook.write("e.md", "no front matter here")
    res = CliRunner().invoke(cli, ["show", str(path)])
    assert (
        res.exit_code == 0 and "could not be read" in res.output and "no front matter" in res.output
    )


def test_plugins_and_schema_commands():
    res = CliRunner().invoke(cli, ["plugins", "--json"])
    assert {row["name"] for row in json.loads(res.output)} >= {"readers", "sidecar"}
    res = CliRunner().invoke(cli, ["schema"])
    assert json.loads(res.output)["title"] == "Result"


def test_the_installed_command_runs(notebook):
    notebook.write("good.md", GOOD)
    out = subprocess.run(
        [
            sys.executable,
            "-c",
            "from capture.cli import main; main()",
            "scan",
            "--json",
            str(notebook.root),
        ],
        capture_output=True,
        text=True,
        check=True,
    ).stdout
    assert json.loads(out)["metrics"]["pmi"] == 3.0


def test_a_large_scan_lists_only_what_needs_action_and_a_rescan_says_unchanged(notebook):
    for i in range(201):
        notebook.write(f"good-{i:03d}.md", GOOD)
    notebook.write("open-a.md", NO_PRODUCT)
    notebook.write("open-b.md", NO_PRODUCT)
    args = ["scan", str(notebook.root), "--jobs", "1"]
    res = CliRunner().invoke(cli, args, env={"COLUMNS": "200"})
    assert res.exit_code == 0, res.output
    out = " ".join(res.output.split())  # the table title wraps
    assert "the 2 entries with a blocking gap or an error" in out
    assert "open-a.md" in out and "good-000.md" not in out
    assert "203 entries, 203 result file(s) written" in out
    again = " ".join(CliRunner().invoke(cli, args, env={"COLUMNS": "200"}).output.split())
    assert "203 entries (203 unchanged since the last scan), 0 result file(s) written" in again
    rows = [
        json.loads(line) for line in CliRunner().invoke(cli, [*args, "--json"]).output.splitlines()
    ]
    assert len(rows) == 203 and not any(r["recomputed"] for r in rows)
    assert rows[0]["metrics"]["e_factor"] == 2.0  # read from the sidecar, still current


def test_show_prints_an_entry_s_text_as_written_never_as_emoji_or_markup(notebook):
    """rich would turn ":fire:" into an emoji and "[bold]" into style: an entry's words are
    shown as the chemist wrote them."""
    path = notebook.write("e.md", GOOD.replace("title: good", 'title: "run :fire: [bold]B[/bold]"'))
    res = CliRunner().invoke(cli, ["show", str(path)], env={"COLUMNS": "200"})
    assert res.exit_code == 0, res.output
    assert "run :fire: [bold]B[/bold]" in res.output


def test_the_progress_bar_takes_its_total_from_the_last_scan_not_from_a_second_walk(notebook):
    """On a terminal the scan shows a progress bar; its total is the number of entries the last
    scan saw (recorded in .masstrail/basis.json), so a rescan does not walk the notebook twice
    just to count; with no record, a walk counts them."""
    from capture.cli.scan import bar_total
    from capture.notebook import Notebook
    from capture.scan import scan

    for i in range(3):
        notebook.write(f"e{i}.md", GOOD)
    nb = Notebook.open(notebook.root)
    assert bar_total(nb) == 3  # no record yet: counted by a walk
    scan(nb)
    notebook.write("e3.md", GOOD)  # one more since: the bar's total grows as it goes
    nb = Notebook.open(notebook.root)
    nb.folders = None  # a walk would fail
    assert bar_total(nb) == 3


def test_a_scan_on_a_terminal_shows_its_bar_and_its_table(notebook, tmp_path):
    """A real process in a pseudo-terminal, as a chemist runs it: more than 50 entries, twice
    (the second time the bar's total comes from the first scan)."""
    import os
    import pty
    import select
    from pathlib import Path

    for i in range(55):
        notebook.write(f"e{i:02d}.md", GOOD)
    command = Path(sys.executable).with_name("masstrail")
    for _ in range(2):
        master, slave = pty.openpty()
        env = {**os.environ, "COLUMNS": "120"}
        env.pop("MASSTRAIL_HOOK_LOG", None)
        proc = subprocess.Popen([command, "scan", notebook.root], stdin=slave, stdout=slave,
                                stderr=slave, env=env)  # fmt: skip
        os.close(slave)
        out = b""
        while True:
            ready, _, _ = select.select([master], [], [], 60)
            try:
                chunk = os.read(master, 65536) if ready else b""
            except OSError:  # the child closed the terminal
                chunk = b""
            if not chunk:
                break
            out += chunk
        os.close(master)
        assert proc.wait(timeout=60) == 0, out.decode(errors="replace")
        assert b"55 entries" in out and b"scanning" in out  # the bar, then the table
