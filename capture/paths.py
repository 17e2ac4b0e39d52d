"""Where masstrail writes, and which files it never reads as entries."""

from __future__ import annotations

import fnmatch
import functools
import os
import re
from pathlib import Path

CONFIG_NAME = "masstrail.toml"  # the lab configuration, at the notebook's root
SIDECAR_SUFFIX = ".waste.json"
CARD_SUFFIX = ".waste.md"
STATE_DIR = ".masstrail"

# Editors' swap, lock, backup and temp files (see shared RELIABILITY.md).
_TEMP_PATTERNS = (
    ".*.sw?",
    "*~",
    "4913*",
    "*___jb_*___",
    ".goutputstream-*",
    ".#*",
    ".~lock.*#",
    "*.tmp",
    "*.bak",
)


def _stem(name: str) -> str:
    """``name`` without its last suffix, by pathlib's rule (``.md`` and ``a.`` have none)."""
    i = name.rfind(".")
    return name[:i] if 0 < i < len(name) - 1 else name


def entry_stem(path: Path | str) -> str:
    """The file name without its last suffix: ``a.md`` → ``a``."""
    return _stem(path if isinstance(path, str) else path.name)


def output_stem(name: str) -> str:
    """The entry stem of a result file's name: ``a.waste.json`` and ``a.waste.md`` → ``a``."""
    for suffix in (SIDECAR_SUFFIX, CARD_SUFFIX):
        if name.endswith(suffix):
            return name[: -len(suffix)]
    return name


def notebook_root(entry: Path) -> Path:
    """The notebook an entry file belongs to: the nearest folder above it that holds a
    masstrail.toml, else the entry's own folder (resolved)."""
    entry = entry.resolve()
    return next((folder for folder in [entry.parent, *entry.parent.parents]
                 if (folder / CONFIG_NAME).is_file()), entry.parent)  # fmt: skip


def sidecar_path(entry_path: Path) -> Path:
    """``NAME.md`` → ``NAME.waste.json`` in the same folder."""
    return entry_path.with_name(entry_stem(entry_path) + SIDECAR_SUFFIX)


def sidecar_name(entry_path: str) -> str:
    """:func:`sidecar_path` for a path as a string, without pathlib (a scan does this for
    every entry)."""
    head, name = os.path.split(entry_path)
    return os.path.join(head, _stem(name) + SIDECAR_SUFFIX)


def card_path(entry_path: Path) -> Path:
    """``NAME.md`` → ``NAME.waste.md`` in the same folder."""
    return entry_path.with_name(entry_stem(entry_path) + CARD_SUFFIX)


def is_own_output(name: str) -> bool:
    """True for the files masstrail writes itself."""
    return name.endswith((SIDECAR_SUFFIX, CARD_SUFFIX))


_TEMP = re.compile("|".join(fnmatch.translate(p) for p in _TEMP_PATTERNS))


def is_temp_file(name: str) -> bool:
    """True for editors' swap, lock, backup and temp files."""
    return _TEMP.match(name) is not None


@functools.lru_cache(maxsize=32)
def _globs(patterns: tuple[str, ...]) -> tuple[re.Pattern | None, tuple[str, ...]]:
    joined = "|".join(fnmatch.translate(p) for p in patterns)
    folders = tuple(p[:-2] for p in patterns if p.endswith("/**"))
    return (re.compile(joined) if joined else None), folders


def is_ignored(relpath: str, patterns: list[str]) -> bool:
    """True when ``relpath`` (with ``/``) matches one of the lab's ignore globs (``fnmatch``
    rules, where ``*`` also matches ``/``; ``DIR/**`` also matches DIR itself)."""
    if not patterns:
        return False
    any_glob, folders = _globs(tuple(patterns))
    if any_glob is not None and any_glob.match(relpath):
        return True
    return (relpath + "/").startswith(folders) if folders else False


class EntryRule:
    """Which files under a notebook root are entries: the one rule that the scan's folder walk
    and the watcher both use.

    Not entries: anything in a hidden folder (``.masstrail/``, ``.git/``) or ``__pycache__``,
    hidden files, masstrail's own outputs, editors' swap, lock, backup and temp files, the
    lab's ``masstrail.toml``, files whose ending no reader claims, and paths matching the
    lab's ``[scan] ignore`` globs.
    """

    def __init__(self, suffixes: list[str], ignore: list[str]) -> None:
        self.ends = tuple(sorted({"." + s.lower().lstrip(".") for s in suffixes}))
        self.ignore = list(ignore)

    @staticmethod
    def folder_ok(name: str) -> bool:
        """True when a folder of this name may hold entries."""
        return not name.startswith(".") and name != "__pycache__"

    def file_ok(self, rel_dir: str, name: str) -> bool:
        """True when the file ``name`` in the folder ``rel_dir`` (relative to the root, with
        ``/``; "" for the root) is an entry."""
        if name.endswith((SIDECAR_SUFFIX, CARD_SUFFIX)) or name.startswith("."):
            return False  # most of a scanned folder: the sidecars and cards
        if not name.lower().endswith(self.ends) or is_temp_file(name):
            return False
        if not rel_dir and name == CONFIG_NAME:
            return False
        return not (self.ignore and is_ignored(f"{rel_dir}/{name}" if rel_dir else name,
                                               self.ignore))  # fmt: skip

    def relpath_ok(self, relpath: str) -> bool:
        """True when ``relpath`` (relative to the root, with ``/``) is an entry."""
        *folders, name = relpath.split("/")
        return all(map(self.folder_ok, folders)) and self.file_ok("/".join(folders), name)
