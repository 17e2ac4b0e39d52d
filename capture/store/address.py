"""Where the shared store is and who this notebook is in it.

- The shared store's address comes from ``MASSTRAIL_STORE_URL`` or ``[store] url``; a
  password never comes from ``masstrail.toml`` (PostgreSQL's own ``PGPASSWORD``,
  ``~/.pgpass`` and service files carry it) and is never printed: :func:`shown` masks it.
- Every notebook has a stable id, made once and kept in ``.masstrail/notebook-id``, so two
  notebooks' entries with the same relative path never meet in the shared store.
"""

from __future__ import annotations

import os
import re
import time
import uuid
from pathlib import Path
from urllib.parse import urlsplit, urlunsplit

from capture.paths import STATE_DIR

ENV_URL = "MASSTRAIL_STORE_URL"
ID_FILE = "notebook-id"
_KEY_PASSWORD = re.compile(r"(?:^|\s)password\s*=", re.I)
_QUERY_PASSWORD = re.compile(r"(?:^|&)password=", re.I)


def has_password(url: str) -> bool:
    """True when the address carries a password (``user:secret@``, ``?password=`` or a
    ``password=`` key of a key=value address)."""
    if "://" not in url:
        return bool(_KEY_PASSWORD.search(url))
    parts = urlsplit(url)
    return bool(parts.password) or bool(_QUERY_PASSWORD.search(parts.query))


def shown(url: str) -> str:
    """The address as it may be printed: any password replaced by ``***``."""
    if "://" not in url:
        return re.sub(r"(password\s*=\s*)('[^']*'|\S+)", r"\1***", url, flags=re.I)
    parts = urlsplit(url)
    netloc = parts.netloc
    if parts.password is not None:
        user, _, host = netloc.rpartition("@")
        netloc = f"{user.split(':', 1)[0]}:***@{host}"
    query = re.sub(r"(password=)[^&]*", r"\1***", parts.query, flags=re.I)
    return urlunsplit((parts.scheme, netloc, parts.path, query, parts.fragment))


def store_url(configured: str | None) -> str | None:
    """The shared store's address: the environment's, else the lab config's, else None."""
    return os.environ.get(ENV_URL) or configured or None


def notebook_id(root: Path) -> str:
    """This notebook's id, made on first use (``.masstrail/notebook-id``): created with
    O_EXCL, so two processes starting together agree on one id."""
    path = root / STATE_DIR / ID_FILE
    try:
        text = path.read_text(encoding="ascii").strip()
        if text:
            return text
    except (OSError, UnicodeDecodeError):
        pass
    path.parent.mkdir(parents=True, exist_ok=True)
    new = uuid.uuid4().hex
    try:
        fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o644)
    except FileExistsError:  # made meanwhile by another process: its id wins
        for _ in range(100):
            text = path.read_text(encoding="ascii").strip()
            if text:
                return text
            time.sleep(0.01)
        raise
    with os.fdopen(fd, "w", encoding="ascii") as fh:
        fh.write(new + "\n")
        fh.flush()
        os.fsync(fh.fileno())
    return new


def notebook_name(root: Path, configured: str | None) -> str:
    """The notebook's name in the shared store: ``[store] notebook``, else its folder's."""
    return configured or root.resolve().name
