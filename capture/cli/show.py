"""``masstrail show ENTRY``: one entry's materials, masses and their basis, gaps and figures."""

from __future__ import annotations

from pathlib import Path

import click

from capture.cli.common import cli, console, esc, notebook_of, num, percent


@cli.command()
@click.argument("entry", type=click.Path(exists=True, dir_okay=False, path_type=Path))
@click.option("--json", "as_json", is_flag=True, help="Print the full result as JSON.")
def show(entry: Path, as_json: bool) -> None:
    """Show one entry: materials with masses and their basis, gaps and metrics.

    The notebook root is the nearest folder above ENTRY that holds a
    masstrail.toml, else the entry's own folder. Nothing is written.
    """
    nb = notebook_of(entry)
    r = nb.process(entry.resolve(), write=False)
    if as_json:
        click.echo(r.sidecar_json(), nl=False)
        return
    out = console()
    title = r.meta.get("title") or r.entry.id
    out.print(f"[bold]{esc(title)}[/bold]  ({esc(r.entry.path)})")
    if r.status == "error":
        where = f" ({r.error.location})" if r.error.location else ""
        out.print(f"[red]This entry could not be read{esc(where)}:[/red] {esc(r.error.message)}")
    else:
        _materials(out, r)
        _set_aside(out, r)
        _gaps(out, r)
        _figures(out, r)
    out.print(f"[dim]{esc(r.caution)}[/dim]")


def _materials(out, r) -> None:
    from rich.table import Table

    out.print(f"Product: {esc(r.product.name or '—')}, {num(r.product.mass_g, '.4g')} g"
              + (f"  [dim]({esc(r.product.basis)})[/dim]" if r.product.basis else ""))  # fmt: skip
    t = Table(title="Materials", title_justify="left")
    for col in ("material", "stage", "stated", "mass g", "basis"):
        t.add_column(col, overflow="fold", justify="right" if col == "mass g" else "left")
    for m in r.materials:
        alias = m.resolved and m.resolved.casefold() != m.name.casefold()
        t.add_row(
            esc(m.name) + (f" [dim]= {esc(m.resolved)}[/dim]" if alias else ""),
            m.stage or "—",
            esc(m.stated or "—"),
            num(m.mass_g, ".4g"),
            esc(m.basis) if m.basis else f"[yellow]{esc(m.problem or '')}[/yellow]",
        )
    out.print(t)
    for rec in r.recovered:
        out.print(f"Recovered: {esc(rec.name)}, {num(rec.mass_g, '.4g')} g "
                  f"({esc(rec.basis or rec.problem or '')})")  # fmt: skip


def _set_aside(out, r) -> None:
    """The quantities that are not inputs: unread ones first (each is also a gap)."""
    unread = [m for m in r.set_aside if m.role == "unread"]
    if unread:
        out.print("[bold]Quantities not read[/bold] (not in the figures; each is a gap below)")
        for m in unread:
            out.print(f"  [yellow]{esc(m.stated or m.name)}[/yellow] in: {esc(m.evidence or '')}")
    others = [m for m in r.set_aside if m.role != "unread"]
    if others:
        said = "; ".join(f"{esc(m.name)} {esc(m.stated or '')} ({m.role})" for m in others)
        out.print(f"[dim]Not inputs: {said}[/dim]")


def _gaps(out, r) -> None:
    if not r.gaps:
        out.print("No record gaps found.")
        return
    out.print("[bold]Missing or doubtful records[/bold]")
    colour = {"blocking": "red", "major": "yellow", "minor": "dim"}
    for g in r.gaps:
        c = colour[g.severity]
        size = f" [dim](about {num(g.allowance_g)} g, assumed)[/dim]" if g.allowance_g else ""
        out.print(f"  [{c}]{g.severity}[/{c}] {esc(g.item)}: {esc(g.message)}{size}")


def _figures(out, r) -> None:
    m = r.metrics
    out.print(
        f"E-factor {num(m.e_factor)} (simple {num(m.e_factor_simple)}, with allowances "
        f"{num(m.e_factor_estimated)}), PMI {num(m.pmi)}, completeness "
        f"{percent(m.completeness)}"
    )
    if r.totals:
        t = r.totals
        out.print(f"Inputs {num(t.inputs_g, '.4g')} g (water {num(t.water_g, '.4g')} g), "
                  f"recovered {num(t.recovered_g, '.4g')} g, "
                  f"waste {num(t.waste_g, '.4g')} g")  # fmt: skip
    if m.atom_economy is not None or m.yield_ is not None:
        out.print(f"Atom economy {num(m.atom_economy)}, yield {num(m.yield_)} (theoretical "
                  f"{num(m.theoretical_yield_g, '.4g')} g), RME {num(m.rme)}, carbon efficiency "
                  f"{num(m.carbon_efficiency)}")  # fmt: skip
    for key in ("equation", "rme_factors"):
        if key in r.context:
            out.print(f"[dim]{esc(r.context[key])}[/dim]")
    if r.waste and r.waste.streams:
        streams = ", ".join(f"{k} {num(v, '.4g')} g" for k, v in r.waste.streams.items() if v)
        out.print(f"Waste by stream: {esc(streams)}")
        if r.waste.summary:
            out.print(f"Solvent ranks: {esc(r.waste.summary)}")
        if m.hazard_weighted_e is not None:
            out.print(f"Hazard-weighted E-factor {num(m.hazard_weighted_e)} [dim](rank weights "
                      "are masstrail's convention; a screening aid, not a risk "
                      "assessment)[/dim]")  # fmt: skip
    for key in ("mass_balance", "simple_mass_balance", "lower_bound", "completeness"):
        if key in r.context:
            out.print(f"[yellow]{esc(r.context[key])}[/yellow]")
    if r.breakdown and r.breakdown.largest:
        out.print(f"Largest input: {esc(r.breakdown.largest)}")
    if "sector" in r.context:
        out.print(f"[dim]{esc(r.context['sector'])}[/dim]")
