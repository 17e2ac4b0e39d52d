"""The ledger of a sentence: every quantity with a mass, volume, amount-of-substance or
equivalents unit (``4.36 g``, ``3 × 40 mL``, ``50 ml×2``, ``6–8 mL``, ``0.044 mMol``,
``52.4 g.``, ``2.0 equiv``, ``5 mol%``), each read when first asked for. The text reader
(``text.py``) gives each one exactly one class; one that cannot be read says why
(:func:`why_not`)."""

from __future__ import annotations

import re
from dataclasses import dataclass

from capture.models import AmountMention
from capture.quantities import TIMES_TEN, UNITS, AmountError, parse_amount, plain_amount
from masstrail_plugins.prose import led

# the ledger's units: mass, volume, amount of substance and equivalents ("2.0 equiv of NaH",
# "10 mol% of CuI": an input weighed against the limiting reagent), as written, longest first
LEDGER_UNITS = "|".join(
    sorted(
        {
            re.escape(v)
            for u, (_, kind) in UNITS.items()
            if kind in {"mass", "volume", "amount", "equivalents"}
            for v in (u, u.replace("μ", "µ"))
        },
        key=len,
        reverse=True,
    )
)  # fmt: skip (the micro sign U+00B5 is written as often as the Greek mu)
QUANTITY = re.compile(
    r"(?<![\w.,/-])(?P<q>(?P<more>(?:(?:ca\.?|approx\.?|about|~|≈)\s*)?"
    rf"(?:\d+(?!{TIMES_TEN})\s*[×xX*]\s*)?)"  # "3 × 40 mL", but not "2 x 10-3 mol"
    rf"(?P<num>\d+(?:[.,]\d+)?{TIMES_TEN}|"  # a power of ten: unread, saying why
    r"\d+(?:[.,]\d+)?(?:[eE][-+]?\d+|[⁰¹²³⁴⁵⁶⁷⁸⁹]+)?|[.,]\d+|(?:\d+\s?)?[½⅓⅔¼¾⅛⅜⅝⅞])"
    r"(?P<range>\s*(?:-|–|—|to)\s*\d+(?:[.,]\d+)?)?"
    rf"\s*(?P<unit>{LEDGER_UNITS}))(?![\w/])(?P<dot>\.(?!\d))?"
    r"(?:\s*[×x]\s*(?P<times>\d)(?![\d.]))?"
)
QUANTITY_LED = led(r"\dca~≈½⅓⅔¼¾⅛⅜⅝⅞.,", QUANTITY)  # a fifth faster over sentences
_NUMBER_OF_A_REFERENCE = re.compile(
    r"\b(?:[Ee]xamples?|[Ss]teps?|[Pp]reparations?|[Ii]ntermediates?|[Cc]ompounds?|[Tt]able|"
    r"[Ss]cheme|[Ff]ormula|No\.)\s*$"
)


@dataclass(slots=True)
class Quantity:
    """One quantity of the ledger, where it is, and its amount (read on first use)."""

    start: int  # in the sentence
    end: int
    match: re.Match
    offset: int  # of the sentence in the body
    _amount: AmountMention | bool | None = False  # read when first asked for

    @property
    def text(self) -> str:
        return self.match.group(0).rstrip(".")

    @property
    def amount(self) -> AmountMention | None:
        """The quantity read (None when it cannot be; its text is kept)."""
        if self._amount is False:
            self._amount = read_quantity(self.match, self.offset)
        return self._amount


def quantities(text: str, offset: int) -> list[Quantity]:
    """Every mass, volume, amount of substance and equivalents in ``text`` (at ``offset``)."""
    out = []
    for m in QUANTITY_LED.finditer(text):
        if m.group("range") and _NUMBER_OF_A_REFERENCE.search(text, max(0, m.start() - 40),
                                                               m.start()):  # fmt: skip
            # "obtained in Example 8 to 60 ml of toluene": 8 numbers the example
            high = m.start("range") + re.search(r"\d", m.group("range")).start()
            m = QUANTITY.match(text, high) or m
        out.append(Quantity(m.start(), m.end() if m.group("times") else m.end("q"), m, offset))
    return out


def read_quantity(m: re.Match, offset: int) -> AmountMention | None:
    written = m.group(0).rstrip(".")
    span = (offset + m.start(), offset + m.start() + len(written))
    num = m.group("num")
    amount = None
    if not (m.group("more") or m.group("range") or "," in num) and num.isascii() and \
            num.replace(".", "").isdigit():  # "2.76 g": the fast path  # fmt: skip
        amount = plain_amount(num, m.group("unit"), m.group("q"), span)
    if amount is None:
        try:
            amount = parse_amount(m.group("q"), span)
        except AmountError:
            return None
    if amount is not None and (m.group("times") or m.group("dot")):
        times = int(m.group("times") or 1)
        amount = amount.model_copy(update={"multiplier": amount.multiplier * times,
                                           "text": written})  # fmt: skip
    return amount


def quantity_end(content: str) -> int:
    m = QUANTITY.match(content.lstrip())
    return (len(content) - len(content.lstrip()) + m.end()) if m else len(content)


def why_not(text: str) -> str:
    """Why a quantity of the text could not be read (the amount reader's words)."""
    try:
        parse_amount(text)
    except AmountError as exc:
        return str(exc)
    return f"{text!r} could not be read as an amount"
