"""Benchmark: procedure-text extraction speed, beside a floor measured in the same run.

    python bench/text_speed.py [--mb 2] [--repeat 3]

The text is made from the annotated corpus (tests/corpus/procedure_sentences.txt),
sentences drawn at random into paragraphs, with every number changed at random so
that no cache sees the same amount twice. One core, one process.

Floor: the least work any extractor must do on this text: decode nothing, walk
every sentence break and every bracket with one regular expression each, and
slice each bracket's content. The figure that matters is the extractor's MB/s
(target ≥ 2 MB/s) and its ratio to the floor.
"""

from __future__ import annotations

import argparse
import random
import re
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "tests" / "corpus"))

from score_text import CORPUS, load  # noqa: E402

from masstrail_plugins.text import extract  # noqa: E402

_NUM = re.compile(r"\d+\.\d+|\d+")


def make_text(megabytes: float, seed: int = 7) -> str:
    rng = random.Random(seed)
    sentences = [item.text for item in load(CORPUS)]

    def jitter(m: re.Match) -> str:
        s = m.group(0)
        if "." in s:
            digits = len(s.split(".")[1])
            return f"{rng.uniform(0.1, 99):.{digits}f}"
        return str(rng.randint(1, 99))

    paras, size, target = [], 0, int(megabytes * 1_000_000)
    while size < target:
        para = " ".join(_NUM.sub(jitter, rng.choice(sentences)) for _ in range(rng.randint(3, 8)))
        paras.append(para)
        size += len(para.encode()) + 2
    return "\n\n".join(paras)


_BREAK = re.compile(r"(?<=[.!?])\s+(?=[A-Z0-9(])")
_BRACKET = re.compile(r"\(([^()]*)\)")


def floor(text: str) -> int:
    n = sum(1 for _ in _BREAK.finditer(text))
    return n + sum(len(m.group(1)) for m in _BRACKET.finditer(text))


def best_of(fn, text: str, repeat: int) -> float:
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn(text)
        times.append(time.perf_counter() - t)
    return min(times)


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--mb", type=float, default=2.0, help="megabytes of text (default 2)")
    ap.add_argument("--repeat", type=int, default=3, help="runs; the best is kept")
    args = ap.parse_args()
    text = make_text(args.mb)
    mb = len(text.encode()) / 1e6
    t_floor = best_of(floor, text, args.repeat)
    t_extract = best_of(extract, text, args.repeat)
    mentions = sum(len(line.amounts) for line in extract(text))
    print(f"text: {mb:.2f} MB, {mentions} amounts read")
    print(f"floor:     {mb / t_floor:8.1f} MB/s  ({t_floor:.3f} s)")
    print(f"extractor: {mb / t_extract:8.2f} MB/s  ({t_extract:.3f} s)  "
          f"= {t_extract / t_floor:.0f} × floor; target ≥ 2 MB/s: "
          f"{'met' if mb / t_extract >= 2 else 'NOT met'}")  # fmt: skip
    return 0


if __name__ == "__main__":
    sys.exit(main())
