"""Meta-tests: every hook is documented and tested; every command has help and is documented."""

from __future__ import annotations

import inspect
from pathlib import Path

import pytest

from capture import hookspecs
from capture.cli import cli
from capture.schema import SCHEMA_FILE, result_schema_text

ROOT = Path(__file__).resolve().parent.parent
HOOKS = [
    name
    for name, fn in inspect.getmembers(hookspecs, inspect.isfunction)
    if name.startswith("masstrail_")
]


def test_there_are_hooks_for_every_stage():
    assert set(HOOKS) >= {"masstrail_read_entry", "masstrail_extract_amounts", "masstrail_resolve_material",
                          "masstrail_assign_mass", "masstrail_find_gaps", "masstrail_compute_metrics",
                          "masstrail_write_result"}  # fmt: skip


@pytest.mark.parametrize("name", HOOKS)
def test_every_hook_spec_is_documented(name):
    fn = getattr(hookspecs, name)
    doc = inspect.getdoc(fn) or ""
    assert doc.splitlines()[0].endswith("."), "a one-line summary"
    assert "Called" in doc, "when it is called"
    for arg in inspect.signature(fn).parameters:
        assert f":param {arg}:" in doc, arg
    assert ":returns:" in doc
    firstresult = fn.masstrail_spec.get("firstresult", False)
    assert ("Stops at first non-None result." in doc) == firstresult


@pytest.mark.parametrize("name", HOOKS)
def test_every_hook_is_documented_for_plugin_authors(name):
    assert name in (ROOT / "DEVELOPERS.md").read_text()


@pytest.mark.parametrize("name", HOOKS)
def test_every_hook_is_exercised_by_a_test(name):
    """Each hook name appears in a test file other than this one (implemented or called)."""
    here = Path(__file__).name
    texts = [p.read_text() for p in Path(__file__).parent.glob("test_*.py") if p.name != here]
    implemented_by_test = any(name in t for t in texts)
    builtin_impl = {
        "masstrail_entry_suffixes": "test_outputs_temp_files_and_hidden_folders_are_not_entries",
        "masstrail_read_entry": "test_markdown_front_matter_and_defaults",
        "masstrail_extract_amounts": "test_bracketed_amounts",
        "masstrail_assign_mass": "test_volume_times_density_names_the_constant_and_its_source",
        "masstrail_compute_metrics": "test_e_factor_2_means_twice_as_much_waste_as_product",
        "masstrail_write_result": "test_example_notebook_end_to_end",
    }
    assert implemented_by_test or any(builtin_impl.get(name, "\0") in t for t in texts), name


@pytest.mark.parametrize("command", sorted(cli.commands))
def test_every_command_has_help_and_is_documented(command):
    assert (cli.commands[command].help or "").strip()
    docs = (ROOT / "README.md").read_text() + (ROOT / "DEVELOPERS.md").read_text()
    assert f"masstrail {command}" in docs


def test_committed_schema_equals_generated():
    assert SCHEMA_FILE.read_text(encoding="utf-8") == result_schema_text(), (
        "regenerate with: masstrail schema > capture/result.schema.json"
    )
