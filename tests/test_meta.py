"""Meta-tests: every hook is documented, in the guide and really called; every command has
help and is documented; the structure keeps its rules (imports, sizes, registration)."""

from __future__ import annotations

import ast
import inspect
import os
import re
from pathlib import Path

import click
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
                          "masstrail_merge_materials", "masstrail_place_readings",
                          "masstrail_assign_mass", "masstrail_product", "masstrail_find_gaps",
                          "masstrail_compute_metrics", "masstrail_write_result"}  # fmt: skip


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


def _guide_hook_table() -> dict[str, tuple[list[str], str]]:
    """The contributor guide's hook table: {hook: (arguments, kind)}."""
    rows = {}
    for line in (ROOT / "DEVELOPERS.md").read_text().splitlines():
        m = re.match(r"\| `(masstrail_\w+)\(([^)]*)\)` \| ([^|]+) \|", line)
        if m:
            assert m.group(1) not in rows, f"{m.group(1)} is in the table twice"
            args = [a.strip() for a in m.group(2).split(",") if a.strip()]
            rows[m.group(1)] = (args, m.group(3).strip())
    return rows


def test_the_guide_s_hook_table_matches_the_specs():
    """Every hook is a row of the contributor guide's table, with the spec's arguments in the
    spec's order and its kind (first result or collect)."""
    table = _guide_hook_table()
    assert sorted(table) == sorted(HOOKS)
    for name, (args, kind) in table.items():
        fn = getattr(hookspecs, name)
        assert args == list(inspect.signature(fn).parameters), name
        first = fn.masstrail_spec.get("firstresult", False)
        assert kind == ("first result" if first else "collect"), name


def test_every_hook_is_called_with_an_implementation_during_the_suite(request):
    """pluggy's call monitoring (MASSTRAIL_HOOK_LOG, set by conftest.py) logs each hook the
    suite's processes call with at least one implementation: in-process, in the watcher,
    in scan workers and in the installed command. A hook nothing calls is dead contract.
    Runs last (conftest.py), and only means something when the whole suite ran."""
    from conftest import WHOLE_SUITE

    if not request.config.stash.get(WHOLE_SUITE, False):
        pytest.skip("run the whole suite (no -k, --deselect or file selection) for this check")
    called = set(Path(os.environ["MASSTRAIL_HOOK_LOG"]).read_text().split())
    assert set(HOOKS) - called == set()


# ---------------------------------------------------------------------- the structure
CORE = ROOT / "capture"
PLUGINS = ROOT / "plugins"


def _modules(folder: Path, package: str) -> dict[str, Path]:
    out = {}
    for path in sorted(folder.rglob("*.py")):
        parts = list(path.relative_to(folder).with_suffix("").parts)
        if parts[-1] == "__init__":
            parts = parts[:-1]
        out[".".join([package, *parts])] = path
    return out


MODULES = {**_modules(CORE, "capture"), **_modules(PLUGINS, "masstrail_plugins")}


def _imports(path: Path, top_level_only: bool = False) -> list[tuple[str, list[str]]]:
    """(module, names) of each import in a file; ``top_level_only``: not those inside
    functions (lazy imports, which cannot make a cycle at import time)."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    nodes = tree.body if top_level_only else ast.walk(tree)
    found = []
    for node in nodes:
        if isinstance(node, ast.If) and top_level_only:  # if TYPE_CHECKING: never at run time
            continue
        if isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            names = [a.name for a in node.names]
            subs = [f"{node.module}.{n}" for n in names if f"{node.module}.{n}" in MODULES]
            found += [(sub, []) for sub in subs] or [(node.module, names)]
        elif isinstance(node, ast.Import):
            found += [(a.name, []) for a in node.names]
    return found


def test_the_core_never_imports_a_plugin_and_the_library_never_the_command_line():
    for name, path in MODULES.items():
        if not name.startswith("capture"):
            continue
        for module, _ in _imports(path):
            assert not module.startswith("masstrail_plugins"), (name, module)
            if not name.startswith("capture.cli"):
                assert not module.startswith("capture.cli"), (name, module)


def test_no_plugin_imports_another_plugin_s_private_names():
    for name, path in MODULES.items():
        if not name.startswith("masstrail_plugins"):
            continue
        for module, names in _imports(path):
            if module.startswith(("masstrail_plugins", "capture")) and module != name:
                assert not [n for n in names if n.startswith("_")], (name, module, names)


def test_no_import_cycles_at_import_time():
    graph = {name: {m for m, _ in _imports(path, top_level_only=True) if m in MODULES}
             for name, path in MODULES.items()}  # fmt: skip

    def visit(name: str, trail: tuple[str, ...]) -> None:
        assert name not in trail, " → ".join((*trail, name))
        for nxt in graph[name]:
            if nxt not in done:
                visit(nxt, (*trail, name))
        done.add(name)

    done: set[str] = set()
    for name in graph:
        visit(name, ())


def test_no_module_over_600_lines_and_no_function_over_80():
    for name, path in MODULES.items():
        text = path.read_text(encoding="utf-8")
        assert text.count("\n") <= 600, name
        for node in ast.walk(ast.parse(text)):
            if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
                length = node.end_lineno - node.lineno + 1
                assert length <= 80, f"{name}.{node.name}: {length} lines"


def test_every_default_plugin_is_registered_through_the_entry_point_group():
    import tomllib

    from capture.plugin_manager import DEFAULT_PLUGINS

    points = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]["entry-points"]
    assert sorted(points["masstrail"]) == sorted(DEFAULT_PLUGINS)
    for target in points["masstrail"].values():
        assert target in MODULES, target


@pytest.mark.parametrize("command", sorted(cli.list_commands(click.Context(cli))))
def test_every_command_has_help_and_is_documented(command):
    assert (cli.commands[command].help or "").strip()
    docs = (ROOT / "README.md").read_text() + (ROOT / "DEVELOPERS.md").read_text()
    assert f"masstrail {command}" in docs


def test_each_command_is_looked_up_in_the_module_that_defines_it():
    """capture.cli imports a command's module when the command is asked for, by its table."""
    import importlib
    import pkgutil

    import capture.cli as package
    from capture.cli.common import COMMAND_MODULES

    for info in pkgutil.iter_modules(package.__path__):
        importlib.import_module(f"capture.cli.{info.name}")
    defined = {name: command.callback.__module__.rsplit(".", 1)[1]
               for name, command in cli.commands.items()}  # fmt: skip
    assert defined == COMMAND_MODULES


def test_committed_schema_equals_generated():
    assert SCHEMA_FILE.read_text(encoding="utf-8") == result_schema_text(), (
        "regenerate with: masstrail schema > capture/result.schema.json"
    )
