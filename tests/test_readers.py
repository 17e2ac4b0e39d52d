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
