"""Balance readings put where they belong: each material's mass, the product's, or a gap.

Plugin ``balance`` (``masstrail_place_readings``), with these rules:

- A reading's label names a material by the same name resolution as elsewhere
  (case, spacing, synonyms); ``product`` or the product's name is the product.
- Weighing by difference: ``X before`` / ``X after`` (the weighing vessel full,
  then empty) gives before − after; ``vessel`` and ``vessel + X`` gives the
  difference the other way.
- An unstable reading is used, with a minor gap, unless a stable one for the
  same label exists; of several readings for one label the last stable one counts.
- A balance mass wins over a typed amount for the same material; where the typed mass
  differs by more than 5 % (or by a factor near 10, 100 or 1000: a decimal slip), a gap
  names both.
- A reading whose material the text names without an amount ("4-Aminophenol (weighed
  on the balance) was suspended …", "filtered through a pad of Celite", "a pre-weighed
  filter paper" for ``filter paper 1``) is that input: a new line with the stage of the
  mention's operation and the reading as its basis.
- Readings no material claims are unassigned (a minor gap each): nothing is
  silently dropped. Readings far from the entry's date are flagged.
"""

from __future__ import annotations

import datetime as dt
import re
from collections.abc import Callable
from dataclasses import dataclass, field

from capture.chem import material_key
from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import (
    AmountMention,
    BalanceMass,
    BalanceReading,
    Entry,
    Gap,
    MaterialInfo,
    MaterialLine,
    ReadingPlacement,
)
from capture.quantities import disagreement
from masstrail_plugins.prose import OPERATION_STAGE, operation_at, sentences

_BEFORE_AFTER = re.compile(
    r"^(?P<name>.+?)[\s_\-:,]*\(?(?P<tag>before|after|vorher|nachher|vor|nach|full|empty|voll|"
    r"leer|initial|final|start|end)\)?$",
    re.I,
)
_BEFORE = {"before", "vorher", "vor", "full", "voll", "initial", "start"}
_VESSEL_PLUS = re.compile(r"^(?P<vessel>.+?)\s*\+\s*(?P<name>.+)$")


@dataclass
class Assignment:
    """The balance's answer for one material line or the product."""

    mass_g: float
    basis: str
    readings: list[BalanceReading] = field(default_factory=list)
    label: str = ""  # the material as the log names it ("MgSO4" for "MgSO4 before"/"after")


@dataclass
class Mention:
    """Where the entry's text names a material it gives no amount for."""

    name: str  # as the text writes it
    operation: str
    evidence: str


_TRAILING_ID = re.compile(r"\s*(?:no\.?\s*|#\s*)?\d+[a-z]?$|\s+[A-Z]$", re.I)


def mentions_in(body: str, resolve: Callable[[str], MaterialInfo | None]
                ) -> Callable[[str], Mention | None]:  # fmt: skip
    """A finder of the text's mention of a reading's material: its label, the label without a
    trailing number ('filter paper 1'), or the name the label resolves to."""
    folded = body.casefold()

    def find(label: str) -> Mention | None:
        info = resolve(label)
        for candidate in dict.fromkeys(filter(None, (label, _TRAILING_ID.sub("", label),
                                                     info.name if info else None))):  # fmt: skip
            m = re.search(r"(?<![\w-])" + re.escape(candidate.casefold()) + r"(?![\w-])", folded)
            if m is None:
                continue
            start, sentence = next((s, t) for s, t in reversed(sentences(body)) if s <= m.start())
            return Mention(name=body[m.start() : m.end()],
                           operation=operation_at(sentence, m.start() - start),
                           evidence=" ".join(sentence.split())[:300])  # fmt: skip
        return None

    return find


def _where(r: BalanceReading) -> str:
    stamp = f", {r.timestamp}" if r.timestamp else ""
    flag = " (unstable)" if r.stable is False else ""
    return f"{r.file} line {r.line}{stamp}: {r.label} = {r.as_written}{flag}"


def _pick(readings: list[BalanceReading]) -> BalanceReading:
    stable = [r for r in readings if r.stable is not False]
    return (stable or readings)[-1]


def assign(
    readings: list[BalanceReading],
    lines: list[MaterialLine],
    product_name: str | None,
    resolve: Callable[[str], MaterialInfo | None],
    entry_date: dt.date | None,
    max_days: float,
    find: Callable[[str], Mention | None] = lambda label: None,
) -> tuple[dict[int, Assignment], Assignment | None, list[Gap], list[MaterialLine]]:
    """Match readings to lines (by id) and to the product, or to a material the text mentions
    without an amount (a new input line, also in the returned dict); gaps for what does not
    fit."""

    def key(name: str) -> str:
        info = resolve(name)
        return material_key(info.name if info else name)

    line_by_key: dict[str, MaterialLine] = {}
    for line in lines:
        line_by_key.setdefault(key(line.resolved or line.name), line)
    product_keys = {"product", "produkt", "produit", "prodotto", "producto"}
    if product_name:
        product_keys.add(key(product_name))
    gaps: list[Gap] = []
    usable = _usable(readings, gaps)
    plain, diff = _grouped(usable, key)
    results = _masses(plain, diff, gaps)
    added: list[MaterialLine] = []
    assigned, product = _targets(results, line_by_key, product_keys, gaps, find, added)
    gaps += _date_gaps(usable, entry_date, max_days)
    return assigned, product, gaps, added


def _usable(readings: list[BalanceReading], gaps: list[Gap]) -> list[BalanceReading]:
    """The readings with a mass; a gap for each without."""
    usable = []
    for r in readings:
        if r.mass_g is None:
            gaps.append(Gap(kind="balance_row_unreadable", item=r.label, severity="minor",
                            evidence=f"{r.file} line {r.line}: {r.as_written}",
                            message=f"the reading {r.as_written!r} could not be read as one "
                            "mass" + (" (its comma can be a decimal or a thousands separator)"
                                      if "," in r.as_written else "")
                            + "; correct the log or weigh again"))  # fmt: skip
        else:
            usable.append(r)
    return usable


def _grouped(
    usable: list[BalanceReading], key: Callable[[str], str]
) -> tuple[dict[str, list[BalanceReading]], dict[str, dict[str, list[BalanceReading]]]]:
    """Readings by material: plain ones, and the sides of a difference (before/after,
    vessel + X as gross, the vessel alone as tare)."""
    plain: dict[str, list[BalanceReading]] = {}
    diff: dict[str, dict[str, list[BalanceReading]]] = {}
    for r in usable:
        label = " ".join(r.label.split())
        m = _BEFORE_AFTER.match(label)
        if m:
            side = "before" if m.group("tag").casefold() in _BEFORE else "after"
            diff.setdefault(key(m.group("name")), {}).setdefault(side, []).append(r)
            continue
        m = _VESSEL_PLUS.match(label)
        if m:
            diff.setdefault(key(m.group("name")), {}).setdefault("gross", []).append(r)
            r.assigned_to = f"vessel {m.group('vessel').strip()}"  # provisional
            continue
        plain.setdefault(key(label), []).append(r)
    # a plain label that is the vessel of a "vessel + X" pair is the tare of that pair
    for sides in diff.values():
        if "gross" in sides:
            vessel = _VESSEL_PLUS.match(" ".join(sides["gross"][-1].label.split())).group("vessel")
            tare = plain.pop(key(vessel), None)
            if tare:
                sides["tare"] = tare
    return plain, diff


def _masses(plain: dict, diff: dict, gaps: list[Gap]) -> dict[str, Assignment]:
    """The balance's mass for each material: its last stable reading, or a difference."""
    results: dict[str, Assignment] = {}
    for name_key, group in plain.items():
        r = _pick(group)
        results[name_key] = Assignment(r.mass_g, f"balance reading {_where(r)}", group,
                                       " ".join(r.label.split()))  # fmt: skip
    for name_key, sides in diff.items():
        if "before" in sides and "after" in sides:
            a, b = _pick(sides["before"]), _pick(sides["after"])
            mass = a.mass_g - b.mass_g
            basis = (f"weighed by difference: {a.mass_g:g} g − {b.mass_g:g} g "
                     f"({_where(a)}; {_where(b)})")  # fmt: skip
            label = _BEFORE_AFTER.match(" ".join(a.label.split())).group("name")
            results[name_key] = Assignment(mass, basis, sides["before"] + sides["after"], label)
        elif "gross" in sides and "tare" in sides:
            g, t = _pick(sides["gross"]), _pick(sides["tare"])
            mass = g.mass_g - t.mass_g
            basis = (
                f"weighed by difference: {g.mass_g:g} g − {t.mass_g:g} g ({_where(g)}; {_where(t)})"
            )
            label = _VESSEL_PLUS.match(" ".join(g.label.split())).group("name")
            results[name_key] = Assignment(mass, basis, sides["gross"] + sides["tare"], label)
        else:
            for side in sides.values():
                for r in side:
                    r.assigned_to = None
                    gaps.append(Gap(kind="unassigned_reading", item=r.label, severity="minor",
                                    evidence=_where(r),
                                    message=f"'{r.label}' has no matching before/after or "
                                    "vessel reading, so no difference can be taken; add the "
                                    "other weighing or relabel it"))  # fmt: skip
    return results


def _targets(
    results: dict[str, Assignment],
    line_by_key: dict[str, MaterialLine],
    product_keys: set[str],
    gaps: list[Gap],
    find: Callable[[str], Mention | None],
    added: list[MaterialLine],
) -> tuple[dict[int, Assignment], Assignment | None]:
    """Each balance mass to its line (by id) or the product, else to a new input line for the
    text's mention of it (appended to ``added``); a gap for those no one claims."""
    assigned: dict[int, Assignment] = {}
    product: Assignment | None = None
    for name_key, a in results.items():
        target = None
        if name_key in product_keys:
            product = a
            target = "product"
        elif name_key in line_by_key:
            line = line_by_key[name_key]
            assigned[id(line)] = a
            target = line.name
            gaps += _typed_check(line, a)
        elif a.mass_g > 0 and (mention := find(a.label)) is not None:
            line = _line_of(mention, a)
            added.append(line)
            assigned[id(line)] = a
            target = line.name
        for r in a.readings:
            r.assigned_to = target
        if target is None:
            for r in a.readings:
                gaps.append(Gap(kind="unassigned_reading", item=r.label, severity="minor",
                                evidence=_where(r),
                                message=f"no material in the entry is called '{r.label}'; name "
                                "it in the entry or relabel the reading, so its mass "
                                "counts"))  # fmt: skip
            continue
        if a.mass_g <= 0:
            gaps.append(Gap(kind="balance_difference_not_positive", item=target, severity="major",
                            evidence=a.basis, message=f"the balance gives {a.mass_g:g} g for "
                            f"{target}; check the before/after labels"))  # fmt: skip
        chosen = [r for r in a.readings if r.stable is False]
        if chosen and all(r.stable is False for r in a.readings):
            gaps.append(Gap(kind="unstable_reading", item=target, severity="minor",
                            evidence=_where(chosen[-1]),
                            message=f"the balance marked the reading for {target} unstable; "
                            "it is used, but weigh again if you can"))  # fmt: skip
    return assigned, product


def _typed_check(line: MaterialLine, a: Assignment) -> list[Gap]:
    """A gap when the typed mass of a line and the balance's disagree (the balance wins)."""
    typed = sum(x.total for x in line.amounts if x.kind == "mass")
    far = disagreement(a.mass_g, typed) if typed else None
    if far is None:
        return []
    said = ", ".join(x.text for x in line.amounts if x.kind == "mass")
    return [Gap(kind="balance_disagrees", item=line.name, severity="major" if far[1] else "minor",
                evidence=a.basis, message=f"the balance gives {a.mass_g:g} g for {line.name} and "
                f"the entry says {said}: {far[0]}; the balance's mass is used, correct the typed "
                "record")]  # fmt: skip


def _line_of(mention: Mention, a: Assignment) -> MaterialLine:
    """The input a reading weighs that the text names without an amount."""
    amount = AmountMention(value=a.mass_g, unit="g", kind="mass", text=f"{a.mass_g:g} g")
    return MaterialLine(name=mention.name, origin="balance", operation=mention.operation,
                        stage=OPERATION_STAGE.get(mention.operation, "reaction"),
                        amounts=[amount], stated=f"{a.mass_g:g} g",
                        evidence=f"named in the text: {mention.evidence}")  # fmt: skip


def _date_gaps(
    usable: list[BalanceReading], entry_date: dt.date | None, max_days: float
) -> list[Gap]:
    """Readings dated more than ``max_days`` from the entry's date."""
    gaps: list[Gap] = []
    if entry_date is None:
        return gaps
    for r in usable:
        if not r.timestamp:
            continue
        day = dt.date.fromisoformat(r.timestamp[:10])
        if abs((day - entry_date).days) > max_days:
            gaps.append(Gap(kind="balance_reading_date", item=r.label, severity="minor",
                            evidence=_where(r),
                            message=f"the reading is dated {day}, "
                            f"{abs((day - entry_date).days)} "
                            f"days from the entry's date {entry_date}; check it belongs to "
                            "this experiment"))  # fmt: skip
    return gaps


@hookimpl(trylast=True, specname="masstrail_place_readings")
def place_readings(
    entry: Entry,
    materials: list[MaterialLine],
    readings: list[BalanceReading],
    resolve: Callable[[str], MaterialInfo | None],
    config: LabConfig,
) -> ReadingPlacement | None:
    """Each reading to the material or product its label names; gaps for the rest."""
    if not readings:
        return None
    by_line, product, gaps, added = assign(
        readings, materials, entry.product.name, resolve, entry.date,
        config.balance_layout.max_days_from_entry, mentions_in(entry.body, resolve))  # fmt: skip
    index = {id(m): i for i, m in enumerate([*materials, *added])}
    return ReadingPlacement(
        inputs=added,
        masses={index[k]: BalanceMass(mass_g=a.mass_g, basis=a.basis) for k, a in by_line.items()},
        product=None if product is None else BalanceMass(mass_g=product.mass_g,
                                                         basis=product.basis),
        gaps=gaps,
    )  # fmt: skip
