"""A notebook's store as the commands use it: opened where the lab's config puts it,
rebuilt from the entries, backed up."""

from __future__ import annotations

import sqlite3
from pathlib import Path
from typing import TYPE_CHECKING

from capture.store.database import backup, connect, rebuild, store_path

if TYPE_CHECKING:
    from capture.notebook import Notebook


def open_store(nb: Notebook) -> tuple[sqlite3.Connection, Path, str | None]:
    """(connection, database path, a message when the store is not in its default place)."""
    db, message = store_path(nb.root, nb.config.store.path)
    return connect(db), db, message


def rebuild_store(nb: Notebook) -> tuple[Path, int, int]:
    """Recreate the store's current tables from the entries (sidecars written as by a scan);
    the history is kept and only grows. Returns (database, entries, history rows added)."""
    from capture.scan import scan
    from capture.store.address import notebook_id, notebook_name, store_url

    conn, db, _message = open_store(nb)
    nb.pm.set_blocked("store")  # the rebuild writes the store itself, in one transaction
    report = scan(nb)
    url = store_url(nb.config.store.url)
    added = rebuild(conn, report.results, queue=url is not None)
    if url is not None:  # the shared store's rows of this notebook are rebuilt as well
        from capture.store.outbox import send

        send(conn, nb.root, url, notebook_id(nb.root),
             notebook_name(nb.root, nb.config.store.notebook), force=True)  # fmt: skip
    return db, len(report.results), added


def backup_store(nb: Notebook, target: Path) -> Path:
    """Copy the notebook's store, history included, to ``target`` (SQLite's online backup
    API: safe while a watcher writes); return the store's path. StoreError if ``target``
    exists."""
    conn, db, _message = open_store(nb)
    backup(conn, target)
    return db
