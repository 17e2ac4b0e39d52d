"""Helpers shared by the tests (imported as a plain module: pytest puts tests/ on sys.path)."""

from __future__ import annotations

import textwrap
from pathlib import Path


def entry_md(front: str, body: str = "") -> str:
    """A Markdown entry from a front-matter block and a body."""
    return f"---\n{textwrap.dedent(front).strip()}\n---\n{textwrap.dedent(body)}"


# a small complete entry: 2.00 g of A in 10 mL of toluene give 1.00 g of product
GOOD = entry_md("""
    title: good
    product: {name: amide, mass: 1.00 g}
    materials:
      - {name: A, amount: 2.00 g, role: reactant}
      - {name: toluene, amount: 10 mL, role: solvent}
    """)


def all_sentences() -> list[str]:
    """Every sentence of the text corpora, the real subset and the example entries."""
    from masstrail_plugins.prose import sentences

    here = Path(__file__).parent
    texts = [p.read_text(encoding="utf-8") for p in (here / "corpus").glob("*.txt")]
    texts += [p.read_text(encoding="utf-8") for p in (here / "corpus" / "real").rglob("*.md")]
    root = here.parent / "example_entries"
    texts += [p.read_text(encoding="utf-8") for p in root.rglob("*") if p.suffix in {".md",
              ".yaml", ".json"} and ".waste." not in p.name]  # fmt: skip
    return [s for t in texts for _, s in sentences(t)]
