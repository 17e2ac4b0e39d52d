"""The scan: name clashes, and parallel workers that write exactly what one process writes."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from dataclasses import asdict

import pytest

from capture.notebook import Notebook
from capture.scan import scan

from conftest import EXAMPLES
from helpers import GOOD, entry_md


def test_same_stem_is_an_error_for_both_never_an_overwrite(notebook):
    notebook.write("x/run.md", GOOD)
    notebook.write("x/run.yaml", "title: y\n")
    report = notebook.scan()
    assert [r.status for r in report.results] == ["error", "error"]
    side = notebook.sidecar("x/run.md")
    assert "run.md, run.yaml" in side["error"]["message"]


def test_a_parallel_scan_writes_exactly_what_a_serial_scan_writes(tmp_path):
    """Two worker processes compute and write (sidecars, cards and store), a share each at a
    time. Sidecars, cards and the store's current tables must be the same as a serial
    scan's, byte for byte and row for row."""
    import shutil

    from capture.store import connect, current_tables

    def copy(name):
        root = tmp_path / name
        shutil.copytree(EXAMPLES, root, ignore=shutil.ignore_patterns("*.waste.*", ".masstrail"))
        entries = [p for p in root.rglob("*") if p.suffix in {".md", ".yaml", ".json", ".ipynb"}
                   and "templates" not in p.parts]  # fmt: skip
        for i in range(8):  # 90 entries: enough for the workers to be used
            for p in entries:
                shutil.copy(p, p.with_name(f"{p.stem}-copy{i}{p.suffix}"))
        return root

    serial, parallel = copy("serial"), copy("parallel")
    a = scan(Notebook.open(serial), keep=False, jobs=1)
    b = scan(Notebook.open(parallel), keep=False, jobs=2)
    assert len(a.summaries) == 90
    # the stat is kept only of a file older than 2 s when read (capture.fingerprint.RACY_NS)
    assert [asdict(s) | {"stat": None} for s in a.summaries] == [
        asdict(s) | {"stat": None} for s in b.summaries
    ]
    outputs = sorted(p.relative_to(serial) for p in serial.rglob("*.waste.*"))
    assert len(outputs) == 180
    assert outputs == sorted(p.relative_to(parallel) for p in parallel.rglob("*.waste.*"))
    for rel in outputs:
        assert (serial / rel).read_bytes() == (parallel / rel).read_bytes(), rel
    tables = [current_tables(connect(r / ".masstrail" / "records.db")) for r in (serial, parallel)]
    assert tables[0] == tables[1] and len(tables[0]["entries"]) == 90


# an entry weighed by moles: its mass needs a molar mass that, for this name, only the optional
# chemicals name database knows (not masstrail's curated data nor its compound table)
BY_MOLES = entry_md("""
    title: moles only
    product: {name: the ether, mass: 1.10 g}
    materials:
      - {name: "2,4-dichloropyridine", amount: 10.0 mmol, role: limiting reagent}
      - {name: toluene, amount: 10 mL, role: solvent}
    """)


def test_a_changed_basis_is_named_and_the_entries_whose_figures_changed_are_listed(
    notebook, monkeypatch
):
    """Installing an extra (here: unblocking the chemicals name database) recomputes every
    entry; the scan names the cause and lists the entries whose figures changed."""
    from capture.fingerprint import read_basis

    notebook.write("a/moles.md", BY_MOLES)
    notebook.write("a/good.md", GOOD)
    monkeypatch.setenv("MASSTRAIL_BLOCK", "names")
    first = scan(Notebook.open(notebook.root), reuse=True)
    assert first.basis_changes == [] and first.basis_note() is None  # nothing to compare yet
    assert "names" not in read_basis(notebook.root)[0]["the plugins"].split(", ")
    assert notebook.sidecar("a/moles.md")["materials"][0]["mass_g"] is None  # 10 mmol, no M
    again = scan(Notebook.open(notebook.root), reuse=True)
    assert again.recomputed == 0 and again.basis_note() is None

    monkeypatch.delenv("MASSTRAIL_BLOCK")
    now = scan(Notebook.open(notebook.root), reuse=True)
    assert now.recomputed == 2
    assert now.basis_changes[0] == "plugins added: names"
    assert now.basis_changes[1].startswith("the chemicals name database (the names extra) ")
    assert now.basis_changes[1].endswith(" is now used")
    assert now.changed == ["a/moles.md"]  # good.md was computed again, to the same figures
    # 2,4-dichloropyridine, C5H3Cl2N: 147.99 g/mol (IUPAC standard atomic weights, by hand)
    assert notebook.sidecar("a/moles.md")["materials"][0]["mass_g"] == pytest.approx(
        1.4799, abs=2e-4
    )
    assert "2 entries were computed again; 1 has different figures" in now.basis_note()
    assert scan(Notebook.open(notebook.root), reuse=True).basis_note() is None


def test_the_scan_command_prints_the_change_and_a_damaged_basis_file_is_not_an_error(notebook):
    """The command line says what changed (on stderr with --json, so the JSON stays clean); a
    basis file that cannot be read only loses the naming of that one change."""
    notebook.write("moles.md", BY_MOLES)
    env = {**os.environ, "MASSTRAIL_BLOCK": "names"}
    cmd = [sys.executable, "-c", "from capture.cli import main; main()", "scan", str(notebook.root)]
    subprocess.run(cmd, env=env, check=True, capture_output=True)
    env["MASSTRAIL_BLOCK"] = ""
    done = subprocess.run([*cmd, "--json"], env=env, check=True, capture_output=True, text=True)
    assert json.loads(done.stdout)["entry"] == "moles.md"
    assert "plugins added: names" in done.stderr and "1 has different figures" in done.stderr
    (notebook.root / ".masstrail" / "basis.json").write_text("{not json", encoding="utf-8")
    env["MASSTRAIL_BLOCK"] = "names"
    done = subprocess.run(cmd, env=env, capture_output=True, text=True)
    assert done.returncode == 0 and "Since the last scan" not in done.stdout
    assert json.loads((notebook.root / ".masstrail" / "basis.json").read_text())["parts"]


def test_a_changed_allowance_table_recomputes_every_entry_and_is_named(
    notebook, monkeypatch, tmp_path
):
    """The allowances (data/allowances.toml) size the estimates: a new table is a new basis,
    as new material data is, so no result computed with the old one is called current."""
    from masstrail_plugins.gaps import allowances

    notebook.write("a/good.md", GOOD)
    assert scan(Notebook.open(notebook.root), reuse=True).recomputed == 1
    assert scan(Notebook.open(notebook.root), reuse=True).recomputed == 0
    changed = tmp_path / "allowances.toml"
    changed.write_text(allowances.TABLE_FILE.read_text(encoding="utf-8") + "\n# edited\n")
    monkeypatch.setattr(allowances, "TABLE_FILE", changed)
    now = scan(Notebook.open(notebook.root), reuse=True)
    assert now.recomputed == 1
    assert now.basis_changes == ["masstrail's consumable allowances (allowances.toml) changed"]


def test_basis_changes_in_words():
    from capture.fingerprint import basis_changes

    before = {"masstrail": "0.1.0", "the plugins": "a, b", "the compound table": "1d2ca750aaaa",
              "the chemicals name database": "not installed"}  # fmt: skip
    now = {"masstrail": "0.2.0", "the plugins": "b, c", "the compound table": "9b0e41c2bbbb",
           "the chemicals name database": "1.5.2", "a new table": "x1"}  # fmt: skip
    assert basis_changes(before, now) == [
        "masstrail: 0.1.0 → 0.2.0",
        "plugins added: c",
        "plugins removed or blocked: a",
        "the compound table changed",
        "the chemicals name database: not installed → 1.5.2",
        "a new table x1 is now used",
    ]
    assert basis_changes(now, now) == []


def _stat(pid: int | str) -> list[str] | None:
    """The fields of /proc/PID/stat after the command name: state, parent pid, …"""
    try:
        with open(f"/proc/{pid}/stat") as fh:
            return fh.read().rsplit(")", 1)[1].split()
    except OSError:
        return None


def _children(pid: int) -> set[int]:
    """The processes whose parent is ``pid`` (Linux /proc)."""
    return {int(d) for d in os.listdir("/proc")
            if d.isdigit() and (f := _stat(d)) is not None and int(f[1]) == pid}  # fmt: skip


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="reads /proc")
@pytest.mark.parametrize("sig", ["SIGKILL", "SIGTERM"])
def test_workers_die_with_a_killed_scan_and_write_nothing_after(tmp_path, sig):
    """kill -9 (or SIGTERM) of a parallel `masstrail scan`: its worker processes end within
    two seconds and no result file is written after that."""
    import shutil
    import signal
    import time

    root = tmp_path / "nb"
    shutil.copytree(EXAMPLES, root, ignore=shutil.ignore_patterns("*.waste.*", ".masstrail"))
    entries = [p for p in root.rglob("*.md") if "templates" not in p.parts]
    for i in range(40):  # 200 entries: the workers are busy for seconds
        for p in entries:
            shutil.copy(p, p.with_name(f"{p.stem}-c{i}{p.suffix}"))
    scan = subprocess.Popen([sys.executable, "-c", "from capture.cli import main; main()",
                             "scan", "--jobs", "2", str(root)], stdout=subprocess.DEVNULL,
                            stderr=subprocess.DEVNULL)  # fmt: skip
    deadline = time.monotonic() + 60
    workers: set[int] = set()
    while time.monotonic() < deadline and not list(root.rglob("*-c1*.waste.json")):
        workers |= _children(scan.pid)
        time.sleep(0.05)
    workers |= _children(scan.pid)
    assert len(workers) >= 2, "the scan did not start its workers"
    scan.send_signal(getattr(signal, sig))
    scan.wait(timeout=10)
    time.sleep(2.0)
    alive = [w for w in workers if (f := _stat(w)) is not None and f[0] != "Z"]
    assert alive == [], f"workers still running after the scan was killed: {alive}"
    written = {p: p.stat().st_mtime_ns for p in root.rglob("*.waste.json")}
    time.sleep(1.0)
    assert {p: p.stat().st_mtime_ns for p in root.rglob("*.waste.json")} == written


def test_entries_planned_a_few_at_a_time_give_the_same_results(notebook, monkeypatch):
    """A scan plans :data:`capture.scan.CHUNK` entries at a time; a name clash that falls
    across two chunks is still found for both files, and the first one writes the error."""
    import capture.scan

    for name in ("a.md", "b.md", "c.md", "c.yaml", "d.md"):
        notebook.write(f"x/{name}", GOOD if name.endswith(".md") else "title: c\n")
    whole = [(s.path, s.status, s.e_factor) for s in scan(Notebook.open(notebook.root),
                                                           write=False).summaries]  # fmt: skip
    monkeypatch.setattr(capture.scan, "CHUNK", 3)  # chunks: a b c.md | c.yaml d
    report = notebook.scan()
    assert [(s.path, s.status, s.e_factor) for s in report.summaries] == whole
    assert [s.status for s in report.summaries] == ["ok", "ok", "error", "error", "ok"]
    assert "c.md, c.yaml" in notebook.sidecar("x/c.md")["error"]["message"]
    assert sorted(p.name for p in (notebook.root / "x").glob("*.waste.json")) == [
        "a.waste.json", "b.waste.json", "c.waste.json", "d.waste.json"]  # fmt: skip


def test_workers_started_for_one_chunk_serve_the_next(tmp_path, monkeypatch):
    """With chunks of 7 entries and workers used from 5, a parallel scan of 20 entries in
    three chunks writes what a serial scan writes."""
    import shutil

    import capture.scan

    monkeypatch.setattr(capture.scan, "CHUNK", 7)
    monkeypatch.setattr(capture.scan, "PARALLEL_MIN", 5)
    roots = []
    for name in ("serial", "parallel"):
        root = tmp_path / name
        for i in range(20):
            (root / f"f{i // 6}").mkdir(parents=True, exist_ok=True)
            shutil.copy(
                EXAMPLES / "fenwick-group/FW-0412-amide-coupling.md", root / f"f{i // 6}/e{i}.md"
            )
        roots.append(root)
    a = scan(Notebook.open(roots[0]), keep=False, jobs=1)
    b = scan(Notebook.open(roots[1]), keep=False, jobs=2)
    assert len(a.summaries) == len(b.summaries) == 20 and a.recomputed == b.recomputed == 20
    assert [(s.path, s.e_factor) for s in a.summaries] == [
        (s.path, s.e_factor) for s in b.summaries
    ]
    assert len(b.written) == 20 and len(list(roots[1].rglob("*.waste.json"))) == 20
    # a rescan in the workers: current entries between the edited ones keep their places
    monkeypatch.setattr(capture.scan, "PARALLEL_MIN", 2)
    for i in (1, 2, 9, 17):
        edited = roots[1] / f"f{i // 6}/e{i}.md"
        edited.write_text(edited.read_text(encoding="utf-8") + "\nStored cold.\n")
    c = scan(Notebook.open(roots[1]), reuse=True, keep=False, jobs=2)
    assert [s.path for s in c.summaries] == [s.path for s in b.summaries]
    assert [s.path for s in c.summaries if s.recomputed] == ["f0/e1.md", "f0/e2.md",
                                                            "f1/e9.md", "f2/e17.md"]  # fmt: skip
