"""A scan: every entry of a notebook once, reusing the results that are still current.

1. **Plan.** Each entry file gets an error (two entries that would share one sidecar), its
   previous summary (the result is current: :meth:`capture.fingerprint.Fingerprints.current`),
   or work. What is remembered of the last results comes from the caller (the watcher keeps
   its own), else from ``masstrail_previous_results`` (the store, or the sidecars).
2. **Work.** The entries to compute are computed and written here, or in worker processes
   a share at a time (sidecar, card and store rows written by the worker; only summaries
   come back), in order.
3. **Finish.** ``masstrail_flush_results`` and ``masstrail_scan_done``.
"""

from __future__ import annotations

import contextlib
import os
from collections import deque
from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass, field
from pathlib import Path

from capture.fingerprint import Basis, basis_changes, read_basis, write_basis
from capture.models import SEVERITIES, EntrySummary, Result
from capture.notebook import Notebook
from capture.paths import entry_stem, sidecar_path
from capture.run import error_result
from capture.safeio import libc
from capture.spill import Spill


def default_jobs() -> int:
    """Workers for ``--jobs 0``: one per core and one more, at most 8. A worker waits for
    its file and store writes part of the time; on 2 cores, 3 workers scanned 20,000
    generated entries about 3 % faster than 2 (two interleaved runs each)."""
    return min((os.cpu_count() or 1) + 1, 8)


PARALLEL_SHARE = 32  # entries a worker computes, writes and stores (one transaction) at a time
PARALLEL_MIN = 64  # fewer entries than this are computed here: starting workers costs seconds


@dataclass
class ScanReport:
    """One scan: a summary per entry file, in order, and the full results if kept. The
    summaries and the names of the files written are :class:`Spill` lists: past a few
    thousand they wait in a temporary file, so a scan's memory does not grow with the
    notebook."""

    root: Path
    results: list[Result] = field(default_factory=list)
    written: Spill[str] = field(default_factory=Spill)  # the files written (200,000 for 100,000)
    summaries: Spill[EntrySummary] = field(default_factory=Spill)
    basis_changes: list[str] = field(default_factory=list)  # what changed since the last scan
    unnamed: list[str] = field(default_factory=list)  # files left out: names not UTF-8
    changed: list[str] = field(default_factory=list)  # entries whose figures changed with it
    recomputed: int = 0  # entries computed in this scan (the rest were current)
    error_count: int = 0  # entries that could not be read
    _counts: dict[str, int] = field(default_factory=lambda: dict.fromkeys(SEVERITIES, 0))

    def add(self, summary: EntrySummary) -> None:
        """One more entry's summary, in order."""
        self.summaries.append(summary)
        self.recomputed += summary.recomputed
        self.error_count += summary.status == "error"
        for severity in SEVERITIES:
            self._counts[severity] += getattr(summary, severity)

    def count(self, severity: str) -> int:
        """How many gaps of ``severity`` the scan found."""
        assert severity in SEVERITIES
        return self._counts[severity]

    @property
    def errors(self) -> list[EntrySummary]:
        return [s for s in self.summaries if s.status == "error"]

    def basis_note(self, shown: int = 10) -> str | None:
        """What changed in the basis of the figures since the last scan, and which entries'
        figures changed with it, in words; None when nothing did."""
        if not self.basis_changes:
            return None
        n, k = self.recomputed, len(self.changed)
        note = (f"Since the last scan, {'; '.join(self.basis_changes)}. "
                f"{n} entr{'y was' if n == 1 else 'ies were'} computed again; ")  # fmt: skip
        if not k:
            return note + "no entry's figures changed."
        listed = ", ".join(self.changed[:shown]) + (f" and {k - shown} more" if k > shown else "")
        return note + (f"{k} ha{'s' if k == 1 else 've'} different figures (product, E-factor, "
                       f"PMI or gaps): {listed}.")  # fmt: skip


CHUNK = 4096  # entries planned at a time: the scanning process holds about two chunks' paths
# (the one being handed out and the next, planned while the workers compute)


def scan(
    notebook: Notebook,
    progress: Callable[[Path, EntrySummary], None] | None = None,
    write: bool = True,
    reuse: bool = False,
    keep: bool = True,
    jobs: int = 1,
    previous: dict[str, EntrySummary] | None = None,
) -> ScanReport:
    """Process every entry under the notebook root once; one summary per entry file.

    The entries are found a folder at a time (:meth:`Notebook.folders`) and planned and
    computed :data:`CHUNK` at a time, so that memory stays flat in the notebook's size.
    With ``reuse`` (and ``write``), an entry whose result is current (see
    :meth:`capture.fingerprint.Fingerprints.current`) is not recomputed: its summary is the
    one remembered, from ``previous`` or else from ``masstrail_previous_results``. With
    ``keep``, every recomputed entry's full :class:`Result` is kept in ``results`` (memory
    grows with the notebook). With ``jobs`` > 1, entries are computed and written in that
    many worker processes, a share at a time; the files and store rows are the same as with
    one. ``progress(path, summary)`` is called for each entry file, in order.
    """
    basis = notebook.fingerprints.parts if write else None
    last = read_basis(notebook.root) if write else Basis(None, None, None)
    last_basis = last.parts
    changes = basis_changes(last_basis, basis) if last_basis is not None and basis else []
    ask = write and (reuse or changes) and previous is None  # the writers, a chunk at a time
    report = ScanReport(notebook.root, basis_changes=changes)
    with _Workers(notebook, jobs, write, keep) as workers:
        planned = _planned(notebook, previous, ask, reuse and write)
        for item, outcome in workers.outcomes(planned):
            summary = _one_done(notebook, report, item, outcome, write, keep, bool(changes))
            if progress:
                progress(item.path, summary)
    report.unnamed = list(notebook.unnamed)
    if write:
        notebook.pm.hook.masstrail_flush_results(root=notebook.root, config=notebook.config)
        notebook.pm.hook.masstrail_scan_done(root=notebook.root, config=notebook.config,
                                             present=report.summaries.view(_path),
                                             written=report.written,
                                             orphans=notebook.orphans)  # fmt: skip
        now = Basis(basis, notebook.standing(), len(report.summaries))
        if now != last:
            write_basis(notebook.root, *now)
    return report


def _path(summary: EntrySummary) -> str:
    return summary.path


@dataclass(slots=True)
class _Item:
    """One entry file of a scan, planned: ``planned`` is an error result (a name clash), its
    previous summary (current), or None (to compute); ``before`` what was remembered of it."""

    path: Path
    clash: list[Path] | None
    planned: Result | EntrySummary | None
    before: EntrySummary | None


def _one_done(nb: Notebook, report: ScanReport, item: _Item, outcome: tuple | None,
              write: bool, keep: bool, changes: bool) -> EntrySummary:  # fmt: skip
    """One entry's outcome into the report: remembered, a name clash, or just computed."""
    planned = item.planned
    if isinstance(planned, EntrySummary):
        summary = planned
    elif planned is not None:  # a name clash: the first of its files writes the error
        if write and item.path == item.clash[0]:
            report.written.extend(map(os.fspath, nb.write(planned, item.path, batch=True)))
        summary = EntrySummary.of(planned)
        if keep:
            report.results.append(planned)
    else:
        summary, files_written, result = outcome
        report.written.extend(files_written)
        if keep:
            report.results.append(result)
        if changes and _figures_differ(item.before, summary):
            report.changed.append(summary.path)
    report.add(summary)
    return summary


def _planned(nb: Notebook, previous: dict[str, EntrySummary] | None, ask: bool,
             reuse: bool) -> Iterator[list[_Item]]:  # fmt: skip
    """The scan's entries, planned a chunk at a time; with ``ask``, what is remembered of
    each chunk comes from ``masstrail_previous_results``, else from ``previous``."""
    for chunk in _chunks(nb.folders()):
        rels = [nb.relpath(f) for f, _ in chunk]
        known = previous
        if ask:
            hook = nb.pm.hook.masstrail_previous_results
            known = hook(root=nb.root, config=nb.config, paths=rels) or {}
        yield _plan(nb, chunk, rels, known, reuse)


def _chunks(groups: Iterable[tuple[str, list[str]]]) -> Iterator[list[tuple[Path, list | None]]]:
    """(path, the files it shares a sidecar name with, or None), :data:`CHUNK` at a time.
    Name clashes (``a.md`` and ``a.json``) are found within each folder."""
    chunk: list[tuple[Path, list | None]] = []
    for folder, names in groups:
        stems: dict[str, list[str]] = {}
        for n in names:
            stems.setdefault(entry_stem(n), []).append(n)
        for n in names:
            same = stems[entry_stem(n)]
            clash = [Path(folder, m) for m in same] if len(same) > 1 else None
            chunk.append((Path(folder, n), clash))
            if len(chunk) >= CHUNK:
                yield chunk
                chunk = []
    if chunk:
        yield chunk


def _figures_differ(before: EntrySummary | None, now: EntrySummary) -> bool:
    """Whether a recomputed entry's figures (status, product, E-factor, PMI, gap counts) are
    not those of its last result."""
    if before is None:
        return False

    def figures(s: EntrySummary) -> tuple:
        return (s.status, *(None if x is None else round(x, 6) for x in (s.product_g, s.e_factor,
                s.pmi)), s.blocking, s.major, s.minor)  # fmt: skip

    return figures(before) != figures(now)


def _plan(
    nb: Notebook,
    chunk: list[tuple[Path, list | None]],
    rels: list[str],
    previous: dict[str, EntrySummary] | None,
    reuse: bool,
) -> list[_Item]:
    """For each file (``rels``: their paths relative to the root): an error result (a name
    clash), its previous summary (current, with ``reuse``), or None (to compute)."""
    plan: list[_Item] = []
    logs_seen: dict = {}  # log digests by (folder, logs), for this chunk
    for (f, clash), rel in zip(chunk, rels, strict=True):
        before = previous.get(rel) if previous else None
        if clash:
            names = ", ".join(p.name for p in clash)
            plan.append(_Item(f, clash, error_result(
                f, rel, None,
                f"{len(clash)} entries in this folder share the name "
                f"'{sidecar_path(f).name}' for their results ({names}); rename one of them",
                None), before))  # fmt: skip
        elif reuse and before is not None and nb.fingerprints.current(f, before, logs_seen):
            before.recomputed = False
            plan.append(_Item(f, None, before, before))
        else:
            plan.append(_Item(f, None, None, before))
    return plan


_worker_notebook: Notebook | None = None


def _start_worker(root: str) -> None:
    global _worker_notebook
    _die_with_parent()
    _worker_notebook = Notebook.open(Path(root))


def _die_with_parent() -> None:
    """A worker ends the moment its scanning process does (killed, or stopped by a signal):
    on Linux the kernel sends it SIGKILL (``PR_SET_PDEATHSIG``); everywhere a watchdog thread
    notices the parent is gone within 0.2 s and ends the process without writing more."""
    import sys
    import threading
    import time

    parent = os.getppid()
    if sys.platform.startswith("linux") and (c := libc()) is not None:
        import signal

        with contextlib.suppress(AttributeError):
            c.prctl(1, int(signal.SIGKILL))  # PR_SET_PDEATHSIG
    if os.getppid() != parent:  # gone already, before the signal was armed
        os._exit(1)

    def watch() -> None:
        while True:
            time.sleep(0.2)
            if os.getppid() != parent:
                os._exit(1)

    threading.Thread(target=watch, name="masstrail-parent-watch", daemon=True).start()


def _one(notebook: Notebook, path: Path, write: bool) -> tuple[Result, list[str]]:
    result = notebook.process(path, write=False)
    written = notebook.write(result, path, batch=True) if write else []
    return result, [os.fspath(p) for p in written]


def _share_in_worker(
    paths: list[Path], write: bool, keep: bool
) -> list[tuple[EntrySummary, list[str], Result | None]]:
    """In a worker: compute and write a share of the scan's entries (sidecar, card and
    store, as the scanning process would), and send back only their summaries (and, with
    ``keep``, the results)."""
    nb = _worker_notebook
    assert nb is not None
    out = []
    for path in paths:
        result, written = _one(nb, path, write)
        out.append((EntrySummary.of(result), written, result if keep else None))
    if write:  # what a writer holds is written before the share is done
        nb.pm.hook.masstrail_flush_results(root=nb.root, config=nb.config)
    return out


class _Workers:
    """Where a scan's entries are computed and written: here, or in ``jobs`` worker
    processes (started for the first chunk with enough entries to pay for them, and kept
    for the chunks after), handed a share at a time, two shares per worker in flight, so
    that finished work never piles up in memory (see :meth:`outcomes`)."""

    def __init__(self, notebook: Notebook, jobs: int, write: bool, keep: bool) -> None:
        self.nb, self.jobs, self.write, self.keep = notebook, jobs, write, keep
        self.pool = None
        self.done_here = 0  # entries computed in this process, for its flushes

    def __enter__(self) -> _Workers:
        return self

    def __exit__(self, *exc) -> None:
        if self.pool is not None:
            self.pool.__exit__(*exc)

    def outcomes(self, chunks: Iterable[list[_Item]]) -> Iterator[tuple[_Item, tuple | None]]:
        """(item, its outcome) for every item, in order: the outcome (summary, files written,
        result if ``keep``) of an item to compute, else None. A chunk with fewer than
        :data:`PARALLEL_MIN` entries to compute, while no worker runs, is computed here; once
        started, the workers get every share after, and their shares run on from one chunk
        into the next (the next chunk is planned while they work)."""
        waiting: deque[_Item] = deque()  # handed to the workers, in order, not yet given out
        ready: deque = deque()  # outcomes of finished shares, in order
        pending: deque = deque()  # shares in the workers, in order
        for chunk in chunks:
            todo = [item.path for item in chunk if item.planned is None]
            if self.pool is None and (self.jobs <= 1 or len(todo) < PARALLEL_MIN):
                for item in chunk:
                    yield item, (self._here(item.path) if item.planned is None else None)
                continue
            self._start()
            waiting.extend(chunk)
            for i in range(0, len(todo), PARALLEL_SHARE):  # a chunk's last share may be short
                share = todo[i : i + PARALLEL_SHARE]
                pending.append(self.pool.submit(_share_in_worker, share, self.write, self.keep))
                while len(pending) >= 2 * self.jobs:
                    ready.extend(pending.popleft().result())
                    yield from _given_out(waiting, ready)
            yield from _given_out(waiting, ready)
        while pending:
            ready.extend(pending.popleft().result())
            yield from _given_out(waiting, ready)
        assert not waiting and not ready

    def _here(self, path: Path) -> tuple[EntrySummary, list[str], Result | None]:
        nb = self.nb
        result, written = _one(nb, path, self.write)
        self.done_here += 1
        if self.write and self.done_here % PARALLEL_SHARE == 0:  # as a worker does
            nb.pm.hook.masstrail_flush_results(root=nb.root, config=nb.config)
        return EntrySummary.of(result), written, result if self.keep else None

    def _start(self) -> None:
        if self.pool is None:
            import multiprocessing
            from concurrent.futures import ProcessPoolExecutor

            context = multiprocessing.get_context("spawn")  # the same on Linux, macOS, Windows
            self.pool = ProcessPoolExecutor(self.jobs, mp_context=context,
                                            initializer=_start_worker,
                                            initargs=(str(self.nb.root),))  # fmt: skip


def _given_out(waiting: deque[_Item], ready: deque) -> Iterator[tuple[_Item, tuple | None]]:
    """The items at the front of ``waiting`` that need no outcome, or whose outcome is in."""
    while waiting and (waiting[0].planned is not None or ready):
        item = waiting.popleft()
        yield item, (ready.popleft() if item.planned is None else None)
