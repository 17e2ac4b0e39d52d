"""Shared fixtures: a notebook folder in tmp_path and an end-to-end scan helper."""

from __future__ import annotations

import json
import textwrap
from pathlib import Path

import pytest
from hypothesis import settings

from capture.notebook import Notebook
from capture.scan import ScanReport, scan

TESTS = Path(__file__).resolve().parent
LAST = "test_every_hook_is_called_with_an_implementation_during_the_suite"

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


def pytest_configure(config):
    """Every process the suite starts (the watcher, scan workers, the installed command)
    logs the hooks it calls (MASSTRAIL_HOOK_LOG); test_meta.py reads the log at the end."""
    import os
    import tempfile

    fd, log = tempfile.mkstemp(prefix="masstrail-hooks-", suffix=".log")
    os.close(fd)
    os.environ["MASSTRAIL_HOOK_LOG"] = log


def pytest_unconfigure(config):
    import contextlib
    import os

    with contextlib.suppress(KeyError, OSError):
        os.unlink(os.environ.pop("MASSTRAIL_HOOK_LOG"))


@pytest.hookimpl(trylast=True)  # after -k and --deselect have dropped their items
def pytest_collection_modifyitems(session, config, items):
    """The hook-call check runs last, and only counts when the whole suite runs."""
    last = [item for item in items if item.name == LAST]
    for item in last:
        items.remove(item)
        items.append(item)
    files = {Path(str(item.fspath)).name for item in items}
    config.stash[WHOLE_SUITE] = (
        files == {p.name for p in TESTS.glob("test_*.py")}
        and not config.option.keyword
        and not config.option.markexpr
        and not config.getoption("deselect")
        and not config.getoption("lf")
    )


WHOLE_SUITE = pytest.StashKey[bool]()


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
