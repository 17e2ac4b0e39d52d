"""``masstrail show ENTRY``: one entry's materials, masses and their basis, gaps and figures.

An entry whose sidecar is its current result (:mod:`capture.standing`) is shown from the
sidecar, without loading the plugins; any other is computed. Both are shown from the same
JSON, so they read the same.
"""

from __future__ import annotations

import os
from pathlib import Path

import click

from capture.cli.common import cli, console, esc, num, percent


@cli.command()
@click.argument("entry", type=click.Path(exists=True, dir_okay=False, path_type=Path))
@click.option("--json", "as_json", is_flag=True, help="Print the full result as JSON.")
@click.option("--recompute", is_flag=True,
              help="Compute the entry even when its sidecar is current.")  # fmt: skip
def show(entry: Path, as_json: bool, recompute: bool) -> None:
    """Show one entry: materials with masses and their basis, gaps and metrics.

    The notebook root is the nearest folder above ENTRY that holds a
    masstrail.toml, else the entry's own folder. When the entry's sidecar is
    current (the entry, its balance logs, the lab configuration and masstrail's
    set-up are unchanged since it was written), it is shown as written;
    otherwise the entry is computed now. Nothing is written.
    """
    from capture.paths import notebook_root, sidecar_path
    from capture.standing import current_sidecar

    root = notebook_root(entry)
    tracing = os.environ.get("MASSTRAIL_TRACE") or os.environ.get("MASSTRAIL_HOOK_LOG")
    found = None if recompute or tracing else current_sidecar(entry, root)
    if found is not None:
        text, r = found
        source = f"As written in {sidecar_path(entry).name}, which is current."
    else:
        text, r = _computed(entry, root)
        unsure = not recompute and sidecar_path(entry).exists()
        why = " (its sidecar could not be confirmed current)" if unsure else ""
        source = f"Computed now{why}; nothing written."
    if as_json:
        click.echo(text, nl=False)
        return
    out = console()
    title = r["meta"].get("title") or r["entry"]["id"]
    out.print(f"[bold]{esc(str(title))}[/bold]  ({esc(r['entry']['path'])})")
    if r["status"] == "error":
        e = r["error"]
        where = f" ({e['location']})" if e.get("location") else ""
        out.print(f"[red]This entry could not be read{esc(where)}:[/red] {esc(e['message'])}")
    else:
        _materials(out, r)
        _set_aside(out, r)
        _gaps(out, r)
        _figures(out, r)
    out.print(f"[dim]{esc(r['caution'])}[/dim]")
    out.print(f"[dim]{source}[/dim]")


def _computed(entry: Path, root: Path) -> tuple[str, dict]:
    """The entry's result computed now, as its sidecar text and that text's content."""
    import json

    from capture.cli.common import open_notebook

    text = open_notebook(root).process(entry.resolve(), write=False).sidecar_json()
    return text, json.loads(text)


def _materials(out, r: dict) -> None:
    from rich.table import Table

    p = r["product"]
    out.print(f"Product: {esc(p['name'] or '—')}, {num(p['mass_g'], '.4g')} g"
              + (f"  [dim]({esc(p['basis'])})[/dim]" if p["basis"] else ""))  # fmt: skip
    t = Table(title="Materials", title_justify="left")
    for col in ("material", "stage", "stated", "mass g", "basis"):
        t.add_column(col, overflow="fold", justify="right" if col == "mass g" else "left")
    for m in r["materials"]:
        name, resolved = m["name"], m["resolved"]
        alias = resolved and resolved.casefold() != name.casefold()
        t.add_row(
            esc(name) + (f" [dim]= {esc(resolved)}[/dim]" if alias else ""),
            m["stage"] or "—",
            esc(m["stated"] or "—"),
            num(m["mass_g"], ".4g"),
            esc(m["basis"]) if m["basis"] else f"[yellow]{esc(m['problem'] or '')}[/yellow]",
        )
    out.print(t)
    for rec in r["recovered"]:
        out.print(f"Recovered: {esc(rec['name'])}, {num(rec['mass_g'], '.4g')} g "
                  f"({esc(rec['basis'] or rec['problem'] or '')})")  # fmt: skip


_MENTION_NOTES = {"crude", "crop", "total"}  # what a product's mention is: said beside it


def _set_aside(out, r: dict) -> None:
    """The quantities that are not inputs: unread ones first (each is also a gap)."""
    unread = [m for m in r["set_aside"] if m["role"] == "unread"]
    if unread:
        out.print("[bold]Quantities not read[/bold] (not in the figures; each is a gap below)")
        for m in unread:
            out.print(f"  [yellow]{esc(m['stated'] or m['name'])}[/yellow] in: "
                      f"{esc(m['evidence'] or '')}")  # fmt: skip
    others = [m for m in r["set_aside"] if m["role"] != "unread"]
    if others:
        said = "; ".join(f"{esc(m['name'])} {esc(m['stated'] or '')} ({m['role']}"
                         + (f", {m['note']}" if m.get("note") in _MENTION_NOTES else "") + ")"
                         for m in others)  # fmt: skip
        out.print(f"[dim]Not inputs: {said}[/dim]")


def _gaps(out, r: dict) -> None:
    if not r["gaps"]:
        out.print("No record gaps found.")
        return
    out.print("[bold]Missing or doubtful records[/bold]")
    colour = {"blocking": "red", "major": "yellow", "minor": "dim"}
    for g in r["gaps"]:
        c = colour[g["severity"]]
        size = f" [dim](about {num(g['allowance_g'])} g, assumed)[/dim]" if g["allowance_g"] else ""
        out.print(f"  [{c}]{g['severity']}[/{c}] {esc(g['item'])}: {esc(g['message'])}{size}")


def _figures(out, r: dict) -> None:
    m, context = r["metrics"], r["context"]
    out.print(
        f"E-factor {num(m['e_factor'])} (simple {num(m['e_factor_simple'])}, with allowances "
        f"{num(m['e_factor_estimated'])}), PMI {num(m['pmi'])}, completeness "
        f"{percent(m['completeness'])}"
    )
    if t := r["totals"]:
        out.print(f"Inputs {num(t['inputs_g'], '.4g')} g (water {num(t['water_g'], '.4g')} g), "
                  f"recovered {num(t['recovered_g'], '.4g')} g, "
                  f"waste {num(t['waste_g'], '.4g')} g")  # fmt: skip
    if m["atom_economy"] is not None or m["yield"] is not None:
        out.print(f"Atom economy {num(m['atom_economy'])}, yield {num(m['yield'])} (theoretical "
                  f"{num(m['theoretical_yield_g'], '.4g')} g), RME {num(m['rme'])}, carbon "
                  f"efficiency {num(m['carbon_efficiency'])}")  # fmt: skip
    for key in ("equation", "rme_factors"):
        if key in context:
            out.print(f"[dim]{esc(context[key])}[/dim]")
    if (w := r["waste"]) and w["streams"]:
        streams = ", ".join(f"{k} {num(v, '.4g')} g" for k, v in w["streams"].items() if v)
        out.print(f"Waste by stream: {esc(streams)}")
        if w["summary"]:
            out.print(f"Solvent ranks: {esc(w['summary'])}")
        if m["hazard_weighted_e"] is not None:
            out.print(f"Hazard-weighted E-factor {num(m['hazard_weighted_e'])} [dim](rank weights "
                      "are masstrail's convention; a screening aid, not a risk "
                      "assessment)[/dim]")  # fmt: skip
    for key in ("mass_balance", "simple_mass_balance", "lower_bound", "completeness"):
        if key in context:
            out.print(f"[yellow]{esc(context[key])}[/yellow]")
    if (b := r["breakdown"]) and b["largest"]:
        out.print(f"Largest input: {esc(b['largest'])}")
    if "sector" in context:
        out.print(f"[dim]{esc(context['sector'])}[/dim]")
