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

    from capture.notebook import Notebook
    from capture.scan import scan

    items = [i for i in load_text(TEXT_CORPUS) if not i.expected]
    assert len(items) >= 25
    for n, item in enumerate(items):
        (tmp_path / f"n{n:03d}.md").write_text(
            f"---\nproduct: {{name: p, mass: 0.5 g}}\n---\n{item.text}\n"
        )
    results = scan(Notebook.open(tmp_path), write=False).results
    # the entries have a product and no input, which is a gap of its own (no_weighed_input)
    gaps = [(i.text, [g for g in r.gaps if g.kind != "no_weighed_input"])
            for i, r in zip(items, results, strict=True)]  # fmt: skip
    assert [(text, found) for text, found in gaps if found] == []
    assert all(r.gaps[0].kind == "no_weighed_input" for r in results)


def test_each_rule_acts_only_on_sentences_holding_one_of_its_words():
    """check_operations passes over a sentence for a rule when none of the rule's words is
    in it (a speed-up). Run every rule on every sentence of the gap corpora, the text
    corpus and the example entries, without that test: whatever a rule finds, its words
    must be in the sentence, or the shortcut would lose a gap."""
    from corpus.score_text import CORPUS as TEXT_CORPUS
    from corpus.score_text import load as load_text

    from capture.config import LabConfig
    from capture.models import ProductOut
    from capture.notebook import Notebook
    from masstrail_plugins.gaps.operations import _RULES, Context
    from masstrail_plugins.prose import sentences

    from conftest import EXAMPLES

    nb = Notebook.open(EXAMPLES)
    texts = [i.text for i in ITEMS + load(HELD_OUT)] + [i.text for i in load_text(TEXT_CORPUS)]
    texts += [e.body for e in (nb.pm.hook.masstrail_read_entry(path=f, data=f.read_bytes(),
              relpath=nb.relpath(f), config=nb.config) for f in nb.entry_files()) if e]  # fmt: skip
    ctx = Context([], ProductOut(name=None, mass_g=None), nb.resolve, LabConfig())
    acted = 0
    for body in texts:
        for _, sentence in sentences(body):
            text = " ".join(sentence.split())
            for rule, words in _RULES:
                if rule(ctx, text, set()):
                    acted += 1
                    assert any(w in text.lower() for w in words), (text, words)
    assert acted >= 100  # the rules did act, on many sentences
