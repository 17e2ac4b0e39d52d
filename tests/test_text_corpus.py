"""The text extractor measured on the hand-annotated corpus (tests/corpus/)."""

from __future__ import annotations

import warnings

import pytest
from corpus.score_text import CORPUS, HELD_OUT, load, score
from hypothesis import example, given
from hypothesis import strategies as st

from capture.quantities import parse_amount
from masstrail_plugins.extract.text import extract
from masstrail_plugins.prose import clean_name
from masstrail_plugins.resolve.knowledge import builtin_data

ITEMS = load(CORPUS)


def test_the_corpus_is_large_enough_and_covers_the_operations():
    assert len(ITEMS) >= 150
    operations = {e[4] for item in ITEMS for e in item.expected}
    assert operations >= {"reaction", "quench", "extraction", "wash", "drying", "filtration",
                          "chromatography", "recrystallisation", "trituration", "distillation",
                          "product"}  # fmt: skip
    assert sum(1 for item in ITEMS if not item.expected) >= 25  # sentences that must yield nothing


def test_precision_and_recall_on_the_corpus():
    s = score(ITEMS)
    assert s.amount_precision >= 0.97, s.misses
    assert s.amount_recall >= 0.95, s.misses
    assert s.attribution_precision >= 0.97, s.misses
    assert s.attribution_recall >= 0.95, s.misses
    assert s.operation_accuracy >= 0.95, s.misses


def test_held_out_sentences_stay_close():
    """Sentences never used for tuning: a guard against overfitting the corpus."""
    s = score(load(HELD_OUT))
    assert s.expected >= 60
    assert s.attribution_precision >= 0.9 and s.attribution_recall >= 0.9, s.misses


# ---------------------------------------------------------------- outside reference
# quantulum3 (PyPI), a general-purpose quantity extractor, on the plain-unit subset:
# sentences whose inputs are all written as a plain mass or volume, with no multiplier,
# range, approximation or mixture, and no product, intermediate or characterisation.
_PLAIN_UNITS = {"g", "mL"}


def _plain_subset():
    out = []
    for item in ITEMS:
        if not item.expected or any(e[4] == "product" for e in item.expected):
            continue
        if any(c in item.text for c in "×*~≈–/%") or " x " in item.text or "ca." in item.text:
            continue
        mv = [e for e in item.expected if e[2] in _PLAIN_UNITS]
        if mv and all(e[3] == 1 for e in mv):
            out.append((item.text, sorted((round(e[1], 4), e[2]) for e in mv)))
    return out


def _theirs(text: str) -> list[tuple[float, str]]:
    from quantulum3 import parser

    to_ours = {"gram": (1.0, "g"), "milligram": (1e-3, "g"), "kilogram": (1e3, "g"),
               "millilitre": (1.0, "mL"), "cubic centimetre": (1.0, "mL"), "litre": (1e3, "mL"),
               "microlitre": (1e-3, "mL")}  # fmt: skip
    out = []
    for q in parser.parse(text):
        if q.unit.name in to_ours:
            f, u = to_ours[q.unit.name]
            out.append((round(q.value * f, 4), u))
    return sorted(out)


def _ours(text: str) -> list[tuple[float, str]]:
    return sorted(
        (round(a.value, 4), a.unit)
        for line in extract(text)
        for a in line.amounts
        if a.unit in _PLAIN_UNITS
    )


def _f1(pairs) -> float:
    tp = fp = fn = 0
    for got, want in pairs:
        left = list(want)
        for g in got:
            if g in left:
                left.remove(g)
                tp += 1
            else:
                fp += 1
        fn += len(left)
    return 2 * tp / (2 * tp + fp + fn)


def test_matches_or_beats_quantulum3_on_plain_units():
    pytest.importorskip("quantulum3")
    subset = _plain_subset()
    assert len(subset) >= 40
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        theirs = _f1([(_theirs(t), want) for t, want in subset])
    ours = _f1([(_ours(t), want) for t, want in subset])
    assert ours >= theirs, (ours, theirs)
    assert ours >= 0.97


# ---------------------------------------------------------------- properties
@given(st.text(max_size=300))
@example("(((((")
@example("(1 g, (2 mL; ) 3 × ) ca. (~) 10–")
def test_arbitrary_text_never_crashes(text):
    for line in extract(text):
        assert line.amounts


_UNITS = ["g", "mg", "kg", "mL", "L", "µL", "mmol", "mol", "equiv"]
_NAMES = sorted(
    {
        n
        for rec in builtin_data().records
        for n in [rec["name"], *rec.get("synonyms", [])]
        if clean_name(n) == n
        and "(" not in n
        and "%" not in n
        and " M " not in f" {n} "
        and not any(w in n.lower().split() for w in ("in", "of", "and", "with", "on", "to"))
    }
)


@given(
    st.sampled_from(_NAMES),
    st.decimals(min_value="0.01", max_value="999", places=2).map(str),
    st.sampled_from(_UNITS),
    st.sampled_from(
        ["{p} was added.", "Then {p} was added dropwise.", "The residue was stirred with {p}."]
    ),
)
def test_generated_phrases_come_back_exactly(name, number, unit, template):
    text = template.format(p=f"{name} ({number} {unit})")
    (line,) = extract(text)
    assert line.name == name
    (a,) = line.amounts
    expected = parse_amount(f"{number} {unit}")
    assert (a.value, a.unit) == (expected.value, expected.unit)
    assert text[a.span[0] : a.span[1]] == f"{number} {unit}"


# The extractor reads most brackets through two shortcuts (plain amounts in one pass; brackets
# with no number-and-unit passed over unread). They must give what the general part-by-part
# reader gives, on every bracket of both corpora and on generated brackets.


def _brackets() -> list[str]:
    from masstrail_plugins.extract.text import _DIGIT, _GROUP

    out = []
    for path in (CORPUS, HELD_OUT):
        for item in load(path):
            out += [m.group(1) for m in _GROUP.finditer(item.text) if _DIGIT.search(m.group(1))]
    return out


def _dump(groups) -> list:
    return [(g.name, g.texts, [a.model_dump() for a in g.amounts]) for g in groups]


def test_the_shortcuts_agree_with_the_part_reader_on_the_corpora():
    from masstrail_plugins.extract.brackets import MAYBE_AMOUNT, plain_group, read_parts

    contents = _brackets()
    plain = skipped = 0
    for content in contents:
        general = read_parts(content, 100, "toluene", None)
        fast = plain_group(content, 100, "toluene")
        if fast is not None:
            plain += 1
            assert _dump([fast]) == _dump(general), content
        if content.isascii() and not MAYBE_AMOUNT.search(content):
            skipped += 1
            assert general == [], content
    # both shortcuts are exercised (figures from the corpora as committed)
    assert len(contents) > 200 and plain > 100 and skipped > 5


_UNIT = st.sampled_from(["g", "mg", "kg", "mL", "L", "uL", "mmol", "mol", "equiv", "eq", "M", "%",
                         "h", "min", "wt", "ppm", "gram", "cc"])  # fmt: skip
_NUMBER = st.one_of(
    st.integers(0, 999).map(str),
    st.floats(0, 999, allow_nan=False).map(lambda x: f"{x:.2f}"),
)
_PART = st.one_of(
    st.tuples(_NUMBER, st.sampled_from(["", " "]), _UNIT).map("".join),
    st.tuples(
        st.integers(0, 12).map(str),
        st.sampled_from([" × ", "x", " x ", "*", "X"]),
        _NUMBER,
        st.sampled_from([" ", ""]),
        _UNIT,
    ).map("".join),
    st.sampled_from(
        ["SiO2", "PPh3", "24 L collected", "1.4 M in hexane", "rt", "10% EtOAc in heptane"]
    ),
)


@given(st.lists(_PART, min_size=1, max_size=4), st.sampled_from([", ", "; ", ",", " , "]))
def test_the_shortcuts_agree_with_the_part_reader_on_generated_brackets(parts, sep):
    from masstrail_plugins.extract.brackets import MAYBE_AMOUNT, plain_group, read_parts

    content = sep.join(parts)
    general = read_parts(content, 0, "toluene", None)
    fast = plain_group(content, 0, "toluene")
    if fast is not None:
        assert _dump([fast]) == _dump(general)
    if content.isascii() and not MAYBE_AMOUNT.search(content):
        assert general == []
