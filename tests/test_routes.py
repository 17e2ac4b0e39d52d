"""Routes: cumulative PMI and E-factor over steps that use each other's products."""

from __future__ import annotations

import pytest
from click.testing import CliRunner

from capture.cli import cli
from capture.notebook import Notebook
from capture.scan import scan
from capture.views.routes import RouteError, build_route

from helpers import entry_md


def _step(notebook, name, front):
    notebook.write(f"{name}.md", entry_md(front))


def test_field_check_linear_route_pmi_is_19(notebook):
    # FIELD.md [D]: step 1 takes 10 kg and gives 1 kg; step 2 takes that 1 kg + 9 kg fresh
    # and gives 1 kg. PMI_1 = PMI_2 = 10 but PMI_route = 19 (not 100).
    _step(
        notebook,
        "s1",
        "id: S1\nproduct: {name: int-1, mass: 1 kg}\nmaterials: [{name: feed, amount: 10 kg}]",
    )
    _step(notebook, "s2", "id: S2\nproduct: {name: final, mass: 1 kg}\n"
                          "materials: [{name: int-1, amount: 1 kg}, {name: fresh, amount: 9 kg}]")  # fmt: skip
    rt = build_route(scan(Notebook.open(notebook.root), write=False).results, "S2")
    assert [s.id for s in rt.steps] == ["S1", "S2"]
    assert [s.pmi for s in rt.steps] == [10.0, 10.0]
    assert rt.pmi == pytest.approx(19.0) and rt.e_factor == pytest.approx(18.0)


def test_hand_computed_convergent_three_step_route(notebook):
    # invented data: A makes 5 g of int-A from 50 g; B makes 4 g of int-B from 30 g;
    # C uses 4 g int-A + 3 g int-B + 20 g fresh and makes 6 g.
    # scale: C 1, A 4/6, B 3/6. PMI = (4/6)(50/5) + (3/6)(30/4) + 20/6 = 13.75
    # E = (4/6)(45/5) + (3/6)(26/4) + (27 − 6)/6 = 12.75
    _step(
        notebook,
        "a",
        "id: A\nproduct: {name: int-A, mass: 5 g}\nmaterials: [{name: a-feed, amount: 50 g}]",
    )
    _step(
        notebook,
        "b",
        "id: B\nproduct: {name: int-B, mass: 4 g}\nmaterials: [{name: b-feed, amount: 30 g}]",
    )
    _step(notebook, "c", "id: C\nuses: [A, B]\nproduct: {name: target, mass: 6 g}\nmaterials:\n"
          "  - {name: int-A, amount: 4 g}\n  - {name: int-B, amount: 3 g}\n"
          "  - {name: c-feed, amount: 20 g}")  # fmt: skip
    rt = build_route(scan(Notebook.open(notebook.root), write=False).results, "C")
    assert rt.convergent
    shares = {s.id: (s.scale, s.pmi_contribution, s.e_contribution) for s in rt.steps}
    assert shares["A"] == (
        pytest.approx(4 / 6),
        pytest.approx(6.6667, abs=1e-4),
        pytest.approx(6.0, abs=1e-4),
    )
    assert shares["B"] == (pytest.approx(0.5), pytest.approx(3.75), pytest.approx(3.25))
    assert rt.pmi == pytest.approx(13.75, abs=1e-3) and rt.e_factor == pytest.approx(
        12.75, abs=1e-3
    )


def test_route_errors_say_which_step(notebook):
    _step(
        notebook,
        "s1",
        "id: S1\nproduct: {name: int-1, mass: 1 g}\nmaterials: [{name: feed, amount: 10 g}]",
    )
    _step(notebook, "s2", "id: S2\nuses: [S1]\nproduct: {name: final, mass: 1 g}\n"
                          "materials: [{name: fresh, amount: 9 g}]")  # fmt: skip
    with pytest.raises(
        RouteError, match="S2 uses S1, but lists no material named like its product"
    ):
        build_route(scan(Notebook.open(notebook.root), write=False).results, "S2")


def test_route_command_on_the_example_route(tmp_path):
    from conftest import EXAMPLES

    res = CliRunner().invoke(cli, ["route", str(EXAMPLES / "pilot-bay" / "ARN7-step3-run01.yaml"),
                                   "--json"])  # fmt: skip
    assert res.exit_code == 0, res.output
    import json

    rt = json.loads(res.output)
    assert [s["id"] for s in rt["steps"]] == ["ARN7-S2-R03", "ARN7-S3-R01"]
    s2, s3 = rt["steps"]
    assert s2["scale"] == pytest.approx(1200 / 912, abs=1e-5)  # 1.20 kg used per 0.912 kg made
    assert rt["e_factor"] == pytest.approx(s2["scale"] * s2["e_factor"] + s3["e_factor"], abs=1e-3)


def test_an_unreadable_step_is_its_last_good_figures_marked_stale(notebook):
    """A step whose entry was read before and is broken now is not "not an entry": the
    route uses its last good figures from the store and says they are stale."""
    from capture.views.routes import route_for

    _step(notebook, "s1", "id: S1\nproduct: {name: int-1, mass: 1 kg}\n"
                          "materials: [{name: feed, amount: 10 kg}]")  # fmt: skip
    _step(notebook, "s2", "id: S2\nproduct: {name: final, mass: 1 kg}\n"
                          "materials: [{name: int-1, amount: 1 kg}, {name: fresh, amount: 9 kg}]")  # fmt: skip
    notebook.scan()  # the store now knows both
    s1 = notebook.root / "s1.md"
    s1.write_text(s1.read_text().replace("id: S1", "id: S1\ntitle: [unclosed"))
    notebook.scan()
    rt = route_for(Notebook.open(notebook.root), notebook.root / "s2.md")
    assert rt.pmi == pytest.approx(19.0)
    (stale,) = [s for s in rt.steps if s.stale_since]
    assert stale.id == "S1"
    res = CliRunner().invoke(cli, ["route", str(notebook.root / "s2.md")])
    assert res.exit_code == 0 and "S1 could not be read since" in res.output
    assert "its last good figures are used" in res.output
