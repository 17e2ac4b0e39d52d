"""Reading untrusted files and writing results safely.

Entries come from many hands and many editors, so every read is bounded and
every parse is strict: YAML is loaded with a safe loader that turns every plain
scalar into a string (values are typed by our schema, not by YAML 1.1's guesses
such as ``NO`` → False or ``1:20`` → 80), aliases are refused (a 300-byte alias
bomb otherwise expands without limit), duplicate keys are refused in YAML and
JSON, and ``NaN`` is refused in JSON. Results are written atomically.
"""

from __future__ import annotations

import contextlib
import functools
import json
import os
import stat
import tempfile
from pathlib import Path, PureWindowsPath
from typing import Any

import yaml


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


class _NoDuplicates:
    """Refuses a mapping that repeats a key, naming both lines."""

    def construct_mapping(self, node: Any, deep: bool = False) -> Any:
        seen: dict[Any, int] = {}
        for key_node, _ in node.value:
            key = self.construct_object(key_node, deep=True)
            if isinstance(key, (list, dict)):
                raise InputError(
                    "a YAML key must be plain text", location=f"line {key_node.start_mark.line + 1}"
                )
            if key in seen:
                raise InputError(
                    f"key {key!r} appears twice (lines {seen[key]} and "
                    f"{key_node.start_mark.line + 1})",
                    location=f"line {key_node.start_mark.line + 1}",
                )
            seen[key] = key_node.start_mark.line + 1
        return super().construct_mapping(node, deep=deep)


class _StringLoader(_NoDuplicates, yaml.SafeLoader):
    """Safe YAML loader: plain scalars stay strings, aliases and duplicate keys are refused."""

    def compose_node(self, parent: Any, index: Any) -> Any:
        if self.check_event(yaml.AliasEvent):
            event = self.peek_event()
            raise InputError(
                "YAML aliases (*name) are not allowed in entries",
                location=f"line {event.start_mark.line + 1}",
            )
        return super().compose_node(parent, index)


# LibYAML's parser, when PyYAML was built with it (the wheels are), is about ten times
# faster. Its composer runs in C, out of reach of compose_node above, so it only reads
# documents without a "*", which every alias needs; the rest go to _StringLoader.
_FastLoader = None
if getattr(yaml, "__with_libyaml__", False):

    class _FastLoader(_NoDuplicates, yaml.CSafeLoader):  # type: ignore[no-redef]
        """_StringLoader's rules on LibYAML's parser, for documents with no alias."""


# No implicit resolvers at all: every plain scalar is a str. Quoted and plain
# scalars are then treated alike, and our pydantic schema decides the type.
for _loader in (_StringLoader, _FastLoader):
    if _loader is not None:
        _loader.yaml_implicit_resolvers = {}


_STR, _MAP, _SEQ = "tag:yaml.org,2002:str", "tag:yaml.org,2002:map", "tag:yaml.org,2002:seq"


class _Unusual(Exception):
    """A node with a tag or key that only the full constructor knows what to do with."""


def _plain(node: Any) -> Any:
    """What the constructor makes of a node that has only the default tags (every scalar a
    str, as there are no implicit resolvers), without its per-node machinery: the common
    front matter, about four times faster. Anything else raises _Unusual."""
    tag = node.tag
    if tag == _STR and isinstance(node, yaml.ScalarNode):
        return node.value
    if tag == _MAP and isinstance(node, yaml.MappingNode):
        out: dict[str, Any] = {}
        lines: dict[str, int] = {}
        for key_node, value_node in node.value:
            if key_node.tag != _STR or not isinstance(key_node, yaml.ScalarNode):
                raise _Unusual
            key, line = key_node.value, key_node.start_mark.line + 1
            if key in out:  # the message _NoDuplicates gives
                raise InputError(
                    f"key {key!r} appears twice (lines {lines[key]} and {line})",
                    location=f"line {line}",
                )
            lines[key] = line
            out[key] = _plain(value_node)
        return out
    if tag == _SEQ and isinstance(node, yaml.SequenceNode):
        return [_plain(item) for item in node.value]
    raise _Unusual


def _load_fast(text: str) -> Any:
    loader = _FastLoader(text)
    try:
        node = loader.get_single_node()  # LibYAML parses and composes
        if node is None:
            return None
        try:
            return _plain(node)
        except _Unusual:
            return loader.construct_document(node)
    finally:
        loader.dispose()


def load_yaml(text: str, line_offset: int = 0) -> Any:
    """Load one YAML document safely; errors name the line (shifted by ``line_offset``)."""
    try:
        if _FastLoader is not None and "*" not in text:
            return _load_fast(text)
        return yaml.load(text, Loader=_StringLoader)
    except InputError as exc:
        if exc.location and exc.location.startswith("line ") and line_offset:
            exc.location = f"line {int(exc.location[5:]) + line_offset}"
        raise
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        where = f"line {mark.line + 1 + line_offset}" if mark is not None else None
        problem = getattr(exc, "problem", None) or str(exc)
        advice = _yaml_advice(exc, text, line_offset)
        message = f"{advice} (the YAML reader says: {problem})" if advice else problem
        raise InputError(f"invalid YAML: {message}", location=where) from exc


def _yaml_advice(exc: yaml.YAMLError, text: str, line_offset: int) -> str | None:
    """What a chemist should change, for the YAML mistakes notebooks show most."""
    problem = getattr(exc, "problem", None) or ""
    context = getattr(exc, "context", None) or ""
    mark, start = getattr(exc, "problem_mark", None), getattr(exc, "context_mark", None)
    lines = text.splitlines()
    line = lines[mark.line].strip() if mark is not None and mark.line < len(lines) else ""
    opened = f"line {start.line + 1 + line_offset}" if start is not None else "above"
    key, _, value = line.partition(":")
    if "mapping values are not allowed" in problem and value.strip():
        quoted = value.strip().replace('"', '\\"')
        return f'a colon inside a value needs quotes: {key.strip()}: "{quoted}"'
    if "expected ',' or ']'" in problem or "expected ',' or '}'" in problem:
        bracket = "[" if "]" in problem else "{"
        return (f'a "{bracket}" opened on {opened} is not closed: close it, or put a value that '
                f'starts with "{bracket}" in quotes')  # fmt: skip
    if "nesting depth" in problem:
        return "lists and mappings nest too deep here; an entry needs a few levels"
    if "tab character" in problem:
        return "a tab is used for indentation; indent with spaces"
    if "quoted scalar" in context:
        return f"a quote opened on {opened} is not closed"
    if "cannot start any token" in problem and value.strip()[:1] in {"@", "`", "%"}:
        return f'a value cannot start with "{value.strip()[0]}" unless it is in quotes: ' \
               f'{key.strip()}: "{value.strip()}"'  # fmt: skip
    if any(p in problem for p in ("expected '-' indicator", "expected key", "expected ':'")):
        return ("this line does not line up with the lines around it, or lacks 'key: value': "
                "indent it with as many spaces as its neighbours, and put a value that runs "
                "onto the next line in quotes")  # fmt: skip
    return None


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
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
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
            fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
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
