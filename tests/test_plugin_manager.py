"""The plugin manager: built-ins through entry points, outside plugins, blocking, validation."""

from __future__ import annotations

import subprocess
import sys
import textwrap

import pluggy
import pytest

from capture import hookspecs
from capture.hookspecs import hookimpl
from capture.notebook import Notebook
from capture.plugin_manager import DEFAULT_PLUGINS, describe_plugins, get_plugin_manager
from capture.scan import scan

from helpers import entry_md


def test_builtins_come_through_the_entry_point_group():
    pm = get_plugin_manager()
    rows = {row["name"]: row for row in describe_plugins(pm)}
    assert set(DEFAULT_PLUGINS) <= set(rows)
    assert all(
        rows[n]["builtin"] and rows[n]["distribution"].startswith("masstrail")
        for n in DEFAULT_PLUGINS
    )
    assert "masstrail_read_entry" in rows["readers"]["hooks"]


def test_a_misspelt_hook_fails_at_registration():
    pm = pluggy.PluginManager("masstrail")
    pm.add_hookspecs(hookspecs)

    class Misspelt:
        @hookimpl
        def masstrail_find_gap(self, entry):  # the spec is masstrail_find_gaps
            return []

    pm.register(Misspelt())
    with pytest.raises(pluggy.PluginValidationError):
        pm.check_pending()


def test_a_hook_with_a_wrong_argument_is_refused():
    pm = pluggy.PluginManager("masstrail")
    pm.add_hookspecs(hookspecs)

    class WrongArg:
        @hookimpl
        def masstrail_find_gaps(self, recipe):
            return []

    with pytest.raises(pluggy.PluginValidationError):
        pm.register(WrongArg())


def test_blocking_a_builtin_by_name(notebook):
    notebook.write("a.md", entry_md("product: {name: p, mass: 1 g}"))
    pm = get_plugin_manager(block=["sidecar"])
    scan(Notebook.open(notebook.root, pm=pm))
    assert not (notebook.root / "a.waste.json").exists()


def test_a_lab_plugin_wins_over_the_builtin_data(notebook):
    notebook.write(
        "a.md",
        entry_md("""
        product: {name: p, mass: 1 g}
        materials: [{name: house solvent K-7, amount: 10 mL}]
        """),
    )
    from capture.models import MaterialInfo

    class HouseMaterials:
        @hookimpl
        def masstrail_resolve_material(self, name):
            if name == "house solvent K-7":
                return MaterialInfo(
                    name=name, density_g_ml=0.8, category="solvent", source="house QC"
                )
            return None

    nb = Notebook.open(notebook.root)
    nb.pm.register(HouseMaterials(), name="house")
    (result,) = scan(nb).results
    assert result.materials[0].mass_g == pytest.approx(8.0)


OUTSIDE_PLUGIN = """
from capture.hookspecs import hookimpl
from capture.models import Gap

@hookimpl
def masstrail_find_gaps(entry):
    if "glovebox" in entry.body:
        return [Gap(kind="glovebox_gloves", item="gloves", severity="minor",
                    message="count the glovebox gloves used")]
    return []
"""


@pytest.fixture
def outside_plugin(tmp_path):
    """A real installed-looking distribution (dist-info with an entry point) on sys.path."""
    site = tmp_path / "site"
    site.mkdir()
    (site / "kestrel_lab_rules.py").write_text(OUTSIDE_PLUGIN)
    dist = site / "kestrel_lab_rules-0.3.dist-info"
    dist.mkdir()
    (dist / "METADATA").write_text("Metadata-Version: 2.1\nName: kestrel-lab-rules\nVersion: 0.3\n")
    (dist / "entry_points.txt").write_text("[masstrail]\nglovebox = kestrel_lab_rules\n")
    sys.path.insert(0, str(site))
    yield site
    sys.path.remove(str(site))
    sys.modules.pop("kestrel_lab_rules", None)


def test_an_outside_plugin_takes_effect(notebook, outside_plugin):
    notebook.write(
        "a.md",
        entry_md(
            "product: {name: p, mass: 1 g}\nmaterials: [{name: A, amount: 3 g}]",
            "Weighed in the glovebox.",
        ),
    )
    (result,) = scan(Notebook.open(notebook.root)).results
    assert [g.kind for g in result.gaps] == ["glovebox_gloves"]
    rows = {r["name"]: r for r in describe_plugins(get_plugin_manager())}
    assert rows["glovebox"]["distribution"] == "kestrel-lab-rules 0.3"
    assert not rows["glovebox"]["builtin"]


def test_masstrail_plugins_lists_the_outside_plugin(outside_plugin):
    """A real process: the installed command sees the plugin through PYTHONPATH."""
    env = {"PYTHONPATH": str(outside_plugin), "PATH": "/usr/bin:/bin", "COLUMNS": "200"}
    out = subprocess.run(
        [sys.executable, "-c", "from capture.cli import main; main()", "plugins", "--json"],
        capture_output=True,
        text=True,
        env=env,
        check=True,
    ).stdout
    assert '"glovebox"' in out and "kestrel-lab-rules 0.3" in out


def test_tracing_prints_hook_calls(notebook, monkeypatch, capsys):
    monkeypatch.setenv("MASSTRAIL_TRACE", "1")
    notebook.write("a.md", entry_md("product: {name: p, mass: 1 g}"))
    scan(Notebook.open(notebook.root))
    assert "masstrail_read_entry" in capsys.readouterr().err


def test_the_block_list_in_the_lab_config(notebook):
    notebook.write("masstrail.toml", textwrap.dedent('[plugins]\nblock = ["text"]\n'))
    notebook.write("a.md", entry_md("product: {name: p, mass: 1 g}", "Washed with water (10 mL)."))
    (result,) = scan(Notebook.open(notebook.root)).results
    assert result.materials == []
