"""The watcher, as a real process on a real folder (events, settling, locks, signals)."""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest

from helpers import entry_md

ENTRY = entry_md("""
    title: watched
    product: {name: p, mass: 1.00 g}
    materials: [{name: A, amount: 3.00 g}]
    """)


class WatcherProcess:
    """``masstrail watch`` in a child process, its output collected line by line."""

    def __init__(self, root: Path, *args: str) -> None:
        cmd = [sys.executable, "-c", "from capture.cli import main; main()", "watch", str(root),
               "--settle", "0.05", "--rescan", "30", *args]  # fmt: skip
        self.proc = subprocess.Popen(
            cmd, stdout=subprocess.PIPE, stderr=subprocess.STDOUT, text=True
        )
        self.lines: list[str] = []
        self._reader = threading.Thread(target=self._read, daemon=True)
        self._reader.start()

    def _read(self) -> None:
        for line in self.proc.stdout:
            self.lines.append(line.rstrip("\n"))

    def wait_for(self, predicate, timeout: float = 15.0, what: str = "condition") -> None:
        end = time.monotonic() + timeout
        while time.monotonic() < end:
            if predicate():
                return
            if self.proc.poll() is not None and not predicate():
                break
            time.sleep(0.05)
        raise AssertionError(f"timed out waiting for {what}; output:\n" + "\n".join(self.lines))

    def ready(self) -> None:
        self.wait_for(
            lambda: any(line.startswith("watching ") for line in self.lines), what="start"
        )

    def count(self, text: str) -> int:
        return sum(1 for line in self.lines if text in line)

    def stop(self) -> int:
        if self.proc.poll() is None:
            self.proc.send_signal(signal.SIGTERM)
            try:
                self.proc.wait(timeout=10)
            except subprocess.TimeoutExpired:
                self.proc.kill()
        return self.proc.returncode


@pytest.fixture
def watched(notebook):
    procs = []

    def start(*args):
        w = WatcherProcess(notebook.root, *args)
        procs.append(w)
        w.ready()
        return w

    yield start
    for w in procs:
        w.stop()


def _side(path: Path) -> dict | None:
    side = path.with_name(path.name.rsplit(".", 1)[0] + ".waste.json")
    try:
        return json.loads(side.read_text())
    except (OSError, ValueError):
        return None


def _mass(path: Path) -> float | None:
    s = _side(path)
    return s["product"]["mass_g"] if s else None


def test_editor_save_patterns_update_the_sidecar(notebook, watched):
    entry = notebook.write("e.md", ENTRY)
    w = watched()
    assert _mass(entry) == 1.0  # caught up at start
    # 1. in place (VS Code)
    entry.write_text(ENTRY.replace("1.00 g", "1.10 g"))
    w.wait_for(lambda: _mass(entry) == 1.1, what="in-place save")
    # 2. temp file renamed over the entry (gedit, JetBrains)
    tmp = notebook.root / ".goutputstream-XYZ1"
    tmp.write_text(ENTRY.replace("1.00 g", "1.20 g"))
    os.replace(tmp, entry)
    w.wait_for(lambda: _mass(entry) == 1.2, what="temp + rename")
    # 3. vim: swap file, entry moved to a backup, a new entry written, backup deleted
    swap = notebook.root / ".e.md.swp"
    swap.write_text("swap")
    os.rename(entry, notebook.root / "e.md~")
    entry.write_text(ENTRY.replace("1.00 g", "1.30 g"))
    (notebook.root / "e.md~").unlink()
    swap.unlink()
    w.wait_for(lambda: _mass(entry) == 1.3, what="backup + rename")
    assert sorted(p.name for p in notebook.root.iterdir() if "waste" in p.name) == ["e.waste.json"]


def test_a_burst_of_saves_is_one_settled_computation(notebook, watched):
    entry = notebook.write("e.md", ENTRY)
    w = watched("--settle", "0.4")
    for i in range(100):  # 100 saves within about a second
        entry.write_text(ENTRY.replace("1.00 g", f"{1 + i / 100:.2f} g"))
        time.sleep(0.005)
    w.wait_for(lambda: _mass(entry) == 1.99, what="the final content")
    time.sleep(0.6)
    assert w.count("e.md: E-factor") == 2  # the catch-up, then one settled computation
    assert (
        _side(entry)["entry"]["sha256"]
        == __import__("hashlib").sha256(entry.read_bytes()).hexdigest()
    )


def test_deletes_moves_new_folders_and_balance_logs(notebook, watched):
    a = notebook.write("a.md", ENTRY)
    notebook.write("logs/bal.csv", "ID,Net,Unit\nA,2.50,g\n")
    b = notebook.write("b.md", entry_md("balance_log: logs/bal.csv\n" + ENTRY.split("---\n")[1]))
    w = watched()
    assert _side(b)["materials"][0]["mass_g"] == 2.5
    a.unlink()
    w.wait_for(lambda: not (notebook.root / "a.waste.json").exists(), what="delete")
    os.rename(b, notebook.root / "moved.md")
    w.wait_for(lambda: _side(notebook.root / "moved.md") is not None
               and not (notebook.root / "b.waste.json").exists(), what="move")  # fmt: skip
    deep = notebook.root / "new" / "deeper"
    deep.mkdir(parents=True)
    (deep / "c.md").write_text(ENTRY)
    w.wait_for(lambda: _side(deep / "c.md") is not None, what="entry in a new folder")
    (notebook.root / "logs" / "bal.csv").write_text("ID,Net,Unit\nA,2.75,g\n")
    w.wait_for(lambda: _side(notebook.root / "moved.md")["materials"][0]["mass_g"] == 2.75,
               what="balance log change")  # fmt: skip


def test_one_watcher_per_notebook_and_a_stale_lock_is_recovered(notebook, watched):
    notebook.write("e.md", ENTRY)
    w = watched()
    second = subprocess.run(
        [sys.executable, "-c", "from capture.cli import main; main()", "watch", str(notebook.root)],
        capture_output=True,
        text=True,
        timeout=30,
    )
    assert second.returncode == 2 and "already watching" in second.stderr
    w.proc.kill()  # kill -9: the lock stays behind
    w.proc.wait()
    lock = notebook.root / ".masstrail" / "watch.lock"
    assert lock.exists()
    entry = notebook.root / "e.md"
    entry.write_text(ENTRY.replace("1.00 g", "1.50 g"))  # changed while no watcher runs
    w2 = watched()
    assert _mass(entry) == 1.5  # caught up at restart
    assert json.loads(lock.read_text())["pid"] == w2.proc.pid
    assert w2.stop() == 0 and lock.read_text() == "" and "watcher stopped" in w2.lines[-1]


def _take_lock_at(root: str, at: float, results, done) -> None:
    from capture.watch import WatchError, acquire_lock, release_lock

    while time.time() < at:  # every process tries at the same instant
        pass
    try:
        lock = acquire_lock(Path(root))
    except WatchError:
        results.put("refused")
        return
    results.put("held")
    done.wait(10)  # held until every process has tried, however late the machine starts it
    release_lock(lock)


def test_watchers_started_at_the_same_instant_never_both_hold_the_lock(notebook):
    """Taking the lock is one atomic OS call: of eight processes that try at the same
    instant, exactly one holds it (ten trials; the lock file that an earlier watcher left
    behind, or none, makes no difference)."""
    import multiprocessing

    ctx = multiprocessing.get_context("fork")
    for trial in range(10):
        if trial % 2:
            (notebook.root / ".masstrail" / "watch.lock").unlink(missing_ok=True)
        results, done = ctx.Queue(), ctx.Event()
        at = time.time() + 0.3
        procs = [ctx.Process(target=_take_lock_at, args=(str(notebook.root), at, results, done))
                 for _ in range(8)]  # fmt: skip
        for p in procs:
            p.start()
        got = sorted(results.get(timeout=10) for _ in procs)
        done.set()
        for p in procs:
            p.join(timeout=10)
        assert got.count("held") == 1, (trial, got)


def test_polling_mode_and_an_idle_notebook_stays_idle(notebook, watched):
    entry = notebook.write("e.md", ENTRY)
    w = watched("--poll", "--rescan", "0.3")
    side = notebook.root / "e.waste.json"
    before = side.stat().st_mtime_ns
    time.sleep(1.5)  # several rescans and polls with nothing changed
    assert side.stat().st_mtime_ns == before and w.count("e.md: E-factor") == 1
    entry.write_text(ENTRY.replace("1.00 g", "1.40 g"))
    w.wait_for(lambda: _mass(entry) == 1.4, what="a change seen by polling")


def test_kill_9_at_random_moments_leaves_every_sidecar_whole(notebook):
    """Crash harness: kill the watcher mid-work; every sidecar parses; a restart reconciles."""
    import random

    rng = random.Random(7)
    entries = [notebook.write(f"e{i}.md", ENTRY) for i in range(8)]
    for round_ in range(4):
        w = WatcherProcess(notebook.root)
        w.ready()
        for i, e in enumerate(entries):
            e.write_text(ENTRY.replace("1.00 g", f"1.{round_}{i} g"))
        time.sleep(rng.uniform(0.0, 0.3))
        w.proc.kill()
        w.proc.wait()
        for e in entries:
            side = e.with_name(e.stem + ".waste.json")
            json.loads(side.read_text())  # old or new, never partial
    w = WatcherProcess(notebook.root)
    w.ready()
    assert [_mass(e) for e in entries] == [float(f"1.3{i}") for i in range(8)]
    # temp files a killed write left behind are cleaned up at start
    assert [p.name for p in notebook.root.iterdir() if p.name.endswith(".tmp")] == []
    w.stop()


def test_a_new_blocking_gap_is_announced(notebook, watched):
    """masstrail_notify: the built-in prints each newly opened major or blocking gap."""
    entry = notebook.write("e.md", ENTRY)
    w = watched()
    assert w.count("! e.md") == 0
    entry.write_text(ENTRY.replace("product: {name: p, mass: 1.00 g}", "product: {name: p}"))
    w.wait_for(lambda: w.count("! e.md: blocking gap — p: no product mass") == 1, what="the notice")
    entry.write_text(ENTRY.replace("1.00 g", "1.01 g"))
    w.wait_for(lambda: _mass(entry) == 1.01, what="the fix")
    assert w.count("! e.md") == 1  # closing a gap is reported on the line, not notified


def test_falls_back_to_polling_when_native_watching_cannot_start(notebook, monkeypatch):
    """inotify's watch limit makes Observer.start() raise OSError(ENOSPC): poll instead."""
    import errno

    import watchdog.observers

    from capture.notebook import Notebook
    from capture.watch import Watcher

    class NoInotify:
        def schedule(self, *a, **k):
            pass

        def start(self):
            raise OSError(errno.ENOSPC, "inotify watch limit reached")

    monkeypatch.setattr(watchdog.observers, "Observer", NoInotify)
    said = []
    w = Watcher(Notebook.open(notebook.root), echo=said.append)
    w._start_observer()
    try:
        from watchdog.observers.polling import PollingObserver

        assert isinstance(w.observer, PollingObserver)
        assert "watching by polling instead" in said[0] and "max_user_watches" in said[0]
    finally:
        w.observer.stop()
        w.observer.join()


def test_the_watcher_takes_the_entry_rule_of_the_scan(notebook, watched):
    """[scan] ignore: what the scan skips, the watcher skips too (at its catch-up and on
    events); the rule is capture.paths.EntryRule, used by both."""
    notebook.write("masstrail.toml", '[scan]\nignore = ["drafts/**"]\n')
    draft = notebook.write("drafts/d1.md", ENTRY)
    kept = notebook.write("e.md", ENTRY)
    w = watched()
    assert _side(kept) is not None and _side(draft) is None  # the catch-up
    notebook.write("drafts/d2.md", ENTRY)
    draft.write_text(ENTRY.replace("1.00 g", "1.50 g"))
    kept.write_text(ENTRY.replace("1.00 g", "1.50 g"))  # an event the watcher must act on
    w.wait_for(lambda: _mass(kept) == 1.5, what="the entry that is not ignored")
    time.sleep(0.5)  # the drafts' events, settled and passed over
    assert sorted(p.name for p in (notebook.root / "drafts").iterdir()) == ["d1.md", "d2.md"]
    assert w.count("drafts/") == 0


def test_the_catch_up_recomputes_what_a_config_change_affects(notebook, watched):
    """The catch-up is a reusing scan: a result is current only when its fingerprint (entry,
    balance logs, lab config, versions) is, so switching cards on writes the cards."""
    from capture.notebook import Notebook
    from capture.scan import scan

    a = notebook.write("a.md", ENTRY)
    notebook.write("sub/b.md", ENTRY.replace("1.00 g", "1.20 g"))
    scan(Notebook.open(notebook.root), reuse=True)
    assert not list(notebook.root.rglob("*.waste.md"))
    notebook.write("masstrail.toml", "[output]\ncard = true\n")
    w = watched()
    assert (notebook.root / "a.waste.md").exists() and (notebook.root / "sub/b.waste.md").exists()
    assert w.count("E-factor") == 2 and w.count("2 entries brought up to date") == 1
    assert w.count("Since the last scan, the lab configuration (masstrail.toml) changed. 2 "
                   "entries were computed again; no entry's figures changed.") == 1  # fmt: skip
    stamp = (notebook.root / "a.waste.md").stat().st_mtime_ns
    w.stop()
    again = watched()  # nothing changed since: nothing is computed
    assert again.count("0 entries brought up to date") == 1
    assert (notebook.root / "a.waste.md").stat().st_mtime_ns == stamp and _mass(a) == 1.0


def test_results_of_an_entry_deleted_while_no_watcher_ran_are_removed(notebook, watched):
    a = notebook.write("a.md", ENTRY)
    b = notebook.write("b.md", ENTRY)
    w = watched()
    assert _side(b) is not None
    w.stop()
    b.unlink()
    w2 = watched()
    assert _side(a) is not None and not (notebook.root / "b.waste.json").exists()
    assert w2.count("b.md: deleted") == 1


DRYING = entry_md("""
    title: dried
    product: {name: p, mass: 1.00 g}
    materials: [{name: A, amount: 3.00 g}, {name: EtOAc, amount: 30 mL, role: extraction solvent}]
    """, "The organic layer was dried over Na2SO4 and concentrated.")  # fmt: skip


@pytest.mark.parametrize("store", [True, False])
def test_announcements_compare_with_the_last_good_result_across_restarts(notebook, watched, store):
    """After a restart, and after a save that could not be read, a save is told against the
    entry's last good result (the store's, else the sidecar's): adding the Na2SO4 mass closes
    one gap (+0 −1), and no gap that was already open is announced again."""
    if not store:
        notebook.write("masstrail.toml", "[store]\nenabled = false\n")
    entry = notebook.write("e.md", DRYING)
    w = watched()
    assert w.count("e.md: E-factor") == 1
    w.stop()
    w = watched()  # a restart: nothing changed, nothing computed, nothing announced
    assert w.count("0 entries brought up to date") == 1 and w.count("e.md") == 0
    entry.write_text(DRYING.replace("title: dried", "title: [unclosed"))
    w.wait_for(lambda: w.count("e.md: could not be read") == 1, what="the broken save")
    entry.write_text(DRYING.replace("Na2SO4 and", "Na2SO4 (3.0 g) and"))
    w.wait_for(lambda: w.count("e.md: E-factor") == 1, what="the fixed save")
    assert w.count("gaps +0 −1 (0 open)") == 1, w.lines
    assert w.count("! e.md") == 0


def test_a_restart_does_not_recompute_an_entry_with_a_balance_log(notebook, watched):
    log = notebook.root / "logs" / "bal.csv"
    log.parent.mkdir()
    log.write_text("Label,Net,Unit\nA,3.012,g\nproduct,1.004,g\n")
    notebook.write(
        "e.md", ENTRY.replace("title: watched", "title: watched\nbalance_log: logs/bal.csv")
    )
    w = watched("--rescan", "0.5")
    assert w.count("1 entry brought up to date") == 1
    w.stop()
    w = watched("--rescan", "0.5")
    time.sleep(1.5)  # two periodic rescans
    assert w.count("0 entries brought up to date") == 1 and w.count("e.md") == 0, w.lines


def test_links_fifos_and_sigterm(notebook, watched, tmp_path):
    """A link out of the notebook is an error result written next to the link (nothing is
    read or written outside); a FIFO as an entry or as a balance log never blocks; SIGTERM
    stops the watcher within two seconds. At start and while running."""
    outside = tmp_path / "elsewhere"
    outside.mkdir()
    secret = outside / "secret.md"
    secret.write_text(ENTRY)
    (notebook.root / "linked.md").symlink_to(secret)
    os.mkfifo(notebook.root / "pipe.md")
    os.mkfifo(notebook.root / "bal.csv")
    good = notebook.write(
        "good.md", ENTRY.replace("title: watched", "title: w\nbalance_log: bal.csv")
    )
    w = watched()
    assert w.count("linked.md: could not be read: a symbolic link") == 1
    assert w.count("pipe.md: could not be read: a FIFO") == 1
    gap = next(g for g in _side(good)["gaps"] if g["kind"] == "balance_log_unreadable")
    assert "a FIFO" in gap["message"]
    (notebook.root / "linked2.md").symlink_to(secret)
    os.mkfifo(notebook.root / "pipe2.md")
    w.wait_for(lambda: w.count("linked2.md: could not be read") == 1, what="the new link")
    w.wait_for(lambda: w.count("pipe2.md: could not be read") == 1, what="the new FIFO")
    assert sorted(p.name for p in outside.iterdir()) == ["secret.md"]  # nothing written there
    assert (notebook.root / "linked2.waste.json").exists() and not (
        outside / "secret.waste.json"
    ).exists()
    start = time.monotonic()
    assert w.stop() == 0 and time.monotonic() - start < 2.0


def test_a_file_name_that_is_not_utf8_does_not_stop_the_watcher(notebook, watched):
    entry = notebook.write("e.md", ENTRY)
    w = watched()
    with open(os.fsencode(notebook.root) + b"/odd\xff.md", "wb") as fh:
        fh.write(ENTRY.encode())
    entry.write_text(ENTRY.replace("1.00 g", "1.10 g"))
    w.wait_for(lambda: _mass(entry) == 1.1, what="the next save")
    assert w.proc.poll() is None  # still running


def test_a_delete_just_before_sigterm_is_not_lost(notebook, watched):
    """An entry deleted a moment before the watcher is stopped: its results are removed by
    the next start's catch-up (a scan drops results whose entry is gone)."""
    notebook.write("masstrail.toml", "[store]\nenabled = false\n")
    entry = notebook.write("e.md", ENTRY)
    notebook.write("f.md", ENTRY)
    w = watched("--settle", "2")
    entry.unlink()
    w.stop()  # the delete is still settling
    assert (notebook.root / "e.waste.json").exists()
    watched()
    assert not (notebook.root / "e.waste.json").exists()
    assert (notebook.root / "f.waste.json").exists()
