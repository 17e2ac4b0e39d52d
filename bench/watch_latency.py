"""Benchmark: save-to-sidecar latency of ``masstrail watch``, beside its floor.

    python bench/watch_latency.py [--saves 200] [--settle 0.05] [--idle 10] [--soak-minutes 0]

A watcher runs as a real process on a copy of example_entries. Each save rewrites
one entry with a new product mass; the latency is the time until its sidecar
shows that mass. Floor: reading, computing and writing the same entry in this
process without a watcher (Notebook.process). Also reported: the watcher's CPU
time over an idle period, and, with --soak-minutes, its resident memory at the
start and end of a soak with a save every few seconds.
"""

from __future__ import annotations

import argparse
import json
import shutil
import statistics
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
ENTRY = "fenwick-group/FW-0412-amide-coupling.md"


def _cpu_seconds(pid: int) -> float:
    fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
    return (int(fields[11]) + int(fields[12])) / 100  # utime + stime, in clock ticks


def _rss_mb(pid: int) -> float:
    for line in Path(f"/proc/{pid}/status").read_text().splitlines():
        if line.startswith("VmRSS:"):
            return int(line.split()[1]) / 1024
    return float("nan")


def _mass(side: Path) -> float | None:
    try:
        return json.loads(side.read_text())["product"]["mass_g"]
    except (OSError, ValueError, KeyError):
        return None


def pct(values: list[float], q: float) -> float:
    return statistics.quantiles(values, n=100)[int(q) - 1]


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--saves", type=int, default=200)
    ap.add_argument("--settle", type=float, default=0.05)
    ap.add_argument("--idle", type=float, default=10.0, help="seconds of idle CPU measurement")
    ap.add_argument("--soak-minutes", type=float, default=0.0)
    args = ap.parse_args()

    from capture.notebook import Notebook

    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp) / "nb"
        shutil.copytree(ROOT / "example_entries", root,
                        ignore=shutil.ignore_patterns("*.waste.*", ".masstrail"))  # fmt: skip
        entry = root / ENTRY
        side = entry.with_name(entry.stem + ".waste.json")
        original = entry.read_text()

        nb = Notebook.open(root)
        floor = []
        for i in range(args.saves):
            entry.write_text(original.replace("mass: 2.41 g", f"mass: {2 + i / 1000:.3f} g"))
            t = time.perf_counter()
            nb.process(entry.resolve())
            floor.append(time.perf_counter() - t)

        cmd = [sys.executable, "-c", "from capture.cli import main; main()", "watch", str(root),
               "--settle", str(args.settle)]  # fmt: skip
        proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.STDOUT, text=True)
        lines: list[str] = []
        threading.Thread(target=lambda: lines.extend(proc.stdout), daemon=True).start()
        while not any(line.startswith("watching") for line in lines):
            time.sleep(0.05)
        time.sleep(0.5)
        latency = []
        for i in range(args.saves):
            want = round(3 + i / 1000, 3)
            entry.write_text(original.replace("mass: 2.41 g", f"mass: {want:.3f} g"))
            t = time.perf_counter()
            while _mass(side) != want:
                time.sleep(0.001)
                if time.perf_counter() - t > 10:
                    raise SystemExit(f"save {i} never reached the sidecar")
            latency.append(time.perf_counter() - t)
            time.sleep(0.05)

        cpu0 = _cpu_seconds(proc.pid)
        time.sleep(args.idle)
        idle_cpu = _cpu_seconds(proc.pid) - cpu0

        rss_start = _rss_mb(proc.pid)
        end = time.monotonic() + args.soak_minutes * 60
        n = 0
        while time.monotonic() < end:
            entry.write_text(original.replace("mass: 2.41 g", f"mass: {4 + n / 1000:.3f} g"))
            n += 1
            time.sleep(3)
        rss_end = _rss_mb(proc.pid)
        proc.terminate()
        proc.wait(timeout=10)

    ms = [x * 1000 for x in latency]
    fl = [x * 1000 for x in floor]
    print(f"saves: {args.saves}, settle {args.settle * 1000:.0f} ms")
    print(
        f"floor (read + compute + write, no watcher): p50 {pct(fl, 50):.1f} ms, "
        f"p95 {pct(fl, 95):.1f} ms"
    )
    print(f"watcher save-to-sidecar: p50 {pct(ms, 50):.1f} ms, p95 {pct(ms, 95):.1f} ms "
          f"(target p95 ≤ 100 ms: {'met' if pct(ms, 95) <= 100 else 'NOT met'}); "
          f"p95 = {pct(ms, 95) / pct(fl, 95):.1f} × floor p95")  # fmt: skip
    print(f"idle CPU: {idle_cpu:.2f} s over {args.idle:g} s ({idle_cpu / args.idle:.1%})")
    if args.soak_minutes:
        print(
            f"soak: {n} saves over {args.soak_minutes:g} min; "
            f"RSS {rss_start:.0f} MB → {rss_end:.0f} MB"
        )
    return 0


if __name__ == "__main__":
    sys.exit(main())
