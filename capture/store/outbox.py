"""The way to the shared store: each notebook's local queue, sent in order.

Every result a writer stores locally is also queued, in the same SQLite transaction, in the
local store's ``outbox`` (:func:`capture.store.database.write_results` with ``queue``), so
it is durable the moment the sidecar is. :func:`send` then hands the queue to the shared
store oldest first, a share at a time; a share leaves the queue only after the shared store
has committed it. A share sent twice (the process died between the two commits) is stored
once: rows are replaced and the history ignores a row it holds. When the server cannot be
reached, nothing is lost and nothing waits for it: the queue grows, and the next write,
rescan or ``masstrail store send`` tries again. One process sends a notebook's queue at a
time (an OS lock on ``.masstrail/outbox.lock``); the others leave it to that one.
"""

from __future__ import annotations

import contextlib
import os
import sqlite3
import threading
import time
from dataclasses import dataclass
from pathlib import Path

from capture.paths import STATE_DIR
from capture.safeio import try_lock
from capture.store import shared
from capture.store.address import shown
from capture.store.database import StoreError

SHARE = 200  # queued items per transaction on the shared store
RETRY_AFTER = 5.0  # seconds before a writer tries an unreachable server again
_NEXT = "SELECT seq, kind, entry_path, computed_at, payload, rows FROM outbox ORDER BY seq LIMIT ?"
_failed: dict[str, float] = {}  # address → when it last could not be reached (this process)


@dataclass
class Sent:
    """What one call of :func:`send` did."""

    sent: int = 0
    waiting: int = 0
    error: str | None = None  # why the queue could not be sent (the server, its schema, rights)
    busy: bool = False  # another process was sending this notebook's queue


def waiting(local: sqlite3.Connection) -> tuple[int, str | None]:
    """(items queued, when the oldest was queued)."""
    n, oldest = local.execute("SELECT COUNT(*), MIN(computed_at) FROM outbox").fetchone()
    return n, oldest


def _lock(root: Path) -> int | None:
    state = root / STATE_DIR
    state.mkdir(exist_ok=True)
    fd = os.open(state / "outbox.lock", os.O_RDWR | os.O_CREAT | getattr(os, "O_NOFOLLOW", 0),
                 0o644)  # fmt: skip
    if try_lock(fd):
        return fd
    os.close(fd)
    return None


# this process's open connections to shared stores, each checked once (schema, notebook)
_open: dict[tuple[str, int, int], tuple] = {}


def _connection(url: str, notebook: str, name: str, root: Path):
    """This process's and thread's connection to the shared store, opened once and reused
    (a scan sends after every share of entries); its schema checked and the notebook
    registered when it is opened."""
    key = (url, os.getpid(), threading.get_ident())
    held = _open.get(key)
    if held is not None and not held[0].closed and notebook in held[1]:
        return held[0]
    conn = held[0] if held is not None and not held[0].closed else shared.connect(url, 3)
    known = held[1] if held is not None and not held[0].closed else set()
    shared.require_current(conn, url)
    with conn.transaction():
        shared.register(conn, notebook, name, str(root.resolve()))
    _open[key] = (conn, known | {notebook})
    return conn


def _drop(url: str) -> None:
    """Close this thread's connection to ``url`` after an error (the next send opens anew)."""
    held = _open.pop((url, os.getpid(), threading.get_ident()), None)
    if held is not None:
        with contextlib.suppress(Exception):
            held[0].close()


def _send_all(local: sqlite3.Connection, conn, notebook: str) -> int:
    """Send the whole queue, a share at a time; how many items were sent."""
    done = 0
    while True:
        items = local.execute(_NEXT, (SHARE,)).fetchall()
        if not items:
            return done
        shared.apply(conn, notebook, items)  # committed there first …
        local.execute("BEGIN IMMEDIATE")  # … then it leaves the queue
        local.execute("DELETE FROM outbox WHERE seq <= ?", (items[-1][0],))
        local.execute("COMMIT")
        done += len(items)


def send(local: sqlite3.Connection, root: Path, url: str, notebook: str, name: str,
         force: bool = False) -> Sent:  # fmt: skip
    """Send the notebook's queue to the shared store at ``url``, oldest first. Without
    ``force``, an address that could not be reached in the last RETRY_AFTER seconds is not
    tried again (a writer never waits on a server that is away)."""
    if not force and time.monotonic() - _failed.get(url, -1e9) < RETRY_AFTER:
        return Sent(waiting=waiting(local)[0], error="not tried: unreachable a moment ago")
    if not waiting(local)[0]:
        return Sent()
    fd = _lock(root)
    if fd is None:
        return Sent(waiting=waiting(local)[0], busy=True)
    done = 0
    try:
        try:
            done = _send_all(local, _connection(url, notebook, name, root), notebook)
        except Exception:  # a connection kept open across a server restart: once more, anew
            _drop(url)
            done = _send_all(local, _connection(url, notebook, name, root), notebook)
        _failed.pop(url, None)
        return Sent(sent=done, waiting=waiting(local)[0])
    except StoreError as exc:
        _drop(url)
        _failed[url] = time.monotonic()
        return Sent(sent=done, waiting=waiting(local)[0], error=str(exc))
    except Exception as exc:  # psycopg's errors: the server went away, a right is missing
        _drop(url)
        _failed[url] = time.monotonic()
        first = (str(exc).strip().splitlines() or [type(exc).__name__])[0]
        return Sent(sent=done, waiting=waiting(local)[0],
                    error=f"the shared store at {shown(url)} refused or lost the "
                    f"queue: {first}")  # fmt: skip
    finally:
        with contextlib.suppress(OSError):
            os.close(fd)
