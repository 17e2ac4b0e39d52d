"""Amounts to masses: each with its basis."""

from __future__ import annotations

import pytest

from capture.config import LabConfig
from capture.models import MassContext, MaterialLine
from capture.quantities import parse_amounts
from masstrail_plugins.resolve.materials import resolve_builtin
from masstrail_plugins.weigh.masses import weigh_line

CFG = LabConfig()


def _weigh(name: str, amount: str, ctx: MassContext | None = None):
    line = MaterialLine(name=name, stated=amount, amounts=parse_amounts(amount), origin="text")
    return weigh_line(line, resolve_builtin(name, CFG), ctx or MassContext(), CFG)


def test_stated_mass_wins_and_keeps_the_text():
    got = _weigh("MgSO4", "3.0 g")
    assert got.mass_g == 3.0 and got.basis == "3.0 g as recorded"
    # moles from the IUPAC molar mass of MgSO4, 120.37 g/mol (CRC Handbook)
    assert got.moles_mmol == pytest.approx(3.0 / 120.366 * 1000, rel=1e-4)


def test_volume_times_density_names_the_constant_and_its_source():
    got = _weigh("DMF", "25 mL")
    # 25 mL × 0.9487 g/mL (DMF, 20 °C, CRC Handbook value quoted in FIELD.md)
    assert got.mass_g == pytest.approx(23.7175)
    assert got.basis.startswith("25 mL × 0.9487 g/mL (N,N-dimethylformamide, 20 °C; CRC Handbook")


def test_multiplier_and_range_are_in_the_basis():
    got = _weigh("MTBE", "3 × 40 mL")
    assert got.mass_g == pytest.approx(120 * 0.7405)
    assert got.basis.startswith("3 × 40 mL × 0.7405")
    got = _weigh("water", "10–15 mL")
    assert got.mass_g == pytest.approx(12.5 * 0.9982)
    assert "midpoint of 10–15 mL" in got.basis


def test_moles_times_molar_mass():
    got = _weigh("Et3N", "20 mmol")
    # triethylamine C6H15N, 101.19 g/mol (IUPAC weights)
    assert got.mass_g == pytest.approx(20 * 101.193 / 1000, rel=1e-4)
    assert "IUPAC standard atomic weights" in got.basis


def test_equivalents_need_the_limiting_reagent():
    got = _weigh("Boc2O", "1.05 equiv")
    assert got.mass_g is None and got.problem_kind == "no_limiting_reagent"
    got = _weigh("Boc2O", "1.05 equiv", MassContext(limiting_name="amine", limiting_mmol=30.0))
    # di-tert-butyl dicarbonate C10H18O5, 218.25 g/mol
    assert got.mass_g == pytest.approx(1.05 * 30 * 218.249 / 1000, rel=1e-4)
    assert "(amine, limiting)" in got.basis


def test_a_loading_in_mol_percent_is_weighed_against_the_limiting_reagent():
    """'3 mol%' of Pd(PPh3)4 on 10 mmol of limiting reagent: 0.30 mmol × 1155.59 g/mol
    (C72H60P4Pd from the IUPAC 2021 standard atomic weights: C 12.011, H 1.008, P 30.974,
    Pd 106.42) = 0.3467 g; the basis says the loading as written."""
    got = _weigh("Pd(PPh3)4", "3 mol%", MassContext(limiting_name="ArBr", limiting_mmol=10.0))
    assert got.mass_g == pytest.approx(0.03 * 10 * 1155.59 / 1000, rel=1e-4)
    assert got.basis.startswith("3 mol% × 10 mmol (ArBr, limiting)")


def test_a_solvent_stated_by_its_concentration_is_the_limiting_reagent_s_volume():
    """'THF (0.2 M)' on 2.5 mmol of limiting reagent: 12.5 mL (common practice: the stated
    molarity is the limiting reagent's) × 0.889 g/mL (THF, 20 °C, CRC Handbook, from memory);
    without the limiting reagent, or for a reagent solution ('HCl (2 M)'), it is a problem."""
    ctx = MassContext(limiting_name="ketone", limiting_mmol=2.5)
    got = _weigh("THF", "0.2 M", ctx)
    assert got.mass_g == pytest.approx(12.5 * 0.889)
    assert got.basis.startswith("12.5 mL = 2.5 mmol (ketone, limiting) ÷ 0.2 M")
    got = _weigh("THF", "0.2 M")
    assert got.mass_g is None and "limiting reagent's mmol" in got.problem
    got = _weigh("HCl", "2 M", ctx)
    assert got.mass_g is None and got.problem_kind == "no_amount"


def test_volume_without_density_or_material_is_a_problem_not_a_guess():
    assert _weigh("MgSO4", "20 mL").problem_kind == "no_density"
    got = _weigh("Kestrel wash blend", "25 mL")
    assert got.mass_g is None and got.problem_kind == "unknown_material"
    assert "masstrail.toml" in got.problem


def test_a_mixture_without_its_ratio_asks_for_the_ratio_not_for_new_material_data():
    """ "THF/water (20 mL)": both liquids are known, their proportions are not; the advice is
    to note the ratio, not to add 'THF/water' to the material data."""
    got = _weigh("THF/water", "20 mL")
    assert got.mass_g is None and got.problem_kind == "unknown_material"
    assert "proportions are not given" in got.problem and "'THF/water 1:1 (20 mL)'" in got.problem
    assert "proportions" not in _weigh("Kestrel wash blend", "25 mL").problem


def test_the_basis_gives_the_density_used_so_the_mass_can_be_redone():
    """40 mL of DCM at 1.3266 g/mL (dichloromethane, 20 °C: CRC Handbook / Riddick–Bunger–
    Sakano as quoted in FIELD.md, there marked from memory). The basis must not round the
    density to 1.327, or a chemist redoing 40 × 1.327 gets 53.08 g where the record says
    53.064 g."""
    got = _weigh("DCM", "40 mL")
    assert got.mass_g == pytest.approx(40 * 1.3266)
    assert got.basis.startswith("40 mL × 1.3266 g/mL (dichloromethane, 20 °C;")


def test_a_volume_without_density_is_weighed_from_its_moles_and_says_so():
    from capture.models import AmountMention, MassContext, MaterialInfo, MaterialLine

    # a liquid the data knows by formula only (POCl3, 153.33 g/mol from IUPAC atomic weights)
    info = MaterialInfo(name="phosphoryl chloride", formula="POCl3", molar_mass=153.33,
                        source="test")  # fmt: skip
    line = MaterialLine(name="POCl3", origin="text", stated="2.1 mL, 23.4 mmol", amounts=[
        AmountMention(value=2.1, unit="mL", kind="volume", text="2.1 mL"),
        AmountMention(value=23.4, unit="mmol", kind="amount", text="23.4 mmol")])  # fmt: skip
    got = weigh_line(line, info, MassContext(), CFG)
    assert got.mass_g == pytest.approx(23.4 * 153.33 / 1000)
    assert "no density is known" in got.basis and "23.4 mmol" in got.basis
