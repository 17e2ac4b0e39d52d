"""``masstrail rebuild``, ``backup`` and ``history``: the lab's store."""

from __future__ import annotations

from pathlib import Path

import click

from capture.cli.common import cli, fail, notebook_of, open_notebook


def _where(nb) -> None:
    from capture.store import store_path

    message = store_path(nb.root, nb.config.store.path)[1]
    if message:
        click.echo(f"masstrail: {message}", err=True)


@cli.command()
@click.argument("path", type=click.Path(exists=True, file_okay=False, path_type=Path))
def rebuild(path: Path) -> None:
    """Recreate the store's current tables from the entries under PATH.

    The notebook is the source of truth for current results; the history is kept
    and only grows. Sidecars are written as by scan.
    """
    from capture.store.upkeep import rebuild_store

    nb = open_notebook(path)
    _where(nb)
    db, entries, added = rebuild_store(nb)
    click.echo(f"rebuilt {db}: {entries} entries; {added} new history row(s)")


@cli.command()
@click.argument("path", type=click.Path(exists=True, file_okay=False, path_type=Path))
@click.argument("file", type=click.Path(dir_okay=False, path_type=Path))
def backup(path: Path, file: Path) -> None:
    """Copy the store of PATH, history included, to FILE (safe while a watcher runs)."""
    from capture.store import StoreError
    from capture.store.upkeep import backup_store

    nb = open_notebook(path)
    _where(nb)
    try:
        db = backup_store(nb, file)
    except StoreError as exc:
        fail(str(exc))
    click.echo(f"copied {db} to {file}")


@cli.command()
@click.argument("entry", type=click.Path(exists=True, dir_okay=False, path_type=Path))
@click.option(
    "--store",
    "store_url",
    metavar="URL",
    help="Read the history from the shared store at URL, not the notebook's own.",
)
def history(entry: Path, store_url: str | None) -> None:
    """The history of ENTRY from the store: when each amount first appeared, when each gap
    opened and closed."""
    from capture.store import StoreError, shared, timeline
    from capture.store.address import notebook_id
    from capture.store.history import timeline_of
    from capture.store.upkeep import open_store

    nb = notebook_of(entry)
    rel = nb.relpath(entry.resolve())
    if store_url:
        try:
            with shared.connect(store_url) as conn:
                shared.require_current(conn, store_url)
                events = timeline_of(shared.history_rows(conn, notebook_id(nb.root), rel))
        except StoreError as exc:
            fail(str(exc))
    else:
        events = timeline(open_store(nb)[0], rel)
    if not events:
        click.echo("no history yet: run masstrail scan or masstrail watch first")
        return
    for ev in events:
        click.echo(f"{ev['at']}  {ev['event']:<11}  {ev['what']}")
