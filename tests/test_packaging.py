"""A plain install works: the wheel built from the checkout holds every module and data file,
and installed into a fresh virtual environment it scans the example notebook.

An editable install (what the tests otherwise run) reads the source folders and so hides a
package the wheel leaves out; this test builds the wheel a user's ``pip install .`` builds.
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
import sysconfig
import venv
import zipfile
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent


def _clean_copy(target: Path) -> Path:
    """The files a clean checkout has (git's tracked files), copied to ``target``."""
    try:
        listed = subprocess.run(["git", "ls-files", "-z"], cwd=ROOT, capture_output=True,
                                check=True).stdout.decode().split("\0")  # fmt: skip
    except (OSError, subprocess.CalledProcessError):
        pytest.skip("not a git checkout: no clean file list to build from")
    for rel in filter(None, listed):
        src = ROOT / rel
        if src.is_file():
            dest = target / rel
            dest.parent.mkdir(parents=True, exist_ok=True)
            shutil.copy2(src, dest)
    return target


@pytest.fixture(scope="module")
def wheel(tmp_path_factory) -> Path:
    src = _clean_copy(tmp_path_factory.mktemp("checkout"))
    out = tmp_path_factory.mktemp("wheel")
    built = subprocess.run(
        [sys.executable, "-m", "pip", "wheel", "--no-deps", "--quiet", "-w", str(out), str(src)],
        capture_output=True, text=True, timeout=600,
    )  # fmt: skip
    assert built.returncode == 0, built.stderr[-3000:]
    (whl,) = out.glob("masstrail-*.whl")
    return whl


def test_the_wheel_holds_every_module_and_data_file(wheel):
    names = set(zipfile.ZipFile(wheel).namelist())
    expected = {p.relative_to(ROOT).as_posix() for p in (ROOT / "capture").rglob("*.py")}
    expected |= {"masstrail_plugins/" + p.relative_to(ROOT / "plugins").as_posix()
                 for p in (ROOT / "plugins").rglob("*") if p.is_file() and p.suffix in
                 {".py", ".toml", ".sqlite"}}  # fmt: skip
    expected |= {"capture/result.schema.json"}
    expected |= {f"capture/templates/{p.name}" for p in (ROOT / "capture/templates").glob("*.j2")}
    assert not expected - names, sorted(expected - names)
    assert "masstrail_plugins/gaps/__init__.py" in names  # left out by the hand-made list once


def test_a_wheel_installed_in_a_fresh_environment_scans_the_examples(wheel, tmp_path):
    env_dir = tmp_path / "venv"
    venv.EnvBuilder(with_pip=True).create(env_dir)
    bindir = "Scripts" if os.name == "nt" else "bin"
    python = env_dir / bindir / "python"
    installed = subprocess.run([python, "-m", "pip", "install", "--quiet", "--no-deps", "--no-index",
                                str(wheel)], capture_output=True, text=True, timeout=300)  # fmt: skip
    assert installed.returncode == 0, installed.stderr[-3000:]
    # the dependencies come from this test run's environment, as plain folders on the path (not
    # as a site folder, so that the editable masstrail installed there is not imported)
    site = subprocess.run([python, "-c", "import sysconfig; print(sysconfig.get_path('purelib'))"],
                          capture_output=True, text=True, check=True).stdout.strip()  # fmt: skip
    Path(site, "zz-test-dependencies.pth").write_text(sysconfig.get_path("purelib") + "\n")
    notebook = shutil.copytree(ROOT / "example_entries", tmp_path / "notebook",
                               ignore=shutil.ignore_patterns("*.waste.*", ".masstrail"))  # fmt: skip
    env = {**os.environ, "MASSTRAIL_BLOCK": ""}
    where = subprocess.run([python, "-c", "import capture, masstrail_plugins.gaps as g; "
                            "print(capture.__file__); print(g.__file__)"], cwd=tmp_path,
                           capture_output=True, text=True, env=env)  # fmt: skip
    assert where.returncode == 0, where.stderr
    assert all(line.startswith(site) for line in where.stdout.split()), where.stdout
    masstrail = env_dir / bindir / "masstrail"
    listed = subprocess.run([masstrail, "plugins", "--json"], cwd=tmp_path, capture_output=True,
                            text=True, env=env)  # fmt: skip
    assert listed.returncode == 0, listed.stderr
    from capture.plugin_manager import DEFAULT_PLUGINS

    assert {p["name"] for p in json.loads(listed.stdout) if p["builtin"]} == set(DEFAULT_PLUGINS)
    scanned = subprocess.run([masstrail, "scan", str(notebook)], cwd=tmp_path,
                             capture_output=True, text=True, env=env)  # fmt: skip
    assert scanned.returncode == 0, scanned.stdout + scanned.stderr
    assert "10 entries, 20 result file(s) written, 0 could not be read" in scanned.stdout
    side = json.loads(
        (notebook / "fenwick-group" / "FW-0412-amide-coupling.waste.json").read_text()
    )
    assert side["status"] == "ok" and side["metrics"]["e_factor"] is not None
