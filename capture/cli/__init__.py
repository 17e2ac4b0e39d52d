"""The ``masstrail`` command: thin commands over the library, one module per job.

Each command parses its options, calls one library function and formats the answer;
a domain error becomes a message and an exit code: 0 when the job ran (gaps are findings,
not failures), 1 when ``--fail-on`` (or ``gaps``) found such gaps, 2 for usage or
configuration errors. The library never imports this package.
"""

from capture.cli.common import cli

__all__ = ["cli", "main"]  # each command's module is imported when it is asked for


def main() -> None:
    """Entry point of the ``masstrail`` command."""
    cli()
