"""``masstrail gaps PATH`` and ``masstrail audit PATH``: what the records lack."""

from __future__ import annotations

import json
import sys
from pathlib import Path

import click

from capture.cli.common import (
    EXIT_FINDINGS,
    TABLE_ROWS,
    cli,
    console,
    entry_filters,
    esc,
    fail,
    gap_filter,
    num,
    open_notebook,
    percent,
)
from capture.cli.shared import (
    needs_path_or_store,
    shared_results,
    store_gap_rows,
    store_options,
)


@cli.command()
@click.argument("path", required=False, type=click.Path(exists=True, file_okay=False,
                                                        path_type=Path))  # fmt: skip
@entry_filters
@store_options
@click.option(
    "--severity",
    type=click.Choice(["blocking", "major", "minor"]),
    default="minor",
    show_default=True,
    help="Show gaps of this severity or worse.",
)
@click.option(
    "--by",
    type=click.Choice(["author", "group", "project"]),
    help="Count gaps per author, group or project.",
)
@click.option("--json", "as_json", is_flag=True, help="Print JSON instead of a table.")
@click.option(
    "--late",
    is_flag=True,
    help="Also flag amounts first recorded long after the experiment date "
    "(the store's history; [store] late_record_days).",
)
@click.option(
    "--csv",
    "csv_file",
    type=click.Path(dir_okay=False, allow_dash=True),
    help="Write the gaps as CSV to FILE ('-' for standard output).",
)
def gaps(path, author, group_, project, since, until, store_url, notebook_name, severity, by,
         as_json, late, csv_file):  # fmt: skip
    """List the entries under PATH (or in the shared store) that lack records, with what is
    missing.

    Exits 1 when any blocking gap is listed, so a scheduled job can alert.
    Nothing is written next to the entries.
    """
    from capture.views.gaplist import gap_list, gap_rows, rows_to_csv, summarise

    needs_path_or_store(path, store_url)
    flt = gap_filter(author, group_, project, since, until, severity)
    if store_url:
        if late:
            fail("--late reads a notebook's own store: give its folder instead of --store")
        from capture.store.address import shown

        if by:
            results = list(shared_results(store_url, notebook_name))
            rows = gap_rows(results, flt)
        else:  # from the tables: no result is parsed
            rows = store_gap_rows(store_url, notebook_name, flt)
        path = shown(store_url)
    else:
        rows, results = gap_list(open_notebook(path), flt, late=late)
    if csv_file:
        text = rows_to_csv(rows)
        if csv_file == "-":
            click.echo(text, nl=False)
        else:
            Path(csv_file).write_text(text, encoding="utf-8")
    if by:
        summary = summarise(results, flt, by)
        if as_json:
            click.echo(json.dumps([s.model_dump() for s in summary], indent=2))
        elif csv_file != "-":
            _print_summary(by, summary)
    elif as_json:
        _echo_json(rows)
    elif csv_file != "-":
        _print_rows(path, rows)
    if any(r.severity == "blocking" for r in rows):
        sys.exit(EXIT_FINDINGS)


def _echo_json(rows) -> None:
    """The rows as a JSON list (as ``json.dumps(list, indent=2)`` writes it), one row at a
    time: a department's hundreds of thousands of gaps are never one string in memory."""
    if not rows:
        click.echo("[]")
        return
    last = len(rows) - 1
    click.echo("[")
    for i, r in enumerate(rows):
        text = json.dumps(r.model_dump(), indent=2).replace("\n", "\n  ")
        click.echo(f"  {text}{',' if i < last else ''}")
    click.echo("]")


def _print_summary(by: str, summary) -> None:
    from rich.table import Table

    t = Table(title=f"record gaps by {by}", title_justify="left")
    for col in (by, "entries", "with gaps", "blocking", "major", "minor", "allowance g"):
        t.add_column(col, justify="left" if col == by else "right")
    for s in summary:
        t.add_row(esc(s.key), str(s.entries), str(s.entries_with_gaps), str(s.blocking),
                  str(s.major), str(s.minor), num(s.allowance_g, ".4g"))  # fmt: skip
    console().print(t)


def _print_rows(path: Path, rows) -> None:
    from rich.table import Table

    from capture.run import CAUTION

    title = f"record gaps under {path}"
    if len(rows) > TABLE_ROWS:
        title += (f" (the first {TABLE_ROWS} of {len(rows)} shown: --csv FILE or --json for "
                  "all, --by group to count them)")  # fmt: skip
    t = Table(title=title, title_justify="left")
    for col in ("entry", "author", "severity", "missing", "about", "what to do"):
        t.add_column(col, overflow="fold", justify="right" if col == "about" else "left")
    for r in rows[:TABLE_ROWS]:
        t.add_row(esc(r.entry), esc(r.author or "—"), r.severity, esc(f"{r.item} ({r.kind})"),
                  f"{num(r.allowance_g, '.3g')} g" if r.allowance_g else "?",
                  esc(r.message))  # fmt: skip
    out = console()
    out.print(t)
    entries = len({r.entry for r in rows})
    out.print(f"{len(rows)} gap(s) in {entries} entr{'y' if entries == 1 else 'ies'}. "
              "'about' is an estimate of the missing mass, not a record.")  # fmt: skip
    out.print(f"[dim]{esc(CAUTION)}[/dim]")


@cli.command()
@click.argument("path", required=False, type=click.Path(exists=True, file_okay=False,
                                                        path_type=Path))  # fmt: skip
@click.option("--group", "group_", required=True, help="The group (front-matter 'group') to audit.")
@store_options
@click.option(
    "--markdown",
    "markdown_file",
    type=click.Path(dir_okay=False),
    help="Also write the audit as a Markdown handout to FILE.",
)
def audit(path, group_, store_url, notebook_name, markdown_file):
    """Audit the records of one group: a checklist per entry, completeness, what to record next.

    For teaching labs: each entry shows the operations found with ✓ recorded or
    ✗ missing, its completeness (recorded mass ÷ recorded + estimated missing
    mass), and the three records most worth taking next time.
    """
    from capture.run import CAUTION
    from capture.views.audit import audit, audit_markdown, audit_notebook

    needs_path_or_store(path, store_url)
    if store_url:
        from capture.store.address import shown

        report = audit(shared_results(store_url, notebook_name), group_)
        path = shown(store_url)
    else:
        report = audit_notebook(open_notebook(path), group_)
    if not report.entries:
        known = ", ".join(repr(g) for g in report.groups) or "none (no entry names a group)"
        fail(f"no entries of group {group_!r} under {path}; the groups there are: {known}")
    out = console()
    med = report.median_completeness
    out.print(f"[bold]Record audit: {esc(report.group)}[/bold] — {len(report.entries)} entries, "
              f"median completeness {percent(med)}")  # fmt: skip
    for e in report.entries:
        heading = f"[bold]{esc(e.title or e.entry)}[/bold] ({esc(e.entry)})"
        out.print(f"\n{heading}, completeness {percent(e.completeness)}")
        for c in e.checklist:
            mark = "[green]✓[/green]" if c.recorded else "[red]✗[/red]"
            out.print(f"  {mark} {esc(c.operation)}: {esc(c.needs)} — {esc(c.item)}")
        for n, line in enumerate(e.next_time, 1):
            out.print(f"  next time {n}. {esc(line)}")
    if report.most_missed:
        out.print("\nMost often missing: "
                  + "; ".join(f"{esc(w)} ({n})" for w, n in report.most_missed))  # fmt: skip
    if markdown_file:
        Path(markdown_file).write_text(audit_markdown(report, CAUTION), encoding="utf-8")
        out.print(f"Markdown handout written to {esc(markdown_file)}")
    out.print(f"[dim]{esc(CAUTION)}[/dim]")
