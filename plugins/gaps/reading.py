"""Gaps from reading the text: what was not read, and what does not add up.

- ``unread_gaps``: every quantity the text states that no rule read as an input, the
  product, an intermediate, a sample, equipment, a condition or characterisation; its size
  is the amount as written (a volume at an assumed 1 g/mL, moles at an assumed molar mass);
- ``several_products_gaps``: the product isolated several times with different masses, the
  product mass taken from the text (several runs or steps in one entry);
- ``procedure_elsewhere_gaps``: an entry that follows a procedure written elsewhere
  (``Following General procedure C``, ``in the same manner as in Example 1``) lacks that
  procedure's solvents and workup;
- ``plausibility_gaps``: a mass and an amount of substance stated together that disagree
  with the material's molar mass by more than 5 %; a stated yield that disagrees with the
  product's mass and the limiting reagent by more than 5 percentage points.
"""

from __future__ import annotations

import re

from capture.chem import molar_mass
from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import Entry, Gap, MaterialLine, ProductOut, ReactionFigures
from capture.quantities import first_of
from masstrail_plugins.gaps import allowances as al
from masstrail_plugins.prose import led


def _size(
    line: MaterialLine, scale: al.Scale, config: LabConfig
) -> tuple[float | None, str | None]:
    a = line.amounts[0] if line.amounts else None
    if a is None or a.kind not in {"mass", "volume", "amount"}:  # a unit masstrail cannot read
        return scale.typical_reagent()
    if a.kind == "mass":
        return a.total, f"{a.text} as written"
    if a.kind == "amount":
        mw, basis = al.value("assumed_molar_mass_g_mol", config)
        return a.total * mw / 1000, f"{a.text} as written × assumed {mw:g} g/mol ({basis})"
    d, basis = al.value("assumed_density_g_ml", config)
    return a.total * d, f"{a.text} as written × assumed {d:g} g/mL ({basis})"


@hookimpl(specname="masstrail_find_gaps")
def unread_gaps(
    set_aside: list[MaterialLine], materials: list[MaterialLine], product: ProductOut,
    config: LabConfig,
) -> list[Gap]:  # fmt: skip
    """A gap for each quantity that was not read: it may be an input the figure misses."""
    gaps = []
    scale = None
    for line in set_aside:
        if line.role != "unread":
            continue
        scale = scale or al.Scale.of(materials, product)
        grams, basis = _size(line, scale, config)
        said = line.stated or line.name
        if line.problem:  # the amount itself cannot be read
            message = f"{line.problem}; until it is rewritten, '{said}' is not in the figures"
        else:
            message = (f"'{said}' was not read as an input, the product or anything else, so "
                       f"it is not in the figures; if it is an input, write it as "
                       f"'NAME ({said})'")  # fmt: skip
        gaps.append(Gap(
            kind="unread_amount", item=said, severity="major", evidence=line.evidence,
            message=message,
            allowance_g=None if grams is None else round(grams, 4), allowance_basis=basis,
            missing_mass=True,
        ))  # fmt: skip
    return gaps


_ELSEWHERE = re.compile(
    r"\b(?:following|according\s+to|as\s+described\s+(?:in|for)|using|by|in\s+analogy\s+to|"
    r"analogous(?:ly)?\s+to|similar\s+to|(?:same|similar)\s+(?:manner|operation|procedure|way)\s+"
    r"as\s+(?:in|for|described\s+in))\s+"
    r"(?:(?:a|the)\s+(?:procedure|method|process)\s+(?:analogous|similar)\s+to\s+)?"
    r"(?:that\s+(?:described\s+)?(?:in|for)\s+|(?:the\s+)?(?:procedure|method|process)\s+"
    r"(?:described|given|outlined|reported|used)\s+(?:in|for|under)\s+)?(?:the\s+)?"
    r"(?P<ref>general\s+(?:procedure|method)\s*\(?[A-Z0-9]{0,3}\)?|GP\s*\d+|(?:Reference\s+)?"
    r"(?:Example|Preparation)\s*\(?\d+[a-z]?\)?(?:\s*\([A-Za-z0-9]+\))?|"
    r"(?:procedure|method)\s+[A-Z0-9]{1,3}\b)",
    re.I,
)


_ELSEWHERE_LED = led("fauibsFAUIBS", _ELSEWHERE)  # twice as fast over a whole body


@hookimpl(specname="masstrail_find_gaps")
def several_products_gaps(
    entry: Entry, product: ProductOut, set_aside: list[MaterialLine]
) -> list[Gap]:
    """The text isolates the product more than once, with different masses, and the product
    mass comes from it: a write-up of several runs or steps, whose inputs are all counted
    against the one mass masstrail takes (the last isolated)."""
    if entry.product.mass or product.mass_g is None:
        return []
    mentions = [m for m in set_aside if m.role == "product" and m.note not in {"crude", "crop"}]
    totals = [i for i, m in enumerate(mentions) if m.note == "total"]  # "a total of 2.27 g"
    masses = [(m, a.total) for m in mentions[totals[-1] if totals else 0 :]
              for a in m.amounts[:1] if a.kind == "mass"]  # fmt: skip
    grams = [g for _, g in masses]
    if len(grams) < 2 or max(grams) - min(grams) <= 0.05 * max(grams):
        return []
    if not any(abs(g - product.mass_g) <= 0.005 * g for g in grams):
        return []  # the product mass came from elsewhere (a balance reading)
    said = ", ".join(m.stated or m.name for m, _ in masses[:4])
    return [Gap(
        kind="several_product_masses", item=product.name or "product", severity="major",
        evidence=said,
        message=f"the text isolates the product {len(masses)} times with different masses "
        f"({said}); masstrail takes the last, {product.mass_g:g} g. If the entry describes "
        "several runs or steps, the inputs of all of them are counted against that mass: give "
        "the product mass in the front matter, or write each run as its own entry",
    )]  # fmt: skip


@hookimpl(specname="masstrail_find_gaps")
def unread_table_gaps(entry: Entry) -> list[Gap]:
    """A table that names materials but has no amount column masstrail reads: its amounts are
    not in the figures (a major gap each, unsized)."""
    return [Gap(
        kind="table_not_read", item=f"table, {where.split(':')[0]} of the text", severity="major",
        missing_mass=True,
        evidence=where,
        message="this table names materials but none of its columns is an amount masstrail "
        "reads, so its amounts are not in the figures: head a column 'Amount' (cells with "
        "units, '244 mg'), or put the unit in the header: 'Mass (mg)', 'Volume (mL)', 'mmol', "
        "'Equiv'",
    ) for where in entry.unread_tables]  # fmt: skip


@hookimpl(specname="masstrail_find_gaps")
def procedure_elsewhere_gaps(entry: Entry) -> list[Gap]:
    """An entry whose procedure is written elsewhere misses that procedure's materials."""
    m = _ELSEWHERE_LED.search(entry.body)
    if m is None:
        return []
    ref = " ".join(m.group("ref").split())
    return [Gap(
        kind="procedure_elsewhere", item=ref, severity="major", missing_mass=True,
        evidence=" ".join(entry.body[max(0, m.start() - 60) : m.end() + 60].split()),
        message=f"the entry follows {ref}, written elsewhere: the solvents, workup and "
        "purification of that procedure are not in this entry, so the E-factor misses them; "
        "record the amounts used in this run",
    )]  # fmt: skip


_WRITTEN_NUMBER = re.compile(r"\d+(?:[.,](\d+))?")


def _half_digit(amount) -> float:
    """Half a unit of the last decimal written, in the amount's canonical unit: the rounding
    an amount written "0.01 mmol" may hold (0.005 mmol). A whole number ("2 mmol") is taken
    as exact: its zeros may be significant."""
    m = _WRITTEN_NUMBER.search(amount.text)
    if m is None or m.group(1) is None or amount.low is not None or amount.multiplier != 1:
        return 0.0
    written = float(m.group(0).replace(",", "."))
    if written <= 0:
        return 0.0
    return 0.5 * 10 ** -len(m.group(1)) * amount.value / written


_PERCENT = re.compile(r"(\d{1,2}(?:\.\d+)?)\s*%")


def _fractions_near(line: MaterialLine, mass, moles) -> list[float]:
    """The strengths stated beside a mass and its moles ("60% in oil", "60% dispersion",
    "90% purity"), as fractions: the moles are then of the substance in the weighed mass."""
    text = line.evidence or ""
    at = [text.find(a.text) for a in (mass, moles) if a.text in text]
    if not at:
        return []
    window = text[max(0, min(at) - 40) : max(at) + 60]
    return [float(m.group(1)) / 100 for m in _PERCENT.finditer(window) if float(m.group(1)) >= 5]


def _mass_moles_gap(line: MaterialLine) -> Gap | None:
    mass, moles = first_of(line.amounts, "mass"), first_of(line.amounts, "amount")
    if mass is None or moles is None or not line.formula:
        return None
    try:
        mw = molar_mass(line.formula)
    except ValueError:
        return None
    expected = moles.total * mw / 1000
    # 5 %, or what the written digits allow: "11.63 mg, 0.01 mmol" (0.0127 mmol) agree
    slack = _half_digit(moles) * mw / 1000 + _half_digit(mass)
    for fraction in (1.0, *_fractions_near(line, mass, moles)):  # "NaH (60% in oil, 58 mg, …)"
        if abs(mass.total * fraction - expected) <= max(0.05 * expected, slack):
            return None
    return Gap(
        kind="mass_moles_mismatch", item=line.name, severity="major", evidence=line.evidence,
        message=f"{line.name}: {mass.text} and {moles.text} disagree ({moles.text} × "
        f"{mw:.2f} g/mol = {expected:.4g} g, {line.formula}); one of them is wrong, or the "
        "material is another form (salt, hydrate). The mass is used",
    )  # fmt: skip


def _yield_gap(
    mention: MaterialLine | None,
    product: ProductOut,
    limiting: MaterialLine | None,
    reaction: ReactionFigures | None,
) -> Gap | None:
    if mention is None or mention.stated_yield is None or product.mass_g is None:
        return None
    if reaction is not None and reaction.yield_ is not None:
        computed, how = reaction.yield_, "by the entry's equation"
    elif limiting is not None and limiting.moles_mmol and product.molar_mass:
        computed = product.mass_g / product.molar_mass * 1000 / limiting.moles_mmol
        how = f"from {limiting.moles_mmol:g} mmol of {limiting.name}, 1:1 assumed"
    else:
        return None
    if abs(computed - mention.stated_yield) <= 0.05:
        return None
    return Gap(
        kind="yield_mismatch", item=product.name or "product", severity="minor",
        evidence=mention.evidence,
        message=f"the text states a yield of {mention.stated_yield:.0%}, but "
        f"{product.mass_g:g} g of product is {computed:.0%} ({how}); check the masses",
    )  # fmt: skip


@hookimpl(specname="masstrail_find_gaps")
def plausibility_gaps(
    materials: list[MaterialLine],
    product: ProductOut,
    set_aside: list[MaterialLine],
    limiting: MaterialLine | None,
    reaction: ReactionFigures | None,
) -> list[Gap]:
    """What a careful chemist checks: grams against millimoles, the stated yield."""
    gaps = [g for g in map(_mass_moles_gap, materials) if g is not None]
    mentions = [m for m in set_aside if m.role == "product" and m.stated_yield is not None]
    gap = _yield_gap(mentions[-1] if mentions else None, product, limiting, reaction)
    return [*gaps, gap] if gap else gaps
