"""The scan: name clashes, and parallel workers that write exactly what one process writes."""

from __future__ import annotations

from dataclasses import asdict

from capture.notebook import Notebook
from capture.scan import scan

from conftest import EXAMPLES
from helpers import GOOD


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
        shutil.copytree(EXAMPLES, root, ignore=shutil.ignore_patterns("*.waste.*"))
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
    assert [asdict(s) for s in a.summaries] == [asdict(s) for s in b.summaries]
    outputs = sorted(p.relative_to(serial) for p in serial.rglob("*.waste.*"))
    assert len(outputs) == 180
    assert outputs == sorted(p.relative_to(parallel) for p in parallel.rglob("*.waste.*"))
    for rel in outputs:
        assert (serial / rel).read_bytes() == (parallel / rel).read_bytes(), rel
    tables = [current_tables(connect(r / ".masstrail" / "records.db")) for r in (serial, parallel)]
    assert tables[0] == tables[1] and len(tables[0]["entries"]) == 90
