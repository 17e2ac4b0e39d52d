"""Exports of the store's current tables, safe to open in a spreadsheet."""

from __future__ import annotations

import csv
import json
import sqlite3
from pathlib import Path
from typing import TYPE_CHECKING

from capture.views.gaplist import defuse

if TYPE_CHECKING:
    from capture.notebook import Notebook

TABLES = ("entries", "materials", "gaps", "metrics")


def _rows(conn: sqlite3.Connection, table: str):
    """The table's column names and its rows as dicts, in the order they were written."""
    import sqlite_utils

    t = sqlite_utils.Database(conn)[table]
    return list(t.columns_dict), t.rows_where(order_by="rowid")


def export_csv(conn: sqlite3.Connection, folder: Path) -> list[Path]:
    """One CSV per table in ``folder``; formula-like cells neutralised (OWASP, CWE-1236)."""
    folder.mkdir(parents=True, exist_ok=True)
    written = []
    for table in TABLES:
        cols, rows = _rows(conn, table)
        path = folder / f"{table}.csv"
        with path.open("w", newline="", encoding="utf-8") as fh:
            w = csv.writer(fh)
            w.writerow(cols)
            for row in rows:
                w.writerow([defuse(row[c]) for c in cols])
        written.append(path)
    return written


def export_json(conn: sqlite3.Connection) -> str:
    """All tables as one JSON object of lists of rows."""
    out = {}
    for table in TABLES:
        out[table] = list(_rows(conn, table)[1])
    return json.dumps(out, indent=2, ensure_ascii=False) + "\n"


def export_notebook(nb: Notebook, jobs: int = 1) -> sqlite3.Connection:
    """Bring the notebook's store up to date (a reusing scan) and return a connection to it,
    for :func:`export_csv` or :func:`export_json`."""
    from capture.scan import scan
    from capture.store.upkeep import open_store

    conn = open_store(nb)[0]
    scan(nb, reuse=True, keep=False, jobs=jobs)
    return conn
