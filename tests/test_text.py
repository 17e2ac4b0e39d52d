"""The built-in procedure-text extractor."""

from __future__ import annotations

import pytest

from masstrail_plugins.extract.text import extract

from helpers import all_sentences


def _found(body: str):
    return [
        (m.name, [(a.value, a.unit, a.multiplier) for a in m.amounts], m.stage)
        for m in extract(body)
    ]


@pytest.mark.parametrize(
    ("body", "expected"),
    [
        (
            "3-iodotoluene (4.36 g, 20.0 mmol) was dissolved.",
            [("3-iodotoluene", [(4.36, "g", 1), (20.0, "mmol", 1)], "reaction")],
        ),
        (
            "The residue was extracted with MTBE (3 × 40 mL).",
            [("MTBE", [(40.0, "mL", 3)], "workup")],
        ),
        (
            "It was washed with brine (15 mL) and dried over MgSO4 (2.6 g).",
            [("brine", [(15.0, "mL", 1)], "workup"), ("MgSO4", [(2.6, "g", 1)], "workup")],
        ),
        (
            "The reaction was quenched with sat. aq. NH4Cl (35 mL).",
            [("sat. aq. NH4Cl", [(35.0, "mL", 1)], "workup")],
        ),
        (
            "N,N-diisopropylethylamine (5.2 mL) was added to 2-(4-methoxyphenyl)ethanol (2.0 g).",
            [
                ("N,N-diisopropylethylamine", [(5.2, "mL", 1)], "reaction"),
                ("2-(4-methoxyphenyl)ethanol", [(2.0, "g", 1)], "reaction"),
            ],
        ),
        ("Pd(dppf)Cl2 (0.15 g) was added.", [("Pd(dppf)Cl2", [(0.15, "g", 1)], "reaction")]),
        (  # locants written with a space after the comma belong to the name
            "2, 6-Lutidine (1.1 mL) was added to the acid in N, N-dimethylformamide (8 mL).",
            [
                ("2, 6-Lutidine", [(1.1, "mL", 1)], "reaction"),
                ("N, N-dimethylformamide", [(8.0, "mL", 1)], "reaction"),
            ],
        ),
        (  # a mixture's ratio given among its amounts, in either order, or before its name
            "The salt was washed with cold EtOH/water (6 mL, 1:2) and eluted with "
            "cyclohexane/EtOAc (3:1, 400 mL).",
            [
                ("EtOH", [(2.0, "mL", 1)], "workup"),
                ("water", [(4.0, "mL", 1)], "workup"),
                ("cyclohexane", [(300.0, "mL", 1)], "purification"),
                ("EtOAc", [(100.0, "mL", 1)], "purification"),
            ],
        ),
        (  # a prepacked column named inside a bracket: its silica
            "The residue was purified by flash chromatography (40 g column, 0-60% EtOAc in "
            "heptane) and on a second 12 g cartridge.",
            [
                ("silica", [(40.0, "g", 1)], "purification"),
                ("silica", [(12.0, "g", 1)], "purification"),
            ],
        ),
        (  # a grade or an adverb before the name is not part of it
            "Powdered sodium carbonate (1.5 g) was added thereto, and there was added thereto "
            "DBU (0.9 mL).",
            [
                ("sodium carbonate", [(1.5, "g", 1)], "reaction"),
                ("DBU", [(0.9, "mL", 1)], "reaction"),
            ],
        ),
        (  # a hyphen slipped in before the bracket is not part of the name
            "To the amine was added bromoacetyl bromide-(0.40 mL).",
            [("bromoacetyl bromide", [(0.40, "mL", 1)], "reaction")],
        ),
        (  # an amount before its mixture: the ratio before, after or around the names
            "The filter cake was washed with 300 mL of a 95/5 solution of DCM/MeOH and the "
            "column eluted with 200 mL of 3:1 pentane/ether.",
            [
                ("DCM", [(285.0, "mL", 1)], "workup"),
                ("MeOH", [(15.0, "mL", 1)], "workup"),
                ("pentane", [(150.0, "mL", 1)], "purification"),
                ("ether", [(50.0, "mL", 1)], "purification"),
            ],
        ),
        (  # a share written before a slash pair; names joined by a colon
            "The column was eluted with 3% MeOH/CHCl3 (200 mL), then EtOAc:heptane 1:4 (250 mL).",
            [
                ("MeOH", [(6.0, "mL", 1)], "purification"),
                ("CHCl3", [(194.0, "mL", 1)], "purification"),
                ("EtOAc", [(50.0, "mL", 1)], "purification"),
                ("heptane", [(200.0, "mL", 1)], "purification"),
            ],
        ),
        (  # by mass, a share over a slash is a supported catalyst, not a mixture of liquids
            "To the nitro ester was added 5% Pt/C (240 mg) and 2.0 g of 10% Pd/C.",
            [
                ("5% Pt/C", [(0.24, "g", 1)], "reaction"),
                ("10% Pd/C", [(2.0, "g", 1)], "reaction"),
            ],
        ),
        (  # a gradient is taken at its midpoint (the basis says so)
            "The column was eluted with 0-20% EtOAc in heptane (300 mL).",
            [
                ("EtOAc", [(30.0, "mL", 1)], "purification"),
                ("heptane", [(270.0, "mL", 1)], "purification"),
            ],
        ),
        (
            "The column was eluted with 120 mL of a 5:1 mixture of heptane and acetone.",
            [
                ("heptane", [(100.0, "mL", 1)], "purification"),
                ("acetone", [(20.0, "mL", 1)], "purification"),
            ],
        ),
        (
            "The ester was hydrolysed in a 2:1:1 mixture of THF/MeOH/water (8.0 mL).",
            [
                ("THF", [(4.0, "mL", 1)], "reaction"),
                ("MeOH", [(2.0, "mL", 1)], "reaction"),
                ("water", [(2.0, "mL", 1)], "reaction"),
            ],
        ),
        (
            "The diol was taken up in 6 mL of N, O-bis(trimethylsilyl)acetamide.",
            [("N, O-bis(trimethylsilyl)acetamide", [(6.0, "mL", 1)], "reaction")],
        ),
        (
            "The solid was recrystallised from ethanol (12 mL).",
            [("ethanol", [(12.0, "mL", 1)], "purification")],
        ),
    ],
)
def test_bracketed_amounts(body, expected):
    assert _found(body) == expected


def test_product_mention_and_non_amounts_are_not_inputs():
    body = "Stirred (2 h) at 0 °C (ice bath), then filtered to give the amide (2.41 g, 86%)."
    (line,) = extract(body)
    assert (line.role, line.name, line.amounts[0].value) == ("product", "amide", 2.41)


def test_spans_point_at_the_amount_text():
    body = "First a line.\nThen toluene (20 mL) was added."
    (line,) = extract(body)
    s, e = line.amounts[0].span
    assert body[s:e] == "20 mL" and line.name == "toluene"


def _ledger(body: str):
    """(role, name, amounts as written) of every line: inputs have the role None."""
    return [(m.role, m.name, m.stated) for m in extract(body)]


@pytest.mark.parametrize(
    ("body", "expected"),
    [
        (  # every quantity ends in one class: input, product, intermediate …
            "The crude aldol (0.82 g) was taken up in ethanol (9 mL) and filtered; "
            "concentration gave the enone (0.61 g, 80%).",
            [(None, "aldol", "0.82 g"), (None, "ethanol", "9 mL"),
             ("product", "enone", "0.61 g")],
        ),
        (
            "The combined extracts (120 mL) were dried; an aliquot (0.5 mL) was kept for GC.",
            [("intermediate", "extracts", "120 mL"), ("sample", "aliquot", "0.5 mL")],
        ),
        (
            "In a 250 mL three-necked flask, 4.0 g of the diol was dissolved in 30 mL of THF.",
            [("equipment", "three-necked flask", "250 mL"), (None, "diol", "4.0 g"),
             (None, "THF", "30 mL")],
        ),
        (  # the size of a run is a condition, not a material added
            "Two runs were made, each on a 400 mg scale, and the diol (0.40 g) was added to a "
            "2.5 g batch of the acid.",
            # "a 2.5 g batch of X" names what an earlier run made: the name reader's, as before
            [("condition", "scale", "400 mg"), (None, "diol", "0.40 g"),
             ("intermediate", "batch", "2.5 g")],
        ),
        (  # a condition, and what left the flask
            "The solution was concentrated to about 15 mL and 40 mL of hexane was distilled off.",
            [("condition", "condition", "about 15 mL"),
             ("intermediate", "hexane", "40 mL")],
        ),
        (  # nothing reads the second amount: it is unread, never dropped
            "The ketone (1.3 g) was added; 2.2 g were then added in one go.",
            [(None, "ketone", "1.3 g"), ("unread", "2.2 g", "2.2 g")],
        ),
        (  # characterisation is the tail of the sentence, not the whole of it
            "Filtration gave the amide (1.45 g, 91%): 1H NMR (400 MHz, CDCl3) δ 7.2 (2 mg).",
            [("product", "amide", "1.45 g"), ("characterisation", "2 mg", "2 mg")],
        ),
    ],
    ids=["classes", "intermediate-sample", "equipment", "scale", "condition-taken-out",
         "unread", "characterisation-tail"],
)  # fmt: skip
def test_every_quantity_is_accounted_for(body, expected):
    assert _ledger(body) == expected


def test_the_ledger_keeps_each_quantity_once():
    """No amount is counted in two lines: the bracket after a quantity joins its mention."""
    body = ("A mixture of 0.95 g (4.1 mmol) of the bromide, 8.16 g ammonium acetate (106 mmol, "
            "8 eq.) and 20 mL of acetic acid was heated.")  # fmt: skip
    lines = extract(body)
    spans = [a.span for m in lines for a in m.amounts]
    assert len(spans) == len(set(spans)) == 6
    assert [(m.name, m.stated) for m in lines] == [
        ("bromide", "0.95 g, 4.1 mmol"), ("ammonium acetate", "8.16 g, 106 mmol, 8 eq."),
        ("acetic acid", "20 mL")]  # fmt: skip


def test_the_product_of_a_sentence_is_its_isolated_mention():
    from capture.models import MaterialLine
    from masstrail_plugins.extract.merge import _product_mention

    lines = extract("Evaporation left the crude lactone (2.9 g). Chromatography (silica, 60 g) "
                    "gave the lactone (2.2 g, 76%).")  # fmt: skip
    mentions = [m for m in lines if m.role == "product"]
    assert [(m.stated, m.note, m.stated_yield) for m in mentions] == [
        ("2.9 g", "crude", None),
        ("2.2 g", None, 0.76),
    ]
    assert _product_mention(mentions).stated == "2.2 g"
    assert isinstance(mentions[0], MaterialLine)


def _bodies():
    """Procedure texts to hold the ledger to: the real subset, the examples, the corpus."""
    from pathlib import Path

    from corpus.score_text import CORPUS, HELD_OUT, load

    here = Path(__file__).parent
    texts = [p.read_text(encoding="utf-8").split("---", 2)[2]
             for p in sorted((here / "corpus" / "real" / "entries").glob("*.md"))]  # fmt: skip
    texts += [p.read_text(encoding="utf-8") for p in sorted((here.parent / "example_entries")
                                                              .rglob("*.md"))]  # fmt: skip
    texts += [item.text for path in (CORPUS, HELD_OUT) for item in load(path)]
    return texts


def test_each_quantity_of_the_text_ends_in_exactly_one_place():
    """Every mass, volume, amount of substance and equivalents the ledger finds (outside table
    rows) is one amount of one line (an input, the product, or set aside with its role), or one
    unread line: none is lost and none is counted twice."""
    from masstrail_plugins.extract.ledger import quantities
    from masstrail_plugins.prose import sentences

    for body in _bodies():
        lines = extract(body)
        ledger = {a.span[0] for m in lines for a in m.amounts
                  if a.span and a.kind in {"mass", "volume", "amount", "equivalents"}}  # fmt: skip
        unreadable = [m for m in lines if m.role == "unread" and not m.amounts]
        starts = [start + m.start for start, text in sentences(body)
                  if not text.lstrip().startswith("|") for m in quantities(text, 0)]  # fmt: skip
        assert len(starts) == len(ledger) + len(unreadable), body[:200]
        assert set(starts) >= ledger, body[:200]


def test_no_name_holds_another_mentions_amount():
    """'X (12.5 mL)/Y (6.0 mL)': two solvents, each with its own volume; the second name
    does not start at the first."""
    lines = extract("The salt was taken up in propionitrile (12.5 mL)/diisopropylamine (6.0 mL).")
    assert [(m.name, m.stated) for m in lines] == [
        ("propionitrile", "12.5 mL"), ("diisopropylamine", "6.0 mL")]  # fmt: skip
    lines = extract("(2S,3R)-3-Hydroxyproline (1.0 g) was added to THF (10 mL)-water (2 mL).")
    assert [m.name for m in lines] == ["(2S,3R)-3-Hydroxyproline", "THF", "water"]


def test_a_reference_number_does_not_start_a_range():
    """'Reference Example 6 to 45 ml of ethanol': 6 numbers the example; 45 ml is ethanol's,
    not a range '6 to 45 ml' left unread."""
    lines = extract("To 2.20 g of the nitrile prepared in Reference Example 6 to 45 ml of "
                    "ethanol was added the base. Methanol (5 to 10 mL) was added.")  # fmt: skip
    assert [(m.name, m.stated) for m in lines] == [
        ("nitrile prepared in Reference Example 6", "2.20 g"), ("ethanol", "45 ml"),
        ("Methanol", "5 to 10 mL")]  # fmt: skip


def test_a_name_stops_where_the_next_amount_starts():
    """'in 15 ml of water 2.60 g (0.01 mole) of the dichloride' (a comma left out): water's
    name ends before 2.60 g, which is the dichloride's with its moles."""
    lines = extract("The amine was dissolved in 15 ml of water 2.60 g (0.01 mole) of the "
                    "dichloride was then added.")  # fmt: skip
    assert [(m.name, m.stated) for m in lines] == [
        ("water", "15 ml"), ("dichloride", "2.60 g, 0.01 mole")]  # fmt: skip


@pytest.mark.parametrize("module, original, fast", [
    ("extract.ledger", "QUANTITY", "QUANTITY_LED"),
    ("prose", "_CHARACTERISATION_INSIDE", "_CHARACTERISATION_LED"),
    ("gaps.reading", "_ELSEWHERE", "_ELSEWHERE_LED"),
])  # fmt: skip
def test_a_led_pattern_matches_where_its_original_does(module, original, fast):
    """Each pattern led by its first characters (prose.led) finds exactly what its original
    finds, on every corpus and example sentence and on the sentences run together."""
    import importlib

    mod = importlib.import_module(f"masstrail_plugins.{module}")
    a, b = getattr(mod, original), getattr(mod, fast)
    texts = all_sentences()
    found = 0
    for s in [*texts, " ".join(texts)]:
        spans = [m.span() for m in a.finditer(s)]
        assert [m.span() for m in b.finditer(s)] == spans, s[:200]
        found += len(spans)
    assert found >= 10


def test_the_led_quantity_pattern_finds_what_the_quantity_pattern_finds():
    """The quantity pattern led by its first characters finds the same quantities in
    generated text."""
    from hypothesis import given
    from hypothesis import strategies as st

    from masstrail_plugins.extract.ledger import QUANTITY, QUANTITY_LED

    def spans(p, s):
        return [m.span() for m in p.finditer(s)]

    pieces = st.sampled_from(["2", "0.5", ".5", ",5", " ", "g", "mL", "mmol", "ca.", "ca ", "~",
                              "≈", "about ", "approx. ", "½", "1½", "3 × ", "x", "-", "to", "–",
                              "a", "(", "e-3", "²", "L", "kg"])  # fmt: skip

    @given(st.lists(pieces, max_size=10).map("".join))
    def same(text):
        assert spans(QUANTITY_LED, text) == spans(QUANTITY, text)

    same()


def _span(m):
    return None if m is None else m.span()


def test_the_characterisation_shortcut_finds_what_the_full_pattern_finds():
    """The cheap hint check in front of the characterisation pattern never hides a marker:
    on every sentence of the corpora, the real subset and the examples, and on generated
    text made of the markers' pieces."""
    from hypothesis import given
    from hypothesis import strategies as st

    from masstrail_plugins.prose import CHARACTERISATION, characterisation

    found = 0
    for s in all_sentences():
        full = CHARACTERISATION.search(s)
        assert _span(characterisation(s)) == _span(full), s  # the same first marker
        found += full is not None
    assert found >= 25  # the corpora hold that many sentences with markers

    pieces = st.sampled_from(["1H", "13C", " NMR", "NMR (", "δ", "m/z", "HRMS", "ESI", "IR",
                              "cm-1", "cm−1", "m.p. 1", "mp", "mp 2", "Rf =", "RF 0", "b.p. 7",
                              "bp", "[α]", " ", "(", ";", "x", "Mp", "rf", ".", "temperature",
                              "_", "A", "31P NMR", "\t", "11B", "19F", "\n"])  # fmt: skip

    @given(st.lists(pieces, max_size=12).map("".join))
    def same(text):
        assert _span(characterisation(text)) == _span(CHARACTERISATION.search(text))

    same()


def test_an_amount_in_a_unit_masstrail_does_not_read_is_unread_with_the_reason():
    """No silent loss: '(4.0 gallons)' or '2 oz' is not passed over as words; it is an
    unread quantity whose problem names the unit and the units masstrail reads."""
    lines = extract("The solution was dried over Na2SO4 (4.0 gallons) and filtered. "
                    "Then 2 oz of sodium chloride and 3 h of stirring followed.")  # fmt: skip
    unread = {line.stated: line.problem for line in lines if line.role == "unread"}
    assert set(unread) == {"4.0 gallons", "2 oz"}
    assert "unknown unit 'gallons'" in unread["4.0 gallons"]
    assert "masstrail reads g, mg" in unread["2 oz"]


def test_an_amount_with_a_power_of_ten_is_one_unread_quantity_saying_so():
    """'1.84×10-3 mol' was read as the range '10-3 mol' running backwards, and '5.2 x 10^-3
    mol' not at all (a silent loss): each is now one unread quantity whose problem asks for a
    decimal. Portions stay portions: '2 x 10-15 mL' is two of 10-15 mL, '3 x 10 mL' three of
    10 mL."""
    lines = extract("NaH (60 mg, 1.5×10-3 mol) was added to the ester (2.0 g, 5.2 x 10^-3 mol) "
                    "and 3·10⁻⁴ mol of the amine. The solid was washed with 2 x 10-15 mL of "
                    "ether and 3 x 10 mL water.")  # fmt: skip
    unread = {line.stated: line.problem for line in lines if line.role == "unread"}
    assert set(unread) == {"1.5×10-3 mol", "5.2 x 10^-3 mol", "3·10⁻⁴ mol"}
    assert all("power of ten" in problem for problem in unread.values())
    inputs = {line.name: line.amounts[0] for line in lines if line.role is None}
    assert inputs["NaH"].value == 0.06 and inputs["ester"].value == 2.0  # g
    ether, water = inputs["ether"], inputs["water"]
    assert (ether.multiplier, ether.low, ether.high) == (2, 10, 15)
    assert (water.multiplier, water.value) == (3, 10)


def test_a_loading_in_mol_percent_and_equivalents_before_a_name_are_inputs():
    """'5 mol%' was read as the quantity '5 mol' (an unread gap sized as five moles) and
    '2.0 equiv of NaH' was passed over, NaH missing from the inputs with no gap; both are
    now equivalents of the input they name."""
    lines = extract("Pd(OAc)2 (11 mg, 5 mol%), CuI (10 mol %) and 2.0 equiv of NaH were "
                    "added, then 10 mol% of L-proline.")  # fmt: skip
    assert not [line for line in lines if line.role == "unread"]
    got = {line.name: [(a.value, a.unit) for a in line.amounts] for line in lines}
    assert got == {"Pd(OAc)2": [(0.011, "g"), (0.05, "equiv")], "CuI": [(0.1, "equiv")],
                   "NaH": [(2.0, "equiv")], "L-proline": [(0.1, "equiv")]}  # fmt: skip


def test_a_mass_after_a_yield_is_the_product_s():
    """'Yield: 82% (415 mg)', '82% yield (415 mg)', 'Yield: 415 mg (82%)', 'Yield = 1.2 g'
    and 'Mass of product: 1.20 g' give the product's mass (each was an unread quantity, and
    the entry had no PMI); 'Crude yield: 1.2 g' is a crude mass; 'the yield (15 mg)' says no
    yield and stays unread."""
    for text, grams in [("Yield: 82% (415 mg).", 0.415), ("82% yield (415 mg).", 0.415),
                        ("Yield: 415 mg (82%).", 0.415), ("Yield = 1.2 g.", 1.2),
                        ("Mass of product: 1.20 g.", 1.2), ("Product mass: 1.20 g", 1.2),
                        ("Mass of the dry product = 1.20 g.", 1.2),
                        ("Yield 1.1 g (85%); mp 120–122 °C.", 1.1),
                        ("The solid was dried to a constant weight of 3.21 g.", 3.21)]:  # fmt: skip
        (line,) = extract(text)
        assert line.role == "product" and line.amounts[0].value == pytest.approx(grams), text
    (line,) = extract("Crude yield: 1.2 g.")
    assert (line.role, line.note) == ("product", "crude")
    (line,) = extract("The yield (15 mg) was low.")
    assert line.role == "unread"


def test_a_product_mass_that_is_worked_on_further_is_a_crude_mass():
    """'The product (1.05 g) was recrystallised … to give pale needles (0.91 g)': the first
    mass is crude, so the entry is not flagged as isolating its product twice (a false major
    gap before) and the needles give the product mass."""
    for text in ("The product (1.05 g) was recrystallised from hot ethanol (ca. 8 mL) to give "
                 "pale needles (0.91 g).", "1.05 g of the product was recrystallised from hot "
                 "ethanol (ca. 8 mL) to give pale needles (0.91 g).", "Filtration gave the "
                 "product (1.05 g), which was recrystallised from hot ethanol (ca. 8 mL) to give "
                 "pale needles (0.91 g)."):  # fmt: skip
        got = [(line.role, line.note, line.amounts[0].value) for line in extract(text)]
        assert got == [("product", "crude", 1.05), (None, None, 8.0), ("product", None, 0.91)]


def test_what_is_done_to_an_output_is_an_input_and_the_next_output_is_the_product():
    """'… to give a residue which was triturated with Et2O (2 × 5 mL) to give the amine
    (0.93 g, 76% yield)': the ether was the product's mention and the amine a second output
    of the same clause (confidently wrong: 10 mL of ether as the product, the amine set
    aside). A relative clause that works on the output with more material ('which was
    triturated with', 'dissolved in') ends the product clause, and each product word starts
    its own; 'which was obtained as', 'which was dried in vacuo (1.5 g)' do not end it."""
    lines = extract("The solvent was removed to give a residue which was triturated with Et2O "
                    "(2 × 5 mL) to give the amine as a white powder (0.93 g, 76% yield).")  # fmt: skip
    got = {line.name: (line.role, line.operation) for line in lines}
    assert got == {"Et2O": (None, "trituration"), "white powder": ("product", "product")}
    (line,) = extract("Workup gave the title compound which was obtained as a white solid (1.2 g).")
    assert line.role == "product"
    for text in ("The mixture was filtered to give a white solid which was dried in vacuo "
                 "(1.5 g).", "This afforded the ester which was used directly (2.1 g)."):  # fmt: skip
        (line,) = extract(text)  # no new material in the relative clause: still the output
        assert line.role == "product", text


def test_what_remained_is_an_output_not_an_input():
    """'0.82 g of a yellow oil remained' was an input named 'remained' (the verb, with its full
    stop, was not seen as one), '5 mL of toluene remained' an input: both are what was left.
    'was left to stand' is not."""
    got = [(line.role, line.name) for line in extract(
        "After evaporation, 0.82 g of a yellow oil remained. Then 5 mL of toluene remained. "
        "Then 3 mL of ether was left to stand.")]  # fmt: skip
    assert got == [("intermediate", "yellow oil"), ("intermediate", "toluene"), (None, "ether")]


def test_a_total_with_no_name_after_it_is_the_product_and_with_one_an_input():
    """'giving a total of 2.27 g' is the product's whole mass; 'a total of 50 mL of water'
    is water."""
    got = [(line.role, line.name, line.note) for line in extract(
        "A second crop (0.35 g) was obtained, giving a total of 2.27 g. A total of 50 mL of "
        "water was used.")]  # fmt: skip
    assert got == [("product", "second crop", "crop"), ("product", "product", "total"),
                   (None, "water", None)]  # fmt: skip


def test_a_theoretical_yield_is_a_figure_and_what_was_recovered_an_output():
    """A student's report: 'Actual yield: 1.69 g; theoretical yield: 2.12 g.' made 2.12 g the
    product (the last mention after a yield); a theoretical, expected or calculated mass is a
    condition. 'Recovered: 1.2 g of unreacted starting material' was an input named
    'unreacted': it is what came back out. 'm(product) = 1.69 g' is the product's mass."""
    got = [(line.role, line.amounts[0].value) for line in extract(
        "Actual yield: 1.69 g; theoretical yield: 2.12 g. The expected mass was 2.1 g. "
        "Recovered: 1.2 g of unreacted starting material. m(product) = 1.69 g")]  # fmt: skip
    assert got == [("product", 1.69), ("condition", 2.12), ("condition", 2.1),
                   ("intermediate", 1.2), ("product", 1.69)]  # fmt: skip


def test_every_unit_masstrail_does_not_read_holds_one_of_the_hints_looked_for_first():
    """A sentence is searched for unread units only if it holds a hint; every unit the pattern
    names, in any case, singular or plural, holds one, so none is passed over. (A unit added
    to the pattern changes its count of alternatives: add it here too.)"""
    from masstrail_plugins.extract.text import _FOREIGN_HINTS, _FOREIGN_UNIT

    assert _FOREIGN_UNIT.pattern.split(r"\s*(?:")[1].count("|") + 1 == 17
    words = ["gallon", "gallons", "gal", "fl oz", "fl. oz", "floz", "ounce", "ounces", "oz",
             "pound", "pounds", "lb", "lbs", "pint", "pints", "quart", "quarts", "qt", "cup",
             "cups", "teaspoon", "teaspoons", "tsp", "tablespoon", "tablespoons", "tbsp", "dram",
             "drams", "grain", "grains"]  # fmt: skip
    for word in words:
        for written in (f"3 {word}", f"3{word.upper()}", f"2.5 {word.title()}"):
            assert _FOREIGN_UNIT.fullmatch(written), written
            assert any(h in written.casefold() for h in _FOREIGN_HINTS), written


def test_the_parts_of_what_came_out_are_not_inputs():
    """ "a liquid was recovered comprising 2.40 g of X and 0.20 g of Y" states the parts of an
    output: they are set aside with what came out, not added to the inputs. A vessel
    "containing" a material before anything came out holds an input."""
    lines = extract("Ethyl benzoate (3.0 g) was added to a flask containing 20 mL of water. "
                    "About 2.6 g of a solid was collected comprising 2.40 g of benzoic acid "
                    "(yield 90%) and 0.20 g of ethyl benzoate.")  # fmt: skip
    roles = {(line.name, line.stated): line.role for line in lines}
    assert roles[("Ethyl benzoate", "3.0 g")] is None and roles[("water", "20 mL")] is None
    assert roles[("solid", "2.6 g")] == "intermediate"
    assert roles[("benzoic acid", "2.40 g")] == "intermediate"
    assert roles[("ethyl benzoate", "0.20 g")] == "intermediate"
    lines = extract("The LDA solution thus obtained, containing 10 mmol of LDA, was added to the "
                    "ketone (2.0 g) in THF (20 mL).")  # fmt: skip
    assert [(m.name, m.role) for m in lines] == [("LDA", "intermediate"), ("ketone", None),
                                                 ("THF", None)]  # fmt: skip


def test_a_product_produced_or_thereby_obtained_is_the_product():
    """ "dried to produce 3.5 g of the desired X" and "4.0 g of X are thereby obtained" state the
    product: set aside as the product's mentions, named without "the desired"."""
    lines = extract("Hydrazine (17 g) and formic acid (60 mL) were heated. The solid was dried "
                    "to produce 3.5 g of the desired triazolol which melted at 290 °C.")  # fmt: skip
    assert [(m.name, m.role) for m in lines][-1] == ("triazolol", "product")
    (line,) = extract("4.0 g of N-benzoylglycine are thereby obtained.")
    assert (line.name, line.role) == ("N-benzoylglycine", "product")


def test_a_name_may_open_with_a_stereodescriptor_and_end_with_its_number():
    """ "of tert-butyl (3RS,4RS)-4-aryl-piperidine-1-carboxylate": the bracket opens part of
    the name, not an amount; "the amine (3) (1.2 mmol)": the compound's number is passed over
    and the bracket of amounts after it is the same mention's, not a second input."""
    (line, _) = extract("A solution of 173 mg (0.35 mmol) of tert-butyl (3RS,4RS)-4-phenyl-"
                        "piperidine-1-carboxylate in 6 ml of methanol was stirred.")  # fmt: skip
    assert line.name == "tert-butyl (3RS,4RS)-4-phenyl-piperidine-1-carboxylate"
    assert line.stated == "173 mg, 0.35 mmol"
    lines = extract("Then 2.0 g of benzaldehyde (3) (18.8 mmol) in THF (5 mL) was added.")
    assert [(m.name, m.stated) for m in lines] == [("benzaldehyde", "2.0 g, 18.8 mmol"),
                                                   ("THF", "5 mL")]  # fmt: skip


def test_a_metal_on_its_support_is_one_name():
    """ "10% palladium on carbon (267 mg)" is the catalyst, not "carbon"; "on" still ends a
    name elsewhere ("placed on ice (20 g)")."""
    lines = extract("3-Nitrobiphenyl (500 mg) and 10% palladium on carbon (267 mg) in methanol "
                    "(1 mL) were stirred; then 50 mg of Pt on alumina was added and the flask "
                    "was placed on ice (20 g).")  # fmt: skip
    assert [(m.name, m.stated) for m in lines] == [
        ("3-Nitrobiphenyl", "500 mg"), ("10% palladium on carbon", "267 mg"),
        ("methanol", "1 mL"), ("Pt on alumina", "50 mg"), ("ice", "20 g")]  # fmt: skip


def test_an_apparatus_provided_with_a_stirrer_and_a_solid_with_its_yield():
    """ "An autoclave provided with a stirrer … was charged with 250 g of X": "provided with"
    equips, it names no product, so X is an input; "isolated as a white solid (175 mg, 88%)":
    a mass with its yield is the product's, though "solid" alone would be a residue."""
    (line,) = extract("An autoclave provided with a stirrer and a thermometer was charged "
                      "with 250 g of N-methyloctadecylamine and heated.")  # fmt: skip
    assert (line.name, line.role) == ("N-methyloctadecylamine", None)
    (line,) = extract("The title compound was isolated as a white solid (175 mg, 88%).")
    assert (line.role, line.stated_yield) == ("product", 0.88)
    (line,) = extract("The residue (1.2 g) was dissolved in ether.")
    assert line.role == "intermediate"


def test_a_gradient_says_it_is_taken_at_its_midpoint():
    notes = [line.note for line in extract("Eluted with 5 to 15% acetone/hexane (400 mL).")]
    assert notes == [
        "10% by volume of 400 mL of '5 to 15% acetone/hexane' (a gradient, taken at its "
        "midpoint; ideal mixing assumed)",
        "90% by volume of 400 mL of '5 to 15% acetone/hexane' (a gradient, taken at its "
        "midpoint; ideal mixing assumed)",
    ]
