"""Amounts in procedure text, read the way chemists write them, each one accounted for.

Plugin ``text`` (``masstrail_extract_amounts``). The reader works sentence by sentence:

1. **Sentences** are split at full stops that end a sentence (not the one in ``sat. aq.``
   or ``ca.``); table rows are left to the readers.
2. **Characterisation** (``; mp 71–72 °C``, ``, Rf 0.4``, ``: 1H NMR (…)``, HRMS, IR) is the
   tail of a sentence: it is cut off there, and what comes before is read.
3. **The ledger**: every quantity with a mass, volume, amount-of-substance or equivalents
   unit (``4.36 g``, ``3 × 40 mL``, ``50 ml×2``, ``6–8 mL``, ``0.044 mMol``, ``52.4 g.``,
   ``2.0 equiv``, ``5 mol%``) is listed (``ledger.py``), and each must end in exactly one
   class: an input, the product, an intermediate or crude mass, a sample, equipment, a
   condition, characterisation, or **unread**.
4. **Quantities before their name** (``0.8 g (3.93 mmol) of X``, ``in 10 mL EtOH``,
   ``8.16 g ammonium acetate (106 mmol)``) are read with the name after them
   (:func:`masstrail_plugins.extract.names.name_after`); a bracket of amounts right after
   the quantity or the name belongs to the same mention.
5. **Bracket groups** (``X (2.0 g, 5.0 mmol)``) are read with the name before them
   (``brackets.py``, ``names.name_before``);
   mixtures (``toluene/MeOH 19:1 (300 mL)``) are split by volume fraction.
6. **Classes.** A mention after a product word (``to give``, ``afforded``, ``to obtain``; not
   ``obtained in Example 3``) up to the end of its clause, one named ``the title compound``,
   one followed by ``was obtained``, or a bracket with a yield (``(2.41 g, 86%)``) is the
   product; crude masses, residues and fractions are intermediates; aliquots are samples;
   flasks and vials are equipment; ``concentrated to 50 mL`` and rates (``5 mL/min``) are
   conditions. Inputs get the operation and stage of the nearest operation word.

Lines come back with their ``role``: None for inputs, else ``product``, ``intermediate``,
``sample``, ``equipment``, ``condition``, ``characterisation`` or ``unread``; the merge
keeps the inputs and sets the rest aside, and each unread quantity becomes a gap.
"""

from __future__ import annotations

import contextlib
import functools
import re

from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import AmountMention, Entry, MaterialLine, Stage
from capture.quantities import AmountError, parse_amount
from masstrail_plugins.extract.brackets import (
    MAYBE_AMOUNT,
    PERCENT_ONLY,
    Group,
    mixture_after,
    mixture_before,
    mixture_in,
    parts,
    read_group,
)
from masstrail_plugins.extract.clauses import Sentence
from masstrail_plugins.extract.ledger import quantities, quantity_end, why_not
from masstrail_plugins.extract.names import name_after, name_before
from masstrail_plugins.prose import characterisation_start, sentences

# "(ca. 30 mL remained)", "(24 L collected for reuse)", "30 mL of solvent were distilled off":
# what left the flask, not an input
_TAKEN_OUT = re.compile(
    r"\s*(?:(?:was|were|had\s+been|has\s+been|is|are)\s+(?:then\s+)?(?:collected|distilled|"
    r"evaporated|removed|recovered|withdrawn|taken\s+out|left\b(?!\s+to\b))|remained)\b",
    re.I,
)  # "0.82 g of a yellow oil remained", "5 mL was left" (not "was left to stand")
_TAKEN_OUT_INSIDE = re.compile(
    r"^\s*(?:remained|remaining|left|collected|distilled|evaporated|removed|recovered)\b", re.I
)
# "a liquid was recovered comprising 24.7 g of X, 1.4 g of Y": the parts of what came out
_COMPOSITION = re.compile(
    r"\b(?:recovered|obtained|isolated|collected|distilled(?:\s+off)?|formed)\s*,?\s*"
    r"(?:which\s+(?:was|were)\s+)?(?:comprising|containing|consisting\s+of|composed\s+of)\b",
    re.I,
)
# the parts end where the sentence goes on ("… obtained, containing 10 mmol of LDA, was added
# to X (2 g)": X is an input)
_PARTS_END = re.compile(r"\b(?:was|were|is|are|then)\b|;")
# a bracket right after a quantity holding a number in a unit masstrail does not read (old
# patents write moles as "m": "17 g (0.10 m) of X"); no name is in it
_UNIT_ASIDE = re.compile(r"\s*(\()\s*\d+(?:[.,]\d+)?\s*[A-Za-z]{1,3}\.?\s*\)")
_PASSIVE_PRODUCT = re.compile(
    r"\s*(?:\([^()]*\)\s*)?(?:was|were|is|are)\s+(?:then\s+|thereby\s+|thus\s+)?"
    r"(?:obtained|isolated|collected|afforded|produced|formed)\b"
)
# "Yield: 82% (415 mg)", "82% yield (415 mg)", "Yield: 415 mg", "Mass of product: 1.20 g": the
# mass after a yield or a product's mass is the product's (a bare "the yield (…)" is not
# enough: a colon, or a percentage, says so)
_YIELD_BEFORE = re.compile(
    r"\byield\s*[:=]\s*(?:\d+(?:[.,]\d+)?\s*%\s*)?$|\byield\s*[:=]?\s*\d+(?:[.,]\d+)?\s*%\s*$|"
    r"\d+(?:[.,]\d+)?\s*%\s*(?:isolated\s+|overall\s+)?yield\s*[:=]?\s*$|"
    r"^\s*(?:crude\s+|isolated\s+|overall\s+)?yield\s*[:=]?\s*$|"  # "Yield 1.1 g (85%)"
    r"\b(?:(?:mass|weight)\s+of\s+(?:the\s+)?(?:\w+\s+)?product|product\s+(?:mass|weight))"
    r"\s*(?:\(\w+\)\s*)?[:=]\s*$|"
    r"\bconstant\s+(?:weight|mass)\s+(?:of\s+)?$|"  # "dried to a constant weight of 3.21 g"
    r"\bm\s*\(\s*product\s*\)\s*[:=]\s*$",  # "m(product) = 1.69 g"
    re.I,
)
# a bracket group, allowing one level of nested brackets inside
_GROUP = re.compile(r"\(((?:[^()]++|\([^()]*+\))*+)\)")  # possessive: no backtracking
_DIGIT = re.compile(r"[\d½⅓⅔¼¾⅛⅜⅝⅞]")  # a number, or a fraction sign
# units of mass and volume from outside the lab's system: an amount written in one is not
# read, and says so (the amount reader's "unknown unit" message)
_FOREIGN_UNIT = re.compile(
    r"(?<![\w.])\d+(?:[.,]\d+)?\s*(?:gallons?|gal|fl\.?\s?oz|ounces?|oz|pounds?|lbs?|pints?|"
    r"quarts?|qt|cups?|teaspoons?|tsp|tablespoons?|tbsp|drams?|grains?)\b",
    re.I,
)
# every match holds one of these (case-folded): most sentences hold none, and the pattern is
# run only on those that do
_FOREIGN_HINTS = ("gal", "oz", "ounce", "pound", "lb", "pint", "quart", "qt", "cup", "tsp",
                  "teaspoon", "tbsp", "tablespoon", "dram", "grain")  # fmt: skip
_PER = re.compile(r"\s*(?:per|for\s+each)\s", re.I)
_PERCENT_REMARK = re.compile(r"\d+(?:[.,]\d+)?\s*%\s+\w")  # "(35% calculated from …)"
# "a SNAP 25 g column", "(330g column)": a prepacked column is sold by its silica's mass
_COLUMN_AFTER = re.compile(r"\s*(?:[\w-]+\s+){0,2}?(?:column|cartridge)s?\b", re.I)
# "each 600 mg scale", "a 2-g batch", "200mg trial purification": the size of a run, no material
_GRADIENT = re.compile(r"\d\s*%?\s*(?:[-–]|to)\s*\d+(?:\.\d+)?\s*%")  # "0-10% MeOH/DCM"
# "giving a total of 1.45 g", "combined yield 1.45 g": the product's whole mass (with no name
# after it: "a total of 50 mL of water" is water)
_TOTAL_BEFORE = re.compile(
    r"\btotal\s+(?:yield\s+|mass\s+)?(?:of\s+)?$|\bcombined\s+(?:yield|mass|weight)\s*[:=]?\s*"
    r"(?:of\s+)?$",
    re.I,
)
# "Theoretical yield = 2.12 g", "theoretical mass: 2.12 g": worked out, not weighed
_THEORETICAL = re.compile(
    r"\b(?:theoretical|theor\.|expected|calculated|calc\.|maximum|max\.)\s+(?:yield|mass)\b"
    r"[^.;,]{0,12}$",
    re.I,
)
_LABEL_HINTS = ("theor", "expect", "calc", "max", "recovered")  # lower case
_RECOVERED_LABEL = re.compile(r"\brecovered\s*[:=]\s*$", re.I)  # "Recovered: 1.2 g of …"
_RUN_SIZE = re.compile(r"\bscale$", re.I)  # a bracket after "scale" gives the run's size
_SCALE_AFTER = re.compile(
    r"[\s-]*(?:trial\s+|test\s+)?(?:scale|batch|run|experiment|purification|"
    r"reaction(?!\s+(?:mixture|solution|solvent|medium|vessel|flask|vial|tube|reactor)))\b"
    r"(?!\s+of\b)",  # "a 5 g batch of the amine" is the amine's amount
    re.I,
)
_EQUIPMENT_AFTER = re.compile(
    r"[\s,.-]*(?:[\w-]+\s+){0,4}?(?:flask|vessel|reactor|vial|tube|beaker|bottle|autoclave|"
    r"funnel|trap|condenser)s?\b",
    re.I,
)
_SPACE = re.compile(r"\s*")
_OUT_WORDS = re.compile(r"remain|left|collect|distil|evaporat|remov|recover", re.I)
_AQUEOUS_SOLUTION = re.compile(
    r"^(?:\d+(?:\.\d+)?\s*(?:M|N)\s+\S|\d+(?:\.\d+)?\s*%\s*(?:aq\.?|aqueous)\s+\S|"
    r"(?:sat\.?|saturated)\s+(?:aq\.?|aqueous)\s+\S|(?:aq\.?|aqueous)\s+\S|"
    r"(?:sat\.?|saturated|dilute|dil\.)\s+\S.*|\S.*\s+(?:aqueous|aq\.?)(?:\s+solution)?$)"
)
# "concentrated to 50 mL", "to a volume of 10 mL", "diluted to ca. 100 mL": a condition
_CONDITION_BEFORE = re.compile(
    r"\b(?:concentrated|reduced|evaporated|diluted|distilled|made\s+up|adjusted|brought|removed|"
    r"stripped)\s+"
    r"(?:\w+\s+){0,3}?(?:to|until)\s+(?:a\s+)?(?:total\s+)?(?:final\s+)?(?:volume\s+of\s+)?"
    r"(?:about\s+|ca\.?\s+|approx(?:imately|\.)?\s+|~\s*)?$"
    r"|\bvolume\s+of\s+(?:about\s+|ca\.?\s+)?$",
    re.I,
)


def _line(name: str, amounts: list[AmountMention], role: str | None, op: tuple[str, Stage],
          evidence: str, **extra) -> MaterialLine:  # fmt: skip
    stage = op[1] if role is None else None
    extra.setdefault("stated", ", ".join(a.text for a in amounts))
    return MaterialLine(name=name, role=role, operation=op[0], stage=stage, amounts=amounts,
                        origin="text", evidence=evidence, **extra)  # fmt: skip


@functools.lru_cache(maxsize=4096)
def _aqueous(name: str | None) -> bool:
    return bool(name and _AQUEOUS_SOLUTION.match(name))


def _lines_for(group: Group, operation: str, stage: Stage, evidence: str) -> list[MaterialLine]:
    stated = ", ".join(group.texts)
    if group.solvent is None and _aqueous(group.name):
        group.solvent = "water"  # "3 M NaOH", "10% aq. K2CO3": aqueous by convention
    volumes = [a for a in group.amounts if a.kind == "volume"]
    if group.mixture is None or not volumes:  # by mass, "10% Pd/C (390 mg)" is one material
        return [MaterialLine(name=group.name, operation=operation, stage=stage, stated=stated,
                             amounts=group.amounts, origin="text", evidence=evidence,
                             solvent=group.solvent)]  # fmt: skip
    written, components = group.mixture
    out = []
    for comp, fraction in components:
        scaled = [a.model_copy(update={
            "value": a.value * fraction,
            "low": None if a.low is None else a.low * fraction,
            "high": None if a.high is None else a.high * fraction,
        }) for a in volumes]  # fmt: skip
        out.append(MaterialLine(
            name=comp, operation=operation, stage=stage, stated=f"{written}, {stated}",
            amounts=scaled, origin="text", evidence=evidence,
            note=f"{fraction:.0%} by volume of {volumes[0].text} of '{written}' ("
            + ("a gradient, taken at its midpoint; " if _GRADIENT.search(written) else "")
            + "ideal mixing assumed)",
        ))  # fmt: skip
    return out


_YIELD = re.compile(
    r"^(?:(?:yield|y\.)\s*[:=]?\s*)?(?P<v>\d+(?:[.,]\d+)?)\s*%(?:\s*(?:yield|overall|isolated))?$",
    re.I,
)


def _yield_of(content: str) -> float | None:
    """A yield stated after a mass in a bracket, "(2.41 g, 86%)" or "(26 mg, yield 29%)": 0.86;
    None if none ("(77%, 2.46 g)" and "(10%, 20 mL)" state a purity or a strength)."""
    if "%" not in content:
        return None
    mass_seen = False
    for part, _ in parts(content, 0):
        if not mass_seen:
            with contextlib.suppress(AmountError):
                mass_seen = parse_amount(part).kind == "mass"
            continue
        m = _YIELD.match(part)
        if m:
            value = float(m.group("v").replace(",", "."))
            if 0 < value <= 1000:
                return value / 100
    return None


# "The product (1.05 g) was recrystallised …": a mass that was worked on further, not the end
_WORKED_ON = re.compile(
    r"\s*,?\s*(?:(?:which|that)\s+)?(?:was|were)\s+(?:then\s+|further\s+|subsequently\s+)?"
    r"(?:re-?crystalli[sz]ed|purified|chromatographed|triturated|dissolved|suspended|taken\s+up|"
    r"distilled|sublimed|subjected|redissolved|slurried|used|carried\s+(?:on|forward|through)|"
    r"stirred|heated|refluxed|treated|mixed|converted|hydroly[sz]ed|reduced|oxidi[sz]ed)\b",
    re.I,
)


def _product_note(
    role: str | None, name: str | None, said: str = "", after: str = ""
) -> str | None:
    """ "crude" for a product's mention that is a crude mass ("the crude aldehyde (1.9 g)"):
    by its name, by the words as written (``said``: the name reader drops "crude"), or by
    what was done to it next (``after``: "… (1.05 g) was recrystallised"); "crop" for a
    further crop ("a second crop (0.21 g)")."""
    if role != "product":
        return None
    words = set(re.split(r"[\s-]+", f"{name or ''} {said}".lower()))
    if words & {"crop", "crops"}:
        return "crop"  # "a second crop (0.21 g)": more of the product, added to it (merge)
    crude = words & {"crude", "residue", "concentrate"} or _WORKED_ON.match(after)
    return "crude" if crude else None


def _inside_a_word(text: str, m: re.Match) -> bool:
    """A bracket that is part of a name ("2-(6-(trifluoromethyl)pyridin-2-yl)", "4(3H)-one")."""
    return (
        m.start() > 0
        and text[m.start() - 1] not in " \t\n[/"
        and not MAYBE_AMOUNT.search(m.group(1))
    )


def _amounts_in(content: str, offset: int) -> list[AmountMention] | None:
    """The amounts of a bracket that holds nothing else (amounts, a yield, equivalents),
    e.g. "(3.93 mmol)" or "(106 mmol, 8 eq.)"; None when it holds anything else."""
    out = []
    for part, start in parts(content, offset):
        try:
            out.append(parse_amount(part, (start, start + len(part))))
        except AmountError:
            if not (PERCENT_ONLY.match(part) or _YIELD.match(part) or _PERCENT_REMARK.match(part)):
                return None
    return out


class _Reading:
    """One sentence being read (see the module's docstring for the steps)."""

    def __init__(self, text: str, start: int) -> None:
        self.start = start
        cut = characterisation_start(text)
        self.head = text[:cut]
        self.quantities = quantities(self.head, start)
        self.tail = quantities(text[cut:], start + cut)
        self._s: Sentence | None = None
        self.groups = {m.start(): (m.end(), m.group(1)) for m in _GROUP.finditer(self.head)
                       if _DIGIT.search(m.group(1))
                       and not _inside_a_word(self.head, m)}  # fmt: skip
        self.claimed: set[int] = set()
        self.lines: list[MaterialLine] = []
        self.clauses_taken: set[int | None] = set()  # product clauses that gave the product
        h = self.head  # the pattern is run only where one of its words may be (any case)
        hinted = "ompris" in h or "ontain" in h or "onsist" in h or "ompos" in h
        parts = _COMPOSITION.search(h) if hinted else None
        self.parts_from = parts.end() if parts else len(h) + 1  # an output's parts …
        upto = _PARTS_END.search(h, self.parts_from) if parts else None
        self.parts_to = upto.start() if upto else len(h)  # … up to its clause's end

    @property
    def s(self) -> Sentence:
        """The sentence's operation and product words, read when a mention needs them."""
        if self._s is None:
            self._s = Sentence(self.head)
        return self._s

    def read(self) -> list[MaterialLine]:
        self._foreign_units()
        if not self.quantities and not self.groups:
            if self.tail:
                self._leftovers()
            return self.lines
        if self.quantities:
            self._quantities_before_names()
        for gs in sorted(self.groups):
            if gs not in self.claimed:
                self._bracket(gs)
        self._leftovers()
        self.lines.sort(key=_first_position)  # in the order of the text
        return self.lines

    # ---------------------------------------------------------------- quantities first
    def _group_after(self, pos: int) -> tuple[int, int, str] | None:
        """The bracket that starts right after ``pos`` (past white space), if any."""
        gs = _SPACE.match(self.head, pos).end()
        if gs in self.groups:
            return gs, *self.groups[gs]
        return None

    def _joined(self, pos: int, amounts: list[AmountMention]) -> int:
        """Add the amounts of a bracket of amounts right after ``pos``; return where it ends."""
        g = self._group_after(pos)
        if g is not None:
            more = _amounts_in(g[2], self.start + g[0] + 1)
            if more is not None:
                amounts += more
                self.claimed.add(g[0])
                return g[1]
        return pos

    def _inside_group(self, pos: int) -> bool:
        return any(gs < pos < ge for gs, (ge, _) in self.groups.items())

    def _quantities_before_names(self) -> None:
        done = -1
        for q in self.quantities:
            if q.start < done or q.amount is None:
                continue
            if self._inside_group(q.start):
                self._column_in_bracket(q)  # "(40 g column, 0-50% EtOAc)": its silica
                continue
            amounts = [q.amount]
            pos = self._joined(q.end, amounts)
            aside = _UNIT_ASIDE.match(self.head, pos)
            if aside and pos == q.end:  # "17 g (0.10 m) of X": the name follows the aside
                self.claimed.add(aside.start(1))
                pos = aside.end()
            if _CONDITION_BEFORE.search(self.head[max(0, q.start - 50) : q.start]):
                self._add("", amounts, "condition", q.start)
                done = pos
                continue
            if (label := self._label_before(q.start)) is not None:
                said = "theoretical yield" if label == "condition" else "recovered material"
                self._add(said, amounts, label, q.start)
                done = pos
                continue
            if self._after_a_yield(q.start):  # "Yield: 415 mg (82%)": the product's mass
                said = self.head[max(0, q.start - 40) : q.start]  # "Crude yield: 1.2 g"
                self._add(
                    "", amounts, "product", q.start, note=_product_note("product", None, said)
                )
                done = pos
                continue
            taken = _TAKEN_OUT.match(self.head, pos)
            if taken:  # "60 mL was collected for reuse"
                said = self.head[taken.start() : taken.end() + 30].split(",")[0]
                self._add(" ".join(said.split()), amounts, "intermediate", q.start)
                done = pos
                continue
            if _SCALE_AFTER.match(self.head, pos):  # "each 600 mg scale": a run's size
                self._add("scale", amounts, "condition", q.start)
                done = pos
                continue
            if _COLUMN_AFTER.match(self.head, pos):  # "a SNAP 25 g column": the silica in it
                self._add("silica", amounts, None, q.start, note="a prepacked column's packing")
                done = pos
                continue
            name, what, k = name_after(self.head[pos:])
            if name is None and what is None:
                if _TOTAL_BEFORE.search(self.head, max(0, q.start - 30), q.start):
                    self._add("", amounts, "product", q.start, note="total")  # "a total of 1.45 g"
                    done = pos
                    continue
                if _EQUIPMENT_AFTER.match(self.head, pos):  # "a 1 l., 3-neck round-bottom flask"
                    self._add("equipment", amounts, "equipment", q.start)
                    done = pos
                continue  # left for the end: unread, unless a bracket claims it
            end = self._joined(pos + k, amounts) if name else pos + k
            if _PER.match(self.head, end):  # "8 µL of water per mg of substrate": a ratio
                self._add(name or what, amounts, "condition", q.start)
                done = end
                continue
            taken = _TAKEN_OUT.match(self.head, end)
            role = "intermediate" if taken else self._role(q.start, what, end)
            mixed = self._mixture_after(pos, name, end) if role is None else None
            if mixed is not None:  # "500 mL of 4:1 hexane/EtOAc": each liquid its share
                self._add_mixture(mixed[0], amounts, q.start)
                done = mixed[1]
                continue
            said = self.head[pos:end]
            self._add(name or what, amounts, role, q.start,
                      note=_product_note(role, name, said, self.head[end : end + 80]))  # fmt: skip
            done = end

    def _column_in_bracket(self, q) -> None:
        """A prepacked column named by its silica's mass inside a bracket ("(330g column)",
        "(40 g column, 0-50% EtOAc/hexanes)"): that silica is an input when the bracket holds
        no other amount; the eluent's gradient is left to the gap rules."""
        if not _COLUMN_AFTER.match(self.head, q.end):
            return
        gs, ge = next((gs, ge) for gs, (ge, _) in self.groups.items() if gs < q.start < ge)
        if any(gs < other.start < ge for other in self.quantities if other is not q):
            return  # more amounts in the bracket: read as before (this one stays unread)
        self.claimed.add(gs)
        self._add("silica", [q.amount], None, q.start, note="a prepacked column's packing")

    def _mixture_after(self, pos: int, name: str | None, end: int) -> tuple | None:
        """The mixture an amount ending at ``pos`` names, with where it ends: "of a 90/10
        solution of CH2Cl2/MeOH", or a name that is one ("4:1 hexane/EtOAc")."""
        if (found := mixture_after(self.head, pos)) is not None:
            return found
        mix = mixture_before(name) if name else None
        return (mix, end) if mix is not None and mix[0] == name.strip() else None

    def _add_mixture(self, mixture: tuple, amounts: list[AmountMention], pos: int) -> None:
        """Add a mixture's liquids, each its share of the volume (a mixture stated by mass is
        one line, as written: "5 g of 10% Pd/C")."""
        group = Group(mixture[0], mixture)
        group.amounts, group.texts = amounts, [a.text for a in amounts]
        op, stage = self.s.operation(pos)
        self.lines += _lines_for(group, op, stage, self.s.evidence)

    # ---------------------------------------------------------------- brackets
    def _bracket(self, gs: int) -> None:
        ge, content = self.groups[gs]
        before = self.head[max(0, gs - 400) : gs]
        mixture = mixture_before(before)
        name, what = (mixture[0], None) if mixture else name_before(before)
        if mixture is None and (given := mixture_in(name, content)):  # "hexane/EtOAc (4:1, …)"
            mixture, name = given, given[0]
        offset = self.start + gs + 1
        if name is None and what is None and mixture is None and self._name_after_bracket(gs):
            return
        role = self._role(gs, what, ge, content)
        if name is not None and _RUN_SIZE.search(name):  # "on a larger scale (5.0 g of X)"
            role, name = "condition", "scale"
        inside = _OUT_WORDS.search(content) and _TAKEN_OUT_INSIDE.match(
            content[quantity_end(content) :])  # fmt: skip
        if inside or _TAKEN_OUT.match(self.head, ge):
            role = "intermediate"
            if inside:  # "(4.8 L collected for the next run)": named by what it says
                name = " ".join(content[quantity_end(content) :].split())
        if role is None and (name is not None or mixture is not None or what is None):
            op, stage = self.s.operation(gs)
            for group in read_group(content, offset, name, mixture):
                self.lines += _lines_for(group, op, stage, self.s.evidence)
            return
        amounts = [q.amount for q in self.quantities if gs < q.start < ge and q.amount]
        amounts.sort(key=lambda a: a.kind != "mass")  # the mass first: the product's mass
        if amounts:
            said = before[-len(name or what or "") - 16 :]  # the name as written, and its lead
            self._add(name or what or "", amounts, role, gs, stated_yield=_yield_of(content),
                      note=_product_note(role, name, said, self.head[ge : ge + 80]))  # fmt: skip

    def _name_after_bracket(self, gs: int) -> bool:
        """A bracket of amounts before its name: "reaction of (1.48 g, 5.0 mmol) of X",
        "dissolved in (15 ml) THF"."""
        ge, content = self.groups[gs]
        amounts = _amounts_in(content, self.start + gs + 1)
        if not amounts:
            return False
        name, what, _ = name_after(self.head[ge:])
        if name is None or what is not None:
            return False
        role = self._role(gs, None)
        self._add(name, amounts, role, gs, note=_product_note(role, name))
        return True

    def _role(self, pos: int, what: str | None, end: int | None = None,
              content: str = "") -> str | None:  # fmt: skip
        """None for an input; else the class of the mention at ``pos``. A crude mass in a
        product clause ("provided the crude aldehyde (1.9 g)") is the product's mention, marked
        crude: the merge prefers an isolated product's."""
        if what in {"sample", "equipment"}:
            return what
        if self.parts_from <= pos < self.parts_to:  # a part of what came out, not an addition
            return "intermediate"
        clause = self.s.product_clause(pos)
        taken = clause is not None and clause in self.clauses_taken
        stated_yield = _yield_of(content) is not None  # "a white solid (175 mg, 88%)"
        if what == "intermediate" and (taken or clause is None) and not stated_yield:
            return what
        product = (what in {"product", "intermediate"} or clause is not None
                   or (end is not None and (_PASSIVE_PRODUCT.match(self.head, end)
                                            or stated_yield))
                   or self._after_a_yield(pos))  # fmt: skip
        if not product:
            return None
        if taken and what != "product":
            return "intermediate"  # a second output of the same clause: not the product
        return "product"

    def _after_a_yield(self, pos: int) -> bool:
        """The mention at ``pos`` follows a yield ("Yield: 82% (415 mg)") or names the product's
        mass ("Mass of product: 1.20 g"): the product's. Not a theoretical yield."""
        near = max(0, pos - 40)
        words = self.head[near:pos]
        hinted = "ield" in words or "roduct" in words or "onstant" in words
        return hinted and bool(_YIELD_BEFORE.search(self.head, near, pos)) and not (
            _THEORETICAL.search(words))  # fmt: skip

    def _label_before(self, pos: int) -> str | None:
        """The class a label before a quantity gives it: "Theoretical yield = 2.12 g" (a
        figure worked out: a condition), "Recovered: 1.2 g of …" (what came back out). Each
        pattern holds one of the hints looked for first (most quantities have none)."""
        words = self.head[max(0, pos - 40) : pos]
        if not any(hint in words.lower() for hint in _LABEL_HINTS):
            return None
        if _THEORETICAL.search(words):
            return "condition"
        return "intermediate" if _RECOVERED_LABEL.search(words) else None

    # ---------------------------------------------------------------- the rest
    def _add(self, name: str, amounts: list[AmountMention], role: str | None, pos: int,
             **extra) -> None:  # fmt: skip
        op = self.s.operation(pos) if role is None else ("product" if role == "product"
                                                          else None, None)  # fmt: skip
        solvent = "water" if role is None and _aqueous(name) else None
        if role == "product":
            self.clauses_taken.add(self.s.product_clause(pos))
        self.lines.append(_line(name or role or "", amounts, role, op, self.s.evidence,
                                solvent=solvent, **extra))  # fmt: skip

    def _leftovers(self) -> None:
        """Quantities no mention took are unread; those of the tail are characterisation."""
        taken = [a.span for line in self.lines for a in line.amounts if a.span]
        for q in self.quantities:
            a, b = self.start + q.start, self.start + q.end
            if any(x < b and a < y for x, y in taken):
                continue
            amounts = [q.amount] if q.amount else []
            problem = None if q.amount else why_not(q.text)
            self._add(q.text, amounts, "unread", q.start, problem=problem, stated=q.text)
        for q in self.tail:
            self._add(q.text, [q.amount] if q.amount else [], "characterisation", q.start)

    def _foreign_units(self) -> None:
        """Amounts in units masstrail does not read (``4.0 gallons``, ``2 oz``) are unread,
        with the reason, rather than passed over as words."""
        low = self.head.casefold()
        if not any(hint in low for hint in _FOREIGN_HINTS):
            return
        for m in _FOREIGN_UNIT.finditer(self.head):
            self._add(m.group(0), [], "unread", m.start(), problem=why_not(m.group(0)),
                      stated=m.group(0))  # fmt: skip


def _first_position(line: MaterialLine) -> int:
    return min((a.span[0] for a in line.amounts if a.span), default=0)


def extract(body: str) -> list[MaterialLine]:
    """Every quantity in ``body``, as material lines: inputs (role None), the product's
    mention(s) and the quantities set aside (see the module's docstring)."""
    lines: list[MaterialLine] = []
    for start, text in sentences(body):
        if not _DIGIT.search(text) or text.lstrip().startswith("|"):
            continue  # no number, or a table row (read by the readers)
        lines += _Reading(text, start).read()
    return lines


@hookimpl(specname="masstrail_extract_amounts")
def extract_procedure_amounts(entry: Entry, config: LabConfig) -> list[MaterialLine]:
    """Read materials and their amounts, and every other quantity, from the procedure text
    (not when the front matter says ``amounts_from_text: false``: a record whose structured
    fields list every amount, as an imported ORD record)."""
    return extract(entry.body) if entry.amounts_from_text else []
