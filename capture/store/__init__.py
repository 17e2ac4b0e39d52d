"""The lab's store: every entry's current result and an append-only history, in SQLite.

- :mod:`capture.store.database`: where the store lives, its schema, writing results,
  what a rescan needs to know (``previous_results``), backup;
- :mod:`capture.store.history`: the history read back (when each amount first appeared,
  when each gap opened and closed, records made late).

The built-in writer plugin (``masstrail_plugins/write/store_writer.py``, named ``store``)
writes every result here; the command line's ``rebuild``, ``backup``, ``history``,
``export`` and ``gaps --late`` read it.
"""

from capture.store.database import (
    DB_NAME,
    SCHEMA,
    StoreError,
    backup,
    connect,
    current_tables,
    filesystem_type,
    previous_gaps,
    previous_results,
    rebuild,
    remove_absent,
    remove_entry,
    store_path,
    write_results,
)
from capture.store.history import history_for, late_records, timeline

__all__ = [
    "DB_NAME",
    "SCHEMA",
    "StoreError",
    "backup",
    "connect",
    "current_tables",
    "filesystem_type",
    "history_for",
    "late_records",
    "previous_gaps",
    "previous_results",
    "rebuild",
    "remove_absent",
    "remove_entry",
    "store_path",
    "timeline",
    "write_results",
]
