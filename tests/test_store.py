"""The lab's SQLite store: round trip, append-only history, rebuild, backup, readers, exports."""

from __future__ import annotations

import csv
import json
import os
import sqlite3
import threading
from dataclasses import asdict

import pytest
from click.testing import CliRunner

from capture.cli import cli
from capture.hookspecs import hookimpl
from capture.notebook import Notebook
from capture.scan import scan
from capture.store import (
    connect,
    current_tables,
    filesystem_type,
    history_for,
    previous_results,
    rebuild,
    store_path,
)

from helpers import entry_md

ENTRY = entry_md(
    """
    author: "=cmd|' /C calc'!A0"
    group: Alder
    product: {name: p, mass: 1.00 g}
    materials: [{name: DCM, amount: 10 mL}, {name: A, amount: 3.00 g}]
    """,
    "Washed with brine and dried over MgSO4.",
)


def _db(notebook):
    return connect(notebook.root / ".masstrail" / "records.db")


def test_round_trip_of_current_results(notebook):
    notebook.write("e.md", ENTRY)
    notebook.scan()
    conn = _db(notebook)
    (entry,) = conn.execute("SELECT path, grp, product_g, status FROM entries").fetchall()
    assert entry == ("e.md", "Alder", 1.0, "ok")
    mats = conn.execute("SELECT name, mass_g, stream FROM materials ORDER BY id").fetchall()
    assert mats == [("DCM", 13.266, "halogenated organic"), ("A", 3.0, "non-halogenated organic")]
    (e,) = conn.execute("SELECT e_factor FROM metrics").fetchone()
    assert e == pytest.approx(15.266)
    kinds = {k for (k,) in conn.execute("SELECT kind FROM gaps")}
    assert kinds == {"liquid_volume", "drying_agent_mass"}
    view = conn.execute("SELECT major + minor FROM entry_gaps WHERE path = 'e.md'").fetchone()
    assert view == (2,)


def test_history_is_append_only_and_counts_versions(notebook):
    path = notebook.write("e.md", ENTRY)
    notebook.scan()
    notebook.scan()  # unchanged: no new history row
    conn = _db(notebook)
    assert conn.execute("SELECT COUNT(*) FROM history").fetchone() == (1,)
    path.write_text(ENTRY.replace("3.00 g", "3.50 g"))
    notebook.scan()
    hist = history_for(conn, "e.md")
    assert len(hist) == 2
    assert [h["result"]["materials"][1]["mass_g"] for h in hist] == [3.0, 3.5]
    with pytest.raises(sqlite3.IntegrityError, match="append-only"):
        conn.execute("UPDATE history SET sha256 = 'x'")
    with pytest.raises(sqlite3.IntegrityError, match="append-only"):
        conn.execute("DELETE FROM history")


def test_rebuild_equals_incremental_and_keeps_history(notebook):
    a = notebook.write("a.md", ENTRY)
    notebook.write("b.md", ENTRY.replace("Alder", "Birch"))
    notebook.scan()
    a.write_text(ENTRY.replace("10 mL", "12 mL"))
    notebook.scan()
    conn = _db(notebook)
    incremental = current_tables(conn)
    hist = conn.execute("SELECT COUNT(*) FROM history").fetchone()[0]
    res = CliRunner().invoke(cli, ["rebuild", str(notebook.root)])
    assert res.exit_code == 0, res.output
    assert current_tables(conn) == incremental
    assert conn.execute("SELECT COUNT(*) FROM history").fetchone()[0] == hist == 3
    again = rebuild(conn, scan(Notebook.open(notebook.root), write=False).results)
    assert again == 0


def test_a_reader_during_writes_does_not_break(notebook):
    for i in range(20):
        notebook.write(f"e{i}.md", ENTRY)
    notebook.scan()
    db = notebook.root / ".masstrail" / "records.db"
    errors, reads = [], []
    stop = threading.Event()

    def reader():
        conn = sqlite3.connect(db, timeout=10)
        while not stop.is_set():
            try:
                reads.append(conn.execute("SELECT COUNT(*) FROM materials").fetchone()[0])
            except sqlite3.Error as exc:
                errors.append(exc)

    t = threading.Thread(target=reader)
    t.start()
    for n in range(5):
        for i in range(20):
            notebook.write(f"e{i}.md", ENTRY.replace("3.00 g", f"3.{n}{i} g"))
        notebook.scan()
    stop.set()
    t.join()
    assert errors == [] and len(reads) > 10
    assert set(reads) <= {40}  # a reader sees whole transactions: 20 entries × 2 materials


def test_backup_copies_history(notebook, tmp_path):
    notebook.write("e.md", ENTRY)
    notebook.scan()
    target = tmp_path / "copy.db"
    res = CliRunner().invoke(cli, ["backup", str(notebook.root), str(target)])
    assert res.exit_code == 0, res.output
    copy = sqlite3.connect(target)
    assert copy.execute("SELECT COUNT(*) FROM history").fetchone() == (1,)
    res = CliRunner().invoke(cli, ["backup", str(notebook.root), str(target)])
    assert res.exit_code == 2 and "exists already" in res.output


def test_export_csv_neutralises_formulas_and_json_has_every_table(notebook, tmp_path):
    notebook.write("e.md", ENTRY)
    out = tmp_path / "x"
    res = CliRunner().invoke(cli, ["export", str(notebook.root), "-o", str(out)])
    assert res.exit_code == 0, res.output
    rows = list(csv.DictReader((out / "entries.csv").open()))
    # OWASP / CWE-1236: a cell starting with = is prefixed with '
    assert rows[0]["author"] == "'=cmd|' /C calc'!A0"
    res = CliRunner().invoke(cli, ["export", str(notebook.root), "--format", "json"])
    data = json.loads(res.output)
    assert set(data) == {"entries", "materials", "gaps", "metrics"}
    assert data["entries"][0]["author"] == "=cmd|' /C calc'!A0"  # JSON keeps the text as is


def test_the_store_moves_off_a_network_share(tmp_path, monkeypatch):
    monkeypatch.setenv("XDG_DATA_HOME", str(tmp_path / "data"))
    root = tmp_path / "nb"
    root.mkdir()
    mounts = f"server:/export {tmp_path} nfs4 rw 0 0\n/dev/sda1 / ext4 rw 0 0\n"
    assert filesystem_type(root, mounts) == "nfs4"
    db, message = store_path(root, None, mounts)
    assert db.is_relative_to(tmp_path / "data" / "masstrail") and "network file system" in message
    local = "/dev/sda1 / ext4 rw 0 0\n"
    assert store_path(root, None, local) == (root / ".masstrail" / "records.db", None)


def test_the_store_can_be_switched_off(notebook):
    notebook.write("masstrail.toml", "[store]\nenabled = false\n")
    notebook.write("e.md", ENTRY)
    notebook.scan()
    assert not (notebook.root / ".masstrail" / "records.db").exists()


def test_a_deleted_entry_leaves_the_current_tables_but_not_the_history(notebook):
    """masstrail_remove_result: called by the watcher when an entry disappears."""
    path = notebook.write("e.md", ENTRY)
    notebook.scan()
    nb = Notebook.open(notebook.root)
    nb.pm.hook.masstrail_remove_result(
        entry_path=path, relpath="e.md", root=nb.root, config=nb.config
    )
    conn = _db(notebook)
    assert conn.execute("SELECT COUNT(*) FROM entries").fetchone() == (0,)
    assert conn.execute("SELECT COUNT(*) FROM materials").fetchone() == (0,)
    assert conn.execute("SELECT COUNT(*) FROM history").fetchone() == (1,)
    assert not (notebook.root / "e.waste.json").exists()


def test_timeline_and_late_records(notebook):
    """ALCOA+ (MHRA 2018; FDA 2018): the history shows when each amount first appeared and
    when each gap closed; amounts recorded long after the experiment are flagged."""
    from capture.store import late_records, timeline

    path = notebook.write(
        "e.md",
        entry_md("""
        date: 2026-01-05
        product: {name: p, mass: 1.00 g}
        materials: [{name: A, amount: 3.00 g}, {name: B}]
        """),
    )
    notebook.scan()
    path.write_text(path.read_text().replace("{name: B}", "{name: B, amount: 0.50 g}"))
    notebook.scan()
    conn = _db(notebook)
    events = [(e["event"], e["what"]) for e in timeline(conn, "e.md")]
    assert events == [("present at first scan", "A: 3.00 g"), ("gap opened", "B (no_amount)"),
                      ("recorded", "B: 0.50 g"), ("gap closed", "B (no_amount)")]  # fmt: skip
    # the scans ran long after 2026-01-05; what was there when masstrail first saw the entry
    # is not late (a notebook adopted after the fact), what it saw added afterwards is
    late = late_records(conn, days=7)
    assert {x["what"] for x in late} == {"B: 0.50 g"}
    res = CliRunner().invoke(cli, ["gaps", str(notebook.root), "--late", "--json"])
    assert [r["kind"] for r in json.loads(res.output)] == ["late_record"]
    res = CliRunner().invoke(cli, ["history", str(path)])
    assert "gap closed   B (no_amount)" in res.output


def test_an_unreadable_save_closes_no_gap_and_keeps_the_last_good_figures(notebook):
    """A save that breaks the front matter is an "unreadable since" event, not "gap closed";
    the store keeps the entry's last good figures, marked stale, until it reads again."""
    from capture.store import timeline

    path = notebook.write("e.md", entry_md("""
        date: 2026-01-05
        product: {name: p, mass: 1.00 g}
        materials: [{name: A, amount: 3.00 g}, {name: B}]
        """, "The solid was collected on a filter paper."))  # fmt: skip
    notebook.scan()
    good = path.read_text()
    path.write_text(good.replace("date: 2026-01-05", "date: 2026-01-05\ntitle: [unclosed"))
    report = notebook.scan()
    assert report.results[0].status == "error"
    conn = _db(notebook)
    row = conn.execute("SELECT status, stale_since, product_g, gaps_major FROM entries").fetchone()
    assert row[0] == "error" and row[1] is not None and row[2] == 1.0 and row[3] == 0
    assert conn.execute("SELECT count(*) FROM materials").fetchone()[0] == 2  # A and B
    assert {k for (k,) in conn.execute("SELECT kind FROM gaps")} >= {"no_amount"}
    path.write_text(good.replace("{name: B}", "{name: B, amount: 0.50 g}"))
    notebook.scan()
    events = [(e["event"], e["what"]) for e in timeline(conn, "e.md")]
    assert ("gap closed", "B (no_amount)") in events
    unreadable = events.index(next(e for e in events if e[0] == "unreadable since"))
    closed = events.index(("gap closed", "B (no_amount)"))
    assert events[unreadable + 1][0] == "readable again" and closed > unreadable + 1
    assert conn.execute("SELECT stale_since FROM entries").fetchone()[0] is None


def test_the_store_streams_follow_the_lab_config(notebook):
    notebook.write("masstrail.toml", '[waste_streams]\nassign = { "A" = "solid" }\n')
    notebook.write("e.md", ENTRY)
    notebook.scan()
    streams = dict(_db(notebook).execute("SELECT name, stream FROM materials").fetchall())
    assert streams == {"DCM": "halogenated organic", "A": "solid"}


# ---------------------------------------------------------------- reusing scans (the store
# remembers each entry's fingerprint: masstrail_previous_results / masstrail_scan_done)

LOGGED = entry_md(
    """
    product: {name: p, mass: 1.00 g}
    balance_log: logs/bal.csv
    materials: [{name: A, amount: 3.00 g}]
    """,
    "",
)
LOG = "time,label,net\n2026-11-30 10:01,A,3.012 g\n"


def _reuse(notebook):
    return scan(Notebook.open(notebook.root), reuse=True, keep=False)


def test_a_warm_scan_recomputes_nothing_and_says_the_same(notebook):
    notebook.write("a.md", ENTRY)
    notebook.write("b.md", ENTRY.replace("3.00 g", "4.00 g"))
    first = _reuse(notebook)
    side = notebook.root / "a.waste.json"
    before = side.stat().st_mtime_ns
    second = _reuse(notebook)
    assert (first.recomputed, second.recomputed) == (2, 0)
    strip = lambda s: {**asdict(s), "recomputed": None}  # noqa: E731
    assert [strip(s) for s in second.summaries] == [strip(s) for s in first.summaries]
    assert second.summaries[0].e_factor == pytest.approx(15.266)
    assert second.summaries[0].major + second.summaries[0].minor == 2
    assert side.stat().st_mtime_ns == before and second.results == []


def test_what_changes_a_fingerprint_is_recomputed(notebook):
    a = notebook.write("a.md", ENTRY)
    notebook.write("b.md", ENTRY)
    notebook.write("c.md", LOGGED)
    log = notebook.write("logs/bal.csv", LOG)
    assert _reuse(notebook).recomputed == 3
    a.write_text(ENTRY.replace("3.00 g", "3.50 g"))  # an edit
    assert [s.path for s in _reuse(notebook).summaries if s.recomputed] == ["a.md"]
    log.write_text(LOG.replace("3.012", "3.020"))  # the balance log the entry names
    changed = _reuse(notebook)
    assert [s.path for s in changed.summaries if s.recomputed] == ["c.md"]
    (notebook.root / "b.waste.json").unlink()  # a lost sidecar
    assert [s.path for s in _reuse(notebook).summaries if s.recomputed] == ["b.md"]
    notebook.write("masstrail.toml", "[e_factor]\ninclude_water = false\n")  # the lab config
    assert _reuse(notebook).recomputed == 3
    assert _reuse(notebook).recomputed == 0


def test_without_a_store_the_sidecars_say_what_is_current(notebook):
    """[store] enabled = false: the sidecars answer masstrail_previous_results, so a rescan
    (or the watcher's catch-up) still skips unchanged entries, and sees changed ones."""
    notebook.write("masstrail.toml", "[store]\nenabled = false\n")
    a = notebook.write("a.md", ENTRY)
    notebook.write("b.md", ENTRY.replace("3.00 g", "4.00 g"))
    nb = Notebook.open(notebook.root)
    assert nb.pm.hook.masstrail_previous_results(root=nb.root, config=nb.config, paths=None) == {}
    first = _reuse(notebook)
    assert first.recomputed == 2
    known = nb.pm.hook.masstrail_previous_results(root=nb.root, config=nb.config, paths=None)
    assert sorted(known) == ["a.md", "b.md"] and known["b.md"].product_g == 1.0
    some = nb.pm.hook.masstrail_previous_results(root=nb.root, config=nb.config, paths=["b.md"])
    assert list(some) == ["b.md"] and some["b.md"] == known["b.md"]
    again = _reuse(notebook)
    # DCM 10 mL × 1.3266 g/mL (FIELD.md) + 3.00 g (or 4.00 g) of A, for 1.00 g of product
    assert [s.e_factor for s in again.summaries] == [pytest.approx(15.266), pytest.approx(16.266)]
    assert again.recomputed == 0
    a.write_text(ENTRY.replace("3.00 g", "3.50 g"))
    (notebook.root / "b.waste.json").unlink()
    assert [s.path for s in _reuse(notebook).summaries if s.recomputed] == ["a.md", "b.md"]
    assert not (notebook.root / ".masstrail" / "records.db").exists()


def test_a_scan_drops_rows_of_entries_that_are_gone_and_keeps_their_history(notebook):
    notebook.write("a.md", ENTRY)
    b = notebook.write("b.md", ENTRY)
    _reuse(notebook)
    b.unlink()
    _reuse(notebook)
    conn = _db(notebook)
    assert conn.execute("SELECT path FROM entries").fetchall() == [("a.md",)]
    assert conn.execute("SELECT COUNT(*) FROM history WHERE entry_path = 'b.md'").fetchone() == (1,)


def test_batched_scan_writes_equal_one_by_one_writes(notebook, tmp_path, monkeypatch):
    import masstrail_plugins.write.store_writer as store_plugin

    for i in range(7):
        notebook.write(f"e{i}.md", ENTRY.replace("3.00 g", f"3.{i}0 g"))
    monkeypatch.setattr(store_plugin, "BATCH", 3)  # batches of 3, 3 and a last one of 1
    _reuse(notebook)
    batched = current_tables(_db(notebook))
    nb = Notebook.open(notebook.root)
    conn = connect(tmp_path / "one-by-one.db")
    from capture.store import write_results

    for f in nb.entry_files():
        write_results(conn, [nb.process(f, write=False)])
    assert current_tables(conn) == batched and len(batched["entries"]) == 7
    assert store_plugin._pending == {}  # nothing left held after masstrail_scan_done


def test_held_results_reach_the_store_at_masstrail_flush_results(notebook):
    notebook.write("a.md", ENTRY)
    notebook.write("b.md", ENTRY.replace("3.00 g", "4.00 g"))
    nb = Notebook.open(notebook.root)
    for f in nb.entry_files():
        nb.write(nb.process(f, write=False), f, batch=True)  # as a scan's worker does
    assert _db(notebook).execute("SELECT COUNT(*) FROM entries").fetchone() == (0,)
    nb.pm.hook.masstrail_flush_results(root=nb.root, config=nb.config)
    rows = _db(notebook).execute("SELECT path, product_g FROM entries ORDER BY path").fetchall()
    assert rows == [("a.md", 1.0), ("b.md", 1.0)]


def test_an_entry_whose_stat_is_unchanged_is_not_read_again(notebook, monkeypatch):
    import capture.fingerprint as fingerprint
    import capture.run as run
    import capture.standing as standing

    monkeypatch.setattr(fingerprint, "RACY_NS", 0)  # these files were written just now
    a = notebook.write("a.md", ENTRY)
    notebook.write("b.md", ENTRY.replace("3.00 g", "4.00 g"))
    assert _reuse(notebook).recomputed == 2
    stats = dict(_db(notebook).execute("SELECT path, entry_stat FROM entries"))
    st = a.stat()
    assert stats["a.md"] == f"{st.st_mtime_ns}:{st.st_ctime_ns}:{st.st_ino}:{st.st_size}"
    reads = []
    real = run.read_bounded
    for module in (run, standing):  # neither computed nor hashed (standing.file_sha)
        monkeypatch.setattr(module, "read_bounded", lambda p, *k: reads.append(p) or real(p, *k))
    assert _reuse(notebook).recomputed == 0 and reads == []
    a.write_text(ENTRY.replace("3.00 g", "3.50 g"))  # same size, a new stat
    again = _reuse(notebook)
    assert [s.path for s in again.summaries if s.recomputed] == ["a.md"] and reads[0] == a


def test_a_file_changed_just_before_it_was_read_is_hashed_next_time(notebook, monkeypatch):
    """Racy files (as git calls them): a second same-size change within one time stamp
    tick of the read would leave the stat as it was, so no stat is kept for them."""
    import capture.fingerprint as fingerprint

    monkeypatch.setattr(fingerprint, "RACY_NS", 60_000_000_000)  # "just before": within 60 s
    a = notebook.write("a.md", ENTRY)
    first = _reuse(notebook)
    assert first.recomputed == 1
    assert _db(notebook).execute("SELECT entry_stat FROM entries").fetchone() == (None,)
    assert fingerprint.file_stat(a) is None
    st = a.stat()
    a.write_text(ENTRY.replace("3.00 g", "3.50 g"))  # same size, and the old times put back
    os.utime(a, ns=(st.st_atime_ns, st.st_mtime_ns))
    again = [s.e_factor for s in _reuse(notebook).summaries if s.recomputed]
    assert again == [pytest.approx(first.summaries[0].e_factor + 0.5)]  # 0.5 g more input


def test_an_old_store_gains_the_new_columns_and_keeps_its_history(tmp_path):
    db = tmp_path / "old.db"
    conn = sqlite3.connect(db)
    from capture.store import SCHEMA

    added = (
        ", error_location TEXT,\n    inputs_sha256 TEXT, balance_log TEXT, entry_stat TEXT,\n"
        "    gaps_blocking INTEGER, gaps_major INTEGER, gaps_minor INTEGER, stale_since TEXT\n"
    )
    old = SCHEMA.replace(added, "\n")
    assert old != SCHEMA
    conn.executescript(old)
    conn.execute("INSERT INTO history (entry_path, entry_id, sha256, tool_version, computed_at, "
                 "result) VALUES ('a.md', 'a', 'x', '0', 't', '{}')")  # fmt: skip
    conn.commit()
    conn.close()
    new = connect(db)
    cols = {r[1] for r in new.execute("PRAGMA table_info(entries)")}
    assert {"error_location", "inputs_sha256", "balance_log", "entry_stat", "gaps_blocking",
            "gaps_major", "gaps_minor", "stale_since"} <= cols  # fmt: skip
    assert new.execute("SELECT COUNT(*) FROM history").fetchone() == (1,)
    with pytest.raises(sqlite3.IntegrityError, match="append-only"):
        new.execute("DELETE FROM history")
    # a row from before the gap counts were kept is not taken as a summary: recomputed
    new.execute("INSERT INTO entries (path, id, status, tool_version, updated_at, inputs_sha256) "
                "VALUES ('a.md', 'a', 'ok', '0', 't', 'f')")  # fmt: skip
    assert previous_results(new) == {}
    new.execute("UPDATE entries SET gaps_blocking = 0, gaps_major = 2, gaps_minor = 1")
    assert previous_results(new)["a.md"].major == 2


def test_a_scan_fsyncs_each_folder_once_and_the_watcher_path_every_time(notebook, monkeypatch):
    import masstrail_plugins.write.sidecar as sidecar

    synced = []
    monkeypatch.setattr(sidecar, "sync_folder", synced.append)
    import capture.safeio as safeio

    monkeypatch.setattr(safeio, "sync_folder", synced.append)
    for rel in ("a/1.md", "a/2.md", "a/3.md", "b/4.md", "b/5.md"):
        notebook.write(rel, ENTRY)
    report = _reuse(notebook)
    assert len(report.written) == 5
    assert sorted(p.name for p in synced) == ["a", "b"]
    synced.clear()
    nb = Notebook.open(notebook.root)
    entry = notebook.write("a/1.md", ENTRY.replace("3.00 g", "3.10 g"))
    nb.process(entry)  # one result at a time (the watcher): its folder is fsynced at once
    assert [p.name for p in synced] == ["a"]


def test_a_sidecar_that_could_not_be_written_stops_the_scan_before_the_store_records_it(
    notebook, monkeypatch
):
    """A scan's sidecars are written by a thread while it goes on; a failed write must
    surface, and the store must not say that an entry whose sidecar is missing is current."""
    import masstrail_plugins.write.sidecar as sidecar

    real = sidecar.replace_all_atomically

    def full_disk(files):
        if any(path.name == "b.waste.json" for path, _ in files):
            raise OSError(28, "No space left on device")
        real(files)

    monkeypatch.setattr(sidecar, "replace_all_atomically", full_disk)
    for name in ("a.md", "b.md", "c.md"):
        notebook.write(name, ENTRY)
    with pytest.raises(OSError, match="No space left"):
        _reuse(notebook)
    assert not (notebook.root / "b.waste.json").exists()
    assert _db(notebook).execute("SELECT COUNT(*) FROM entries").fetchone() == (0,)
    monkeypatch.setattr(sidecar, "replace_all_atomically", real)
    assert _reuse(notebook).recomputed == 3  # nothing was taken as current
    assert (notebook.root / "b.waste.json").exists()


@pytest.mark.parametrize("store", ["true", "false"])
def test_a_rescan_asks_what_is_current_a_chunk_at_a_time(notebook, monkeypatch, store):
    """A reusing scan asks the store (or, without one, the sidecars) about its entries a
    chunk at a time, never for the whole notebook at once; with chunks of 2, the rescan of 5
    entries asks three times, for 2, 2 and 1 paths, and recomputes only the edited one."""
    import capture.scan

    notebook.write("masstrail.toml", f"[store]\nenabled = {store}\n")
    for name in ("a", "b", "c", "d", "e"):
        notebook.write(f"{name}.md", ENTRY)
    monkeypatch.setattr(capture.scan, "CHUNK", 2)
    nb = Notebook.open(notebook.root)
    asked = []

    class Spy:
        @hookimpl(hookwrapper=True, specname="masstrail_previous_results")
        def spy(self, paths):
            asked.append(paths)
            yield

    nb.pm.register(Spy())  # before the first scan: the plugins are part of the fingerprint
    assert scan(nb, reuse=True, keep=False).recomputed == 5
    asked.clear()
    notebook.write("d.md", ENTRY.replace("3.00 g", "3.50 g"))
    again = scan(nb, reuse=True, keep=False)
    assert asked == [["a.md", "b.md"], ["c.md", "d.md"], ["e.md"]]
    assert [s.path for s in again.summaries if s.recomputed] == ["d.md"]
    assert len(again.summaries) == 5


def _open_store_at(path: str, barrier) -> None:
    from pathlib import Path

    from capture.store.database import connect

    barrier.wait(timeout=30)
    connect(Path(path)).close()


def test_processes_that_open_a_new_store_at_once_all_succeed(tmp_path):
    """A first scan's workers open the new store together and race to switch it to WAL,
    which SQLite refused at once ("database is locked") to all but one: 9 of 60 processes
    failed so before. Real processes, released together by a barrier."""
    import multiprocessing

    ctx = multiprocessing.get_context("spawn")
    for i in range(8):
        barrier = ctx.Barrier(4)
        procs = [ctx.Process(target=_open_store_at, args=(str(tmp_path / f"{i}/records.db"),
                                                          barrier)) for _ in range(4)]  # fmt: skip
        for p in procs:
            p.start()
        for p in procs:
            p.join(60)
        assert [p.exitcode for p in procs] == [0, 0, 0, 0], f"round {i}"
