"""``masstrail store …``: the shared PostgreSQL store, and the options readers use to read it.

- ``masstrail store init [URL]`` and ``masstrail store upgrade [URL]`` make and bring up to
  date its schema (versioned migrations), roles and row-level security;
- ``masstrail store status PATH`` says where a notebook's results go and how many wait;
- ``masstrail store send PATH`` sends what waits, now.

The address is URL, else ``MASSTRAIL_STORE_URL``, else the notebook's ``[store] url``.
"""

from __future__ import annotations

from pathlib import Path

import click

from capture.cli.common import cli, fail, open_notebook


def store_options(fn):
    """--store URL and --notebook NAME, for the commands that can read the shared store."""
    fn = click.option("--notebook", "notebook_name",
                      help="With --store: only this notebook (its name or id).")(fn)  # fmt: skip
    return click.option(
        "--store",
        "store_url",
        metavar="URL",
        is_flag=False,
        flag_value=CONFIGURED,
        callback=_configured_store,
        help="Read the shared PostgreSQL store at URL (all notebooks) instead of a notebook "
        "folder; --store alone: MASSTRAIL_STORE_URL, else [store] url of ./masstrail.toml. "
        "The password from PGPASSWORD, ~/.pgpass or a service file.",
    )(fn)


CONFIGURED = "\0configured"  # --store given without a URL


def _configured_store(_ctx, _param, value: str | None) -> str | None:
    if value != CONFIGURED:
        return value
    from capture.paths import CONFIG_NAME

    return _url(None, Path.cwd() if (Path.cwd() / CONFIG_NAME).is_file() else None)


def needs_path_or_store(path, store_url) -> None:
    """Exit 2 unless exactly one of a notebook folder and --store is given."""
    if path is None and not store_url:
        fail("give a notebook folder PATH, or --store URL for the shared store")
    if path is not None and store_url:
        fail("give a notebook folder PATH or --store URL, not both")


def shared_results(url: str, notebook: str | None):
    """The shared store's current results as :class:`Result` objects (paths as
    ``NOTEBOOK/PATH``), one at a time from a server-side cursor; StoreError exits 2 with its
    message."""
    from capture.models import Result
    from capture.store import StoreError, shared

    try:
        with shared.connect(url) as conn:
            shared.require_current(conn, url)
            for r in shared.results(conn, notebook):
                r.pop("notebook", None)
                yield Result.model_validate(r)
    except StoreError as exc:
        fail(str(exc))


def store_gap_rows(url: str, notebook: str | None, flt):
    """The gap rows of the shared store's entries that ``flt`` keeps (read from its tables);
    StoreError exits 2 with its message."""
    from capture.store import StoreError, shared
    from capture.views.gaplist import gap_rows_of_store

    try:
        with shared.connect(url) as conn:
            shared.require_current(conn, url)
            return gap_rows_of_store(shared.gap_lines(conn, notebook), flt)
    except StoreError as exc:
        fail(str(exc))


def _url(url: str | None, path: Path | None = None) -> str:
    from capture.store.address import store_url

    if url:
        return url
    found = store_url(open_notebook(path).config.store.url if path else None)
    if not found:
        fail("no shared store: give its URL, set MASSTRAIL_STORE_URL or [store] url in "
             "masstrail.toml")  # fmt: skip
    return found


@cli.group()
def store() -> None:
    """The shared PostgreSQL store of a department: set it up, see and send what waits."""


def _migrate(url: str, first: bool) -> None:
    from capture.store import StoreError, shared
    from capture.store.address import shown

    try:
        before, after = shared.migrate(url, first=first)
    except StoreError as exc:
        fail(str(exc))
    if before == after:
        click.echo(f"{shown(url)}: schema version {after}, up to date")
        return
    for number, what, _sql in shared.MIGRATIONS:
        if before < number <= after:
            click.echo(f"  migration {number}: {what}")
    click.echo(f"{shown(url)}: schema version {before} → {after}. Roles: {shared.WRITER} "
               f"(its members write their own notebooks' rows and append to the history) and "
               f"{shared.READER} (reads all); grant them to login roles, e.g. "
               f"GRANT {shared.WRITER} TO fenwick_lab;")  # fmt: skip


@store.command(name="init")
@click.argument("url", required=False)
def init(url: str | None) -> None:
    """Create the shared store's tables, roles and row-level security in the database at URL
    (an empty one; default MASSTRAIL_STORE_URL). Run once, by the database's owner."""
    _migrate(_url(url), first=True)


@store.command()
@click.argument("url", required=False)
def upgrade(url: str | None) -> None:
    """Run the shared store's pending migrations (default MASSTRAIL_STORE_URL); watchers and
    scans never change the schema themselves."""
    _migrate(_url(url), first=False)


def _local(path: Path):
    from capture.store.address import notebook_id, notebook_name
    from capture.store.upkeep import open_store

    nb = open_notebook(path)
    url = _url(None, path)
    conn = open_store(nb)[0]
    return nb, url, conn, notebook_id(nb.root), notebook_name(nb.root, nb.config.store.notebook)


@store.command()
@click.argument("path", type=click.Path(exists=True, file_okay=False, path_type=Path))
def status(path: Path) -> None:
    """Where the results of the notebook at PATH go, and how many wait to be sent."""
    from capture.store import StoreError, shared
    from capture.store.address import shown
    from capture.store.outbox import waiting

    _nb, url, conn, nb_id, name = _local(path)
    n, oldest = waiting(conn)
    click.echo(f"notebook {name} ({nb_id})\nshared store {shown(url)}")
    click.echo(f"waiting to be sent: {n}" + (f", the oldest from {oldest}" if n else ""))
    try:
        with shared.connect(url, timeout=3) as pg:
            shared.require_current(pg, url)
            click.echo(f"reachable; it holds {shared.history_count(pg, nb_id)} history row(s) "
                       "of this notebook")  # fmt: skip
    except StoreError as exc:
        missing = str(exc) == shared.POSTGRES_EXTRA
        click.echo(f"{'not checked' if missing else 'not reachable now'}: {exc}")


@store.command()
@click.argument("path", type=click.Path(exists=True, file_okay=False, path_type=Path))
def send(path: Path) -> None:
    """Send the results of the notebook at PATH that wait for the shared store, now."""
    from capture.store.outbox import send as send_queue

    nb, url, conn, nb_id, name = _local(path)
    done = send_queue(conn, nb.root, url, nb_id, name, force=True)
    if done.busy:
        fail("another masstrail process is sending this notebook's results; try again later")
    click.echo(f"sent {done.sent}; {done.waiting} waiting")
    if done.error:
        fail(done.error)
