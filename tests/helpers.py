"""Helpers shared by the tests (imported as a plain module: pytest puts tests/ on sys.path)."""

from __future__ import annotations

import textwrap


def entry_md(front: str, body: str = "") -> str:
    """A Markdown entry from a front-matter block and a body."""
    return f"---\n{textwrap.dedent(front).strip()}\n---\n{textwrap.dedent(body)}"
