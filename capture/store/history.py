"""The store's history: when each amount first appeared, when each gap opened and closed.

Read from the append-only ``history`` table (see :mod:`capture.store.database`), after the
ALCOA+ data-integrity principles: records should be attributable and contemporaneous.
"""

from __future__ import annotations

import datetime as dt
import json
import sqlite3


def history_for(conn: sqlite3.Connection, path: str) -> list[dict]:
    """The entry's history, oldest first: when each version was computed, and its result."""
    rows = conn.execute(
        "SELECT sha256, tool_version, computed_at, result FROM history WHERE entry_path = ? "
        "ORDER BY computed_at, id",
        (path,),
    ).fetchall()
    return [{"sha256": s, "tool_version": v, "computed_at": t, "result": json.loads(r)}
            for s, v, t, r in rows]  # fmt: skip


def timeline(conn: sqlite3.Connection, path: str) -> list[dict]:
    """The entry's :func:`timeline_of` its history in the local store."""
    return timeline_of(history_for(conn, path))


def timeline_of(history: list[dict]) -> list[dict]:
    """When each amount first appeared and each gap opened and closed, from a history
    (:func:`history_for`, or the shared store's).

    Events, oldest first: ``{"at", "event", "what"}``, the event one of "present at first
    scan" (an amount already there when masstrail first read the entry: a notebook adopted
    after the fact is not late), "recorded" (an amount masstrail saw added later), "gap
    opened", "gap closed", "unreadable since" (a save masstrail could not read: it closes no
    gap) and "readable again".
    """
    events: list[dict] = []
    seen_amounts: set[tuple[str, str]] = set()
    open_gaps: set[tuple[str, str]] = set()
    first, unreadable = True, False
    for h in history:
        r = h["result"]
        at = h["computed_at"]
        if r.get("status") == "error":
            if not unreadable:
                why = (r.get("error") or {}).get("message", "")
                events.append({"at": at, "event": "unreadable since", "what": why})
            unreadable = True
            continue
        if unreadable:
            events.append({"at": at, "event": "readable again", "what": ""})
            unreadable = False
        for m in r.get("materials", []):
            key = (m["name"], m.get("stated") or "")
            if m.get("stated") and key not in seen_amounts:
                seen_amounts.add(key)
                events.append({"at": at, "event": "present at first scan" if first else "recorded",
                               "what": f"{m['name']}: {m['stated']}"})  # fmt: skip
        now = {(g["kind"], g["item"]) for g in r.get("gaps", [])}
        for k in sorted(now - open_gaps):
            events.append({"at": at, "event": "gap opened", "what": f"{k[1]} ({k[0]})"})
        for k in sorted(open_gaps - now):
            events.append({"at": at, "event": "gap closed", "what": f"{k[1]} ({k[0]})"})
        open_gaps, first = now, False
    return events


def late_records(conn: sqlite3.Connection, days: float) -> list[dict]:
    """Amounts first recorded more than ``days`` after their entry's experiment date (ALCOA+:
    records should be contemporaneous). Only amounts masstrail saw added after it first read
    the entry count: those present at its first scan are the notebook as it was adopted."""
    out = []
    for path, date in conn.execute("SELECT path, date FROM entries WHERE date IS NOT NULL"):
        experiment = dt.date.fromisoformat(date)
        for ev in timeline(conn, path):
            if ev["event"] != "recorded":
                continue
            first = dt.datetime.fromisoformat(ev["at"]).date()
            late = (first - experiment).days
            if late > days:
                out.append({"entry": path, "what": ev["what"], "first_recorded": first.isoformat(),
                            "days_after": late, "experiment": date})  # fmt: skip
    return out
