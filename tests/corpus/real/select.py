"""Choose the committed subset of the real corpus (a developer's tool; the test does not run it).

    python tests/corpus/real/select.py ../shared/real-corpus SCANNED_DETAILS.json

Picks, for each form of issue 15 (amount before the name, references, characterisation in the
sentence, long systematic names, unit spellings, solutions, yields, …), up to four records of
the corpus whose text shows the form, preferring records whose reference is complete, and
copies their entries and references into tests/corpus/real/ (CC BY-SA 4.0, see README.md).
"""

from __future__ import annotations

import json
import re
import shutil
import sys
from pathlib import Path

FORMS = {
    "amount before the name": r"\b\d+(?:\.\d+)?\s*(?:g|mg|ml|mL)\s+(?:\([^)]*\)\s+)?of\s",
    "solvent after its volume": r"\bin\s+\d+(?:\.\d+)?\s*(?:ml|mL)\s+[A-Z]",
    "reference to another compound": r"(?:obtained|prepared|described) in (?:Example|Step)|"
    r"\b[Cc]ompound \d",
    "characterisation in the sentence": r"\)[;:,]\s*(?:mp|m\.p\.|1H NMR|MS|HRMS|Rf)",
    "long systematic name": r"[\w\-\[\]\(\),']{70,}\s*\(\d",
    "unit spellings": r"\d\s*(?:g\.|ml\.|gm\b|cc\b|cm3|mmole|mMol)",
    "solution with its strength": r"\(\d+(?:\.\d+)?\s*M (?:solution )?in ",
    "yield in the product's bracket": r"\(\d+(?:\.\d+)?\s*mg,\s*\d+(?:\.\d+)?\s*%\)",
    "washes and extractions": r"(?:washed|extracted) with [^.]*\(\d",
    "general procedure": r"[Gg]eneral [Pp]rocedure|in the same manner as",
}


def main(corpus: Path, details: Path) -> None:
    here = Path(__file__).parent
    refs = {r["reaction_id"]: r for r in json.loads((corpus / "reference.json").read_text())}
    scored = {r["reaction_id"]: r for r in json.loads(details.read_text())["reactions"]}
    chosen: dict[str, str] = {}
    for form, pattern in FORMS.items():
        rx = re.compile(pattern)
        hits = [
            rid
            for rid in sorted(refs)
            if rid not in chosen
            and refs[rid]["complete"]
            and rx.search((corpus / "entries" / f"{rid}.md").read_text())
        ]
        hits.sort(
            key=lambda rid: (refs[rid]["subset"] != "uspto", len(scored[rid]["missed"]) > 0, rid)
        )  # read well today: the test holds what was gained
        for rid in hits[:4]:
            chosen[rid] = form
    for rid in sorted({r for r in refs if refs[r]["subset"] == "eln" and refs[r]["complete"]})[:6]:
        chosen.setdefault(rid, "notebook record")
    (here / "entries").mkdir(exist_ok=True)
    for rid in chosen:
        shutil.copy(corpus / "entries" / f"{rid}.md", here / "entries" / f"{rid}.md")
    subset = [dict(refs[rid], form=chosen[rid]) for rid in sorted(chosen)]
    (here / "reference.json").write_text(json.dumps(subset, indent=1, ensure_ascii=False) + "\n")
    print(f"{len(chosen)} records")


if __name__ == "__main__":
    main(Path(sys.argv[1]), Path(sys.argv[2]))
