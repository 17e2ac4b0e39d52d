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
import re

from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import AmountMention, Entry, MaterialLine, Stage
from capture.quantities import AmountError, normalise, parse_amount

# operation keyword → (operation, stage)
_OPERATIONS: list[tuple[str, str, Stage]] = [
    (r"chromatograph|\bcolumn\b|\belut|\beluent|\bflash\b|\bsilica gel\b|\bplug\b",
     "chromatography", "purification"),
    (r"recrystalli[sz]|crystalli[sz]", "recrystallisation", "purification"),
    (r"triturat", "trituration", "purification"),
    (r"distil", "distillation", "purification"),
    (r"quench", "quench", "workup"),
    (r"extract|partition", "extraction", "workup"),
    (r"\bwash|\brins", "wash", "workup"),
    (r"(?<![-\w])dried\b|(?<![-\w])drying\b|\bdry over\b", "drying", "workup"),
    (r"filt(er|ra)|\bcelite\b|suction", "filtration", "workup"),
    (r"\bdilut|\bpoured\b|\bseparat|\bacidif|\bbasif|\bneutrali", "extraction", "workup"),
]  # fmt: skip
_OP_RES = [(re.compile(p, re.I), op, stage) for p, op, stage in _OPERATIONS]

_PRODUCT_WORDS = re.compile(
    r"\b(to give|to afford|to provide|to furnish|afforded|affording|gave|giving|yielded|"
    r"yielding|provided|providing|furnished|furnishing|obtained|leaving|left)\b",
    re.I,
)
_CHARACTERISATION = re.compile(
    r"\b(1H|13C|19F|31P|11B)\s*NMR\b|\bNMR\s*\(|δ|\bm/z\b|\bHRMS\b|\bLRMS\b|\bESI\b|^\s*IR\b|"
    r"cm[-−]1|\bm\.?p\.?\s*\d|\bmp\b|\bR[fF]\s*[=\d(]|\bb\.?p\.?\s*\d|\[α\]",
)
_SENTENCE_END = re.compile(r"(?<=[.!?])\s+(?=[A-Z0-9(\[])|\n\s*\n|\n(?=\s*(?:[-*] |\d+\.\s))")
# words that end in a full stop without ending the sentence
_ABBREVIATIONS = {"sat.", "satd.", "aq.", "ca.", "approx.", "conc.", "dil.", "e.g.", "i.e.",
                  "equiv.", "eq.", "min.", "max.", "no.", "fig.", "vs.", "anh.", "abs.", "temp.",
                  "soln.", "vol.", "wt.", "c.", "resp.", "cf.", "ref.", "mp.", "bp.", "m.p.",
                  "b.p.", "rt.", "st.", "approx", "ca", "et al.", "al."}  # fmt: skip
# a bracket group, allowing one level of nested brackets inside
_GROUP = re.compile(r"\(((?:[^()]|\([^()]*\))*)\)")
_BOUNDARY = re.compile(
    r"(?:^|[;:]\s|,\s|\s(?:with|in|over|of|and|to|from|using|by|into|onto|added|then|was|were|"
    r"is|are|through|on|at|for|containing|followed|via|after|before|under|as|or|plus|while|"
    r"whereupon|which|that|dropwise|portionwise|slowly|treated|charged|eluting|eluted|"
    r"afforded|gave)\s)",
    re.I,
)
_LEADING = re.compile(
    r"^(?:a|an|the|then|next|finally|additional|more|fresh|further|dry|anhydrous|"
    r"freshly\s+distilled|degassed|distilled|cold|ice-cold|hot|warm|chilled|solid|neat|"
    r"another|excess|aqueous\s+layer\s+with|portions?\s+of)\s+",
    re.I,
)
# a name with one of these words is never an input: equipment, intermediates, outputs
_NOT_MATERIAL = re.compile(
    r"\b(vials?|flasks?|tubes?|schlenk|beakers?|funnels?|syringes?|cylinders?|vessels?|"
    r"reactors?|bottles?|ampoules?|jars?|cartridges?|crude|residue|filtrates?|layers?|"
    r"phases?|extracts?|combined|aliquots?|samples?|bath|condenser|concentrate|eluate|"
    r"fractions?|mother liquors?|supernatant|product|compound|total|volume|yield|sealed|"
    r"oven-dried|flame-dried|dried|portions?)\b",
    re.I,
)
# words that describe a material's form, not which material it is; dropped from names
_GENERIC = re.compile(
    r"\b(mixture|solution|suspension|slurry|solid|(?<!mineral )(?<!silicone )(?<!paraffin )oil|"
    r"foam|gum|material|precipitate|reaction|"
    r"batch|white|yellow|colou?rless|pale|brown|orange|red|off-white|clear|viscous|beige|"
    r"light|dark|green|amorphous|crystalline|powder|resulting|above|this|that|it)\b",
    re.I,
)
_OPERATION_NAMES = re.compile(
    r"^(?:flash\s+)?(?:column\s+)?(?:chromatography|chromatographed|column|purified|purification|"
    r"filtered|filtration|dried|drying|washed|washing|extracted|extraction|recrystallised|"
    r"recrystallized|triturated|distilled|eluted|elution|eluent|concentrated|stirred|added|"
    r"treated|quenched|plug|pad|purified\s+by\s+flash\s+chromatography)$",
    re.I,
)
_SOLUTION_PART = re.compile(
    r"^(?P<c>\d+(?:[.,]\d+)?)\s*(?P<u>M|mM|mol/L)\s+(?:solution\s+)?in\s+(?P<solv>.+)$"
)
_FRACTION_PART = re.compile(
    r"^(?P<p>\d+(?:[.,]\d+)?)\s*(?:wt\s*)?%\s*(?:w/w\s+|wt\s+)?(?:dispersion\s+|suspension\s+|"
    r"solution\s+)?in\s+(?P<solv>.+)$",
    re.I,
)
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


def _operation(sentence: str, pos: int) -> tuple[str, Stage]:
    """The operation of a mention at ``pos``: the nearest keyword before it, else after it."""
    before: tuple[int, str, Stage] | None = None
    after: tuple[int, str, Stage] | None = None
    for rx, op, stage in _OP_RES:
        for m in rx.finditer(sentence):
            if m.start() < pos and (before is None or m.start() > before[0]):
                before = (m.start(), op, stage)
            elif m.start() >= pos and (after is None or m.start() < after[0]):
                after = (m.start(), op, stage)
    hit = before or after
    return (hit[1], hit[2]) if hit else ("reaction", "reaction")


def _clean_name(name: str) -> str | None:
    name = name.strip(" ,;:")
    while True:
        stripped = _LEADING.sub("", name)
        if stripped == name:
            break
        name = stripped
    name = name.strip(" ,;:")
    if not name or len(name) > 80 or len(name.split()) > 6 or not re.search(r"[A-Za-z]", name):
        return None
    if _OPERATION_NAMES.match(name) or _NOT_MATERIAL.search(name):
        return None
    if _GENERIC.search(name):
        name = " ".join(_GENERIC.sub(" ", name).split())
        name = _LEADING.sub("", name + " ").strip() if name else name
        if not name or name.casefold() in {"a", "an", "the", "of", "aqueous", "organic"}:
            return None
    if name.endswith(" of"):
        return None
    return name


def _name_before(text: str) -> str | None:
    """The material name that ends where ``text`` ends, or None."""
    last = 0
    for m in _BOUNDARY.finditer(text):
        last = m.end()
    return _clean_name(text[last:])


def _mixture_before(text: str) -> tuple[str, list[tuple[str, float]]] | None:
    """A mixture named at the end of ``text``: (as written, [(component, volume fraction)])."""
    m = _MIX_PERCENT.search(text)
    if m:
        p = float(m.group("p")) / 100
        if 0 < p < 1:
            a, b = _clean_name(m.group("a")), _clean_name(m.group("b"))
            if a and b:
                return m.group(0).strip(), [(a, p), (b, 1 - p)]
    for rx in (_MIX_SLASH_RATIO, _MIX_RATIO_SLASH):
        m = rx.search(text)
        if not m:
            continue
        names = [n.strip() for n in m.group("names").split("/")]
        ratio = [float(x) for x in re.split(r"\s*:\s*", m.group("r"))]
        if len(names) != len(ratio) or sum(ratio) <= 0:
            continue
        cleaned = [_clean_name(n) for n in names]
        if all(cleaned):
            total = sum(ratio)
            return m.group(0).strip(), [(c, r / total) for c, r in zip(cleaned, ratio, strict=True)]
    return None


def _sentences(body: str) -> list[tuple[int, str]]:
    out, start = [], 0
    for m in _SENTENCE_END.finditer(body):
        before = body[start : m.start()]
        words = before.split()
        last_word = words[-1].casefold() if words else ""
        if "\n\n" not in m.group(0) and (
            last_word in _ABBREVIATIONS or re.fullmatch(r"\d+\.", last_word)
        ):
            continue
        out.append((start, before))
        start = m.end()
    out.append((start, body[start:]))
    return [(s, t) for s, t in out if t.strip()]


def _parts(content: str, offset: int) -> list[tuple[str, int]]:
    """Split bracket content at ';' and ', ' (a comma with a space), keeping offsets."""
    out = []
    pos = 0
    for m in re.finditer(r";|,(?=\s)", content + ";"):
        piece = content[pos : m.start()]
        lead = len(piece) - len(piece.lstrip())
        if piece.strip():
            out.append((piece.strip(), offset + pos + lead))
        pos = m.end()
    return out


class _Group:
    """One material inside a bracket, as it is being read."""

    def __init__(self, name: str | None, mixture: tuple[str, list] | None = None) -> None:
        self.name = name
        self.mixture = mixture
        self.amounts: list[AmountMention] = []
        self.solvent: str | None = None
        self.texts: list[str] = []


def _read_group(content: str, offset: int, name: str | None, mixture) -> list[_Group]:
    groups = [_Group(name, mixture)]
    for part, start in _parts(content, offset):
        span = (start, start + len(part))
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
            groups[-1].solvent = _clean_name(m.group("solv"))
            groups[-1].texts.append(part)
            continue
        m = _FRACTION_PART.match(norm)
        if m:
            groups[-1].solvent = _clean_name(m.group("solv"))
            groups[-1].texts.append(part)
            continue
        if _PERCENT_ONLY.match(norm) or re.fullmatch(r"[\d.,:\s]+", norm):
            continue  # a yield, a purity or a bare ratio
        mix = _mixture_before(norm)
        if mix is not None:
            groups.append(_Group(mix[0], mix))
            continue
        cleaned = _clean_name(norm)
        if cleaned is None:
            continue
        if groups[-1].name is None and not groups[-1].amounts:
            groups[-1].name = cleaned  # "(Na2SO4, 5 g)" after "dried"
        else:
            groups.append(_Group(cleaned))
    return [g for g in groups if g.amounts and g.name]


def _lines_for(group: _Group, operation: str, stage: Stage, evidence: str) -> list[MaterialLine]:
    stated = ", ".join(group.texts)
    if group.solvent is None and _AQUEOUS_SOLUTION.match(group.name or ""):
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
            a.model_copy(
                update={
                    "value": a.value * fraction,
                    "low": None if a.low is None else a.low * fraction,
                    "high": None if a.high is None else a.high * fraction,
                }
            )
            for a in volumes
        ]
        out.append(
            MaterialLine(
                name=comp,
                operation=operation,
                stage=stage,
                stated=stated,
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
    for start, sentence in _sentences(body):
        if sentence.lstrip().startswith("|") or _CHARACTERISATION.search(sentence):
            continue  # a table row (read by the readers) or characterisation data
        product_at = _PRODUCT_WORDS.search(sentence)
        product_taken = False
        for m in _GROUP.finditer(sentence):
            content = m.group(1)
            before = sentence[: m.start()]
            evidence = " ".join(sentence.split())[:300]
            if product_at and m.start() > product_at.start():
                if product_taken:
                    continue
                mass = _first_mass(content, start + m.start(1))
                if mass is not None:
                    product_taken = True
                    lines.append(
                        MaterialLine(
                            name=_name_before(before[product_at.end() :]) or "product",
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
            operation, stage = _operation(sentence, m.start())
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
