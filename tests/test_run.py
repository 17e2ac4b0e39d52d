"""End to end: a notebook folder becomes sidecars, and bad input loses nothing else."""

from __future__ import annotations

import hashlib
import json
import os
import shutil

import pytest

from capture.config import ConfigError
from capture.notebook import Notebook
from capture.scan import scan

from conftest import EXAMPLES, NotebookDir
from helpers import GOOD, entry_md


@pytest.fixture
def examples(tmp_path) -> NotebookDir:
    root = tmp_path / "examples"
    shutil.copytree(
        EXAMPLES, root, ignore=shutil.ignore_patterns("*.waste.json", "*.waste.md", ".masstrail")
    )
    return NotebookDir(root)


def _by_id(report):
    return {r.entry.id: r for r in report.results}


def test_example_notebook_end_to_end(examples):
    hashes = {
        p: hashlib.sha256(p.read_bytes()).hexdigest()
        for p in examples.root.rglob("*")
        if p.is_file()
    }
    report = examples.scan()
    r = _by_id(report)
    assert len(report.results) == 10 and not report.errors

    # FW-0412: every input weighed by hand from the densities in the data file:
    # 1.90 + 1.18 + 2.30 + 1.62 + 40 mL DCM × 1.3266 + 40 mL 1 M HCl × 1.016
    # + 20 mL sat. NaHCO3 × 1.06 + 20 mL brine × 1.198 + 3.0 = 148.864 g
    fw = r["FW-0412"]
    assert fw.totals.inputs_g == pytest.approx(148.864, abs=1e-3)
    assert fw.metrics.e_factor == pytest.approx((148.864 - 2.41) / 2.41, abs=1e-3)
    assert fw.metrics.pmi == pytest.approx(148.864 / 2.41, abs=1e-3)
    assert fw.metrics.e_factor_simple == pytest.approx((7.00 - 2.41) / 2.41, abs=1e-3)
    # the filtration after drying used filter paper that is not recorded: 0.56 g, minor
    assert [(g.kind, g.severity, g.allowance_g) for g in fw.gaps] == [
        ("filter_medium", "minor", 0.5598)
    ]
    assert {m.origin for m in fw.materials} == {"front-matter"}  # the text restates them

    # Suzuki (table + text + balance log): K2CO3 4.1502 g, Pd(PPh3)4 by difference
    # 2.4518 − 2.3361 = 0.1157 g, MgSO4 2.61 g and the product 1.4230 g come from the balance:
    # 1.87 + 1.46 + 4.1502 + 0.1157 + 15 mL EtOH × 0.7893 + 5 mL water × 0.9982 (table)
    # + 20 mL water × 0.9982 + 45 mL EtOAc × 0.9003 + 20 mL brine × 1.198 + 2.61
    # + 12 mL EtOH × 0.7893 (text) = 120.9455 g
    sz = r["group3-suzuki"]
    assert sz.totals.inputs_g == pytest.approx(120.9455, abs=1e-3)
    assert sz.product.mass_g == 1.423 and "group3-balance.tsv line 6" in sz.product.basis
    assert sz.metrics.e_factor == pytest.approx((120.9455 - 1.423) / 1.423, abs=1e-3)
    assert {m.origin for m in sz.materials} == {"table", "text", "balance"}
    pd = next(m for m in sz.materials if m.name == "Pd(PPh3)4")
    assert pd.mass_g == 0.1157 and pd.basis.startswith("weighed by difference: 2.4518 g − 2.3361 g")
    assert [g.kind for g in sz.gaps if g.item == "MgSO4"] == ["unstable_reading"]

    # FW-0419 takes its masses from the balance log (German layout, decimal comma): NaBH4 was
    # typed as 0.5 equiv, the balance says 0.3790 g, and the balance wins
    red = r["FW-0419"]
    nabh4 = next(m for m in red.materials if m.name == "NaBH4")
    assert (nabh4.mass_g, nabh4.origin, nabh4.stated) == (0.379, "balance", "0.5 equiv")
    assert "FW-0419-balance.csv line 6, 2026-11-06T10:44:52" in nabh4.basis
    assert red.product.mass_g == 2.5093
    # the text's "Na2SO4 (4.0 g)" is 5 % below the balance's 4.215 g: named, the balance used
    assert sorted((g.kind, g.item, g.severity) for g in red.gaps) == [
        ("balance_disagrees", "Na2SO4", "minor"), ("unassigned_reading", "weighing boat", "minor")]  # fmt: skip
    assert red.totals.recovered_g == pytest.approx(60 * 0.7405, abs=1e-3)

    # pilot bay: kg and L, 2-MeTHF density overridden by the lab (0.852), 4.8 L recovered
    pilot = r["ARN7-S2-R03"]
    assert pilot.totals.recovered_g == pytest.approx(4.8 * 1000 * 0.852, abs=0.01)
    assert pilot.metrics.e_factor == pytest.approx((15999.8 - 1270 - 4089.6) / 1270, abs=1e-3)

    # prose only (teaching lab, group 5): every amount and the product mass come from the text.
    # 1.36 + 1.1 × 10 mmol × 107.156 g/mol benzylamine + 20 mL MeOH × 0.7914 + 0.42 + 15 mL water
    # × 0.9982 + 60 mL EtOAc × 0.9003 + 20 mL brine × 1.198 + 4 + 50 g SiO2
    # + 600 mL 5% MeOH in DCM (30 mL × 0.7914 + 570 mL × 1.3266) = 945.64 g; product 1.89 g
    ra = r["group5-reductive-amination"]
    assert {m.origin for m in ra.materials} == {"text"}
    assert ra.product.mass_g == 1.89
    assert ra.totals.inputs_g == pytest.approx(945.64, abs=0.01)
    assert ra.metrics.e_factor == pytest.approx((945.64 - 1.89) / 1.89, abs=0.01)
    assert ra.breakdown.by_stage["purification"] == pytest.approx(50 + 23.742 + 756.162, abs=0.01)

    # gaps carry allowances, and the estimated E-factor adds them: the Knoevenagel entry's
    # "2 drops" of piperidine (0.05 mL each) and one 90 mm filter paper (0.56 g)
    kn = r["group7-knoevenagel"]
    assert {(g.kind, g.allowance_g) for g in kn.gaps} == {("unreadable_amount", 0.1),
                                                          ("filter_medium", 0.5598)}  # fmt: skip
    assert kn.metrics.e_factor_estimated == pytest.approx(
        kn.metrics.e_factor + (0.1 + 0.5598) / 1.71, abs=1e-3
    )
    assert 0.97 < kn.metrics.completeness < 1.0

    # reaction metrics from the equation (FW-0425: C7H5NO4 + CH4O -> C8H7NO4 + H2O); the
    # methanol is both reactant and solvent, so the stoichiometric factor is large
    fe = r["FW-0425"]
    ae = 181.1455 / (167.1189 + 32.0419)  # IUPAC weights: ester / (acid + methanol)
    assert fe.metrics.atom_economy == pytest.approx(ae, abs=1e-4)
    assert fe.metrics.yield_ == pytest.approx(7.86 / (50.0 * 181.1455 / 1000), abs=1e-4)
    sf = (8.35 + 50 * 0.7914) / (50.0 / 1000 * (167.1189 + 32.0419))
    assert fe.metrics.stoichiometric_factor == pytest.approx(sf, abs=1e-3)
    assert "MRP (solvents, workup), costs the most" in fe.context["rme_factors"]
    # every entry shows its waste by stream and by solvent rank
    for res in report.results:
        if res.materials:
            assert res.waste is not None and res.waste.streams, res.entry.path
    assert r["FW-0412"].waste.streams["halogenated organic"] > 50  # the DCM
    assert r["ARN7-S3-R01"].waste.streams["metal-bearing"] == pytest.approx(24.0)  # 10% Pd/C

    # no product mass: blocking gap, no figures
    boc = r["FW-0427"]
    assert [g.kind for g in boc.gaps if g.severity == "blocking"] == ["product_mass_missing"]
    assert boc.metrics.e_factor is None and boc.metrics.pmi is None

    # PMI = E + 1 wherever nothing is recovered and water counts (the default)
    for res in report.results:
        if res.metrics.e_factor is not None and not res.recovered:
            assert res.metrics.pmi == pytest.approx(res.metrics.e_factor + 1, abs=2e-4)

    # sidecars next to entries, with the stable keys; the card is switched on in masstrail.toml
    side = examples.sidecar("fenwick-group/FW-0412-amide-coupling.md")
    assert side["format"] == "masstrail-result/1"
    assert set(side["metrics"]) >= {"e_factor", "e_factor_simple", "e_factor_estimated", "pmi",
                                    "atom_economy", "yield", "rme"}  # fmt: skip
    assert set(side["materials"][0]) >= {
        "name",
        "role",
        "category",
        "stated",
        "mass_g",
        "basis",
        "origin",
    }
    assert (examples.root / "fenwick-group/FW-0412-amide-coupling.waste.md").is_file()
    assert not (examples.root / "templates/blank-entry.waste.json").exists()  # ignored in config

    # the chemist's files are never modified
    for p, h in hashes.items():
        assert hashlib.sha256(p.read_bytes()).hexdigest() == h, p

    # a second scan of an unchanged notebook writes nothing
    assert examples.scan().written == []


def test_sidecars_validate_against_the_committed_schema(examples):
    jsonschema = pytest.importorskip("jsonschema")
    from capture.schema import SCHEMA_FILE

    schema = json.loads(SCHEMA_FILE.read_text())
    examples.write("broken.md", "no front matter")
    examples.scan()
    sidecars = list(examples.root.rglob("*.waste.json"))
    assert len(sidecars) == 11
    for path in sidecars:
        jsonschema.validate(json.loads(path.read_text()), schema)


BAD = {
    "invalid-yaml.md": ("---\ntitle: [unclosed\n---\n", "invalid YAML"),
    "no-front-matter.md": ("Just a note.\n", "no front matter"),
    "binary.md": (b"\x89PNG\r\n\x1a\n\x00\x00\x00", "binary"),
    "latin1.md": ("---\ntitle: café\n---\n".encode("latin-1"), "not UTF-8"),
    "alias-bomb.md": ("---\na: &a [x, x]\nb: &b [*a, *a]\nc: [*b, *b]\n---\n", "aliases"),
    "nan.json": ('{"title": "n", "product": {"mass": NaN}}', "NaN"),
    "dupe.json": ('{"title": "a", "title": "b"}', "twice"),
    "not-a-notebook.ipynb": ("[1, 2]", "no list of cells"),
}


def test_bad_input_is_reported_and_nothing_else_is_lost(notebook):
    notebook.write("good.md", GOOD)
    for name, (content, _) in BAD.items():
        notebook.write(f"bad/{name}", content)
    huge = notebook.root / "bad" / "huge.md"
    with huge.open("wb") as fh:  # a sparse 50 MB file
        fh.truncate(50 * 1024 * 1024)
    report = notebook.scan()
    results = {r.entry.path: r for r in report.results}
    assert results["good.md"].status == "ok"
    assert results["good.md"].metrics.e_factor == pytest.approx((2.0 + 10 * 0.8669 - 1.0) / 1.0)
    for name, (_, message) in BAD.items():
        side = notebook.sidecar(f"bad/{name}")
        assert side["status"] == "error", name
        assert message in side["error"]["message"], name
        assert side["metrics"]["e_factor"] is None
    assert "50.0 MB" in notebook.sidecar("bad/huge.md")["error"]["message"]
    assert len(report.errors) == len(BAD) + 1


@pytest.mark.parametrize(
    ("amount", "kind", "message"),
    [
        ("5 blorps", "unreadable_amount", "unknown unit 'blorps'"),
        ("0 g", "unreadable_amount", "greater than zero"),
        ("-2 mL", "unreadable_amount", "negative"),
        ("12", "unreadable_amount", "no unit"),
        ("a few drops", "unreadable_amount", "not an amount"),
    ],
)
def test_bad_amounts_are_gaps_and_the_rest_is_computed(notebook, amount, kind, message):
    notebook.write(
        "e.md",
        entry_md(f"""
        product: {{name: p, mass: 1 g}}
        materials:
          - {{name: A, amount: 3 g}}
          - {{name: B, amount: "{amount}"}}
        """),
    )
    notebook.scan()
    side = notebook.sidecar("e.md")
    assert side["status"] == "ok"
    (gap,) = side["gaps"]
    assert gap["kind"] == kind and gap["severity"] == "major" and message in gap["message"]
    assert side["metrics"]["e_factor"] == 2.0  # from A alone: a lower bound
    assert side["context"]["lower_bound"].startswith("1 input(s) have no mass (B)")


def test_bad_config_key_names_the_key_and_file(notebook):
    notebook.write("masstrail.toml", "[e_factor]\ninclude_watr = false\n")
    with pytest.raises(
        ConfigError, match=r"masstrail.toml: key 'e_factor.include_watr': unknown key"
    ):
        Notebook.open(notebook.root)


def test_a_plugin_crash_is_contained(notebook):
    notebook.write("a.md", GOOD)
    notebook.write("b.md", GOOD)
    nb = Notebook.open(notebook.root)

    class Crashes:
        from capture.hookspecs import hookimpl

        @hookimpl
        def masstrail_find_gaps(self, entry):
            if entry.id == "a":
                raise RuntimeError("boom")
            return []

    nb.pm.register(Crashes(), name="crashes")
    report = scan(nb)
    assert [r.status for r in report.results] == ["error", "ok"]
    assert "boom" in report.results[0].error.message


def test_text_restating_a_structured_amount_is_not_counted_twice(notebook):
    notebook.write(
        "e.md",
        entry_md(
            """
        product: {name: p, mass: 1 g}
        materials:
          - {name: ethanol, amount: 10 mL, role: solvent}
          - {name: brine, amount: 20 mL, role: wash}
        """,
            "Stirred in ethanol (10 mL). Washed with brine (20 mL) and then with "
            "ice-cold ethanol (2 × 5 mL).",
        ),
    )
    notebook.scan()
    side = notebook.sidecar("e.md")
    got = [(m["name"], m["origin"], m["stage"], m["mass_g"]) for m in side["materials"]]
    assert got == [
        ("ethanol", "front-matter", "reaction", 7.893),
        ("brine", "front-matter", "workup", 23.96),
        ("ethanol", "text", "workup", 7.893),  # 2 × 5 mL ice-cold ethanol: a second use
    ]


def test_a_link_out_of_the_notebook_is_refused_not_followed(notebook, tmp_path):
    outside = tmp_path / "elsewhere.md"
    outside.write_text(GOOD)
    (notebook.root / "linked.md").symlink_to(outside)
    notebook.write("good.md", GOOD)
    report = notebook.scan()
    by_path = {r.entry.path: r for r in report.results}
    assert by_path["good.md"].status == "ok"
    assert by_path["linked.md"].status == "error"
    assert "a symbolic link (masstrail does not follow links" in by_path["linked.md"].error.message
    assert outside.read_text() == GOOD


# ---------------------------------------------------------------- prose and structure together
def test_product_mass_from_the_text_when_the_front_matter_has_none(notebook):
    notebook.write(
        "e.md",
        entry_md(
            "product: {name: amide}",
            "The acid (2.00 g) was stirred in DCM (10 mL). Evaporation gave the amide (1.50 g, 88%).",
        ),
    )
    notebook.scan()
    side = notebook.sidecar("e.md")
    assert side["product"]["mass_g"] == 1.5
    assert side["product"]["basis"].startswith("1.50 g as reported in the text")
    assert [m["name"] for m in side["materials"]] == ["acid", "DCM"]  # the product is no input
    assert side["metrics"]["e_factor"] == pytest.approx((2.0 + 10 * 1.3266 - 1.5) / 1.5, abs=1e-4)


def test_conflicting_product_mass_is_a_minor_gap_and_the_front_matter_wins(notebook):
    notebook.write(
        "e.md",
        entry_md(
            "product: {name: amide, mass: 1.45 g}",
            "The acid (2.00 g) was used. Evaporation gave the amide (1.50 g, 88%).",
        ),
    )
    notebook.scan()
    side = notebook.sidecar("e.md")
    assert side["product"]["mass_g"] == 1.45
    (gap,) = [g for g in side["gaps"] if g["kind"] == "conflicting_product_mass"]
    assert gap["severity"] == "minor" and "1.45 g" in gap["message"] and "1.50 g" in gap["message"]


def test_conflicting_amounts_at_one_step_count_once(notebook):
    notebook.write(
        "e.md",
        entry_md(
            """
        product: {name: p, mass: 1 g}
        materials: [{name: THF, amount: 20 mL, role: solvent}]
        """,
            "The ketone (2.0 g) was dissolved in THF (25 mL).",
        ),
    )
    notebook.scan()
    side = notebook.sidecar("e.md")
    thf = [m for m in side["materials"] if m["resolved"] == "tetrahydrofuran"]
    assert [(m["origin"], m["stated"]) for m in thf] == [("front-matter", "20 mL")]
    (gap,) = [g for g in side["gaps"] if g["kind"] == "conflicting_amounts"]
    assert "'20 mL'" in gap["message"] and "'25 mL'" in gap["message"]


def test_what_an_earlier_step_put_out_is_not_a_second_input(notebook):
    """Two steps in one write-up: the first step's output taken up again ("the resultant
    amide (2.10 g)", or by the same name and mass, "the bromide (1.10 g)") is that output
    carried forward, set aside as an intermediate; PMI counts what was added in each step
    once, against 1.40 g of product. An input that only weighs the same as an output, with no
    word taking it up ("toluene (2.10 g)"), or only has its name (fresh ether after ether was
    distilled off), is an input."""
    notebook.write("e.md", entry_md("product: {name: the ester, mass: 1.40 g}", """
        The acid (2.00 g) and thionyl chloride (1.50 g) were heated to give the amide (2.10 g,
        90%). The resultant amide (2.10 g), toluene (2.10 g) and the bromide (1.20 g) were
        heated to give the bromide (1.10 g). Then 2.0 g of ether was distilled off, and the
        bromide (1.10 g), ether (3.0 g) and ethanol (0.90 g) gave the ester (1.40 g).
        """))  # fmt: skip
    notebook.scan()
    side = notebook.sidecar("e.md")
    assert [(m["name"], m["stated"]) for m in side["materials"]] == [
        ("acid", "2.00 g"), ("thionyl chloride", "1.50 g"), ("toluene", "2.10 g"),
        ("bromide", "1.20 g"), ("ether", "3.0 g"), ("ethanol", "0.90 g")]  # fmt: skip
    carried = [m for m in side["set_aside"] if m["role"] == "intermediate"]
    assert [(m["name"], m["stated"]) for m in carried] == [
        ("resultant amide", "2.10 g"), ("ether", "2.0 g"), ("bromide", "1.10 g")]  # fmt: skip
    assert "taken up again" in carried[0]["note"]
    assert side["metrics"]["pmi"] == pytest.approx(
        (2.00 + 1.50 + 2.10 + 1.20 + 3.0 + 0.90) / 1.40, abs=1e-3)  # fmt: skip


def test_the_product_among_the_parts_of_what_came_out_is_the_product(notebook):
    """ "a solid was recovered comprising 1.40 g of the ester and 0.20 g of the amide": the
    ester, named as the entry's product ("the ester"), is the product's mention, so the
    front matter's 1.40 g agrees with the text and no conflict is reported; the amide is a
    part of the output, not an input."""
    notebook.write("e.md", entry_md("product: {name: the ester, mass: 1.40 g}",
                                    "The amide (2.10 g) and ethanol (0.90 g) were heated. About "
                                    "1.6 g of a solid was recovered comprising 1.40 g of the "
                                    "ester and 0.20 g of the amide."))  # fmt: skip
    notebook.scan()
    side = notebook.sidecar("e.md")
    roles = {(m["name"], m["stated"]): m["role"] for m in side["set_aside"]}
    assert roles == {("solid", "1.6 g"): "intermediate", ("ester", "1.40 g"): "product",
                     ("amide", "0.20 g"): "intermediate"}  # fmt: skip
    assert [g["kind"] for g in side["gaps"]] == []
    assert side["metrics"]["pmi"] == pytest.approx(3.00 / 1.40, abs=1e-3)


def test_what_is_purified_on_a_cartridge_belongs_to_the_purification(notebook):
    """ "purified on a Teledyne Isco instrument with a 24 g cartridge (SiO2) and 20% EtOAc in
    heptane (350 mL)": the cartridge's silica and the eluent are the purification's, so the
    silica the front matter records is counted once, and the eluent is recorded."""
    notebook.write("e.md", entry_md(
        "product: {name: p, mass: 0.50 g}\n"
        "materials: [{name: silica gel, amount: 24 g, role: purification}]",
        "The acid (2.00 g) was stirred for 1 h. The crude ester was purified on a Teledyne Isco "
        "instrument with a 24 g cartridge (SiO2) and 20% EtOAc in heptane (350 mL)."))  # fmt: skip
    notebook.scan()
    side = notebook.sidecar("e.md")
    stages = [(m["name"], m["stage"]) for m in side["materials"]]
    assert stages == [("silica gel", "purification"), ("acid", "reaction"),
                      ("EtOAc", "purification"), ("heptane", "purification")]  # fmt: skip
    assert side["gaps"] == []


def test_solutions_and_mixtures_are_weighed_with_their_basis(notebook):
    notebook.write(
        "e.md",
        entry_md(
            "product: {name: p, mass: 1 g}",
            """
        3-Bromoanisole (1.87 g, 10.0 mmol) in THF (20 mL) was treated with i-PrMgCl
        (2.0 M in 2-MeTHF, 5.5 mL, 11 mmol). The residue was purified by flash
        chromatography (SiO2, 40 g; 20% acetone in heptane, 500 mL).
        """,
        ),
    )
    notebook.scan()
    mats = {m["name"]: m for m in notebook.sidecar("e.md")["materials"]}
    # i-PrMgCl solution: no density of its own in the data → the solvent's (2-MeTHF, 0.854)
    grignard = mats["i-PrMgCl"]
    assert grignard["mass_g"] == pytest.approx(5.5 * 0.854, abs=1e-4)
    assert "density of the solvent, 2-methyltetrahydrofuran" in grignard["basis"]
    assert grignard["moles_mmol"] == 11.0
    # 20% acetone in heptane (500 mL): 100 mL acetone × 0.7899 + 400 mL heptane × 0.684
    assert mats["acetone"]["mass_g"] == pytest.approx(100 * 0.7899, abs=1e-3)
    assert mats["heptane"]["mass_g"] == pytest.approx(400 * 0.684, abs=1e-3)
    assert "ideal mixing assumed" in mats["heptane"]["basis"]
    assert mats["SiO2"]["stage"] == "purification" and mats["SiO2"]["mass_g"] == 40


def test_equivalents_in_prose_use_the_first_substrate_in_mmol(notebook):
    notebook.write(
        "e.md",
        entry_md(
            "product: {name: p, mass: 1 g}",
            """
        The amine (10.0 mmol) in DCM (20 mL) was treated with Et3N (1.5 equiv).
        """,
        ),
    )
    notebook.scan()
    mats = {m["name"]: m for m in notebook.sidecar("e.md")["materials"]}
    # 1.5 × 10.0 mmol × 101.19 g/mol (triethylamine, IUPAC weights)
    assert mats["Et3N"]["mass_g"] == pytest.approx(1.5 * 10 * 101.193 / 1000, rel=1e-4)
    assert "(amine, limiting)" in mats["Et3N"]["basis"]


def test_a_known_commercial_solution_uses_its_own_density(notebook):
    notebook.write(
        "e.md",
        entry_md(
            "product: {name: p, mass: 1 g}", "n-BuLi (2.5 M in hexanes, 8.8 mL, 22 mmol) was added."
        ),
    )
    notebook.scan()
    (line,) = notebook.sidecar("e.md")["materials"]
    # 0.693 g/mL: supplier value for 2.5 M n-BuLi in hexanes (FIELD.md, from memory)
    assert line["mass_g"] == pytest.approx(8.8 * 0.693, abs=1e-4)
    assert "n-BuLi 2.5 M in hexanes" in line["basis"] and line["moles_mmol"] == 22.0


def test_each_gap_of_a_card_is_its_own_line(notebook):
    """The card (NAME.waste.md) lists one gap per Markdown list item, whether or not the gap
    has an allowance; a material without an amount says so in its basis cell; an error card
    ends its message before the caution."""
    notebook.write("masstrail.toml", "[output]\ncard = true\n")
    notebook.write(
        "e.md",
        """
        ---
        title: two gaps
        product: {name: p, mass: 1.00 g}
        materials: [{name: A, amount: 3.00 g}, {name: B}]
        ---
        The solid was collected on a filter paper and dried over MgSO4.
        """,
    )
    notebook.write("bad.md", "---\ntitle: [unclosed\n---\n")
    notebook.scan()
    card = (notebook.root / "e.waste.md").read_text()
    items = [line for line in card.splitlines() if line.startswith("- **")]
    assert len(items) == len(notebook.sidecar("e.md")["gaps"]) >= 2
    assert all(line.count("- **") == 1 for line in items)
    assert "| B | — | — | no amount recorded |" in card.splitlines()  # not an empty cell
    bad = (notebook.root / "bad.waste.md").read_text()
    assert "**This entry could not be read:**" in bad
    message_line = next(line for line in bad.splitlines() if "could not be read" in line)
    assert "_These figures" not in message_line


def test_a_scan_with_fifos_and_a_null_byte_in_a_log_path_completes(notebook):
    """A FIFO as an entry, as a balance log or in the sidecar's place never blocks a scan (a
    real process, with a timeout); a NUL byte in a balance_log path is a gap naming it."""
    import subprocess
    import sys

    os.mkfifo(notebook.root / "pipe.md")
    os.mkfifo(notebook.root / "bal.csv")
    notebook.write("a.md", GOOD.replace("title: good", "title: a\nbalance_log: bal.csv"))
    notebook.write("b.md", GOOD.replace("title: good", 'title: b\nbalance_log: "x\\0y.csv"'))
    notebook.write("c.md", GOOD)
    os.mkfifo(notebook.root / "c.waste.json")  # someone's FIFO where c's sidecar goes
    done = subprocess.run([sys.executable, "-c", "from capture.cli import main; main()", "scan",
                           "--json", str(notebook.root)], capture_output=True, text=True,
                          timeout=60)  # fmt: skip
    rows = {json.loads(line)["entry"]: json.loads(line) for line in done.stdout.splitlines()}
    assert rows["pipe.md"]["status"] == "error" and rows["c.md"]["status"] == "ok"
    a, b = notebook.sidecar("a.md"), notebook.sidecar("b.md")
    assert any("a FIFO" in g["message"] for g in a["gaps"] if g["kind"] == "balance_log_unreadable")
    assert any("NUL" in g["message"] for g in b["gaps"] if g["item"].startswith("x"))


def test_a_file_name_that_is_not_utf8_is_left_out_and_named(notebook, tmp_path):
    """A name with a byte that is not UTF-8 cannot be named in a result: the file (or folder)
    is left out with a message naming it escaped; every other entry is processed, the store is
    complete, and report and export work (real processes)."""
    import sqlite3
    import subprocess
    import sys

    for i in range(3):
        notebook.write(f"e{i}.md", GOOD.replace("title: good", f"title: e{i}\nid: E{i}"))
    root = os.fsencode(notebook.root)
    with open(root + b"/bad\xff name.md", "wb") as fh:
        fh.write(GOOD.encode())
    os.mkdir(root + b"/dir\xfe")
    with open(root + b"/dir\xfe/inside.md", "wb") as fh:
        fh.write(GOOD.encode())
    cli = [sys.executable, "-c", "from capture.cli import main; main()"]
    done = subprocess.run([*cli, "scan", str(notebook.root)], capture_output=True, text=True,
                          timeout=120)  # fmt: skip
    assert done.returncode == 0, done.stderr
    assert "2 file(s) left out because their names are not UTF-8" in done.stderr
    assert "bad\\xff name.md" in done.stderr and "dir\\xfe/" in done.stderr
    db = sqlite3.connect(notebook.root / ".masstrail" / "records.db")
    assert db.execute("SELECT count(*) FROM entries").fetchone()[0] == 3
    for args in (["report", str(notebook.root), "-o", str(tmp_path / "r.html")],
                 ["export", str(notebook.root), "--format", "json"]):  # fmt: skip
        done = subprocess.run([*cli, *args], capture_output=True, text=True, timeout=120)
        assert done.returncode == 0, done.stderr


def test_the_work_and_output_per_entry_are_bounded(notebook):
    """Too much text, too many materials, readings or gaps: what is over the lab's limits is
    one gap saying so, never a silent loss and never unbounded work or output."""
    notebook.write("masstrail.toml", "[scan]\nmax_text_kb = 2\nmax_materials = 40\n"
                                     "max_readings = 20\nmax_gaps = 10\n")  # fmt: skip
    body = "".join(f"Then reagent {i} ({i % 9 + 1}.5 g) was added. " for i in range(200))
    notebook.write("text.md", "---\ntitle: t\nproduct: {name: p, mass: 1 g}\n---\n" + body)
    listed = "".join(f"  - {{name: M{i}, amount: 1 g}}\n" for i in range(41))
    notebook.write("list.yaml", "title: l\nproduct: {name: p, mass: 1 g}\nmaterials:\n" + listed)
    log = "Label,Net,Unit\n" + "".join(f"r{i},1.{i:03d},g\n" for i in range(30))
    notebook.write("logs/bal.csv", log)
    notebook.write("log.md", "---\ntitle: g\nbalance_log: logs/bal.csv\nproduct: {name: p, mass: 1 g}\n"
                             "materials: [{name: A, amount: 2 g}]\n---\n")  # fmt: skip
    notebook.scan()
    text = notebook.sidecar("text.md")
    cut = next(g for g in text["gaps"] if g["kind"] == "text_not_read")
    assert "masstrail read the first" in cut["message"] and cut["severity"] == "major"
    assert len(text["materials"]) <= 40 and len(text["gaps"]) <= 10
    assert text["gaps"][-1]["kind"] == "more_gaps" or len(text["gaps"]) < 10
    listed = notebook.sidecar("list.yaml")
    assert listed["status"] == "error" and "more than 40 materials" in listed["error"]["message"]
    log = notebook.sidecar("log.md")
    assert len(log["readings"]) == 20
    gap = next(g for g in log["gaps"] if g["kind"] == "readings_not_read")
    assert "those of logs/bal.csv after its first 20 were not read" in gap["message"]
    more = next(g for g in log["gaps"] if g["kind"] == "more_gaps")
    assert len(log["gaps"]) == 10 and more["item"].endswith("more gaps")


def test_a_scan_removes_the_results_of_entries_that_are_gone_and_only_its_own(notebook):
    notebook.write("masstrail.toml", "[output]\ncard = true\n")
    notebook.write("a.md", GOOD)
    gone = notebook.write("sub/b.md", GOOD)
    notebook.scan()
    assert (notebook.root / "sub/b.waste.json").exists() and (
        notebook.root / "sub/b.waste.md"
    ).exists()
    gone.unlink()  # deleted while no watcher ran
    foreign = notebook.write("c.waste.json", '{"made by": "another tool"}')
    mine = notebook.write("d.waste.md", "# Notes on the waste drum\n")
    notebook.scan()
    assert not (notebook.root / "sub/b.waste.json").exists()
    assert not (notebook.root / "sub/b.waste.md").exists()
    assert foreign.exists() and mine.exists()  # not masstrail's: left alone
    assert (notebook.root / "a.waste.json").exists()


def test_html_in_an_entry_is_text_in_its_card_and_the_audit_handout(notebook, tmp_path):
    """A title or material name holding HTML is written as text (entities) in the Markdown
    outputs, as the HTML report already escapes it: a Markdown viewer shows, not runs, it."""
    from click.testing import CliRunner

    from capture.cli import cli

    notebook.write("masstrail.toml", "[output]\ncard = true\n")
    notebook.write(
        "e.md",
        """
        ---
        title: "<script>alert(1)</script>"
        group: Alder
        product: {name: p, mass: 1.00 g}
        materials: [{name: "<img src=x onerror=alert(2)>", amount: 2.00 g}, {name: B}]
        ---
        """,
    )
    notebook.scan()
    card = (notebook.root / "e.waste.md").read_text()
    assert "<script>" not in card and "<img" not in card
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in card and "&lt;img src=x" in card
    handout = tmp_path / "audit.md"
    res = CliRunner().invoke(cli, ["audit", str(notebook.root), "--group", "Alder", "--markdown",
                                   str(handout)])  # fmt: skip
    assert res.exit_code == 0, res.output
    text = handout.read_text()
    assert "<script>" not in text and "&lt;script&gt;" in text


def test_the_figures_count_every_gap_though_the_sidecar_lists_only_max_gaps(notebook):
    """Twelve inputs listed with no amount: with ``max_gaps = 4`` the sidecar lists three and
    sums the other nine in one gap, yet completeness and the estimated E-factor are the same
    as with every gap listed. The summing gap leaves out allowances that are not in the
    estimate (a gas flow's, say) and keeps saying that the gaps stand for missing mass."""
    from capture.models import Gap
    from capture.run import _bound_gaps

    listed = "".join(f"  - {{name: R{i}}}\n" for i in range(12))
    entry = ("---\ntitle: many\nproduct: {name: p, mass: 1 g}\nmaterials:\n"
             "  - {name: A, amount: 2 g}\n" + listed + "---\n")  # fmt: skip
    notebook.write("e.md", entry)
    notebook.write("elsewhere.md", entry + "Made following general procedure B.\n")
    notebook.scan()
    every, elsewhere = notebook.sidecar("e.md"), notebook.sidecar("elsewhere.md")
    notebook.write("masstrail.toml", "[scan]\nmax_gaps = 4\n")  # a new config: computed again
    notebook.scan()
    few = notebook.sidecar("e.md")
    assert len(every["gaps"]) == 12 and len(few["gaps"]) == 4
    assert few["gaps"][-1]["kind"] == "more_gaps" and few["gaps"][-1]["missing_mass"]
    assert few["metrics"] == every["metrics"]
    assert every["metrics"]["completeness"] == pytest.approx(2 / (2 + 12 * 2), abs=1e-4)
    # a procedure written elsewhere cannot be sized: no completeness, though its gap is summed
    few = notebook.sidecar("elsewhere.md")
    assert "procedure_elsewhere" in few["gaps"][-1]["evidence"]
    assert few["metrics"] == elsewhere["metrics"] and few["metrics"]["completeness"] is None
    gas = Gap(kind="g", item="N2", severity="minor", message="m", allowance_g=5.0,
              in_estimate=False)  # fmt: skip
    drying = Gap(kind="d", item="MgSO4", severity="minor", message="m", allowance_g=1.0)
    assert _bound_gaps([drying, drying, gas, drying], 2)[-1].allowance_g == 2.0


def test_an_academic_style_entry_is_weighed_whole(notebook):
    """A write-up as academic supporting information words it: the solvent by its
    concentration, a reagent in equivalents, a catalyst in mol%, the product as 'Yield: …'.
    Each is weighed (none was: no PMI, a catalyst missing, an unread '5 mol'), the PMI is
    the inputs over the product, and no quantity is left unread."""
    notebook.write(
        "e.md",
        """
        ---
        title: reduction, as a paper writes it
        product: {name: alcohol}
        ---
        The ketone (500 mg, 2.50 mmol) was dissolved in dry THF (0.2 M); NaBH4 (1.5 equiv)
        and CeCl3 (10 mol%) were added at 0 °C. Yield: 82% (415 mg).
        """,
    )
    notebook.scan()
    car = notebook.sidecar("e.md")
    got = {m["name"]: m["mass_g"] for m in car["materials"]}
    # 12.5 mL THF × 0.889 g/mL; 3.75 mmol NaBH4 × 37.83 g/mol; 0.25 mmol CeCl3 × 246.47
    # g/mol (IUPAC 2021 weights: Ce 140.116, Cl 35.45; B 10.81, Na 22.990, H 1.008)
    assert got["THF"] == pytest.approx(12.5 * 0.889, rel=1e-4)
    assert got["NaBH4"] == pytest.approx(3.75 * 37.83 / 1000, rel=1e-3)
    assert got["CeCl3"] == pytest.approx(0.25 * 246.47 / 1000, rel=1e-3)
    assert car["product"]["mass_g"] == 0.415
    assert car["metrics"]["pmi"] == pytest.approx(sum(got.values()) / 0.415, rel=1e-3)
    assert not [g for g in car["gaps"] if g["kind"] == "unread_amount"]


@pytest.mark.parametrize("tail", [
    "Concentration of the mother liquor gave a second crop (0.35 g).",
    "A second crop of crystals (0.35 g) was obtained from the mother liquor, giving a total of "
    "2.27 g. The reaction was repeated on a larger scale (5.0 g of aniline).",
])  # fmt: skip
def test_a_second_crop_adds_to_the_product(notebook, tail):
    """'… to give acetanilide (1.92 g). … a second crop (0.35 g)': the product is 2.27 g (it
    was 0.35 g: the last mention alone, confidently wrong), whether the text adds them up or
    masstrail does; no 'isolated several times' gap; a larger run's size ('on a larger scale
    (5.0 g of aniline)') is a condition, not an input (it was 5.0 g of 'larger scale')."""
    notebook.write("e.md", entry_md("product: {name: acetanilide}",
                                    "Aniline (2.00 g) in water (20 mL) was treated with acetic "
                                    "anhydride (2.5 mL). The solid was recrystallised from hot "
                                    f"water (30 mL) to give acetanilide (1.92 g). {tail}"))  # fmt: skip
    notebook.scan()
    car = notebook.sidecar("e.md")
    assert car["product"]["mass_g"] == pytest.approx(2.27)
    assert not [g for g in car["gaps"] if g["kind"] == "several_product_masses"]
    assert sorted(m["name"] for m in car["materials"]) == ["Aniline", "acetic anhydride",
                                                          "water", "water"]  # fmt: skip
