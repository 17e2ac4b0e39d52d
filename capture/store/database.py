"""The lab's store: current results of every entry, and an append-only history, in SQLite.

The notebook is the source of truth for current results (``rebuild`` recreates
them from the entries); the history exists only here, so ``backup`` copies the
database with SQLite's online backup API, safely while a watcher writes.

- WAL mode, a busy timeout, foreign keys, ``synchronous=FULL``; every write is one
  ``BEGIN IMMEDIATE`` transaction (a deferred one can fail at once with "database
  is locked" without waiting for the busy timeout).
- ``history`` is append-only: triggers abort every UPDATE and DELETE, and rows are
  written with INSERT OR IGNORE on UNIQUE(entry_path, sha256, tool_version), so a
  rescan of unchanged entries adds nothing. The triggers are checked at every open.
- SQLite's WAL needs shared memory, which network file systems do not give; when
  the notebook is on one (NFS, SMB/CIFS, sshfs), the store goes to a per-user
  local data folder instead, and masstrail says where.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import json
import os
import sqlite3
from collections.abc import Iterable
from pathlib import Path

from capture import __version__
from capture.models import EntrySummary, Result
from capture.paths import STATE_DIR

DB_NAME = "records.db"
NETWORK_FS = {"nfs", "nfs4", "cifs", "smb3", "smbfs", "fuse.sshfs", "sshfs", "9p", "afs",
              "fuse.rclone", "davfs", "fuse.davfs2"}  # fmt: skip

SCHEMA = """
CREATE TABLE IF NOT EXISTS entries (
    path TEXT PRIMARY KEY, id TEXT NOT NULL, title TEXT, author TEXT, grp TEXT, project TEXT,
    date TEXT, sha256 TEXT, status TEXT NOT NULL, error TEXT, product TEXT, product_g REAL,
    tool_version TEXT NOT NULL, updated_at TEXT NOT NULL, error_location TEXT,
    inputs_sha256 TEXT, balance_log TEXT, entry_stat TEXT,
    gaps_blocking INTEGER, gaps_major INTEGER, gaps_minor INTEGER, stale_since TEXT
);
CREATE TABLE IF NOT EXISTS metrics (
    entry_path TEXT PRIMARY KEY REFERENCES entries(path) ON DELETE CASCADE,
    e_factor REAL, e_factor_simple REAL, e_factor_estimated REAL, pmi REAL, completeness REAL,
    atom_economy REAL, yield REAL, rme REAL, hazard_weighted_e REAL, inputs_g REAL, waste_g REAL
);
CREATE TABLE IF NOT EXISTS materials (
    id INTEGER PRIMARY KEY, entry_path TEXT NOT NULL REFERENCES entries(path) ON DELETE CASCADE,
    name TEXT NOT NULL, resolved TEXT, role TEXT, category TEXT, stage TEXT, stated TEXT,
    mass_g REAL, basis TEXT, origin TEXT, stream TEXT
);
CREATE TABLE IF NOT EXISTS gaps (
    id INTEGER PRIMARY KEY, entry_path TEXT NOT NULL REFERENCES entries(path) ON DELETE CASCADE,
    kind TEXT NOT NULL, item TEXT NOT NULL, severity TEXT NOT NULL, allowance_g REAL,
    message TEXT, evidence TEXT
);
CREATE TABLE IF NOT EXISTS readings (
    id INTEGER PRIMARY KEY, entry_path TEXT NOT NULL REFERENCES entries(path) ON DELETE CASCADE,
    file TEXT, line INTEGER, label TEXT, mass_g REAL, stable INTEGER, timestamp TEXT,
    assigned_to TEXT
);
CREATE TABLE IF NOT EXISTS history (
    id INTEGER PRIMARY KEY, entry_path TEXT NOT NULL, entry_id TEXT NOT NULL,
    sha256 TEXT NOT NULL, tool_version TEXT NOT NULL, computed_at TEXT NOT NULL,
    result TEXT NOT NULL,
    UNIQUE (entry_path, sha256, tool_version)
);
CREATE TABLE IF NOT EXISTS outbox (
    seq INTEGER PRIMARY KEY AUTOINCREMENT, kind TEXT NOT NULL, entry_path TEXT NOT NULL,
    computed_at TEXT NOT NULL, payload TEXT, rows TEXT
);
CREATE INDEX IF NOT EXISTS materials_entry ON materials(entry_path);
CREATE INDEX IF NOT EXISTS gaps_entry ON gaps(entry_path);
CREATE INDEX IF NOT EXISTS gaps_kind ON gaps(kind, severity);
CREATE INDEX IF NOT EXISTS readings_entry ON readings(entry_path);
CREATE INDEX IF NOT EXISTS history_entry ON history(entry_path, computed_at);
CREATE TRIGGER IF NOT EXISTS history_no_update BEFORE UPDATE ON history
    BEGIN SELECT RAISE(ABORT, 'history is append-only'); END;
CREATE TRIGGER IF NOT EXISTS history_no_delete BEFORE DELETE ON history
    BEGIN SELECT RAISE(ABORT, 'history is append-only'); END;
CREATE VIEW IF NOT EXISTS entry_gaps AS
    SELECT e.path, e.id, e.author, e.grp, e.project, e.date,
           SUM(g.severity = 'blocking') AS blocking, SUM(g.severity = 'major') AS major,
           SUM(g.severity = 'minor') AS minor,
           ROUND(SUM(COALESCE(g.allowance_g, 0)), 4) AS allowance_g
    FROM entries e LEFT JOIN gaps g ON g.entry_path = e.path GROUP BY e.path;
CREATE VIEW IF NOT EXISTS group_figures AS
    SELECT e.grp, COUNT(*) AS entries, ROUND(AVG(m.e_factor), 4) AS mean_e_factor,
           ROUND(AVG(m.pmi), 4) AS mean_pmi, ROUND(SUM(m.waste_g), 4) AS waste_g
    FROM entries e JOIN metrics m ON m.entry_path = e.path GROUP BY e.grp;
CREATE VIEW IF NOT EXISTS waste_by_stream AS
    SELECT stream, ROUND(SUM(mass_g), 4) AS input_g, COUNT(DISTINCT entry_path) AS entries
    FROM materials WHERE mass_g IS NOT NULL GROUP BY stream;
"""


class StoreError(Exception):
    """The store cannot be used; the message says why and where."""


def filesystem_type(path: Path, mounts: str | None = None) -> str | None:
    """The file-system type of the mount holding ``path`` (Linux /proc/mounts), or None."""
    if mounts is None:
        try:
            mounts = Path("/proc/mounts").read_text()
        except OSError:
            return None
    target = str(path.resolve())
    best, kind = "", None
    for line in mounts.splitlines():
        parts = line.split()
        if len(parts) < 3:
            continue
        point = parts[1].replace("\\040", " ")
        if (target == point or target.startswith(point.rstrip("/") + "/")) and len(point) > len(
            best
        ):
            best, kind = point, parts[2]
    return kind


def store_path(
    root: Path, configured: str | None = None, mounts: str | None = None
) -> tuple[Path, str | None]:
    """(database path, a message when it is not the default place)."""
    if configured:
        p = Path(configured)
        return (p if p.is_absolute() else root / p), None
    if filesystem_type(root, mounts) in NETWORK_FS:
        base = Path(os.environ.get("XDG_DATA_HOME", Path.home() / ".local" / "share"))
        key = hashlib.sha256(str(root.resolve()).encode()).hexdigest()[:16]
        local = base / "masstrail" / key / DB_NAME
        return local, (
            f"the notebook is on a network file system, where SQLite's WAL does not work; "
            f"the store is kept on this computer at {local}"
        )
    return root / STATE_DIR / DB_NAME, None


def connect(db_path: Path) -> sqlite3.Connection:
    """Open (and if needed create) the store, with its pragmas, schema and triggers."""
    db_path.parent.mkdir(parents=True, exist_ok=True)
    conn = sqlite3.connect(db_path, timeout=10, isolation_level=None)  # we open transactions
    conn.execute("PRAGMA busy_timeout=10000")
    _while_locked(lambda: conn.execute("PRAGMA journal_mode=WAL"))
    conn.execute("PRAGMA foreign_keys=ON")
    conn.execute("PRAGMA synchronous=FULL")
    _while_locked(lambda: conn.executescript(SCHEMA))
    _migrate(conn)
    triggers = {r[0] for r in conn.execute("SELECT name FROM sqlite_master WHERE type='trigger'")}
    if not {"history_no_update", "history_no_delete"} <= triggers:
        raise StoreError(f"{db_path}: the history's append-only triggers are missing")
    return conn


def _while_locked(step, seconds: float = 10.0) -> None:
    """Run ``step`` again while the store is locked, for up to ``seconds``. Two processes
    that open a new store at once (a first scan's workers) race to switch it to WAL, and
    SQLite answers that switch "database is locked" at once, without its busy wait."""
    import time

    end = time.monotonic() + seconds
    while True:
        try:
            step()
            return
        except sqlite3.OperationalError as exc:
            if "locked" not in str(exc) or time.monotonic() > end:
                raise
            time.sleep(0.02)


# columns added to ``entries`` after the first release: (name, type); added in place by
# ALTER TABLE, which keeps the history table and its triggers untouched
_ADDED_COLUMNS = (
    ("error_location", "TEXT"),
    ("inputs_sha256", "TEXT"),
    ("balance_log", "TEXT"),
    ("entry_stat", "TEXT"),
    ("gaps_blocking", "INTEGER"),
    ("gaps_major", "INTEGER"),
    ("gaps_minor", "INTEGER"),
    ("stale_since", "TEXT"),
)


def _migrate(conn: sqlite3.Connection) -> None:
    have = {row[1] for row in conn.execute("PRAGMA table_info(entries)")}
    for name, kind in _ADDED_COLUMNS:
        if name not in have:
            conn.execute(f"ALTER TABLE entries ADD COLUMN {name} {kind}")


def previous_results(
    conn: sqlite3.Connection, paths: list[str] | None = None
) -> dict[str, EntrySummary]:
    """``{entry path: EntrySummary}`` for every current entry with a fingerprint (rows
    written before the gap counts were kept in ``entries`` are left out: recomputed), or for
    those of ``paths`` only."""
    some = "" if paths is None else " AND e.path IN (SELECT value FROM json_each(?))"
    rows = conn.execute(  # in the order of EntrySummary's fields
        "SELECT e.path, e.status, e.product_g, m.e_factor, m.pmi, e.gaps_blocking, "
        "e.gaps_major, e.gaps_minor, e.error, e.error_location, e.inputs_sha256, e.sha256, "
        "e.entry_stat, CASE e.balance_log WHEN '[]' THEN NULL ELSE e.balance_log END "
        "FROM entries e LEFT JOIN metrics m ON m.entry_path = e.path "
        "WHERE e.inputs_sha256 IS NOT NULL AND e.gaps_blocking IS NOT NULL" + some,
        () if paths is None else (json.dumps(paths),),
    )
    out = {}
    for *head, fingerprint, sha, stat, logs in rows:
        logs = tuple(json.loads(logs)) if logs else ()
        out[head[0]] = EntrySummary(*head, False, fingerprint, sha, stat, logs)
    return out


def previous_gaps(conn: sqlite3.Connection, path: str) -> list[tuple[str, str]] | None:
    """The (kind, item) of the entry's current gaps (its last good ones while it cannot be
    read), or None when the store does not know the entry."""
    if conn.execute("SELECT 1 FROM entries WHERE path = ?", (path,)).fetchone() is None:
        return None
    return [tuple(r) for r in conn.execute("SELECT kind, item FROM gaps WHERE entry_path = ?",
                                           (path,))]  # fmt: skip


def remove_absent(conn: sqlite3.Connection, present: Iterable[str], queue: bool = False) -> int:
    """Drop the current rows of entries not in ``present`` (their history stays); with
    ``queue``, in the shared store's too, when the queue is sent. ``present`` is read once,
    into a temporary table, not held as a set (a notebook of 100,000 entries)."""
    conn.execute("CREATE TEMP TABLE IF NOT EXISTS scan_present (path TEXT PRIMARY KEY)")
    conn.execute("BEGIN")  # the temporary table only: one transaction, not one per row
    try:
        conn.execute("DELETE FROM temp.scan_present")
        conn.executemany("INSERT OR IGNORE INTO temp.scan_present VALUES (?)",
                         ((p,) for p in present))  # fmt: skip
        conn.execute("COMMIT")
    except BaseException:
        conn.execute("ROLLBACK")
        raise
    gone = [
        p
        for (p,) in conn.execute(
            "SELECT path FROM entries WHERE path NOT IN (SELECT path FROM temp.scan_present)"
        )
    ]
    conn.execute("DELETE FROM temp.scan_present")
    if gone:
        conn.execute("BEGIN IMMEDIATE")
        try:
            conn.executemany("DELETE FROM entries WHERE path = ?", [(p,) for p in gone])
            if queue:
                now = _now()
                conn.executemany(_QUEUE, [("remove", p, now, None, None) for p in gone])
            conn.execute("COMMIT")
        except BaseException:
            conn.execute("ROLLBACK")
            raise
    return len(gone)


# the current tables' columns after entry_path, in the order child_rows gives them
COLUMNS = {
    "metrics": ("e_factor", "e_factor_simple", "e_factor_estimated", "pmi", "completeness",
                "atom_economy", "yield", "rme", "hazard_weighted_e", "inputs_g", "waste_g"),
    "materials": ("name", "resolved", "role", "category", "stage", "stated", "mass_g", "basis",
                  "origin", "stream"),
    "gaps": ("kind", "item", "severity", "allowance_g", "message", "evidence"),
    "readings": ("file", "line", "label", "mass_g", "stable", "timestamp", "assigned_to"),
}  # fmt: skip


def _insert_sql(table: str, cols: tuple[str, ...]) -> str:
    names = ", ".join(f'"{c}"' for c in ("entry_path", *cols))  # "yield" is an SQL keyword
    return f"INSERT INTO {table} ({names}) VALUES ({', '.join('?' * (len(cols) + 1))})"


_INSERT = {table: _insert_sql(table, cols) for table, cols in COLUMNS.items()}


def child_rows(result: Result) -> dict[str, list[tuple]]:
    """The entry's rows for each current table but ``entries``, in ``COLUMNS`` order (each
    material's waste stream is the one ``masstrail_waste_stream`` gave it)."""
    path = result.entry.path
    m = result.metrics
    t = result.totals
    return {
        "metrics": [
            (path, m.e_factor, m.e_factor_simple, m.e_factor_estimated, m.pmi, m.completeness,
             m.atom_economy, m.yield_, m.rme, m.hazard_weighted_e, t.inputs_g if t else None,
             t.waste_g if t else None)
        ],
        "materials": [
            (path, x.name, x.resolved, x.role, x.category, x.stage, x.stated, x.mass_g, x.basis,
             x.origin, x.stream)
            for x in result.materials
        ],
        "gaps": [
            (path, g.kind, g.item, g.severity, g.allowance_g, g.message, g.evidence)
            for g in result.gaps
        ],
        "readings": [
            (path, r.file, r.line, r.label, r.mass_g, r.stable, r.timestamp, r.assigned_to)
            for r in result.readings
        ],
    }  # fmt: skip


def _write(conn: sqlite3.Connection, result: Result, now: str, payload: str, entry: tuple,
           rows: dict[str, list[tuple]], children: dict[str, list[tuple]]) -> bool:  # fmt: skip
    """Replace the entry's row (``entry``) and append its history row (``payload``: the
    result's JSON); True if history grew. Its ``rows`` for the other current tables are added
    to ``children``, inserted after all entries."""
    path = result.entry.path
    if result.status == "error" and _keeps_last_good(conn, result, now):
        return _append_history(conn, result, now, payload)
    conn.execute("DELETE FROM entries WHERE path = ?", (path,))  # cascades to the rest
    conn.execute(_INSERT_ENTRY, entry)
    for table, table_rows in rows.items():
        children.setdefault(table, []).extend(table_rows)
    return _append_history(conn, result, now, payload)


ENTRY_COLUMNS = ("path", "id", "title", "author", "grp", "project", "date", "sha256", "status",
                 "error", "product", "product_g", "tool_version", "updated_at", "error_location",
                 "inputs_sha256", "balance_log", "entry_stat", "gaps_blocking", "gaps_major",
                 "gaps_minor")  # fmt: skip
_INSERT_ENTRY = (f"INSERT INTO entries ({', '.join(ENTRY_COLUMNS)}) "
                 f"VALUES ({','.join('?' * len(ENTRY_COLUMNS))})")  # fmt: skip


def entry_row(result: Result, now: str) -> tuple:
    """The entry's row of ``entries``, in ``ENTRY_COLUMNS`` order."""
    meta = result.meta
    return (result.entry.path, result.entry.id, meta.get("title"), meta.get("author"),
            meta.get("group"), meta.get("project"), meta.get("date"), result.entry.sha256,
            result.status, result.error.message if result.error else None, result.product.name,
            result.product.mass_g, __version__, now,
            result.error.location if result.error else None, result.entry.inputs_sha256,
            json.dumps(result.entry.balance_log), result.entry._stat,
            *_gap_counts(result))  # fmt: skip


def _keeps_last_good(conn: sqlite3.Connection, result: Result, now: str) -> bool:
    """An entry that was read before and now cannot be: its rows stay (the last good figures,
    marked stale since now), the entry row says the error; True if so."""
    known = conn.execute("SELECT status, stale_since FROM entries WHERE path = ?",
                         (result.entry.path,)).fetchone()  # fmt: skip
    if known is None or (known[0] != "ok" and known[1] is None):
        return False  # never read: nothing to keep
    conn.execute(
        "UPDATE entries SET status = 'error', error = ?, error_location = ?, sha256 = ?, "
        "inputs_sha256 = ?, entry_stat = ?, tool_version = ?, updated_at = ?, "
        "stale_since = COALESCE(stale_since, ?), gaps_blocking = 0, gaps_major = 0, "
        "gaps_minor = 0 WHERE path = ?",
        (result.error.message if result.error else None,
         result.error.location if result.error else None, result.entry.sha256,
         result.entry.inputs_sha256, result.entry._stat, __version__, now, now,
         result.entry.path),
    )  # fmt: skip
    return True


def _append_history(conn: sqlite3.Connection, result: Result, now: str, payload: str) -> bool:
    """Append the result to the history (once per entry bytes and masstrail version)."""
    if not result.entry.sha256:
        return False
    cur = conn.execute(
        "INSERT OR IGNORE INTO history (entry_path, entry_id, sha256, tool_version, computed_at, "
        "result) VALUES (?,?,?,?,?,?)",
        (
            result.entry.path,
            result.entry.id,
            result.entry.sha256,
            __version__,
            now,
            payload,
        ),  # the sidecar's JSON, without its indent
    )
    return cur.rowcount == 1


def _gap_counts(result: Result) -> tuple[int, int, int]:
    """(blocking, major, minor): kept in ``entries``, so a rescan reads its summary there."""
    severities = [g.severity for g in result.gaps]
    return severities.count("blocking"), severities.count("major"), severities.count("minor")


def _now() -> str:
    return dt.datetime.now(dt.UTC).isoformat(timespec="milliseconds")


# the result as its sidecar's JSON, and its rows of the current tables as JSON
_QUEUE = "INSERT INTO outbox (kind, entry_path, computed_at, payload, rows) VALUES (?,?,?,?,?)"


def _same(conn: sqlite3.Connection, result: Result) -> bool:
    """True when the store holds this entry with the same fingerprint and status already (a
    result the shared store has too: not queued again)."""
    row = conn.execute("SELECT inputs_sha256, status FROM entries WHERE path = ?",
                       (result.entry.path,)).fetchone()  # fmt: skip
    return row is not None and row[0] is not None and row == (result.entry.inputs_sha256,
                                                               result.status)  # fmt: skip


def write_results(
    conn: sqlite3.Connection, results: list[Result], clear: bool = False, queue: bool = False
) -> int:
    """Write results in one BEGIN IMMEDIATE transaction; return how many history rows were added.

    With ``clear``, the current tables are emptied first (history is never touched). With
    ``queue``, each result is also queued for the shared store (``outbox``), in the same
    transaction: durable exactly when the local store is.
    """
    added = 0
    now = _now()
    conn.execute("BEGIN IMMEDIATE")
    try:
        if clear:
            conn.execute("DELETE FROM entries")  # cascades to the current tables
            if queue:
                conn.execute(_QUEUE, ("clear", "", now, None, None))
        children: dict[str, list[tuple]] = {}
        latest = {r.entry.path: r for r in results}  # an entry handed over twice: its last
        send = {p for p, r in latest.items() if clear or not _same(conn, r)} if queue else set()
        queued = []
        for path, r in latest.items():
            payload, entry = r.model_dump_json(by_alias=True), entry_row(r, now)
            rows = child_rows(r) if r.status == "ok" else {}
            added += _write(conn, r, now, payload, entry, rows, children)
            if path in send:  # the rows as written here: the shared store applies them as such
                queued.append(("result", path, now, payload,
                               json.dumps({"entry": entry, "rows": rows})))  # fmt: skip
        for table, table_rows in children.items():  # one prepared statement per table
            conn.executemany(_INSERT[table], table_rows)
        conn.executemany(_QUEUE, queued)
        conn.execute("COMMIT")
    except BaseException:
        conn.execute("ROLLBACK")
        raise
    return added


def remove_entry(conn: sqlite3.Connection, path: str, queue: bool = False) -> None:
    """Drop an entry's current rows (its history stays); with ``queue``, in the shared
    store's too, when the queue is sent."""
    conn.execute("BEGIN IMMEDIATE")
    conn.execute("DELETE FROM entries WHERE path = ?", (path,))
    if queue:
        conn.execute(_QUEUE, ("remove", path, _now(), None, None))
    conn.execute("COMMIT")


def rebuild(conn: sqlite3.Connection, results: list[Result], queue: bool = False) -> int:
    """Recreate the current tables from ``results``; history rows are kept and added to."""
    return write_results(conn, results, clear=True, queue=queue)


def backup(conn: sqlite3.Connection, target: Path) -> None:
    """Copy the whole store to ``target`` with SQLite's online backup API."""
    if target.exists():
        raise StoreError(f"{target} exists already; choose a new file")
    dest = sqlite3.connect(target)
    try:
        conn.backup(dest)
    finally:
        dest.close()


def compared_columns() -> dict[str, str]:
    """Each current table's columns without ids and times, as SQL: what two stores (this one
    and the shared one) are compared on."""
    entry = ", ".join(ENTRY_COLUMNS[: ENTRY_COLUMNS.index("product_g") + 1])
    return {"entries": entry, **{t: "entry_path, " + ", ".join(f'"{c}"' for c in cols)
                                 for t, cols in COLUMNS.items()}}  # fmt: skip


def current_tables(conn: sqlite3.Connection) -> dict[str, list[tuple]]:
    """Every current table's rows without ids and times, sorted: for comparing two stores."""
    return {table: sorted(conn.execute(f"SELECT {cols} FROM {table}").fetchall(), key=repr)
            for table, cols in compared_columns().items()}  # fmt: skip
