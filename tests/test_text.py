"""The built-in procedure-text extractor."""

from __future__ import annotations

import pytest

from masstrail_plugins.extract.text import extract


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
