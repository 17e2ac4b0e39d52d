"""The gap rules measured on hand-annotated paragraphs (tests/corpus/gap_paragraphs.txt)."""

from __future__ import annotations

from corpus.score_gaps import CORPUS, HELD_OUT, load, score

ITEMS = load(CORPUS)


def test_the_corpus_covers_every_rule_and_the_non_gaps():
    assert len(ITEMS) >= 40
    kinds = {k for item in ITEMS for k, _ in item.expected}
    assert kinds >= {"drying_agent_mass", "filter_medium", "filter_pad", "liquid_volume",
                     "stationary_phase_mass", "eluent_volume", "eluent_composition",
                     "recrystallisation_solvent", "unquantified_addition", "aspirator_water",
                     "no_amount", "unknown_material", "no_molar_mass"}  # fmt: skip
    assert sum(1 for item in ITEMS if not item.expected) >= 15  # paragraphs that must yield none


def test_gap_precision_and_recall():
    s = score(ITEMS)
    assert s.precision >= 0.95, s.misses
    assert s.recall >= 0.90, s.misses


def test_held_out_paragraphs_stay_close():
    """Paragraphs never used for tuning: a guard against overfitting the corpus."""
    s = score(load(HELD_OUT))
    assert s.precision >= 0.9 and s.recall >= 0.75, s.misses


def test_the_text_corpus_non_materials_produce_no_gap(tmp_path):
    """Every sentence of the text corpus that must yield no amount also yields no gap."""
    from corpus.score_text import CORPUS as TEXT_CORPUS
    from corpus.score_text import load as load_text

    from capture.pipeline import Notebook, scan

    items = [i for i in load_text(TEXT_CORPUS) if not i.expected]
    assert len(items) >= 25
    for n, item in enumerate(items):
        (tmp_path / f"n{n:03d}.md").write_text(
            f"---\nproduct: {{name: p, mass: 0.5 g}}\n---\n{item.text}\n"
        )
    results = scan(Notebook.open(tmp_path), write=False).results
    assert [(i.text, r.gaps) for i, r in zip(items, results, strict=True) if r.gaps] == []
