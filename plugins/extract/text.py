"""Amounts in procedure text, read the way chemists write them.

The extractor works sentence by sentence, in this order:

1. **Sentences.** The text is split at full stops that end a sentence (not
   the one in ``sat. aq.`` or ``ca.``). Characterisation sentences (NMR, MS,
   IR, mp, Rf, TLC) are passed over whole.
2. **Bracket groups.** Each ``(…)`` whose parts include an amount is a
   mention. Its parts are read one by one: amounts (``4.36 g``, ``3 × 40 mL``,
   ``2.0 equiv``), solution descriptions (``1.4 M in cyclohexane``,
   ``60% in mineral oil``), mixture descriptions (``cyclohexane/acetone 9:1``)
   and material names (``SiO2`` in ``(SiO2, 35 g; …)``). A name inside the
   bracket starts a new material; amounts attach to the material before them.
3. **The name before the bracket** is the text back to the nearest boundary
   word (with, in, over, of, and, …) or comma-and-space, with grades
   (``dry``, ``anhydrous``) dropped. Operation words (``dried``,
   ``chromatography``), equipment (``vial``, ``flask``), intermediates
   (``the crude residue``, ``the combined filtrates``), aliquots and baths are
   not materials.
4. **Mixtures** (``20% acetone in heptane``, ``toluene/MeOH 19:1``,
   ``1:1 pentane/Et2O``) are split by volume fraction into one line per
   component (ideal mixing, said in the line's ``note``).
5. **Operation and stage** come from the nearest operation word before the
   mention in its sentence (else the first one after it): reaction, quench,
   extraction, wash, drying, filtration, chromatography, recrystallisation,
   trituration, distillation.
6. **The product** (``to give … (2.84 g, 81%)``) comes back as a line with
   role ``product``; the pipeline uses it for the product mass when the front
   matter gives none, and never counts it as an input.
"""

from __future__ import annotations

import contextlib
import functools
import re

from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import AmountMention, Entry, MaterialLine, Stage
from capture.quantities import UNITS, AmountError, normalise, parse_amount, plain_amount
from masstrail_plugins.prose import (
    CHAR_HINT,
    CHARACTERISATION,
    OPERATION_STAGE,
    OPERATION_STEMS,
    clean_name,
    sentences,
)

# The hot path works on words, not on large case-insensitive regular expressions:
# a sentence is cut into words once, and each word is looked up in small tables.


# words that introduce the product: the mention after them is an output, not an input
_PRODUCT_WORDS = {"give", "gave", "giving", "afford", "afforded", "affording", "provide",
                  "provided", "providing", "furnish", "furnished", "furnishing", "yielded",
                  "yielding", "obtained", "leaving", "left"}  # fmt: skip
# a bracket group, allowing one level of nested brackets inside
_GROUP = re.compile(r"\(((?:[^()]++|\([^()]*+\))*+)\)")  # possessive: no backtracking
_WORD = re.compile(r"\S+")
# "… and the product was recrystallised": an operation after this belongs to another clause
_NEW_CLAUSE = re.compile(r"\band (?:the|then|a|an|this|it)\b|;")
# a name ends at the word after one of these (or after a word ending in , ; :)
_BOUNDARY_WORDS = {"with", "in", "over", "of", "and", "to", "from", "using", "by", "into", "onto",
                   "added", "then", "was", "were", "is", "are", "through", "on", "at", "for",
                   "containing", "followed", "via", "after", "before", "under", "as", "or",
                   "plus", "while", "whereupon", "which", "that", "dropwise", "portionwise",
                   "slowly", "treated", "charged", "eluting", "eluted", "afforded", "gave",
                   "between", "washing", "rinsing", "quenched", "diluted", "extracted", "washed",
                   "rinsed", "dissolved", "suspended", "stirred", "heated", "cooled",
                   "recrystallised", "recrystallized", "triturated", "flushed", "poured",
                   "loaded", "passed", "filtered", "dried", "purified", "including", "namely",
                   "also"}  # fmt: skip
_SOLUTION_PART = re.compile(
    r"^(?P<c>\d+(?:[.,]\d+)?)\s*(?P<u>M|mM|mol/L)\s+(?:solution\s+)?in\s+(?P<solv>.+)$"
)
_FRACTION_PART = re.compile(
    r"^(?P<p>\d+(?:[.,]\d+)?)\s*(?:wt\s*)?%\s*(?:w/w\s+|wt\s+)?(?:dispersion\s+|suspension\s+|"
    r"solution\s+)?in\s+(?P<solv>.+)$",
    re.I,
)
_DIGIT = re.compile(r"\d")
# what an amount can start with: a digit, a qualifier (ca., approx., ~, ≈) or a decimal point
_AMOUNT_START = re.compile(r"[\d.,~≈∼<>]|(?:ca|c\.|approx|about|circa)", re.I)
_PART_SEP = re.compile(r";|,(?=\s)")
_BARE_NUMBERS = re.compile(r"[\d.,:\s]+")
_PERCENT_ONLY = re.compile(r"^[<>~≈]?\s*\d+(?:[.,]\d+)?\s*%(?:\s*\w+)?$")
_NAME_TOKEN = r"[A-Za-z0-9(\[][\w\-'·,()\[\]]*"
_RATIO = r"\d+(?:\.\d+)?(?:\s*:\s*\d+(?:\.\d+)?)+"
_MIX_PERCENT = re.compile(
    rf"(?P<p>\d+(?:\.\d+)?)\s*%\s*(?:v/v\s+)?(?P<a>{_NAME_TOKEN}(?:\s+[a-z][\w\-]*)?)\s+in\s+"
    rf"(?P<b>{_NAME_TOKEN}(?:\s+[a-z][\w\-]*)?)\s*$"
)
_MIX_SLASH_RATIO = re.compile(
    rf"(?P<names>{_NAME_TOKEN}(?:\s*/\s*{_NAME_TOKEN})+)\s*\(?(?P<r>{_RATIO})\)?\s*(?:v/v)?\s*$"
)
_MIX_RATIO_SLASH = re.compile(
    rf"(?P<r>{_RATIO})\s*(?:v/v\s+)?(?P<names>{_NAME_TOKEN}(?:\s*/\s*{_NAME_TOKEN})+)\s*$"
)
_AQUEOUS_SOLUTION = re.compile(
    r"^(?:\d+(?:\.\d+)?\s*(?:M|N)\s+\S|\d+(?:\.\d+)?\s*%\s*(?:aq\.?|aqueous)\s+\S|"
    r"(?:sat\.?|saturated)\s+(?:aq\.?|aqueous)\s+\S|(?:aq\.?|aqueous)\s+\S)"
)


# one regular expression over the lower-cased sentence finds the operation and product words
_KEYWORDS = re.compile(
    r"(?<![\w-])(?:(?P<op>" + "|".join(sorted(OPERATION_STEMS, key=len, reverse=True)) + r")"
    r"|(?P<product>" + "|".join(sorted(_PRODUCT_WORDS, key=len, reverse=True)) + r")(?!\w))"
)


class _Sentence:
    """One sentence read once: where its operation words and its product word are."""

    def __init__(self, text: str) -> None:
        self.text = text
        self._evidence: str | None = None
        self.operations: list[tuple[int, str, Stage]] = []
        self.product_at: int | None = None
        self.product_end = 0
        for m in _KEYWORDS.finditer(text.lower()):
            stem = m.group("op")
            if stem is not None:
                op = OPERATION_STEMS[stem]
                self.operations.append((m.start(), op, OPERATION_STAGE[op]))
            elif self.product_at is None:
                self.product_at, self.product_end = m.start(), m.end()

    @property
    def evidence(self) -> str:
        """The sentence with its white space folded, as evidence for its mentions."""
        if self._evidence is None:
            # fold the white space of the first 600 characters; all of it if that is too short
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


_MAX_NAME_WORDS = 6


def _name_before(text: str) -> str | None:
    """The material name that ends where ``text`` ends, or None.

    Walks back word by word to the nearest boundary: a boundary word (with, in, over, …)
    or a word that ends in a comma, semicolon or colon.
    """
    # the walk below looks at no more than the last _MAX_NAME_WORDS + 3 words
    words = text[-200:].rsplit(None, _MAX_NAME_WORDS + 3)
    if words and (len(text) > 200 or len(words) > _MAX_NAME_WORDS + 3):
        words = words[1:]  # the first word may be cut, or holds all the words out of reach
    start = 0
    for i in range(len(words) - 1, -1, -1):
        w = words[i]
        if w.lower() in _BOUNDARY_WORDS:
            start = i + 1
            break
        if w[-1] in ",;:":
            start = i + 1
            break
        if len(words) - i > _MAX_NAME_WORDS + 2:
            return None  # no boundary in reach: not a name
    else:
        if len(text) > 200:
            return None
    return clean_name(" ".join(words[start:]))


def _mixture_before(text: str) -> tuple[str, list[tuple[str, float]]] | None:
    """A mixture named at the end of ``text``: (as written, [(component, volume fraction)])."""
    text = text[-120:]
    if "%" not in text and "/" not in text:
        return None
    m = _MIX_PERCENT.search(text) if "%" in text else None
    if m:
        p = float(m.group("p")) / 100
        if 0 < p < 1:
            a, b = clean_name(m.group("a")), clean_name(m.group("b"))
            if a and b:
                return m.group(0).strip(), [(a, p), (b, 1 - p)]
    if "/" not in text:
        return None
    for rx in (_MIX_SLASH_RATIO, _MIX_RATIO_SLASH):
        m = rx.search(text)
        if not m:
            continue
        names = [n.strip() for n in m.group("names").split("/")]
        ratio = [float(x) for x in m.group("r").replace(" ", "").split(":")]
        if len(names) != len(ratio) or sum(ratio) <= 0:
            continue
        cleaned = [clean_name(n) for n in names]
        if all(cleaned):
            total = sum(ratio)
            return m.group(0).strip(), [(c, r / total) for c, r in zip(cleaned, ratio, strict=True)]
    return None


def _parts(content: str, offset: int) -> list[tuple[str, int]]:
    """Split bracket content at ';' and ', ' (a comma with a space), keeping offsets."""
    out = []
    pos = 0
    for m in _PART_SEP.finditer(content + ";"):
        piece = content[pos : m.start()]
        lead = len(piece) - len(piece.lstrip())
        if piece.strip():
            out.append((piece.strip(), offset + pos + lead))
        pos = m.end()
    return out


class _Group:
    """One material inside a bracket, as it is being read."""

    __slots__ = ("amounts", "mixture", "name", "solvent", "texts")

    def __init__(self, name: str | None, mixture: tuple[str, list] | None = None) -> None:
        self.name = name
        self.mixture = mixture
        self.amounts: list[AmountMention] = []
        self.solvent: str | None = None
        self.texts: list[str] = []


# "2.76 g", "3 × 40 mL" or a yield "81%", then ", " or "; " or the end of the bracket
_PLAIN_AMOUNT = re.compile(r"(?:(\d+) ?[×xX*] ?)?(\d+(?:\.\d+)?) ?([A-Za-z]+|%)(?:[,;] |$)")


def _plain_group(content: str, offset: int, name: str) -> _Group | None:
    """The commonest brackets, "(2.76 g, 20.0 mmol)" and "(3 × 40 mL)": plain amounts only
    (a percentage among them is a yield or a purity and is passed over), read in one pass.
    None when the bracket holds anything else; :func:`_read_group` then reads it part by part.
    """
    group = _Group(name)
    pos = 0
    for m in _PLAIN_AMOUNT.finditer(content):
        if m.start() != pos:
            return None
        pos = m.end()
        unit = m.group(3)
        if unit == "%":
            continue
        begin = m.start(1) if m.group(1) else m.start(2)
        text = content[begin : m.end(3)]
        amount = plain_amount(
            m.group(2),
            unit,
            text,
            (offset + begin, offset + m.end(3)),
            int(m.group(1)) if m.group(1) else 1,
        )
        if amount is None:
            return None
        group.amounts.append(amount)
        group.texts.append(text)
    return group if pos == len(content) and group.amounts else None


# Every amount in a bracket ends a part (before ";", ", " or the bracket's end) with a number
# and a unit, or is a solution's "1.4 M in …". An ASCII bracket with neither ("PPh3",
# "2 h", "24 L collected for reuse") holds no amount and is passed over without reading.
_UNIT_WORDS = "|".join(sorted((re.escape(u) for u in UNITS if u.isascii()), key=len, reverse=True))
_MAYBE_AMOUNT = re.compile(
    rf"\d\s*(?:(?:{_UNIT_WORDS})\s*(?:;|,\s|$)|(?:M|mM|mol/L)\s+(?:solution\s+)?in\s)"
)


def _read_group(content: str, offset: int, name: str | None, mixture) -> list[_Group]:
    if name is not None and mixture is None:
        plain = _plain_group(content, offset, name)
        if plain is not None:
            return [plain]
    if content.isascii() and not _MAYBE_AMOUNT.search(content):
        return []
    return _read_parts(content, offset, name, mixture)


def _read_parts(content: str, offset: int, name: str | None, mixture) -> list[_Group]:
    """Read a bracket part by part: amounts, solutions, mixtures and names (the general path,
    which the two shortcuts in :func:`_read_group` must agree with)."""
    groups = [_Group(name, mixture)]
    for part, start in _parts(content, offset):
        span = (start, start + len(part))
        if _AMOUNT_START.match(part):
            try:
                groups[-1].amounts.append(parse_amount(part, span))
                groups[-1].texts.append(part)
                continue
            except AmountError:
                pass
        norm = normalise(part)
        m = _SOLUTION_PART.match(norm)
        if m:
            with contextlib.suppress(AmountError):
                groups[-1].amounts.append(parse_amount(f"{m.group('c')} {m.group('u')}", span))
            groups[-1].solvent = clean_name(m.group("solv"))
            groups[-1].texts.append(part)
            continue
        m = _FRACTION_PART.match(norm)
        if m:
            groups[-1].solvent = clean_name(m.group("solv"))
            groups[-1].texts.append(part)
            continue
        if _PERCENT_ONLY.match(norm) or _BARE_NUMBERS.fullmatch(norm):
            continue  # a yield, a purity or a bare ratio
        mix = _mixture_before(norm)
        if mix is not None:
            groups.append(_Group(mix[0], mix))
            continue
        cleaned = clean_name(norm)
        if cleaned is None:
            continue
        if groups[-1].name is None and not groups[-1].amounts:
            groups[-1].name = cleaned  # "(Na2SO4, 5 g)" after "dried"
        elif groups[-1].amounts:
            groups.append(_Group(cleaned))  # "(SiO2, 35 g; DCM, 250 mL)": the next material
        # else a description of the material before the bracket: "Carbon dioxide (dry ice, …)"
    return [g for g in groups if g.amounts and g.name]


@functools.lru_cache(maxsize=4096)
def _aqueous(name: str | None) -> bool:
    return bool(name and _AQUEOUS_SOLUTION.match(name))


def _lines_for(group: _Group, operation: str, stage: Stage, evidence: str) -> list[MaterialLine]:
    stated = ", ".join(group.texts)
    if group.solvent is None and _aqueous(group.name):
        group.solvent = "water"  # "3 M NaOH", "10% aq. K2CO3": aqueous by convention
    if group.mixture is None:
        return [
            MaterialLine(
                name=group.name,
                operation=operation,
                stage=stage,
                stated=stated,
                amounts=group.amounts,
                origin="text",
                evidence=evidence,
                solvent=group.solvent,
            )
        ]
    written, components = group.mixture
    volumes = [a for a in group.amounts if a.kind == "volume"]
    if not volumes:
        return []
    out = []
    for comp, fraction in components:
        scaled = [
            AmountMention(
                value=a.value * fraction,
                unit=a.unit,
                kind=a.kind,
                multiplier=a.multiplier,
                approximate=a.approximate,
                low=None if a.low is None else a.low * fraction,
                high=None if a.high is None else a.high * fraction,
                text=a.text,
                span=a.span,
            )
            for a in volumes
        ]
        out.append(
            MaterialLine(
                name=comp,
                operation=operation,
                stage=stage,
                stated=f"{written}, {stated}",
                amounts=scaled,
                origin="text",
                evidence=evidence,
                note=f"{fraction:.0%} by volume of {volumes[0].text} of '{written}' "
                "(ideal mixing assumed)",
            )
        )
    return out


def extract(body: str) -> list[MaterialLine]:
    """Every material with an amount in ``body``; the product comes back with role 'product'."""
    lines: list[MaterialLine] = []
    for start, text in sentences(body):
        if "(" not in text or text.lstrip().startswith("|"):
            continue  # nothing in brackets, or a table row (read by the readers)
        sentence = None
        product_taken = False
        for m in _GROUP.finditer(text):
            content = m.group(1)
            if not _DIGIT.search(content):
                continue
            if sentence is None:  # the first bracket with a number in it
                if CHAR_HINT.search(text) and CHARACTERISATION.search(text):
                    break  # characterisation data
                sentence = _Sentence(text)
            before = text[max(0, m.start() - 240) : m.start()]
            evidence = sentence.evidence
            if sentence.product_at is not None and m.start() > sentence.product_at:
                if product_taken:
                    continue
                mass = _first_mass(content, start + m.start(1))
                if mass is not None:
                    product_taken = True
                    lines.append(
                        MaterialLine(
                            name=_name_before(text[sentence.product_end : m.start()]) or "product",
                            role="product",
                            stated=mass.text,
                            amounts=[mass],
                            origin="text",
                            evidence=evidence,
                        )
                    )
                continue
            mixture = _mixture_before(before)
            name = mixture[0] if mixture else _name_before(before)
            operation, stage = sentence.operation(m.start())
            for group in _read_group(content, start + m.start(1), name, mixture):
                lines.extend(_lines_for(group, operation, stage, evidence))
    return lines


def _first_mass(content: str, offset: int) -> AmountMention | None:
    for part, start in _parts(content, offset):
        try:
            a = parse_amount(part, (start, start + len(part)))
        except AmountError:
            continue
        if a.kind == "mass":
            return a
    return None


@hookimpl(specname="masstrail_extract_amounts")
def extract_procedure_amounts(entry: Entry, config: LabConfig) -> list[MaterialLine]:
    """Read materials and their amounts from the procedure text."""
    return extract(entry.body)
