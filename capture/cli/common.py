"""What the commands share: the command group, exit codes, opening a notebook, formatting.

Heavy imports happen inside the commands, so that ``masstrail --help`` is quick.
"""

from __future__ import annotations

import sys
from pathlib import Path

import click

from capture import __version__

EXIT_FINDINGS = 1
EXIT_USAGE = 2
TABLE_ROWS = 200  # above this many entries, the scan table lists only those needing action


# the module of capture.cli that defines each command: it is imported when its command is
# asked for, so one command's start-up does not pay for the others' (``show`` of a current
# sidecar is about as quick as importing pydantic); a test holds this table to the modules
COMMAND_MODULES = {
    "scan": "scan", "show": "show", "watch": "watch", "gaps": "gaps", "audit": "gaps",
    "report": "report", "export": "report", "route": "route", "import": "ord",
    "plugins": "plugins", "schema": "plugins", "rebuild": "store", "backup": "store",
    "history": "store", "store": "shared",
}  # fmt: skip


class _Commands(click.Group):
    """The command group, each command's module imported on first use."""

    def list_commands(self, ctx: click.Context) -> list[str]:
        for name in COMMAND_MODULES:
            self.get_command(ctx, name)
        return super().list_commands(ctx)

    def get_command(self, ctx: click.Context, name: str) -> click.Command | None:
        if name not in self.commands and name in COMMAND_MODULES:
            import importlib

            importlib.import_module(f"capture.cli.{COMMAND_MODULES[name]}")
        return super().get_command(ctx, name)


@click.group(cls=_Commands, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="masstrail")
def cli() -> None:
    """masstrail: waste records and mass metrics (E-factor, PMI) next to each notebook entry."""


def fail(message: str) -> None:
    """Say what is wrong and exit 2 (usage or configuration)."""
    click.echo(f"masstrail: {message}", err=True)
    sys.exit(EXIT_USAGE)


def open_notebook(path: Path):
    """The notebook at ``path``; configuration and plugin errors exit 2 with their message."""
    from capture.config import ConfigError
    from capture.notebook import Notebook
    from capture.plugin_manager import PluginError

    try:
        return Notebook.open(path)
    except ConfigError as exc:
        fail(f"configuration error:\n{exc}")
    except PluginError as exc:
        fail(str(exc))


def notebook_of(entry: Path):
    """The notebook an entry belongs to (:func:`capture.paths.notebook_root`)."""
    from capture.paths import notebook_root

    return open_notebook(notebook_root(entry))


def num(x: float | None, spec: str = ".3g") -> str:
    """A figure for a table: '—' for none, thousands separated above 1000 (the report's own
    rule: :func:`capture.views.figures.figure_text`)."""
    from capture.views.figures import figure_text

    return figure_text(x, spec)


def percent(x: float | None) -> str:
    """A 0–1 fraction as a percentage with one decimal, or '—' when it is not given."""
    return "—" if x is None else f"{x * 100:.1f}%"


def esc(text: str) -> str:
    """Text from entries and plugins, escaped so rich shows [brackets] as written."""
    from rich.markup import escape

    return escape(text)


def console():
    from rich.console import Console

    return Console(highlight=False, emoji=False)  # ":fire:" in an entry stays as written


def entry_filters(fn):
    """The entry filters that gaps and report share: --author, --group, --project, --since,
    --until."""
    for option in reversed((
        click.option("--author", help="Only entries by this author."),
        click.option("--group", "group_", help="Only entries of this group."),
        click.option("--project", help="Only entries of this project."),
        click.option("--since", help="Only entries dated on or after YYYY-MM-DD."),
        click.option("--until", help="Only entries dated on or before YYYY-MM-DD."),
    )):  # fmt: skip
        fn = option(fn)
    return fn


def gap_filter(author, group_, project, since, until, severity: str = "minor"):
    """The filter the entry-filter options describe."""
    from capture.views.filters import GapFilter

    return GapFilter(author=author, group=group_, project=project, severity=severity,
                     since=_date(since, "--since"), until=_date(until, "--until"))  # fmt: skip


def _date(value: str | None, option: str):
    import datetime as dt

    if value is None:
        return None
    try:
        return dt.date.fromisoformat(value)
    except ValueError:
        raise click.BadParameter(
            f"{value!r} is not a date; write YYYY-MM-DD", param_hint=option
        ) from None


def jobs_option(fn):
    """--jobs, for the commands that scan (0: :func:`capture.scan.default_jobs`)."""
    return click.option(
        "--jobs", type=click.IntRange(min=0), default=0, show_default=True,
        help="Worker processes for the computing (0: one per core and one more, as each waits "
        "for its writes part of the time; at most 8; 1: none). The results are the same "
        "either way.")(fn)  # fmt: skip
