"""Balance readings put where they belong: each material's mass, the product's, or a gap.

Plugin ``balance`` (``masstrail_place_readings``), with these rules:

- A reading's label names a material by the same name resolution as elsewhere
  (case, spacing, synonyms); ``product`` or the product's name is the product.
- Weighing by difference: ``X before`` / ``X after`` (the weighing vessel full,
  then empty) gives before − after; ``vessel`` and ``vessel + X`` gives the
  difference the other way.
- An unstable reading is used, with a minor gap, unless a stable one for the
  same label exists; of several readings for one label the last stable one counts.
- A balance mass wins over a typed amount for the same material.
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
    BalanceMass,
    BalanceReading,
    Entry,
    Gap,
    MaterialInfo,
    MaterialLine,
    ReadingPlacement,
)

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
) -> tuple[dict[int, Assignment], Assignment | None, list[Gap]]:
    """Match readings to lines (by id) and to the product; gaps for what does not fit."""

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
    assigned, product = _targets(results, line_by_key, product_keys, gaps)
    gaps += _date_gaps(usable, entry_date, max_days)
    return assigned, product, gaps


def _usable(readings: list[BalanceReading], gaps: list[Gap]) -> list[BalanceReading]:
    """The readings with a mass; a gap for each without."""
    usable = []
    for r in readings:
        if r.mass_g is None:
            gaps.append(Gap(kind="balance_row_unreadable", item=r.label, severity="minor",
                            evidence=f"{r.file} line {r.line}: {r.as_written}",
                            message=f"the reading {r.as_written!r} could not be read as a mass; "
                            "correct the log or weigh again"))  # fmt: skip
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
        results[name_key] = Assignment(r.mass_g, f"balance reading {_where(r)}", group)
    for name_key, sides in diff.items():
        if "before" in sides and "after" in sides:
            a, b = _pick(sides["before"]), _pick(sides["after"])
            mass = a.mass_g - b.mass_g
            basis = (f"weighed by difference: {a.mass_g:g} g − {b.mass_g:g} g "
                     f"({_where(a)}; {_where(b)})")  # fmt: skip
            results[name_key] = Assignment(mass, basis, sides["before"] + sides["after"])
        elif "gross" in sides and "tare" in sides:
            g, t = _pick(sides["gross"]), _pick(sides["tare"])
            mass = g.mass_g - t.mass_g
            basis = (
                f"weighed by difference: {g.mass_g:g} g − {t.mass_g:g} g ({_where(g)}; {_where(t)})"
            )
            results[name_key] = Assignment(mass, basis, sides["gross"] + sides["tare"])
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
) -> tuple[dict[int, Assignment], Assignment | None]:
    """Each balance mass to its line (by id) or the product; a gap for those no one claims."""
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
    by_line, product, gaps = assign(readings, materials, entry.product.name, resolve, entry.date,
                                    config.balance_layout.max_days_from_entry)  # fmt: skip
    index = {id(m): i for i, m in enumerate(materials)}
    return ReadingPlacement(
        masses={index[k]: BalanceMass(mass_g=a.mass_g, basis=a.basis) for k, a in by_line.items()},
        product=None if product is None else BalanceMass(mass_g=product.mass_g,
                                                         basis=product.basis),
        gaps=gaps,
    )  # fmt: skip
