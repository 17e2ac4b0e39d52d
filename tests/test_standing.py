"""``masstrail show`` answers from a current sidecar (capture.standing), and computes the entry
whenever anything behind that sidecar changed: the entry, a balance log it names, the lab
configuration, the blocked plugins, the installed packages."""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
import time
from pathlib import Path

import pytest
from click.testing import CliRunner

from capture import standing
from capture.cli import cli
from capture.notebook import Notebook
from capture.scan import scan

from helpers import entry_md

EXAMPLES = Path(__file__).resolve().parent.parent / "example_entries"
FROM_SIDECAR = "which is current."
COMPUTED = "Computed now (its sidecar could not be confirmed current); nothing written."
FRESH = "Computed now; nothing written."


def show(path: Path, *options: str, env: dict | None = None) -> str:
    # the suite logs hook calls (conftest.py); tracing makes show compute, so it is off here
    env = {"MASSTRAIL_HOOK_LOG": None, **(env or {})}
    res = CliRunner().invoke(
        cli, ["show", *options, str(path)], env={"COLUMNS": "200", **(env or {})}
    )
    assert res.exit_code == 0, res.output
    return res.output


@pytest.fixture
def settled(monkeypatch):
    """The folders on the import path of this test process may have changed in the last 2 s
    (pytest writes there as it starts); these tests are about what the stamp covers, so the
    time-stamp rule is tested on its own below."""
    monkeypatch.setattr(standing, "RACY_NS", 0)


def test_show_answers_from_a_current_sidecar_exactly_as_it_would_compute(tmp_path, settled):
    root = tmp_path / "examples"
    shutil.copytree(EXAMPLES, root)
    nb = Notebook.open(root)
    assert nb.stamp is not None
    scan(nb)
    entries = nb.entry_files()
    assert len(entries) >= 10
    for path in entries:
        quick, computed = show(path), show(path, "--recompute")
        assert quick.splitlines()[-1].endswith(FROM_SIDECAR), path
        assert computed.splitlines()[-1] == FRESH
        assert quick.splitlines()[:-1] == computed.splitlines()[:-1], path
        sidecar = path.with_name(path.name.rsplit(".", 1)[0] + ".waste.json")
        assert show(path, "--json") == sidecar.read_text(encoding="utf-8")


BALANCED = entry_md("""
    title: stamped
    product: {name: p, mass: 1.00 g}
    materials: [{name: A, amount: 3.00 g}]
    balance_log: bal.csv
    """)


def _scanned(notebook) -> Path:
    notebook.write("masstrail.toml", '[densities]\n"toluene" = 0.87\n')
    notebook.write("bal.csv", "timestamp,label,mass_g\n2026-03-01T10:00:00,A,3.00\n")
    path = notebook.write("e.md", BALANCED)
    scan(Notebook.open(notebook.root))
    assert show(path).splitlines()[-1].endswith(FROM_SIDECAR)
    return path


def test_a_changed_entry_is_computed_not_shown_from_its_old_sidecar(notebook, settled):
    path = _scanned(notebook)
    path.write_text(BALANCED.replace("1.00 g}", "1.50 g}"), encoding="utf-8")
    out = show(path)
    assert out.splitlines()[-1] == COMPUTED
    assert "E-factor 1 " in out  # (3.00 − 1.50) / 1.50; the old sidecar says 2


@pytest.mark.parametrize("change", ["balance log", "configuration", "blocked plugin", "package"])
def test_anything_behind_the_sidecar_changed_means_computing(
    notebook, settled, monkeypatch, change, tmp_path
):
    site = tmp_path / "site-packages"  # a folder on the import path, as a venv's is
    site.mkdir()
    monkeypatch.syspath_prepend(str(site))
    path = _scanned(notebook)
    env = {}
    if change == "balance log":
        notebook.write("bal.csv", "timestamp,label,mass_g\n2026-03-01T10:00:00,A,3.10\n")
    elif change == "configuration":
        notebook.write("masstrail.toml", '[densities]\n"toluene" = 0.86\n')
    elif change == "blocked plugin":
        env = {"MASSTRAIL_BLOCK": "names"}
    else:  # a package installed there: its folder appears
        (site / "newpkg").mkdir()
    assert show(path, env=env).splitlines()[-1] == COMPUTED


def test_a_sidecar_copied_beside_another_entry_is_not_its_result(notebook, settled):
    path = _scanned(notebook)
    twin = notebook.write("twin.md", path.read_text(encoding="utf-8"))
    shutil.copy(path.with_name("e.waste.json"), twin.with_name("twin.waste.json"))
    assert show(twin).splitlines()[-1] == COMPUTED


def test_no_stamp_while_a_folder_on_the_import_path_just_changed(tmp_path, monkeypatch):
    monkeypatch.setattr(standing, "RACY_NS", 300_000_000)  # 0.3 s, not 2 s: a faster test
    fresh = tmp_path / "just-installed"
    fresh.mkdir()
    monkeypatch.syspath_prepend(str(fresh))
    assert standing.setup_stamp(tmp_path) is None  # changed now: a second change could hide
    time.sleep(0.35)
    first = standing.setup_stamp(tmp_path)
    assert first is not None and first == standing.setup_stamp(tmp_path)
    (fresh / "pkg").mkdir()
    time.sleep(0.35)
    assert standing.setup_stamp(tmp_path) not in {None, first}


def test_the_scan_records_no_standing_without_a_stamp(notebook, monkeypatch):
    notebook.write("e.md", BALANCED)
    assert show(notebook.root / "e.md").splitlines()[-1] == FRESH  # no sidecar yet
    nb = Notebook.open(notebook.root)
    nb.stamp = None
    scan(nb)
    record = json.loads((notebook.root / ".masstrail/basis.json").read_text(encoding="utf-8"))
    assert record["standing"] is None and record["parts"]["masstrail"]
    assert show(notebook.root / "e.md").splitlines()[-1] == COMPUTED


def test_as_a_real_process_show_of_a_current_sidecar_loads_no_model_and_no_plugin(tmp_path):
    """`masstrail scan` then `masstrail show`, as a chemist runs them: the show imports neither
    pydantic nor a plugin module (most of a computing process's start-up)."""
    root = tmp_path / "examples"
    shutil.copytree(EXAMPLES / "fenwick-group", root)
    command = Path(sys.executable).with_name("masstrail")
    env = {**os.environ, "COLUMNS": "200"}
    env.pop("MASSTRAIL_BLOCK", None)
    env.pop("MASSTRAIL_HOOK_LOG", None)
    subprocess.run([command, "scan", root], check=True, capture_output=True, env=env)
    entry = sorted(root.glob("*.md"))[0]
    res = subprocess.run([command, "show", entry], capture_output=True, text=True,
                         env={**env, "PYTHONPROFILEIMPORTTIME": "1"})  # fmt: skip
    assert res.returncode == 0, res.stderr
    assert res.stdout.splitlines()[-1].endswith(FROM_SIDECAR)
    imported = {line.split("|")[-1].strip() for line in res.stderr.splitlines() if "|" in line}
    assert "capture.standing" in imported
    assert not {m for m in imported if m.startswith(("pydantic", "masstrail_plugins", "pint"))}
