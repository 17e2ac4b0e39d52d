"""Precision and recall of the text extractor on the hand-annotated corpus.

Run as a script to print the figures:  python tests/corpus/score_text.py [-v]
The tests (tests/test_text_corpus.py) hold the thresholds.
"""

from __future__ import annotations

import sys
from dataclasses import dataclass, field
from pathlib import Path

from capture.chem import material_key
from capture.quantities import parse_amount
from masstrail_plugins.extract.text import extract

CORPUS = Path(__file__).with_name("procedure_sentences.txt")
HELD_OUT = Path(__file__).with_name("held_out_sentences.txt")

Mention = tuple[str, float, str, int, str]  # material key, value, unit, multiplier, operation


@dataclass
class Item:
    text: str
    expected: list[Mention] = field(default_factory=list)


def _amount_key(text: str) -> tuple[float, str, int]:
    a = parse_amount(text)
    return (round(a.value, 6), a.unit, a.multiplier)


def load(path: Path = CORPUS) -> list[Item]:
    """The corpus items, in file order."""
    items: list[Item] = []
    for n, raw in enumerate(path.read_text(encoding="utf-8").splitlines(), 1):
        line = raw.strip()
        if not line or line.startswith("#"):
            continue
        if line.startswith(">"):
            items.append(Item(line[1:].strip()))
            continue
        name, amount, operation = (p.strip() for p in line.split("|"))
        try:
            value, unit, mult = _amount_key(amount)
        except ValueError as exc:
            raise ValueError(f"{path.name} line {n}: {exc}") from None
        items[-1].expected.append((material_key(name), value, unit, mult, operation))
    return items


def found(text: str) -> list[Mention]:
    """What the extractor reads from one item, in the corpus's terms."""
    out = []
    for line in extract(text):
        if line.role not in {None, "product"}:
            continue  # set aside: an intermediate, a sample, equipment, unread …
        name = "product" if line.role == "product" else material_key(line.name)
        op = "product" if line.role == "product" else (line.operation or "reaction")
        for a in line.amounts:
            out.append((name, round(a.value, 6), a.unit, a.multiplier, op))
    return out


def _close(a: Mention, b: Mention, with_name: bool) -> bool:
    same_amount = a[2:4] == b[2:4] and abs(a[1] - b[1]) <= 1e-6 * max(1.0, abs(a[1]))
    return same_amount and (not with_name or a[0] == b[0])


def _matches(
    got: list[Mention], want: list[Mention], with_name: bool
) -> list[tuple[Mention, Mention]]:
    pairs, left = [], list(want)
    for g in got:
        for w in left:
            if _close(g, w, with_name):
                pairs.append((g, w))
                left.remove(w)
                break
    return pairs


@dataclass
class Score:
    sentences: int
    expected: int
    extracted: int
    amounts_matched: int
    attributed: int
    operation_right: int
    misses: list[str] = field(default_factory=list)

    @property
    def amount_precision(self) -> float:
        return self.amounts_matched / self.extracted if self.extracted else 1.0

    @property
    def amount_recall(self) -> float:
        return self.amounts_matched / self.expected if self.expected else 1.0

    @property
    def attribution_precision(self) -> float:
        return self.attributed / self.extracted if self.extracted else 1.0

    @property
    def attribution_recall(self) -> float:
        return self.attributed / self.expected if self.expected else 1.0

    @property
    def operation_accuracy(self) -> float:
        return self.operation_right / self.attributed if self.attributed else 1.0


def score(items: list[Item] | None = None) -> Score:
    """Amount-level and attribution-level precision and recall over the corpus."""
    items = load() if items is None else items
    s = Score(len(items), 0, 0, 0, 0, 0)
    for item in items:
        got = found(item.text)
        s.expected += len(item.expected)
        s.extracted += len(got)
        s.amounts_matched += len(_matches(got, item.expected, with_name=False))
        attributed = _matches(got, item.expected, with_name=True)
        s.attributed += len(attributed)
        s.operation_right += sum(1 for g, w in attributed if g[4] == w[4])
        if len(attributed) != len(item.expected) or len(got) != len(item.expected):
            s.misses.append(
                f"{item.text}\n    want {sorted(item.expected)}\n    got  {sorted(got)}"
            )
        else:
            s.misses.extend(
                f"{item.text}\n    operation: want {w[4]} got {g[4]} for {w[0]}"
                for g, w in attributed
                if g[4] != w[4]
            )
    return s


def main(argv: list[str]) -> int:
    for label, path in (("corpus", CORPUS), ("held-out", HELD_OUT)):
        s = score(load(path))
        print(f"{label}: {s.sentences} sentences, {s.expected} expected amounts, "
              f"{s.extracted} extracted")  # fmt: skip
        print(f"  amounts:     precision {s.amount_precision:.3f}  recall {s.amount_recall:.3f}")
        print(f"  attribution: precision {s.attribution_precision:.3f}  "
              f"recall {s.attribution_recall:.3f}")  # fmt: skip
        print(f"  operation:   accuracy {s.operation_accuracy:.3f} (of attributed amounts)")
        if "-v" in argv:
            for miss in s.misses:
                print("  -", miss)
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
