"""Whether an entry's sidecar is its current result, told without loading the plugins.

A result's fingerprint (:mod:`capture.fingerprint`) hashes the entry's bytes, the bytes of
the balance logs it names and a *base*: the hash of masstrail's version, the lab
configuration, the plugins, the libraries that weigh and the data the plugins answer from.
Knowing the base means loading the plugins, most of a command's start-up. So a scan that
writes results (the watcher's catch-up is one) records its base beside the *stamp* of the
set-up it loaded the plugins from, taken before loading them:

- masstrail's version, the Python running it and the ``MASSTRAIL_BLOCK`` variable;
- the bytes of the notebook's ``masstrail.toml``;
- the stat of every folder on Python's import path: installing, upgrading or removing a
  package adds or removes files there, which changes the folder's modification time (the
  rule Python's own import system uses to notice new modules);
- the stat of masstrail's own data files (an editable install changes them in place).

A later process whose stamp is the same has the same base without loading a plugin: it hashes
the entry and its logs, and when the sidecar's fingerprint is theirs, the sidecar *is* the
entry's result (:func:`current_sidecar`; ``masstrail show`` answers from it). Anything else
(no record, another stamp, another fingerprint, a sidecar that cannot be read) means
"compute it". A folder changed less than 2 s before the stamp is taken gives no stamp: a
second change within the same time stamp tick would go unseen (as for entries,
:func:`capture.fingerprint.file_stat`). What the stamp cannot see is a third-party plugin's
data changed in place without a reinstall; ``show --recompute`` computes anyway.

This module imports no pydantic and no plugin: it is the quick path of ``masstrail show``.
"""

from __future__ import annotations

import hashlib
import importlib.util
import json
import os
import sys
import time
from collections.abc import Callable, Sequence
from pathlib import Path

from capture import __version__
from capture.paths import CONFIG_NAME, STATE_DIR, sidecar_path
from capture.safeio import InputError, read_bounded, read_small, safe_log_path

BASIS_FILE = "basis.json"  # in the notebook's STATE_DIR: what the last writing scan used
RACY_NS = 2_000_000_000  # coarser than any file system's time stamps (FAT's are 2 s)
SIDECAR_LIMIT = 64 * 2**20


def file_sha(path: Path, limit: int) -> str:
    """sha256 of a file's bytes, read within ``limit`` (:func:`capture.safeio.read_bounded`)."""
    return hashlib.sha256(read_bounded(path, limit)).hexdigest()


def fingerprint(base: str, entry_sha: str, log_digests: str) -> str:
    """A result's fingerprint: its base, the entry's hash and :func:`log_digests`."""
    return hashlib.sha256(f"{base}\n{entry_sha}{log_digests}".encode()).hexdigest()


def log_digests(
    root: Path, entry_dir: Path, logs: Sequence[str], sha_of: Callable[[Path], str]
) -> str:
    """What a fingerprint takes of an entry's balance logs: each name and its hash
    (``sha_of`` of the file it names inside the notebook; "-" where none can be read)."""
    parts = []
    for ref in logs:
        try:
            digest = sha_of(safe_log_path(root, entry_dir, ref))
        except (InputError, OSError):
            digest = "-"
        parts.append(f"\n{ref}\0{digest}")
    return "".join(parts)


def setup_stamp(root: Path) -> str | None:
    """The stamp of the set-up a process in this Python would load masstrail's plugins from,
    for the notebook at ``root``; None when a part of it changed less than 2 s ago."""
    h = hashlib.sha256()
    block = os.environ.get("MASSTRAIL_BLOCK", "")
    h.update(f"{__version__}\0{sys.version}\0{sys.prefix}\0{block}\0".encode())
    try:
        h.update(hashlib.sha256((root / CONFIG_NAME).read_bytes()).digest())
    except OSError:
        h.update(b"no configuration")
    now = time.time_ns()
    for place in [*sys.path, *_data_files()]:
        try:
            st = os.stat(place or ".")
        except OSError:
            h.update(f"{place}\0absent\n".encode())
            continue
        if now - max(st.st_mtime_ns, st.st_ctime_ns) < RACY_NS:
            return None
        h.update(f"{place}\0{st.st_mtime_ns}:{st.st_ctime_ns}:{st.st_ino}:{st.st_size}\n".encode())
    return h.hexdigest()


def _data_files() -> list[str]:
    """masstrail's own data files (found without importing the plugins; the script that
    builds the compound table is not data)."""
    spec = importlib.util.find_spec("masstrail_plugins")
    if spec is None or not spec.submodule_search_locations:
        return []
    data = os.path.join(next(iter(spec.submodule_search_locations)), "data")
    try:
        names = sorted(n for n in os.listdir(data) if "." in n and not n.endswith(".py"))
    except OSError:
        return []
    return [os.path.join(data, n) for n in names]


def read_record(root: Path) -> dict | None:
    """The notebook's ``basis.json`` as a dict, or None (none yet, or damaged)."""
    try:
        data = json.loads(read_small(root / STATE_DIR / BASIS_FILE, 2**20) or "")
    except ValueError:
        return None
    return data if isinstance(data, dict) else None


def standing(stamp: str | None, base: str, entry_limit: int) -> dict | None:
    """What a writing scan records for :func:`current_sidecar` (None without a stamp)."""
    if stamp is None:
        return None
    return {"stamp": stamp, "base": base, "entry_limit": entry_limit}


def current_sidecar(entry: Path, root: Path) -> tuple[str, dict] | None:
    """The text and content of ``entry``'s sidecar when it is the entry's current result for
    the notebook at ``root`` in this set-up; None when that cannot be told (compute it)."""
    record = (read_record(root) or {}).get("standing")
    if not isinstance(record, dict) or not isinstance(record.get("stamp"), str):
        return None
    base, limit = record.get("base"), record.get("entry_limit")
    if not isinstance(base, str) or not isinstance(limit, int):
        return None
    if record["stamp"] != setup_stamp(root):
        return None
    entry = entry.resolve()
    try:
        data = read_bounded(entry, limit)
        rel = entry.relative_to(root).as_posix()
    except (InputError, ValueError):
        return None
    text = read_small(sidecar_path(entry), SIDECAR_LIMIT)
    try:
        result = json.loads(text or "")
    except ValueError:
        return None
    ref = result.get("entry") if isinstance(result, dict) else None
    if not isinstance(ref, dict) or ref.get("path") != rel:
        return None
    logs = ref.get("balance_log") or []
    if not isinstance(logs, list) or not all(isinstance(x, str) for x in logs):
        return None

    digests = log_digests(root, entry.parent, logs, lambda path: file_sha(path, limit))
    if ref.get("inputs_sha256") != fingerprint(base, hashlib.sha256(data).hexdigest(), digests):
        return None
    return text, result
