"""Results next to each entry: ``NAME.waste.json`` and, if the lab wants it, ``NAME.waste.md``.

Both are written atomically (temp file in the same folder, fsync, ``os.replace``)
and only when their content changes, so an unchanged notebook stays unchanged
on disk. The entry file itself is never opened for writing.
"""

from __future__ import annotations

import functools
from collections.abc import Iterable, Iterator
from pathlib import Path

from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import EntrySummary, Result
from capture.paths import SIDECAR_SUFFIX, EntryRule, card_path, sidecar_path
from capture.safeio import atomic_write, holds, read_small, replace_all_atomically, sync_folder


@functools.lru_cache(maxsize=1)
def _card_template():
    from capture.views.filters import markdown_environment

    return markdown_environment().get_template("card.md.j2")


def render_card(result: Result) -> str:
    """The human-readable card for one result, in Markdown."""
    return _card_template().render(r=result)


@hookimpl(specname="masstrail_remove_result")
def remove_sidecar(entry_path: Path) -> None:
    """A deleted entry's sidecar and card go with it."""
    import contextlib

    for out in (sidecar_path(entry_path), card_path(entry_path)):
        with contextlib.suppress(FileNotFoundError):
            out.unlink()


# folders a scan has moved files into and not yet fsynced
_unsynced: set[Path] = set()
# a scan's writes in progress: a share at a time, written, made durable together and moved
# into place by one thread of this process while the scan computes the next entries
_in_flight: list = []
_share: list[tuple[Path, bytes]] = []  # the files of the share being gathered
SHARE_FILES = 64  # a scan flushes every 32 entries: their sidecars and cards


@functools.lru_cache(maxsize=1)
def _writer():
    from concurrent.futures import ThreadPoolExecutor

    return ThreadPoolExecutor(1, thread_name_prefix="masstrail-sidecars")


@hookimpl(specname="masstrail_write_result")
def write_sidecar(result: Result, entry_path: Path, config: LabConfig, batch: bool) -> list[Path]:
    """Write ``NAME.waste.json`` (always) and ``NAME.waste.md`` (with ``[output] card = true``).

    The watcher's results are written at once, their folder fsynced. A scan's (``batch``)
    are written by a thread of this process, in order, while the scan goes on; they are
    all in place when ``masstrail_flush_results`` returns (before the store records them),
    and each folder is fsynced once, when the scan is done. Each file is fsynced before it
    replaces the old one.
    """
    written = []
    outputs = [(sidecar_path(entry_path), result.sidecar_json)]
    if config.output.card:
        outputs.append((card_path(entry_path), lambda: render_card(result)))
    for out, render in outputs:
        if not batch:
            if atomic_write(out, render()):
                written.append(out)
            continue
        data = render().encode("utf-8")
        if not holds(out, data):
            _share.append((out, data))
            written.append(out)
            _unsynced.add(out.parent)
    if len(_share) >= SHARE_FILES:
        _hand_over()
    return written


def _hand_over() -> None:
    """Give the gathered files to the writer thread, to be made durable together."""
    if _share:
        files, _share[:] = list(_share), []
        _in_flight.append(_writer().submit(replace_all_atomically, files))


# first: the sidecars are in place before the store (trylast) says they are current
@hookimpl(tryfirst=True, specname="masstrail_flush_results")
def finish_writes() -> None:
    """Wait for the scan's writes in progress; the first that failed raises its error."""
    _hand_over()
    done, _in_flight[:] = list(_in_flight), []
    errors = [f.exception() for f in done]
    for error in errors:
        if error is not None:
            raise error


@hookimpl(specname="masstrail_scan_done")
def sync_folders(written: Iterable[str]) -> None:
    """fsync every folder the scan wrote into (here or in its workers), once."""
    import os

    finish_writes()
    _unsynced.update(Path(folder) for folder in {os.path.dirname(p) for p in written})
    while _unsynced:
        sync_folder(_unsynced.pop())


@hookimpl(specname="masstrail_scan_done")
def remove_orphans(orphans: list[str]) -> None:
    """Result files whose entry is gone (deleted while no watcher ran) are removed, when they
    are masstrail's own: a JSON result with masstrail's format, a card with its heading."""
    import contextlib
    import os

    for out in orphans:
        if _ours(Path(out)):
            with contextlib.suppress(OSError):
                os.unlink(out)


def _ours(path: Path) -> bool:
    text = read_small(path, 256 * 2**20)
    if text is None:
        return False
    if path.name.endswith(SIDECAR_SUFFIX):
        return text.lstrip().startswith("{") and '"format": "masstrail-result/' in text[:200]
    return text.startswith("# Waste record:") and "Written by masstrail" in text[:2000]


@hookimpl(trylast=True, specname="masstrail_previous_gaps")
def gaps_in_sidecar(root: Path, relpath: str, config: LabConfig) -> list[tuple[str, str]] | None:
    """The gaps of the entry's sidecar, when it holds a readable result."""
    import json

    try:
        data = json.loads(read_small(sidecar_path(root / relpath)) or "")
        if data.get("status") != "ok":
            return None
        return [(g["kind"], g["item"]) for g in data.get("gaps") or []]
    except (OSError, ValueError, KeyError, TypeError, AttributeError):
        return None


@hookimpl(trylast=True, specname="masstrail_previous_results")
def previous_from_sidecars(
    root: Path, config: LabConfig, paths: list[str] | None
) -> dict[str, EntrySummary] | None:
    """What the sidecars under ``root`` (of the entries ``paths``, or all) say of the last
    results, when no store answered (``[store] enabled = false``): a scan then still skips
    the entries whose sidecar holds their current fingerprint. A sidecar that cannot be read
    is left out (recomputed)."""
    import json

    sides = _sidecars_under(root) if paths is None else (sidecar_path(root / p) for p in paths)
    out: dict[str, EntrySummary] = {}
    for side in sides:
        try:
            summary = _summary_of(json.loads(read_small(side) or ""))
        except (ValueError, KeyError, TypeError, AttributeError):
            continue
        if summary is not None:
            out[summary.path] = summary
    return out


def _sidecars_under(root: Path) -> Iterator[Path]:
    import os

    for dirpath, dirnames, filenames in os.walk(root):
        dirnames[:] = [d for d in dirnames if EntryRule.folder_ok(d)]
        yield from (Path(dirpath, n) for n in filenames if n.endswith(SIDECAR_SUFFIX))


def _summary_of(data: dict) -> EntrySummary | None:
    """The summary a sidecar's JSON holds (None when it has no fingerprint)."""
    entry, metrics = data["entry"], data.get("metrics") or {}
    if not entry.get("inputs_sha256"):
        return None
    severities = [g["severity"] for g in data.get("gaps") or []]
    error = data.get("error") or {}
    return EntrySummary(
        path=entry["path"], status=data["status"], product_g=data["product"].get("mass_g"),
        e_factor=metrics.get("e_factor"), pmi=metrics.get("pmi"),
        blocking=severities.count("blocking"), major=severities.count("major"),
        minor=severities.count("minor"), error=error.get("message"),
        location=error.get("location"), recomputed=False,
        inputs_sha256=entry["inputs_sha256"], sha256=entry.get("sha256"),
        logs=tuple(entry.get("balance_log") or ()),
    )  # fmt: skip
