"""Amount strings to numbers: a strict front end in front of pint.

pint is the unit authority, but it must never see a chemist's raw text: it
reads ``ca. 5 g`` as centiyear·gram, ``5,2 g`` as 52 g and ``0.5 N`` as
newtons. So this module first normalises the text (Unicode NFKC, µ/μ/u,
U+2212, thin and non-breaking spaces), strips and records qualifiers
(``ca.``, ``~``, ``≈``), expands ``3 × 40 mL``, reads ranges (``10–15 mL``),
settles the decimal separator, and accepts only units on its own list. Only
then does pint convert to the canonical units g, mL, mmol, equiv and M, and
the dimensionality is checked against the kind the unit promised.
"""

from __future__ import annotations

import functools
import re
import threading
import unicodedata
from types import MappingProxyType

from capture.models import AmountMention, Kind


class AmountError(ValueError):
    """An amount string that cannot be read; the message says why and what to write."""


# unit as written (after normalisation, compared case-sensitively) → (pint unit, kind)
_UNITS: dict[str, tuple[str, Kind]] = {}


def _add(names: str, pint_unit: str, kind: Kind) -> None:
    for name in names.split():
        _UNITS[name] = (pint_unit, kind)


# the spellings real write-ups use ("0.010 gm", "450 mgs", "0.044 mMol", "10 cm3") are listed
# too; a unit followed by a full stop ("52.4 g.") is read by parse_amount
_add("ug mcg μg", "microgram", "mass")
_add("mg mgs milligram milligrams", "milligram", "mass")
_add("g gm gms gram grams", "gram", "mass")
_add("kg kgs kilogram kilograms", "kilogram", "mass")
_add("uL ul μL μl microliter microliters microlitre microlitres", "microliter", "volume")
_add("mL ml mls mLs cm3 cc milliliter milliliters millilitre millilitres", "milliliter", "volume")
_add("cL cl", "centiliter", "volume")
_add("dL dl", "deciliter", "volume")
_add("L l liter liters litre litres", "liter", "volume")
_add("umol μmol μmole μmoles micromol micromole micromoles", "micromole", "amount")
_add("mmol mMol mmole mmoles mmols millimol millimole millimoles", "millimole", "amount")
_add("mol mole moles mols", "mole", "amount")
_add("equiv equiv. eq eq. equivalent equivalents equivs", "equivalent", "equivalents")
# a loading against the limiting reagent ("CuI (10 mol%)"): 10 mol% is 0.10 equiv, not 10 mol
_add("mol% mol-% mole% mol.%", "mol_percent", "equivalents")
_UNITS["mol %"] = _UNITS["mole %"] = ("mol_percent", "equivalents")
_add("M mol/L mol/l", "molar", "concentration")
_add("mM mmol/L mmol/l", "millimolar", "concentration")

# The public table: every unit masstrail reads, as written → (pint unit, kind). Read-only.
UNITS = MappingProxyType(_UNITS)

CANONICAL: dict[Kind, str] = {
    "mass": "g",
    "volume": "mL",
    "amount": "mmol",
    "equivalents": "equiv",
    "concentration": "M",
}
_PINT_CANONICAL: dict[Kind, str] = {
    "mass": "gram",
    "volume": "milliliter",
    "amount": "millimole",
    "equivalents": "equivalent",
    "concentration": "molar",
}
_DIMENSION: dict[Kind, str] = {
    "mass": "[mass]",
    "volume": "[length] ** 3",
    "amount": "[substance]",
    "equivalents": "[stoichiometry]",
    "concentration": "[substance] / [length] ** 3",
}

_REFUSED = {
    "N": "N (normality, or newtons to a unit library) is not read; give the molarity in M",
    "%": "a bare percentage is not an amount; give the mass or volume",
    "wt%": "a mass fraction is not an amount by itself; give the mass or volume",
    "drops": "drops are not a measured amount; give the volume in mL",
}

_registry = None
_registry_lock = threading.Lock()


def registry():
    """The one pint registry of this process, built on first use (it takes ~0.2 s)."""
    global _registry
    if _registry is None:
        with _registry_lock:
            if _registry is None:
                import pint

                reg = pint.UnitRegistry()
                reg.define("equivalent = [stoichiometry] = equiv")
                reg.define("mol_percent = 0.01 * equivalent")
                _registry = reg
    return _registry


# Each unit's factor to the canonical unit of its kind (g, mL, mmol, equiv, M): SI prefixes,
# exact. pint stays the authority: tests/test_quantities.py holds every factor here to pint's
# conversion and every unit to its dimension, so the hot path need not import pint (building
# its registry costs about 0.45 s of every process that reads an amount).
FACTORS: dict[str, float] = {
    "microgram": 1e-6, "milligram": 1e-3, "gram": 1.0, "kilogram": 1e3,
    "microliter": 1e-3, "milliliter": 1.0, "centiliter": 10.0, "deciliter": 100.0,
    "liter": 1e3, "micromole": 1e-3, "millimole": 1.0, "mole": 1e3, "equivalent": 1.0,
    "mol_percent": 0.01, "molar": 1.0, "millimolar": 1e-3,
}  # fmt: skip


def pint_factor(pint_unit: str, kind: Kind) -> float:
    """Factor from ``pint_unit`` to the canonical unit of ``kind`` as pint converts it, its
    dimension checked (the reference :data:`FACTORS` is tested against)."""
    reg = registry()
    q = reg.Quantity(1.0, pint_unit)
    if not q.check(_DIMENSION[kind]):
        raise AmountError(f"{pint_unit} is not a {kind}")
    return float(q.to(_PINT_CANONICAL[kind]).magnitude)


@functools.lru_cache(maxsize=256)
def _factor(pint_unit: str, kind: Kind) -> float:
    """Factor from ``pint_unit`` to the canonical unit of ``kind``: the table's, else pint's."""
    known = FACTORS.get(pint_unit)
    return known if known is not None else pint_factor(pint_unit, kind)


def canonical_factor(unit: str) -> tuple[float, Kind] | None:
    """(factor to the canonical unit of its kind, kind) for a unit as written (``mg`` →
    ``(0.001, "mass")``), or None for a unit not in :data:`UNITS`."""
    known = _UNITS.get(unit)
    if known is None:
        return None
    return _factor(*known), known[1]


_WS = re.compile(r"\s+")
_SPACES = dict.fromkeys(map(ord, "\u00a0\u2009\u202f\u2007\u200a\u2002\u2003"), " ")


def normalise(text: str) -> str:
    """NFKC, one kind of µ, ASCII minus, plain spaces, collapsed whitespace."""
    text = text.translate(_SPACES)
    text = unicodedata.normalize("NFKC", text)
    text = text.replace("\u2212", "-").replace("µ", "μ")
    return _WS.sub(" ", text).strip()


_QUALIFIER = re.compile(r"^(?:ca\.?|c\.|approx\.?|approximately|about|circa|~|≈|∼)\s*", re.I)
_MULT = re.compile(r"^(\d+)\s*[×xX*]\s*")
_POSTFIX_MULT = re.compile(r"^(?P<body>\d.*?[A-Za-zμ.])\s*[×x]\s*(?P<n>\d)$")
_NUMBER = r"\d+(?:[.,]\d+)?|[.,]\d+"
_BODY = re.compile(
    rf"^(?P<a>{_NUMBER})(?:\s*(?:-|–|—|to)\s*(?P<b>{_NUMBER}))?\s*(?P<unit>[^\s\d].*)?$"
)


# a power of ten written after a number: "1.84×10-3", "5.2 x 10^-3", "3·10⁻⁴" (with a hyphen,
# one digit only: "2 x 10-15 mL" is two portions of 10-15 mL, "2 x 10-3" no range)
TIMES_TEN = r"\s*[×xX·*]\s*10\s*(?:\^\s*[-−+]?\d{1,3}|⁻?[⁰¹²³⁴⁵⁶⁷⁸⁹]{1,3}|[-−–]\s*\d(?![\d.,]))"
_SCIENTIFIC = re.compile(r"\d" + TIMES_TEN)
_SUPERSCRIPT = re.compile(r"[⁰¹²³⁴⁵⁶⁷⁸⁹₀₁₂₃₄₅₆₇₈₉]")
_FRACTION = re.compile(r"[½⅓⅔¼¾⅕⅖⅗⅘⅙⅚⅛⅜⅝⅞⁄]")
_EXPONENT = re.compile(r"\d(?:[.,]\d+)?\s*[eE][-+−]?\d")


def _refuse_odd_numbers(text: str) -> None:
    """Numbers that NFKC would turn into other numbers ('10²' into 102, '½' into '1⁄2') or
    that a unit reader would misread ('1e3 g'), and powers of ten ('1.84×10-3 mol'), are
    refused, saying what is wrong."""
    if _SCIENTIFIC.search(text):
        raise AmountError(f"{text!r}: the number is written with a power of ten; write it "
                          "out as a decimal in a suitable unit, e.g. '1.84 mmol' for "
                          "1.84×10-3 mol")  # fmt: skip
    if m := _SUPERSCRIPT.search(text):
        raise AmountError(f"{text!r}: the number has a superscript or subscript digit "
                          f"({m.group(0)}); write it out in plain digits, e.g. '100 mL' for "
                          "10² mL")  # fmt: skip
    if m := _FRACTION.search(text):
        raise AmountError(f"{text!r}: the number is written with a fraction sign ({m.group(0)});"
                          " write it as a decimal, e.g. '0.5 g' or '2.5 g'")  # fmt: skip
    if _EXPONENT.search(text):
        raise AmountError(f"{text!r}: the number is in exponent notation; write it out as a "
                          "decimal in a suitable unit, e.g. '1.5 mg' for 1.5e-3 g")  # fmt: skip


def _number(raw: str, whole: str) -> float:
    if "," in raw:
        head, _, tail = raw.partition(",")
        if len(tail) == 3 and head.lstrip("0"):  # "0,147" is 0.147: no thousands start at 0
            raise AmountError(
                f"{whole!r}: {raw!r} could be {head}.{tail} or {head}{tail}; "
                "write it without a thousands separator and with a decimal point"
            )
        raw = f"{head}.{tail}"
    return float(raw)


def plain_amount(
    number: str, unit: str, text: str, span: tuple[int, int] | None, multiplier: int = 1
) -> AmountMention | None:
    """A plain ``2.76 g`` (or ``3 × 40 mL``, with ``multiplier``) already split into number
    and unit; None if it is not one this fast path reads (the caller then uses
    :func:`parse_amount`, which says what is wrong)."""
    known = _PLAIN_UNITS.get(unit)
    if known is None:
        if unit not in _UNITS:
            return None
        pint_unit, kind = _UNITS[unit]
        known = _PLAIN_UNITS[unit] = (_factor(pint_unit, kind), CANONICAL[kind], kind)
    value = float(number) * known[0]
    if value <= 0 or multiplier < 1:
        return None
    return AmountMention(
        value=value, unit=known[1], kind=known[2], multiplier=multiplier, text=text, span=span
    )


def first_of(amounts: list[AmountMention], kind: Kind) -> AmountMention | None:
    """The first amount of ``kind`` among ``amounts`` (a line's mass, its volume …), or None."""
    return next((a for a in amounts if a.kind == kind), None)


# unit as written → (factor to the canonical unit, canonical unit, kind), filled on first use
_PLAIN_UNITS: dict[str, tuple[float, str, Kind]] = {}


_PLAIN = re.compile(r"(\d+(?:\.\d+)?) ?([A-Za-z]+\.?)")


def parse_amount(text: str, span: tuple[int, int] | None = None) -> AmountMention:
    """Parse one amount such as ``3.12 g``, ``ca. 5 g``, ``3 × 40 mL`` or ``10–15 mL``."""
    m = _PLAIN.fullmatch(text)
    if m and m.group(2) in _UNITS:
        # the common case, "2.76 g": plain ASCII, nothing to normalise or strip
        pint_unit, kind = _UNITS[m.group(2)]
        value = float(m.group(1)) * _factor(pint_unit, kind)
        if value > 0:
            return AmountMention(value=value, unit=CANONICAL[kind], kind=kind, text=text, span=span)
    original = text
    _refuse_odd_numbers(text)
    s = normalise(text)
    if not s:
        raise AmountError("the amount is empty")
    approximate = False
    m = _QUALIFIER.match(s)
    if m:
        approximate = True
        s = s[m.end() :]
    multiplier = 1
    m = _MULT.match(s)
    if m:
        multiplier = int(m.group(1))
        s = s[m.end() :]
        if multiplier < 1:
            raise AmountError(f"{original!r}: the multiplier must be at least 1")
    m = _POSTFIX_MULT.match(s)
    if m and multiplier == 1:  # "50 ml×2", "50 mL x 2"
        multiplier, s = int(m.group("n")), m.group("body")
    if s.startswith("-"):
        raise AmountError(f"{original!r}: an amount cannot be negative")
    m = _BODY.match(s)
    if not m:
        raise AmountError(f"{original!r} is not an amount; write a number and a unit, e.g. '2.5 g'")
    unit = (m.group("unit") or "").strip()
    if unit.endswith(".") and unit not in _UNITS and unit[:-1] in _UNITS:
        unit = unit[:-1]  # "52.4 g." at the end of a sentence
    if not unit:
        raise AmountError(f"{original!r} has no unit; write e.g. '{s} g' or '{s} mL'")
    if unit in _REFUSED:
        raise AmountError(f"{original!r}: {_REFUSED[unit]}")
    if unit not in _UNITS:
        raise AmountError(
            f"{original!r}: unknown unit {unit!r} (masstrail reads g, mg, kg, μg, mL, L, μL, "
            "mol, mmol, μmol, equiv, mol% and M)"
        )
    pint_unit, kind = _UNITS[unit]
    factor = _factor(pint_unit, kind)
    a = _number(m.group("a"), original) * factor
    b = _number(m.group("b"), original) * factor if m.group("b") else None
    if a <= 0 or (b is not None and b <= 0):
        raise AmountError(f"{original!r}: an amount must be greater than zero")
    low = high = None
    value = a
    if b is not None:
        if b < a:
            raise AmountError(f"{original!r}: the range runs backwards")
        low, high, value = a, b, (a + b) / 2
    return AmountMention(
        value=value,
        unit=CANONICAL[kind],
        kind=kind,
        multiplier=multiplier,
        approximate=approximate,
        low=low,
        high=high,
        text=original.strip(),
        span=span,
    )


_SPLIT = re.compile(r"\s*(?:;|,(?=\s))\s*")


def parse_amounts(text: str, offset: int | None = None) -> list[AmountMention]:
    """Parse a list such as ``4.36 g, 20.0 mmol``; a comma needs a space after it to split.

    With ``offset`` (the position of ``text`` in the body), each amount gets its span.
    """
    out: list[AmountMention] = []
    pos = 0
    for part in _SPLIT.split(text):
        start = text.find(part, pos)
        pos = start + len(part)
        if not part.strip():
            continue
        span = (offset + start, offset + start + len(part)) if offset is not None else None
        out.append(parse_amount(part, span))
    if not out:
        raise AmountError("the amount is empty")
    return out


def looks_like_amount(text: str) -> bool:
    """True when ``text`` starts like an amount (a number, maybe qualified, then a unit word)."""
    s = normalise(text)
    s = _QUALIFIER.sub("", s, count=1)
    s = _MULT.sub("", s, count=1)
    m = _BODY.match(s.split(",")[0].split(";")[0].strip())
    return bool(m and (m.group("unit") or "").strip() in _UNITS)


def disagreement(measured: float, typed: float) -> tuple[str, bool] | None:
    """How a measured mass and a typed one of the same thing disagree: (in words, whether by a
    power of ten). A ratio within 5 % of 10, 100 or 1000 (either way) is a slip of the decimal
    point or the unit; beyond 5 % otherwise, they are that far apart; within 5 %, None."""
    if measured <= 0 or typed <= 0:
        return None
    ratio = measured / typed
    for k in (10, 100, 1000):
        if abs(ratio / k - 1) <= 0.05 or abs(ratio * k - 1) <= 0.05:
            return f"a factor of {k} apart (a slip of the decimal point or the unit?)", True
    off = abs(ratio - 1)
    if off > 0.05:
        return f"{off:.1%} apart" if off < 0.1 else f"{off:.0%} apart", False
    return None
