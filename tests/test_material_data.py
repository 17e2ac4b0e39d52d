"""The built-in material data, checked against references outside the project."""

from __future__ import annotations

import re
import warnings

import pytest

from capture.chem import material_key, molar_mass
from capture.config import ExtraMaterial, LabConfig
from masstrail_plugins.resolve.knowledge import builtin_data
from masstrail_plugins.resolve.materials import resolve_builtin, resolve_from_lab

DATA = builtin_data()


def test_at_least_80_materials_with_categories():
    assert len(DATA.records) >= 80
    allowed = {"solvent", "water", "aqueous", "drying agent", "sorbent", "filter aid",
               "filter medium", "reagent", "catalyst"}  # fmt: skip
    assert {r["category"] for r in DATA.records} <= allowed
    for cat in ("solvent", "aqueous", "drying agent", "sorbent", "filter aid", "catalyst"):
        assert any(r["category"] == cat for r in DATA.records), cat


def test_every_number_names_its_source():
    for rec in DATA.records:
        if "density" in rec:
            assert rec.get("density_source") in DATA.sources, rec["name"]
            assert "density_temp_c" in rec, rec["name"]
        if "water_fraction" in rec:
            assert rec.get("water_fraction_source") in DATA.sources, rec["name"]
    for text in DATA.sources.values():
        # a named handbook, paper or supplier, or the words "from memory"/"derived"
        assert re.search(r"CRC|Handbook|memory|derived|tables", text), text


def test_halogenated_flag_matches_the_formula_for_solvents():
    for rec in DATA.records:
        f = rec.get("formula")
        if rec["category"] != "solvent" or not f:
            continue
        has_halogen = bool(re.search(r"F(?![e])|Cl|Br|I", f)) and "C" in f
        assert bool(rec.get("halogenated")) == has_halogen, rec["name"]


@pytest.mark.parametrize(
    ("name", "expected"),
    [
        ("EtOAc", "ethyl acetate"),
        ("ethyl acetate", "ethyl acetate"),
        ("  Ethyl   Acetate ", "ethyl acetate"),
        ("sat. aq. NaHCO3", "saturated aqueous NaHCO3"),
        ("saturated NaHCO3", "saturated aqueous NaHCO3"),
        ("anhydrous MgSO4", "magnesium sulfate"),
        ("ice-cold water", "water"),
        ("DCM", "dichloromethane"),
        ("Hünig's base", "N,N-diisopropylethylamine"),
        ("Pd(dppf)Cl2", "[1,1'-bis(diphenylphosphino)ferrocene]dichloropalladium(II)"),
        ("2-MeTHF", "2-methyltetrahydrofuran"),
        # the supported catalyst, not the metal (common practice)
        ("10% palladium on carbon", "palladium on carbon 10%"),
        ("palladium on activated charcoal", "palladium on carbon 10%"),
        ("10% Pd—C", "palladium on carbon 10%"),  # an em dash typed for the hyphen
        ("Pd/C 10%", "palladium on carbon 10%"),
    ],
)
def test_names_and_synonyms_resolve(name, expected):
    info = resolve_builtin(name, LabConfig())
    assert info is not None and info.name == expected


def test_conc_is_concentrated_and_a_short_form_in_brackets_is_passed_over():
    """ "conc. sulfuric acid" is the curated concentrated acid; "N,N-diisopropylethylamine
    (DIPEA)" is the name before its short form. The short form alone is never looked up: TMSI
    is iodotrimethylsilane to one chemist and N-trimethylsilylimidazole to another (both
    common abbreviations: common practice), so a name the data lacks stays unknown."""
    assert resolve_builtin("conc. sulfuric acid", LabConfig()).name == "sulfuric acid 96%"
    assert (
        resolve_builtin("conc HCl", LabConfig()).name
        == resolve_builtin("conc. HCl", LabConfig()).name
    )
    info = resolve_builtin("N,N-diisopropylethylamine (DIPEA)", LabConfig())
    # 0.742 g/mL at 25 °C: the curated supplier value in materials.toml (from memory, to verify)
    assert info.name == "N,N-diisopropylethylamine" and info.density_g_ml == 0.742
    assert resolve_builtin("Kestrel reagent (TMSI)", LabConfig()) is None


def test_a_lab_material_written_with_its_short_form_is_weighed(notebook):
    """Any resolver answers for the name before the short form: the lab's own material here
    (through the lines plugin, which asks every resolver again with that name)."""
    notebook.write("masstrail.toml", '[[materials]]\nname = "Kestrel wash blend"\n'
                                     'density_g_ml = 0.95\nsource = "QC sheet 7"\n')  # fmt: skip
    notebook.write("e.md", "---\nproduct: {name: p, mass: 0.5 g}\n---\nThe ester (2.00 g) "
                           "was washed with Kestrel wash blend (KWB) (10 mL).\n")  # fmt: skip
    (result,) = notebook.scan().results
    line = next(m for m in result.materials if m.name.startswith("Kestrel"))
    assert line.resolved == "Kestrel wash blend" and line.mass_g == pytest.approx(9.5)


def test_unknown_name_resolves_to_nothing():
    assert resolve_builtin("Kestrel wash blend", LabConfig()) is None


def test_lab_materials_and_density_overrides_win():
    cfg = LabConfig(
        densities={"EtOAc": 0.902},
        materials=[
            ExtraMaterial(name="Kestrel wash blend", density_g_ml=0.95, source="QC sheet 7")
        ],
    )
    assert resolve_builtin("ethyl acetate", cfg).density_g_ml == 0.902
    assert "masstrail.toml" in resolve_builtin("ethyl acetate", cfg).density_source
    info = resolve_from_lab("kestrel wash blend", cfg)
    assert info.density_g_ml == 0.95 and "QC sheet 7" in info.source


def test_chemicals_fallback_needs_a_real_name():
    pytest.importorskip("chemicals")
    from masstrail_plugins.resolve.names import resolve_with_chemicals

    assert resolve_with_chemicals("3", LabConfig()) is None
    info = resolve_with_chemicals("3-iodotoluene", LabConfig())
    assert info.formula == "C7H7I"
    # molar mass recomputed with IUPAC weights; published 218.04 g/mol (common practice)
    assert info.molar_mass == pytest.approx(218.035, abs=0.01)


def test_a_name_the_library_reads_as_a_formula_is_not_taken_for_another_compound():
    """The chemicals library answers some names it does not know by reading them as a
    formula: both of these names (from real patents) come back as the nitride ion, N³⁻, whose
    molar mass would weigh them. masstrail keeps an answer only when the name is one of its
    names, its SMILES or its formula; these stay unknown (an honest gap). Names and formulas
    it does know are still answered, in any spelling the library lists."""
    pytest.importorskip("chemicals")
    from chemicals.identifiers import search_chemical

    from masstrail_plugins.resolve.names import resolve_with_chemicals

    for name in ("N-methyl-4-piperidone hydrochloride", "N-benzoyl-(2-furylcarbonyl)methylamine"):
        assert search_chemical(name).formula == "N-3"  # the library's answer, refused
        assert resolve_with_chemicals(name, LabConfig()) is None
    # a step's label read without its space, and a fragment of a name taken for a radical
    assert search_chemical("Step A").common_name == "thiotepa"
    assert search_chemical("tert-butyl").common_name == "tert-butyl radical"
    assert resolve_with_chemicals("Step A", LabConfig()) is None
    assert resolve_with_chemicals("tert-butyl", LabConfig()) is None
    spaced = resolve_with_chemicals("1-(3-methoxy phenyl)piperazine", LabConfig())
    assert spaced.formula == "C11H16N2O"  # a stray space in a long name still finds it
    assert resolve_with_chemicals("malononitrile", LabConfig()).formula == "C3H2N2"
    assert resolve_with_chemicals("Na2SO3", LabConfig()).formula == "Na2O3S"
    assert resolve_with_chemicals("ethyl ethanoate", LabConfig()).name == "ethyl acetate"
    # the library's "common name" of this one is its CAS number: its IUPAC name is shown
    named = resolve_with_chemicals("3,4-dimethoxybenzyl cyanide", LabConfig()).name
    assert named == "2-(3,4-dimethoxyphenyl)ethanenitrile"


# ---------------------------------------------------------------- outside references
# Source: IUPAC standard atomic weights as implemented by the `periodictable` library
# (a second, independent implementation), and published molar masses.
@pytest.mark.parametrize(
    ("formula", "published"),
    [
        ("H2O", 18.015),  # IUPAC; CRC Handbook
        ("C13H18O2", 206.28),  # ibuprofen, Cann & Connelly (ACS 2000), FIELD.md
        ("C10H14", 134.22),  # isobutylbenzene, same source
        ("C4H6O3", 102.09),  # acetic anhydride, same source
        ("CH2Cl2", 84.93),  # dichloromethane, CRC Handbook
        ("MgSO4", 120.37),  # CRC Handbook
    ],
)
def test_molar_masses_against_published_values(formula, published):
    assert molar_mass(formula) == pytest.approx(published, abs=0.01)


def test_molar_masses_against_periodictable():
    periodictable = pytest.importorskip("periodictable")
    for rec in DATA.records:
        f = rec.get("formula")
        if not f:
            continue
        ours = molar_mass(f)
        theirs = periodictable.formula(f.replace(".", "+")).mass
        assert ours == pytest.approx(theirs, rel=2e-4), rec["name"]


# Densities at 20 °C against the `thermo` library (DIPPR/Perry correlations), within 1 %.
# Where thermo's correlation is known to disagree with the handbook value we keep the
# handbook/supplier value and say so here, rather than drop the check silently:
THERMO_DISAGREES = {
    "2-methyltetrahydrofuran": "thermo gives 0.919; supplier data 0.854",
    "1,2-dimethoxyethane": "thermo gives 0.840; CRC 0.869",
    "isopropyl acetate": "thermo gives 0.853; CRC 0.872",
    "cyclopentyl methyl ether": "thermo gives 0.887; supplier data 0.86",
    "N-methyl-2-pyrrolidone": "thermo gives 0.989; CRC 1.033",
    "N,N-dimethylacetamide": "thermo gives 0.928; CRC 0.937 at 25 °C, ≈ 0.941 at 20 °C",
}
THERMO_NAMES = {
    "n-heptane": "heptane",
    "n-hexane": "hexane",
    "n-pentane": "pentane",
    "2-butanone": "methyl ethyl ketone",
    "4-methyl-2-pentanone": "methyl isobutyl ketone",
}


def _thermo_density(name: str, t_c: float) -> float | None:
    thermo = pytest.importorskip("thermo")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            c = thermo.Chemical(THERMO_NAMES.get(name, name), T=273.15 + t_c)
        except Exception:
            return None
    return None if c.rhol is None else c.rhol / 1000


SOLVENTS = [
    r
    for r in DATA.records
    if r["category"] in {"solvent", "water"}
    and r.get("formula")
    and r["name"] not in {"xylenes", "hexanes"}
]


@pytest.mark.parametrize("rec", SOLVENTS, ids=[r["name"] for r in SOLVENTS])
def test_solvent_densities_against_thermo(rec):
    ref = _thermo_density(rec["name"], rec["density_temp_c"])
    if rec["name"] in THERMO_DISAGREES:
        assert ref is None or abs(ref / rec["density"] - 1) > 0.01, "disagreement resolved?"
        return
    assert ref is not None, f"thermo does not know {rec['name']}"
    assert rec["density"] == pytest.approx(ref, rel=0.01)


# Handbook values quoted in FIELD.md (CRC Handbook / Riddick–Bunger–Sakano, 20 °C).
HANDBOOK = {
    "water": 0.9982, "methanol": 0.7914, "ethanol": 0.7893, "ethyl acetate": 0.9003,
    "toluene": 0.8669, "dichloromethane": 1.3266, "N,N-dimethylformamide": 0.9487,
    "dimethyl sulfoxide": 1.1010, "tetrahydrofuran": 0.889, "acetonitrile": 0.7857,
    "brine": 1.198,
}  # fmt: skip


@pytest.mark.parametrize(("name", "value"), HANDBOOK.items())
def test_densities_match_the_handbook_table(name, value):
    assert resolve_builtin(name, LabConfig()).density_g_ml == value


def test_name_folding_is_stable():
    assert material_key("Sat. Aq. NH4Cl") == material_key("saturated NH4Cl")
    assert material_key("EDC·HCl") == material_key("EDC.HCl")


def test_name_lookups_are_kept_between_runs(tmp_path, monkeypatch):
    """The chemicals library's name table loads whole (seconds, ~200 MB); its answers are
    kept in a per-user cache so a later run with the same names never loads it."""
    pytest.importorskip("chemicals")
    import masstrail_plugins.resolve.names as M

    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path))
    monkeypatch.setattr(M, "_name_cache", M._NameCache())
    asked = []
    real = M._ask_chemicals
    monkeypatch.setattr(M, "_ask_chemicals", lambda n: asked.append(n) or real(n))
    first = M._chemicals_lookup("malononitrile")
    assert M._chemicals_lookup("malononitrile") == first
    assert M._chemicals_lookup("no such compound xyz") is None
    monkeypatch.setattr(M, "_name_cache", M._NameCache())  # a new run
    assert M._chemicals_lookup("malononitrile") == first
    assert M._chemicals_lookup("no such compound xyz") is None
    # malononitrile, CH2(CN)2: C3H2N2, 66.06 g/mol (common practice; molar mass from IUPAC weights)
    assert first[1] == "C3H2N2" and first[2] == pytest.approx(66.06, abs=0.01)
    assert asked == ["malononitrile", "no such compound xyz"]
    (cache,) = (tmp_path / "masstrail").glob("names-*.json")
    cache.write_text("{damaged")  # a damaged cache is ignored and rewritten
    monkeypatch.setattr(M, "_name_cache", M._NameCache())
    assert M._chemicals_lookup("malononitrile") == first and len(asked) == 3
    assert "malononitrile" in cache.read_text()
