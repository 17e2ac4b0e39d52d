"""Which files are entries (one rule for the scan and the watcher), and output names."""

from __future__ import annotations

import pytest
from hypothesis import given
from hypothesis import strategies as st

from capture.notebook import Notebook

from helpers import GOOD


def test_outputs_temp_files_and_hidden_folders_are_not_entries(notebook):
    notebook.write("a.md", GOOD)
    for name in [".a.md.swp", "a.md~", ".#a.md", ".~lock.a.md#", "a.md.tmp", ".masstrail/x.md",
                 ".git/y.md", "a.waste.md"]:  # fmt: skip
        notebook.write(name, GOOD)
    assert [p.name for p in Notebook.open(notebook.root).entry_files()] == ["a.md"]


def test_ignore_globs_skip_files_and_folders(notebook):
    notebook.write("masstrail.toml", '[scan]\nignore = ["templates/**", "*.draft.md", "old/*"]\n')
    for rel in ("a.md", "b.draft.md", "templates/t.md", "templates/deep/u.md", "old/c.md",
                "sub/d.draft.md", "sub/e.md", "templates.md"):  # fmt: skip
        notebook.write(rel, GOOD)
    found = [
        Notebook.open(notebook.root).relpath(p) for p in Notebook.open(notebook.root).entry_files()
    ]
    assert found == ["a.md", "templates.md", "sub/e.md"]


_NAME_CHARS = st.text(alphabet="ab.~#_-*/?[]swpg34139 ", max_size=14)


@given(_NAME_CHARS, st.lists(st.sampled_from(["*.md", "a/**", "*~", "[ab]*", "?.md", "b/*"]),
                             max_size=3))  # fmt: skip
def test_temp_and_ignore_matching_agree_with_fnmatch(name, patterns):
    """The combined regular expressions give what the standard library's fnmatchcase gives,
    one pattern at a time (Python's fnmatch is the reference)."""
    import fnmatch

    from capture.paths import _TEMP_PATTERNS, is_ignored, is_temp_file

    assert is_temp_file(name) == any(fnmatch.fnmatchcase(name, p) for p in _TEMP_PATTERNS)
    expected = any(
        fnmatch.fnmatchcase(name, p) or (p.endswith("/**") and (name + "/").startswith(p[:-2]))
        for p in patterns
    )
    assert is_ignored(name, patterns) == expected


@pytest.mark.parametrize("name", ["a/b.md", "a/.md", "a/x.", "a/x.tar.md", "y.ipynb", "a/b"])
def test_the_string_sidecar_name_follows_pathlib(name):
    """The scan's string form and the writers' pathlib form name the same sidecar (the
    stem follows pathlib's suffix rule, the reference)."""
    from pathlib import Path

    from capture.paths import sidecar_name, sidecar_path

    assert sidecar_name(name) == str(sidecar_path(Path(name)))
