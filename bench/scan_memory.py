"""Benchmark: the memory of a scan's processes as the notebook grows.

    python bench/scan_memory.py [--sizes 2000,10000,50000] [--jobs 3]

For each size N, a notebook of N generated entries (bench/scale.py's generator) is scanned
cold in a new process, as ``masstrail scan`` does it (``keep=False``, ``jobs`` workers), and
then again, warm (nothing changed), in another. Each process reports its own peak resident
memory (the scanning, parent process) and, cold, that of its largest worker. Beside them,
the floor: the same process's peak after opening the notebook, before the scan. Flat means
the parent's peak minus its floor does not grow with N; the figure to read is the growth per
1,000 entries between the smallest and the largest size.
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
    assert report.recomputed == int(sys.argv[4]), report.recomputed
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
    fig: dict = {"entries": n}
    for run, recomputed in (("cold", n), ("warm", 0)):
        out = subprocess.run([sys.executable, str(script), str(root), str(jobs), str(n),
                              str(recomputed)], capture_output=True, text=True,
                             check=True).stdout  # fmt: skip
        for key, value in json.loads(out.strip().splitlines()[-1]).items():
            fig[f"{run}_{key}"] = value
    return fig


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", default="2000,10000,50000", help="entry counts, comma-separated")
    ap.add_argument("--jobs", type=int, default=3, help="worker processes (as scan --jobs)")
    args = ap.parse_args()
    sizes = [int(s) for s in args.sizes.split(",")]
    with tempfile.TemporaryDirectory(prefix="masstrail-mem-") as tmp:
        figs = [measure(n, args.jobs, Path(tmp)) for n in sizes]
    print("| entries | floor MB | cold: parent peak MB | above floor | largest worker MB "
          "| warm: parent peak MB | above floor |")  # fmt: skip
    print("|---|---|---|---|---|---|---|")
    for f in figs:
        cold, warm = (f[f"{r}_parent_mb"] - f[f"{r}_floor_mb"] for r in ("cold", "warm"))
        print(f"| {f['entries']:,} | {f['cold_floor_mb']:.0f} | {f['cold_parent_mb']:.0f} | "
              f"{cold:.1f} | {f['cold_worker_mb']:.0f} | {f['warm_parent_mb']:.0f} | "
              f"{warm:.1f} |")  # fmt: skip
    a, b = figs[0], figs[-1]
    for run in ("cold", "warm") if b["entries"] > a["entries"] else ():
        grow = ((b[f"{run}_parent_mb"] - b[f"{run}_floor_mb"])
                - (a[f"{run}_parent_mb"] - a[f"{run}_floor_mb"]))  # fmt: skip
        per = grow / (b["entries"] - a["entries"]) * 1000
        print(f"{run} scan, parent growth above its floor: {grow:.1f} MB from {a['entries']:,} "
              f"to {b['entries']:,} entries ({per:.2f} MB per 1,000 entries)")  # fmt: skip
    return 0


if __name__ == "__main__":
    sys.exit(main())
