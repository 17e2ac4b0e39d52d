"""``masstrail watch PATH``: keep every entry's results current while chemists type."""

from __future__ import annotations

from pathlib import Path

import click

from capture.cli.common import cli, fail, open_notebook


@cli.command()
@click.argument("path", type=click.Path(exists=True, file_okay=False, path_type=Path))
@click.option(
    "--poll", is_flag=True, help="Poll the folder instead of using file events (network shares)."
)
@click.option(
    "--settle",
    type=float,
    default=0.05,
    show_default=True,
    help="Seconds without a new event before an entry is read.",
)
@click.option(
    "--rescan",
    type=float,
    default=60.0,
    show_default=True,
    help="Seconds between full rescans that catch lost events.",
)
def watch(path: Path, poll: bool, settle: float, rescan: float) -> None:
    """Keep every entry's results under PATH current while chemists type.

    Catches up first (a scan: entries whose text, balance logs or lab config changed
    since their results were written), then follows file events; prints a line per
    recomputation and every new major or blocking gap. One watcher per notebook;
    Ctrl-C stops it.
    """
    from capture.scan import default_jobs
    from capture.watch import WatchError
    from capture.watch import watch as run_watch

    nb_root = path.resolve()
    open_notebook(nb_root)  # configuration errors exit 2 before anything starts
    try:
        run_watch(nb_root, settle=settle, rescan=rescan, poll=poll, echo=click.echo,
                  jobs=default_jobs())  # fmt: skip
    except WatchError as exc:
        fail(str(exc))
