"""The shared store: many notebooks' current results and one append-only history, in
PostgreSQL, for a department.

- The same current tables as the lab's SQLite store (``entries``, ``metrics``,
  ``materials``, ``gaps``, ``readings``) and the same ``history``, each keyed by the
  notebook's id as well, plus ``notebooks`` (id, name, owner).
- The schema is made and changed only by versioned migrations (:data:`MIGRATIONS`), run by
  ``masstrail store init`` and ``masstrail store upgrade``; writers and readers check the
  version and never change the schema.
- ``history`` is append-only for everyone, its owner included: triggers refuse UPDATE,
  DELETE and TRUNCATE. Rows are written with ON CONFLICT DO NOTHING on (notebook, entry,
  entry bytes, masstrail version), so a result sent twice is stored once.
- Least privilege: the group roles ``masstrail_writer`` (its members add and change only
  the rows of notebooks they registered, and only append to the history: row-level
  security) and ``masstrail_reader`` (reads everything). A lab's login role is made a
  member of one of them by the database's administrator.

Results reach this store from each notebook's local queue (``outbox`` in its SQLite store),
in order: :mod:`capture.store.outbox`.
"""

from __future__ import annotations

import json
from collections.abc import Iterator
from typing import Any

from capture.store.address import shown
from capture.store.database import COLUMNS, ENTRY_COLUMNS, StoreError, compared_columns

POSTGRES_EXTRA = ("the shared store needs the postgres extra: pip install 'masstrail[postgres]' "
                  "(from a checkout: pip install -e '.[postgres]')")  # fmt: skip
WRITER, READER = "masstrail_writer", "masstrail_reader"
_CURRENT = ("entries", "metrics", "materials", "gaps", "readings")
_OWN = "notebook IN (SELECT id FROM notebooks WHERE owner = current_user)"


def _tables_sql() -> str:
    cols = {"metrics": "e_factor DOUBLE PRECISION, e_factor_simple DOUBLE PRECISION, "
            "e_factor_estimated DOUBLE PRECISION, pmi DOUBLE PRECISION, completeness DOUBLE "
            "PRECISION, atom_economy DOUBLE PRECISION, \"yield\" DOUBLE PRECISION, rme DOUBLE "
            "PRECISION, hazard_weighted_e DOUBLE PRECISION, inputs_g DOUBLE PRECISION, "
            "waste_g DOUBLE PRECISION, PRIMARY KEY (notebook, entry_path)",
            "materials": "name TEXT NOT NULL, resolved TEXT, role TEXT, category TEXT, stage "
            "TEXT, stated TEXT, mass_g DOUBLE PRECISION, basis TEXT, origin TEXT, stream TEXT",
            "gaps": "kind TEXT NOT NULL, item TEXT NOT NULL, severity TEXT NOT NULL, "
            "allowance_g DOUBLE PRECISION, message TEXT, evidence TEXT",
            "readings": "file TEXT, line INTEGER, label TEXT, mass_g DOUBLE PRECISION, stable "
            "INTEGER, timestamp TEXT, assigned_to TEXT"}  # fmt: skip
    out = [
        """
CREATE TABLE masstrail_schema (version INTEGER NOT NULL, applied_at TIMESTAMPTZ NOT NULL
    DEFAULT now());
CREATE TABLE notebooks (id TEXT PRIMARY KEY, name TEXT NOT NULL, root TEXT,
    owner NAME NOT NULL DEFAULT current_user, registered_at TIMESTAMPTZ NOT NULL DEFAULT now());
CREATE TABLE entries (
    notebook TEXT NOT NULL REFERENCES notebooks(id), path TEXT NOT NULL, id TEXT NOT NULL,
    title TEXT, author TEXT, grp TEXT, project TEXT, date TEXT, sha256 TEXT, status TEXT NOT NULL,
    error TEXT, product TEXT, product_g DOUBLE PRECISION, tool_version TEXT NOT NULL,
    updated_at TEXT NOT NULL, error_location TEXT, inputs_sha256 TEXT, balance_log TEXT,
    entry_stat TEXT, gaps_blocking INTEGER, gaps_major INTEGER, gaps_minor INTEGER,
    stale_since TEXT, result TEXT, PRIMARY KEY (notebook, path));
CREATE TABLE history (
    id BIGSERIAL PRIMARY KEY, notebook TEXT NOT NULL REFERENCES notebooks(id),
    entry_path TEXT NOT NULL, entry_id TEXT NOT NULL, sha256 TEXT NOT NULL,
    tool_version TEXT NOT NULL, computed_at TEXT NOT NULL, result TEXT NOT NULL,
    UNIQUE (notebook, entry_path, sha256, tool_version));
CREATE FUNCTION masstrail_append_only() RETURNS trigger LANGUAGE plpgsql AS
    $$ BEGIN RAISE EXCEPTION 'history is append-only'; END $$;
CREATE TRIGGER history_no_change BEFORE UPDATE OR DELETE ON history
    FOR EACH ROW EXECUTE FUNCTION masstrail_append_only();
CREATE TRIGGER history_no_truncate BEFORE TRUNCATE ON history
    FOR EACH STATEMENT EXECUTE FUNCTION masstrail_append_only();
"""
    ]
    for table, body in cols.items():
        key = "" if table == "metrics" else "id BIGSERIAL PRIMARY KEY, "
        out.append(f"CREATE TABLE {table} ({key}notebook TEXT NOT NULL, entry_path TEXT NOT NULL, "
                   f"{body}, FOREIGN KEY (notebook, entry_path) REFERENCES entries(notebook, "
                   "path) ON DELETE CASCADE);")  # fmt: skip
    return "\n".join(out)


def _roles_sql() -> str:
    out = [
        f"""
DO $$ BEGIN
    IF NOT EXISTS (SELECT FROM pg_roles WHERE rolname = '{WRITER}') THEN
        CREATE ROLE {WRITER} NOLOGIN; END IF;
    IF NOT EXISTS (SELECT FROM pg_roles WHERE rolname = '{READER}') THEN
        CREATE ROLE {READER} NOLOGIN; END IF;
END $$;
GRANT SELECT ON ALL TABLES IN SCHEMA public TO {READER};
GRANT SELECT ON masstrail_schema TO {WRITER};
GRANT SELECT, INSERT ON notebooks, history TO {WRITER};
GRANT SELECT, INSERT, UPDATE, DELETE ON entries, metrics, materials, gaps, readings TO {WRITER};
GRANT USAGE ON ALL SEQUENCES IN SCHEMA public TO {WRITER};
ALTER TABLE notebooks ENABLE ROW LEVEL SECURITY;
CREATE POLICY see_all ON notebooks FOR SELECT USING (true);
CREATE POLICY register_own ON notebooks FOR INSERT TO {WRITER} WITH CHECK (owner = current_user);
ALTER TABLE history ENABLE ROW LEVEL SECURITY;
CREATE POLICY read_all ON history FOR SELECT TO {READER} USING (true);
CREATE POLICY read_own ON history FOR SELECT TO {WRITER} USING ({_OWN});
CREATE POLICY append_own ON history FOR INSERT TO {WRITER} WITH CHECK ({_OWN});
"""
    ]
    for table in _CURRENT:
        out.append(f"ALTER TABLE {table} ENABLE ROW LEVEL SECURITY;\n"
                   f"CREATE POLICY read_all ON {table} FOR SELECT TO {READER} USING (true);\n"
                   f"CREATE POLICY own_rows ON {table} FOR ALL TO {WRITER} USING ({_OWN}) "
                   f"WITH CHECK ({_OWN});")  # fmt: skip
    return "\n".join(out)


# (version, what it does, SQL): run in order, each in its own transaction, never edited
# once released; a new change is a new migration
MIGRATIONS: list[tuple[int, str, str]] = [
    (1, "tables, append-only history, roles and row-level security",
     _tables_sql() + _roles_sql()),
    (2, "indexes for readers over many notebooks",
     "CREATE INDEX gaps_kind ON gaps(kind, severity);\n"
     "CREATE INDEX history_entry ON history(notebook, entry_path, computed_at);\n"
     "CREATE INDEX materials_entry ON materials(notebook, entry_path);\n"
     "CREATE INDEX gaps_entry ON gaps(notebook, entry_path);\n"
     "CREATE INDEX readings_entry ON readings(notebook, entry_path);"),
]  # fmt: skip
SCHEMA_VERSION = MIGRATIONS[-1][0]


def connect(url: str, timeout: float = 5):
    """A connection to the shared store (psycopg 3), or StoreError saying why, with the
    password masked."""
    try:
        import psycopg
    except ImportError as exc:
        raise StoreError(POSTGRES_EXTRA) from exc
    try:
        return psycopg.connect(
            url, connect_timeout=max(1, int(timeout)), autocommit=True, application_name="masstrail"
        )  # each write: conn.transaction()
    except psycopg.Error as exc:
        why = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise StoreError(f"the shared store at {shown(url)} cannot be reached: {why}") from exc


def version(conn) -> int:
    """The schema version of the shared store; 0 for a database masstrail has not set up."""
    with conn.cursor() as cur:
        cur.execute("SELECT to_regclass('masstrail_schema')")
        if cur.fetchone()[0] is None:
            return 0
        cur.execute("SELECT COALESCE(MAX(version), 0) FROM masstrail_schema")
        return cur.fetchone()[0]


def migrate(url: str, target: int = SCHEMA_VERSION, first: bool = False) -> tuple[int, int]:
    """Run the migrations from the store's version up to ``target``; (before, after).
    ``first``: only on a database masstrail has not set up (``store init``)."""
    with connect(url) as conn:
        conn.execute("SELECT pg_advisory_lock(727274)")  # one migrator at a time
        before = version(conn)
        if first and before:
            raise StoreError(
                f"{shown(url)} is a masstrail store already (schema version "
                f"{before}); to bring it up to date: masstrail store upgrade"
            )
        if not first and not before:
            raise StoreError(f"{shown(url)} is not a masstrail store yet: masstrail store init")
        for number, _what, sql in MIGRATIONS:
            if before < number <= target:
                with conn.transaction():
                    conn.execute(sql)
                    conn.execute("INSERT INTO masstrail_schema (version) VALUES (%s)", (number,))
        return before, max(before, min(target, SCHEMA_VERSION))


def require_current(conn, url: str) -> None:
    """StoreError unless the store's schema is the one this masstrail writes."""
    have = version(conn)
    if have != SCHEMA_VERSION:
        action = ("masstrail store init" if have == 0 else "masstrail store upgrade"
                  if have < SCHEMA_VERSION else "a newer masstrail")  # fmt: skip
        raise StoreError(f"the shared store at {shown(url)} has schema version {have}; this "
                         f"masstrail needs {SCHEMA_VERSION}: run {action}")  # fmt: skip


def register(conn, notebook: str, name: str, root: str) -> None:
    """Make the notebook known to the shared store (owned by the connecting role)."""
    conn.execute("INSERT INTO notebooks (id, name, root) VALUES (%s, %s, %s) "
                 "ON CONFLICT (id) DO NOTHING", (notebook, name, root))  # fmt: skip
    row = conn.execute(
        "SELECT n.owner, current_user, r.rolsuper OR r.rolbypassrls OR t.tableowner = "
        "current_user FROM notebooks n, pg_roles r, pg_tables t WHERE n.id = %s AND "
        "r.rolname = current_user AND t.tablename = 'entries' AND t.schemaname = "
        "current_schema()", (notebook,)).fetchone()  # fmt: skip
    if row is None:
        raise StoreError(f"notebook {notebook} could not be registered in the shared store")
    owner, me, unbound = row
    if owner != me and not unbound:
        raise StoreError(f"notebook {name} ({notebook}) belongs to the role {owner} in the "
                         f"shared store; the role {me} cannot write its rows")  # fmt: skip


def _quoted(cols: tuple[str, ...]) -> str:
    return ", ".join('"' + c + '"' for c in cols)  # "yield" is an SQL keyword


_PG_INSERT = {
    t: f"INSERT INTO {t} (notebook, entry_path, {_quoted(cols)}) "
    f"VALUES (%s, {', '.join(['%s'] * (len(cols) + 1))})"
    for t, cols in COLUMNS.items()
}
_PG_ENTRY = (f"INSERT INTO entries (notebook, {', '.join(ENTRY_COLUMNS)}, result) "
             f"VALUES ({', '.join(['%s'] * (len(ENTRY_COLUMNS) + 2))})")  # fmt: skip


def _plain(value: Any) -> Any:
    return int(value) if isinstance(value, bool) else value  # SQLite's 0/1, kept as integers


_E = {c: i for i, c in enumerate(ENTRY_COLUMNS)}


def _result(cur, notebook: str, payload: str, at: str, rows_json: str) -> None:
    """One queued result: its rows as the local store wrote them (no model is rebuilt)."""
    rows = json.loads(rows_json)
    entry, path = rows["entry"], rows["entry"][_E["path"]]
    known = None
    if entry[_E["status"]] == "error":  # (asked only then: a pipeline waits for an answer)
        known = cur.execute("SELECT status, stale_since FROM entries WHERE notebook = %s AND "
                            "path = %s", (notebook, path)).fetchone()  # fmt: skip
    if known is not None and (known[0] == "ok" or known[1]):
        cur.execute(  # the last good figures stay, marked stale (as in the local store)
            "UPDATE entries SET status = 'error', error = %s, error_location = %s, sha256 = %s, "
            "inputs_sha256 = %s, updated_at = %s, stale_since = COALESCE(stale_since, %s), "
            "gaps_blocking = 0, gaps_major = 0, gaps_minor = 0, result = %s "
            "WHERE notebook = %s AND path = %s",
            (entry[_E["error"]], entry[_E["error_location"]], entry[_E["sha256"]],
             entry[_E["inputs_sha256"]], at, at, payload, notebook, path),
        )  # fmt: skip
    else:
        cur.execute("DELETE FROM entries WHERE notebook = %s AND path = %s", (notebook, path))
        cur.execute(_PG_ENTRY, (notebook, *entry, payload))
        for table, table_rows in rows["rows"].items():
            if table_rows:
                cur.executemany(_PG_INSERT[table], [(notebook, *map(_plain, row))
                                                    for row in table_rows])  # fmt: skip
    if entry[_E["sha256"]]:
        cur.execute(
            "INSERT INTO history (notebook, entry_path, entry_id, sha256, tool_version, "
            "computed_at, result) VALUES (%s,%s,%s,%s,%s,%s,%s) ON CONFLICT DO NOTHING",
            (notebook, path, entry[_E["id"]], entry[_E["sha256"]], entry[_E["tool_version"]],
             at, payload),
        )  # fmt: skip


def apply(conn, notebook: str, items: list[tuple]) -> None:
    """Apply queued items ``(seq, kind, entry path, computed at, payload, rows)`` in order,
    in one transaction: a result replaces the entry's rows and appends its history; ``remove``
    drops an entry's rows; ``clear`` drops all of the notebook's (a rebuild)."""
    with conn.transaction(), conn.pipeline(), conn.cursor() as cur:  # one round trip a share
        for _seq, kind, path, at, payload, rows in items:
            if kind == "result":
                _result(cur, notebook, payload or "", at, rows)
            elif kind == "remove":
                cur.execute("DELETE FROM entries WHERE notebook = %s AND path = %s",
                            (notebook, path))  # fmt: skip
            elif kind == "clear":
                cur.execute("DELETE FROM entries WHERE notebook = %s", (notebook,))


def notebooks(conn) -> list[tuple[str, str]]:
    """(id, name) of every notebook in the shared store, by name."""
    return [tuple(r) for r in conn.execute("SELECT id, name FROM notebooks ORDER BY name, id")]


def _which(conn, notebook: str | None) -> list[tuple[str, str]]:
    known = notebooks(conn)
    if notebook is None:
        return known
    chosen = [(i, n) for i, n in known if notebook in (i, n)]
    if not chosen:
        names = ", ".join(n for _, n in known) or "none yet"
        raise StoreError(f"no notebook {notebook!r} in the shared store; it holds: {names}")
    return chosen


def results(conn, notebook: str | None = None) -> Iterator[dict]:
    """Every current result (the sidecar's content), notebook by notebook; the entry's path is
    given as ``NOTEBOOK/PATH`` and ``notebook`` names its notebook."""
    for nb_id, name in _which(conn, notebook):
        with conn.transaction(), conn.cursor(name=f"results_{nb_id[:8]}") as cur:
            # server-side: the rows come a share at a time, not all at once
            cur.execute("SELECT result FROM entries WHERE notebook = %s ORDER BY path", (nb_id,))
            for (text,) in cur:
                r = json.loads(text)
                r["entry"]["path"] = f"{name}/{r['entry']['path']}"
                r["notebook"] = name
                yield r


def gap_lines(conn, notebook: str | None = None) -> Iterator[tuple]:
    """Every current entry with each of its gaps, straight from the tables (no result is
    parsed): ``(entry as NOTEBOOK/PATH, id, author, group, project, date, status, error,
    severity, kind, item, allowance_g, message)``; an entry without gaps once, its gap
    columns None."""
    ids = [i for i, _ in _which(conn, notebook)]
    with conn.transaction(), conn.cursor(name="gap_lines") as cur:
        cur.execute(
            "SELECT n.name || '/' || e.path, e.id, e.author, e.grp, e.project, e.date, e.status, "
            "e.error, g.severity, g.kind, g.item, g.allowance_g, g.message FROM entries e "
            "JOIN notebooks n ON n.id = e.notebook LEFT JOIN gaps g ON g.notebook = e.notebook "
            "AND g.entry_path = e.path WHERE e.notebook = ANY(%s) ORDER BY n.name, e.path, g.id",
            (ids,),
        )
        yield from cur


def history_rows(conn, notebook: str, path: str) -> list[dict]:
    """The entry's history in the shared store, oldest first (as the local store's)."""
    rows = conn.execute("SELECT sha256, tool_version, computed_at, result FROM history WHERE "
                        "notebook = %s AND entry_path = %s ORDER BY computed_at, id",
                        (notebook, path)).fetchall()  # fmt: skip
    return [{"sha256": s, "tool_version": v, "computed_at": t, "result": json.loads(r)}
            for s, v, t, r in rows]  # fmt: skip


def table_rows(conn, table: str, notebook: str | None = None) -> tuple[list[str], list[dict]]:
    """A current table's columns and rows (with the notebook's name), for ``export``."""
    ids = [i for i, _ in _which(conn, notebook)]
    with conn.cursor() as cur:
        cur.execute(f"SELECT n.name AS notebook_name, t.* FROM {table} t JOIN notebooks n ON "
                    "n.id = t.notebook WHERE t.notebook = ANY(%s) ORDER BY n.name, "
                    f"{'t.path' if table == 'entries' else 't.entry_path'}", (ids,))  # fmt: skip
        cols = [d.name for d in cur.description if d.name != "result"]
        return cols, [dict(zip([d.name for d in cur.description], row, strict=True))
                      for row in cur]  # fmt: skip


def current_tables(conn, notebook: str) -> dict[str, list[tuple]]:
    """One notebook's current rows, as :func:`capture.store.database.current_tables` gives a
    local store's: for comparing the two."""
    return {table: sorted((tuple(r) for r in conn.execute(
                f"SELECT {cols} FROM {table} WHERE notebook = %s", (notebook,))), key=repr)
            for table, cols in compared_columns().items()}  # fmt: skip


def history_count(conn, notebook: str | None = None) -> int:
    """How many history rows the shared store holds (of one notebook, or of all)."""
    if notebook is None:
        return conn.execute("SELECT COUNT(*) FROM history").fetchone()[0]
    return conn.execute("SELECT COUNT(*) FROM history WHERE notebook = %s",
                        (notebook,)).fetchone()[0]  # fmt: skip
