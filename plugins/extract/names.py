"""The name an amount belongs to: before a bracket, after a quantity, or a reference.

- **Before a bracket** (``3-iodotoluene (4.36 g)``): the words back to the nearest boundary
  word (with, in, over, of, and, …) or comma-and-space. A reference between the name and
  the bracket (``… carboxylate obtained in Example (22c) (158 mg)``, ``… acid (obtained in
  example 6) (0.45 g)``) is passed over; an adverb in brackets before the name
  (``(dropwise) oxalyl chloride``) is not part of it.
- **After a quantity** (``0.8 g (3.93 mmol) of X``, ``in 10 mL EtOH``, ``8.16 g ammonium
  acetate``): the words after ``of`` (or straight after the unit) up to a boundary word, a
  comma, a verb, or the next bracket of amounts (which belongs to the same mention).
- **References** to another compound are names as written: ``Compound 513``, ``the acid
  obtained in Example (1d)``, ``a solution of 74``.

Each answer says what the phrase is: a material name, or the product, an intermediate or
crude mass, a sample, a piece of equipment (:func:`masstrail_plugins.prose.read_name`).
"""

from __future__ import annotations

import re

from masstrail_plugins.prose import EQUIPMENT_WORDS, read_name

# a name ends at the word after one of these (or after a word ending in , ; :)
BOUNDARY_WORDS = {"with", "in", "over", "of", "and", "to", "from", "using", "by", "into", "onto",
                  "added", "then", "was", "were", "is", "are", "through", "on", "at", "for",
                  "containing", "followed", "via", "after", "before", "under", "as", "or",
                  "plus", "while", "whereupon", "which", "that", "dropwise", "portionwise",
                  "slowly", "treated", "charged", "eluting", "eluted", "afforded", "gave",
                  "between", "washing", "rinsing", "quenched", "diluted", "extracted", "washed",
                  "rinsed", "dissolved", "suspended", "stirred", "heated", "cooled",
                  "recrystallised", "recrystallized", "triturated", "flushed", "poured",
                  "loaded", "passed", "filtered", "dried", "purified", "including", "namely",
                  "also", "be", "been", "being", "had", "has", "have", "will", "would", "until",
                  "during", "against", "without", "within", "whilst", "where", "when", "per",
                  "each", "give", "gives", "giving", "afford", "affords", "affording", "yield",
                  "yields", "yielding", "obtain", "obtained", "provide", "provided", "so",
                  "together", "here", "there", "this", "these", "those", "it", "its", "all",
                  "both", "about", "approximately", "ca.", "ca", "total", "but", "add",
                  "adding", "produce", "produces", "producing", "thereby"}  # fmt: skip

MAX_WORDS = 6
# "obtained in Example (22c)", "described in Preparation Example 72", "prepared as in step 2"
# an identifier: "3", "(1d)", "3(A)", "J15", "403, Part B", "1, step 6"
_REF_ID = (
    r"\s*(?:\(?[A-Za-z]?\d+[A-Za-z]?\)?(?:\s*\([A-Za-z0-9]+\))?|[A-Z]\b)"
    r"(?:,?\s*(?:[Ss]tep|[Pp]art)\s*\(?[A-Za-z0-9]+\)?)?"
)
_REFERENCE = (r"(?:obtained|prepared|described|synthesi[sz]ed|made|produced)\s+(?:above\b|"
              r"(?:(?:in|from|as\s+in|as\s+described\s+in|according\s+to|by|following)\s+)"
              r"(?:the\s+)?(?:\w+\s+){0,2}?(?:Example|Ex\.|Step|Preparation|Reference|"
              r"Intermediate|Method|Scheme|Description|Part|example|step|"
              r"preparation|intermediate)\b" + _REF_ID + r")")  # fmt: skip
# words one of which any reference or aside holds (a quick test before the patterns)
_REFERENCE_HINTS = ("xample", "Ex.", "tep", "reparation", "ntermediate", "eference", "Part",
                    "ethod", "obtained", "prepared", "described", "synthesi", "made", "produced",
                    "see", "cf.", "CAS")  # fmt: skip
_REFERENCE_VERBS = ("obtained", "prepared", "described", "synthesi", "made", "produced")
_REFERENCE_TAIL = re.compile(r"\s*(?:,\s*)?" + _REFERENCE + r"\s*$")
_REFERENCE_HEAD = re.compile(r"\s*" + _REFERENCE)
# a bracket of references or asides before the amount: "(Example J15)", "(obtained in …)"
_ASIDE_TAIL = re.compile(
    r"\s*\((?:[^()]|\([^()]*\))*\b(?:Example|Ex\.|Step|Preparation|Intermediate|Reference|"
    r"Part|Method|obtained|prepared|described|see|cf\.)\b(?:[^()]|\([^()]*\))*\)\s*$"
    r"|\s*\[\s*CAS[^\]]*\]\s*$",
    re.I,
)
_ADVERB_HEAD = re.compile(r"^\((?:[a-z]+\s*)+\)\s+")  # "(dropwise) oxalyl chloride"
# "Compound 513", "compound A", "Intermediate 12b", "Example 3"; "the compound of Example 4"
_NUMBERED = re.compile(
    r"^(?:the\s+)?(?:title\s+)?(?:[Cc]ompound|[Ii]ntermediate|[Ee]xample|[Pp]reparation)\s+"
    r"(?:\(?\d+[A-Za-z]?\)?|[A-Z]\d*|\([0-9a-z]+\))$"
)
_BARE_NUMBER = re.compile(r"^\d{1,4}[a-z]?$")  # "a solution of 74 (235 mg)"
# a participle ends a name ("isatine represented by", "with stirring thionyl chloride"); these
# belong to names ("fuming nitric acid", "decolourising charcoal", "the desired amide")
_VERB_LIKE = re.compile(
    r"^(?!(?:saturated|concentrated|deuterated|activated|buffered|fused|powdered|hydrated|"
    r"anhydrated|chlorinated|fluorinated|brominated|iodinated|methylated|fuming|bleaching|"
    r"decolou?ri[sz]ing|desired|expected|required|protected|substituted)$)[a-z]+(?:ed|ing)$"
)
_ARTICLE = re.compile(r"^(?:a|an|the)\s+", re.I)


def _balanced(words: list[str]) -> bool:
    text = "".join(words)
    return text.count("(") == text.count(")") and text.count("[") == text.count("]")


def _resolve(phrase: str, reference: str = "") -> tuple[str | None, str | None]:
    """(name, what) for a phrase, with a reference clause that followed it, if any."""
    phrase = _ADVERB_HEAD.sub("", phrase.strip())
    if _NUMBERED.match(phrase):
        return phrase, None  # a numbered compound: an input, named as written
    name, what = read_name(phrase)
    if what is not None and not reference:
        return _ARTICLE.sub("", phrase), what  # named as written: "the crude product"
    if reference and ((name is None and what in {None, "product", "intermediate"})
                      or (name and len(name) < 8)):  # fmt: skip
        # "the compound obtained in Step 4", "the acid obtained in Example (1d)"
        return " ".join(f"{_ARTICLE.sub('', phrase)} {reference}".split()), None
    return name, what


def _aside_or_reference_tail(text: str, near: int) -> re.Match | None:
    """An aside or a reference that ends ``text``, looked for from ``near``. Each pattern is
    tried at every place, so each is run only where it can match: an aside ends in a closing
    bracket, a reference holds one of its verbs."""
    if text.rstrip()[-1:] in (")", "]") and (m := _ASIDE_TAIL.search(text, near)):
        return m
    if any(verb in text[near:] for verb in _REFERENCE_VERBS):
        return _REFERENCE_TAIL.search(text, near)
    return None


def name_before(text: str) -> tuple[str | None, str | None]:
    """The material name that ends where ``text`` ends, and what it is (see module doc)."""
    reference = ""
    for _ in range(2):  # "X (Example 4) obtained in step 2 (…)": asides and references
        tail = text[-160:]
        if not any(hint in tail for hint in _REFERENCE_HINTS):
            break
        near = max(0, len(text) - 300)
        m = _aside_or_reference_tail(text, near)
        if not m:
            break
        reference, text = text[m.start() :].strip(" ,"), text[: m.start()]
    cut = text.rfind("),", max(0, len(text) - 400))
    if cut >= 0 and cut + 2 < len(text) and not text[cut + 2].isspace():
        text = text[cut + 2 :]  # "(156 mg, 1.62 mmol),(R)-1-[…]": the name after the comma
    last = None
    for m in _AMOUNT_GROUP.finditer(text, max(0, len(text) - 400)):
        last = m
    if last is not None and last.end() < len(text):
        text = text[last.end() :]  # "acetonitrile (14.8 mL)/triethylamine": no name holds an amount
    words = text[-400:].rsplit(None, MAX_WORDS + 3)
    if words and (len(text) > 400 or len(words) > MAX_WORDS + 3):
        words = words[1:]  # the first word may be cut, or holds all the words out of reach
    start = 0
    for i in range(len(words) - 1, -1, -1):
        w = words[i]
        ends_sentence = w[-1] == "." and not _ABBREVIATION.match(w.lower()) and len(w) > 2
        vessel = i < len(words) - 1 and w.lower() in _VESSELS  # "flask THF (1 mL)": THF
        support = w.lower() == "on" and 0 < i < len(words) - 1 and _on_support(
            words[i - 1], " " + " ".join(words[i + 1 :]))  # "palladium on carbon"  # fmt: skip
        comma = w[-1] in ",;:" and not (i + 1 < len(words) and _locants(w, words[i + 1]))
        if ((w.lower() in BOUNDARY_WORDS and not support) or comma or ends_sentence
                or vessel or _VERB_LIKE.match(w)) and _balanced(words[i + 1 :]):  # fmt: skip
            start = i + 1  # "with stirring thionyl chloride", "activated charcoal"
            break
        if len(words) - i > MAX_WORDS + 2:
            return None, None  # no boundary in reach: not a name
    else:
        if len(text) > 400:
            return None, None
    phrase = " ".join(words[start:])
    if _BARE_NUMBER.match(phrase) and start > 0 and words[start - 1].lower() in {"of", "with"}:
        return f"compound {phrase}", None
    return _resolve(phrase, reference)


_WORD = re.compile(r"\S+")
_NEXT_WORD = re.compile(r"\s+(\S+)")
# a list of locants written with a space: "N, N-dimethylformamide", "2, 6-dichloropyridine"
# (heteroatom letters with letters, digits with digits; "Step B, 7-chloro…" is not one)
_LOCANT = re.compile(r"(?:([NOSP])|(\d{1,2}))['′]?")


def _locants(word: str, following: str) -> bool:
    """True when ``word`` ("N,") and ``following`` ("N-dimethyl…") are one name's locants."""
    a = _LOCANT.fullmatch(word[:-1]) if word.endswith(",") else None
    b = _LOCANT.match(following)
    if a is None or b is None or following[b.end() : b.end() + 1] not in {"-", ","}:
        return False
    return (a.group(1) is None) == (b.group(1) is None)


def name_after(text: str) -> tuple[str | None, str | None, int]:
    """The material named at the start of ``text`` (what follows a quantity): (name, what,
    where the name ends in ``text``). ``of`` may come first; ``(None, None, 0)`` when no
    name follows."""
    lead = _LEAD.match(text)
    pos, had_of = lead.end(), bool(lead.group("of"))
    solution = " ".join(filter(None, (lead.group("c"), lead.group("aq")))) if lead.group(
        "sol") else ""  # fmt: skip
    words: list[str] = []
    ends: list[int] = []
    reference = ""
    for m in _WORD.finditer(text, pos):
        w = m.group(0)
        low = w.lower().rstrip(",;:.")
        ref = (_REFERENCE_HEAD.match(text, m.start() - 1)
               if words and low.startswith(_REFERENCE_VERBS) else None)  # fmt: skip
        if ref:  # "the compound obtained in Step 4"
            reference = ref.group(0).strip()
            ends[-1] = ref.end()
            break
        if low in BOUNDARY_WORDS and _balanced(words) and (words or not had_of) and not (
                low == "on" and words and _on_support(words[-1], text[m.end() :])):  # fmt: skip
            break
        if words and _balanced(words) and _QUANTITY_AHEAD.match(text, m.start()):
            break  # "in 20 ml of water 5.21 g (0.02 mole) of …": the next mention's amount
        if words and _balanced(words) and _LABEL.fullmatch(w):
            ends[-1] = m.end()  # "the amine (3) (1.2 mmol)": its number, passed over
            continue
        if words and w.startswith("(") and _balanced(words) and (
                _AMOUNT_BRACKET.match(w) or ")" not in w):  # fmt: skip
            break  # a bracket of amounts (it belongs to this mention), or an aside

        words.append(w)
        ends.append(m.end())
        nxt = _NEXT_WORD.match(text, m.end())
        comma = w[-1] in ",;:" and not (nxt and _locants(w, nxt.group(1)))
        if (comma and _balanced(words)) or len(words) > MAX_WORDS + 2:
            break
        if low in _VESSELS and _balanced(words):
            break  # "a 50 ml round bottomed flask THF (1 mL) was added": the flask ends there
        if w.endswith(".") and not _ABBREVIATION.match(low + "."):
            break  # the end of the sentence
    if not words:
        return None, None, 0
    whole = " ".join(words).rstrip(",;:.")
    name, what = _resolve(whole, reference)
    if what is not None:  # "a 500 ml round bottomed flask", "the crude product"
        return name, what, ends[-1]
    cut = next((i for i, w in enumerate(words) if i and _VERB_LIKE.match(w.rstrip(",;:."))),
               len(words))  # fmt: skip
    phrase = " ".join(words[:cut]).rstrip(",;:.")  # "isatine represented by", "acetone stirred"
    name, what = _resolve(phrase, reference) if cut < len(words) else (name, what)
    if name is None and what is None and had_of and _BARE_NUMBER.match(phrase):
        name = f"compound {phrase}"
    if name and solution:
        name = f"{solution} {name}"  # "10 mL of a 2 M solution of HCl": 2 M HCl
    return name, what, ends[cut - 1] if name or what else 0


_LEAD = re.compile(
    r"\s*(?P<of>of\s+)?(?P<sol>(?:(?:a|an)\s+)?(?P<c>\d+(?:\.\d+)?\s*(?:M|N|%|wt\s*%|mol/L))?\s*"
    r"(?P<aq>aqueous|aq\.|saturated|sat\.)?\s*(?:(?:solution|suspension|slurry|dispersion)\s+of|"
    r"(?<=%)\s*by\s+(?:volume|weight)\s+of)\s+)?"  # "15% by volume of sodium hydroxide"
)
# a metal on its support is one catalyst: "10% palladium on carbon", "Pt on alumina"
_METALS = {"palladium", "platinum", "rhodium", "ruthenium", "nickel", "pd", "pt", "rh", "ru", "ni"}
_SUPPORT = re.compile(r"\s+(?:activated\s+)?(?:carbon|charcoal|alumina|silica|C)\b", re.I)


def _on_support(metal: str, after: str) -> bool:
    return metal.lower().strip("(") in _METALS and bool(_SUPPORT.match(after))


_LABEL = re.compile(r"\((?:\d{1,3}[a-z]?|[IVX]{1,5}[a-z]?)\)")  # a compound's number in the text
# a bracket that opens with an amount ("(0.35 mmol", "(2 eq.", "(~5 mL") or is a bare number
# ("(3)"); not a stereodescriptor or locant that opens a name ("(3RS,4RS)-4-…", "(2E)-…")
_AMOUNT_BRACKET = re.compile(
    r"\(\s*(?:ca\.?\s*|approx\.?\s*|[~≈]\s*)?[\d.,]*\d\s*(?:\)|%|(?:[mµμk]?g|gms?|mgs|[mµμ]?[lL]|"
    r"cm3|cc|[mµμ]?mol(?:es?)?|mmole?s?|eq|equiv|M|N)\b)"
)
_QUANTITY_AHEAD = re.compile(  # the start of another mention's amount
    r"\d+(?:[.,]\d+)?\s*(?:[mµμk]?g|gm|mgs|[mµμ]?l|cm3|[mµμ]?mol(?:es?)?)\b", re.I
)
_AMOUNT_GROUP = re.compile(  # a bracket holding an amount, with a separator after it
    r"\(\s*\d[\d.,]*\s*(?:[mµμk]?g|[mµμ]?[lL]|[mµμ]?mol)\b[^()]*\)\s*[/,;–-]?\s*"
)
_VESSELS = EQUIPMENT_WORDS - {"sealed", "bottom", "bottomed", "bath", "schlenk"}  # nouns only
_ABBREVIATION = re.compile(r"^(?:aq|sat|conc|ca|approx|abs|anh|eq|equiv|no)\.$")
