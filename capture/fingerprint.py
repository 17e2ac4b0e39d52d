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
import json
import os
import time
from pathlib import Path
from typing import TYPE_CHECKING, NamedTuple

import pluggy

from capture import __version__
from capture.config import LabConfig
from capture.paths import STATE_DIR, sidecar_name
from capture.safeio import InputError, atomic_write
from capture.standing import (
    BASIS_FILE,
    RACY_NS,
    file_sha,
    fingerprint,
    log_digests,
    read_record,
)

if TYPE_CHECKING:
    from capture.models import EntrySummary

GENERATOR = f"masstrail {__version__}"
CONFIG_PART = "the lab configuration (masstrail.toml)"
PLUGINS_PART = "the plugins"


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
    def parts(self) -> dict[str, str]:
        """What every result of this notebook depends on besides its entry and logs, by name:
        masstrail's version, the lab configuration, the plugins, the libraries that weigh, and
        the data the plugins answer from (``masstrail_knowledge_versions``)."""
        from importlib import metadata

        config = hashlib.sha256(self.config.model_dump_json().encode()).hexdigest()[:12]
        names = sorted(str(n) for n, plugin in self.pm.list_name_plugin() if plugin is not None)
        parts = {"masstrail": __version__, CONFIG_PART: config, PLUGINS_PART: ", ".join(names)}
        for dist in ("molmass", "pint", "pydantic"):
            try:
                parts[f"the {dist} library"] = metadata.version(dist)
            except metadata.PackageNotFoundError:
                parts[f"the {dist} library"] = "not installed"
        for answer in self.pm.hook.masstrail_knowledge_versions(config=self.config):
            parts.update(answer)
        return parts

    @functools.cached_property
    def base(self) -> str:
        """The hash of :attr:`parts`, part of every result's fingerprint."""
        return hashlib.sha256(json.dumps(self.parts, sort_keys=True).encode()).hexdigest()

    def log_sha(self, path: Path) -> str:
        """sha256 of a balance log, cached while its size and modification time stay."""
        st = path.stat()
        key = (st.st_mtime_ns, st.st_size)
        known = self._log_shas.get(path)
        if known is None or known[0] != key:
            known = (key, file_sha(path, self.config.scan.max_entry_bytes))
            self._log_shas[path] = known
        return known[1]

    def log_digests(self, entry_dir: Path, logs: list[str] | tuple[str, ...]) -> str:
        """What the fingerprint takes of an entry's balance logs: each name and hash."""
        return log_digests(self.root, entry_dir, logs, self.log_sha)

    def of(self, entry_sha: str, log_digests: str) -> str:
        """The fingerprint from the entry's hash and :meth:`log_digests`."""
        return fingerprint(self.base, entry_sha, log_digests)

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
                sha = file_sha(path, limit)
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


class Basis(NamedTuple):
    """What the last writing scan recorded in ``basis.json``."""

    parts: dict[str, str] | None  # Fingerprints.parts; None: no record, or a damaged one
    standing: dict | None  # capture.standing.standing, for ``masstrail show``
    entries: int | None  # how many entries it saw: the next progress bar's total


def read_basis(root: Path) -> Basis:
    """What the last writing scan recorded (with no record or a damaged one, the scan cannot
    name what changed, and says nothing of it)."""
    data = read_record(root) or {}
    parts, standing, entries = data.get("parts"), data.get("standing"), data.get("entries")
    if not isinstance(parts, dict) or not all(isinstance(v, str) for v in parts.values()):
        parts = None
    return Basis(parts, standing if isinstance(standing, dict) else None,
                 entries if isinstance(entries, int) else None)  # fmt: skip


def write_basis(
    root: Path, parts: dict[str, str], standing: dict | None, entries: int | None = None
) -> None:
    """Record ``parts`` as the basis of the notebook's results, with the standing that lets
    ``masstrail show`` answer from a current sidecar and the number of entries seen (a cache
    of what was used: a file that cannot be written only loses the naming of the next
    change, the quick answers and a progress bar's total)."""
    path = root / STATE_DIR / BASIS_FILE
    record = {"parts": parts, "standing": standing, "entries": entries}
    text = json.dumps(record, indent=1, sort_keys=True) + "\n"
    try:
        path.parent.mkdir(exist_ok=True)
        atomic_write(path, text, sync_dir=False)
    except OSError:
        pass


def basis_changes(before: dict[str, str], now: dict[str, str]) -> list[str]:
    """What changed between two :attr:`Fingerprints.parts`, in words: 'the compound table
    changed', 'the chemicals name database (the names extra) 1.5.2 is now used', 'plugins
    added: names'."""
    out = []
    for key in [*now, *(k for k in before if k not in now)]:
        old, new = before.get(key), now.get(key)
        if old == new:
            continue
        if key == PLUGINS_PART:
            a, b = (
                set(filter(None, (old or "").split(", "))),
                set(filter(None, (new or "").split(", "))),
            )
            for how, names in (("added", b - a), ("removed or blocked", a - b)):
                if names:
                    out.append(f"plugins {how}: {', '.join(sorted(names))}")
        elif old is None:
            out.append(f"{key} {new} is now used")
        elif new is None:
            out.append(f"{key} is no longer used")
        elif _digest(old) and _digest(new):
            out.append(f"{key} changed")
        else:
            out.append(f"{key}: {old} → {new}")
    return out


def _digest(value: str) -> bool:
    return len(value) == 12 and all(c in "0123456789abcdef" for c in value)
