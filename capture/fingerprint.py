"""Whether an entry's result is still current: one rule, for the scan and the watcher.

A result is current when its sidecar is in place and the fingerprint of everything it
depends on is the one recorded with it (``EntryRef.inputs_sha256``): the entry's bytes, the
bytes of the balance logs it names, the lab configuration, and the versions of masstrail,
its plugins and the libraries that read names and SMILES. The entry file's stat
(modification and change times, inode, size; as git's index keeps it) saves reading an
entry that has not changed at all.
"""

from __future__ import annotations

import functools
import hashlib
import os
import time
from pathlib import Path
from typing import TYPE_CHECKING

import pluggy

from capture import __version__
from capture.config import LabConfig
from capture.paths import sidecar_name
from capture.safeio import InputError, read_bounded, safe_log_path

if TYPE_CHECKING:
    from capture.models import EntrySummary

GENERATOR = f"masstrail {__version__}"
RACY_NS = 2_000_000_000  # coarser than any file system's time stamps (FAT's are 2 s)


def file_stat(path: Path) -> str | None:
    """What a later scan compares to tell, without reading it, that a file is unchanged:
    "mtime_ns:ctime_ns:inode:size" (as git's index does), taken before the file is read.

    None when the file changed less than RACY_NS before now: a second change within the
    same time stamp tick, after the read, would then go unseen, so such a file is hashed
    again next time.
    """
    try:
        st = os.lstat(path)
    except OSError:
        return None
    if time.time_ns() - max(st.st_mtime_ns, st.st_ctime_ns) < RACY_NS:
        return None
    return stat_key(st)


def stat_key(st: os.stat_result) -> str:
    """The stat fields :func:`file_stat` keeps, as one string."""
    return f"{st.st_mtime_ns}:{st.st_ctime_ns}:{st.st_ino}:{st.st_size}"


class Fingerprints:
    """The fingerprints of one notebook's results (balance-log hashes cached while their
    size and modification time stay)."""

    def __init__(self, root: Path, config: LabConfig, pm: pluggy.PluginManager) -> None:
        self.root = root
        self.config = config
        self.pm = pm
        self._log_shas: dict[Path, tuple[tuple[int, int], str]] = {}

    @functools.cached_property
    def base(self) -> str:
        """What every result of this notebook depends on besides its entry and logs."""
        from importlib import metadata

        h = hashlib.sha256(f"{GENERATOR}\n".encode())
        h.update(self.config.model_dump_json().encode())
        for name, _plugin in sorted(self.pm.list_name_plugin(), key=lambda kv: str(kv[0])):
            h.update(f"\nplugin {name}".encode())
        for dist in ("chemicals", "rdkit", "molmass", "pint", "pydantic"):
            try:
                version = metadata.version(dist)
            except metadata.PackageNotFoundError:
                version = "-"
            h.update(f"\n{dist} {version}".encode())
        return h.hexdigest()

    def log_sha(self, path: Path) -> str:
        """sha256 of a balance log, cached while its size and modification time stay."""
        st = path.stat()
        key = (st.st_mtime_ns, st.st_size)
        known = self._log_shas.get(path)
        if known is None or known[0] != key:
            known = (key, hashlib.sha256(path.read_bytes()).hexdigest())
            self._log_shas[path] = known
        return known[1]

    def log_digests(self, entry_dir: Path, logs: list[str] | tuple[str, ...]) -> str:
        """What the fingerprint takes of an entry's balance logs: each name and hash."""
        parts = []
        for ref in logs:
            try:
                digest = self.log_sha(safe_log_path(self.root, entry_dir, ref))
            except (InputError, OSError):
                digest = "-"
            parts.append(f"\n{ref}\0{digest}")
        return "".join(parts)

    def of(self, entry_sha: str, log_digests: str) -> str:
        """The fingerprint from the entry's hash and :meth:`log_digests`."""
        return hashlib.sha256(f"{self.base}\n{entry_sha}{log_digests}".encode()).hexdigest()

    def of_entry(self, entry_sha: str, entry_dir: Path, logs: list[str]) -> str:
        """The fingerprint of one entry's result (see ``EntryRef.inputs_sha256``)."""
        return self.of(entry_sha, self.log_digests(entry_dir, logs))

    def current(
        self, path: Path, before: EntrySummary | None, logs_seen: dict | None = None
    ) -> bool:
        """True when ``before`` (what the store, the sidecars or the watcher remember of the
        entry's last result) is still the entry's result: its sidecar is there and its
        fingerprint is the same, the entry's hash taken from its unchanged stat or read anew.
        ``logs_seen`` keeps the digests of balance logs, by folder and names, for one scan."""
        if before is None or before.inputs_sha256 is None:
            return False
        try:
            st = os.lstat(path)
            if not os.path.exists(sidecar_name(os.fspath(path))):
                return False
            if before.stat is not None and before.stat == stat_key(st) and before.sha256:
                sha = before.sha256
            else:
                limit = self.config.scan.max_entry_bytes
                sha = hashlib.sha256(read_bounded(path, limit)).hexdigest()
        except (OSError, InputError):
            return False
        digests = ""
        if before.logs:
            key = (os.path.dirname(path), before.logs)
            if logs_seen is None or key not in logs_seen:
                digests = self.log_digests(path.parent, before.logs)
                if logs_seen is not None:
                    logs_seen[key] = digests
            else:
                digests = logs_seen[key]
        return before.inputs_sha256 == self.of(sha, digests)
