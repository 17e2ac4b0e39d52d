"""Benchmark: procedure-text extraction speed, beside a floor measured in the same run.

    python bench/text_speed.py [--mb 1] [--repeat 7]

The text is made from the annotated corpus (tests/corpus/procedure_sentences.txt),
sentences drawn at random into paragraphs, with every number changed at random so
that no cache sees the same amount twice, and from the example entries' procedure
text, numbers changed the same way. Each paragraph (or example body) is one entry's
body and the extractor is called once per body, as the pipeline calls it. One core,
one process; the floor and the extractor run in turn and the best of the runs is kept.

Floor: the least work any extractor must do on this text: walk every sentence
break and every bracket with one regular expression each, and slice each
bracket's content. A second figure, "models", is the time to build the output
models (AmountMention, MaterialLine) alone from values already read: a bound
that no extractor returning those models can beat. The figures that matter are
the extractor's MB/s on the example entries' text (target ≥ 2 MB/s), its amounts
per second, and its ratio to the floor.
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

from masstrail_plugins.extract.text import extract  # noqa: E402

_NUM = re.compile(r"\d+\.\d+|\d+")

# Sentences with no amounts, as they stand between the amounts in real entries:
# observations, conditions, work-up steps without quantities, characterisation.
PROSE = [
    "The mixture was stirred at room temperature for 16 h.",
    "A pale yellow precipitate formed after about 10 min and the suspension thickened.",
    "TLC showed complete consumption of the starting material.",
    "The flask was fitted with a reflux condenser and a nitrogen inlet.",
    "The solution turned deep red on addition and then faded to orange over 20 min.",
    "The layers were separated and the aqueous layer was set aside for neutralisation.",
    "The solvent was removed under reduced pressure at 40 °C.",
    "The reaction was monitored by LC-MS every hour until no further change was seen.",
    "After cooling to room temperature the mixture was left to stand overnight.",
    "Gas evolution ceased after approximately 30 min.",
    "The internal temperature rose to 12 °C during the addition and was held below 15 °C.",
    "The product is stored under argon in the freezer.",
    "1H NMR (400 MHz, CDCl3) δ 7.52 (d, J = 8.6 Hz, 2H), 7.31 (m, 5H), 6.97 (d, J = 8.6 Hz, "
    "2H), 4.62 (d, J = 5.7 Hz, 2H), 3.85 (s, 3H).",
    "13C NMR (101 MHz, CDCl3) δ 166.9, 162.2, 138.4, 128.9, 128.8, 127.9, 127.6, 126.7, "
    "113.8, 55.4, 44.1.",
    "HRMS (ESI) m/z [M+H]+ calcd 242.1176, found 242.1172.",
    "Rf 0.42 (30% EtOAc in heptane); mp 118–120 °C.",
]


def make_text(megabytes: float, seed: int = 7, prose: bool = False) -> str:
    """Corpus sentences with jittered numbers, in paragraphs separated by blank lines; with
    ``prose``, one amount-free sentence between every two of them."""
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
        picked = []
        for _ in range(rng.randint(3, 8)):
            picked.append(_NUM.sub(jitter, rng.choice(sentences)))
            if prose:
                picked.append(rng.choice(PROSE))
        para = " ".join(picked)
        paras.append(para)
        size += len(para.encode()) + 2
    return "\n\n".join(paras)


def example_text(megabytes: float, seed: int = 11) -> str:
    """The procedure text of the example entries, numbers jittered, repeated to ``megabytes``."""
    from capture.notebook import Notebook

    nb = Notebook.open(ROOT / "example_entries")
    bodies = []
    for path in nb.entry_files():
        data = path.read_bytes()
        entry = nb.pm.hook.masstrail_read_entry(
            path=path, data=data, relpath=nb.relpath(path), config=nb.config
        )
        bodies.append(entry.body)
    rng = random.Random(seed)

    def jitter(m: re.Match) -> str:
        s = m.group(0)
        if "." in s:
            return f"{rng.uniform(0.1, 99):.{len(s.split('.')[1])}f}"
        return str(rng.randint(1, 99))

    out, size = [], 0
    while size < megabytes * 1_000_000:
        body = _NUM.sub(jitter, rng.choice(bodies))
        out.append(body)
        size += len(body.encode()) + 2
    return "\n\n".join(out)


_BREAK = re.compile(r"(?<=[.!?])\s+(?=[A-Z0-9(])")
_BRACKET = re.compile(r"\(([^()]*)\)")


def floor(text: str) -> int:
    n = sum(1 for _ in _BREAK.finditer(text))
    return n + sum(len(m.group(1)) for m in _BRACKET.finditer(text))


def model_floor(lines) -> None:
    """Build the output models again from already-read values: the cost of the models alone."""
    from capture.models import AmountMention, MaterialLine

    for line in lines:
        amounts = [
            AmountMention(
                value=a.value,
                unit=a.unit,
                kind=a.kind,
                multiplier=a.multiplier,
                approximate=a.approximate,
                low=a.low,
                high=a.high,
                text=a.text,
                span=a.span,
            )
            for a in line.amounts
        ]
        MaterialLine(name=line.name, operation=line.operation, stage=line.stage,
                     stated=line.stated, amounts=amounts, origin="text",
                     evidence=line.evidence)  # fmt: skip


def best_of(fn, text, repeat: int) -> float:
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn(text)
        times.append(time.perf_counter() - t)
    return min(times)


def bodies_of(text: str) -> list[str]:
    """The text as entry bodies: one per paragraph."""
    return [b for b in text.split("\n\n") if b.strip()]


def per_body(fn):
    def run(bodies):
        for body in bodies:
            fn(body)

    return run


def race(fns: dict, arg, repeat: int) -> dict[str, float]:
    """Best time of each of ``fns`` over ``repeat`` rounds, run in turn within each round,
    so a slow spell of the machine hits them alike."""
    best = dict.fromkeys(fns, float("inf"))
    for _ in range(repeat):
        for name, fn in fns.items():
            t = time.perf_counter()
            fn(arg)
            best[name] = min(best[name], time.perf_counter() - t)
    return best


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--mb", type=float, default=1.0, help="megabytes of each text (default 1)")
    ap.add_argument("--repeat", type=int, default=7, help="rounds; the best is kept")
    args = ap.parse_args()
    texts = (
        ("example entries' procedure text", lambda: example_text(args.mb)),
        ("corpus with prose between", lambda: make_text(args.mb, prose=True)),
        ("corpus sentences only (dense)", lambda: make_text(args.mb)),
    )
    for label, build in texts:
        bodies = bodies_of(build())
        mb = sum(len(b.encode()) for b in bodies) / 1e6
        extract(bodies[0])  # warm: the unit registry and the name cache's first entries
        best = race({"floor": per_body(floor), "extractor": per_body(extract)}, bodies,
                    args.repeat)  # fmt: skip
        lines = [line for body in bodies for line in extract(body)]
        amounts = sum(len(line.amounts) for line in lines)
        t_models = best_of(model_floor, lines, args.repeat)
        t_floor, t_extract = best["floor"], best["extractor"]
        print(f"{label}: {mb:.2f} MB in {len(bodies)} bodies, {amounts} amounts "
              f"({mb * 1e6 / amounts:.0f} bytes each)")  # fmt: skip
        print(f"  floor:     {mb / t_floor:8.1f} MB/s  ({t_floor:.3f} s)")
        print(f"  models:    {mb / t_models:8.2f} MB/s  ({t_models:.3f} s): building the output "
              "models alone, from values already read")  # fmt: skip
        print(f"  extractor: {mb / t_extract:8.2f} MB/s  ({t_extract:.3f} s), "
              f"{amounts / t_extract:,.0f} amounts/s, {t_extract / t_floor:.0f} × floor; "
              f"≥ 2 MB/s: {'met' if mb / t_extract >= 2 else 'NOT met'}")  # fmt: skip
    return 0


if __name__ == "__main__":
    sys.exit(main())
