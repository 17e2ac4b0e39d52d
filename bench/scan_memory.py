"""Benchmark: the memory of a cold scan's processes as the notebook grows.

    python bench/scan_memory.py [--sizes 2000,10000,50000] [--jobs 3]

For each size N, a notebook of N generated entries (bench/scale.py's generator) is scanned
cold in a new process, as ``masstrail scan`` does it (``keep=False``, ``jobs`` workers).
The process reports its own peak resident memory (the scanning, parent process) and that of
its largest worker. Beside them, the floor: the same process's peak after opening the
notebook, before the scan. Flat means the parent's peak minus its floor does not grow
with N; the figure to read is the growth per 1,000 entries between the smallest and the
largest size.
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import tempfile
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from scale import generate

CHILD = r"""
import json, resource, sys
from pathlib import Path

def main():
    from capture.notebook import Notebook
    from capture.scan import scan
    nb = Notebook.open(Path(sys.argv[1]))
    floor = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    report = scan(nb, reuse=True, keep=False, jobs=int(sys.argv[2]))
    assert len(report.summaries) == int(sys.argv[3]), len(report.summaries)
    print(json.dumps({"floor_mb": floor,
                      "parent_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
                      "worker_mb": resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024}))

if __name__ == "__main__":
    main()
"""


def measure(n: int, jobs: int, tmp: Path) -> dict:
    root = tmp / f"nb-{n}"
    root.mkdir()
    generate(root, n)
    script = tmp / "child.py"
    script.write_text(CHILD, encoding="utf-8")
    out = subprocess.run([sys.executable, str(script), str(root), str(jobs), str(n)],
                         capture_output=True, text=True, check=True).stdout  # fmt: skip
    return {"entries": n, **json.loads(out.strip().splitlines()[-1])}


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", default="2000,10000,50000", help="entry counts, comma-separated")
    ap.add_argument("--jobs", type=int, default=3, help="worker processes (as scan --jobs)")
    args = ap.parse_args()
    sizes = [int(s) for s in args.sizes.split(",")]
    with tempfile.TemporaryDirectory(prefix="masstrail-mem-") as tmp:
        figs = [measure(n, args.jobs, Path(tmp)) for n in sizes]
    print("| entries | floor MB | parent peak MB | above floor MB | largest worker MB |")
    print("|---|---|---|---|---|")
    for f in figs:
        print(f"| {f['entries']:,} | {f['floor_mb']:.0f} | {f['parent_mb']:.0f} | "
              f"{f['parent_mb'] - f['floor_mb']:.1f} | {f['worker_mb']:.0f} |")  # fmt: skip
    a, b = figs[0], figs[-1]
    if b["entries"] > a["entries"]:
        grow = (b["parent_mb"] - b["floor_mb"]) - (a["parent_mb"] - a["floor_mb"])
        per = grow / (b["entries"] - a["entries"]) * 1000
        print(f"\nparent growth above its floor: {grow:.1f} MB from {a['entries']:,} to "
              f"{b['entries']:,} entries ({per:.2f} MB per 1,000 entries)")  # fmt: skip
    return 0


if __name__ == "__main__":
    sys.exit(main())
