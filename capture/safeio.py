"""Reading untrusted files and writing results safely.

Entries come from many hands and many editors, so every read is bounded and
every parse is strict: duplicate keys and ``NaN`` are refused in JSON (YAML's rules
are in :mod:`capture.safeyaml`). Results are written atomically.
"""

from __future__ import annotations

import contextlib
import functools
import json
import os
import stat
from pathlib import Path, PureWindowsPath
from typing import Any


class InputError(Exception):
    """A file masstrail cannot read, with a message naming where the problem is."""

    def __init__(self, message: str, location: str | None = None) -> None:
        super().__init__(message)
        self.message = message
        self.location = location


_READ_FLAGS = (os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_BINARY", 0)
               | getattr(os, "O_NOCTTY", 0))  # fmt: skip
_NOFOLLOW = getattr(os, "O_NOFOLLOW", 0)


def _kind(mode: int) -> str:
    if stat.S_ISLNK(mode):
        return (
            "a symbolic link (masstrail does not follow links: its target may lie "
            "outside the notebook)"
        )
    if stat.S_ISFIFO(mode):
        return "a FIFO (named pipe), not a regular file"
    if stat.S_ISSOCK(mode):
        return "a socket, not a regular file"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device, not a regular file"
    if stat.S_ISDIR(mode):
        return "a folder, not a file"
    return "not a regular file"


def read_bounded(path: Path, limit: int, follow: bool = False) -> bytes:
    """Read a regular file of at most ``limit`` bytes (for entries, the lab's ``[scan]
    max_entry_mb``), or raise :class:`InputError`. Never blocks: a FIFO, socket or device is
    refused (opened non-blocking, checked with fstat after opening, so a file swapped for one
    in between is refused too); a symbolic link is refused unless ``follow``."""
    try:
        st = os.stat(path) if follow else os.lstat(path)
    except OSError as exc:
        raise InputError(f"cannot read the file: {exc.strerror}") from exc
    if not stat.S_ISREG(st.st_mode):
        raise InputError(_kind(st.st_mode))
    if st.st_size > limit:
        raise InputError(
            f"the file is {st.st_size / 2**20:.1f} MB; files larger than "
            f"{limit / 2**20:.0f} MB are not read"
        )
    try:
        fd = os.open(path, _READ_FLAGS | (0 if follow else _NOFOLLOW))
    except OSError as exc:
        raise InputError(f"cannot read the file: {exc.strerror}") from exc
    try:
        st = os.fstat(fd)
        if not stat.S_ISREG(st.st_mode):
            raise InputError(_kind(st.st_mode))
        chunks, size = [], 0
        while size <= limit:  # sized by the stat, read until the end (it may have grown)
            chunk = os.read(fd, max(st.st_size - size, 0) + 65536)
            if not chunk:
                break
            chunks.append(chunk)
            size += len(chunk)
    finally:
        os.close(fd)
    if size > limit:
        raise InputError(f"the file grew past {limit / 2**20:.0f} MB while it was read")
    return b"".join(chunks)


def read_small(path: Path, limit: int = 64 * 2**20) -> str | None:
    """The text of a file masstrail wrote or reads for itself (a sidecar, the lab config, its
    state), through :func:`read_bounded` (links followed: a lab may link its config); None
    when it is missing, special or too big."""
    try:
        return decode_text(read_bounded(path, limit, follow=True))
    except InputError:
        return None


@functools.lru_cache(maxsize=16)
def _resolved(root: Path) -> Path:
    return root.resolve()  # a notebook root does not move while masstrail runs


def safe_log_path(root: Path, entry_dir: Path, ref: str) -> Path:
    """The file ``ref`` names (relative to the entry's folder) if it lies inside the notebook
    root, else :class:`InputError`: drive and network paths, ``..`` and links that leave the
    root are refused, so an entry can never make masstrail read outside its notebook."""
    if not ref or not ref.strip():
        raise InputError("an empty balance_log path")
    if "\x00" in ref:
        raise InputError(f"balance_log {ref!r} holds a NUL character; it is not a path")
    if PureWindowsPath(ref).drive or ref.startswith(("\\\\", "//")):
        raise InputError(
            f"balance_log {ref!r} is a drive or network path; use a path inside the notebook"
        )
    candidate = Path(ref) if Path(ref).is_absolute() else entry_dir / ref
    resolved = candidate.resolve()
    if not resolved.is_relative_to(_resolved(root)):
        raise InputError(
            f"balance_log {ref!r} leads outside the notebook folder; logs must lie inside it"
        )
    try:
        mode = os.stat(resolved).st_mode
    except OSError:
        raise InputError(f"balance_log {ref!r} does not exist") from None
    if not stat.S_ISREG(mode):
        raise InputError(f"balance_log {ref!r} is {_kind(mode)}")
    return resolved


def decode_text(data: bytes) -> str:
    """Decode UTF-8 (a BOM is dropped); refuse binary files with a clear message."""
    if b"\x00" in data[:8192]:
        raise InputError("this is a binary file (it contains NUL bytes), not a notebook entry")
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1
        raise InputError(
            f"the file is not UTF-8 text (byte 0x{data[exc.start]:02x} at offset {exc.start}); "
            "save it as UTF-8",
            location=f"line {line}",
        ) from exc
    return text.replace("\r\n", "\n").replace("\r", "\n")


def _no_duplicates(pairs: list[tuple[str, Any]]) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for key, value in pairs:
        if key in out:
            raise InputError(f"key {key!r} appears twice in one JSON object", location=key)
        out[key] = value
    return out


def _no_constants(name: str) -> Any:
    raise InputError(f"{name} is not a number masstrail accepts")


MAX_DEPTH = 64  # lists and mappings within each other: an entry needs a handful


def _too_deep(text: str, most: int) -> int | None:
    """The offset where JSON text nests deeper than ``most``, or None (strings skipped)."""
    depth, in_string, escaped = 0, False, False
    for i, c in enumerate(text):
        if in_string:
            if escaped:
                escaped = False
            elif c == "\\":
                escaped = True
            elif c == '"':
                in_string = False
        elif c == '"':
            in_string = True
        elif c in "[{":
            depth += 1
            if depth > most:
                return i
        elif c in "]}":
            depth -= 1
    return None


def load_json(text: str) -> Any:
    """Load JSON strictly: no NaN/Infinity, no duplicate keys, at most ``MAX_DEPTH`` levels
    of nesting; errors name the line."""
    if text.count("[") + text.count("{") > MAX_DEPTH and (at := _too_deep(text, MAX_DEPTH)):
        line = text.count("\n", 0, at) + 1
        raise InputError(f"invalid JSON: lists and objects nest more than {MAX_DEPTH} levels "
                         "deep; an entry needs a few", location=f"line {line}")  # fmt: skip
    try:
        return json.loads(text, object_pairs_hook=_no_duplicates, parse_constant=_no_constants)
    except json.JSONDecodeError as exc:
        raise InputError(f"invalid JSON: {exc.msg}", location=f"line {exc.lineno}") from exc


def atomic_write(path: Path, text: str, sync_dir: bool = True) -> bool:
    """Write ``text`` to ``path`` atomically; return False when the file already holds it.

    A temp file in the same folder is written, flushed and fsynced, then moved
    over the target with ``os.replace``, so a crash leaves the old or the new
    file, never a partial one. The folder is then fsynced, so the move itself
    survives a power cut; a caller writing many files in a row passes
    ``sync_dir=False`` and calls :func:`sync_folder` once per folder after.
    """
    data = text.encode("utf-8")
    if holds(path, data):
        return False
    replace_atomically(path, data)
    if sync_dir:
        sync_folder(path.parent)
    return True


def holds(path: Path, data: bytes) -> bool:
    """True when the file at ``path`` holds exactly ``data`` (then it need not be written);
    a special file there (a FIFO someone put in the sidecar's place) is never read. A file of
    another size is not read either (a first scan's files are not there at all)."""
    try:
        st = os.lstat(path)
    except OSError:
        return False
    if not stat.S_ISREG(st.st_mode) or st.st_size != len(data):
        return False
    try:
        return read_bounded(path, len(data) + 1) == data
    except InputError:
        return False


def replace_atomically(path: Path, data: bytes) -> None:
    """Temp file in the same folder, written, fsynced, moved over ``path`` (see
    :func:`atomic_write`; the folder is not fsynced here)."""
    fd, tmp = _temp_file(path)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise


def _temp_file(path: Path) -> tuple[int, str]:
    """A new temp file beside ``path``, named so the watcher and scans pass over it."""
    import tempfile  # here: a command that only reads (show) need not import it

    return tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")


@functools.lru_cache(maxsize=1)
def libc():
    """The C library this process runs on (its own symbols: no library search), or None
    where it cannot be had (Windows)."""
    import ctypes

    try:
        return ctypes.CDLL(None, use_errno=True)
    except (OSError, TypeError):
        return None


def _syncfs():
    """Linux's syncfs(2), or None where there is none."""
    import sys

    c = libc() if sys.platform.startswith("linux") else None
    return getattr(c, "syncfs", None)


def replace_all_atomically(items: list[tuple[Path, bytes]]) -> None:
    """:func:`replace_atomically` for many files at once: every temp file is written, then
    all are made durable together (one syncfs(2) of their file system on Linux, each
    fsynced elsewhere or when syncfs fails), then each is moved over its target. A crash
    leaves every target old or new, never partial, as one at a time does; the folders are
    not fsynced here."""
    temps: list[tuple[str, Path]] = []
    moved = 0  # temps[:moved] are in place
    try:
        for path, data in items:
            fd, tmp = _temp_file(path)
            temps.append((tmp, path))
            with os.fdopen(fd, "wb") as fh:
                fh.write(data)
        syncfs = _syncfs() if temps else None
        done = False
        if syncfs is not None:
            fd = os.open(temps[0][0], os.O_RDONLY)
            try:
                done = syncfs(fd) == 0  # one file system: a scan writes beside its entries
            finally:
                os.close(fd)
            done = done and len({os.stat(t).st_dev for t, _ in temps}) == 1
        if not done:
            for tmp, _ in temps:
                fd = os.open(tmp, os.O_RDONLY)
                try:
                    os.fsync(fd)
                finally:
                    os.close(fd)
        for tmp, path in temps:
            os.replace(tmp, path)
            moved += 1
    except BaseException:
        for tmp, _ in temps[moved:]:
            with contextlib.suppress(OSError):
                os.unlink(tmp)
        raise


def sync_folder(folder: Path) -> None:
    """fsync a folder, so the files moved into it stay there after a power cut (POSIX)."""
    try:
        dir_fd = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(dir_fd)
    except OSError:
        pass
    finally:
        os.close(dir_fd)


def try_lock(fd: int) -> bool:
    """Take an OS lock on the open file ``fd`` without waiting (flock on POSIX, msvcrt on
    Windows); False when another process holds it. Closing ``fd`` lets go."""
    try:
        if os.name == "nt":
            import msvcrt

            msvcrt.locking(fd, msvcrt.LK_NBLCK, 1)
        else:
            import fcntl

            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
    except OSError:
        return False
    return True
