"""Benchmark: the work and output of entries built to exhaust memory, time and disk, each
beside a floor measured in the same run (an ordinary example entry, scanned the same way).

    python bench/hostile.py [--rounds 3]

Each case is a notebook of one entry under the 5 MB entry cap, scanned by the installed
``masstrail scan --jobs 1`` in a fresh process: its wall time, peak resident memory (the
child's ru_maxrss) and the size of the sidecar it wrote.

- log: a 4 MB balance log of one-line readings;
- text: a 4.8 MB procedure of repeated amounts;
- list: a YAML entry listing 120,000 materials;
- floor: example_entries' FW-0412 amide coupling.
"""

from __future__ import annotations

import argparse
import os
import random
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def _make(case: str, folder: Path) -> None:
    folder.mkdir(parents=True)
    rng = random.Random(7)
    if case == "floor":
        shutil.copy(
            ROOT / "example_entries/fenwick-group/FW-0412-amide-coupling.md", folder / "e.md"
        )
    elif case == "log":
        with (folder / "log.csv").open("w") as fh:
            fh.write("Label,Net,Unit\n")
            n = 0
            while fh.tell() < 4_000_000:
                fh.write(f"r{n},{rng.random() * 10:.4f},g\n")
                n += 1
        head = "---\ntitle: big log\nbalance_log: log.csv\nproduct: {name: p, mass: 1 g}\n"
        (folder / "e.md").write_text(head + "materials: [{name: A, amount: 2 g}]\n---\n")
    elif case == "text":
        body = "".join(
            f"Then X{i % 50} ({i % 97 + 1}.{i % 10} g) was added. " for i in range(140000)
        )
        (folder / "e.md").write_text("---\ntitle: big text\nproduct: {name: p, mass: 1 g}\n---\n"
                                     + body[:4_800_000])  # fmt: skip
    elif case == "list":
        rows = "".join(f"  - {{name: M{i}, amount: {i % 9 + 1} g}}\n" for i in range(120000))
        (folder / "e.yaml").write_text(
            "title: many\nproduct: {name: p, mass: 1 g}\nmaterials:\n" + rows
        )


_RUN = (
    "import resource, sys\nfrom capture.cli import main\ntry:\n    main()\nfinally:\n"
    "    print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss, file=sys.stderr)"
)


def _scan(folder: Path) -> tuple[float, float, int]:
    """(seconds, peak MB of the scanning process, sidecar bytes) of one fresh scan."""
    for p in folder.glob("*.waste.*"):
        p.unlink()
    shutil.rmtree(folder / ".masstrail", ignore_errors=True)
    start = time.perf_counter()
    done = subprocess.run([sys.executable, "-c", _RUN, "scan", "--jobs", "1", str(folder)],
                          check=True, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                          text=True)  # fmt: skip
    took = time.perf_counter() - start
    peak_kb = int(done.stderr.strip().splitlines()[-1])  # ru_maxrss: KB on Linux
    side = sum(p.stat().st_size for p in folder.glob("*.waste.json"))
    return took, peak_kb / 1024, side


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--rounds", type=int, default=3)
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        cases = ["floor", "log", "text", "list"]
        for case in cases:
            _make(case, Path(tmp) / case)
        floor = None
        for case in cases:
            runs = [_scan(Path(tmp) / case) for _ in range(args.rounds)]
            t = statistics.median(r[0] for r in runs)
            mb, side = runs[-1][1], runs[-1][2]
            floor = floor or t
            print(f"{case}: {t:.2f} s ({t / floor:.1f}× the floor), peak {mb:.0f} MB, "
                  f"sidecar {side / 1e6:.2f} MB")  # fmt: skip
    print("environment:", os.cpu_count(), "cores")


if __name__ == "__main__":
    main()
