"""Notifications from the watcher: the built-in prints each new major or blocking gap."""

from __future__ import annotations

import sys

from capture.config import LabConfig
from capture.hookspecs import hookimpl
from capture.models import Gap, Result


@hookimpl(trylast=True, specname="masstrail_notify")
def print_new_gaps(result: Result, gaps: list[Gap], config: LabConfig) -> None:
    """Print the new gaps, so the chemist sees them while the flask is still on the bench."""
    for g in gaps:
        print(f"  ! {result.entry.path}: {g.severity} gap — {g.item}: {g.message}", file=sys.stdout,
              flush=True)  # fmt: skip
