"""The store writer: every result goes to the lab's SQLite store too (see capture.store)."""

from __future__ import annotations

import sqlite3
import sys
import threading
from pathlib import Path

from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import Result
from capture.store import connect, remove_entry, store_path, write_results

_conns: dict[tuple[Path, int], sqlite3.Connection] = {}
_told: set[Path] = set()


def connection(root: Path, config: LabConfig) -> sqlite3.Connection:
    """This thread's connection to the notebook's store (one writer per thread)."""
    db, message = store_path(root, config.store.path)
    if message and db not in _told:
        print(f"masstrail: {message}", file=sys.stderr)
        _told.add(db)
    key = (db, threading.get_ident())
    if key not in _conns:
        _conns[key] = connect(db)
    return _conns[key]


# trylast: the chemist's sidecar is written first; the store follows in the same step
@hookimpl(trylast=True, specname="masstrail_write_result")
def write_to_store(result: Result, root: Path, config: LabConfig) -> list[Path]:
    """Replace the entry's current rows and append to its history (if the store is on)."""
    if not config.store.enabled:
        return []
    write_results(connection(root, config), [result], config=config)
    return []


@hookimpl(specname="masstrail_remove_result")
def remove_from_store(relpath: str, root: Path, config: LabConfig) -> None:
    """Drop a deleted entry's current rows; its history stays."""
    if config.store.enabled:
        remove_entry(connection(root, config), relpath)
