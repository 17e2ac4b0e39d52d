"""Shared fixtures: a notebook folder in tmp_path and an end-to-end scan helper."""

from __future__ import annotations

import json
import textwrap
from pathlib import Path

import pytest
from hypothesis import settings

from capture.notebook import Notebook
from capture.scan import ScanReport, scan

settings.register_profile("ci", derandomize=True, max_examples=50, deadline=None, database=None)
settings.register_profile("long", max_examples=2000, deadline=None)
settings.load_profile("ci")

EXAMPLES = Path(__file__).resolve().parent.parent / "example_entries"


class NotebookDir:
    """A notebook folder on disk that tests fill with entries."""

    def __init__(self, root: Path) -> None:
        self.root = root

    def write(self, rel: str, text: str | bytes) -> Path:
        path = self.root / rel
        path.parent.mkdir(parents=True, exist_ok=True)
        if isinstance(text, bytes):
            path.write_bytes(text)
        else:
            path.write_text(textwrap.dedent(text).lstrip("\n"), encoding="utf-8")
        return path

    def scan(self) -> ScanReport:
        return scan(Notebook.open(self.root))

    def sidecar(self, rel_entry: str) -> dict:
        p = self.root / rel_entry
        stem = p.name[: -len(p.suffix)]
        return json.loads((p.parent / f"{stem}.waste.json").read_text(encoding="utf-8"))


@pytest.fixture(autouse=True, scope="session")
def _own_cache_folder(tmp_path_factory):
    """The chemicals name cache (and anything else under XDG_CACHE_HOME) goes to a folder of
    this test run, never to the user's ~/.cache; subprocesses inherit it."""
    import os

    os.environ["XDG_CACHE_HOME"] = str(tmp_path_factory.mktemp("cache"))


@pytest.fixture
def notebook(tmp_path: Path) -> NotebookDir:
    root = tmp_path / "notebook"
    root.mkdir()
    return NotebookDir(root)
