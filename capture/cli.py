"""The ``masstrail`` command: a thin layer over :mod:`capture.pipeline`.

Each command parses its arguments, calls the library, and turns a domain error
into a message and an exit code: 0 when the job ran (gaps are findings, not
failures), 1 when ``--fail-on`` found such gaps, 2 for usage or configuration
errors. Heavy imports happen inside the commands so that ``--help`` is quick.
"""

from __future__ import annotations

import json
import os
import sys
from pathlib import Path

import click

from capture import __version__

EXIT_FINDINGS = 1
EXIT_USAGE = 2


def _fail(message: str) -> None:
    click.echo(f"masstrail: {message}", err=True)
    sys.exit(EXIT_USAGE)


def _open_notebook(path: Path):
    from capture.config import ConfigError
    from capture.pipeline import Notebook
    from capture.plugin_manager import PluginError

    try:
        return Notebook.open(path)
    except ConfigError as exc:
        _fail(f"configuration error:\n{exc}")
    except PluginError as exc:
        _fail(str(exc))


def _num(x: float | None, spec: str = ".3g") -> str:
    if x is None:
        return "—"
    if abs(x) >= 1000:
        return f"{x:,.0f}"  # 16,043 g, not 1.6e+04 g
    return format(x, spec)


def _e(text: str) -> str:
    """Text from entries and plugins, escaped so rich shows [brackets] as written."""
    from rich.markup import escape

    return escape(text)


def _console():
    from rich.console import Console

    return Console(highlight=False)


def _find_root(entry: Path) -> Path:
    """The nearest folder above ``entry`` that holds a masstrail.toml, else the entry's folder."""
    from capture.config import CONFIG_NAME

    for folder in [entry.parent, *entry.parent.parents]:
        if (folder / CONFIG_NAME).is_file():
            return folder
    return entry.parent


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="masstrail")
def cli() -> None:
    """masstrail: waste records and mass metrics (E-factor, PMI) next to each notebook entry."""


def _entry_filters(fn):
    """The entry filters that gaps and report share: --author, --group, --project, --since,
    --until."""
    for option in reversed((
        click.option("--author", help="Only entries by this author."),
        click.option("--group", "group_", help="Only entries of this group."),
        click.option("--project", help="Only entries of this project."),
        click.option("--since", help="Only entries dated on or after YYYY-MM-DD."),
        click.option("--until", help="Only entries dated on or before YYYY-MM-DD."),
    )):  # fmt: skip
        fn = option(fn)
    return fn


TABLE_ROWS = 200  # above this many entries, the scan table lists only those needing action


def default_jobs() -> int:
    """Workers for ``--jobs 0``: one per core and one more, at most 8. A worker waits for
    its file and store writes part of the time; on 2 cores, 3 workers scanned 20,000
    generated entries about 3 % faster than 2 (two interleaved runs each)."""
    return min((os.cpu_count() or 1) + 1, 8)


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
@click.option(
    "--jobs",
    type=click.IntRange(min=0),
    default=0,
    show_default=True,
    help="Worker processes for the computing (0: one per core and one more, as each waits "
    "for its writes part of the time; at most 8; 1: none). The results are the same either way.",
)
def scan(path: Path, as_json: bool, fail_on: str | None, recompute: bool, jobs: int) -> None:
    """Process every entry under PATH and write NAME.waste.json next to each.

    Entries unchanged since the last scan (the same text, balance logs, lab
    config and masstrail version, as the store remembers them) are not computed
    again. Prints a summary table: product mass, E-factor, PMI and the record
    gaps of each entry (above 200 entries, only those with a blocking gap or an
    error). Exits 0 when the scan completed, whatever it found.
    """
    from capture.paths import sidecar_path
    from capture.pipeline import CAUTION
    from capture.pipeline import scan as run_scan

    nb = _open_notebook(path)
    files = nb.entry_files()
    progress = None
    bar = None
    if not as_json and len(files) > 50 and sys.stderr.isatty():
        from rich.progress import Progress

        bar = Progress(transient=True)
        task = bar.add_task("scanning", total=len(files))
        bar.start()

        def progress(_path: Path) -> None:
            bar.advance(task)

    try:
        report = run_scan(nb, progress=progress, files=files, reuse=not recompute, keep=False,
                          jobs=jobs or default_jobs())  # fmt: skip
    finally:
        if bar is not None:
            bar.stop()

    if as_json:
        for s in report.summaries:
            side = sidecar_path(nb.root / s.path)
            try:  # the full metrics are in the sidecar, just written or still current
                metrics = json.loads(side.read_text(encoding="utf-8")).get("metrics")
            except (OSError, ValueError):
                metrics = None
            out = {
                "entry": s.path,
                "status": s.status,
                "error": {"message": s.error, "location": s.location} if s.error else None,
                "sidecar": side.relative_to(nb.root).as_posix(),
                "product_g": s.product_g,
                "metrics": metrics,
                "gaps": {"blocking": s.blocking, "major": s.major, "minor": s.minor},
                "recomputed": s.recomputed,
            }
            click.echo(json.dumps(out, sort_keys=True))
    else:
        from rich.table import Table

        console = _console()
        rows = report.summaries
        title = f"masstrail scan of {path}"
        if len(rows) > TABLE_ROWS:
            rows = [s for s in rows if s.status == "error" or s.blocking]
            title += f": the {len(rows)} entries with a blocking gap or an error"
            if len(rows) > TABLE_ROWS:
                title += f" (the first {TABLE_ROWS} shown; masstrail gaps lists them all)"
                rows = rows[:TABLE_ROWS]
        table = Table(title=title, title_justify="left")
        table.add_column("entry", overflow="fold", min_width=min(24, max(
            [len(s.path) for s in rows] or [5])))  # fmt: skip
        for col in ("product g", "E-factor", "PMI"):
            table.add_column(col, justify="right", no_wrap=True)
        table.add_column("record gaps")
        for s in rows:
            if s.status == "error":
                table.add_row(_e(s.path), "", "", "", "[red]could not be read[/red]")
                continue
            counts = [("blocking", s.blocking), ("major", s.major), ("minor", s.minor)]
            gaps = ", ".join(f"{n} {sev}" for sev, n in counts if n) or "none"
            if s.blocking:
                gaps = f"[red]{gaps}[/red]"
            table.add_row(_e(s.path), _num(s.product_g, ".4g"), _num(s.e_factor), _num(s.pmi), gaps)
        console.print(table)
        n = len(report.summaries)
        unchanged = n - report.recomputed
        console.print(
            f"{n} entr{'y' if n == 1 else 'ies'}"
            + (f" ({unchanged} unchanged since the last scan)" if unchanged else "")
            + f", {len(report.written)} result file(s) written, "
            f"{len(report.errors)} could not be read. Details: masstrail show ENTRY"
            + ("; every entry: masstrail report or masstrail export." if len(rows) < n else ".")
        )
        for s in report.errors[:TABLE_ROWS]:
            where = f" ({s.location})" if s.location else ""
            console.print(f"[red]{_e(s.path + where)}:[/red] {_e(s.error or '')}")
        console.print(f"[dim]{_e(CAUTION)}[/dim]")

    if fail_on:
        worst = report.count("blocking") + (report.count("major") if fail_on == "major" else 0)
        if worst:
            sys.exit(EXIT_FINDINGS)


@cli.command()
@click.argument("entry", type=click.Path(exists=True, dir_okay=False, path_type=Path))
@click.option("--json", "as_json", is_flag=True, help="Print the full result as JSON.")
def show(entry: Path, as_json: bool) -> None:
    """Show one entry: materials with masses and their basis, gaps and metrics.

    The notebook root is the nearest folder above ENTRY that holds a
    masstrail.toml, else the entry's own folder. Nothing is written.
    """
    from rich.table import Table

    nb = _open_notebook(_find_root(entry.resolve()))
    r = nb.process(entry.resolve(), write=False)
    if as_json:
        click.echo(r.sidecar_json(), nl=False)
        return
    console = _console()
    title = r.meta.get("title") or r.entry.id
    console.print(f"[bold]{_e(title)}[/bold]  ({_e(r.entry.path)})")
    if r.status == "error":
        where = f" ({r.error.location})" if r.error.location else ""
        console.print(f"[red]This entry could not be read{_e(where)}:[/red] {_e(r.error.message)}")
        console.print(f"[dim]{_e(r.caution)}[/dim]")
        return
    console.print(f"Product: {_e(r.product.name or '—')}, {_num(r.product.mass_g, '.4g')} g"
                  + (f"  [dim]({_e(r.product.basis)})[/dim]"
                     if r.product.basis else ""))  # fmt: skip
    t = Table(title="Materials", title_justify="left")
    for col in ("material", "stage", "stated", "mass g", "basis"):
        t.add_column(col, overflow="fold", justify="right" if col == "mass g" else "left")
    for m in r.materials:
        t.add_row(
            _e(m.name)
            + (
                f" [dim]= {_e(m.resolved)}[/dim]"
                if m.resolved and m.resolved.casefold() != m.name.casefold()
                else ""
            ),
            m.stage or "—",
            _e(m.stated or "—"),
            _num(m.mass_g, ".4g"),
            _e(m.basis) if m.basis else f"[yellow]{_e(m.problem or '')}[/yellow]",
        )
    console.print(t)
    for rec in r.recovered:
        console.print(
            f"Recovered: {_e(rec.name)}, {_num(rec.mass_g, '.4g')} g "
            f"({_e(rec.basis or rec.problem or '')})"
        )
    if r.gaps:
        console.print("[bold]Missing or doubtful records[/bold]")
        colour = {"blocking": "red", "major": "yellow", "minor": "dim"}
        for g in r.gaps:
            c = colour[g.severity]
            size = f" [dim](about {_num(g.allowance_g)} g, assumed)[/dim]" if g.allowance_g else ""
            console.print(f"  [{c}]{g.severity}[/{c}] {_e(g.item)}: {_e(g.message)}{size}")
    else:
        console.print("No record gaps found.")
    m = r.metrics
    console.print(
        f"E-factor {_num(m.e_factor)} (simple {_num(m.e_factor_simple)}, with allowances "
        f"{_num(m.e_factor_estimated)}), PMI {_num(m.pmi)}, completeness "
        f"{_num(m.completeness * 100 if m.completeness is not None else None, '.1f')}%"
    )
    if r.totals:
        console.print(
            f"Inputs {_num(r.totals.inputs_g, '.4g')} g (water {_num(r.totals.water_g, '.4g')} g), "
            f"recovered {_num(r.totals.recovered_g, '.4g')} g, "
            f"waste {_num(r.totals.waste_g, '.4g')} g"
        )
    if m.atom_economy is not None or m.yield_ is not None:
        console.print(
            f"Atom economy {_num(m.atom_economy)}, yield {_num(m.yield_)} (theoretical "
            f"{_num(m.theoretical_yield_g, '.4g')} g), RME {_num(m.rme)}, carbon efficiency "
            f"{_num(m.carbon_efficiency)}"
        )
    for key in ("equation", "rme_factors"):
        if key in r.context:
            console.print(f"[dim]{_e(r.context[key])}[/dim]")
    if r.waste and r.waste.streams:
        streams = ", ".join(f"{k} {_num(v, '.4g')} g" for k, v in r.waste.streams.items() if v)
        console.print(f"Waste by stream: {_e(streams)}")
        if r.waste.summary:
            console.print(f"Solvent ranks: {_e(r.waste.summary)}")
        if m.hazard_weighted_e is not None:
            console.print(
                f"Hazard-weighted E-factor {_num(m.hazard_weighted_e)} [dim](rank weights are "
                "masstrail's convention; a screening aid, not a risk assessment)[/dim]"
            )
    for key in ("mass_balance", "lower_bound"):
        if key in r.context:
            console.print(f"[yellow]{_e(r.context[key])}[/yellow]")
    if r.breakdown and r.breakdown.largest:
        console.print(f"Largest input: {_e(r.breakdown.largest)}")
    if "sector" in r.context:
        console.print(f"[dim]{_e(r.context['sector'])}[/dim]")
    console.print(f"[dim]{_e(r.caution)}[/dim]")


@cli.command()
@click.option("--json", "as_json", is_flag=True, help="Print the list as JSON.")
def plugins(as_json: bool) -> None:
    """List the loaded plugins and the hooks each one implements."""
    from capture.plugin_manager import PluginError, describe_plugins, get_plugin_manager

    try:
        rows = describe_plugins(get_plugin_manager())
    except PluginError as exc:
        _fail(str(exc))
    if as_json:
        click.echo(json.dumps(rows, indent=2))
        return
    from rich.table import Table

    t = Table(title="masstrail plugins", title_justify="left")
    for col in ("name", "module", "from", "hooks"):
        t.add_column(col, overflow="fold")
    for row in rows:
        t.add_row(
            _e(str(row["name"])),
            _e(str(row["module"])),
            "built-in" if row["builtin"] else _e(str(row["distribution"] or "registered")),
            "\n".join(row["hooks"]),
        )
    _console().print(t)


@cli.command()
def schema() -> None:
    """Print the JSON Schema of the result sidecar NAME.waste.json."""
    from capture.schema import result_schema_text

    click.echo(result_schema_text(), nl=False)


def _date(value: str | None, option: str):
    import datetime as dt

    if value is None:
        return None
    try:
        return dt.date.fromisoformat(value)
    except ValueError:
        raise click.BadParameter(
            f"{value!r} is not a date; write YYYY-MM-DD", param_hint=option
        ) from None


@cli.command()
@click.argument("path", type=click.Path(exists=True, file_okay=False, path_type=Path))
@_entry_filters
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
def gaps(path, author, group_, project, since, until, severity, by, as_json, late, csv_file):
    """List the entries under PATH that lack records, with what is missing.

    Exits 1 when any blocking gap is listed, so a scheduled job can alert.
    Nothing is written next to the entries.
    """
    from capture.pipeline import CAUTION
    from capture.pipeline import scan as run_scan
    from capture.reports import GapFilter, gap_rows, rows_to_csv, summarise

    flt = GapFilter(author=author, group=group_, project=project, severity=severity,
                    since=_date(since, "--since"), until=_date(until, "--until"))  # fmt: skip
    nb = _open_notebook(path)
    results = run_scan(nb, write=late).results  # --late brings the store's history up to date
    rows = gap_rows(results, flt)
    if late:
        from capture.reports import GapRow
        from capture.store import connect, late_records, store_path

        conn = connect(store_path(nb.root, nb.config.store.path)[0])
        kept = {r.entry.path: r for r in results if flt.keeps(r)}
        for x in late_records(conn, nb.config.store.late_record_days):
            r = kept.get(x["entry"])
            if r is None:
                continue
            rows.append(GapRow(
                entry=x["entry"], id=r.entry.id, author=r.meta.get("author"),
                group=r.meta.get("group"), project=r.meta.get("project"), date=x["experiment"],
                severity="minor", kind="late_record", item=x["what"], allowance_g=None,
                message=f"first recorded on {x['first_recorded']}, {x['days_after']} days after "
                "the experiment; records should be made at the time (ALCOA+)",
            ))  # fmt: skip
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
            from rich.table import Table

            t = Table(title=f"record gaps by {by}", title_justify="left")
            for col in (by, "entries", "with gaps", "blocking", "major", "minor", "allowance g"):
                t.add_column(col, justify="left" if col == by else "right")
            for s in summary:
                t.add_row(_e(s.key), str(s.entries), str(s.entries_with_gaps), str(s.blocking),
                          str(s.major), str(s.minor), _num(s.allowance_g, ".4g"))  # fmt: skip
            _console().print(t)
    elif as_json:
        click.echo(json.dumps([r.model_dump() for r in rows], indent=2))
    elif csv_file != "-":
        from rich.table import Table

        t = Table(title=f"record gaps under {path}", title_justify="left")
        for col in ("entry", "author", "severity", "missing", "about", "what to do"):
            t.add_column(col, overflow="fold", justify="right" if col == "about" else "left")
        for r in rows:
            t.add_row(_e(r.entry), _e(r.author or "—"), r.severity, _e(f"{r.item} ({r.kind})"),
                      f"{_num(r.allowance_g, '.3g')} g" if r.allowance_g else "?",
                      _e(r.message))  # fmt: skip
        console = _console()
        console.print(t)
        entries = len({r.entry for r in rows})
        console.print(f"{len(rows)} gap(s) in {entries} entr{'y' if entries == 1 else 'ies'}. "
                      "'about' is an estimate of the missing mass, not a record.")  # fmt: skip
        console.print(f"[dim]{_e(CAUTION)}[/dim]")
    if any(r.severity == "blocking" for r in rows):
        sys.exit(EXIT_FINDINGS)


@cli.command()
@click.argument("path", type=click.Path(exists=True, file_okay=False, path_type=Path))
@click.option("--group", "group_", required=True, help="The group (front-matter 'group') to audit.")
@click.option(
    "--markdown",
    "markdown_file",
    type=click.Path(dir_okay=False),
    help="Also write the audit as a Markdown handout to FILE.",
)
def audit(path, group_, markdown_file):
    """Audit the records of one group: a checklist per entry, completeness, what to record next.

    For teaching labs: each entry shows the operations found with ✓ recorded or
    ✗ missing, its completeness (recorded mass ÷ recorded + estimated missing
    mass), and the three records most worth taking next time.
    """
    from capture.pipeline import CAUTION
    from capture.pipeline import scan as run_scan
    from capture.reports import audit as make_audit
    from capture.reports import audit_markdown

    nb = _open_notebook(path)
    report = make_audit(run_scan(nb, write=False).results, group_)
    if not report.entries:
        _fail(f"no entries of group {group_!r} under {path}")
    console = _console()
    med = report.median_completeness
    pct = _num(med * 100 if med is not None else None, ".1f")
    console.print(
        f"[bold]Record audit: {_e(report.group)}[/bold] — {len(report.entries)} entries, "
        f"median completeness {pct}%"
    )
    for e in report.entries:
        comp = _num(e.completeness * 100 if e.completeness is not None else None, ".1f")
        console.print(
            f"\n[bold]{_e(e.title or e.entry)}[/bold] ({_e(e.entry)}), completeness {comp}%"
        )
        for c in e.checklist:
            mark = "[green]✓[/green]" if c.recorded else "[red]✗[/red]"
            console.print(f"  {mark} {_e(c.operation)}: {_e(c.needs)} — {_e(c.item)}")
        for n, line in enumerate(e.next_time, 1):
            console.print(f"  next time {n}. {_e(line)}")
    if report.most_missed:
        console.print(
            "\nMost often missing: " + "; ".join(f"{_e(w)} ({n})" for w, n in report.most_missed)
        )
    if markdown_file:
        Path(markdown_file).write_text(audit_markdown(report, CAUTION), encoding="utf-8")
        console.print(f"Markdown handout written to {_e(markdown_file)}")
    console.print(f"[dim]{_e(CAUTION)}[/dim]")


@cli.command()
@click.argument("entry", type=click.Path(exists=True, dir_okay=False, path_type=Path))
@click.option("--json", "as_json", is_flag=True, help="Print the route as JSON.")
def route(entry: Path, as_json: bool) -> None:
    """The cumulative PMI and E-factor of the route that ends in ENTRY.

    Steps are the entries ENTRY uses (front matter 'uses', or a material named like
    another entry's product), linear or convergent, each weighted by the mass of its
    product needed per gram of the final product. Nothing is written.
    """
    from rich.table import Table

    from capture.pipeline import CAUTION
    from capture.pipeline import scan as run_scan
    from capture.routes import RouteError, build_route

    nb = _open_notebook(_find_root(entry.resolve()))
    results = run_scan(nb, write=False).results
    rel = nb.relpath(entry.resolve())
    final = next((r for r in results if r.entry.path == rel), None)
    if final is None or final.status != "ok":
        _fail(f"{entry} could not be read")
    try:
        rt = build_route(results, final.entry.id)
    except RouteError as exc:
        _fail(str(exc))
    if as_json:
        click.echo(rt.model_dump_json(indent=2))
        return
    t = Table(title=f"route to {final.entry.id}" + (" (convergent)" if rt.convergent else ""),
              title_justify="left")  # fmt: skip
    for col in ("step", "uses", "product g", "PMI", "E", "g per g final", "PMI share", "E share"):
        t.add_column(col, justify="left" if col in {"step", "uses"} else "right")
    for s in rt.steps:
        t.add_row(_e(s.id), _e(", ".join(s.uses) or "—"), _num(s.product_g, ".4g"), _num(s.pmi),
                  _num(s.e_factor), _num(s.scale, ".4g"), _num(s.pmi_contribution),
                  _num(s.e_contribution))  # fmt: skip
    console = _console()
    console.print(t)
    console.print(f"Route PMI {_num(rt.pmi)}, E-factor {_num(rt.e_factor)} (step figures added, "
                  "weighted by the mass each step's product contributes).")  # fmt: skip
    console.print(f"[dim]{_e(CAUTION)}[/dim]")


@cli.command()
@click.argument("path", type=click.Path(exists=True, file_okay=False, path_type=Path))
@click.option(
    "--poll", is_flag=True, help="Poll the folder instead of using file events (network shares)."
)
@click.option(
    "--settle",
    type=float,
    default=0.05,
    show_default=True,
    help="Seconds without a new event before an entry is read.",
)
@click.option(
    "--rescan",
    type=float,
    default=60.0,
    show_default=True,
    help="Seconds between full rescans that catch lost events.",
)
def watch(path: Path, poll: bool, settle: float, rescan: float) -> None:
    """Keep every entry's results under PATH current while chemists type.

    Catches up first (entries changed since the last run, by content hash), then
    follows file events; prints a line per recomputation and every new major or
    blocking gap. One watcher per notebook; Ctrl-C stops it.
    """
    from capture.watch import WatchError
    from capture.watch import watch as run_watch

    nb_root = path.resolve()
    _open_notebook(nb_root)  # configuration errors exit 2 before anything starts

    def echo(line: str) -> None:
        click.echo(line)

    try:
        run_watch(nb_root, settle=settle, rescan=rescan, poll=poll, echo=echo)
    except WatchError as exc:
        _fail(str(exc))


def _store(path: Path):
    from capture.store import connect, store_path

    nb = _open_notebook(path)
    db, message = store_path(nb.root, nb.config.store.path)
    if message:
        click.echo(f"masstrail: {message}", err=True)
    return nb, connect(db), db


@cli.command()
@click.argument("path", type=click.Path(exists=True, file_okay=False, path_type=Path))
def rebuild(path: Path) -> None:
    """Recreate the store's current tables from the entries under PATH.

    The notebook is the source of truth for current results; the history is kept
    and only grows. Sidecars are written as by scan.
    """
    from capture.pipeline import scan as run_scan
    from capture.store import rebuild as do_rebuild

    nb, conn, db = _store(path)
    nb.pm.set_blocked("store")  # the rebuild writes the store itself, in one transaction
    report = run_scan(nb)
    added = do_rebuild(conn, report.results, nb.config)
    click.echo(f"rebuilt {db}: {len(report.results)} entries; {added} new history row(s)")


@cli.command()
@click.argument("path", type=click.Path(exists=True, file_okay=False, path_type=Path))
@click.argument("file", type=click.Path(dir_okay=False, path_type=Path))
def backup(path: Path, file: Path) -> None:
    """Copy the store of PATH, history included, to FILE (safe while a watcher runs)."""
    from capture.store import StoreError
    from capture.store import backup as do_backup

    _nb, conn, db = _store(path)
    try:
        do_backup(conn, file)
    except StoreError as exc:
        _fail(str(exc))
    click.echo(f"copied {db} to {file}")


@cli.command()
@click.argument("path", type=click.Path(exists=True, file_okay=False, path_type=Path))
@click.option(
    "--format", "fmt", type=click.Choice(["csv", "json"]), default="csv", show_default=True
)
@click.option(
    "-o",
    "--output",
    type=click.Path(path_type=Path),
    help="A folder for CSV (one file per table), a file for JSON "
    "(default: standard output for JSON, ./masstrail-export for CSV).",
)
def export(path: Path, fmt: str, output: Path | None) -> None:
    """Export entries, materials, gaps and metrics under PATH as tables (CSV or JSON).

    The entries are scanned first, so the export is current. CSV cells that a
    spreadsheet would run as formulas are neutralised.
    """
    from capture.exports import TABLES, export_csv, export_json
    from capture.pipeline import scan as run_scan

    nb, conn, _db = _store(path)
    run_scan(nb, reuse=True, keep=False, jobs=default_jobs())  # bring the store up to date
    if fmt == "json":
        text = export_json(conn)
        if output:
            output.write_text(text, encoding="utf-8")
            click.echo(f"wrote {output}", err=True)
        else:
            click.echo(text, nl=False)
        return
    folder = output or Path("masstrail-export")
    written = export_csv(conn, folder)
    click.echo(f"wrote {', '.join(str(p) for p in written)} ({', '.join(TABLES)})")


@cli.command()
@click.argument("path", type=click.Path(exists=True, file_okay=False, path_type=Path))
@click.option(
    "-o",
    "--output",
    type=click.Path(dir_okay=False, path_type=Path),
    required=True,
    help="The HTML file to write.",
)
@_entry_filters
@click.option(
    "--cards",
    type=click.IntRange(min=0),
    default=100,
    show_default=True,
    help="At most this many entry cards; beyond it, those with the most serious gaps.",
)
def report(path, output, author, group_, project, since, until, cards):
    """Write the lab's report for PATH as one self-contained HTML file.

    The lab overview (median E-factor and PMI by group, project and month; waste
    by stream; the largest contributors), gaps by author and group, and a card
    per entry with its waste breakdown (up to --cards of them). Entries changed
    since the last scan are computed first. Opens in a browser with no network.
    """
    from capture.paths import sidecar_path
    from capture.pipeline import CAUTION
    from capture.pipeline import scan as run_scan
    from capture.report import build
    from capture.reports import GapFilter

    flt = GapFilter(author=author, group=group_, project=project,
                    since=_date(since, "--since"), until=_date(until, "--until"))  # fmt: skip
    nb = _open_notebook(path)
    done = run_scan(nb, reuse=True, keep=False, jobs=default_jobs())

    def sidecars():
        for s in done.summaries:
            try:
                yield json.loads(sidecar_path(nb.root / s.path).read_text(encoding="utf-8"))
            except (OSError, ValueError):  # gone or damaged since the scan: say so in the report
                why = s.error or "its result file could not be read"
                yield {"status": "error", "entry": {"path": s.path, "id": s.path}, "meta": {},
                       "error": {"message": why}}  # fmt: skip

    html = build(sidecars(), flt, CAUTION, f"masstrail report: {path}", cards=cards)
    output.write_text(html, encoding="utf-8")
    click.echo(f"wrote {output} ({len(done.summaries)} entries)")


@cli.command()
@click.argument("entry", type=click.Path(exists=True, dir_okay=False, path_type=Path))
def history(entry: Path) -> None:
    """The history of ENTRY from the store: when each amount first appeared, when each gap
    opened and closed."""
    from capture.store import connect, store_path, timeline

    root = _find_root(entry.resolve())
    nb = _open_notebook(root)
    conn = connect(store_path(nb.root, nb.config.store.path)[0])
    events = timeline(conn, nb.relpath(entry.resolve()))
    if not events:
        click.echo("no history yet: run masstrail scan or masstrail watch first")
        return
    for ev in events:
        click.echo(f"{ev['at']}  {ev['event']:<11}  {ev['what']}")


def main() -> None:
    """Entry point of the ``masstrail`` command."""
    cli()
