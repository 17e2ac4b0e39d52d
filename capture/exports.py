"""Exports of the store's current tables, safe to open in a spreadsheet."""

from __future__ import annotations

import csv
import json
import sqlite3
from pathlib import Path

from capture.reports import _defuse

TABLES = ("entries", "materials", "gaps", "metrics")


def _table(conn: sqlite3.Connection, table: str) -> tuple[list[str], list[tuple]]:
    cur = conn.execute(f"SELECT * FROM {table} ORDER BY rowid")
    cols = [d[0] for d in cur.description]
    return cols, cur.fetchall()


def export_csv(conn: sqlite3.Connection, folder: Path) -> list[Path]:
    """One CSV per table in ``folder``; formula-like cells neutralised (OWASP, CWE-1236)."""
    folder.mkdir(parents=True, exist_ok=True)
    written = []
    for table in TABLES:
        cols, rows = _table(conn, table)
        path = folder / f"{table}.csv"
        with path.open("w", newline="", encoding="utf-8") as fh:
            w = csv.writer(fh)
            w.writerow(cols)
            for row in rows:
                w.writerow([_defuse(v) for v in row])
        written.append(path)
    return written


def export_json(conn: sqlite3.Connection) -> str:
    """All tables as one JSON object of lists of rows."""
    out = {}
    for table in TABLES:
        cols, rows = _table(conn, table)
        out[table] = [dict(zip(cols, row, strict=True)) for row in rows]
    return json.dumps(out, indent=2, ensure_ascii=False) + "\n"
