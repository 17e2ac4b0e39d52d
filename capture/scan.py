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
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from pathlib import Path

from capture.fingerprint import basis_changes, read_basis, write_basis
from capture.models import SEVERITIES, EntrySummary, Result
from capture.notebook import Notebook
from capture.paths import sidecar_name, sidecar_path
from capture.run import error_result
from capture.safeio import libc


def default_jobs() -> int:
    """Workers for ``--jobs 0``: one per core and one more, at most 8. A worker waits for
    its file and store writes part of the time; on 2 cores, 3 workers scanned 20,000
    generated entries about 3 % faster than 2 (two interleaved runs each)."""
    return min((os.cpu_count() or 1) + 1, 8)


PARALLEL_SHARE = 32  # entries a worker computes, writes and stores (one transaction) at a time
PARALLEL_MIN = 64  # fewer entries than this are computed here: starting workers costs seconds


@dataclass
class ScanReport:
    """One scan: a summary per entry file, in order, and the full results if kept."""

    root: Path
    results: list[Result]
    written: list[str]  # the files written, as strings (a scan of 100,000 writes 200,000)
    summaries: list[EntrySummary] = field(default_factory=list)
    basis_changes: list[str] = field(default_factory=list)  # what changed since the last scan
    unnamed: list[str] = field(default_factory=list)  # files left out: names not UTF-8
    changed: list[str] = field(default_factory=list)  # entries whose figures changed with it

    def count(self, severity: str) -> int:
        """How many gaps of ``severity`` the scan found."""
        assert severity in SEVERITIES
        return sum(getattr(s, severity) for s in self.summaries)

    @property
    def errors(self) -> list[EntrySummary]:
        return [s for s in self.summaries if s.status == "error"]

    @property
    def recomputed(self) -> int:
        return sum(s.recomputed for s in self.summaries)

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


def scan(
    notebook: Notebook,
    progress: Callable[[Path, EntrySummary], None] | None = None,
    write: bool = True,
    files: list[Path] | None = None,
    reuse: bool = False,
    keep: bool = True,
    jobs: int = 1,
    previous: dict[str, EntrySummary] | None = None,
) -> ScanReport:
    """Process every entry under the notebook root once; one summary per entry file.

    ``files`` is the list from :meth:`Notebook.entry_files`, if the caller already has it.
    With ``reuse`` (and ``write``), an entry whose result is current (see
    :meth:`capture.fingerprint.Fingerprints.current`) is not recomputed: its summary is the
    one remembered, from ``previous`` or else from ``masstrail_previous_results``. With
    ``keep``, every recomputed entry's full :class:`Result` is kept in ``results`` (memory
    grows with the notebook). With ``jobs`` > 1, entries are computed and written in that
    many worker processes, a share at a time; the files and store rows are the same as with
    one. ``progress(path, summary)`` is called for each entry file, in order.
    """
    files = notebook.entry_files() if files is None else files
    sides = [sidecar_name(os.fspath(f)) for f in files]
    clashes = _sidecar_clashes(files, sides)
    basis = notebook.fingerprints.parts if write else None
    last_basis = read_basis(notebook.root) if write else None
    changes = basis_changes(last_basis, basis) if last_basis is not None and basis else []
    if write and (reuse or changes) and previous is None:
        hook = notebook.pm.hook.masstrail_previous_results
        previous = hook(root=notebook.root, config=notebook.config) or {}
    plan = _plan(notebook, files, sides, clashes, previous if reuse and write else None)
    todo = [f for f, p in zip(files, plan, strict=True) if p is None]
    work = iter(_computed(notebook, todo, jobs, write, keep))
    results, written, summaries, changed = [], [], [], []
    for i, (f, side, planned) in enumerate(zip(files, sides, plan, strict=True)):
        if isinstance(planned, EntrySummary):
            summary = planned
        elif planned is not None:  # a name clash: the first of its files writes the error
            if write and f == clashes[side][0]:
                written += map(os.fspath, notebook.write(planned, f, batch=True))
            summary = EntrySummary.of(planned)
            if keep:
                results.append(planned)
        else:
            summary, files_written, result = next(work)
            written += files_written
            if keep:
                results.append(result)
            if changes and previous and _figures_differ(previous.get(summary.path), summary):
                changed.append(summary.path)
        plan[i] = sides[i] = None  # done with: keep only the summary
        summaries.append(summary)
        if progress:
            progress(f, summary)
    if write:
        notebook.pm.hook.masstrail_flush_results(root=notebook.root, config=notebook.config)
        notebook.pm.hook.masstrail_scan_done(root=notebook.root, config=notebook.config,
                                             present=[s.path for s in summaries],
                                             written=written, outputs=notebook.outputs)  # fmt: skip
        if basis != last_basis:
            write_basis(notebook.root, basis)
    return ScanReport(notebook.root, results, written, summaries, basis_changes=changes,
                      changed=changed, unnamed=list(notebook.unnamed))  # fmt: skip


def _figures_differ(before: EntrySummary | None, now: EntrySummary) -> bool:
    """Whether a recomputed entry's figures (status, product, E-factor, PMI, gap counts) are
    not those of its last result."""
    if before is None:
        return False

    def figures(s: EntrySummary) -> tuple:
        return (s.status, *(None if x is None else round(x, 6) for x in (s.product_g, s.e_factor,
                s.pmi)), s.blocking, s.major, s.minor)  # fmt: skip

    return figures(before) != figures(now)


def _sidecar_clashes(files: list[Path], sides: list[str]) -> dict[str, list[Path]]:
    """Entries that would share one sidecar (``a.md`` and ``a.json``), by that sidecar."""
    count: dict[str, int] = {}
    for side in sides:
        count[side] = count.get(side, 0) + 1
    clashes: dict[str, list[Path]] = {}
    for f, side in zip(files, sides, strict=True):
        if count[side] > 1:
            clashes.setdefault(side, []).append(f)
    return clashes


def _plan(
    nb: Notebook,
    files: list[Path],
    sides: list[str],
    clashes: dict[str, list[Path]],
    previous: dict[str, EntrySummary] | None,
) -> list[Result | EntrySummary | None]:
    """For each file: an error result (a name clash), its previous summary (current), or None
    (to compute)."""
    plan: list[Result | EntrySummary | None] = []
    logs_seen: dict = {}  # log digests by (folder, logs), for this scan
    for f, side in zip(files, sides, strict=True):
        clash = clashes.get(side) if clashes else None
        if clash:
            names = ", ".join(p.name for p in clash)
            plan.append(error_result(
                f, nb.relpath(f), None,
                f"{len(clash)} entries in this folder share the name "
                f"'{sidecar_path(f).name}' for their results ({names}); rename one of them",
                None))  # fmt: skip
            continue
        before = previous.get(nb.relpath(f)) if previous else None
        if before is not None and nb.fingerprints.current(f, before, logs_seen):
            before.recomputed = False
            plan.append(before)
        else:
            plan.append(None)
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


def _computed(
    notebook: Notebook, paths: list[Path], jobs: int, write: bool, keep: bool
) -> Iterable[tuple[EntrySummary, list[str], Result | None]]:
    """(summary, files written, result if ``keep``) for each of ``paths``, in order:
    computed and written here, or in ``jobs`` worker processes, handed a share at a time,
    two shares per worker in flight, so that finished work never piles up in memory."""
    if jobs <= 1 or len(paths) < PARALLEL_MIN:
        for n, path in enumerate(paths, 1):
            result, written = _one(notebook, path, write)
            if write and n % PARALLEL_SHARE == 0:  # as a worker does after each share
                notebook.pm.hook.masstrail_flush_results(root=notebook.root, config=notebook.config)
            yield EntrySummary.of(result), written, result if keep else None
        return
    import multiprocessing
    from collections import deque
    from concurrent.futures import ProcessPoolExecutor

    context = multiprocessing.get_context("spawn")  # the same on Linux, macOS and Windows
    with ProcessPoolExecutor(jobs, mp_context=context, initializer=_start_worker,
                             initargs=(str(notebook.root),)) as pool:  # fmt: skip
        shares = (paths[i : i + PARALLEL_SHARE] for i in range(0, len(paths), PARALLEL_SHARE))
        pending: deque = deque()
        for share in shares:
            pending.append(pool.submit(_share_in_worker, share, write, keep))
            if len(pending) >= 2 * jobs:
                yield from pending.popleft().result()
        while pending:
            yield from pending.popleft().result()
