"""The scale benchmark's smoke run: the generator and every measurement work end to end.

The full run (python bench/scale.py --sizes 1000,10000,100000) takes most of an hour and
stays out of the test run; its figures are in docs/performance.md.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def test_the_generator_makes_varied_entries_that_scan(tmp_path):
    sys.path.insert(0, str(ROOT / "bench"))
    from scale import generate

    from capture.notebook import Notebook
    from capture.scan import scan

    generate(tmp_path, 30)
    report = scan(Notebook.open(tmp_path), keep=False)
    assert len(report.summaries) == 30 and not report.errors
    authors = {line for p in tmp_path.rglob("*.md") for line in p.read_text().splitlines()
               if line.startswith("author:")}  # fmt: skip
    assert len(authors) > 3  # the invented lab's people vary
    figures = {round(s.e_factor, 3) for s in report.summaries if s.e_factor is not None}
    assert len(figures) > 20  # jittered amounts: no two copies give the same figure


def test_the_scale_benchmark_runs(tmp_path):
    out = tmp_path / "figures.md"
    run = subprocess.run([sys.executable, str(ROOT / "bench" / "scale.py"), "--smoke", "--out",
                          str(out)], capture_output=True, text=True, timeout=600)  # fmt: skip
    assert run.returncode == 0, run.stderr[-2000:]
    text = out.read_text()
    assert "| 40 |" in text and "× floor" in text and "masstrail --help" in text


def test_the_shared_store_benchmark_runs(tmp_path):
    """bench/shared_store.py at 2 notebooks × 40 entries: a real server, every figure, and
    every entry in the shared store once (the script exits 1 on a mismatch)."""
    from pgserver import binaries

    if binaries() is None:
        import os

        import pytest

        if not os.environ.get("MASSTRAIL_REQUIRE_POSTGRES"):
            pytest.skip("the PostgreSQL server binaries are missing")
    out = tmp_path / "shared.md"
    run = subprocess.run([sys.executable, str(ROOT / "bench" / "shared_store.py"), "--smoke",
                          "--out", str(out)], capture_output=True, text=True, timeout=600)  # fmt: skip
    assert run.returncode == 0, run.stdout[-2000:] + run.stderr[-2000:]
    text = out.read_text()
    assert "80 current entries, 80 history rows" in text and "0 left waiting" in text
    assert "×** the floor" in text and "`report --store` over 80 entries" in text


def test_the_scan_memory_benchmark_runs():
    """Two small sizes, cold and warm: every scan holds all its entries and the table is
    printed with both growth lines."""
    run = subprocess.run([sys.executable, str(ROOT / "bench" / "scan_memory.py"), "--sizes",
                          "30,60", "--jobs", "1"], capture_output=True, text=True,
                         timeout=300)  # fmt: skip
    assert run.returncode == 0, run.stderr[-2000:]
    assert "| 60 |" in run.stdout and "warm scan, parent growth above its floor" in run.stdout
