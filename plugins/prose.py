"""Reading procedure prose: the helpers and the one operation vocabulary that the text
reader (``extract/text.py``) and the gap rules (``gaps/operations.py``) share.

- :func:`sentences` splits a procedure into sentences (not at ``sat. aq.`` or ``ca.``);
- :func:`clean_name` takes the material name out of a phrase, without grades and
  descriptions, or says it is none (equipment, intermediates, operations);
- :data:`CHARACTERISATION` recognises characterisation data (NMR, MS, IR, mp, Rf);
- the vocabulary: :data:`OPERATION_STEMS` (word stem → operation), :data:`OPERATION_STAGE`
  (operation → stage), :data:`ROLE_STAGE` and :data:`CATEGORY_STAGE` (a material's role or
  category → stage), and :func:`operation_of` for one word.

A public module, not a plugin: it implements no hook.
"""

from __future__ import annotations

import functools
import re

from capture.models import Stage

# ---------------------------------------------------------------------- the vocabulary
# the stage each operation belongs to
OPERATION_STAGE: dict[str, Stage] = {
    "reaction": "reaction",
    "quench": "workup",
    "extraction": "workup",
    "wash": "workup",
    "drying": "workup",
    "filtration": "workup",
    "chromatography": "purification",
    "recrystallisation": "purification",
    "trituration": "purification",
    "distillation": "purification",
    "purification": "purification",  # "purified …" when the text names no method
}

# operation word stems → operation; a word names the operation when it starts with the stem
OPERATION_STEMS: dict[str, str] = {
    "chromatograph": "chromatography",
    "column": "chromatography",
    "elut": "chromatography",
    "eluent": "chromatography",
    "flash": "chromatography",
    "cartridge": "chromatography",
    "purif": "purification",
    "recrystalli": "recrystallisation",
    "crystalli": "recrystallisation",
    "triturat": "trituration",
    "distil": "distillation",
    "quench": "quench",
    "extract": "extraction",
    "partition": "extraction",
    "wash": "wash",
    "rins": "wash",
    "dried": "drying",
    "drying": "drying",
    "filt": "filtration",
    "celite": "filtration",
    "suction": "filtration",
    "dilut": "extraction",
    "poured": "extraction",
    "separat": "extraction",
    "acidif": "extraction",
    "basif": "extraction",
    "neutrali": "extraction",
}
_STEMS_LONGEST_FIRST = sorted(OPERATION_STEMS, key=len, reverse=True)


@functools.lru_cache(maxsize=8192)
def operation_of(word: str) -> str | None:
    """The operation a word names (``washed`` → wash, ``back-extracted`` → extraction)."""
    low = word.lower()
    tail = low.split("-", 1)[1] if "-" in low else ""
    for stem in _STEMS_LONGEST_FIRST:
        if low.startswith(stem) or tail.startswith(stem):
            return OPERATION_STEMS[stem]
    return None


def operation_at(sentence: str, pos: int) -> str:
    """The operation of a mention at ``pos`` in ``sentence``: the nearest operation word
    before it (its own words included: "a pad of Celite"), else the first after it, else
    ``reaction``."""
    before, after = None, None
    for m in re.finditer(r"[A-Za-z][\w-]*", sentence):
        op = operation_of(m.group(0))
        if op is None:
            continue
        if m.start() <= pos:
            before = op
        elif after is None:
            after = op
    return before or after or "reaction"


# a material's role (front matter, tables) → the stage it belongs to
ROLE_STAGE: dict[Stage, set[str]] = {
    "reaction": {"reactant", "limiting reagent", "limiting reactant", "limiting", "reagent",
                 "catalyst", "ligand", "solvent", "additive", "starting material", "substrate",
                 "base", "acid", "reaction solvent"},
    "workup": {"workup", "work-up", "quench", "extraction", "extraction solvent", "wash",
               "drying", "drying agent", "filtration", "filter aid", "filter medium"},
    "purification": {"purification", "chromatography", "eluent", "stationary phase",
                     "recrystallisation", "recrystallization", "trituration", "distillation",
                     "crystallisation", "crystallization", "antisolvent", "anti-solvent"},
}  # fmt: skip
# a material's category → its stage, when its role does not say
CATEGORY_STAGE: dict[str, Stage] = {
    "drying agent": "workup",
    "aqueous": "workup",
    "filter aid": "workup",
    "filter medium": "workup",
    "sorbent": "purification",
}
# roles whose words name no operation but which belong to one
ROLE_OPERATION = {"stationary phase": "chromatography", "antisolvent": "recrystallisation",
                  "anti-solvent": "recrystallisation"}  # fmt: skip


@functools.lru_cache(maxsize=1024)
def operation_of_role(role: str | None) -> str | None:
    """The operation a front-matter or table role names (``drying agent`` → drying,
    ``extraction solvent`` → extraction, ``eluent`` → chromatography), or None."""
    low = (role or "").strip().casefold()
    if low in ROLE_OPERATION:
        return ROLE_OPERATION[low]
    return next((op for w in low.split() if (op := operation_of(w))), None)


LIMITING_ROLES = {"limiting reagent", "limiting reactant", "limiting"}
REACTANT_ROLES = {"reactant", "starting material", "substrate"}


def stage_of_role(role: str | None) -> Stage | None:
    """The stage a role names (``eluent`` → purification), or None."""
    if role:
        low = role.strip().casefold()
        for stage, roles in ROLE_STAGE.items():
            if low in roles:
                return stage
    return None


# ---------------------------------------------------------------------- sentences
# a sentence ends at the space after . ! or ? before a capital, a digit or a bracket; at a
# blank line; or before a list item ("- ", "* ", "3. ") (the group marks where the space starts)
_SENTENCE_END = re.compile(r"[.!?](\s+)(?=[A-Z0-9(\[])|\n\s*\n|\n(?=\s*(?:[-*] |\d+\.\s))")

# words that end in a full stop without ending the sentence
_ABBREVIATIONS = {"sat.", "satd.", "aq.", "ca.", "approx.", "conc.", "dil.", "e.g.", "i.e.",
                  "equiv.", "eq.", "max.", "no.", "fig.", "vs.", "anh.", "abs.", "temp.",
                  "soln.", "vol.", "wt.", "c.", "resp.", "cf.", "ref.", "mp.", "bp.", "m.p.",
                  "b.p.", "rt.", "st.", "approx", "ca", "et al.", "al."}  # fmt: skip

_NUMBERED = re.compile(r"\d+\.")


@functools.lru_cache(maxsize=8)  # the amount reader and the gap rules split the same body
def sentences(body: str) -> tuple[tuple[int, str], ...]:
    """(offset, text) of each sentence of ``body`` (a shared answer: do not change it)."""
    out, start = [], 0
    for m in _SENTENCE_END.finditer(body):
        end = m.start(1) if m.group(1) is not None else m.start()
        if "\n\n" not in m.group(0):
            words = body[max(start, end - 16) : end].split()
            last_word = words[-1].casefold().lstrip("([") if words else ""
            celsius = last_word == "c." and "°" in body[max(start, end - 4) : end]
            if (last_word in _ABBREVIATIONS and not celsius) or _NUMBERED.fullmatch(last_word):
                continue  # "sat. aq.", "ca. 5 g"; but "at 0° C. The …" ends a sentence
            if body.count("(", start, end) > body.count(")", start, end) and end - start < 600:
                continue  # inside a bracket: "(228 mg. 2.3 mmol)"
        out.append((start, body[start:end]))
        start = m.end()
    out.append((start, body[start:]))
    return tuple((s, t) for s, t in out if t.strip())


# ---------------------------------------------------------------------- characterisation
CHAR_HINTS = ("NMR", "δ", "m/z", "HRMS", "LRMS", "ESI", "IR", "cm", "mp", "m.p", "Rf", "RF",
              "b.p", "bp", "[α]")  # fmt: skip

# literals only: a lookbehind to skip the "mp" of "temperature" made every sentence's check
# slower (5.0 µs against 1.5 µs) than the full pattern it saved on the few it let through
CHAR_HINT = re.compile("|".join(map(re.escape, CHAR_HINTS)))

CHARACTERISATION = re.compile(
    r"\b(1H|13C|19F|31P|11B)\s*NMR\b|\bNMR\s*\(|δ|\bm/z\b|\bHRMS\b|\bLRMS\b|\bESI\b|^\s*IR\b|"
    r"cm[-−]1|\bm\.?p\.?\s*\d|\bmp\b|\bR[fF]\s*[=\d(]|\bb\.?p\.?\s*\d|\[α\]",
)


def led(first: str, pattern: re.Pattern) -> re.Pattern:
    """``pattern`` led by a look-ahead for the characters a match can start with (a character
    class's contents): Python's engine then passes over every other position at once, where
    it would otherwise try each alternative (and look-behind) there. The same matches: tests
    hold each led pattern to its original on every corpus sentence and on generated text."""
    return re.compile(f"(?=[{first}])(?:{pattern.pattern})", pattern.flags)


def by_first_letter(words) -> str:
    """An alternation of ``words`` (longest first) grouped by their first letter, as a
    pattern: "c(?:olumn|elite)|e(?:lut)". The same matches as the flat alternation (only
    words of one first letter can match at a place, and their order is kept), tried in a few
    steps instead of one per word."""
    groups: dict[str, list[str]] = {}
    for w in sorted(words, key=len, reverse=True):
        groups.setdefault(w[0], []).append(re.escape(w[1:]))
    return "|".join(f"{re.escape(c)}(?:{'|'.join(rest)})" for c, rest in groups.items())


# "IR" opening the text, and the rest of the markers led by letters only (a look-ahead that
# admits white space, for "^\s*IR", tried every alternative at every space: 2.3 × slower)
_IR_OPENING = re.compile(r"\s*IR\b")
_CHARACTERISATION_INSIDE = re.compile(CHARACTERISATION.pattern.replace(r"^\s*IR\b|", "", 1))
_CHARACTERISATION_LED = led(r"13NδmHLEIcRb\[", _CHARACTERISATION_INSIDE)


def characterisation(text: str) -> re.Match | None:
    """The first characterisation marker of ``text`` (``1H NMR``, ``m/z``, ``mp 112``…), or
    None. Every marker holds one of CHAR_HINTS, which are looked for first: the full pattern
    costs many times more per sentence, and most sentences have no marker. "IR" opening the
    text is the leftmost marker there can be; else the rest of the pattern is searched."""
    if not CHAR_HINT.search(text):
        return None
    return _IR_OPENING.match(text) or _CHARACTERISATION_LED.search(text)


def characterisation_start(text: str) -> int:
    """Where the characterisation data of a sentence begin (its length if there are none):
    at the separator before the first marker (``; mp``, ``: 1H NMR``, ``(m.p. …``). What
    comes before is the procedure, read by the text reader and the gap rules alike."""
    m = characterisation(text)
    if m is None:
        return len(text)
    window = text[max(0, m.start() - 40) : m.start()]
    cut = max(window.rfind(sep) for sep in (";", ":", ", ", "("))
    return m.start() - len(window) + cut if cut >= 0 else m.start()


# ---------------------------------------------------------------------- names
_LEADING = re.compile(
    r"^(?:a|an|the|to|then|next|finally|additional|more|fresh|further|dry|anhydrous|"
    r"freshly\s+distilled|degassed|distilled|cold|ice-cold|hot|warm|chilled|solid|neat|"
    r"another|excess|wet|little|small\s+amount\s+of|catalyst|reagent|ligand|crude|"
    r"absolute|abs\.|portions?\s+of|desired|expected|required|(?:finely\s+)?powdered|"
    r"pulveri[sz]ed|crushed|granular|thereto|successively|subsequently)\s+",
    re.I,
)

# words that make a phrase something other than a material, by what it is instead
EQUIPMENT_WORDS = {"vial", "vials", "flask", "flasks", "tube", "tubes", "schlenk", "beaker",
                   "beakers", "funnel", "funnels", "syringe", "syringes", "cylinder", "cylinders",
                   "vessel", "vessels", "reactor", "reactors", "bottle", "bottles", "ampoule",
                   "ampoules", "jar", "jars", "cartridge", "cartridges", "bath", "condenser",
                   "autoclave", "bomb", "pot", "kettle", "container", "sealed", "bottom",
                   "bottomed"}  # fmt: skip
INTERMEDIATE_WORDS = {"residue", "filtrate", "filtrates", "layer", "layers", "phase",
                      "phases", "extract", "extracts", "combined", "concentrate", "eluate",
                      "fraction", "fractions", "liquor", "liquors", "supernatant", "washing",
                      "washings", "portion", "portions"}  # fmt: skip
SAMPLE_WORDS = {"aliquot", "aliquots", "sample", "samples"}
PRODUCT_WORDS = {"product", "compound", "yield"}
_NOT_MATERIAL = (EQUIPMENT_WORDS | INTERMEDIATE_WORDS | SAMPLE_WORDS | PRODUCT_WORDS
                 | {"total", "volume", "dried"})  # fmt: skip

# words that describe a material's form, not which material it is; dropped from names
_GENERIC = {"mixture", "solution", "suspension", "slurry", "solid", "oil", "foam", "gum",
            "material", "precipitate", "reaction", "batch", "white", "yellow", "colourless",
            "colorless", "pale", "brown", "orange", "red", "off-white", "clear", "viscous",
            "beige", "light", "dark", "green", "amorphous", "crystalline", "powder", "resulting",
            "above", "this", "that", "it"}  # fmt: skip

_OIL_KEEPERS = {"mineral", "silicone", "paraffin"}
_FORMS = {
    "solid",
    "oil",
    "foam",
    "gum",
    "precipitate",
    "powder",
    "material",
    "crystals",
    "mixture",
    "solution",
    "suspension",
    "slurry",
    "batch",
}

_OPERATION_NAMES = re.compile(
    r"^(?:[\w-]+\s+)*chromatography$|^(?:flash\s+)?(?:column\s+)?(?:chromatography|"
    r"chromatographed|column|purified|purification|filtered|filtration|dried|drying|washed|"
    r"washing|extracted|extraction|recrystallised|recrystallized|triturated|distilled|eluted|"
    r"elution|eluent|concentrated|stirred|added|treated|quenched|plug|pad)$",
    re.I,
)

_LETTER = re.compile(r"[A-Za-z]")

_PUNCT = "()[]{},;:.!?\"'"


@functools.lru_cache(maxsize=8192)
def clean_name(name: str) -> str | None:
    """The material name in ``name``, without grades and descriptions; None if it is none."""
    return _clean(name, 80)[0]


@functools.lru_cache(maxsize=8192)
def read_name(name: str) -> tuple[str | None, str | None]:
    """(the material name in ``name``, None), or (None, what the phrase names instead:
    "equipment", "intermediate", "sample" or "product"), or (None, None). Systematic names
    of any length are kept (up to 300 characters)."""
    return _clean(name, 300)


def _what(parts: set[str]) -> str | None:
    for what, words in (("intermediate", INTERMEDIATE_WORDS), ("sample", SAMPLE_WORDS),
                        ("product", PRODUCT_WORDS), ("equipment", EQUIPMENT_WORDS)):  # fmt: skip
        if parts & words:
            return what
    return None


def _clean(name: str, max_len: int) -> tuple[str | None, str | None]:
    name = name.strip(" ,;:")
    while True:
        stripped = _LEADING.sub("", name)
        if stripped == name:
            break
        name = stripped
    name = name.strip(" ,;:").rstrip("-–").rstrip()  # "chloroacetyl chloride-(0.62 g)": a slip
    if not name or len(name) > max_len or not _LETTER.search(name):
        return None, None
    words = name.split()
    if len(words) > 6:
        return None, None
    lowered = [w.strip(_PUNCT).lower() for w in words]
    parts = {p for w in lowered for p in w.split("-")}
    if _OPERATION_NAMES.match(name):
        return None, None
    if parts & _NOT_MATERIAL:
        return None, _what(parts)
    if parts & _GENERIC:
        kept = [
            w
            for i, (w, low) in enumerate(zip(words, lowered, strict=True))
            if low not in _GENERIC or (low == "oil" and i and lowered[i - 1] in _OIL_KEEPERS)
        ]
        name = _LEADING.sub("", " ".join(kept) + " ").strip()
        if not name or name.lower() in {"a", "an", "the", "of", "aqueous", "organic"}:
            # "the solid", "a yellow oil": a mass of what the experiment made, not an input
            return None, "intermediate" if parts & _FORMS else None
    if name.endswith(" of"):
        return None, None
    return name, None
