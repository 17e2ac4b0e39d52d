"""Each shortcut taken for speed answers as the plain form it stands for: the same matches,
the same names, on every corpus and example sentence (and on generated text where the
sentences do not reach every case)."""

from __future__ import annotations

import re

from helpers import all_sentences


def test_the_operation_and_product_words_are_found_as_by_their_flat_alternation():
    """The keyword pattern grouped by first letter (prose.by_first_letter) finds the same
    words, as operation or product, as one flat alternation of them longest first, on every
    corpus and example sentence and on the sentences run together."""
    from masstrail_plugins.extract.clauses import _KEYWORDS, _PRODUCT_WORDS
    from masstrail_plugins.prose import OPERATION_STEMS

    def flat(words):
        return "|".join(map(re.escape, sorted(words, key=len, reverse=True)))

    original = re.compile(rf"(?<![\w-])(?:(?P<op>{flat(OPERATION_STEMS)})"
                          rf"|(?P<product>{flat(_PRODUCT_WORDS)})(?!\w))")  # fmt: skip
    texts = all_sentences()
    found = 0
    for s in [*texts, " ".join(texts)]:
        low = s.lower()
        want = [(m.span(), m.group("op"), m.group("product")) for m in original.finditer(low)]
        got = [(m.span(), m.group("op"), m.group("product")) for m in _KEYWORDS.finditer(low)]
        assert got == want, s[:200]
        found += len(want)
    assert found >= 1000


def test_an_aside_or_reference_before_a_bracket_is_found_as_by_both_patterns_everywhere():
    """The name reader runs its aside and reference patterns only where each can match (an
    aside ends in a closing bracket, a reference holds one of its verbs): the same match as
    running both, on the text before every bracket of every sentence."""
    from masstrail_plugins.extract.names import (
        _ASIDE_TAIL,
        _REFERENCE_TAIL,
        _aside_or_reference_tail,
    )

    def span(m):
        return None if m is None else m.span()

    written = ["the ester obtained in Example (22c) ", "the acid (obtained in example 6) ",
               "X (Example J15)\n", "the amine [CAS 109-89-7] ", "the bromide prepared as in "
               "Step 3, Part B ", "the alcohol, described in Preparation 4 ", "water "]  # fmt: skip
    befores = [s[:i] for s in all_sentences() for i, c in enumerate(s) if c == "("]
    found = 0
    for text in befores + written:
        near = max(0, len(text) - 300)
        both = _ASIDE_TAIL.search(text, near) or _REFERENCE_TAIL.search(text, near)
        assert span(_aside_or_reference_tail(text, near)) == span(both), text[-120:]
        found += both is not None
    assert found >= 10


def test_every_label_the_quantity_reader_looks_for_holds_one_of_its_hints():
    """A quantity's label is looked for only when the text before it holds a hint: every
    word the label patterns accept, in any case, holds one, so no label is passed over."""
    from masstrail_plugins.extract.text import _LABEL_HINTS, _RECOVERED_LABEL, _THEORETICAL

    labels = [
        f"{w} {what} = "
        for w in ("theoretical", "theor.", "expected", "calculated", "calc.", "maximum", "max.")
        for what in ("yield", "mass")
    ]
    labels.append("recovered: ")
    for label in labels:
        for written in (label, label.upper(), label.title()):
            assert _THEORETICAL.search(written) or _RECOVERED_LABEL.search(written), written
            assert any(hint in written.lower() for hint in _LABEL_HINTS), written
