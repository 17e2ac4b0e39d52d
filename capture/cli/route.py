"""``masstrail route ENTRY``: the cumulative figures of the route that ends in an entry."""

from __future__ import annotations

from pathlib import Path

import click

from capture.cli.common import cli, console, esc, fail, notebook_of, num


@cli.command()
@click.argument("entry", type=click.Path(exists=True, dir_okay=False, path_type=Path))
@click.option("--json", "as_json", is_flag=True, help="Print the route as JSON.")
def route(entry: Path, as_json: bool) -> None:
    """The cumulative PMI and E-factor of the route that ends in ENTRY.

    Steps are the entries ENTRY uses (front matter 'uses', or a material named like
    another entry's product), linear or convergent, each weighted by the mass of its
    product needed per gram of the final product. Nothing is written.
    """
    from rich.table import Table

    from capture.run import CAUTION
    from capture.views.routes import RouteError, route_for

    try:
        rt = route_for(notebook_of(entry), entry)
    except RouteError as exc:
        fail(str(exc))
    if as_json:
        click.echo(rt.model_dump_json(indent=2))
        return
    t = Table(title=f"route to {rt.final}" + (" (convergent)" if rt.convergent else ""),
              title_justify="left")  # fmt: skip
    for col in ("step", "uses", "product g", "PMI", "E", "g per g final", "PMI share", "E share"):
        t.add_column(col, justify="left" if col in {"step", "uses"} else "right")
    for s in rt.steps:
        t.add_row(esc(s.id), esc(", ".join(s.uses) or "—"), num(s.product_g, ".4g"), num(s.pmi),
                  num(s.e_factor), num(s.scale, ".4g"), num(s.pmi_contribution),
                  num(s.e_contribution))  # fmt: skip
    out = console()
    out.print(t)
    for s in rt.steps:
        if s.stale_since:
            out.print(f"[yellow]{esc(s.id)} could not be read since {esc(s.stale_since[:16])}: "
                      f"its last good figures are used ({esc(s.path)}).[/yellow]")  # fmt: skip
    out.print(f"Route PMI {num(rt.pmi)}, E-factor {num(rt.e_factor)} (step figures added, "
              "weighted by the mass each step's product contributes).")  # fmt: skip
    out.print(f"[dim]{esc(CAUTION)}[/dim]")
