"""Where masstrail writes, and which files it never reads as entries."""

from __future__ import annotations

import fnmatch
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


def entry_stem(path: Path) -> str:
    """The file name without its last suffix: ``a.md`` → ``a``."""
    return path.name[: -len(path.suffix)] if path.suffix else path.name


def sidecar_path(entry_path: Path) -> Path:
    """``NAME.md`` → ``NAME.waste.json`` in the same folder."""
    return entry_path.with_name(entry_stem(entry_path) + SIDECAR_SUFFIX)


def card_path(entry_path: Path) -> Path:
    """``NAME.md`` → ``NAME.waste.md`` in the same folder."""
    return entry_path.with_name(entry_stem(entry_path) + CARD_SUFFIX)


def is_own_output(name: str) -> bool:
    """True for the files masstrail writes itself."""
    return name.endswith((SIDECAR_SUFFIX, CARD_SUFFIX))


def is_temp_file(name: str) -> bool:
    """True for editors' swap, lock, backup and temp files."""
    return any(fnmatch.fnmatchcase(name, p) for p in _TEMP_PATTERNS)


def is_ignored(relpath: str, patterns: list[str]) -> bool:
    """True when ``relpath`` (with ``/``) matches one of the lab's ignore globs."""
    for pattern in patterns:
        if fnmatch.fnmatchcase(relpath, pattern):
            return True
        if pattern.endswith("/**") and (relpath + "/").startswith(pattern[:-2]):
            return True
    return False
