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


def table_rows(conn: sqlite3.Connection, table: str):
    """The table's column names and its rows as dicts, in the order they were written."""
    import sqlite_utils

    t = sqlite_utils.Database(conn)[table]
    return list(t.columns_dict), t.rows_where(order_by="rowid")


def tables_csv(tables: dict, folder: Path) -> list[Path]:
    """One CSV per table (``{name: (columns, rows as dicts)}``) in ``folder``, formula-like
    cells neutralised."""
    folder.mkdir(parents=True, exist_ok=True)
    written = []
    for table, (cols, rows) in tables.items():
        path = folder / f"{table}.csv"
        with path.open("w", newline="", encoding="utf-8") as fh:
            w = csv.writer(fh)
            w.writerow(cols)
            for row in rows:
                w.writerow([defuse(row[c]) for c in cols])
        written.append(path)
    return written


def tables_json(tables: dict) -> str:
    """Tables (``{name: (columns, rows as dicts)}``) as one JSON object of lists of rows."""
    out = {table: [{c: row[c] for c in cols} for row in rows]
           for table, (cols, rows) in tables.items()}  # fmt: skip
    return json.dumps(out, indent=2, ensure_ascii=False) + "\n"


def shared_tables(url: str, notebook: str | None) -> dict:
    """The shared store's current tables (all notebooks, or one), each row with its
    notebook's name and id."""
    from capture.store import shared

    with shared.connect(url) as conn:
        shared.require_current(conn, url)
        return {table: shared.table_rows(conn, table, notebook) for table in TABLES}


def export_notebook(nb: Notebook, jobs: int = 1) -> sqlite3.Connection:
    """Bring the notebook's store up to date (a reusing scan) and return a connection to it,
    for :func:`table_rows`, then :func:`tables_csv` or :func:`tables_json`."""
    from capture.scan import scan
    from capture.store.upkeep import open_store

    conn = open_store(nb)[0]
    scan(nb, reuse=True, keep=False, jobs=jobs)
    return conn
