"""A sentence's operation words and product clauses: which operation a mention belongs to,
and whether it lies where the sentence names its product (:class:`Sentence`, read once per
sentence by the text reader, ``text.py``)."""

from __future__ import annotations

import re

from capture.models import Stage
from masstrail_plugins.prose import OPERATION_STAGE, OPERATION_STEMS, by_first_letter, led

# words that introduce the product: the mention after them is an output, not an input
_PRODUCT_WORDS = {"give", "gave", "giving", "gives", "afford", "afforded", "affording", "affords",
                  "provide", "provided", "providing", "provides", "furnish", "furnished",
                  "furnishing", "yielded", "yielding", "obtained", "obtain", "obtaining",
                  "leaving", "left", "to yield", "produce", "produces", "producing",
                  "produced"}  # fmt: skip
# "obtained in Example 3", "obtained from step 2": a reference, not the product; "an
# autoclave provided with a stirrer": equipped, not a product
_NOT_PRODUCT_AFTER = re.compile(
    r"\s+(?:in|from|as\s+(?:described|in)|according|above|by\s+the|following|under|with)\b",
    re.I,
)
# "the solution thus obtained was added to …": what was made before, not this clause's product
_ADJECTIVAL = re.compile(r"\b(?:thus|so|just|previously)\s+$", re.I)
# a product word's reach ends with its clause
_CLAUSE_END = re.compile(
    r",\s*which\b|;|\band\s+then\b|\bthen\b|,\s*and\s+(?=\w+\s+(?:was|were))"
    # "to give a residue which was triturated with Et2O (2 × 5 mL)": what was done to it next,
    # with more material (not "which was dried in vacuo (1.5 g)": that is the output's mass)
    r"|\b(?:which|that)\s+(?:was|were)\s+(?:then\s+|further\s+|subsequently\s+)?"
    r"(?:triturated|washed|rinsed|dissolved|redissolved|suspended|slurried|extracted|"
    r"re-?crystalli[sz]ed|crystalli[sz]ed|treated|diluted|taken\s+up|partitioned|"
    r"chromatographed|purified|stirred|heated|refluxed|mixed|combined)\b"
)

# "… and the product was recrystallised": an operation after this belongs to another clause
_NEW_CLAUSE = re.compile(r"\band (?:the|then|a|an|this|it)\b|;")

# "an oven-dried vial": glassware, not a drying step
_GLASSWARE_DRIED = re.compile(r"\b(?:oven|flame|heat)[- ]$", re.I)

# one regular expression over the lower-cased sentence finds the operation and product words
# (tests hold it to the flat alternation it was first written as)
_KEYWORD_FIRSTS = "".join(sorted({w[0] for w in [*OPERATION_STEMS, *_PRODUCT_WORDS]}))
_KEYWORDS = led(_KEYWORD_FIRSTS, re.compile(
    rf"(?<![\w-])(?:(?P<op>{by_first_letter(OPERATION_STEMS)})"
    rf"|(?P<product>{by_first_letter(_PRODUCT_WORDS)})(?!\w))"
))  # fmt: skip


class Sentence:
    """One sentence read once: its operation words and where its product clauses are."""

    def __init__(self, text: str) -> None:
        self.text = text
        self._evidence: str | None = None
        self.operations: list[tuple[int, str, Stage]] = []
        self.products: list[tuple[int, int]] = []  # (product word's end, its clause's end)
        for m in _KEYWORDS.finditer(text.lower()):
            stem = m.group("op")
            if stem is not None:
                if stem == "dried" and _GLASSWARE_DRIED.search(text, 0, m.start()):
                    continue  # "an oven-dried vial": glassware, not a drying step
                op = OPERATION_STEMS[stem]
                self.operations.append((m.start(), op, OPERATION_STAGE[op]))
            elif not _NOT_PRODUCT_AFTER.match(text, m.end()) and not _ADJECTIVAL.search(
                    text, max(0, m.start() - 12), m.start()):  # fmt: skip
                end = _CLAUSE_END.search(text, m.end())
                self.products.append((m.end(), end.start() if end else len(text)))

    def in_product_clause(self, pos: int) -> bool:
        return self.product_clause(pos) is not None

    def product_clause(self, pos: int) -> int | None:
        """Which product clause ``pos`` lies in (its product word's end), if any: the nearest
        product word before it ("… to give a solid, recrystallised to give X (1.2 g)": X is
        the second clause's product, not a second output of the first)."""
        return max((a for a, b in self.products if a <= pos < b), default=None)

    @property
    def evidence(self) -> str:
        """The sentence with its white space folded, as evidence for its mentions."""
        if self._evidence is None:
            folded = " ".join(self.text[:600].split())
            if len(folded) < 300 and len(self.text) > 600:
                folded = " ".join(self.text.split())
            self._evidence = folded[:300]
        return self._evidence

    def operation(self, pos: int) -> tuple[str, Stage]:
        """The operation of a mention at ``pos``: the nearest word before it, else the first
        after it in the same clause ("Methanol (5 mL) was used to rinse the flask", but not
        "heated in ethanol (20 mL) and the product was recrystallised")."""
        hit = None
        for op in self.operations:
            if op[0] < pos:
                hit = op
            elif hit is None:
                if not _NEW_CLAUSE.search(self.text, pos, op[0]):
                    hit = op
                break
            else:
                break
        return (hit[1], hit[2]) if hit else ("reaction", "reaction")
