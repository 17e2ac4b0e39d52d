"""Real procedures (a committed subset of the ORD corpus): what the text reader must keep reading.

The records and their references are in tests/corpus/real/ (CC BY-SA 4.0, see its README).
A reference component counts as read when a material's mass is within 5 % of the mass the
reference works out from ORD's structured fields (the shared corpus scorer's first rule; the
full scorer and corpus are run by bench/real_corpus.py).
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest

from capture.notebook import Notebook
from capture.scan import scan

REAL = Path(__file__).parent / "corpus" / "real"


def _close(a: float, b: float) -> bool:
    return abs(a - b) <= 0.05 * max(abs(b), 1e-9)


@pytest.fixture(scope="module")
def scored(tmp_path_factory):
    root = tmp_path_factory.mktemp("real")
    shutil.copytree(REAL / "entries", root, dirs_exist_ok=True)
    results = {r.entry.id: r for r in scan(Notebook.open(root), write=False).results}
    refs = json.loads((REAL / "reference.json").read_text(encoding="utf-8"))
    return refs, results


def _figures(refs, results, subset):
    found = wanted = matched = correct = 0
    for ref in refs:
        if ref["subset"] != subset:
            continue
        r = results[ref["reaction_id"]]
        masses = [m.mass_g for m in r.materials if m.mass_g]
        left = list(masses)
        for c in ref["components"]:
            if c["stage"] != "input" or c.get("mass_g") is None:
                continue
            wanted += 1
            hit = next((m for m in left if _close(m, c["mass_g"])), None)
            if hit is not None:
                left.remove(hit)
                found += 1
        every = [c["mass_g"] for c in ref["components"] if c.get("mass_g")]
        matched += len(masses)
        correct += sum(any(_close(m, x) for x in every) for m in masses)
    return found / wanted, correct / matched


def test_the_forms_of_real_patent_text_are_read(scored):
    refs, results = scored
    recall, precision = _figures(refs, results, "uspto")
    # measured when the subset was chosen: recall 1.00, precision 0.98 (workup amounts the
    # ORD records leave out count against precision)
    assert recall >= 0.95, recall
    assert precision >= 0.90, precision


def test_the_notebook_records_are_read(scored):
    refs, results = scored
    recall, _ = _figures(refs, results, "eln")
    # the notebook records state moles that sometimes disagree with their own text (see the
    # corpus README); measured 0.88 when the subset was chosen
    assert recall >= 0.80, recall


def test_no_entry_lacks_a_pmi_without_saying_why(scored):
    refs, results = scored
    for ref in refs:
        r = results[ref["reaction_id"]]
        if r.metrics.pmi is None:
            assert any(g.severity == "blocking" for g in r.gaps), r.entry.id


def test_every_quantity_of_every_record_is_accounted_for(scored):
    """The reader's ledger: each mass, volume and amount of substance in the text (outside
    tables) is in exactly one place: a material, the product, or set aside with its role; the
    unread ones are gaps."""
    refs, results = scored
    for ref in refs:
        r = results[ref["reaction_id"]]
        unread = [m for m in r.set_aside if m.role == "unread"]
        assert {m.stated for m in unread} <= {g.item for g in r.gaps if g.kind == "unread_amount"}
        assert all(m.stated for m in unread), r.entry.id
