"""Benchmark: masstrail at lab scale, every figure beside its floor measured in the same run.

    python bench/scale.py [--sizes 1000,10000,100000] [--jobs 0] [--out FILE.md]
    python bench/scale.py --smoke          # 40 entries: that it runs (the test suite does this)

For each size N, a notebook of N generated entries (see :func:`generate`) is made in a
temporary folder and measured with real processes, as a user runs them:

Every time is a whole process's wall time, start-up included, floors too.

- cold scan: ``masstrail scan`` on the fresh notebook (sidecars, cards and store written);
  floor: one process that reads every entry, parses its front matter with masstrail's safe
  YAML/JSON loaders and writes one JSON file per entry; "durable floor": the same with each
  file written the way masstrail must write sidecars (temp file, fsync, rename; each folder
  fsynced once).
- warm rescan: ``masstrail scan`` again, nothing changed; floor: stat and hash every entry.
- one-entry recompute: one entry edited, then ``masstrail scan``; and, in one process,
  the time to compute and write one entry (the watcher's path) beside reading and writing it.
- report: ``masstrail report`` over the notebook (after the scans, so nothing is recomputed).
- peak memory (max RSS) of each masstrail process, and ``masstrail --help`` start-up beside
  ``python -c pass``.

The watcher's save-to-sidecar latency has its own benchmark, bench/watch_latency.py.
"""

from __future__ import annotations

import argparse
import json
import os
import random
import re
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
EXAMPLES = ROOT / "example_entries"
KINDS = {".md", ".yaml", ".json", ".ipynb"}
_NUM = re.compile(r"(?<![\w.])\d+\.\d+(?![\w.])")
# invented people of the invented Larchmont Research Labs
AUTHORS = ["R. Okonkwo", "M. Tallis", "J. Ferreira", "S. Lindqvist", "A. Kowalczyk", "P. Nwosu",
           "H. Yamada", "L. Brennan", "D. Achterberg", "T. Mbeki-Hart"]  # fmt: skip


def _templates() -> list[Path]:
    return sorted(
        p
        for p in EXAMPLES.rglob("*")
        if p.is_file() and ".waste." not in p.name and "templates" not in p.parts
        and p.suffix in KINDS and not any(part.startswith(".") for part in p.parts)
    )  # fmt: skip


def _sentences() -> list[str]:
    sys.path.insert(0, str(ROOT / "tests" / "corpus"))
    from score_text import CORPUS, load

    return [item.text for item in load(CORPUS)]


def generate(target: Path, n: int, seed: int = 3, names: bool = False) -> None:
    """N entries from the example scenario: each a copy of one example entry (front matter,
    tables, balance logs and procedure as the chemists of the example lab write them) with
    a new id, another author and date, every decimal amount changed by up to ±20 %, and,
    in Markdown entries, up to three sentences from the annotated procedure corpus added to
    the procedure, so that procedures and gaps vary."""
    rng = random.Random(seed)
    files = _templates()
    corpus = _sentences()
    shutil.copy(EXAMPLES / "masstrail.toml", target / "masstrail.toml")
    if not names:
        with (target / "masstrail.toml").open("a", encoding="utf-8") as fh:
            fh.write('\n[plugins]\nblock = ["names"]\n')
    for logs in EXAMPLES.rglob("logs"):
        shutil.copytree(logs, target / logs.relative_to(EXAMPLES), dirs_exist_ok=True)
    for i in range(n):
        f = files[i % len(files)]
        text = f.read_text(encoding="utf-8")
        text = _NUM.sub(lambda m: f"{float(m.group(0)) * rng.uniform(0.8, 1.2):.3f}", text)
        day = f"2026-{rng.randint(1, 11):02d}-{rng.randint(1, 28):02d}"
        if f.suffix in {".md", ".yaml"}:
            text = re.sub(r"^id: (.+)$", rf"id: \1-{i}", text, count=1, flags=re.M)
            text = re.sub(r"^author: .+$", f"author: {rng.choice(AUTHORS)}", text, count=1,
                          flags=re.M)  # fmt: skip
            text = re.sub(r"^date: .+$", f"date: {day}", text, count=1, flags=re.M)
        elif f.suffix == ".json":
            text = re.sub(r'"id": "([^"]+)"', rf'"id": "\1-{i}"', text, count=1)
        if f.suffix == ".md":
            extra = " ".join(rng.sample(corpus, rng.randint(0, 3)))
            text = text.rstrip("\n") + ("\n\n" + extra + "\n" if extra else "\n")
        dest = target / f.relative_to(EXAMPLES).parent / f"{f.stem}-{i:06d}{f.suffix}"
        dest.parent.mkdir(parents=True, exist_ok=True)
        dest.write_text(text, encoding="utf-8")


# ------------------------------------------------------------------ floors (run in a child)
FLOOR_COLD = r"""
import json, os, sys, time
from pathlib import Path
from capture.safeio import atomic_write, decode_text, load_json, sync_folder
from capture.safeyaml import load_yaml
root, out, durable = Path(sys.argv[1]), Path(sys.argv[2]), sys.argv[3] == "1"
out.mkdir(exist_ok=True)
t = time.perf_counter()
folders = set()
n = 0
for dirpath, dirnames, filenames in os.walk(root):
    dirnames[:] = [d for d in dirnames if not d.startswith(".")]
    for name in filenames:
        p = Path(dirpath) / name
        if p.suffix not in {".md", ".yaml", ".json", ".ipynb"} or ".waste." in name:
            continue
        text = decode_text(p.read_bytes())
        if p.suffix == ".md":
            head = text.split("---", 2)[1] if text.startswith("---") else ""
            meta = load_yaml(head)
        elif p.suffix == ".yaml":
            meta = load_yaml(text)
        else:
            meta = load_json(text)
        n += 1
        target = out / f"{n}.json"
        body = json.dumps({"path": str(p), "keys": sorted(meta) if isinstance(meta, dict) else []})
        if durable:
            atomic_write(target, body, sync_dir=False)
            folders.add(target.parent)
        else:
            target.write_text(body)
for folder in folders:
    sync_folder(folder)
print(json.dumps({"seconds": time.perf_counter() - t, "entries": n}))
"""

FLOOR_WARM = r"""
import hashlib, json, os, sys, time
from pathlib import Path
root = Path(sys.argv[1])
t = time.perf_counter()
n = 0
for dirpath, dirnames, filenames in os.walk(root):
    dirnames[:] = [d for d in dirnames if not d.startswith(".")]
    for name in filenames:
        p = Path(dirpath) / name
        if p.suffix not in {".md", ".yaml", ".json", ".ipynb"} or ".waste." in name:
            continue
        p.stat()
        hashlib.sha256(p.read_bytes()).hexdigest()
        n += 1
print(json.dumps({"seconds": time.perf_counter() - t, "entries": n}))
"""

ONE_ENTRY = r"""
import json, statistics, sys, time
from pathlib import Path
from capture.notebook import Notebook
from capture.safeio import atomic_write, decode_text
root = Path(sys.argv[1])
nb = Notebook.open(root)
files = nb.entry_files()[:40]
for f in files[:5]:
    nb.process(f)  # warm: imports, unit registry, name lookups
work, floor = [], []
for f in files:
    t = time.perf_counter()
    nb.process(f)  # read, compute, write sidecar, card and store row: the watcher's step
    work.append(time.perf_counter() - t)
    t = time.perf_counter()
    text = decode_text(f.read_bytes())
    atomic_write(f.with_name(f.name + ".floor.json"), json.dumps({"chars": len(text)}))
    floor.append(time.perf_counter() - t)
    f.with_name(f.name + ".floor.json").unlink()
print(json.dumps({"seconds": statistics.median(work), "floor": statistics.median(floor)}))
"""


def _child(args: list[str]) -> tuple[float, float, str]:
    """Run a process to its end; (wall seconds, its peak RSS in MB, its stdout)."""
    t = time.perf_counter()
    with tempfile.TemporaryFile("w+") as out, tempfile.TemporaryFile("w+") as err:
        proc = subprocess.Popen(args, stdout=out, stderr=err, text=True)
        _pid, status, usage = os.wait4(proc.pid, 0)
        wall = time.perf_counter() - t
        proc.returncode = os.waitstatus_to_exitcode(status)
        out.seek(0)
        err.seek(0)
        text, problem = out.read(), err.read()
    if proc.returncode != 0:
        raise SystemExit(
            f"{' '.join(map(str, args))} failed ({proc.returncode}):\n{problem[-2000:]}"
        )
    return wall, usage.ru_maxrss / 1024, text


def _py(code: str, *argv: object) -> dict:
    """Run ``code`` in a new Python process; what it printed, and "wall": the process's whole
    run, start-up included, as for the masstrail commands it is compared with."""
    wall, _, out = _child([sys.executable, "-c", code, *map(str, argv)])
    return {**json.loads(out.strip().splitlines()[-1]), "wall": wall}


def _masstrail() -> list[str]:
    exe = Path(sys.executable).with_name("masstrail")
    return [str(exe)] if exe.exists() else [sys.executable, "-m", "capture.cli"]


def measure(n: int, jobs: int, tmp: Path, names: bool) -> dict:
    root = tmp / f"nb-{n}"
    root.mkdir()
    t = time.perf_counter()
    generate(root, n, names=names)
    gen = time.perf_counter() - t
    m = _masstrail()
    fig: dict = {"entries": n, "generate_s": gen}
    fig["floor_plain_s"] = _py(FLOOR_COLD, root, tmp / f"floor-a-{n}", 0)["wall"]
    fig["floor_durable_s"] = _py(FLOOR_COLD, root, tmp / f"floor-b-{n}", 1)["wall"]
    fig["cold_s"], fig["cold_mb"], _ = _child([*m, "scan", str(root), "--jobs", str(jobs)])
    fig["warm_floor_s"] = _py(FLOOR_WARM, root)["wall"]
    fig["warm_s"], fig["warm_mb"], out = _child([*m, "scan", str(root), "--jobs", str(jobs)])
    assert f"({n} unchanged since the last scan)" in " ".join(out.split()), out[-600:]
    edited = next(p for p in sorted(root.rglob("*.md")) if ".waste." not in p.name)
    edited.write_text(edited.read_text(encoding="utf-8") + "\nStored under argon.\n")
    fig["edit_one_s"], _, out = _child([*m, "scan", str(root), "--jobs", str(jobs)])
    assert f"({n - 1} unchanged since the last scan)" in " ".join(out.split()), out[-600:]
    one = _py(ONE_ENTRY, root)
    fig["one_entry_s"], fig["one_entry_floor_s"] = one["seconds"], one["floor"]
    report = tmp / f"report-{n}.html"
    fig["report_s"], fig["report_mb"], _ = _child([*m, "report", str(root), "-o", str(report)])
    fig["report_html_mb"] = report.stat().st_size / 1e6
    db = root / ".masstrail" / "records.db"
    fig["store_mb"] = db.stat().st_size / 1e6
    import sqlite3

    conn = sqlite3.connect(db)
    fig["store_entries"] = conn.execute("SELECT COUNT(*) FROM entries").fetchone()[0]
    fig["store_history"] = conn.execute("SELECT COUNT(*) FROM history").fetchone()[0]
    conn.close()
    shutil.rmtree(root)
    return fig


def startup() -> dict:
    m = _masstrail()
    best = lambda args: min(_child(args)[0] for _ in range(5))  # noqa: E731
    return {"help_s": best([*m, "--help"]), "python_s": best([sys.executable, "-c", "pass"])}


def table(figs: list[dict], start: dict, jobs: int, names: bool) -> str:
    def r(a, b):
        return f"{a / b:.1f} ×"

    lines = [
        f"Measured {time.strftime('%Y-%m-%d')} on {os.cpu_count()} cores, Python "
        f"{sys.version.split()[0]}, `--jobs {jobs}` (0: one per core and one more), chemicals name "
        f"database {'used' if names else 'blocked (as without the [names] extra)'}.",
        "",
        "| entries | cold scan | × floor (durable / plain) | per entry | warm rescan | × floor | "
        "one edit | report | peak memory (scan / warm / report) | store |",
        "|---|---|---|---|---|---|---|---|---|---|",
    ]
    for f in figs:
        n = f["entries"]
        lines.append(
            f"| {n:,} | {f['cold_s']:.1f} s | {r(f['cold_s'], f['floor_durable_s'])} / "
            f"{r(f['cold_s'], f['floor_plain_s'])} | {f['cold_s'] / n * 1e3:.2f} ms | "
            f"{f['warm_s']:.2f} s | {r(f['warm_s'], f['warm_floor_s'])} | "
            f"{f['edit_one_s']:.2f} s | "
            f"{f['report_s']:.1f} s ({f['report_html_mb']:.1f} MB) | {f['cold_mb']:.0f} / "
            f"{f['warm_mb']:.0f} / {f['report_mb']:.0f} MB | {f['store_mb']:.0f} MB, "
            f"{f['store_entries']:,} entries |"
        )  # fmt: skip
    lines += ["", "Floors measured in the same run:", "",
              "| entries | cold floor, plain | cold floor, durable | warm floor | one entry "
              "(compute + write) | its floor |", "|---|---|---|---|---|---|"]  # fmt: skip
    for f in figs:
        lines.append(
            f"| {f['entries']:,} | {f['floor_plain_s']:.2f} s | {f['floor_durable_s']:.2f} s | "
            f"{f['warm_floor_s']:.3f} s | {f['one_entry_s'] * 1e3:.1f} ms | "
            f"{f['one_entry_floor_s'] * 1e3:.2f} ms |"
        )
    if len(figs) > 1:
        first = figs[0]

        def per(f, key):
            return f[key] / f["entries"] / (first[key] / first["entries"])

        parts = [f"{f['entries']:,}: cold {per(f, 'cold_s'):.2f}, warm {per(f, 'warm_s'):.2f}"
                 for f in figs]  # fmt: skip
        lines += ["", "Time per entry relative to the smallest size: " + ", ".join(parts) + "."]
    lines += ["", f"`masstrail --help`: {start['help_s']:.2f} s (best of 5); "
              f"`python -c pass`: {start['python_s']:.3f} s."]  # fmt: skip
    return "\n".join(lines)


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", default="1000,10000", help="entry counts, comma-separated")
    ap.add_argument("--jobs", type=int, default=0, help="masstrail scan --jobs (0: per core)")
    ap.add_argument("--smoke", action="store_true", help="40 entries, to see that it runs")
    ap.add_argument("--out", type=Path, help="also write the table to this Markdown file")
    ap.add_argument("--names", action="store_true",
                    help="use the chemicals name database (the [names] extra) if installed; "
                    "by default it is blocked, as in the README's install")  # fmt: skip
    args = ap.parse_args()
    sizes = [40] if args.smoke else [int(s) for s in args.sizes.split(",")]
    figs = []
    with tempfile.TemporaryDirectory(prefix="masstrail-bench-") as tmp:
        for n in sizes:
            figs.append(measure(n, args.jobs, Path(tmp), args.names))
            print(json.dumps(figs[-1]), file=sys.stderr, flush=True)
    text = table(figs, startup(), args.jobs, args.names)
    print(text)
    if args.out:
        args.out.write_text(text + "\n", encoding="utf-8")
    return 0


if __name__ == "__main__":
    sys.exit(main())
