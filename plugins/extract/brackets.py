"""Bracket groups: the amounts, solutions, mixtures and names inside one ``(…)``.

``(4.36 g, 20.0 mmol)`` and ``(3 × 40 mL)`` are read in one pass (:func:`plain_group`);
anything else part by part (:func:`read_parts`): amounts (``4.36 g``, ``2.0 equiv``),
solution descriptions (``1.4 M in cyclohexane``, ``60% in mineral oil``), mixtures
(``cyclohexane/acetone 9:1``) and material names (``SiO2`` in ``(SiO2, 35 g; …)``). A name
inside the bracket starts a new material; amounts attach to the material before them.
"""

from __future__ import annotations

import contextlib
import re

from capture.models import AmountMention
from capture.quantities import UNITS, AmountError, normalise, parse_amount, plain_amount
from masstrail_plugins.prose import clean_name

_SOLUTION_PART = re.compile(
    r"^(?P<c>\d+(?:[.,]\d+)?)\s*(?P<u>M|mM|mol/L)\s+(?:solution\s+)?in\s+(?P<solv>.+)$"
)


_FRACTION_PART = re.compile(
    r"^(?P<p>\d+(?:[.,]\d+)?)\s*(?:wt\s*)?%\s*(?:w/w\s+|wt\s+)?(?:dispersion\s+|suspension\s+|"
    r"solution\s+)?in\s+(?P<solv>.+)$",
    re.I,
)


# what an amount can start with: a digit, a qualifier (ca., approx., ~, ≈) or a decimal point
_AMOUNT_START = re.compile(r"[\d.,~≈∼<>]|(?:ca|c\.|approx|about|circa)", re.I)


_PART_SEP = re.compile(r";|,(?=\s)")


_BARE_NUMBERS = re.compile(r"[\d.,:\s]+")


PERCENT_ONLY = re.compile(r"^[<>~≈]?\s*\d+(?:[.,]\d+)?\s*%(?:\s*\w+)?$")


_NAME_TOKEN = r"[A-Za-z0-9(\[][\w\-'·,()\[\]]*"


_RATIO = r"\d+(?:\.\d+)?(?:\s*:\s*\d+(?:\.\d+)?)+"


# the share of the first liquid, or a gradient's two ends ("0-20%", "5 to 10%"), whose
# midpoint is taken (the mixture's written form, range included, is shown in each basis)
_SHARE = (
    r"(?<![-–.\d])(?<![-–]\s)(?:(?P<lo>\d+(?:\.\d+)?)\s*%?\s*(?:[-–]|to)\s*)?"
    r"(?P<p>\d+(?:\.\d+)?)"
)
_MIX_PERCENT = re.compile(
    rf"{_SHARE}\s*%\s*(?:v/v\s+)?(?P<a>{_NAME_TOKEN}(?:\s+[a-z][\w\-]*)?)\s+in\s+"
    rf"(?P<b>{_NAME_TOKEN}(?:\s+[a-z][\w\-]*)?)\s*$"
)


# "hexane/EtOAc 4:1", "EtOAc:hexane 1:3" (names joined by a slash or a colon)
_MIX_SLASH_RATIO = re.compile(
    rf"(?P<names>{_NAME_TOKEN}(?:\s*[/:]\s*{_NAME_TOKEN})+)\s*\(?(?P<r>{_RATIO})\)?\s*(?:v/v)?\s*$"
)
# "5% MeOH/DCM": the first named is that share, the second the rest
_MIX_PERCENT_SLASH = re.compile(
    rf"{_SHARE}\s*%\s*(?:v/v\s+)?(?P<a>{_NAME_TOKEN})\s*/\s*(?P<b>{_NAME_TOKEN})\s*$"
)


_MIX_RATIO_SLASH = re.compile(  # "4:1 hexane/EtOAc", "a 1:1:1 mixture of THF/MeOH/water"
    rf"(?P<r>{_RATIO})\s*(?:v/v\s+)?(?:(?:mixture|mixed solvent|solution)\s+of\s+)?"
    rf"(?P<names>{_NAME_TOKEN}(?:\s*/\s*{_NAME_TOKEN})+)\s*$"
)


def mixture_before(text: str) -> tuple[str, list[tuple[str, float]]] | None:
    """A mixture named at the end of ``text``: (as written, [(component, volume fraction)])."""
    text = text[-120:]
    if "%" not in text and "/" not in text and ":" not in text:
        return None
    for rx in (_MIX_PERCENT, _MIX_PERCENT_SLASH) if "%" in text else ():
        m = rx.search(text)
        p = float(m.group("p")) / 100 if m else 0
        if m and m.group("lo"):  # a gradient: its midpoint
            p = (p + float(m.group("lo")) / 100) / 2
        if 0 < p < 1:
            a, b = clean_name(m.group("a")), clean_name(m.group("b"))
            if a and b:
                return m.group(0).strip(), [(a, p), (b, 1 - p)]
    if "/" not in text and ":" not in text:
        return None
    for rx in (_MIX_SLASH_RATIO, _MIX_RATIO_SLASH):
        m = rx.search(text)
        if m:
            found = _mixture(m.group("names"), m.group("r"), m.group(0).strip())
            if found is not None:
                return found
    return None


def _mixture(names: str, ratio: str, written: str) -> tuple[str, list[tuple[str, float]]] | None:
    """("A/B" or "A:B", "4:1") → (written, [(A, 0.8), (B, 0.2)]), or None when they do not
    pair up."""
    split = [n.strip() for n in re.split(r"[/:]", names)]
    shares = [float(x) for x in ratio.replace(" ", "").split(":")]
    if len(split) != len(shares) or sum(shares) <= 0:
        return None
    cleaned = [clean_name(n) for n in split]
    if not all(cleaned):
        return None
    total = sum(shares)
    return written, [(c, r / total) for c, r in zip(cleaned, shares, strict=True)]


# after an amount: "500 mL of a 90/10 solution of CH2Cl2/MeOH", "of a 4:1 mixture of hexane
# and EtOAc" (a ratio written with a slash is one only between numbers)
_MIX_AFTER = re.compile(
    rf"\s*of\s+(?:an?\s+)?(?P<r>\d+(?:\.\d+)?(?:\s*[:/]\s*\d+(?:\.\d+)?)+)\s*(?:v/v\s+)?"
    rf"(?:mixture|solution|mixed solvent)\s+of\s+"
    rf"(?P<names>{_NAME_TOKEN}(?:\s*/\s*{_NAME_TOKEN})+|"
    rf"{_NAME_TOKEN}(?:\s*,\s*{_NAME_TOKEN})*,?\s+and\s+{_NAME_TOKEN})"
)


def mixture_after(text: str, pos: int) -> tuple[tuple[str, list[tuple[str, float]]], int] | None:
    """A mixture named with its ratio right after an amount that ends at ``pos`` ("of a 9:1
    mixture of A and B"): the mixture and where its mention ends."""
    m = _MIX_AFTER.match(text, pos)
    if m is None:
        return None
    names = re.sub(r",?\s+and\s+|\s*,\s*", "/", m.group("names"))
    found = _mixture(names, m.group("r").replace("/", ":"), " ".join(m.group(0).split()[1:]))
    return (found, m.end()) if found is not None else None


_RATIO_PART = re.compile(rf"^(?P<r>{_RATIO})\s*(?:v/v|by volume)?$")


def mixture_in(name: str | None, content: str) -> tuple[str, list[tuple[str, float]]] | None:
    """A mixture named before a bracket that gives its ratio among its amounts:
    "hexane/EtOAc (4:1, 500 mL)", "MeOH/H2O (5 mL, 1:1)"."""
    if not name or not ("/" in name or ":" in name) or ":" not in content:
        return None
    for part, _ in parts(content, 0):
        m = _RATIO_PART.match(part)
        if m:
            return _mixture(name, m.group("r"), f"{name} {m.group('r')}")
    return None


# "1.0 g 3.64 mmol", "228 mg. 2.3 mmole": two amounts with no comma between them
_ASCII_UNITS = "|".join(sorted((re.escape(u) for u in UNITS if u.isascii()), key=len, reverse=True))
_AMOUNT_JOINT = re.compile(
    rf"(?<=[A-Za-zμ.])\s+(?:and\s+)?(?=\d+(?:[.,]\d+)?\s*(?:{_ASCII_UNITS})\.?(?![A-Za-z]))"
)
_ENDS_WITH_AMOUNT = re.compile(rf"\d\s*(?:{_ASCII_UNITS})\.?$")


def _split_joined(piece: str, start: int) -> list[tuple[str, int]]:
    """Split at each space between an amount and the next number ("3 X 20 mL" stays whole)."""
    out, pos = [], 0
    for m in _AMOUNT_JOINT.finditer(piece):
        if _ENDS_WITH_AMOUNT.search(piece, pos, m.start()):
            out.append((piece[pos : m.start()], start + pos))
            pos = m.end()
    out.append((piece[pos:], start + pos))
    return out


def parts(content: str, offset: int) -> list[tuple[str, int]]:
    """Split bracket content at ';' and ', ' (a comma with a space), keeping offsets; a part
    that starts with a number is split again between two amounts written without a comma."""
    out = []
    pos = 0
    for m in _PART_SEP.finditer(content + ";"):
        piece = content[pos : m.start()]
        lead = len(piece) - len(piece.lstrip())
        start, piece = offset + pos + lead, piece.strip()
        if piece and piece[0].isdigit() and _AMOUNT_JOINT.search(piece):
            out += _split_joined(piece, start)
        elif piece:
            out.append((piece, start))
        pos = m.end()
    return out


class Group:
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


def plain_group(content: str, offset: int, name: str) -> Group | None:
    """The commonest brackets, "(2.76 g, 20.0 mmol)" and "(3 × 40 mL)": plain amounts only
    (a percentage among them is a yield or a purity and is passed over), read in one pass.
    None when the bracket holds anything else; :func:`read_group` then reads it part by part.
    """
    group = Group(name)
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


MAYBE_AMOUNT = re.compile(
    rf"\d\s*(?:(?:{_UNIT_WORDS})\.?(?![A-Za-z])|(?:M|mM|mol/L)\s+(?:solution\s+)?in\s)"
)


def read_group(content: str, offset: int, name: str | None, mixture) -> list[Group]:
    if name is not None and mixture is None:
        plain = plain_group(content, offset, name)
        if plain is not None:
            return [plain]
    if content.isascii() and not MAYBE_AMOUNT.search(content):
        return []
    return read_parts(content, offset, name, mixture)


def read_parts(content: str, offset: int, name: str | None, mixture) -> list[Group]:
    """Read a bracket part by part: amounts, solutions, mixtures and names (the general path,
    which the two shortcuts in :func:`read_group` must agree with)."""
    groups = [Group(name, mixture)]
    for part, start in parts(content, offset):
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
        worded = _worded_amount(part, start)
        if worded is not None:
            amount, rest = worded
            groups[-1].amounts.append(amount)
            groups[-1].texts.append(amount.text)
            m = _SOLUTION_PART.match(normalise(rest)) or _FRACTION_PART.match(normalise(rest))
            if m:
                groups[-1].solvent = clean_name(m.group("solv"))
            solvent = _amount_and_name(rest, start + part.find(rest)) if rest else None
            if solvent is not None:  # "(120 mg in 8 mL dry methylene chloride)"
                groups.append(solvent)
            continue
        if PERCENT_ONLY.match(norm) or _BARE_NUMBERS.fullmatch(norm):
            continue  # a yield, a purity or a bare ratio
        mix = mixture_before(norm)
        if mix is not None:
            groups.append(Group(mix[0], mix))
            continue
        cleaned = clean_name(norm)
        if cleaned is None:
            continue
        if groups[-1].name is None and not groups[-1].amounts:
            groups[-1].name = cleaned  # "(Na2SO4, 5 g)" after "dried"
        elif groups[-1].amounts:
            groups.append(Group(cleaned))  # "(SiO2, 35 g; DCM, 250 mL)": the next material
        # else a description of the material before the bracket: "Carbon dioxide (dry ice, …)"
    return [g for g in groups if g.amounts and g.name]


# "0.680 g of 60% dispersion in oil", "147 ml of 1N solution in CH2Cl2", "I-14b: 150 mg",
# "50 ml each", "total 150 cc."
_WORDED = re.compile(
    r"^(?:[\w()-]{1,12}:\s*|(?:total|in\s+total|overall)\s+)?(?P<a>\d[^a-zA-Zμ]*[a-zA-Zμ]+\.?)"
    r"(?:\s+(?:of|in)\s+(?P<rest>.+)|\s+(?:each|in\s+total|total|overall))?$",
    re.I,
)


def _worded_amount(part: str, start: int) -> tuple[AmountMention, str] | None:
    """An amount with words around it, and the words after "of" (a solution's strength)."""
    m = _WORDED.match(part)
    if m is None or (m.group(0) == m.group("a")):
        return None
    try:
        at = start + m.start("a")
        return parse_amount(m.group("a"), (at, at + len(m.group("a")))), m.group("rest") or ""
    except AmountError:
        return None


_AMOUNT_NAME = re.compile(r"^(?P<a>\d[\d.,]*\s*[a-zA-Zμ]+\.?)\s+(?P<name>[A-Za-z(].*)$")


def _amount_and_name(text: str, start: int) -> Group | None:
    """A material written amount first, "8 mL dry methylene chloride", as a group."""
    m = _AMOUNT_NAME.match(text)
    if m is None:
        return None
    name = clean_name(m.group("name"))
    try:
        amount = parse_amount(m.group("a"), (start, start + len(m.group("a"))))
    except AmountError:
        return None
    if name is None:
        return None
    group = Group(name)
    group.amounts.append(amount)
    group.texts.append(amount.text)
    return group


def first_mass(content: str, offset: int) -> AmountMention | None:
    for part, start in parts(content, offset):
        try:
            a = parse_amount(part, (start, start + len(part)))
        except AmountError:
            continue
        if a.kind == "mass":
            return a
    return None
