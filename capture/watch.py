"""The watcher: keeps every entry's results current while chemists type.

How it works (the evidence behind each point is in shared RELIABILITY.md):

1. **One watcher per notebook.** ``.masstrail/watch.lock`` holds the PID; a second
   watcher exits with a message; a lock left by a crashed watcher is taken over.
2. **Catch up first.** Every entry whose sidecar does not record the entry's
   current content hash is computed again; entries with balance logs are always
   recomputed (a sidecar is only rewritten when its bytes change).
3. **Events are hints.** File events (watchdog; recursive, new folders included)
   only name paths. Each path is settled — no event for ``settle`` seconds, then
   the same size and mtime twice — then read and hashed; unchanged content costs
   nothing. A periodic rescan (``rescan`` seconds) converges on what is on disk
   even when events are lost.
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
import hashlib
import json
import os
import queue
import signal
import threading
import time
from collections.abc import Callable
from pathlib import Path

from capture.models import Result
from capture.paths import STATE_DIR, is_own_output, is_temp_file, sidecar_path
from capture.pipeline import Notebook

LOCK_NAME = "watch.lock"


class WatchError(Exception):
    """The watcher cannot start (another one runs, the folder cannot be watched)."""


# ------------------------------------------------------------------ the lock
def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def acquire_lock(root: Path) -> Path:
    """Take ``.masstrail/watch.lock``; WatchError if a live watcher holds it."""
    state = root / STATE_DIR
    state.mkdir(exist_ok=True)
    lock = state / LOCK_NAME
    for _ in range(3):
        try:
            fd = os.open(lock, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o644)
        except FileExistsError:
            try:
                pid = int(json.loads(lock.read_text())["pid"])
            except (OSError, ValueError, KeyError, TypeError):
                pid = -1
            if pid > 0 and pid != os.getpid() and _alive(pid):
                raise WatchError(
                    f"another masstrail watcher (pid {pid}) is already watching {root}; "
                    f"stop it first, or remove {lock} if that process is not masstrail"
                ) from None
            with contextlib.suppress(FileNotFoundError):
                lock.unlink()  # stale: its process is gone
            continue
        with os.fdopen(fd, "w") as fh:
            json.dump({"pid": os.getpid(), "started": time.time()}, fh)
        return lock
    raise WatchError(f"could not take the lock {lock}")


def release_lock(lock: Path) -> None:
    with contextlib.suppress(OSError, ValueError, KeyError):
        if json.loads(lock.read_text())["pid"] == os.getpid():
            lock.unlink()


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
    ) -> None:
        self.nb = notebook
        self.root = notebook.root
        self.settle = settle
        self.rescan_every = rescan
        self.poll = poll
        self.echo = echo
        self.events: queue.Queue[tuple[Path, str]] = queue.Queue()
        self.stop = threading.Event()
        self.known: dict[Path, str] = {}  # entry → sha256 of the content last computed
        self.last: dict[Path, Result] = {}
        self.logs: dict[Path, set[Path]] = {}  # balance log → entries naming it
        self.log_sha: dict[Path, str | None] = {}  # balance log → hash when last used
        self.suffixes: set[str] = set()
        self.observer = None

    # -------------------------------------------------------------- which paths matter
    def _is_entry(self, path: Path) -> bool:
        try:
            rel = path.relative_to(self.root)
        except ValueError:
            return False
        if any(part.startswith(".") for part in rel.parts):
            return False
        name = path.name
        return (
            path.suffix.lower() in self.suffixes
            and not is_own_output(name)
            and not is_temp_file(name)
            and name != "masstrail.toml"
        )

    def _relevant(self, path: Path) -> bool:
        return self._is_entry(path) or path in self.logs

    # -------------------------------------------------------------- computing
    def _sha(self, path: Path) -> str | None:
        try:
            return hashlib.sha256(path.read_bytes()).hexdigest()
        except OSError:
            return None

    def _compute(self, path: Path, why: str) -> None:
        before = self.last.get(path)
        result = self.nb.process(path)
        self.known[path] = result.entry.sha256 or ""
        self.last[path] = result
        for log in list(self.logs):
            self.logs[log].discard(path)
        entry_dir = path.parent
        for r in result.readings:
            log = (self.root / r.file).resolve()
            self.logs.setdefault(log, set()).add(path)
            self.log_sha[log] = self._sha(log)
        for gap in result.gaps:
            if gap.kind.startswith("balance_log"):
                # a log that does not exist yet may appear later: watch its path too
                self.logs.setdefault((entry_dir / gap.item).resolve(), set()).add(path)
        self._report(path, result, before, why)

    def _report(self, path: Path, result: Result, before: Result | None, why: str) -> None:
        rel = self.nb.relpath(path)
        stamp = time.strftime("%H:%M:%S")
        if result.status == "error":
            self.echo(f"{stamp} {rel}: could not be read: {result.error.message}")
            return
        old = {(g.kind, g.item) for g in before.gaps} if before else set()
        new = {(g.kind, g.item) for g in result.gaps}
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

    def _removed(self, path: Path) -> None:
        if path not in self.known and not sidecar_path(path).exists():
            return
        self.known.pop(path, None)
        self.last.pop(path, None)
        self.nb.pm.hook.masstrail_remove_result(
            entry_path=path, relpath=self.nb.relpath(path), root=self.root, config=self.nb.config
        )
        self.echo(
            f"{time.strftime('%H:%M:%S')} {self.nb.relpath(path)}: deleted; its results removed"
        )

    def handle(self, path: Path, why: str = "changed") -> None:
        """Bring the results for ``path`` (an entry or a balance log) up to date."""
        if path in self.logs and not self._is_entry(path):
            sha = self._sha(path)
            if sha is not None and sha == self.log_sha.get(path):
                return
            self.log_sha[path] = sha
            for entry in sorted(self.logs[path]):
                if entry.exists():
                    self._compute(entry, f"balance log {self.nb.relpath(path)} changed")
            return
        if not self._is_entry(path):
            return
        if not path.exists():
            self._removed(path)
            return
        sha = self._sha(path)
        if sha is None:
            return
        if self.known.get(path) == sha:
            return  # same content: nothing to do (duplicate events, saves without changes)
        self._compute(path, why)

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
        """Compute every entry whose sidecar does not match its content; return how many."""
        self.suffixes = {
            s.lower()
            for answer in self.nb.pm.hook.masstrail_entry_suffixes(config=self.nb.config)
            for s in answer
        }
        done = 0
        present = set()
        changed_logs = {log for log in self.logs if self._sha(log) != self.log_sha.get(log)}
        for path in self.nb.entry_files():
            path = path.resolve()
            present.add(path)
            sha = self._sha(path)
            if sha is None:
                continue
            logs = [log for log, entries in self.logs.items() if path in entries]
            if self.known.get(path) == sha and not (changed_logs & set(logs)):
                continue
            side = sidecar_path(path)
            recorded = None
            if path not in self.known and side.exists():
                with contextlib.suppress(OSError, ValueError, KeyError, TypeError):
                    data = json.loads(side.read_text(encoding="utf-8"))
                    recorded = data["entry"]["sha256"]
                    has_logs = bool(data.get("readings")) or any(
                        g["kind"].startswith("balance_log") for g in data.get("gaps", [])
                    )
                    if recorded == sha and not has_logs:
                        self.known[path] = sha
                        continue
            self._compute(path, why)
            done += 1
        for path in list(self.known):
            if path not in present:
                self._removed(path)
        return done

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

    def _stable(self, path: Path) -> bool:
        try:
            a = path.stat()
            time.sleep(0.02)
            b = path.stat()
        except OSError:
            return True  # gone: handled as a delete
        return (a.st_size, a.st_mtime_ns) == (b.st_size, b.st_mtime_ns)

    def run(self) -> None:
        """Catch up, then follow events until SIGINT/SIGTERM or ``stop`` is set."""
        self.suffixes = {
            s.lower()
            for answer in self.nb.pm.hook.masstrail_entry_suffixes(config=self.nb.config)
            for s in answer
        }
        self._start_observer()  # before catching up: edits made meanwhile are queued
        self.clean_temp_files()
        n = self.catch_up()
        mode = "polling" if self.poll else "file events"
        self.echo(
            f"watching {self.root} ({mode}); {n} entr{'y' if n == 1 else 'ies'} brought up to "
            "date. Ctrl-C stops."
        )
        pending: dict[Path, float] = {}
        next_rescan = time.monotonic() + self.rescan_every
        try:
            while not self.stop.is_set():
                # sleep until an event, the next settle check or the next rescan: idle is idle
                wait = 0.02 if pending else max(0.02, min(1.0, next_rescan - time.monotonic()))
                try:
                    path, kind = self.events.get(timeout=wait)
                    path = Path(os.path.abspath(path))
                    if self._relevant(path):
                        pending[path] = time.monotonic()
                    elif kind == "created" and path.is_dir() and not path.name.startswith("."):
                        # a new folder: files written right after mkdir can race the watch
                        next_rescan = min(next_rescan, time.monotonic() + 0.5)
                    continue
                except queue.Empty:
                    pass
                now = time.monotonic()
                for path, seen in list(pending.items()):
                    if now - seen >= self.settle and self._stable(path):
                        del pending[path]
                        try:
                            self.handle(path.resolve() if path.exists() else path)
                        except Exception as exc:  # one entry never stops the watcher
                            self.echo(f"{path}: {exc!r}")
                if now >= next_rescan:
                    self.catch_up("rescan")
                    next_rescan = now + self.rescan_every
        finally:
            if self.observer is not None:
                self.observer.stop()
                self.observer.join(timeout=2)


def watch(root: Path, settle: float, rescan: float, poll: bool, echo=print) -> None:
    """Run the watcher on ``root`` until SIGINT or SIGTERM; the lock is released on exit."""
    nb = Notebook.open(root)
    lock = acquire_lock(nb.root)
    w = Watcher(nb, settle=settle, rescan=rescan, poll=poll, echo=echo)

    def stop(signum, _frame) -> None:
        w.stop.set()

    signal.signal(signal.SIGINT, stop)
    signal.signal(signal.SIGTERM, stop)
    try:
        w.run()
    finally:
        release_lock(lock)
        echo("watcher stopped")
