"""``masstrail report PATH -o FILE.html`` and ``masstrail export PATH``: the lab's figures."""

from __future__ import annotations

from pathlib import Path

import click

from capture.cli.common import cli, entry_filters, gap_filter, jobs_option, open_notebook


@cli.command()
@click.argument("path", type=click.Path(exists=True, file_okay=False, path_type=Path))
@click.option(
    "-o",
    "--output",
    type=click.Path(dir_okay=False, path_type=Path),
    required=True,
    help="The HTML file to write.",
)
@entry_filters
@click.option(
    "--cards",
    type=click.IntRange(min=0),
    default=100,
    show_default=True,
    help="At most this many entry cards; beyond it, those with the most serious gaps.",
)
@jobs_option
def report(path, output, author, group_, project, since, until, cards, jobs):
    """Write the lab's report for PATH as one self-contained HTML file.

    The lab overview (median E-factor and PMI by group, project and month; waste
    by stream; the largest contributors), gaps by author and group, and a card
    per entry with its waste breakdown (up to --cards of them). Entries changed
    since the last scan are computed first. Opens in a browser with no network.
    """
    from capture.scan import default_jobs
    from capture.views.report import lab_report

    flt = gap_filter(author, group_, project, since, until)
    html, n = lab_report(open_notebook(path), flt, f"masstrail report: {path}", cards=cards,
                         jobs=jobs or default_jobs())  # fmt: skip
    output.write_text(html, encoding="utf-8")
    click.echo(f"wrote {output} ({n} entries)")


@cli.command()
@click.argument("path", type=click.Path(exists=True, file_okay=False, path_type=Path))
@click.option(
    "--format", "fmt", type=click.Choice(["csv", "json", "ord"]), default="csv", show_default=True
)
@click.option(
    "-o",
    "--output",
    type=click.Path(path_type=Path),
    help="A folder for CSV (one file per table), a file for JSON "
    "(default: standard output for JSON, ./masstrail-export for CSV); for ORD, the dataset "
    "file: .pb, .pb.gz, .pbtxt or .json.",
)
@click.option(
    "--creator",
    metavar='"NAME <EMAIL>"',
    help="For ORD: who creates the records (the standard requires a name and an email); "
    "default [ord] creator in masstrail.toml.",
)
@entry_filters
@jobs_option
def export(path: Path, fmt: str, output: Path | None, creator: str | None, author, group_,
           project, since, until, jobs: int) -> None:  # fmt: skip
    """Export entries, materials, gaps and metrics under PATH as tables (CSV or JSON), or the
    entries as an Open Reaction Database dataset (ORD).

    The entries are scanned first, so the export is current. CSV cells that a
    spreadsheet would run as formulas are neutralised. The filters apply to ORD.
    """
    if fmt == "ord":
        _export_ord(path, output, creator, gap_filter(author, group_, project, since, until))
        return
    from capture.scan import default_jobs
    from capture.views.export import TABLES, export_csv, export_json, export_notebook

    conn = export_notebook(open_notebook(path), jobs=jobs or default_jobs())
    if fmt == "json":
        text = export_json(conn)
        if output:
            output.write_text(text, encoding="utf-8")
            click.echo(f"wrote {output}", err=True)
        else:
            click.echo(text, nl=False)
        return
    written = export_csv(conn, output or Path("masstrail-export"))
    click.echo(f"wrote {', '.join(str(p) for p in written)} ({', '.join(TABLES)})")


def _export_ord(path: Path, output: Path | None, creator: str | None, flt) -> None:
    import re

    from capture.cli.common import fail
    from capture.interop.ord_out import OrdUnavailable, export_ord

    nb = open_notebook(path)
    if output is None or not re.search(r"\.(pb|pb\.gz|pbtxt|json)$", output.name):
        fail("--format ord needs -o FILE ending in .pb, .pb.gz, .pbtxt or .json")
    who = re.fullmatch(
        r"\s*(.+?)\s*<\s*([^<>@\s]+@[^<>\s]+)\s*>\s*", creator or nb.config.ord.creator or ""
    )
    if who is None:
        fail('an ORD record must say who created it, with an email: pass --creator "Ada '
             'Chemist <ada@example.org>" or set [ord] creator in masstrail.toml')  # fmt: skip
    try:
        done = export_ord(nb, output, (who.group(1), who.group(2)), flt)
    except OrdUnavailable as exc:
        fail(str(exc))
    click.echo(f"wrote {output}: {done.written} reaction(s); {len(done.skipped)} entr"
               f"{'y' if len(done.skipped) == 1 else 'ies'} left out")  # fmt: skip
    for rel, why in done.skipped:
        click.echo(f"  {rel}: {why}")
