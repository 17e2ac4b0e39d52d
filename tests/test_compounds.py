"""The generated compound table, the lab abbreviations, the lookup order and the SMILES reader,
checked against sources outside masstrail: handbook densities (FIELD.md), the CHEM21 guide,
IUPAC atomic weights through the `periodictable` library, and RDKit's formulas."""

from __future__ import annotations

import hashlib
import re
import sqlite3
import tomllib

import pytest

from capture.chem import formula_from_smiles, hill_formula, looks_like_formula, molar_mass
from capture.config import LabConfig
from masstrail_plugins.metrics.waste import RANKS, UNRANKED
from masstrail_plugins.resolve import compounds
from masstrail_plugins.resolve.knowledge import BUILTIN_SOURCE
from masstrail_plugins.resolve.materials import resolve_builtin

CURATION = tomllib.loads(compounds.CURATION.read_text(encoding="utf-8"))

# Densities in g/mL at 20 °C quoted in FIELD.md: CRC Handbook of Chemistry and Physics and
# Riddick, Bunger & Sakano, "Organic Solvents" (tagged there as from memory). Two checks that
# are not circular: masstrail's hand-checked materials.toml and its generated table (from the
# chemicals library's compilation, which gives 20 °C or 25 °C values) are each held to them.
HANDBOOK_20C = {
    "water": 0.9982, "methanol": 0.7914, "ethanol": 0.7893, "2-propanol": 0.7855,
    "1-butanol": 0.8098, "ethyl acetate": 0.9003, "isopropyl acetate": 0.872,
    "acetone": 0.7899, "2-butanone": 0.805, "toluene": 0.8669, "heptane": 0.684,
    "hexane": 0.659, "pentane": 0.626, "cyclohexane": 0.7785, "diethyl ether": 0.7138,
    "methyl tert-butyl ether": 0.7405, "tetrahydrofuran": 0.889,
    "2-methyltetrahydrofuran": 0.854, "1,4-dioxane": 1.0337, "1,2-dimethoxyethane": 0.869,
    "dichloromethane": 1.3266, "chloroform": 1.4832, "N,N-dimethylformamide": 0.9487,
    "N,N-dimethylacetamide": 0.943, "N-methyl-2-pyrrolidone": 1.033,
    "dimethyl sulfoxide": 1.1010, "acetonitrile": 0.7857, "acetic acid": 1.0492,
    "pyridine": 0.9819, "triethylamine": 0.7275,
}  # fmt: skip


def test_thirty_handbook_liquids():
    assert len(HANDBOOK_20C) == 30


@pytest.mark.parametrize(("name", "value"), HANDBOOK_20C.items())
def test_table_and_curated_densities_within_1_percent_of_the_handbook(name, value):
    table = compounds.look_up(name)
    assert table is not None and table.density_g_ml == pytest.approx(value, rel=0.01), name
    curated = resolve_builtin(name, LabConfig())
    assert curated.source == BUILTIN_SOURCE  # the hand-checked value wins over the table's
    assert curated.density_g_ml == pytest.approx(value, rel=0.01)


# Liquids real procedures use that had no density in the default install, with handbook or
# supplier values (20-25 °C; from memory, within 1.5 % to allow for the temperature)
@pytest.mark.parametrize(
    ("name", "value"),
    [("phenylacetylene", 0.930), ("phosphorus oxychloride", 1.645), ("ethyl iodide", 1.936),
     ("3-bromopyridine", 1.640), ("NMP", 1.028)],
)  # fmt: skip
def test_liquids_real_procedures_use_have_a_density_with_its_source(name, value):
    info = resolve_builtin(name, LabConfig())
    assert info.density_g_ml == pytest.approx(value, rel=0.015)
    assert info.density_source and ("CRC" in info.density_source or "masstrail" in info.source)


def test_a_known_disagreement_pivaloyl_chloride():
    """The table's pivaloyl chloride (the handbook compilation: 1.003 g/mL) is about 2.5 %
    above the supplier value we remember (0.979 g/mL at 25 °C; from memory) and thermo's
    correlation (0.969 at 20 °C). Kept, with its source, until a checked value is curated;
    this test fails when the table changes, so the note is revisited."""
    info = resolve_builtin("pivaloyl chloride", LabConfig())
    assert info.density_g_ml == pytest.approx(1.0032) and "CRC" in info.density_source


def test_every_density_of_the_table_names_its_source_and_estimates_say_so():
    db = sqlite3.connect(compounds.TABLE)
    sources = dict(db.execute("SELECT key, text FROM sources"))
    rows = db.execute("SELECT density_source, count(*) FROM compounds WHERE density IS NOT NULL "
                      "GROUP BY density_source").fetchall()  # fmt: skip
    assert sum(n for _, n in rows) > 4000
    assert all(key in sources for key, _ in rows)
    assert (
        sources["costald"].startswith("estimate") and "not a measured value" in sources["costald"]
    )
    assert all("estimate" not in sources[k] for k, _ in rows if k != "costald")
    # a measured (handbook) density wins over a fit or an estimate for every compound
    assert db.execute("SELECT count(*) FROM compounds WHERE density_source = 'costald' "
                      "AND cas IN (SELECT cas FROM compounds WHERE density_source LIKE 'crc%')"
                      ).fetchone()[0] == 0  # fmt: skip


def test_every_abbreviation_resolves_to_a_compound_with_a_formula():
    for abbreviation, full in CURATION["abbreviations"].items():
        info = compounds.look_up(abbreviation)
        assert info is not None, f"{abbreviation} → {full}: not in the table"
        assert info.formula and molar_mass(info.formula) > 0, abbreviation


# CHEM21 solvent selection guide (Prat et al., Green Chem. 2016, 18, 288), ranks as recalled
# in FIELD.md
@pytest.mark.parametrize(
    ("name", "rank"),
    [("DCE", "highly hazardous"), ("NMP", "hazardous"), ("acetonitrile", "problematic"),
     ("1-butanol", "recommended"), ("chloroform", "highly hazardous"), ("MIBK", "recommended")],
)  # fmt: skip
def test_solvent_ranks(name, rank):
    assert compounds.look_up(name).chem21 == rank


def test_every_solvent_of_the_table_has_a_rank_or_says_it_is_not_ranked():
    db = sqlite3.connect(compounds.TABLE)
    ranks = {r for (r,) in db.execute("SELECT DISTINCT solvent_rank FROM compounds "
                                      "WHERE solvent_rank IS NOT NULL")}  # fmt: skip
    assert ranks <= {*RANKS, UNRANKED} and UNRANKED in ranks and len(ranks) == 5
    assert set(CURATION["solvents"].values()) == ranks
    n = db.execute("SELECT count(*) FROM compounds WHERE solvent_rank IS NOT NULL").fetchone()[0]
    assert n == len(CURATION["solvents"])  # every curated solvent is in the table


def test_molar_masses_of_the_table_against_periodictable():
    """Every 20th formula of the table: molmass (IUPAC standard atomic weights) against the
    periodictable library, a second implementation of the same weights."""
    periodictable = pytest.importorskip("periodictable")
    db = sqlite3.connect(compounds.TABLE)
    formulas = [f for (f,) in db.execute("SELECT formula FROM compounds WHERE formula IS NOT NULL "
                                         "ORDER BY id")][::20]  # fmt: skip
    checked = 0
    for f in formulas:
        try:
            theirs = periodictable.formula(f).mass
        except Exception:  # periodictable does not read this formula
            continue
        if any(
            el.symbol in {"Tc", "Pm"} or el.number > 83 for el in periodictable.formula(f).atoms
        ):
            continue  # no standard atomic weight
        assert molar_mass(f) == pytest.approx(theirs, rel=2e-4), f
        checked += 1
    assert checked > 500


# SMILES → formula against RDKit (the field's standard toolkit); the pairs are our own picks of
# every SMILES feature the reader handles: aromatic atoms, [nH], charges, ring closures (%10),
# branches, stereo marks, disconnected parts (salts, hydrates), metals
SMILES = [
    "CCO", "c1ccncc1", "CC(=O)Oc1ccccc1C(=O)O", "C1CCOC1", "[Na+].[Cl-]", "c1cc[nH]c1",
    "O=C([O-])[O-].[K+].[K+]", "C[C@H](N)C(=O)O", "FC(F)(F)c1ccc(Br)cc1",
    "CC(C)(C)OC(=O)N1CCNCC1", "O=S(=O)(O)O", "c1ccc2c(c1)[nH]c1ccccc12", "C1=CC=CC=C1",
    "[NH4+].[Cl-]", "C%10CCCCC%10", "OB(O)c1ccccc1", "CS(C)=O",
    "P(c1ccccc1)(c1ccccc1)c1ccccc1", "[Pd]", "C/C=C/C(=O)OCC",
    "O.O.O.O.O.[Cu+2].[O-]S([O-])(=O)=O",
]  # fmt: skip


@pytest.mark.parametrize("smiles", SMILES)
def test_smiles_formulas_agree_with_rdkit(smiles):
    Chem = pytest.importorskip("rdkit.Chem")
    from rdkit.Chem.rdMolDescriptors import CalcMolFormula

    theirs = re.sub(r"[+-]\d*$", "", CalcMolFormula(Chem.MolFromSmiles(smiles)))  # no charge
    assert hill_formula(formula_from_smiles(smiles)) == hill_formula(theirs)


def test_a_product_named_by_smiles_gets_its_molar_mass(notebook):
    notebook.write(
        "e.md",
        """
        ---
        title: smiles
        product: {name: "CC(=O)Nc1ccc(O)cc1", mass: 1.20 g}
        materials:
          - {name: "Nc1ccc(O)cc1", amount: 10.0 mmol, role: limiting reagent}
          - {name: acetic anhydride, amount: 1.2 mL, role: reagent}
        ---
        """,
    )
    notebook.scan()
    side = notebook.sidecar("e.md")
    # 4-aminophenol C6H7NO 109.13 g/mol; paracetamol C8H9NO2 151.16 g/mol (CRC Handbook)
    assert side["materials"][0]["mass_g"] == pytest.approx(1.0913, abs=1e-3)
    assert side["product"]["formula"] == "C8H9NO2"
    assert side["product"]["molar_mass"] == pytest.approx(151.16, abs=0.01)


def test_names_written_as_formulas():
    assert compounds.look_up("NaNO2").name == "sodium nitrite"
    assert compounds.look_up("KHCO3").name == "potassium bicarbonate"
    assert compounds.look_up("HBr").formula == "BrH"
    assert not looks_like_formula("NBS") and not looks_like_formula("Et3N")
    assert compounds.look_up("C2H6O") is None  # ethanol or dimethyl ether: not one compound


def test_lookup_order_lab_then_curated_then_table_then_smiles():
    lab = LabConfig.model_validate({"densities": {"phenylacetylene": 0.95}})
    assert resolve_builtin("phenylacetylene", lab).density_g_ml == 0.95
    assert resolve_builtin("toluene", LabConfig()).source == BUILTIN_SOURCE
    assert resolve_builtin("phenylacetylene", LabConfig()).source.startswith(compounds.SOURCE)
    smiles = resolve_builtin("C#Cc1ccccc1", LabConfig())
    assert smiles.formula == "C8H6" and "SMILES" in smiles.source


@pytest.mark.parametrize(
    "smiles, name",
    [("CN(C)C=O", "N,N-dimethylformamide"), ("CCN(CC)CC", "triethylamine"),
     ("COCCOC", "1,2-dimethoxyethane"), ("CC(=O)N(C)C", "N,N-dimethylacetamide")],
)  # fmt: skip
def test_a_reagent_named_by_its_pubchem_smiles_gets_the_tables_compound(smiles, name):
    """ORD records often name solvents only by SMILES (PubChem's canonical form: from memory);
    the table's compound gives the density, held to the handbook as by name."""
    assert compounds.look_up(smiles).name == name
    info = resolve_builtin(smiles, LabConfig())  # the curated record where there is one
    assert info.formula == compounds.look_up(name).formula
    assert info.density_g_ml == pytest.approx(HANDBOOK_20C[name], rel=0.01)


def test_a_smiles_of_a_curated_material_gets_the_curated_record():
    info = resolve_builtin("CC1=CC=CC=C1", LabConfig())  # toluene as PubChem writes it
    assert info.source == BUILTIN_SOURCE and info.density_g_ml == pytest.approx(0.8669, rel=2e-3)


def test_salts_do_not_take_their_parents_formula():
    """PubChem's row for a salt or hydrate is often its parent's; the table then keeps the
    handbook's name without a formula rather than a wrong one."""
    assert compounds.look_up("quinine hydrochloride").formula is None
    assert compounds.look_up("tetrabutyl titanate").formula is None
    assert compounds.look_up("magnesium sulfate heptahydrate").formula == "H14MgO11S"


def test_the_committed_table_is_what_the_generator_makes(tmp_path):
    """make_compounds.py, run on the same version of the chemicals library, writes the
    committed file byte for byte (so the table can be rebuilt and reviewed)."""
    chemicals = pytest.importorskip("chemicals")
    if compounds.table_facts()["chemicals"] != chemicals.__version__:
        pytest.skip("the table was made with another version of the chemicals library")
    import importlib.util

    spec = importlib.util.spec_from_file_location("make_compounds",
                                                  compounds.DATA / "make_compounds.py")  # fmt: skip
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    module.build(tmp_path / "t.sqlite")
    ours = hashlib.sha256((tmp_path / "t.sqlite").read_bytes()).hexdigest()
    assert ours == hashlib.sha256(compounds.TABLE.read_bytes()).hexdigest()


def test_names_meet_without_spaces_hyphens_or_british_spelling():
    assert compounds.look_up("ethylacetate").name == "ethyl acetate"
    assert compounds.look_up("methanesulphonyl chloride").name == "methanesulfonyl chloride"
    assert compounds.look_up("aluminium chloride").formula == "AlCl3"
    assert compounds.look_up("trimethyl-phosphite").name == "trimethyl phosphite"


def test_molarity_is_written_many_ways():
    from capture.chem import material_key

    keys = {material_key(n) for n in ("2 mol/L hydrochloric acid", "2 M hydrochloric acid",
                                      "2M aq. hydrochloric acid", "2 M aqueous hydrochloric acid")}  # fmt: skip
    assert keys == {"2 m hydrochloric acid"}
    assert material_key("2N HCl") == material_key("2 N HCl") == "2 n hcl"
    assert resolve_builtin("2 mol/L hydrochloric acid", LabConfig()).name == "2 M HCl"


def test_a_dilute_aqueous_solution_is_weighed_with_waters_density_and_says_so():
    """Up to 2 M, an aqueous solution of an inorganic compound is within about 5-8 % of water's
    density (common practice); its water fraction follows from the molarity."""
    info = resolve_builtin("1 M aqueous lithium hydroxide", LabConfig())
    assert info.category == "aqueous" and info.density_g_ml == 0.9982
    assert "stand-in" in info.density_source and "lithium hydroxide" in info.density_source
    # LiOH 23.95 g/mol (IUPAC atomic weights, by hand): 1 - 23.95 / 998.2 = 0.976
    assert info.water_fraction == pytest.approx(0.976, abs=1e-3)
    assert resolve_builtin("6 M LiOH", LabConfig()) is None  # stronger: its own density needed
    assert resolve_builtin("1 M citric acid", LabConfig()) is None  # organic: not assumed
