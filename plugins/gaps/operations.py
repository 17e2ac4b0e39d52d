"""Operations that consume material, found in the procedure text, and their records.

Each rule is a small function that reads one sentence and returns checks:

- ``filtration``: filtration or suction filtration needs the filter paper (or
  cotton plug, syringe filter); filtration through a pad needs the pad's mass.
  Sinters and frits are reused glassware and need nothing.
- ``drying``: drying an organic phase over an agent needs the agent's mass.
  Drying in a desiccator, in an oven or under vacuum, dry solvents and
  oven-dried glassware are not drying agents.
- ``liquids``: washing, extraction, quench, dilution need the volume of each liquid.
- ``chromatography``: needs the stationary phase's mass and the eluent's volume
  (and its composition). TLC, HPLC and GC are analyses, not purifications.
- ``recrystallisation``: recrystallisation and trituration need the solvent's volume.
- ``aspirator``: a water aspirator uses water (reported apart; ``[gaps]
  aspirator_water = false`` switches the rule off).
- ``unquantified``: ``a few drops``, ``a spatula tip``, ``a catalytic amount``…

A record counts wherever it is in the entry: front matter, a table, the text.
For liquids the stage must agree too: the reaction's THF does not record the
THF used to wash a filter cake.
"""

from __future__ import annotations

import re
from collections.abc import Callable

from capture.chem import material_key
from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import Entry, Gap, MaterialInfo, MaterialLine, ProductOut, RecordCheck
from masstrail_plugins.gaps import allowances as al
from masstrail_plugins.prose import characterisation_start, clean_name, operation_of, sentences

LIQUID_CATEGORIES = {"solvent", "water", "aqueous"}


class Context:
    """What the rules need to know about the entry as a whole."""

    def __init__(
        self,
        materials: list[MaterialLine],
        product: ProductOut,
        resolve: Callable[[str], MaterialInfo | None],
        config: LabConfig,
    ) -> None:
        self.materials = materials
        self.product = product
        self.resolve = resolve
        self.config = config
        self.scale = al.Scale.of(materials, product)

    def key(self, name: str) -> str:
        info = self.resolve(name)
        return material_key(info.name if info else name)

    def recorded(self, name: str, stage: str | None = None) -> bool:
        """True when a line for ``name`` has an amount (at ``stage``, when both know theirs)."""
        k = self.key(name)
        for m in self.materials:
            if material_key(m.resolved or m.name) != k or not (m.amounts or m.mass_g):
                continue
            if stage is None or m.stage is None or m.stage == stage:
                return True
        return False

    def recorded_category(self, *categories: str) -> bool:
        return any(m.category in categories and (m.amounts or m.mass_g) for m in self.materials)

    def density(self, name: str) -> tuple[float, str]:
        info = self.resolve(name)
        if info is not None and info.density_g_ml:
            return info.density_g_ml, f"{info.name}, {info.density_g_ml:g} g/mL"
        d, basis = al.value("assumed_density_g_ml", self.config)
        return d, f"assumed {d:g} g/mL ({basis})"


def _check(op: str, needs: str, item: str, evidence: str, gap: Gap | None) -> RecordCheck:
    return RecordCheck(
        operation=op, needs=needs, item=item, recorded=gap is None, evidence=evidence, gap=gap
    )


def _gap(kind: str, item: str, evidence: str, message: str, allowance: float | None, basis: str,
         in_estimate: bool = True) -> Gap:  # fmt: skip
    return Gap(
        kind=kind,
        item=item,
        severity="major",  # graded from the allowance afterwards (grading.py)
        evidence=evidence,
        message=message,
        allowance_g=None if allowance is None else round(allowance, 4),
        allowance_basis=basis,
        in_estimate=in_estimate,
        missing_mass=True,
    )


# ------------------------------------------------------------------ filtration
_FILTER = re.compile(
    r"\b(filtered|filtration|filtering|filter(?:ed)? off|suction[- ]filt\w*|vacuum[- ]filt\w*|"
    r"collected on (?:a )?(?:B[uü]chner|Hirsch) funnel|passed through (?:a )?(?:syringe|membrane|"
    r"PTFE|nylon) filter|passed through (?:a |an )?(?:short |small |thin |fresh )?(?:pad|plug|bed)"
    r" of|passed through (?:Celite|silica gel|Florisil)\b)",
    re.I,
)
_PAD = re.compile(
    r"through (?:a |an )?(?:short |small |thin |fresh )?(?:pad|plug|bed|layer|column) of "
    r"(?P<pad>Celite|celite|silica(?: gel)?|alumina|Florisil|charcoal)|"
    r"through (?P<pad2>Celite|celite|silica gel|alumina|Florisil)\b",
)
_COTTON = re.compile(r"\b(cotton(?: wool)?|glass wool)\b", re.I)
_SYRINGE = re.compile(
    r"\b(syringe filter|PTFE filter|membrane filter|nylon filter|PVDF filter)", re.I
)
_REUSABLE = re.compile(r"\b(sinter(?:ed)?|frit(?:ted)?|glass filter)\b", re.I)


def filtration(ctx: Context, text: str) -> list[RecordCheck]:
    """A filtration needs its filter medium; a filtration through a pad needs the pad's mass."""
    if not _FILTER.search(text):
        return []
    pad = _PAD.search(text)
    if pad:
        name = pad.group("pad") or pad.group("pad2")
        if ctx.recorded(name):
            return [_check("filtration", "filter pad mass", name, text, None)]
        grams, basis = al.value("filter_pad_g", ctx.config)
        return [
            _check("filtration", "filter pad mass", name, text, _gap(
                "filter_pad", name, text,
                f"the {name} pad's mass is not recorded; weigh the {name} before packing the "
                "pad next time, or estimate it from the funnel size", grams, basis))
        ]  # fmt: skip
    if _REUSABLE.search(text):
        return []
    if _SYRINGE.search(text):
        item, (grams, basis) = "syringe filter", al.value("syringe_filter_g", ctx.config)
        message = "the syringe filter is not recorded; note how many were used"
    elif _COTTON.search(text):
        item, (grams, basis) = "cotton plug", al.value("cotton_plug_g", ctx.config)
        message = "the cotton or glass-wool plug is not recorded; weigh it or note it"
    else:
        item = "filter paper"
        grams, basis = al.filter_paper_g(ctx.config)
        message = (
            "the filter paper is not recorded; note the number and diameter of the papers "
            "used (or weigh them) before they go to solid waste"
        )
    if ctx.recorded_category("filter medium") or ctx.recorded(item):
        return [_check("filtration", "filter medium", item, text, None)]
    return [_check("filtration", "filter medium", item, text,
                   _gap("filter_medium", item, text, message, grams, basis))]  # fmt: skip


# ------------------------------------------------------------------ drying
_NOT_AGENT_DRYING = re.compile(
    r"(?:oven|flame|air|freeze|spray|heat)[- ]dried|dried\s+(?:under|in vacuo|in a|in an|in the|"
    r"at\s+\d|overnight|on the|on a|by suction|in air|to constant|thoroughly|for\s+\d|under high)",
    re.I,
)
_DRIED_OVER = re.compile(
    r"\bdried\s+(?:over|with|using|on)\s+(?:anhydrous\s+|solid\s+)?(?P<agent>[A-Za-z0-9][\w·.\-]*"
    r"(?:\s+(?:sulfate|sulphate|chloride|sieves|carbonate))?)"
    r"|\bdried\s*\((?:anhydrous\s+)?(?P<agent2>[^,;)]+)",
    re.I,
)
_DRIED_BARE = re.compile(
    r"(?:\b(?:was|were)\s+|,\s*)dried\b(?!\s*\()(?=\s*(?:,|\.|;|$|and\b|then\b|before\b))",
    re.I,
)
_AFTER_WORKUP = re.compile(r"\b(washed|extracted|partitioned)\b", re.I)
_ORGANIC_SUBJECT = re.compile(
    r"\b(organic|extracts?|layers?|phases?|organics|filtrate|ether(?:eal)? solution|solution)\b",
    re.I,
)


def drying(ctx: Context, text: str) -> list[RecordCheck]:
    """Drying an organic phase over an agent needs the agent's mass."""
    m = _DRIED_OVER.search(text) or _DRIED_BARE.search(text)
    if not m:
        return []
    if _NOT_AGENT_DRYING.search(text[max(0, m.start() - 8) : m.end() + 30]):
        return []
    agent = (m.group("agent") or m.group("agent2")) if m.re is _DRIED_OVER else None
    if agent:
        agent = agent.strip().rstrip(".")
        info = ctx.resolve(agent)
        if info is None or info.category != "drying agent":
            return []  # "dried over the weekend", "dried with a stream of nitrogen"
        item = agent
        if ctx.recorded(agent) or ctx.recorded_category("drying agent"):
            return [_check("drying", "drying agent mass", item, text, None)]
    else:
        if not _ORGANIC_SUBJECT.search(text[: m.start()]) and not _AFTER_WORKUP.search(
            text[: m.start()]
        ):
            return []  # "the solid was dried": not a drying agent
        item = "drying agent (not named)"
        if ctx.recorded_category("drying agent"):
            return [_check("drying", "drying agent mass", item, text, None)]
    per100, basis = al.value("drying_agent_g_per_100_ml", ctx.config)
    if ctx.scale.organic_ml:
        ml, ml_basis = ctx.scale.organic_ml, "the organic solvent the entry records"
    else:
        ml, ml_basis = al.value("organic_phase_ml", ctx.config)
    grams = per100 * ml / 100
    name = item if agent else "the drying agent"
    return [
        _check("drying", "drying agent mass", item, text, _gap(
            "drying_agent_mass", item, text,
            f"{name} used for drying is not weighed; weigh the used drying agent before "
            "discarding it (or the bottle before and after)",
            grams, f"{per100:g} g per 100 mL × {ml:g} mL organic phase ({ml_basis}); {basis}"))
    ]  # fmt: skip


# ------------------------------------------------------------------ washes, extractions, quenches
_LIQUID_OP = re.compile(
    r"\b(?P<verb>washed|washing|rinsed|rinsing|extracted|extracting|quenched|quenching|"
    r"diluted|partitioned|back-extracted|acidified|basified|neutrali[sz]ed|poured)\b"
    r"(?P<mid>(?:\s+[\w-]+){0,4}?)\s+"
    r"(?P<prep>with|into|onto|between|using|by (?:the )?addition of|by adding)\s+"
    r"(?P<rest>(?:(?!\b(?:washed|washing|rinsed|extracted|quenched|diluted|partitioned|poured)"
    r"\b)[^;])+)",
    re.I,
)
_LIST_STOP = re.compile(
    r"\s*\(|,\s*(?:dried|filtered|concentrated|evaporated|and|then)\b|\s+(?:and|then)\s+(?:was|were|"
    r"dried|filtered|concentrated|evaporated|the|stirred|separated|extracted|washed)\b|"
    r"\s+(?:to|until|before|after|for|at|under|which|while|so|giving|to give)\b|"
    r"\s+with\s+(?:\w+\s+)?(?:stirring|cooling|shaking)\b",  # "… acid with vigorous stirring"
    re.I,
)
_LIST_SPLIT = re.compile(r",\s*(?:and\s+)?|\s+and\s+(?:then\s+)?(?:with\s+)?|"
                         r"\s+then\s+(?:with\s+)?|"
                         r"\s+followed by\s+")  # fmt: skip
_MIXTURE_SPLIT = re.compile(r"\s*/\s*")  # "MeOH/H2O": each liquid of a mixture
_LIST_LEAD = re.compile(
    r"^(?:successively|portions of|\d+\s+portions of|each|(?:an?\s+)?(?:\d+:\d+\s+)?"
    r"(?:mixed solvent|(?:solvent\s+)?mixture)\s+of)\s+",
    re.I,
)
_TRAILING_JOIN = re.compile(r"(?:\s*,|\s+and|\s+then|\s+or)+\s*$", re.I)
# a liquid named after its amount: "washed five times with 100 ml water", "poured into 150 ml
# of water", "quenched with 2.1 ml of water": its volume is written (the reader weighs it)
_AMOUNT_FIRST = re.compile(
    r"^(?:\d+\s*[x×]\s*)?\d+(?:[.,]\d+)?\s*(?:[mµu]?l|litres?|liters?|[mk]?g)\.?(?:\s+of)?\s+",
    re.I,
)
_TIMES = {"twice": 2, "two": 2, "three": 3, "thrice": 3, "four": 4, "2": 2, "3": 3, "4": 4}
_TIMES_RE = re.compile(r"\b(twice|thrice|(two|three|four|[234])\s+(?:times|portions))\b", re.I)


def _names_in(rest: str) -> list[tuple[str, str | None]]:
    """The liquids a list names, each with the mixture it is part of ("MeOH/H2O"), if any."""
    cut = _LIST_STOP.search(rest)
    head = rest[: cut.start()] if cut else rest
    head = _TRAILING_JOIN.sub("", head)  # "water and " before the next operation's verb
    names = []
    for piece in _LIST_SPLIT.split(head.strip().rstrip(".")):
        piece = _LIST_LEAD.sub("", piece.strip())
        piece = re.sub(r"\s+(?:twice|thrice|three times|two times|several times)$", "", piece)
        parts = _MIXTURE_SPLIT.split(piece) if piece else []
        mixture = clean_name(piece) if len(parts) > 1 else None
        for part in parts:
            name = clean_name(part) if part else None
            if name:
                names.append((name, mixture))
    return names


def _recorded(ctx: Context, name: str, mixture: str | None, stage: str) -> bool:
    """A liquid's amount is recorded, by itself or as the mixture it is part of ("washed with
    MeOH/H2O (5 mL, 1:1)")."""
    return ctx.recorded(name, stage) or (mixture is not None and ctx.recorded(mixture, stage))


def liquids(ctx: Context, text: str) -> list[RecordCheck]:
    """Each liquid a wash, extraction or quench uses needs its volume; so does the liquid a
    reaction mixture is poured into ("poured into ice-water": a quench)."""
    checks = []
    for m in _LIQUID_OP.finditer(text):
        verb = m.group("verb").lower()
        op = "quench" if verb == "poured" else operation_of(verb)
        times = _TIMES_RE.search(text[m.start() : m.end() + 40])
        n = _TIMES.get((times.group(2) or times.group(1)).lower(), 1) if times else 1
        for name, mixture in _names_in(m.group("rest")):
            if written := _AMOUNT_FIRST.match(name):
                checks.append(_check(op, "liquid volume", name[written.end() :], text, None))
                continue
            info = ctx.resolve(name)
            liquid = info is not None and info.category in LIQUID_CATEGORIES
            quencher = op == "quench" and info is not None  # "quenched with dimethyl sulfide"
            if not (liquid or quencher) and not re.search(r"\b(solution|water|brine|acid|aq)\b",
                                                          name, re.I):  # fmt: skip
                continue  # "extracted into the organic phase"
            if _recorded(ctx, name, mixture, "workup"):
                checks.append(_check(op, "liquid volume", name, text, None))
                continue
            base = ctx.scale.reaction_solvent_ml
            if base:
                ml, ml_basis = (
                    base,
                    "the reaction solvent's volume (common practice: a portion "
                    "about the size of the organic phase)",
                )
            else:
                ml, ml_basis = al.value("liquid_ml", ctx.config)
            d, d_basis = ctx.density(name)
            checks.append(_check(op, "liquid volume", name, text, _gap(
                "liquid_volume", name, text,
                f"the volume of {name} used for the {op} is not recorded; note the volume of "
                f"each portion (e.g. '{name} (3 × 20 mL)')",
                n * ml * d, f"{n} × {ml:g} mL ({ml_basis}) × {d_basis}")))  # fmt: skip
    return checks


# ------------------------------------------------------------------ chromatography
# automated flash systems go by their makers' names: "purified by ISCO (0-20% MeOH/DCM)",
# "purified on a Teledyne Isco instrument", "by CombiFlash" (a "Biotage microwave" is not one)
_CHROMATOGRAPHY = re.compile(
    r"\b(flash chromatography|column chromatography|chromatograph(?:ed|y)|flash column|"
    r"purified on (?:a )?(?:silica|column)|eluting with|eluted with|elution with|"
    r"(?:purified|re-?purif\w*|loaded)\s+(?:again\s+)?(?:by|on|with|using|via)\s+"
    r"(?:an?\s+|the\s+)?(?:Teledyne\s+)?(?:ISCO|combi-?flash|Biotage\s+Isolera|Isolera|flash)|"
    r"(?:a\s+)?(?:second|another|further)\s+flash)\b",
    re.I,
)
_ANALYTICAL = re.compile(r"thin[- ]layer chromatography|\bTLC\b|\bHPLC\b|\bGC\b|LC-?MS|\bUPLC\b")
_SLASH_NO_RATIO = re.compile(r"\b[A-Za-z][\w-]*\s*/\s*[A-Za-z][\w-]*\b(?!\s*\(?\s*\d)")


def chromatography(ctx: Context, text: str, seen: set[str]) -> list[RecordCheck]:
    """A column needs the stationary phase's mass and the eluent's volume."""
    if not _CHROMATOGRAPHY.search(text) or (_ANALYTICAL.search(text) and "column" not in text
                                            and "flash" not in text.lower()):  # fmt: skip
        return []
    if "column" in seen:
        return []  # one column per entry is checked once, whichever sentence describes it
    seen.add("column")
    checks = []
    stationary = next(
        (m for m in ctx.materials if m.category == "sorbent" and m.mass_g and m.stage != "workup"),
        None,
    )
    silica_g = stationary.mass_g if stationary else None
    if stationary is not None:
        checks.append(
            _check("chromatography", "stationary phase mass", stationary.name, text, None)
        )
    else:
        ratio, basis = al.value("silica_g_per_g_crude", ctx.config)
        crude = ctx.scale.crude_g
        silica_g = ratio * crude if crude else None
        checks.append(
            _check(
                "chromatography",
                "stationary phase mass",
                "silica",
                text,
                _gap(
                    "stationary_phase_mass",
                    "silica",
                    text,
                    "the stationary phase is not weighed; weigh the silica before packing the "
                    "column "
                    "(or note the cartridge size)",
                    silica_g,
                    f"{ratio:g} g per g of crude × {crude:g} g ({basis})" if crude else basis,
                ),
            )
        )
    eluent = [m for m in ctx.materials
              if m.stage == "purification" and m.category in LIQUID_CATEGORIES
              and m.mass_g]  # fmt: skip
    if eluent:
        checks.append(_check("chromatography", "eluent volume", "eluent", text, None))
    else:
        per_g, b1 = al.value("eluent_ml_per_g_silica", ctx.config)
        d, b2 = al.value("eluent_density_g_ml", ctx.config)
        grams = per_g * silica_g * d if silica_g else None
        checks.append(_check("chromatography", "eluent volume", "eluent", text, _gap(
            "eluent_volume", "eluent", text,
            "the eluent volume is not recorded; note the total volume of each eluent mixture "
            "(measure what is left in the reservoirs if needed)",
            grams, f"{per_g:g} mL per g of silica ({b1}) × {d:g} g/mL ({b2})")))  # fmt: skip
        slash = _SLASH_NO_RATIO.search(text)
        if slash and "%" not in text:
            checks.append(_check("chromatography", "eluent composition", slash.group(0), text, _gap(
                "eluent_composition", slash.group(0), text,
                f"the eluent '{slash.group(0)}' has no ratio; record its composition "
                "(e.g. 4:1) so each solvent can be weighed", None,
                "composition changes the split between solvents, not the total",
                False)))  # fmt: skip
    return checks


# ------------------------------------------------------------------ recrystallisation
_RECRYST = re.compile(
    r"\b(?P<op>recrystalli[sz]\w*|triturat\w*|crystalli[sz]ed)\b(?:\s+[\w-]+){0,3}?\s+"
    r"(?:from|with|in|using)\s+(?:hot\s+|boiling\s+|cold\s+|warm\s+)?(?P<solvent>[^.;,()]+)",
    re.I,
)


def recrystallisation(ctx: Context, text: str) -> list[RecordCheck]:
    """Recrystallisation and trituration need the solvent's volume."""
    checks = []
    for m in _RECRYST.finditer(text):
        op = "trituration" if m.group("op").lower().startswith("trit") else "recrystallisation"
        for name, mixture in _names_in(m.group("solvent")):
            info = ctx.resolve(name)
            if info is None or info.category not in LIQUID_CATEGORIES:
                continue
            if _recorded(ctx, name, mixture, "purification"):
                checks.append(_check(op, "solvent volume", name, text, None))
                continue
            per_g, basis = al.value("recrystallisation_ml_per_g", ctx.config)
            crude = ctx.scale.crude_g
            d, d_basis = ctx.density(name)
            grams = per_g * crude * d if crude else None
            checks.append(_check(op, "solvent volume", name, text, _gap(
                "recrystallisation_solvent", name, text,
                f"the volume of {name} used for the {op} is not recorded; measure it (e.g. "
                "from the graduated cylinder) and note it",
                grams, f"{per_g:g} mL per g × {crude:g} g × {d_basis} ({basis})" if crude
                else basis)))  # fmt: skip
    return checks


# ------------------------------------------------------------------ aspirator water
_ASPIRATOR = re.compile(r"\b(water[- ]aspirator|aspirator|water[- ]jet pump|water pump)\b", re.I)


def aspirator(ctx: Context, text: str, seen: set[str]) -> list[RecordCheck]:
    """A water aspirator sends tap water to the drain (reported apart from the estimate)."""
    if not ctx.config.gaps.aspirator_water or not _ASPIRATOR.search(text) or "aspirator" in seen:
        return []
    seen.add("aspirator")
    lpm, b1 = al.value("aspirator_l_per_min", ctx.config)
    minutes, b2 = al.value("aspirator_minutes", ctx.config)
    grams = lpm * minutes * 1000 * al.WATER_DENSITY
    return [_check("filtration", "aspirator water", "water (aspirator)", text, _gap(
        "aspirator_water", "water (aspirator)", text,
        "a water aspirator was used; its water is not recorded. Note the run time, or use a "
        "membrane pump. (Reported apart: it is not added to the estimated E-factor.)",
        grams, f"{lpm:g} L/min ({b1}) × {minutes:g} min ({b2})", in_estimate=False))]  # fmt: skip


# ------------------------------------------------------------------ unquantified additions
_QUANT_WORDS = (r"a few drops|few drops|several drops|a drop|one drop|\d+ drops?|a spatula tip|"
                r"spatula tip|\d+ spatula tips?|a spatula(?:ful)?|\d+ spatulas?(?:ful)?|"
                r"(?:one|two|three) spatulas?(?:ful)?|a pinch|a crystal|a few crystals|a trace|"
                r"traces|a catalytic amount|catalytic amount|a small amount|a little")  # fmt: skip
_UNQUANTIFIED = re.compile(
    rf"\b(?P<q>{_QUANT_WORDS})\s+of\s+(?P<name>(?:conc\.\s+|concentrated\s+|glacial\s+)?"
    r"[A-Za-z0-9(\[][\w\-()\[\]·,']*(?:\s+(?!(?:was|were|and|to|in|at|for|with|under|over|on|"
    r"from|by|into|as|then|were|is|are|or|via)\b)[a-z][\w\-]*)?)"
    rf"|(?P<name2>[A-Za-z0-9(\[][\w\-()\[\]·,']*)\s*\((?:approx(?:imately|\.)?\s+|about\s+|"
    rf"ca\.?\s+|~\s*)?(?P<q2>{_QUANT_WORDS}|cat\.|catalytic)\)",
    re.I,
)


_COUNT = {"a": 1, "one": 1, "two": 2, "three": 3}


def _quantity_allowance(q: str, name: str, ctx: Context) -> tuple[float, str]:
    q = q.lower()
    if "drop" in q:
        n = (
            int(q.split()[0])
            if q.split()[0].isdigit()
            else (1 if q in {"a drop", "one drop"} else 3)
        )
        ml, basis = al.value("drop_ml", ctx.config)
        d, d_basis = ctx.density(name)
        return n * ml * d, f"{n} drop(s) × {ml:g} mL ({basis}) × {d_basis}"
    if "spatula" in q and "tip" not in q:  # "2 spatulas of MgSO4": each a spatulaful
        n = _COUNT.get(q.split()[0]) or (int(q.split()[0]) if q.split()[0].isdigit() else 1)
        grams, basis = al.value("spatulaful_g", ctx.config)
        return n * grams, f"{n} × {grams:g} g ({basis})"
    if "spatula" in q or "pinch" in q:
        return al.value("spatula_tip_g", ctx.config)
    if "crystal" in q:
        return al.value("crystal_g", ctx.config)
    return al.value("catalytic_amount_g", ctx.config)


def unquantified(ctx: Context, text: str) -> list[RecordCheck]:
    """An addition with no measured amount ('a few drops of DMF')."""
    checks = []
    for m in _UNQUANTIFIED.finditer(text):
        q = m.group("q") or m.group("q2")
        raw = m.group("name") or m.group("name2")
        name = clean_name(raw) if raw else None
        if not name or ctx.recorded(name):
            continue
        grams, basis = _quantity_allowance(q, name, ctx)
        checks.append(_check("addition", "amount", name, text, _gap(
            "unquantified_addition", name, text,
            f"'{' '.join(m.group(0).split())}' is not a measured amount; "
            + ("measure it by volume (a drop is about 0.05 mL) and note it in µL"
               if "drop" in q.lower() else "weigh it and note the mass in mg"),
            grams, basis)))  # fmt: skip
    return checks


# ------------------------------------------------------------------ the hook
@hookimpl(specname="masstrail_check_records")
def check_operations(
    entry: Entry,
    materials: list[MaterialLine],
    product: ProductOut,
    resolve: Callable[[str], MaterialInfo | None],
    config: LabConfig,
) -> list[RecordCheck]:
    """Find filtrations, drying, washes, columns, recrystallisations and unmeasured additions."""
    ctx = Context(materials, product, resolve, config)
    checks: list[RecordCheck] = []
    seen: set[str] = set()
    for _, sentence in sentences(entry.body):
        text = " ".join(sentence.split())
        text = text[: characterisation_start(text)]  # "… to afford 104 mg; mp 206 °C, 1H NMR …"
        if text.startswith("|") or not text:
            continue
        low = text.lower()
        for rule, words in _RULES:
            # every match of a rule's patterns holds one of its words (in lower case): a
            # sentence without any is passed over without running the patterns
            if any(w in low for w in words):
                checks += rule(ctx, text, seen)
    return _one_per_item(checks)


_RULES = (
    (lambda ctx, text, seen: filtration(ctx, text), ("filt", "funnel", "passed through")),
    (lambda ctx, text, seen: drying(ctx, text), ("dried",)),
    (lambda ctx, text, seen: liquids(ctx, text),
     ("wash", "rins", "extract", "quench", "dilut", "partition", "acidif", "basif", "neutrali",
      "pour")),
    (chromatography, ("chromatograph", "flash", "purified on", "elut", "isco", "isolera")),
    (lambda ctx, text, seen: recrystallisation(ctx, text), ("crystalli", "triturat")),
    (aspirator, ("aspirator", "water-jet", "water jet", "water pump")),
    (lambda ctx, text, seen: unquantified(ctx, text),
     ("drop", "spatula", "pinch", "crystal", "trace", "catalytic", "small amount", "little",
      "cat.")),
)  # fmt: skip


def _one_per_item(checks: list[RecordCheck]) -> list[RecordCheck]:
    """One gap per (kind, item): washing twice with unrecorded brine is one missing record."""
    out, seen = [], set()
    for c in checks:
        if c.gap is not None:
            k = (c.gap.kind, material_key(c.item))
            if k in seen:
                continue
            seen.add(k)
        out.append(c)
    return out
