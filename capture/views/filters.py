"""Which entries and gaps a view covers: the filters that gaps, report and export share."""

from __future__ import annotations

import datetime as dt
from typing import Literal

from pydantic import BaseModel

from capture.models import Result, Severity

GroupKey = Literal["author", "group", "project"]


class GapFilter(BaseModel):
    """Which entries and gaps a report covers; None means any."""

    author: str | None = None
    group: str | None = None
    project: str | None = None
    since: dt.date | None = None
    until: dt.date | None = None
    severity: Severity = "minor"

    def keeps(self, r: Result) -> bool:
        """True when the entry ``r`` belongs in the report."""
        return self.keeps_meta(r.meta)

    def keeps_meta(self, meta: dict) -> bool:
        """True when an entry with this ``meta`` (title, author, group, project, date)
        belongs in the report."""
        for key in ("author", "group", "project"):
            want = getattr(self, key)
            if want is not None and (meta.get(key) or "").casefold() != want.casefold():
                return False
        if self.since or self.until:
            if not meta.get("date"):
                return False
            day = dt.date.fromisoformat(meta["date"])
            if (self.since and day < self.since) or (self.until and day > self.until):
                return False
        return True


def markdown_text(value: object) -> object:
    """A value as plain text in Markdown: HTML in an entry (``<script>``, ``<img onerror=…>``)
    is shown, not run, by a Markdown viewer, and a ``|`` does not split a table cell."""
    if value is None or isinstance(value, (int, float)):
        return value
    text = str(value)
    return text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;").replace("|", "\\|")


def markdown_environment():
    """The Jinja2 environment of masstrail's Markdown outputs (cards, audit handouts): every
    value is written through :func:`markdown_text`."""
    import jinja2

    return jinja2.Environment(
        loader=jinja2.PackageLoader("capture", "templates"),
        autoescape=False,  # Markdown, not HTML: values are made safe by finalize
        finalize=markdown_text,
        keep_trailing_newline=True,
        trim_blocks=True,
        lstrip_blocks=True,
    )
