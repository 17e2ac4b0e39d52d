"""``masstrail scan PATH``: every entry's results, and a table of what needs action."""

from __future__ import annotations

import itertools
import json
import sys
from pathlib import Path

import click

from capture.cli.common import (
    EXIT_FINDINGS,
    TABLE_ROWS,
    cli,
    console,
    esc,
    jobs_option,
    num,
    open_notebook,
)


@cli.command()
@click.argument("path", type=click.Path(exists=True, file_okay=False, path_type=Path))
@click.option(
    "--json", "as_json", is_flag=True, help="Print one JSON object per entry instead of a table."
)
@click.option(
    "--fail-on",
    type=click.Choice(["blocking", "major"]),
    help="Exit 1 when a gap of this severity (or worse) is found; for scheduled checks.",
)
@click.option(
    "--recompute",
    is_flag=True,
    help="Compute every entry again, even those unchanged since the last scan.",
)
@jobs_option
def scan(path: Path, as_json: bool, fail_on: str | None, recompute: bool, jobs: int) -> None:
    """Process every entry under PATH and write NAME.waste.json next to each.

    Entries unchanged since the last scan (the same text, balance logs, lab
    config and masstrail version, as the store remembers them) are not computed
    again. Prints a summary table: product mass, E-factor, PMI and the record
    gaps of each entry (above 200 entries, only those with a blocking gap or an
    error). Exits 0 when the scan completed, whatever it found.
    """
    from capture.scan import default_jobs
    from capture.scan import scan as run_scan

    nb = open_notebook(path)
    bar = _progress_bar(nb) if not as_json and sys.stderr.isatty() else None
    try:
        report = run_scan(nb, progress=bar.step if bar else None, reuse=not recompute,
                          keep=False, jobs=jobs or default_jobs())  # fmt: skip
    finally:
        if bar is not None:
            bar.stop()
    if report.unnamed:
        from capture.notebook import unnamed_message

        click.echo(f"masstrail: {unnamed_message(report.unnamed)}", err=True)
    if as_json:
        _print_json(nb, report)
        if report.basis_note():
            click.echo(report.basis_note(), err=True)
    else:
        _print_table(path, report)
    if fail_on:
        worst = report.count("blocking") + (report.count("major") if fail_on == "major" else 0)
        if worst:
            sys.exit(EXIT_FINDINGS)


def bar_total(nb) -> int:
    """How many entries a scan's progress bar expects: as many as the last writing scan saw
    (no walk), else a walk of the notebook that only counts them."""
    from capture.fingerprint import read_basis

    known = read_basis(nb.root).entries
    return known if known else sum(len(names) for _, names in nb.folders())


class _Bar:
    """A transient progress bar on the terminal; its total grows when the notebook has grown
    since the last scan."""

    def __init__(self, total: int) -> None:
        from rich.progress import Progress

        self.progress = Progress(transient=True)
        self.task = self.progress.add_task("scanning", total=total)
        self.progress.start()

    def stop(self) -> None:
        self.progress.stop()

    def step(self, *_) -> None:
        self.progress.advance(self.task)
        task = self.progress.tasks[0]
        if task.total is not None and task.completed >= task.total:
            self.progress.update(self.task, total=task.completed + 1)


def _progress_bar(nb) -> _Bar | None:
    """A progress bar for a scan of more than 50 entries, else None."""
    total = bar_total(nb)
    return _Bar(total) if total > 50 else None


def _print_json(nb, report) -> None:
    from capture.paths import sidecar_path
    from capture.safeio import read_small

    for s in report.summaries:
        side = sidecar_path(nb.root / s.path)
        try:  # the full metrics are in the sidecar, just written or still current
            metrics = json.loads(read_small(side) or "").get("metrics")
        except ValueError:
            metrics = None
        click.echo(json.dumps({
            "entry": s.path,
            "status": s.status,
            "error": {"message": s.error, "location": s.location} if s.error else None,
            "sidecar": side.relative_to(nb.root).as_posix(),
            "product_g": s.product_g,
            "metrics": metrics,
            "gaps": {"blocking": s.blocking, "major": s.major, "minor": s.minor},
            "recomputed": s.recomputed,
        }, sort_keys=True))  # fmt: skip


def _print_table(path: Path, report) -> None:
    from rich.table import Table

    from capture.run import CAUTION

    out = console()
    rows = report.summaries
    title = f"masstrail scan of {path}"
    if len(rows) > TABLE_ROWS:  # one pass: count them, keep the first TABLE_ROWS
        flagged = (s for s in rows if s.status == "error" or s.blocking)
        rows = list(itertools.islice(flagged, TABLE_ROWS))
        k = len(rows) + sum(1 for _ in flagged)
        title += f": the {k} entries with a blocking gap or an error"
        if k > TABLE_ROWS:
            title += f" (the first {TABLE_ROWS} shown; masstrail gaps lists them all)"
    table = Table(title=title, title_justify="left")
    table.add_column("entry", overflow="fold",
                     min_width=min(24, max([len(s.path) for s in rows] or [5])))  # fmt: skip
    for col in ("product g", "E-factor", "PMI"):
        table.add_column(col, justify="right", no_wrap=True)
    table.add_column("record gaps")
    for s in rows:
        if s.status == "error":
            table.add_row(esc(s.path), "", "", "", "[red]could not be read[/red]")
            continue
        counts = [("blocking", s.blocking), ("major", s.major), ("minor", s.minor)]
        gaps = ", ".join(f"{n} {sev}" for sev, n in counts if n) or "none"
        if s.blocking:
            gaps = f"[red]{gaps}[/red]"
        table.add_row(esc(s.path), num(s.product_g, ".4g"), num(s.e_factor), num(s.pmi), gaps)
    out.print(table)
    n = len(report.summaries)
    unchanged = n - report.recomputed
    out.print(
        f"{n} entr{'y' if n == 1 else 'ies'}"
        + (f" ({unchanged} unchanged since the last scan)" if unchanged else "")
        + f", {len(report.written)} result file(s) written, "
        f"{report.error_count} could not be read. Details: masstrail show ENTRY"
        + ("; every entry: masstrail report or masstrail export." if len(rows) < n else ".")
    )
    errors = (s for s in report.summaries if s.status == "error")
    for s in itertools.islice(errors, TABLE_ROWS):
        where = f" ({s.location})" if s.location else ""
        out.print(f"[red]{esc(s.path + where)}:[/red] {esc(s.error or '')}")
    if report.basis_note():
        out.print(f"[yellow]{esc(report.basis_note())}[/yellow]")
    out.print(f"[dim]{esc(CAUTION)}[/dim]")
