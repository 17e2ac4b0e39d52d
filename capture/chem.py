"""Chemistry helpers shared by the core and the plugins: name folding, molar masses and
formulas from SMILES."""

from __future__ import annotations

import functools
import re
import unicodedata

# words that describe the state of a material, not which material it is
_DROP_PREFIXES = ("anhydrous ", "dry ", "freshly distilled ", "degassed ", "distilled ",
                  "ice-cold ", "ice cold ", "cold ", "hot ", "warm ", "boiling ", "chilled ",
                  "fresh ", "cooled ", "pre-cooled ", "wet ", "absolute ", "abs. ", "deionized ",
                  "deionised ", "demineralized ", "demineralised ", "de-ionized ")  # fmt: skip
_OXIDATION_STATE = re.compile(r"(?<=[a-z]) \((0|i{1,3}|iv|vi{0,3})\)")
_MOLAR = re.compile(
    r"^(\d+(?:\.\d+)?)\s*(m|n|mol/l|mol\s*l-1|mol\s*dm-3)(?:\s+|$)(?:aq\.?\s+|aqueous\s+)?"
)
_TOKEN_MAP = {
    "sat.": "saturated",
    "sat": "saturated",
    "satd.": "saturated",
    "satd": "saturated",
    "aq.": "aqueous",
    "aq": "aqueous",
    "conc.": "concentrated",  # "conc. sulfuric acid" is "concentrated sulfuric acid"
    "conc": "concentrated",
    "concd.": "concentrated",
}


@functools.lru_cache(maxsize=8192)
def material_key(name: str) -> str:
    """The form in which names are compared: case, spacing, dashes and 'sat. aq. conc.'
    folded."""
    s = unicodedata.normalize("NFKC", name).replace("\u2212", "-").replace("–", "-")
    s = s.replace("—", "-")  # "10% Pd—C": an em dash typed for a hyphen
    s = re.sub(r"\s+", " ", s.replace("·", ".")).strip().strip(".,;:").casefold()
    s = _OXIDATION_STATE.sub(r"(\1)", s)  # "palladium (II) acetate" = "palladium(II) acetate"
    if s[:1].isdigit():  # "2 mol/L HCl" = "2N HCl" = "2 M aq. HCl" (= "2 m hcl", "2 n hcl")
        s = _MOLAR.sub(lambda m: f"{m[1]} {'n' if m[2] == 'n' else 'm'} ", s).strip()
    changed = True
    while changed:
        changed = False
        for prefix in _DROP_PREFIXES:
            if s.startswith(prefix):
                s, changed = s[len(prefix) :], True
    out: list[str] = []
    for t in (_TOKEN_MAP.get(t, t) for t in s.split(" ")):
        if t == "aqueous" and out and out[-1] == "saturated":
            continue  # "saturated aqueous X" and "saturated X" are the same solution
        out.append(t)
    return " ".join(out)


_ARTICLE = re.compile(r"^(?:the|a|an)\s+", re.I)


def prose_key(name: str) -> str:
    """A :func:`material_key` without a leading article, for names as prose writes them: the
    product "the ester" is the text's "ester". (The compound table's keys are material keys:
    an article is never part of a substance's name there.)"""
    return material_key(_ARTICLE.sub("", name))


_CAS_NUMBER = re.compile(r"\d{2,7}-\d{2}-\d")


def looks_like_cas(text: str) -> bool:
    """True for a CAS registry number as written, '93-17-4' (the check digit not verified)."""
    return bool(_CAS_NUMBER.fullmatch(text))


_SPELLINGS = (("sulph", "sulf"), ("aluminium", "aluminum"), ("caesium", "cesium"),
              ("oestr", "estr"))  # fmt: skip


def compact_key(key: str) -> str:
    """A :func:`material_key` without spaces and hyphens, in American spelling: the form in
    which 'cyclohexane carboxaldehyde', 'ethylacetate' and 'methanesulphonyl chloride' meet
    'cyclohexanecarboxaldehyde', 'ethyl acetate' and 'methanesulfonyl chloride'."""
    out = key.replace(" ", "").replace("-", "")
    for british, american in _SPELLINGS:
        out = out.replace(british, american)
    return out


@functools.lru_cache(maxsize=4096)
def molar_mass(formula: str) -> float:
    """Molar mass in g/mol from IUPAC standard atomic weights (the molmass library).

    Raises ValueError for a formula that cannot be read.
    """
    import molmass

    try:
        return float(molmass.Formula(formula).mass)
    except Exception as exc:  # molmass raises its own FormulaError and others
        raise ValueError(f"cannot read the formula {formula!r}: {exc}") from exc


_FORMULA_NAME = re.compile(r"^(?:[A-Z][a-z]?\d*|\((?:[A-Z][a-z]?\d*)+\)\d*)+$")


def hill_formula(formula: str) -> str | None:
    """The Hill form of a formula (carbon, hydrogen, then the rest alphabetically; without
    carbon all alphabetically), e.g. 'NaHCO3' → 'CHNaO3', or None if it cannot be read."""
    import molmass

    try:
        counts = {el: item.count for el, item in molmass.Formula(formula).composition().items()}
    except Exception:
        return None
    first = [el for el in ("C", "H") if el in counts] if "C" in counts else []
    order = first + sorted(el for el in counts if el not in first)
    return "".join(el + (str(counts[el]) if counts[el] != 1 else "") for el in order)


def looks_like_formula(name: str) -> bool:
    """True for a name written as an inorganic-style formula ('NaNO2', 'HCl', 'AlCl3'): element
    symbols with counts, at least two elements, and a digit or a two-letter symbol, so that
    capitals-only abbreviations ('NBS', 'NIS') are not read as formulas."""
    symbols = re.findall(r"[A-Z][a-z]?", name)
    return (
        bool(_FORMULA_NAME.match(name))
        and len(symbols) >= 2
        and bool(re.search(r"\d|[a-z]", name))
        and all(s in _element_symbols() for s in symbols)  # 'Et3N', 'MeOH' are not formulas
    )


def inorganic(formula: str | None) -> bool:
    """An inorganic compound: no carbon, or carbon only as carbonate or cyanide. By volume, it
    is an aqueous solution (common practice)."""
    rest = re.sub(r"H?CO3|CN", "", formula or "")
    return bool(formula) and not re.search(r"C(?![a-z])", rest)


@functools.lru_cache(maxsize=1)
def _element_symbols() -> frozenset[str]:
    import molmass

    return frozenset(e.symbol for e in molmass.ELEMENTS)


# ---------------------------------------------------------------------- SMILES
# A SMILES string is read for its molecular formula only (OpenSMILES: atoms, bonds, branches,
# rings, bracket atoms, aromatic atoms). RDKit would do it, at 160 MB installed; the tests
# hold this reader to RDKit's formulas.
_ORGANIC = {"B": (3,), "C": (4,), "N": (3, 5), "O": (2,), "P": (3, 5), "S": (2, 4, 6),
            "F": (1,), "Cl": (1,), "Br": (1,), "I": (1,)}  # fmt: skip
_AROMATIC = {"b": "B", "c": "C", "n": "N", "o": "O", "p": "P", "s": "S"}
_SMILES_TOKEN = re.compile(
    r"(?P<bracket>\[[^\]]+\])|(?P<atom>Cl|Br|[BCNOPSFI]|[bcnops])|(?P<bond>[-=#$:/\\])|"
    r"(?P<ring>%\d\d|\d)|(?P<open>\()|(?P<close>\))|(?P<dot>\.)"
)
_BRACKET = re.compile(
    r"^\[(?:\d+)?(?P<el>[A-Z][a-z]?|[bcnops]|se|as)(?:@+)?(?:TH\d|AL\d|SP\d|TB\d+|OH\d+)?"
    r"(?:H(?P<h>\d*))?(?P<charge>[+-]+\d*)?(?::\d+)?\]$"
)
_ORDER = {"-": 1, "=": 2, "#": 3, "$": 4, ":": 1, "/": 1, "\\": 1}


@functools.lru_cache(maxsize=1024)
def formula_from_smiles(smiles: str) -> str | None:
    """The molecular formula (Hill order, no charge) of a SMILES string, or None when it is
    not one this reader can read."""
    atoms: list[list] = []  # [element, aromatic, explicit H or None, bond order sum]
    counts: dict[str, int] = {}
    prev: int | None = None
    stack: list[int | None] = []
    rings: dict[str, tuple[int, str | None]] = {}
    bond: str | None = None
    pos = 0
    while pos < len(smiles):
        m = _SMILES_TOKEN.match(smiles, pos)
        if m is None:
            return None
        pos = m.end()
        kind, text = m.lastgroup, m.group(0)
        if kind in {"atom", "bracket"}:
            atom = _smiles_atom(text, kind)
            if atom is None:
                return None
            atoms.append(atom)
            here = len(atoms) - 1
            if prev is not None:
                _bond(atoms, prev, here, bond)
            prev, bond = here, None
        elif kind == "bond":
            bond = text
        elif kind == "ring":
            if prev is None:
                return None
            if text in rings:
                other, first_bond = rings.pop(text)
                _bond(atoms, other, prev, bond or first_bond)
            else:
                rings[text] = (prev, bond)
            bond = None
        elif kind == "open":
            stack.append(prev)
        elif kind == "close":
            if not stack:
                return None
            prev = stack.pop()
        else:  # "." another component
            prev = None
    if rings or stack or not atoms:
        return None
    for element, aromatic, hydrogens, bonds in atoms:
        counts[element] = counts.get(element, 0) + 1
        if hydrogens is None:  # an organic-subset atom: its implicit hydrogens
            used = bonds + (1 if aromatic else 0)
            valence = next((v for v in _ORGANIC[element] if v >= used), used)
            hydrogens = valence - used
        if hydrogens:
            counts["H"] = counts.get("H", 0) + hydrogens
    return _hill(counts)


def _smiles_atom(text: str, kind: str) -> list | None:
    if kind == "atom":
        element = _AROMATIC.get(text, text)
        return [element, text in _AROMATIC, None, 0]
    m = _BRACKET.match(text)
    if m is None:
        return None
    el = m.group("el")
    aromatic = el in _AROMATIC or el in {"se", "as"}
    element = {"se": "Se", "as": "As"}.get(el, _AROMATIC.get(el, el))
    h = m.group("h")
    return [element, aromatic, 0 if h is None else int(h or 1), 0]


def _bond(atoms: list[list], a: int, b: int, bond: str | None) -> None:
    order = _ORDER.get(bond or "-", 1)
    atoms[a][3] += order
    atoms[b][3] += order


def _hill(counts: dict[str, int]) -> str:
    """A formula in Hill order: C, then H, then the rest alphabetically (no C: alphabetical)."""
    order = ["C", "H", *sorted(k for k in counts if k not in {"C", "H"})] if "C" in counts \
        else sorted(counts)  # fmt: skip
    return "".join(f"{el}{counts[el] if counts[el] > 1 else ''}" for el in order if el in counts)


_SMILES_LIKE = re.compile(r"^[A-Za-z0-9@+\-\[\]\(\)=#$:/\\%.*]+$")


def looks_like_smiles(text: str) -> bool:
    """True for a string that could be SMILES (no spaces, SMILES characters, a bond, a ring,
    a branch or a bracket atom): "CC(=O)O", "c1ccccc1"; "EtOAc" and "NaCl" are not."""
    return (bool(_SMILES_LIKE.match(text)) and any(ch in text for ch in "=#()[]1234567890")
            and formula_from_smiles(text) is not None)  # fmt: skip
