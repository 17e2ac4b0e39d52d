"""Where masstrail writes, and which files it never reads as entries."""

from __future__ import annotations

import fnmatch
import functools
import os
import re
from pathlib import Path

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


def entry_stem(path: Path) -> str:
    """The file name without its last suffix: ``a.md`` → ``a``."""
    return _stem(path.name)


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
