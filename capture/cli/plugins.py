"""``masstrail plugins`` and ``masstrail schema``: what is loaded, and the result's format."""

from __future__ import annotations

import json

import click

from capture.cli.common import cli, console, esc, fail


@cli.command()
@click.option("--json", "as_json", is_flag=True, help="Print the list as JSON.")
def plugins(as_json: bool) -> None:
    """List the loaded plugins and the hooks each one implements."""
    from capture.plugin_manager import PluginError, describe_plugins, get_plugin_manager

    try:
        rows = describe_plugins(get_plugin_manager())
    except PluginError as exc:
        fail(str(exc))
    if as_json:
        click.echo(json.dumps(rows, indent=2))
        return
    from rich.table import Table

    t = Table(title="masstrail plugins", title_justify="left")
    for col in ("name", "module", "from", "hooks"):
        t.add_column(col, overflow="fold")
    for row in rows:
        t.add_row(
            esc(str(row["name"])),
            esc(str(row["module"])),
            "built-in" if row["builtin"] else esc(str(row["distribution"] or "registered")),
            "\n".join(row["hooks"]),
        )
    console().print(t)


@cli.command()
def schema() -> None:
    """Print the JSON Schema of the result sidecar NAME.waste.json."""
    from capture.schema import result_schema_text

    click.echo(result_schema_text(), nl=False)
