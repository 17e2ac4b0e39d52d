"""How a figure is written for people, shared by the terminal and the report (and light:
``masstrail show`` answers from a sidecar without loading masstrail's models)."""

from __future__ import annotations


def figure_text(x: float | None, spec: str = ".3g") -> str:
    """A figure as the terminal and the report show it: three significant figures, '—' for
    none, thousands separated from 1000 up (16,043 g, not 1.6e+04 g)."""
    if x is None:
        return "—"
    if abs(x) >= 1000:
        return f"{x:,.0f}"
    return format(x, spec)
