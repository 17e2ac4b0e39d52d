"""``masstrail report PATH -o FILE.html`` and ``masstrail export PATH``: the lab's figures."""

from __future__ import annotations

from pathlib import Path

import click

from capture.cli.common import cli, entry_filters, fail, gap_filter, jobs_option, open_notebook
from capture.cli.shared import needs_path_or_store, store_options


@cli.command()
@click.argument("path", required=False, type=click.Path(exists=True, file_okay=False,
                                                        path_type=Path))  # fmt: skip
@click.option(
    "-o",
    "--output",
    type=click.Path(dir_okay=False, path_type=Path),
    required=True,
    help="The HTML file to write.",
)
@entry_filters
@store_options
@click.option(
    "--cards",
    type=click.IntRange(min=0),
    default=100,
    show_default=True,
    help="At most this many entry cards; beyond it, those with the most serious gaps.",
)
@jobs_option
def report(path, output, author, group_, project, since, until, store_url, notebook_name, cards,
           jobs):  # fmt: skip
    """Write the lab's report for PATH as one self-contained HTML file.

    The lab overview (median E-factor and PMI by group, project and month; waste
    by stream; the largest contributors), gaps by author and group, and a card
    per entry with its waste breakdown (up to --cards of them). Entries changed
    since the last scan are computed first. Opens in a browser with no network.
    """
    from capture.scan import default_jobs
    from capture.store import StoreError
    from capture.store.address import shown
    from capture.views.report import lab_report, shared_report

    needs_path_or_store(path, store_url)
    flt = gap_filter(author, group_, project, since, until)
    if store_url:
        try:
            title = f"masstrail report: {shown(store_url)}"
            html, n = shared_report(store_url, notebook_name, flt, title, cards=cards)
        except StoreError as exc:
            fail(str(exc))
    else:
        html, n = lab_report(open_notebook(path), flt, f"masstrail report: {path}", cards=cards,
                             jobs=jobs or default_jobs())  # fmt: skip
    output.write_text(html, encoding="utf-8")
    click.echo(f"wrote {output} ({n} entries)")


@cli.command()
@click.argument("path", required=False, type=click.Path(exists=True, file_okay=False,
                                                        path_type=Path))  # fmt: skip
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
@store_options
@jobs_option
def export(path: Path, fmt: str, output: Path | None, creator: str | None, author, group_,
           project, since, until, store_url, notebook_name, jobs: int) -> None:  # fmt: skip
    """Export entries, materials, gaps and metrics under PATH as tables (CSV or JSON), or the
    entries as an Open Reaction Database dataset (ORD).

    The entries are scanned first, so the export is current. CSV cells that a
    spreadsheet would run as formulas are neutralised. The filters apply to ORD.
    """
    needs_path_or_store(path, store_url)
    if store_url:
        _export_shared(store_url, notebook_name, fmt, output)
        return
    if fmt == "ord":
        _export_ord(path, output, creator, gap_filter(author, group_, project, since, until))
        return
    from capture.scan import default_jobs
    from capture.views.export import TABLES, export_notebook, table_rows

    conn = export_notebook(open_notebook(path), jobs=jobs or default_jobs())
    _write_tables({table: table_rows(conn, table) for table in TABLES}, fmt, output)


def _write_tables(tables: dict, fmt: str, output: Path | None) -> None:
    """The tables as one JSON (to FILE or standard output) or a CSV file each in a folder."""
    from capture.views.export import tables_csv, tables_json

    if fmt == "json":
        text = tables_json(tables)
        if output:
            output.write_text(text, encoding="utf-8")
            click.echo(f"wrote {output}", err=True)
        else:
            click.echo(text, nl=False)
        return
    written = tables_csv(tables, output or Path("masstrail-export"))
    click.echo(f"wrote {', '.join(str(p) for p in written)} ({', '.join(tables)})")


def _export_shared(url: str, notebook: str | None, fmt: str, output: Path | None) -> None:
    from capture.store import StoreError
    from capture.views.export import shared_tables

    if fmt == "ord":
        fail("--format ord exports a notebook's entries: give its folder instead of --store")
    try:
        tables = shared_tables(url, notebook)
    except StoreError as exc:
        fail(str(exc))
    _write_tables(tables, fmt, output)


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
