"""Benchmark: computing one entry (no writing), beside its floor, in one process.

    python bench/compute_one.py [--corpus ../shared/real-corpus] [--rounds 7]

Two sets: the example notebook's entries, and the real corpus's 500 procedures (its entries
folder, read as a notebook). Per entry, median of ``--rounds`` rounds, after one warm-up
round (imports, tables, caches):

- compute: read the file, read the entry (its reader hook) and compute its result
  (``capture.run.compute``: every stage's hooks), nothing written;
- floor: read the file, split and parse its front matter with masstrail's safe YAML loader,
  one pass of an amount pattern over the body, and serialise a result of the same size
  (``json.dumps`` of the computed result's dict).

- the rest: compute again with the text reader's lines read beforehand (the reader's
  ``extract`` answers with them), i.e. every stage but reading the procedure text;
- the reader: ``extract`` of the entry's body alone.

Printed per set: the medians over entries of compute, floor and their ratio, and the
slowest entries' ratios; then the rest and the reader, each as a ratio to the same floor
(what a target on compute leaves the reader: ratio minus the rest's).
"""

from __future__ import annotations

import argparse
import json
import re
import statistics
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
_AMOUNT = re.compile(r"(\d+(?:[.,]\d+)?)\s*(mg|g|kg|mL|ml|L|mmol|mol|equiv|M)\b")


def _floor(path: Path, result: dict) -> float:
    from capture.safeio import decode_text
    from capture.safeyaml import load_yaml

    t = time.perf_counter()
    text = decode_text(path.read_bytes())
    front, body = "", text
    if text.startswith("---"):
        end = text.find("\n---", 3)
        front, body = text[3:end], text[end + 4 :]
        load_yaml(front)
    else:
        load_yaml(text) if path.suffix in {".yaml", ".yml"} else json.loads(text)
    sum(1 for _ in _AMOUNT.finditer(body))
    json.dumps(result)
    return time.perf_counter() - t


def measure(folder: Path, rounds: int) -> dict:
    from capture.notebook import Notebook
    from capture.run import compute, read_entry
    from capture.safeio import read_bounded

    nb = Notebook.open(folder)
    files = nb.entry_files()
    results = {}
    for f in files:  # warm-up, and the result each floor serialises
        entry = read_entry(nb, f, read_bounded(f, 2**24), nb.relpath(f))
        results[f] = json.loads(compute(nb, entry).model_dump_json(by_alias=True))
    work, floor, rest, reader = ({f: [] for f in files} for _ in range(4))
    for _ in range(rounds):
        for f in files:
            t = time.perf_counter()
            entry = read_entry(nb, f, read_bounded(f, 2**24), nb.relpath(f))
            compute(nb, entry)
            work[f].append(time.perf_counter() - t)
            floor[f].append(_floor(f, results[f]))
            rest[f].append(_without_reader(nb, f, reader[f]))
    per = {f: (statistics.median(work[f]), statistics.median(floor[f])) for f in files}
    ratios = sorted((w / fl, nb.relpath(f)) for f, (w, fl) in per.items())
    return {
        "entries": len(files),
        "compute_ms": 1e3 * statistics.median(w for w, _ in per.values()),
        "floor_ms": 1e3 * statistics.median(fl for _, fl in per.values()),
        "ratio": statistics.median(r for r, _ in ratios),
        "slowest": ratios[-3:],
        "rest": statistics.median(statistics.median(rest[f]) / per[f][1] for f in files),
        "reader": statistics.median(statistics.median(reader[f]) / per[f][1] for f in files),
    }


def _without_reader(nb, path: Path, reader_times: list[float]) -> float:
    """Compute ``path`` with the text reader's lines read beforehand: the time of every stage
    but the reader; the reader's own time is appended to ``reader_times``."""
    import masstrail_plugins.extract.text as text
    from capture.run import compute, read_entry
    from capture.safeio import read_bounded

    read = text.extract
    entry = read_entry(nb, path, read_bounded(path, 2**24), nb.relpath(path))
    t = time.perf_counter()
    lines = read(entry.body)
    reader_times.append(time.perf_counter() - t)
    text.extract = lambda body: lines  # the reader's hook answers with what it read
    try:
        t = time.perf_counter()
        compute(nb, read_entry(nb, path, read_bounded(path, 2**24), nb.relpath(path)))
        return time.perf_counter() - t
    finally:
        text.extract = read


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--corpus", type=Path, default=ROOT.parent / "shared" / "real-corpus")
    ap.add_argument("--rounds", type=int, default=7)
    args = ap.parse_args()
    import os
    import shutil
    import tempfile

    os.environ.setdefault("MASSTRAIL_BLOCK", "names")  # a default install
    with tempfile.TemporaryDirectory() as tmp:
        examples = Path(tmp) / "examples"
        shutil.copytree(ROOT / "example_entries", examples,
                        ignore=shutil.ignore_patterns(".masstrail", "*.waste.*"))  # fmt: skip
        sets = {"example entries": examples}
        if (args.corpus / "entries").is_dir():
            sets["real corpus"] = args.corpus / "entries"
        for name, folder in sets.items():
            fig = measure(folder, args.rounds)
            slow = ", ".join(f"{p} {r:.1f} ×" for r, p in fig["slowest"])
            print(f"{name} ({fig['entries']}): compute {fig['compute_ms']:.2f} ms, floor "
                  f"{fig['floor_ms']:.3f} ms: {fig['ratio']:.1f} × (median of the per-entry "
                  f"ratios); slowest: {slow}")  # fmt: skip
            print(f"    every stage but the text reader {fig['rest']:.1f} × the floor; the "
                  f"reader alone {fig['reader']:.1f} ×")  # fmt: skip


if __name__ == "__main__":
    main()
