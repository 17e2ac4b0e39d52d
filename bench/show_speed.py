"""Benchmark: ``masstrail show`` of one entry as a chemist runs it, beside its floor.

    python bench/show_speed.py [--rounds 11] [--entry fenwick-group/FW-0412-amide-coupling.md]

Real processes, on a copy of example_entries scanned first (``masstrail scan``, so the
entry's sidecar is current, as the watcher keeps it). Each round runs, one after the other:

- floor: ``python -c "import pydantic, yaml"`` (issue 21's floor);
- ``masstrail show ENTRY``: answered from the current sidecar (capture.standing);
- ``masstrail show --json ENTRY``: the same, printing the sidecar as it is;
- ``masstrail show --recompute ENTRY``: the entry computed, every plugin loaded;
- ``python -c pass`` and ``masstrail --help``, for scale.

Printed: the median and best of each, and each median as a ratio to the floor's median. The
``masstrail`` beside this Python is used (a virtual environment's).
"""

from __future__ import annotations

import argparse
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def _run(cmd: list, env: dict) -> float:
    t = time.perf_counter()
    subprocess.run(cmd, check=True, capture_output=True, env=env)
    return time.perf_counter() - t


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--rounds", type=int, default=11)
    ap.add_argument("--entry", default="fenwick-group/FW-0412-amide-coupling.md")
    args = ap.parse_args()
    command = str(Path(sys.executable).with_name("masstrail"))
    env = {k: v for k, v in os.environ.items() if not k.startswith("MASSTRAIL_")}
    env["MASSTRAIL_BLOCK"] = "names"  # a default install (the README's has no names extra)
    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp) / "examples"
        shutil.copytree(ROOT / "example_entries", root,
                        ignore=shutil.ignore_patterns(".masstrail", "*.waste.*"))  # fmt: skip
        entry = str(root / args.entry)
        subprocess.run([command, "scan", str(root)], check=True, capture_output=True, env=env)
        last = subprocess.run([command, "show", entry], capture_output=True, text=True, env=env)
        if "which is current" not in last.stdout.splitlines()[-1]:
            print("the entry was computed, not answered from its sidecar: a folder on the "
                  "import path changed in the last 2 s? Run again.")  # fmt: skip
        cases = {
            "floor: import pydantic, yaml": [sys.executable, "-c", "import pydantic, yaml"],
            "show (sidecar current)": [command, "show", entry],
            "show --json (sidecar current)": [command, "show", "--json", entry],
            "show --recompute": [command, "show", "--recompute", entry],
            "python -c pass": [sys.executable, "-c", "pass"],
            "masstrail --help": [command, "--help"],
        }
        times: dict[str, list[float]] = {name: [] for name in cases}
        for _ in range(args.rounds):
            for name, cmd in cases.items():
                times[name].append(_run(cmd, env))
    floor = statistics.median(times["floor: import pydantic, yaml"])
    for name, xs in times.items():
        med = statistics.median(xs)
        print(f"{name:32} median {med * 1e3:6.1f} ms, best {min(xs) * 1e3:6.1f} ms, "
              f"{med / floor:4.2f} × the floor")  # fmt: skip


if __name__ == "__main__":
    main()
