"""Amounts in procedure text: ``washed with brine (15 mL)`` becomes a material line.

The built-in extractor reads the commonest way chemists write amounts: a
material name followed by its amounts in brackets, e.g.
``3-iodotoluene (4.36 g, 20.0 mmol)``, ``extracted with MTBE (3 × 40 mL)``.
Each sentence is given the operation it describes (reaction, quench,
extraction, wash, drying, filtration, chromatography, …) and so a stage. The
product's own mention (``to give … (3.2 g, 85%)``) is never counted as an input.
Bracket contents that are not amounts (``(dppf)``, ``(2 h)``, ``(0 °C)``) are
passed over.
"""

from __future__ import annotations

import re

from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import Entry, MaterialLine, Stage
from capture.quantities import AmountError, looks_like_amount, parse_amount

# operation keyword → (operation, stage); the first keyword found in a sentence wins
_OPERATIONS: list[tuple[str, str, Stage]] = [
    (r"chromatograph|column|eluted|eluent|flash", "chromatography", "purification"),
    (r"recrystalli[sz]", "recrystallisation", "purification"),
    (r"triturat", "trituration", "purification"),
    (r"distill", "distillation", "purification"),
    (r"quench", "quench", "workup"),
    (r"extract", "extraction", "workup"),
    (r"wash|rinse", "wash", "workup"),
    (r"dried|drying|dry over", "drying", "workup"),
    (r"filter|filtration|filtered", "filtration", "workup"),
    (r"partition|separat|diluted", "extraction", "workup"),
]
_PRODUCT_WORDS = re.compile(
    r"\b(to give|to afford|afforded|affording|gave|giving|yielded|yielding|obtained|furnish\w*|"
    r"provided|the title compound)\b",
    re.I,
)
_SENTENCE_END = re.compile(r"(?<=[.!?])\s+(?=[A-Z(])|\n\s*\n|\n(?=\s*[-*] )")
# a bracket group, allowing one level of nested brackets inside
_GROUP = re.compile(r"\(((?:[^()]|\([^()]*\))*)\)")
_BOUNDARY = re.compile(
    r"(?:^|[;:]\s|,\s|\s(?:with|in|over|of|and|to|from|using|by|into|onto|added|then|was|were|"
    r"is|through|on|at|for|containing|followed)\s)",
    re.I,
)
_LEADING = re.compile(r"^(?:a|an|the|then|next|finally|additional|more|fresh|further|dry)\s+", re.I)


def _operation(sentence: str) -> tuple[str, Stage]:
    low = sentence.lower()
    for pattern, op, stage in _OPERATIONS:
        if re.search(pattern, low):
            return op, stage
    return "reaction", "reaction"


def _name_before(text: str) -> str | None:
    """The material name that ends where ``text`` ends, or None."""
    last = 0
    for m in _BOUNDARY.finditer(text):
        last = m.end()
    name = text[last:].strip()
    while True:
        stripped = _LEADING.sub("", name)
        if stripped == name:
            break
        name = stripped
    name = name.strip(" ,;:")
    if not name or len(name) > 80 or len(name.split()) > 6 or not re.search(r"[A-Za-z]", name):
        return None
    return name


# words that end in a full stop without ending the sentence
_ABBREVIATIONS = {"sat.", "satd.", "aq.", "ca.", "approx.", "conc.", "dil.", "e.g.", "i.e.",
                  "equiv.", "eq.", "min.", "max.", "no.", "fig.", "vs.", "anh.", "abs.", "temp.",
                  "soln.", "vol.", "wt.", "c.", "resp.", "cf.", "ref.", "mp.", "bp.", "m.p.",
                  "b.p.", "rt.", "st."}  # fmt: skip


def _sentences(body: str) -> list[tuple[int, str]]:
    out, start = [], 0
    for m in _SENTENCE_END.finditer(body):
        before = body[start : m.start()]
        last_word = before.rsplit(None, 1)[-1].casefold() if before.split() else ""
        if "\n\n" not in m.group(0) and last_word in _ABBREVIATIONS:
            continue
        out.append((start, before))
        start = m.end()
    out.append((start, body[start:]))
    return [(s, t) for s, t in out if t.strip()]


def extract(body: str) -> list[MaterialLine]:
    """Every ``name (amount, …)`` mention in ``body``, as material lines."""
    lines: list[MaterialLine] = []
    for start, sentence in _sentences(body):
        if sentence.lstrip().startswith("|"):
            continue  # a table row; tables are read by the readers
        operation, stage = _operation(sentence)
        product_sentence = _PRODUCT_WORDS.search(sentence)
        for m in _GROUP.finditer(sentence):
            content = m.group(1)
            if not looks_like_amount(content):
                continue
            if product_sentence and m.start() > product_sentence.start():
                continue  # "… to give the ester (3.2 g, 85%)": the product, not an input
            name = _name_before(sentence[: m.start()])
            if name is None:
                continue
            amounts = []
            offset = start + m.start(1)
            pos = 0
            for part in re.split(r"(;|,(?=\s))", content):
                here = content.find(part, pos)
                pos = here + len(part)
                if part in {";", ","} or not part.strip():
                    continue
                try:
                    lead = len(part) - len(part.lstrip())
                    span = (offset + here + lead, offset + here + len(part.rstrip()))
                    amounts.append(parse_amount(part, span))
                except AmountError:
                    continue  # "85%" or "1.4 M in cyclohexane": not read here
            if not amounts:
                continue
            lines.append(
                MaterialLine(
                    name=name,
                    role=operation,
                    stage=stage,
                    stated=content.strip(),
                    amounts=amounts,
                    origin="text",
                    evidence=" ".join(sentence.split())[:240],
                )
            )
    return lines


@hookimpl(specname="masstrail_extract_amounts")
def extract_bracketed_amounts(entry: Entry, config: LabConfig) -> list[MaterialLine]:
    """Read ``name (amount, …)`` mentions from the procedure text."""
    return extract(entry.body)
