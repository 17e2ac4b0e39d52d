"""Amounts to masses, each with the basis that a reader can check.

For one material line the first of these that applies gives the mass:

1. a stated mass (``4.36 g``);
2. a volume and a density (``25 mL × 0.9487 g/mL``);
3. an amount of substance and a molar mass (``20 mmol × 218.04 g/mol``);
4. equivalents, the limiting reagent's amount and a molar mass;
5. a solvent stated by the concentration it makes (``THF (0.2 M)``): the limiting reagent's
   amount ÷ that molarity, × the density.

The amount of substance is worked out too, where the data allow, so that the
limiting reagent can be found. Ranges are weighed at their midpoint and say so;
approximate amounts say so.
"""

from __future__ import annotations

import re

from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import AmountMention, MassAssignment, MassContext, MaterialInfo, MaterialLine
from capture.quantities import first_of


def fmt(x: float) -> str:
    """A number as a chemist would write it: 4 significant figures, no trailing zeros."""
    if x == 0:
        return "0"
    s = f"{x:.4g}"
    if "e" in s:
        s = f"{x:.4f}".rstrip("0").rstrip(".")
    return s


def _amount_words(a: AmountMention, derived: bool = False) -> str:
    """'3 × 40 mL', 'ca. 5 g', '12.5 mL (midpoint of 10–15 mL)'.

    ``derived``: the value is not the text's (a mixture component's share), so say the value.
    """
    plain = a.multiplier == 1 and a.low is None and not a.approximate and not derived
    core = " ".join(a.text.split()) if plain else f"{fmt(a.value)} {a.unit}"
    if a.multiplier > 1:
        core = f"{a.multiplier} × {core}"
    if a.low is not None and a.high is not None:
        core += f" (midpoint of {fmt(a.low)}–{fmt(a.high)} {a.unit})"
    if a.approximate:
        core = f"approx. {core}"
    return core


def _portions(line: MaterialLine, kind: str) -> tuple[float, str]:
    """The total of a line's amounts of one kind, in words: "(100 ml and 50 ml)" is two
    portions, 150 mL in all."""
    found = [a for a in line.amounts if a.kind == kind]
    words = " + ".join(_amount_words(a, bool(line.note)) for a in found)
    if len(found) > 1:
        words = f"({words})"
    return sum(a.total for a in found), words


def _density_words(info: MaterialInfo) -> str:
    # the density as the data gives it (1.3266, not 1.327): the reader can redo the product
    density = f"{info.density_g_ml:g}"
    if (info.density_source or "").startswith("density of the solvent"):
        return f"{density} g/mL ({info.density_source})"
    temp = f", {fmt(info.density_temp_c)} °C" if info.density_temp_c is not None else ""
    return f"{density} g/mL ({info.name}{temp}; {info.density_source})"


def _moles(line: MaterialLine, info: MaterialInfo | None, mass_g: float | None) -> float | None:
    amount = first_of(line.amounts, "amount")
    if amount is not None:
        return amount.total
    volume, conc = first_of(line.amounts, "volume"), first_of(line.amounts, "concentration")
    if volume is not None and conc is not None:
        return volume.total * conc.value  # mL × mol/L = mmol
    if mass_g is not None and info is not None and info.molar_mass:
        return mass_g / info.molar_mass * 1000
    return None


def _weigh_by_moles(
    line: MaterialLine, info: MaterialInfo, volume: AmountMention
) -> MassAssignment | None:
    """A volume with no density, stated with its amount of substance ("phosphorus oxychloride
    (2.1 mL, 23.37 mmol)"): the mass is the moles × the molar mass, and the basis says so."""
    amount = first_of(line.amounts, "amount")
    if amount is None or not info.molar_mass or first_of(line.amounts, "concentration") is not None:
        return None
    grams = amount.total * info.molar_mass / 1000
    basis = (f"{_amount_words(amount)} × {fmt(info.molar_mass)} g/mol ({info.formula}): no "
             f"density is known for {info.name}, so {_amount_words(volume)} is weighed from the "
             "amount of substance stated with it")  # fmt: skip
    return MassAssignment(mass_g=grams, moles_mmol=amount.total, basis=basis)


@hookimpl(trylast=True, specname="masstrail_assign_mass")
def weigh_line(
    line: MaterialLine, material: MaterialInfo | None, context: MassContext, config: LabConfig
) -> MassAssignment | None:
    """Stated mass, else volume × density, else moles × molar mass, else equivalents; and the
    water in that mass (water itself, or an aqueous solution's water fraction)."""
    got = _weigh(line, material, context)
    if got is None or got.mass_g is None or material is None:
        return got
    shown = round(got.mass_g, 4)  # the water is worked out from the mass as it is shown
    if material.category == "water":
        got.water_g = shown
    elif material.water_fraction is not None:
        got.water_g = shown * material.water_fraction
    return got


# "THF/water", "acetonitrile:water", "MTBE/acetone/water": liquids mixed in a ratio not given
_MIXTURE = re.compile(r"[A-Za-z][^/:]*(?:\s*[/:]\s*[A-Za-z][^/:]*)+")


def _unknown(line: MaterialLine, volume: AmountMention) -> str:
    """Why a volume of a material the data does not know cannot be weighed, and what to do."""
    if _MIXTURE.fullmatch(line.name) and not first_of(line.amounts, "concentration"):
        return (f"{line.name!r} is a mixture whose proportions are not given, so {volume.text} "
                f"cannot be weighed; note its ratio by volume (e.g. '{line.name} 1:1 "
                f"({volume.text})') or weigh it")  # fmt: skip
    return (
        f"{line.name!r} is not in the material data, so {volume.text} cannot be weighed; "
        "record the mass, or add the material to masstrail.toml"
    )


def _weigh(
    line: MaterialLine, info: MaterialInfo | None, context: MassContext
) -> MassAssignment | None:
    """The mass of one line and its basis, or the problem; None if it has no amount to weigh."""
    label = info.name if info else line.name
    mass = first_of(line.amounts, "mass")
    if mass is not None:
        total, words = _portions(line, "mass")
        basis = f"{words} as recorded"
        return MassAssignment(mass_g=total, moles_mmol=_moles(line, info, total), basis=basis)
    volume = first_of(line.amounts, "volume")
    if volume is not None:
        if info is None:
            return MassAssignment(moles_mmol=_moles(line, info, None),
                                  problem=_unknown(line, volume),
                                  problem_kind="unknown_material")  # fmt: skip
        if not info.density_g_ml:
            by_moles = _weigh_by_moles(line, info, volume)
            if by_moles is not None:
                return by_moles
            return MassAssignment(
                moles_mmol=_moles(line, info, None),
                problem=f"no density is known for {label}, so {volume.text} cannot be weighed; "
                f"record the mass, or add '{label}' under [densities] in masstrail.toml",
                problem_kind="no_density",
            )
        total, words = _portions(line, "volume")
        grams = total * info.density_g_ml
        basis = f"{words} × {_density_words(info)}"
        if line.note:
            basis += f"; {line.note}"
        return MassAssignment(mass_g=grams, moles_mmol=_moles(line, info, grams), basis=basis)
    amount = first_of(line.amounts, "amount")
    if amount is not None:
        if info is None or not info.molar_mass:
            return MassAssignment(
                moles_mmol=amount.total,
                problem=f"no molar mass is known for {label!r}, so {amount.text} cannot be "
                "weighed; record the mass, or give the material's formula in masstrail.toml",
                problem_kind="no_molar_mass",
            )
        grams = amount.total * info.molar_mass / 1000
        basis = (
            f"{_amount_words(amount)} × {fmt(info.molar_mass)} g/mol "
            f"({info.formula}, IUPAC standard atomic weights)"
        )
        return MassAssignment(mass_g=grams, moles_mmol=amount.total, basis=basis)
    equiv = first_of(line.amounts, "equivalents")
    if equiv is not None:
        if context.limiting_mmol is None:
            return MassAssignment(
                problem=f"{equiv.text} of {label} needs the limiting reagent's amount, and the "
                "entry gives none; record the mass, or the limiting reagent's mmol",
                problem_kind="no_limiting_reagent",
            )
        mmol = equiv.total * context.limiting_mmol
        if info is None or not info.molar_mass:
            return MassAssignment(
                moles_mmol=mmol,
                problem=f"no molar mass is known for {label!r}, so {equiv.text} cannot be "
                "weighed; record the mass, or give the material's formula in masstrail.toml",
                problem_kind="no_molar_mass",
            )
        grams = mmol * info.molar_mass / 1000
        basis = (
            f"{_amount_words(equiv)} × {fmt(context.limiting_mmol)} mmol "
            f"({context.limiting_name}, limiting) × {fmt(info.molar_mass)} g/mol ({info.formula})"
        )
        return MassAssignment(mass_g=grams, moles_mmol=mmol, basis=basis)
    conc = first_of(line.amounts, "concentration")
    if conc is not None:
        return _solvent_by_concentration(line, info, conc, context)
    return None


def _solvent_by_concentration(
    line: MaterialLine, info: MaterialInfo | None, conc: AmountMention, context: MassContext
) -> MassAssignment:
    """A solvent stated by the concentration it makes ("dissolved in THF (0.2 M)"): by common
    practice the limiting reagent's, so its volume is that reagent's mmol ÷ the molarity;
    anything else stated by a concentration alone has no volume to weigh."""
    solvent = info is not None and info.category == "solvent" and info.density_g_ml
    if not solvent or context.limiting_mmol is None or conc.value <= 0:
        why = "" if not solvent else " (its volume would follow from the limiting reagent's mmol)"
        return MassAssignment(problem=f"{line.stated} gives a concentration but no volume{why}; "
                              "record the volume used", problem_kind="no_amount")  # fmt: skip
    ml = context.limiting_mmol / conc.value  # mmol ÷ mol/L = mL
    basis = (f"{fmt(ml)} mL = {fmt(context.limiting_mmol)} mmol ({context.limiting_name}, "
             f"limiting) ÷ {_amount_words(conc)}, the concentration stated, taken as the "
             f"limiting reagent's (common practice) × {_density_words(info)}")  # fmt: skip
    return MassAssignment(mass_g=ml * info.density_g_ml, basis=basis)
