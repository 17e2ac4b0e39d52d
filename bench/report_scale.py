"""Benchmark: scanning N generated entries into the store, then the HTML report over them.

    python bench/report_scale.py [--entries 10000]

The entries are the example entries copied with new ids and jittered numbers
(an invented lab, as example_entries). Floor for the scan: reading every entry
and writing one JSON file per entry in one process. Reported: scan time,
report time, report size, store size.
"""

from __future__ import annotations

import argparse
import json
import random
import re
import shutil
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
_NUM = re.compile(r"(?<![\w.])\d+\.\d+(?![\w.])")


def generate(target: Path, n: int, seed: int = 3) -> None:
    rng = random.Random(seed)
    src = ROOT / "example_entries"
    kinds = {".md", ".yaml", ".json", ".ipynb"}
    files = [
        p
        for p in src.rglob("*")
        if p.is_file()
        and ".waste." not in p.name
        and "templates" not in p.parts
        and p.suffix in kinds
    ]
    shutil.copy(src / "masstrail.toml", target / "masstrail.toml")
    for logs in src.rglob("logs"):
        shutil.copytree(logs, target / logs.relative_to(src), dirs_exist_ok=True)
    for i in range(n):
        f = files[i % len(files)]
        text = f.read_text()
        text = _NUM.sub(lambda m: f"{float(m.group(0)) * rng.uniform(0.8, 1.2):.3f}", text)
        text = re.sub(r"^id: (.+)$", rf"id: \1-{i}", text, count=1, flags=re.M)
        text = text.replace('"id": "FW-0425"', f'"id": "FW-0425-{i}"')
        dest = target / f.relative_to(src).parent / f"{f.stem}-{i:06d}{f.suffix}"
        dest.parent.mkdir(parents=True, exist_ok=True)
        dest.write_text(text)


def floor(root: Path) -> float:
    t = time.perf_counter()
    out = root.parent / "floor"
    out.mkdir(exist_ok=True)
    for n, p in enumerate(root.rglob("*")):
        if p.is_file() and p.suffix in {".md", ".yaml", ".json", ".ipynb"}:
            text = p.read_text()
            (out / f"{n}.json").write_text(json.dumps({"path": str(p), "chars": len(text)}))
    return time.perf_counter() - t


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--entries", type=int, default=10000)
    args = ap.parse_args()
    from capture.pipeline import CAUTION, Notebook, scan
    from capture.report import build
    from capture.reports import GapFilter

    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp) / "nb"
        root.mkdir()
        generate(root, args.entries)
        t_floor = floor(root)
        t = time.perf_counter()
        results = scan(Notebook.open(root)).results
        t_scan = time.perf_counter() - t
        t = time.perf_counter()
        html = build(results, GapFilter(), CAUTION, "scale test")
        t_report = time.perf_counter() - t
        db = root / ".masstrail" / "records.db"
        print(f"entries: {len(results)} ({sum(r.status == 'error' for r in results)} unreadable)")
        print(f"scan into sidecars and store: {t_scan:.1f} s = {t_scan / t_floor:.0f} × floor "
              f"({t_floor:.2f} s: read every entry, write one JSON each)")  # fmt: skip
        size = db.stat().st_size / 1e6
        print(f"report: {t_report:.1f} s, {len(html) / 1e6:.1f} MB of HTML; store {size:.1f} MB")
    return 0


if __name__ == "__main__":
    sys.exit(main())
