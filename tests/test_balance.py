"""Balance logs: reading CSV exports and putting each reading where it belongs.

All fixture data (tests/fixtures/balance/) is invented for masstrail.
"""

from __future__ import annotations

import contextlib
import os
import shutil
from pathlib import Path

import pytest
from hypothesis import given
from hypothesis import strategies as st

from capture.config import BalanceLayout, LabConfig
from capture.safeio import InputError
from masstrail_plugins.balance.csv_log import parse_date, read_csv_export, read_log

from helpers import entry_md

FIXTURES = Path(__file__).parent / "fixtures" / "balance"


def _read(name: str, **layout):
    return read_log((FIXTURES / name).read_bytes(), name, BalanceLayout(**layout))


def _summary(readings):
    return [(r.line, r.label, r.mass_g, r.stable) for r in readings]


def test_semicolon_decimal_comma_with_german_headers_preamble_and_summary():
    got = _read("semicolon_decimal_comma_de.csv")
    assert _summary(got) == [
        (5, "4-Methylacetophenon", 2.6812, True),
        (6, "NaBH4", 0.379, True),
        (7, "Na2SO4", 4.215, True),
        (8, "Produkt", 2.5093, True),
    ]  # the "Summe" line is a summary, not a reading
    assert got[0].timestamp == "2026-11-06T10:41:07"  # dd.mm.yyyy


def test_tab_separated_with_iso_dates():
    got = _read("tab_separated.tsv")
    assert _summary(got) == [(2, "MgSO4", 3.012, None), (3, "benzylamine", 1.1795, None),
                             (4, "product", 2.4107, None)]  # fmt: skip
    assert got[2].timestamp == "2026-11-04T16:02:13"


def test_utf16_with_bom_and_milligrams():
    got = _read("utf16_bom.csv")
    assert _summary(got) == [(2, "K2CO3", 4.1502, True), (3, "Pd(PPh3)4", 0.1163, True),
                             (4, "4-bromoanisole", 1.8711, True)]  # fmt: skip


def test_unit_inside_the_value_and_ambiguous_dates():
    got = _read("unit_in_value.csv")
    assert [(r.label, r.mass_g) for r in got] == [("NaBH4", 0.379), ("4-methylacetophenone", 2.6812),
                                                  ("product", 2.5093)]  # fmt: skip
    # 11/06/2026 could be 11 June or 6 November: not guessed; 11/25/2026 can only be mm/dd
    assert [r.timestamp for r in got] == [None, None, "2026-11-25"]
    settled = _read("unit_in_value.csv", date_order="mdy")
    assert settled[0].timestamp == "2026-11-06"


def test_unit_in_the_header_for_weighing_by_difference():
    got = _read("difference_de.csv")
    assert [(r.label, r.mass_g) for r in got] == [("MgSO4 vorher", 18.4021), ("MgSO4 nachher", 15.391),
                                                  ("Kolben", 52.118), ("Kolben + Celite", 57.2255)]  # fmt: skip


def test_gross_minus_tare_unstable_flags_and_thousands_separators():
    got = _read("unstable_gross_tare.csv")
    assert _summary(got) == [
        (2, "silica", 90.41, False),
        (3, "silica", 90.37, True),
        (4, "sand", 8.12, False),  # "8,12?": the balance's unstable mark
        (5, "heptane", 1234.5, True),  # "1.234,5": thousands dot, decimal comma
        (6, "spatula", 0.0, True),
    ]
    assert "gross − tare" in got[0].as_written


def test_a_file_without_a_unit_is_refused_unless_the_lab_declares_it():
    with pytest.raises(InputError, match="names no unit") as err:
        _read("no_unit.csv")
    assert err.value.location == "line 2"
    assert [r.mass_g for r in _read("no_unit.csv", unit="g", decimal=",")] == [1.5, 2.5]


def test_no_header_is_a_clear_error():
    with pytest.raises(InputError, match="no header line"):
        read_log(b"just,some\n1,2\n", "x.csv", BalanceLayout())


@pytest.mark.parametrize(
    ("text", "order", "expected"),
    [
        ("2026-11-06", None, "2026-11-06"),
        ("06.11.2026", None, "2026-11-06"),
        ("25/11/2026", None, "2026-11-25"),
        ("03/04/2026", None, None),
        ("03/04/2026", "dmy", "2026-04-03"),
        ("03/04/2026", "mdy", "2026-03-04"),
        ("31.02.2026", None, None),
    ],
)
def test_dates(text, order, expected):
    got = parse_date(text, order)
    assert (got.isoformat() if got else None) == expected


@given(st.binary(max_size=600))
def test_random_bytes_never_crash_the_reader(data):
    with contextlib.suppress(InputError):
        read_csv_export(path=Path("x.csv"), data=data, relpath="x.csv", config=LabConfig())


CSV_CELLS = st.sampled_from(["ID", "Net", "Netto", "g", "mg", "1,5", "2.5", ";", ",", "\t", "S",
                             "US", "?", "=cmd", "\ufeff", "\r\n", "\n", "Summe", "µg", "-3"])  # fmt: skip


@given(st.lists(CSV_CELLS, max_size=60).map("".join))
def test_csv_like_text_never_crashes_the_reader(text):
    with contextlib.suppress(InputError):
        read_log(text.encode("utf-8"), "x.csv", BalanceLayout())


# ---------------------------------------------------------------- in the pipeline
def _entry(notebook, log_name: str, front: str, body: str = "", dest: str = "logs/bal.csv"):
    target = notebook.root / "lab" / dest
    target.parent.mkdir(parents=True, exist_ok=True)
    shutil.copy(FIXTURES / log_name, target)
    import textwrap

    front = f"balance_log: {dest}\n" + textwrap.dedent(front).strip()
    return notebook.write("lab/e.md", entry_md(front, body))


def test_balance_masses_win_and_name_their_reading(notebook):
    _entry(
        notebook,
        "tab_separated.tsv",
        """
        date: 2026-11-03
        product: {name: amide, mass: 2.41 g}
        materials:
          - {name: MgSO4, amount: 3 g}
          - {name: benzylamine, amount: 1.1 equiv}
          - {name: acid, amount: 1.90 g, role: limiting reagent}
        """,
    )
    notebook.scan()
    side = notebook.sidecar("lab/e.md")
    mats = {m["name"]: m for m in side["materials"]}
    assert (mats["MgSO4"]["mass_g"], mats["MgSO4"]["origin"]) == (3.012, "balance")
    assert mats["MgSO4"]["basis"] == ("balance reading lab/logs/bal.csv line 2, 2026-11-03T09:12:44: "
                                      "MgSO4 = 3.012 g")  # fmt: skip
    assert mats["benzylamine"]["mass_g"] == 1.1795 and mats["acid"]["origin"] == "front-matter"
    assert side["product"]["mass_g"] == 2.4107  # the balance wins over the typed 2.41 g
    assert "the front matter says 2.41 g" in side["product"]["basis"]
    assert [r["assigned_to"] for r in side["readings"]] == ["MgSO4", "benzylamine", "product"]


def test_difference_unstable_and_unassigned_readings(notebook):
    _entry(
        notebook,
        "difference_de.csv",
        """
        product: {name: p, mass: 1.00 g}
        materials: [{name: MgSO4}, {name: Celite}, {name: EtOAc, amount: 50 mL}]
        """,
    )
    notebook.scan()
    side = notebook.sidecar("lab/e.md")
    mats = {m["name"]: m for m in side["materials"]}
    # MgSO4 vorher 18.4021 − nachher 15.3910; Kolben + Celite 57.2255 − Kolben 52.1180
    assert mats["MgSO4"]["mass_g"] == pytest.approx(3.0111)
    assert mats["Celite"]["mass_g"] == pytest.approx(5.1075)
    assert mats["MgSO4"]["basis"].startswith("weighed by difference: 18.4021 g − 15.391 g")
    assert not [g for g in side["gaps"] if g["kind"] == "no_amount"]

    _entry(
        notebook,
        "unstable_gross_tare.csv",
        """
        product: {name: p, mass: 1.00 g}
        materials: [{name: silica, amount: 90 g}, {name: sand, amount: 8 g}]
        """,
    )
    notebook.scan()
    side = notebook.sidecar("lab/e.md")
    mats = {m["name"]: m for m in side["materials"]}
    assert mats["silica"]["mass_g"] == 90.37  # the stable reading, not the unstable one
    assert mats["sand"]["mass_g"] == 8.12
    kinds = sorted((g["kind"], g["item"]) for g in side["gaps"])
    assert kinds == [("unassigned_reading", "heptane"), ("unassigned_reading", "spatula"),
                     ("unstable_reading", "sand")]  # fmt: skip


def test_reading_far_from_the_entry_date_is_flagged(notebook):
    _entry(
        notebook,
        "tab_separated.tsv",
        """
        date: 2026-11-20
        product: {name: p, mass: 1.00 g}
        materials: [{name: MgSO4, amount: 3 g}, {name: benzylamine, amount: 1 g}]
        """,
    )
    notebook.scan()
    flagged = [
        g["item"]
        for g in notebook.sidecar("lab/e.md")["gaps"]
        if g["kind"] == "balance_reading_date"
    ]
    assert flagged == ["MgSO4", "benzylamine", "product"]


@pytest.mark.parametrize(
    "ref", ["../../outside.csv", "/etc/passwd", "C:\\\\logs\\\\a.csv", "missing.csv"]
)
def test_log_paths_stay_inside_the_notebook(notebook, tmp_path, ref):
    (tmp_path / "outside.csv").write_text("ID,Net,Unit\nx,1,g\n")
    notebook.write("lab/e.md", entry_md(f"balance_log: '{ref}'\nproduct: {{name: p, mass: 1 g}}"))
    notebook.scan()
    side = notebook.sidecar("lab/e.md")
    (gap,) = [g for g in side["gaps"] if g["kind"].startswith("balance_log")]
    assert gap["severity"] == "major" and ref in gap["message"]
    expected = "balance_log_unreadable" if ref == "missing.csv" else "balance_log_refused"
    assert gap["kind"] == expected


def test_a_symlink_out_of_the_notebook_is_refused(notebook, tmp_path):
    (tmp_path / "outside.csv").write_text("ID,Net,Unit\nx,1,g\n")
    (notebook.root / "lab").mkdir()
    os.symlink(tmp_path / "outside.csv", notebook.root / "lab" / "link.csv")
    notebook.write("lab/e.md", entry_md("balance_log: link.csv\nproduct: {name: p, mass: 1 g}"))
    notebook.scan()
    kinds = [g["kind"] for g in notebook.sidecar("lab/e.md")["gaps"]]
    assert "balance_log_refused" in kinds


def test_an_unreadable_log_is_a_gap_naming_file_and_line_and_the_entry_still_computes(notebook):
    _entry(
        notebook,
        "no_unit.csv",
        """
        product: {name: p, mass: 1.00 g}
        materials: [{name: A, amount: 3 g}]
        """,
    )
    notebook.scan()
    side = notebook.sidecar("lab/e.md")
    (gap,) = side["gaps"]
    assert gap["kind"] == "balance_log_unreadable" and "(line 2)" in gap["message"]
    assert side["metrics"]["e_factor"] == 2.0


def test_a_changed_log_changes_the_result(notebook):
    path = _entry(
        notebook,
        "tab_separated.tsv",
        """
        product: {name: p, mass: 1.00 g}
        materials: [{name: MgSO4, amount: 3 g}]
        """,
    )
    notebook.scan()
    log = path.parent / "logs" / "bal.csv"
    assert notebook.sidecar("lab/e.md")["materials"][0]["mass_g"] == 3.012
    log.write_text(log.read_text().replace("3.012", "3.500"))
    notebook.scan()
    assert notebook.sidecar("lab/e.md")["materials"][0]["mass_g"] == 3.5


def test_a_lab_plugin_reads_its_own_balance_format(notebook):
    """masstrail_read_balance_log: a lab's balance with its own format."""
    from capture.hookspecs import hookimpl
    from capture.models import BalanceReading
    from capture.notebook import Notebook
    from capture.scan import scan

    class PrinterTape:
        @hookimpl(tryfirst=True)
        def masstrail_read_balance_log(self, data, relpath):
            if not data.startswith(b"TAPE"):
                return None
            return [BalanceReading(file=relpath, line=n, label=lab, mass_g=float(val), as_written=val)
                    for n, (lab, val) in enumerate((ln.split("=") for ln in
                                                    data.decode().split("\n")[1:] if ln), 2)]  # fmt: skip

    (notebook.root / "t.tape").write_text("TAPE\nA=2.25\n")
    notebook.write("e.md", entry_md("balance_log: t.tape\nproduct: {name: p, mass: 1 g}\n"
                                    "materials: [{name: A, amount: 2 g}]"))  # fmt: skip
    nb = Notebook.open(notebook.root)
    nb.pm.register(PrinterTape(), name="tape")
    (result,) = scan(nb).results
    assert result.materials[0].mass_g == 2.25


TEACHING_TEXT = """
4-Aminophenol (weighed on the balance) was suspended in water (10 mL) and acetic anhydride
(4.0 mL) was added. The warm solution was filtered through a pad of Celite and dried over
MgSO4, then cooled in ice; the solid was collected on a pre-weighed filter paper (filter
paper 1) and dried.
"""


def test_readings_become_the_inputs_the_entry_mentions_without_an_amount(notebook):
    """The balance is the original record: a reading whose label names a material the text
    mentions with no amount (4-aminophenol), or a consumable the text uses (the Celite pad,
    the filter paper, MgSO4 weighed by difference), is that input, with the stage of its
    mention and the reading as its basis; no gap asks to weigh what the log weighed."""
    _entry(notebook, "mentioned_without_amount.csv", """
        date: 2026-11-18
        product: {name: 4-acetamidophenol}
        """, TEACHING_TEXT)  # fmt: skip
    notebook.scan()
    side = notebook.sidecar("lab/e.md")
    mats = {m["name"]: m for m in side["materials"]}
    assert mats["4-Aminophenol"]["mass_g"] == 3.276 and mats["4-Aminophenol"]["stage"] == "reaction"
    assert mats["filter paper"]["mass_g"] == 0.612  # the reading 'filter paper 1'
    assert mats["filter paper"]["category"] == "filter medium"
    assert mats["Celite"]["mass_g"] == 6.12 and mats["Celite"]["stage"] != "reaction"
    assert mats["MgSO4"]["mass_g"] == pytest.approx(2.034)
    assert mats["MgSO4"]["basis"].startswith("weighed by difference: 12.904 g − 10.87 g")
    assert mats["Celite"]["basis"] == ("balance reading lab/logs/bal.csv line 4, "
                                       "2026-11-18T14:07:03: Celite = 6.12 g")  # fmt: skip
    assert side["product"]["mass_g"] == 3.402
    kinds = {(g["kind"], g["item"]) for g in side["gaps"]}
    assert not {k for k in kinds if k[0] == "unassigned_reading"}, kinds
    assert not {k for k in kinds if k[0] in {"filter_medium", "drying_agent"}}, kinds
    assert all(r["assigned_to"] for r in side["readings"])


def test_a_reading_the_entry_does_not_mention_stays_unassigned(notebook):
    _entry(notebook, "mentioned_without_amount.csv", """
        date: 2026-11-18
        product: {name: 4-acetamidophenol}
        """, "4-Aminophenol was suspended in water (10 mL) and heated.")  # fmt: skip
    notebook.scan()
    side = notebook.sidecar("lab/e.md")
    unassigned = sorted(g["item"] for g in side["gaps"] if g["kind"] == "unassigned_reading")
    assert unassigned == ["Celite", "MgSO4 after", "MgSO4 before", "filter paper 1"]
    assert {m["name"] for m in side["materials"]} >= {"4-Aminophenol"}


def test_quoted_decimal_commas_in_a_comma_separated_file():
    """'"2,1209"' in a comma-separated export is 2.1209 g, not 21,209 g; '"1,234,5"' cannot be
    read one way only, so it is refused with the file and line."""
    got = _read("quoted_decimal_comma.csv")
    assert [(r.line, r.label, r.mass_g) for r in got] == [
        (2, "benzil", 2.1209), (3, "thiourea", 0.7615), (4, "product", 2.3111),
        (5, "ethanol", None)]  # fmt: skip


@pytest.mark.parametrize(
    ("typed", "severity", "words"),
    [("30.1 g", "major", "a factor of 10 apart"), ("3.30 g", "minor", "8.7% apart"),
     ("3.05 g", None, None)],
)  # fmt: skip
def test_a_typed_mass_far_from_the_balance_is_named(notebook, typed, severity, words):
    """The balance (MgSO4 3.012 g) wins; a typed mass a factor of ten off, or more than 5 %
    off, is a gap naming both; within 5 % it is not."""
    _entry(notebook, "tab_separated.tsv", f"""
        date: 2026-11-03
        product: {{name: amide, mass: 2.41 g}}
        materials:
          - {{name: MgSO4, amount: {typed}}}
          - {{name: acid, amount: 1.90 g, role: limiting reagent}}
        """)  # fmt: skip
    notebook.scan()
    side = notebook.sidecar("lab/e.md")
    assert {m["name"]: m["mass_g"] for m in side["materials"]}["MgSO4"] == 3.012
    found = [g for g in side["gaps"] if g["kind"] == "balance_disagrees"]
    if severity is None:
        assert not found
        return
    (gap,) = found
    assert gap["severity"] == severity and gap["item"] == "MgSO4"
    assert (
        f"the balance gives 3.012 g for MgSO4 and the entry says {typed}: {words}" in gap["message"]
    )


def test_a_product_typed_a_thousand_times_off_is_named(notebook):
    _entry(notebook, "tab_separated.tsv", """
        date: 2026-11-03
        product: {name: amide, mass: 2410 mg}
        materials: [{name: acid, amount: 1.90 g, role: limiting reagent}]
        """)  # fmt: skip
    notebook.scan()
    side = notebook.sidecar("lab/e.md")
    assert side["product"]["mass_g"] == 2.4107
    assert not [g for g in side["gaps"] if g["kind"] == "balance_disagrees"]  # 2410 mg = 2.41 g
    _entry(notebook, "tab_separated.tsv", """
        date: 2026-11-03
        product: {name: amide, mass: 2410 g}
        materials: [{name: acid, amount: 1.90 g, role: limiting reagent}]
        """)  # fmt: skip
    notebook.scan()
    (gap,) = [g for g in notebook.sidecar("lab/e.md")["gaps"] if g["kind"] == "balance_disagrees"]
    assert gap["severity"] == "major" and "a factor of 1000 apart" in gap["message"]
