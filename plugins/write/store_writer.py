"""The store writer (plugin ``store``): every result goes to the lab's SQLite store too,
and, with a shared store configured (``[store] url`` or ``MASSTRAIL_STORE_URL``), to the
local queue that is sent there (:mod:`capture.store.outbox`).

The store itself (schema, writes, history) is :mod:`capture.store`; this plugin hands it
the results of scans and of the watcher, and answers ``masstrail_previous_results`` and
``masstrail_previous_gaps``.
"""

from __future__ import annotations

import functools
import sqlite3
import sys
import threading
from collections.abc import Iterable
from pathlib import Path

from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import Result
from capture.store import (
    connect,
    previous_gaps,
    previous_results,
    remove_absent,
    remove_entry,
    store_path,
    write_results,
)
from capture.store.address import notebook_id, notebook_name, store_url
from capture.store.outbox import send

_conns: dict[tuple[Path, int], sqlite3.Connection] = {}
_told: set[Path] = set()
_told_shared: set[str] = set()


@functools.lru_cache(maxsize=64)
def _identity(root: Path, name: str | None) -> tuple[str, str]:
    return notebook_id(root), notebook_name(root, name)


def _queue(config: LabConfig) -> bool:
    return store_url(config.store.url) is not None


def _send(root: Path, config: LabConfig, force: bool = False) -> None:
    """Send the queue to the shared store, if one is configured; say once per process when
    it cannot be reached (the queue keeps every result)."""
    url = store_url(config.store.url)
    if url is None:
        return
    nb, name = _identity(root, config.store.notebook)
    done = send(connection(root, config), root, url, nb, name, force=force)
    if url in _told_shared and done.sent and not done.error:
        _told_shared.discard(url)
        print(f"masstrail: the shared store answers again; {done.sent} result(s) that waited "
              f"were sent, {done.waiting} wait", file=sys.stderr)  # fmt: skip
    elif done.error and not done.error.startswith("not tried") and url not in _told_shared:
        _told_shared.add(url)
        print(f"masstrail: {done.error}; {done.waiting} result(s) wait in the local store and "
              f"are sent when it can be reached (masstrail store status {root})",
              file=sys.stderr)  # fmt: skip


@functools.lru_cache(maxsize=64)
def _where(root: Path, configured: str | None) -> tuple[Path, str | None]:
    return store_path(root, configured)  # reads /proc/mounts: once per notebook


def connection(root: Path, config: LabConfig) -> sqlite3.Connection:
    """This thread's connection to the notebook's store (one writer per thread)."""
    db, message = _where(root, config.store.path)
    if message and db not in _told:
        print(f"masstrail: {message}", file=sys.stderr)
        _told.add(db)
    key = (db, threading.get_ident())
    if key not in _conns:
        _conns[key] = connect(db)
    return _conns[key]


# results a scan has handed over and not yet written, per connection
_pending: dict[tuple[Path, int], list[Result]] = {}
# a scan flushes after every share of 32 entries (masstrail_flush_results: the sidecars are
# in place first); this cap only bounds what a caller that never flushes makes us hold
BATCH = 100


def _key(root: Path, config: LabConfig) -> tuple[Path, int]:
    return (_where(root, config.store.path)[0], threading.get_ident())


def _flush(root: Path, config: LabConfig) -> None:
    held = _pending.pop(_key(root, config), None)
    if held:
        write_results(connection(root, config), held, queue=_queue(config))
        _send(root, config)


# trylast: the chemist's sidecar is written first; the store follows in the same step
@hookimpl(trylast=True, specname="masstrail_write_result")
def write_to_store(result: Result, root: Path, config: LabConfig, batch: bool) -> list[Path]:
    """Replace the entry's current rows and append to its history (if the store is on).

    A scan's results (``batch``) are written BATCH at a time, each batch one transaction.
    """
    if not config.store.enabled:
        return []
    if not batch:
        write_results(connection(root, config), [result], queue=_queue(config))
        _send(root, config)
        return []
    held = _pending.setdefault(_key(root, config), [])
    held.append(result)
    if len(held) >= BATCH:
        _flush(root, config)
    return []


@hookimpl(trylast=True, specname="masstrail_flush_results")
def flush_store(root: Path, config: LabConfig) -> None:
    """Write the results held from a scan (``batch``), in one transaction."""
    if config.store.enabled:
        _flush(root, config)


@hookimpl(specname="masstrail_scan_done")
def finish_scan(root: Path, config: LabConfig, present: Iterable[str]) -> None:
    """Drop the rows of entries no longer in the notebook (their history stays)."""
    if config.store.enabled:
        _flush(root, config)  # in case a caller did not flush first
        remove_absent(connection(root, config), present, queue=_queue(config))
        _send(root, config, force=True)  # a rescan is the retry of a server that was away


@hookimpl(specname="masstrail_previous_results")
def previous(root: Path, config: LabConfig, paths: list[str] | None) -> dict | None:
    """The fingerprint and summary of each entry's last result (of ``paths``, or every
    entry's), from the store."""
    if not config.store.enabled:
        return None
    return previous_results(connection(root, config), paths)


@hookimpl(specname="masstrail_previous_gaps")
def gaps_in_store(root: Path, relpath: str, config: LabConfig) -> list[tuple[str, str]] | None:
    """The entry's gaps in the store (the last good ones while its saves cannot be read)."""
    if not config.store.enabled:
        return None
    _flush(root, config)
    return previous_gaps(connection(root, config), relpath)


@hookimpl(specname="masstrail_remove_result")
def remove_from_store(relpath: str, root: Path, config: LabConfig) -> None:
    """Drop a deleted entry's current rows; its history stays."""
    if config.store.enabled:
        remove_entry(connection(root, config), relpath, queue=_queue(config))
        _send(root, config)
