"""Metric definitions, checked against the published definitions (see FIELD.md)."""

from __future__ import annotations

import pytest

from capture.config import LabConfig
from capture.models import Gap, MaterialLine, ProductOut
from masstrail_plugins.metrics.mass import mass_metrics, sector_context


def _line(name, mass, category="reagent", stage="reaction", water=None):
    return MaterialLine(name=name, mass_g=mass, category=category, stage=stage, origin="front-matter",
                        water_g=water)  # fmt: skip


def _run(lines, product, recovered=(), gaps=(), config=None):
    return mass_metrics(
        materials=list(lines),
        product=ProductOut(name="p", mass_g=product),
        recovered=list(recovered),
        gaps=list(gaps),
        config=config or LabConfig(),
    )


def test_e_factor_2_means_twice_as_much_waste_as_product():
    # definition (Sheldon 1992; common practice): E = m(waste) / m(product)
    r = _run([_line("A", 2.0), _line("B", 1.0)], product=1.0)
    assert r.metrics["e_factor"] == 2.0
    assert r.totals.waste_g == 2.0


def test_e_factor_0_1_means_ten_times_more_product_than_waste():
    r = _run([_line("A", 11.0)], product=10.0)
    assert r.metrics["e_factor"] == pytest.approx(0.1)


def test_pmi_is_e_plus_one_for_the_complete_e_factor():
    # Jiménez-González et al. 2011: PMI = Σ inputs / product; cEF = PMI − 1 (Roschangar 2015)
    lines = [
        _line("A", 1.9),
        _line("DCM", 53.06, "solvent"),
        _line("brine", 23.96, "aqueous", "workup", 17.6),
    ]
    r = _run(lines, product=2.41)
    assert r.metrics["pmi"] == pytest.approx(r.metrics["e_factor"] + 1, abs=1e-3)


def test_simple_e_factor_leaves_out_solvents_water_and_workup():
    lines = [
        _line("A", 1.0),
        _line("B", 0.5),
        _line("toluene", 20.0, "solvent"),
        _line("water", 10.0, "water", "workup", 10.0),
        _line("MgSO4", 2.0, "drying agent", "workup"),
    ]
    r = _run(lines, product=1.0)
    assert r.metrics["e_factor_simple"] == pytest.approx(0.5)
    assert r.metrics["e_factor"] == pytest.approx(32.5)


def test_no_simple_e_factor_when_the_product_outweighs_the_reagents():
    # only a solvent recorded: (0 − 1) / 1 would be a simple E-factor of −1, which no mass
    # balance allows (the same rule as the complete E-factor's, above)
    r = _run([_line("toluene", 8.67, "solvent")], product=1.0)
    assert r.metrics["e_factor_simple"] is None
    assert r.metrics["e_factor"] == pytest.approx(7.67)
    assert "outweighs the recorded reagents (0 g" in r.context["simple_mass_balance"]


def test_water_can_be_left_out_of_the_headline():
    lines = [_line("A", 2.0), _line("brine", 12.0, "aqueous", "workup", water=8.0)]
    cfg = LabConfig.model_validate({"e_factor": {"include_water": False}})
    r = _run(lines, product=1.0, config=cfg)
    assert r.metrics["e_factor"] == pytest.approx(13.0 - 8.0)
    assert r.metrics["pmi"] == pytest.approx(14.0)  # PMI counts everything


def test_recovered_solvent_is_credited():
    r = _run(
        [_line("A", 2.0), _line("MTBE", 66.6, "solvent")],
        product=2.5,
        recovered=[_line("MTBE", 44.4, "solvent")],
    )
    assert r.metrics["e_factor"] == pytest.approx((68.6 - 2.5 - 44.4) / 2.5)
    assert r.totals.recovered_g == pytest.approx(44.4)


def test_allowances_only_raise_the_estimate():
    gap = Gap(kind="x", item="filter paper", severity="minor", message="m", allowance_g=0.56)
    r = _run([_line("A", 3.0)], product=1.0, gaps=[gap])
    assert r.metrics["e_factor"] == 2.0 and r.metrics["e_factor_estimated"] == pytest.approx(2.56)


def test_no_product_mass_no_figures():
    r = _run([_line("A", 3.0)], product=None)
    assert all(v is None for k, v in r.metrics.items() if k != "completeness")
    assert r.metrics["completeness"] == 1.0  # nothing estimated as missing
    assert r.totals.inputs_g == 3.0 and r.totals.waste_g is None


def test_breakdown_names_the_largest_contributor():
    r = _run([_line("A", 1.0), _line("DCM", 53.06, "solvent")], product=0.5)
    assert r.breakdown.by_category == {"reagent": 1.0, "solvent": 53.06}
    assert r.breakdown.largest.startswith("DCM, 53.06 g (98% of inputs)")


@pytest.mark.parametrize(
    ("e", "bands"),
    [
        # Sheldon, Green Chem. 2007, 9, 1273: oil refining ca. 0.1, bulk < 1–5,
        # fine chemicals 5 to > 50, pharmaceuticals 25 to > 100
        (0.1, ["oil refining", "bulk chemicals"]),
        (3.0, ["bulk chemicals"]),
        (12.0, ["fine chemicals"]),
        (30.0, ["fine chemicals", "pharmaceuticals"]),
        (150.0, ["pharmaceuticals"]),
    ],
)
def test_sector_bands(e, bands):
    text = sector_context(e)
    for name in ["oil refining", "bulk chemicals", "fine chemicals", "pharmaceuticals"]:
        assert (name in text) == (name in bands), name


def test_no_e_factor_when_the_product_outweighs_the_recorded_inputs(notebook):
    """Mass balance (common practice): waste cannot be negative. With the only input
    unreadable, 1 g of product gives no E-factor or PMI, and the context says why."""
    from helpers import entry_md

    notebook.write("e.md", entry_md("""
        product: {name: p, mass: 1.00 g}
        materials: [{name: A, amount: 3.00 gallons}]
        """))  # fmt: skip
    (r,) = notebook.scan().results
    assert r.metrics.e_factor is None and r.metrics.pmi is None and r.totals.waste_g is None
    assert "outweighs the recorded inputs (0 g" in r.context["mass_balance"]


def test_solvent_waste_by_chem21_rank_names_the_unranked_share(notebook):
    """Every solvent's waste is in one rank: toluene 'problematic' and 1,2-dichloroethane
    'highly hazardous' (CHEM21 guide, Prat et al., Green Chem. 2016, 18, 288, as recalled);
    a solvent the guide does not rank (here the lab's own) is 'not ranked in the guide', never
    left out of the summary."""
    notebook.write(
        "masstrail.toml",
        """
        [[materials]]
        name = "house blend"
        density_g_ml = 0.80
        category = "solvent"
        source = "the lab's own mixture"
        """,
    )
    notebook.write(
        "e.md",
        """
        ---
        title: ranks
        product: {name: the ester, mass: 1.00 g}
        materials:
          - {name: A, amount: 2.00 g, role: reactant}
          - {name: toluene, amount: 10 mL, role: solvent}
          - {name: DCE, amount: 5 mL, role: solvent}
          - {name: house blend, amount: 10 mL, role: solvent}
        ---
        """,
    )
    notebook.scan()
    waste = notebook.sidecar("e.md")["waste"]
    ranks = waste["solvent_ranks"]
    assert set(ranks) == {"problematic", "highly hazardous", "not ranked in the guide"}
    assert ranks["not ranked in the guide"] == pytest.approx(8.0)  # 10 mL × 0.80 g/mL
    share = round(100 * 8.0 / sum(waste["streams"].values()))
    assert f"{share}% of the waste is solvent not ranked in the guide" in waste["summary"]


def test_completeness_counts_every_input_without_a_mass_and_every_unread_quantity(notebook):
    """An input that dropped out (1.5 equiv with no limiting reagent to scale it) and a
    quantity the text states but nothing reads (25 mg) each lower completeness and add their
    allowance to the estimated E-factor; neither leaves completeness at 100 %."""
    notebook.write(
        "e.md",
        """
        ---
        title: dropped inputs
        product: {name: the amide, mass: 1.00 g}
        materials:
          - {name: A, amount: 2.00 g, role: reactant}
          - {name: B, amount: 1.5 equiv, role: reagent}
          - {name: toluene, amount: 10 mL, role: solvent}
        ---
        After an hour the mixture was treated with 25 mg.
        """,
    )
    notebook.scan()
    side = notebook.sidecar("e.md")
    by_item = {g["item"]: g for g in side["gaps"]}
    assert by_item["B"]["allowance_g"] == 2.0  # the entry's median recorded reagent mass
    assert by_item["25 mg"]["allowance_g"] == 0.025
    inputs = side["totals"]["inputs_g"]
    assert side["metrics"]["completeness"] == pytest.approx(inputs / (inputs + 2.025), abs=1e-4)
    assert side["metrics"]["completeness"] < 1
    assert side["metrics"]["e_factor_estimated"] == pytest.approx(
        side["metrics"]["e_factor"] + 2.025 / 1.00, abs=1e-3)  # fmt: skip


def test_a_missing_mass_that_cannot_be_sized_leaves_no_completeness():
    """Completeness is recorded ÷ (recorded + allowances): a missing input with no allowance
    would count as zero and show 100 %, so no completeness is given, and the context says
    which records cannot be sized. A doubt about a record (a yield that disagrees) is not a
    missing mass and leaves completeness as it is."""
    unsized = Gap(kind="unread_amount", item="2 oz", severity="major", message="m",
                  missing_mass=True)  # fmt: skip
    doubt = Gap(kind="yield_mismatch", item="p", severity="minor", message="m")
    r = _run([_line("A", 3.0)], product=1.0, gaps=[unsized, doubt])
    assert r.metrics["completeness"] is None
    assert r.context["completeness"] == (
        "1 missing record(s) cannot be sized (2 oz), so no completeness is given"
    )
    assert r.metrics["e_factor"] == 2.0  # the E-factor from recorded masses still stands
    r = _run([_line("A", 3.0)], product=1.0, gaps=[doubt])
    assert r.metrics["completeness"] == 1.0 and "completeness" not in r.context
    sized = unsized.model_copy(update={"allowance_g": 1.0})
    assert _run([_line("A", 3.0)], product=1.0, gaps=[sized]).metrics["completeness"] == 0.75


def test_unknown_units_get_the_median_reagent_allowance_even_with_no_stage(notebook):
    """'4.0 gallons' and '2 oz' cannot be read (unknown units). They are sized by the entry's
    median recorded reagent — here the one reagent, which the front matter gives no stage —
    so completeness is 3 ÷ (3 + 3 + 3); with only a solvent recorded there is no scale at
    all, and completeness is not given rather than 100 %."""
    body = "Stirred with 2 oz of sodium sulfate."
    matter = """
        ---
        title: unknown units
        materials:
          - {{name: ethanol, amount: 4.0 gallons, role: solvent}}
          - {{name: {second}, amount: 3.0 g}}
        product: {{name: the ester, mass: 2.0 g}}
        ---
        """
    notebook.write("reagent.md", matter.format(second="benzoic acid") + "        " + body)
    notebook.write("solvent.md", matter.format(second="acetic acid") + "        " + body)
    notebook.scan()
    side = notebook.sidecar("reagent.md")
    assert {g["item"]: g["allowance_g"] for g in side["gaps"]} == {"ethanol": 3.0, "2 oz": 3.0}
    assert side["metrics"]["completeness"] == pytest.approx(1 / 3, abs=1e-4)
    side = notebook.sidecar("solvent.md")  # acetic acid is a solvent: no reagent recorded
    assert side["metrics"]["completeness"] is None
    assert "cannot be sized (ethanol, 2 oz)" in side["context"]["completeness"]
