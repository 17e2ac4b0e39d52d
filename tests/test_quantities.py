"""The amount front end: a golden table of the strings pint alone misreads."""

from __future__ import annotations

import contextlib
import re

import pytest
from hypothesis import example, given
from hypothesis import strategies as st

from capture.quantities import (
    FACTORS,
    UNITS,
    AmountError,
    normalise,
    parse_amount,
    parse_amounts,
    pint_factor,
)

GOLDEN = [
    # text, value, unit, multiplier, approximate, low, high
    ("3.12 g", 3.12, "g", 1, False, None, None),
    ("250 mg", 0.25, "g", 1, False, None, None),
    ("1.5 kg", 1500.0, "g", 1, False, None, None),
    ("40 mL", 40.0, "mL", 1, False, None, None),
    ("8 µL", 0.008, "mL", 1, False, None, None),  # U+00B5 micro sign
    ("8 μL", 0.008, "mL", 1, False, None, None),  # U+03BC Greek mu
    ("8 uL", 0.008, "mL", 1, False, None, None),
    ("1.5 L", 1500.0, "mL", 1, False, None, None),
    ("20 mmol", 20.0, "mmol", 1, False, None, None),
    ("0.5 mol", 500.0, "mmol", 1, False, None, None),
    ("250 µmol", 0.25, "mmol", 1, False, None, None),
    ("1.2 equiv", 1.2, "equiv", 1, False, None, None),
    ("1.2 eq.", 1.2, "equiv", 1, False, None, None),
    ("2.5 M", 2.5, "M", 1, False, None, None),
    # a loading in mol% is a share of the limiting reagent's moles (IUPAC Green Book: the
    # percent is 0.01), not moles: "5 mol%" is 0.05 equiv, never 5 mol
    ("5 mol%", 0.05, "equiv", 1, False, None, None),
    ("10 mol %", 0.1, "equiv", 1, False, None, None),
    ("2.5 mole%", 0.025, "equiv", 1, False, None, None),
    ("3 × 40 mL", 40.0, "mL", 3, False, None, None),
    ("3x40 mL", 40.0, "mL", 3, False, None, None),
    ("3 X 40 mL", 40.0, "mL", 3, False, None, None),
    ("3*40mL", 40.0, "mL", 3, False, None, None),
    ("ca. 5 g", 5.0, "g", 1, True, None, None),  # pint alone: 5 centiyear·gram
    ("~50 mL", 50.0, "mL", 1, True, None, None),  # pint alone drops the "~"
    ("≈ 2 g", 2.0, "g", 1, True, None, None),
    ("10–15 mL", 12.5, "mL", 1, False, 10.0, 15.0),
    ("10-15 mL", 12.5, "mL", 1, False, 10.0, 15.0),
    ("2,5 g", 2.5, "g", 1, False, None, None),  # pint alone: 52 g
    ("8\u2009µL", 0.008, "mL", 1, False, None, None),  # thin space
    ("8\u00a0mL", 8.0, "mL", 1, False, None, None),  # no-break space
]


@pytest.mark.parametrize(
    ("text", "value", "unit", "mult", "approx", "low", "high"), GOLDEN, ids=[g[0] for g in GOLDEN]
)
def test_golden_amounts(text, value, unit, mult, approx, low, high):
    a = parse_amount(text)
    assert a.value == pytest.approx(value)
    assert (a.unit, a.multiplier, a.approximate) == (unit, mult, approx)
    assert a.low == (pytest.approx(low) if low is not None else None)
    assert a.high == (pytest.approx(high) if high is not None else None)


def test_a_decimal_comma_after_a_leading_zero_is_read():
    """ "0,147 mmol" can only be 0.147 (a thousands separator never follows a lone 0), so it is
    read; "1,120 g" stays refused as ambiguous (1.120 or 1120)."""
    assert parse_amount("0,147 mmol").value == pytest.approx(0.147)
    assert parse_amount("0,250 g").value == pytest.approx(0.25)


REFUSED = [
    ("5 blorps", "unknown unit 'blorps'"),
    ("0 g", "greater than zero"),
    ("-3 g", "negative"),
    ("\u22123 g", "negative"),  # U+2212 minus sign
    ("0.5 N", "normality"),  # pint alone: newtons
    ("5 Mm", "unknown unit 'Mm'"),  # pint alone: megametres
    ("1,000 g", "could be 1.000 or 1000"),
    ("12,500 mL", "could be 12.500 or 12500"),
    ("12", "has no unit"),
    ("", "empty"),
    ("15–10 mL", "backwards"),
    ("10 wt%", "mass fraction"),
    ("a spatula tip", "is not an amount"),
]


@pytest.mark.parametrize(("text", "message"), REFUSED, ids=[r[0] or "empty" for r in REFUSED])
def test_refused_amounts(text, message):
    with pytest.raises(AmountError, match=message):
        parse_amount(text)


def test_list_of_amounts_keeps_spans():
    text = "4.36 g, 20.0 mmol"
    got = parse_amounts(text, offset=100)
    assert [(a.value, a.unit) for a in got] == [(4.36, "g"), (20.0, "mmol")]
    assert [a.span for a in got] == [(100, 106), (108, 117)]
    assert text[got[1].span[0] - 100 : got[1].span[1] - 100] == "20.0 mmol"


def test_decimal_comma_is_not_split():
    assert [a.value for a in parse_amounts("2,5 g")] == [2.5]


units = st.sampled_from(["g", "mg", "kg", "mL", "µL", "μL", "uL", "L", "mmol", "mol", "equiv", "M"])
numbers = st.decimals(min_value="0.001", max_value="9999", places=3).map(str)


@given(numbers, units, st.sampled_from([" ", "", "\u2009", "\u00a0", "  "]))
@example("1.000", "µL", "\u2009")
def test_spacing_and_mu_change_nothing(number, unit, space):
    """Adding or swapping white space, or µ for u, never changes the reading."""
    base = parse_amount(f"{number} {unit}")
    other = parse_amount(f"{number}{space}{unit.replace('µ', 'u').replace('μ', 'u')}")
    assert (other.value, other.unit) == (base.value, base.unit)


@given(
    st.text(
        alphabet=st.sampled_from(
            list("0123456789.,;×x*~≈-– µμumgLMlol\u2009\u00a0\u2212=+@\t\r\nequivca")
        ),
        max_size=20,
    )
)
def test_only_our_error_escapes(text):
    """Whatever the text, the parser answers or raises AmountError, nothing else."""
    with contextlib.suppress(AmountError):
        parse_amount(text)


@given(st.text(max_size=30))
def test_normalise_is_idempotent(text):
    assert normalise(normalise(text)) == normalise(text)


@pytest.mark.parametrize(
    ("text", "says"),
    [("10² mL", "superscript or subscript digit (²)"), ("½ g", "fraction sign (½)"),
     ("2 ½ g", "fraction sign (½)"), ("1e308 g", "exponent notation"),
     ("1.5e-3 g", "exponent notation"), ("1.84×10-3 mol", "power of ten"),
     ("5.2 x 10^-3 mol", "power of ten"), ("3·10⁻⁴ mol", "power of ten"),
     ("2 × 10-3 g", "power of ten")],
)  # fmt: skip
def test_numbers_unicode_would_change_are_refused_saying_why(text, says):
    """NFKC would read '10²' as 102 and '½' as '1⁄2': never a silent wrong number."""
    with pytest.raises(AmountError, match=re.escape(says)):
        parse_amount(text)


def test_odd_numbers_in_front_matter_and_text_are_named_never_misread(notebook):
    notebook.write(
        "e.md",
        """
        ---
        title: odd numbers
        product: {name: p, mass: 1.00 g}
        materials: [{name: A, amount: 2.00 g}, {name: water, amount: 10² mL}]
        ---
        Then ½ g of the salt was added, and brine (10² mL).
        """,
    )
    notebook.scan()
    side = notebook.sidecar("e.md")
    water = next(m for m in side["materials"] if m["name"] == "water")
    assert water["mass_g"] is None and "superscript" in water["problem"]
    unread = {g["item"]: g["message"] for g in side["gaps"] if g["kind"] == "unread_amount"}
    assert "fraction sign" in unread["½ g"] and "superscript" in unread["10² mL"]
    assert all(m["mass_g"] != 102 for m in side["materials"])


@pytest.mark.parametrize("written", sorted(UNITS))
def test_every_units_factor_is_pints(written):
    """The factor table the hot path uses (no pint import) against pint, the unit authority:
    every unit masstrail reads converts as pint converts it, to within rounding, and is of
    the dimension its kind promises."""
    pint_unit, kind = UNITS[written]
    assert pint_unit in FACTORS, pint_unit
    assert FACTORS[pint_unit] == pytest.approx(pint_factor(pint_unit, kind), rel=1e-12)


def test_reading_amounts_does_not_import_pint():
    import subprocess
    import sys

    code = ("import sys; from capture.quantities import parse_amounts; "
            "parse_amounts('3 x 20 mL'); parse_amounts('0.5 mmol'); parse_amounts('2.0 kg'); "
            "print('pint' in sys.modules)")  # fmt: skip
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert out.stdout.strip() == "False", out.stderr
