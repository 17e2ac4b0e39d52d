"""The watcher: keeps every entry's results current while chemists type.

How it works (the evidence behind each point is in shared RELIABILITY.md):

1. **One watcher per notebook.** An OS lock on ``.masstrail/watch.lock`` (one atomic call,
   released by the OS however the watcher ends); a second watcher exits with a message.
2. **Catch up first, with a scan.** The catch-up and the periodic rescans are reusing
   scans (:func:`capture.scan.scan`): the same entry rule and the same "is this result
   current" rule (the fingerprint of the entry, its balance logs, the lab config and the
   versions), so a changed ``masstrail.toml`` or balance log recomputes what it affects.
   Results of entries that are gone are removed.
3. **Events are hints.** File events (watchdog; recursive, new folders included)
   only name paths. Each path is settled — no event for ``settle`` seconds, then
   the same size and mtime twice — then checked by the same "current" rule; unchanged
   content costs a hash. A save prints the gaps it opened and closed, against the
   entry's previous result (its sidecar, the first time). A periodic rescan
   (``rescan`` seconds) converges on what is on disk even when events are lost.
4. **Never trigger yourself.** The watcher's own outputs, temp files, editors'
   swap, lock and backup files and the ``.masstrail`` folder are ignored.
5. **Intake and work are decoupled.** The event handler only puts paths on a
   queue; one worker computes, so a slow entry never blocks intake.
6. **Deleting an entry removes its sidecar and card** (the entry is gone; its
   results go with it). A move is a delete and a create: the results move.
7. **SIGINT/SIGTERM** finish the current write, then stop. Writes are atomic, so
   a kill -9 leaves every sidecar old or new, and the next start catches up.
8. **Native events where they work, polling where they do not** (``--poll``, or
   automatically when native watching cannot start, e.g. the inotify watch limit).
"""

from __future__ import annotations

import contextlib
import json
import os
import queue
import signal
import threading
import time
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

from capture.models import EntrySummary, Result
from capture.notebook import Notebook
from capture.paths import STATE_DIR, sidecar_path
from capture.safeio import try_lock
from capture.scan import scan

LOCK_NAME = "watch.lock"


class WatchError(Exception):
    """The watcher cannot start (another one runs, the folder cannot be watched)."""


# ------------------------------------------------------------------ the lock
@dataclass
class Lock:
    """The watcher's hold on its notebook: an OS lock on ``.masstrail/watch.lock`` (flock on
    POSIX, msvcrt on Windows), held by an open file for the watcher's life. Taking it is one
    atomic call, so two watchers starting at the same instant cannot both hold it, and the
    OS lets go when the process ends however it ends (kill -9 included): a lock file left
    behind is never "stale". The file says which process holds it, for the message."""

    path: Path
    fd: int


def acquire_lock(root: Path) -> Lock:
    """Take the notebook's watcher lock; WatchError if another watcher holds it."""
    state = root / STATE_DIR
    state.mkdir(exist_ok=True)
    path = state / LOCK_NAME
    fd = os.open(path, os.O_RDWR | os.O_CREAT | getattr(os, "O_NOFOLLOW", 0), 0o644)
    if not try_lock(fd):
        try:
            pid = json.loads(os.pread(fd, 4096, 0) or b"{}").get("pid", "?")
        except (OSError, ValueError, AttributeError):
            pid = "?"
        os.close(fd)
        raise WatchError(f"another masstrail watcher (pid {pid}) is already watching {root}; "
                         "stop it first")  # fmt: skip
    os.ftruncate(fd, 0)
    os.pwrite(fd, json.dumps({"pid": os.getpid(), "started": time.time()}).encode(), 0)
    return Lock(path, fd)


def release_lock(lock: Lock) -> None:
    """Let go of the lock (the file stays: removing it could let a third watcher lock a new
    file while a second still waits on the old one)."""
    with contextlib.suppress(OSError):
        os.ftruncate(lock.fd, 0)
    with contextlib.suppress(OSError):
        os.close(lock.fd)  # closing releases the OS lock


# ------------------------------------------------------------------ the watcher
class Watcher:
    """Event intake, a settling queue and one worker over one notebook."""

    def __init__(
        self,
        notebook: Notebook,
        settle: float = 0.05,
        rescan: float = 60.0,
        poll: bool = False,
        echo: Callable[[str], None] = print,
        jobs: int = 1,
    ) -> None:
        self.nb = notebook
        self.root = notebook.root
        self.settle = settle
        self.rescan_every = rescan
        self.poll = poll
        self.echo = echo
        self.jobs = jobs
        self.events: queue.Queue[tuple[Path, str]] = queue.Queue()
        self.stop = threading.Event()
        self.summaries: dict[str, EntrySummary] = {}  # entry → what its current result is
        self.open_gaps: dict[Path, set[tuple[str, str]]] = {}  # entry → its gaps, last computed
        self.logs: dict[Path, set[Path]] = {}  # balance log → entries naming it
        self.unnamed: set[str] = set()  # files left out for their names, already said
        self.observer = None

    # -------------------------------------------------------------- which paths matter
    def _relevant(self, path: Path) -> bool:
        return self.nb.is_entry(path) or path in self.logs

    def _note_logs(self, path: Path, logs: tuple[str, ...]) -> None:
        """Remember which balance logs the entry ``path`` names (a log that does not exist
        yet may appear later: its path is watched too)."""
        for entries in self.logs.values():
            entries.discard(path)
        for ref in logs:
            self.logs.setdefault((path.parent / ref).resolve(), set()).add(path)

    # -------------------------------------------------------------- computing
    def update(self, path: Path, why: str) -> None:
        """Recompute the entry ``path`` unless its result is current (the scan's rule)."""
        rel = self.nb.relpath(path)
        if self.nb.fingerprints.current(path, self.summaries.get(rel)):
            return  # same content: nothing to do (duplicate events, saves without changes)
        before = self.open_gaps.get(path)
        if before is None:  # not computed since the watcher started: the last good result's
            known = self.nb.pm.hook.masstrail_previous_gaps(root=self.root, relpath=rel,
                                                            config=self.nb.config)  # fmt: skip
            before = set(map(tuple, known or ()))
        result = self.nb.process(path)
        summary = EntrySummary.of(result)
        self.summaries[rel] = summary
        self._note_logs(path, summary.logs)
        self._report(path, result, before, why)

    def _report(self, path: Path, result: Result, old: set, why: str) -> None:
        rel = self.nb.relpath(path)
        stamp = time.strftime("%H:%M:%S")
        if result.status == "error":  # its last good gaps stay what the next save is told against
            self.open_gaps[path] = old
            self.echo(f"{stamp} {rel}: could not be read: {result.error.message}")
            return
        new = {(g.kind, g.item) for g in result.gaps}
        self.open_gaps[path] = new
        opened, closed = new - old, old - new
        e = result.metrics.e_factor
        e_text = "E-factor —" if e is None else f"E-factor {e:.3g}"
        self.echo(
            f"{stamp} {rel}: {e_text}; gaps +{len(opened)} −{len(closed)} ({len(new)} open) [{why}]"
        )
        serious = [g for g in result.gaps if (g.kind, g.item) in opened
                   and g.severity in {"blocking", "major"}]  # fmt: skip
        if serious:
            self.nb.pm.hook.masstrail_notify(result=result, gaps=serious, config=self.nb.config)

    def _removed(self, path: Path, known: bool = False) -> None:
        rel = self.nb.relpath(path)
        if not known and rel not in self.summaries and not sidecar_path(path).exists():
            return
        self.summaries.pop(rel, None)
        self.open_gaps.pop(path, None)
        self._note_logs(path, ())
        self.nb.pm.hook.masstrail_remove_result(entry_path=path, relpath=rel, root=self.root,
                                                config=self.nb.config)  # fmt: skip
        self.echo(f"{time.strftime('%H:%M:%S')} {rel}: deleted; its results removed")

    def handle(self, path: Path, why: str = "changed") -> None:
        """Bring the results for ``path`` (an entry or a balance log) up to date."""
        if path in self.logs and not self.nb.is_entry(path):
            for entry in sorted(self.logs[path]):
                if entry.exists():
                    self.update(entry, f"balance log {self.nb.relpath(path)} changed")
            return
        if not self.nb.is_entry(path):
            return
        if not path.exists():
            self._removed(path)
            return
        self.update(path, why)

    def clean_temp_files(self) -> int:
        """Remove temp files that a killed sidecar write left behind (ours only)."""
        n = 0
        for dirpath, dirnames, filenames in os.walk(self.root):
            dirnames[:] = [d for d in dirnames if not d.startswith(".")]
            for name in filenames:
                if name.startswith(".") and name.endswith(".tmp") and ".waste." in name:
                    with contextlib.suppress(OSError):
                        os.unlink(os.path.join(dirpath, name))
                        n += 1
        return n

    def catch_up(self, why: str = "catch-up") -> int:
        """A reusing scan: every entry whose result is not current is computed again, results
        of entries that are gone are removed; return how many entries were computed."""
        nb = self.nb
        known = self.summaries or nb.pm.hook.masstrail_previous_results(
            root=self.root, config=nb.config, paths=None) or {}  # fmt: skip

        def computed(path: Path, s: EntrySummary) -> None:
            if s.recomputed:
                self.open_gaps.pop(path, None)
                self._say(nb.relpath(path), s, why)

        report = scan(nb, progress=computed, reuse=True, keep=False, jobs=self.jobs,
                      previous=dict(known))  # fmt: skip
        self.summaries = {s.path: s for s in report.summaries}
        self.logs = {}
        for s in report.summaries:
            if s.logs:
                self._note_logs(self.root / s.path, s.logs)
        for rel in set(known) - set(self.summaries):
            self._removed(self.root / rel, known=True)  # its files may be gone with the scan
        if report.basis_note():
            self.echo(f"{time.strftime('%H:%M:%S')} {report.basis_note()}")
        if report.unnamed and set(report.unnamed) != self.unnamed:
            from capture.notebook import unnamed_message

            self.echo(f"{time.strftime('%H:%M:%S')} {unnamed_message(report.unnamed)}")
        self.unnamed = set(report.unnamed)
        return report.recomputed

    def _say(self, rel: str, s: EntrySummary, why: str) -> None:
        stamp = time.strftime("%H:%M:%S")
        if s.status == "error":
            self.echo(f"{stamp} {rel}: could not be read: {s.error}")
            return
        e_text = "E-factor —" if s.e_factor is None else f"E-factor {s.e_factor:.3g}"
        counts = ", ".join(f"{n} {sev}" for sev, n in
                           (("blocking", s.blocking), ("major", s.major), ("minor", s.minor))
                           if n) or "none"  # fmt: skip
        self.echo(f"{stamp} {rel}: {e_text}; gaps: {counts} [{why}]")

    # -------------------------------------------------------------- events
    def _start_observer(self) -> None:
        from watchdog.events import FileSystemEventHandler
        from watchdog.observers import Observer
        from watchdog.observers.polling import PollingObserver

        watcher = self

        class Intake(FileSystemEventHandler):
            def on_any_event(self, event) -> None:
                if event.event_type in {"opened", "closed_no_write"}:
                    return
                for attr in ("src_path", "dest_path"):
                    p = getattr(event, attr, None)
                    if p:
                        watcher.events.put((Path(os.fsdecode(p)), event.event_type))

        handler = Intake()
        if not self.poll:
            try:
                obs = Observer()
                obs.schedule(handler, str(self.root), recursive=True)
                obs.start()
                self.observer = obs
                return
            except OSError as exc:
                self.echo(
                    f"native file events are not available ({exc}); watching by polling instead. "
                    "On Linux, raising fs.inotify.max_user_watches may help."
                )
        obs = PollingObserver(timeout=1.0)
        obs.schedule(handler, str(self.root), recursive=True)
        obs.start()
        self.observer = obs

    @staticmethod
    def _stat(path: Path) -> tuple[int, int] | None:
        try:
            st = path.stat()
        except OSError:
            return None  # gone: handled as a delete
        return st.st_size, st.st_mtime_ns

    def run(self) -> None:
        """Catch up, then follow events until SIGINT/SIGTERM or ``stop`` is set."""
        self._start_observer()  # before catching up: edits made meanwhile are queued
        self.clean_temp_files()
        n = self.catch_up()
        mode = "polling" if self.poll else "file events"
        self.echo(
            f"watching {self.root} ({mode}); {n} entr{'y' if n == 1 else 'ies'} brought up to "
            "date. Ctrl-C stops."
        )
        # a path with events → (time of its last event, its size and mtime then): it is handled
        # once no event came for `settle` seconds and its stat has not changed since
        pending: dict[Path, tuple[float, tuple[int, int] | None]] = {}
        next_rescan = time.monotonic() + self.rescan_every
        try:
            while not self.stop.is_set():
                # sleep until an event, the next settle check or the next rescan: idle is idle
                now = time.monotonic()
                due = min((seen + self.settle for seen, _ in pending.values()), default=None)
                wait = (min(0.25, max(0.002, due - now)) if due is not None
                        else max(0.02, min(1.0, next_rescan - now)))  # fmt: skip
                try:
                    path, kind = self.events.get(timeout=wait)
                    path = Path(os.path.abspath(path))
                    if self._relevant(path):
                        pending[path] = (time.monotonic(), self._stat(path))
                    elif kind == "created" and path.is_dir() and not path.name.startswith("."):
                        # a new folder: files written right after mkdir can race the watch
                        next_rescan = min(next_rescan, time.monotonic() + 0.5)
                    continue
                except queue.Empty:
                    pass
                if self.stop.is_set():  # stopped while waiting: what still settles is left
                    break  # to the next start's catch-up
                now = time.monotonic()
                for path, (seen, stat) in list(pending.items()):
                    if now - seen < self.settle:
                        continue
                    if (later := self._stat(path)) != stat:  # written since, no event seen
                        pending[path] = (now, later)
                        continue
                    del pending[path]
                    try:
                        self.handle(path)  # as found: a link is never followed out
                    except Exception as exc:  # one entry never stops the watcher
                        self.echo(f"{path}: {exc!r}")
                if now >= next_rescan:
                    self.catch_up("rescan")
                    next_rescan = now + self.rescan_every
        finally:
            if self.observer is not None:
                self.observer.stop()
                self.observer.join(timeout=2)


def watch(root: Path, settle: float, rescan: float, poll: bool, echo=print, jobs: int = 1) -> None:
    """Run the watcher on ``root`` until SIGINT or SIGTERM; the lock is released on exit."""
    nb = Notebook.open(root)
    lock = acquire_lock(nb.root)
    w = Watcher(nb, settle=settle, rescan=rescan, poll=poll, echo=echo, jobs=jobs)

    def stop(signum, _frame) -> None:
        w.stop.set()

    signal.signal(signal.SIGINT, stop)
    signal.signal(signal.SIGTERM, stop)
    try:
        w.run()
    finally:
        release_lock(lock)
        echo("watcher stopped")
