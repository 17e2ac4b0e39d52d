"""Precision and recall of the gap rules on the hand-annotated paragraphs.

Run as a script to print the figures:  python tests/corpus/score_gaps.py [-v]
The tests (tests/test_gap_corpus.py) hold the thresholds.
"""

from __future__ import annotations

import sys
import tempfile
from dataclasses import dataclass, field
from pathlib import Path

from capture.chem import material_key
from capture.config import LabConfig
from capture.notebook import Notebook
from capture.scan import scan
from masstrail_plugins.resolve.materials import resolve_builtin

CORPUS = Path(__file__).with_name("gap_paragraphs.txt")
HELD_OUT = Path(__file__).with_name("gap_held_out.txt")


@dataclass
class Item:
    text: str
    front: list[str] = field(default_factory=list)
    expected: list[tuple[str, str]] = field(default_factory=list)


def _item_key(item: str) -> str:
    info = resolve_builtin(item, LabConfig())
    return material_key(info.name if info else item)


# gaps about what was read, not about missing records: the text corpus and the real corpus
# score those (every paragraph here has the same made-up product mass, 0.50 g)
READING_KINDS = {"unread_amount", "no_weighed_input", "conflicting_product_mass",
                 "procedure_elsewhere", "mass_moles_mismatch", "yield_mismatch"}  # fmt: skip


def load(path: Path = CORPUS) -> list[Item]:
    items: list[Item] = []
    for raw in path.read_text(encoding="utf-8").splitlines():
        line = raw.strip()
        if not line or line.startswith("#"):
            continue
        if line.startswith(">"):
            items.append(Item(line[1:].strip()))
        elif line.startswith("+"):
            items[-1].front.append(line[1:].strip())
        elif line.startswith("gap:"):
            kind, item = (p.strip() for p in line[4:].split("|"))
            items[-1].expected.append((kind, _item_key(item)))
    return items


@dataclass
class Score:
    paragraphs: int
    expected: int
    found: int
    matched: int
    misses: list[str]

    @property
    def precision(self) -> float:
        return self.matched / self.found if self.found else 1.0

    @property
    def recall(self) -> float:
        return self.matched / self.expected if self.expected else 1.0


def score(items: list[Item] | None = None) -> Score:
    """Run every paragraph as an entry through the whole pipeline and compare the gaps."""
    items = load() if items is None else items
    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp)
        for n, item in enumerate(items):
            front = ["product: {name: p, mass: 0.50 g}", *item.front]
            (root / f"p{n:03d}.md").write_text(
                "---\n" + "\n".join(front) + "\n---\n" + item.text + "\n"
            )
        report = scan(Notebook.open(root), write=False)
    s = Score(len(items), 0, 0, 0, [])
    for item, result in zip(items, report.results, strict=True):
        assert result.status == "ok", result.error
        got = [(g.kind, _item_key(g.item)) for g in result.gaps if g.kind not in READING_KINDS]
        left = list(item.expected)
        matched = 0
        for g in got:
            if g in left:
                left.remove(g)
                matched += 1
        s.expected += len(item.expected)
        s.found += len(got)
        s.matched += matched
        if left or matched != len(got):
            s.misses.append(
                f"{item.text}\n    want {sorted(item.expected)}\n    got  {sorted(got)}"
            )
    return s


def main(argv: list[str]) -> int:
    for label, path in (("gap corpus", CORPUS), ("held-out", HELD_OUT)):
        s = score(load(path))
        print(f"{label}: {s.paragraphs} paragraphs, {s.expected} expected gaps, {s.found} found")
        print(f"  precision {s.precision:.3f}  recall {s.recall:.3f}")
        if "-v" in argv:
            for miss in s.misses:
                print("  -", miss)
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
