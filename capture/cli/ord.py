"""``masstrail import FILE --to FOLDER``: Open Reaction Database records as notebook entries."""

from __future__ import annotations

from pathlib import Path

import click

from capture.cli.common import cli, fail, jobs_option


@cli.command(name="import")
@click.argument("source", type=click.Path(exists=True, dir_okay=False, path_type=Path))
@click.option(
    "--to",
    "folder",
    type=click.Path(file_okay=False, path_type=Path),
    required=True,
    help="The notebook folder to write the entries into (created if needed).",
)
@jobs_option
def import_(source: Path, folder: Path, jobs: int) -> None:
    """Write one entry per reaction of an ORD dataset (.pb, .pb.gz, .pbtxt or .json) into
    FOLDER, then scan FOLDER, so the data set gets E-factor, PMI and record gaps.

    Existing files are never overwritten; the command lists what it skipped.
    """
    from capture.interop.ord_in import import_ord
    from capture.interop.ord_out import OrdUnavailable

    try:
        done = import_ord(source, folder)
    except OrdUnavailable as exc:
        fail(str(exc))
    except Exception as exc:  # the library's own errors for a file it cannot parse
        fail(f"{source}: not an ORD dataset masstrail can read ({type(exc).__name__}: {exc})")
    click.echo(f"wrote {len(done.written)} entr{'y' if len(done.written) == 1 else 'ies'} "
               f"into {folder}; {len(done.skipped)} skipped")  # fmt: skip
    for name, why in done.skipped:
        click.echo(f"  {name}: {why}")
    from capture.cli.scan import scan

    click.get_current_context().invoke(scan, path=folder, as_json=False, fail_on=None,
                                       recompute=False, jobs=jobs)  # fmt: skip
