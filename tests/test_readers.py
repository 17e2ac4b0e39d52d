"""The built-in readers: Markdown front matter, YAML, JSON, Jupyter notebooks, tables."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from capture.config import LabConfig
from capture.safeio import InputError
from masstrail_plugins.read.entries import (
    read_json,
    read_markdown,
    read_notebook,
    read_tables,
    read_yaml,
)

from helpers import entry_md


def _md(text: str, name: str = "e.md"):
    return read_markdown(
        path=Path(name), data=text.encode(), relpath=f"g/{name}", config=LabConfig()
    )


def test_markdown_front_matter_and_defaults():
    e = _md(
        entry_md(
            """
        title: Test
        date: 2026-11-03
        product: {name: amide, mass: 2.41 g}
        balance_log: logs/a.csv
        materials:
          - {name: DCM, amount: 40 mL, role: solvent}
        lab_notebook_page: 17
        """,
            "Body text.",
        )
    )
    assert e.id == "e" and e.path == "g/e.md" and e.format == "markdown"
    assert e.date.isoformat() == "2026-11-03"
    assert e.product.mass == "2.41 g"
    assert e.balance_log == ["logs/a.csv"]
    assert e.materials[0].name == "DCM" and e.materials[0].amount == "40 mL"
    assert e.extra == {"lab_notebook_page": "17"}  # unknown keys kept, typed as text
    assert e.body.strip() == "Body text."
    assert len(e.sha256) == 64


def test_yaml_guesses_do_not_leak_into_entries():
    e = _md(entry_md("title: NO\nauthor: on\nproject: 0755\ngroup: 1:20"))
    assert (e.title, e.author, e.project, e.group) == ("NO", "on", "0755", "1:20")


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("just prose, no front matter", "no front matter"),
        ("---\ntitle: x\n", "not closed"),
        ("---\n- a\n- b\n---\n", "must be a mapping"),
        ("---\ndate: 31/02/2026\n---\n", "key 'date'"),
        (
            "---\nmaterials:\n  - {name: 3,4-difluoronitrobenzene, amount: 1 g}\n---\n",
            "must be quoted",
        ),
        ("---\ntitle: a\ntitle: b\n---\n", "appears twice"),
    ],
)
def test_markdown_errors_are_clear(text, message):
    with pytest.raises(InputError, match=message):
        _md(text)


def test_yaml_error_line_counts_from_the_file_start():
    with pytest.raises(InputError) as err:
        _md("---\ntitle: ok\nmaterials: [unclosed\n---\n")
    assert err.value.location in {"line 3", "line 4"}


def test_yaml_entry_reads_procedure():
    text = "title: Y\nproduct: {name: p, mass: 1 g}\nprocedure: |\n  Washed with brine (10 mL).\n"
    e = read_yaml(path=Path("y.yaml"), data=text.encode(), relpath="y.yaml", config=LabConfig())
    assert e.format == "yaml" and "brine (10 mL)" in e.body


def test_json_numbers_are_text_and_the_unit_is_demanded_later():
    data = json.dumps({"title": "J", "materials": [{"name": "DCM", "amount": 40}]}).encode()
    e = read_json(path=Path("j.json"), data=data, relpath="j.json", config=LabConfig())
    assert e.materials[0].amount == "40"


def test_notebook_front_matter_in_first_markdown_cell():
    nb = {
        "cells": [
            {"cell_type": "code", "source": ["x = 1\n"]},
            {"cell_type": "markdown", "source": ["---\n", "title: N\n", "---\n", "Intro.\n"]},
            {"cell_type": "markdown", "source": "Washed with water (5 mL)."},
        ],
        "nbformat": 4,
    }
    e = read_notebook(
        path=Path("n.ipynb"), data=json.dumps(nb).encode(), relpath="n.ipynb", config=LabConfig()
    )
    assert e.title == "N" and e.format == "ipynb"
    assert "Intro." in e.body and "water (5 mL)" in e.body and "x = 1" not in e.body


def test_notebook_without_cells_is_an_error():
    with pytest.raises(InputError, match="no list of cells"):
        read_notebook(path=Path("n.ipynb"), data=b"{}", relpath="n.ipynb", config=LabConfig())


def test_readers_ignore_other_file_types():
    assert (
        read_markdown(path=Path("a.yaml"), data=b"", relpath="a.yaml", config=LabConfig()) is None
    )
    assert read_yaml(path=Path("a.md"), data=b"", relpath="a.md", config=LabConfig()) is None


def test_pipe_tables_with_name_and_amount_columns():
    body = """
| Reagent | Amount | Role |
|---|---|---|
| 4-bromoanisole | 1.87 g | reactant |
| ethanol | 15 mL | solvent |

| Time | Temperature |
|---|---|
| 1 h | 20 °C |

| Compound | Mass | Volume |
|:--|--:|--:|
| Et3N | | 4.2 mL |
"""
    rows = read_tables(body)
    assert [(r.name, r.amount, r.role) for r in rows] == [
        ("4-bromoanisole", "1.87 g", "reactant"),
        ("ethanol", "15 mL", "solvent"),
        ("Et3N", "4.2 mL", None),
    ]


def test_a_stoichiometry_table_with_units_in_its_headers_is_read():
    """An electronic notebook's reaction table puts the unit in the header and bare numbers in
    the cells ("Mass (mg)", "Volume (µL)", "mmol", "Equiv", "V [mL]", "mass / g"): each cell
    takes its column's unit. A property column (MW in g/mol, density, yield in %) is not an
    amount. (Such a table was passed over whole: no inputs, a blocking gap.)"""
    body = """
| Reactant | MW (g/mol) | Equiv | mmol | Mass (mg) | Volume (µL) | Density (g/mL) |
|---|---|---|---|---|---|---|
| benzylamine | 107.15 | 1.1 | 2.20 | 236 | 240 | 0.981 |
| HATU | 380.23 | 1.2 | 2.40 | 913 | | |

| Component | V [mL] | mass / g | Yield (%) |
|---|---|---|---|
| DMF | 5.0 | | |
| Celite | | ca. 2 | 50 |
"""
    rows = [(r.name, r.amount) for r in read_tables(body)]
    assert rows == [("benzylamine", "1.1 equiv, 2.20 mmol, 236 mg, 240 μL"),
                    ("HATU", "1.2 equiv, 2.40 mmol, 913 mg"), ("DMF", "5.0 mL"),
                    ("Celite", "ca. 2 g")]  # fmt: skip


def test_an_entry_with_a_stoichiometry_table_has_its_figures(notebook):
    """The table's masses are the records (mass wins over the volume beside it); DMF by its
    volume × 0.9487 g/mL (CRC Handbook, 20 °C, from memory); PMI = inputs ÷ product."""
    notebook.write("e.md", entry_md("product: {name: amide, mass: 0.412 g}", """
        | Reagent | MW (g/mol) | Equiv | mmol | Mass (mg) | Volume (µL) |
        |---|---|---|---|---|---|
        | benzoic acid | 122.12 | 1.0 | 2.00 | 244 | |
        | DIPEA | 129.24 | 3.0 | 6.00 | 775 | 1045 |
        | DMF | | | | | 5000 |
        """))  # fmt: skip
    notebook.scan()
    car = notebook.sidecar("e.md")
    got = {m["name"]: m["mass_g"] for m in car["materials"]}
    assert got == pytest.approx({"benzoic acid": 0.244, "DIPEA": 0.775, "DMF": 5.0 * 0.9487})
    assert car["metrics"]["pmi"] == pytest.approx(sum(got.values()) / 0.412, rel=1e-3)


def test_a_table_of_materials_without_an_amount_column_is_a_gap_not_lost(notebook):
    """'| Reagent | MW | n |' names materials with numbers, but no column is an amount: a major
    gap table_not_read names the table's line and header, and the entry's other figures
    stand. A table of conditions (no name column) is not one."""
    notebook.write("e.md", entry_md("product: {name: amide, mass: 0.412 g}", """
        | Time | Temperature |
        |---|---|
        | 1 h | 20 °C |

        | Reagent | MW | n |
        |---|---|---|
        | benzoic acid | 122.12 | 2.0 |

        The acid (244 mg) was stirred in DMF (5 mL).
        """))  # fmt: skip
    notebook.scan()
    car = notebook.sidecar("e.md")
    (gap,) = [g for g in car["gaps"] if g["kind"] == "table_not_read"]
    assert gap["item"] == "table, line 6 of the text" and gap["severity"] == "major"
    assert gap["evidence"] == "line 6: | Reagent | MW | n |"
    assert car["metrics"]["pmi"] is not None


def test_a_product_name_with_a_comma_in_a_flow_mapping_is_a_clear_error(notebook):
    """'{name: 2-(4-(benzyloxy)phenyl)-1,3-dioxolane, mass: 1.2 g}' splits at the comma; the
    entry is refused with the same message as for materials, never cut silently."""
    notebook.write("e.md", "---\ntitle: t\nproduct: {name: 2-(4-(benzyloxy)phenyl)-1,3-dioxolane, "
                           "mass: 1.2 g}\nmaterials: [{name: A, amount: 2 g}]\n---\n")  # fmt: skip
    notebook.scan()
    side = notebook.sidecar("e.md")
    assert side["status"] == "error" and side["error"]["location"] == "key product"
    assert "a name that contains commas must be quoted" in side["error"]["message"]
    assert '"2-(4-(benzyloxy)phenyl)-1,3-dioxolane"' in side["error"]["message"]


def test_a_table_that_repeats_the_front_matter_is_counted_once(notebook):
    """An entry listing its materials in the front matter and again in a table counted each
    twice (the merge only compared the text with them): a row that repeats a front-matter
    material, stage and amount is counted once; a different amount of the same kind keeps
    the front matter's, with a minor conflicting_amounts gap naming the table."""
    notebook.write("e.md", entry_md(
        "product: {name: amide, mass: 0.412 g}\n"
        "materials: [{name: benzoic acid, amount: 244 mg}, {name: DMF, amount: 5 mL}]", """
        | Reagent | Amount |
        |---|---|
        | benzoic acid | 244 mg |
        | DMF | 6 mL |
        | HATU | 913 mg |
        """))  # fmt: skip
    notebook.scan()
    car = notebook.sidecar("e.md")
    got = sorted((m["name"], m["stated"]) for m in car["materials"])
    assert got == [("DMF", "5 mL"), ("HATU", "913 mg"), ("benzoic acid", "244 mg")]
    (gap,) = [g for g in car["gaps"] if g["kind"] == "conflicting_amounts"]
    assert "in a materials table" in gap["message"] and gap["severity"] == "minor"
