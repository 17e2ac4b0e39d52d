"""Charts for the HTML report: matplotlib figures inlined as SVG (text stays text; the same
data gives the same file)."""

from __future__ import annotations

import io


def _svg(fig) -> str:
    buf = io.StringIO()
    fig.savefig(buf, format="svg", bbox_inches="tight",
                metadata={"Creator": None, "Date": None, "Format": None, "Type": None})  # fmt: skip
    import matplotlib.pyplot as plt

    plt.close(fig)
    text = buf.getvalue()
    return text[text.index("<svg") :]  # drop the XML prolog and DOCTYPE: inline SVG


def _plain(labels: list[str]) -> list[str]:
    """Labels as plain text: matplotlib reads '$…$' as math and fails on what is not (a
    material named '$X$'), so every dollar sign is escaped."""
    return [str(x).replace("$", r"\$") for x in labels]


def bar_chart(labels: list[str], values: list[float], xlabel: str, width: float = 6.0) -> str:
    """A horizontal bar chart as inline SVG."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    plt.rcParams["svg.fonttype"] = "none"  # text stays text in the SVG
    plt.rcParams["svg.hashsalt"] = "masstrail"  # the same data gives the same file
    fig, ax = plt.subplots(figsize=(width, 0.35 * len(labels) + 0.8))
    ax.barh(_plain(labels)[::-1], values[::-1], color="#4a7a8c")
    ax.set_xlabel(xlabel)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    return _svg(fig)


class CardChart:
    """One matplotlib figure, redrawn for each card (building a figure costs more than
    drawing on it)."""

    def __init__(self) -> None:
        self.fig = None

    def draw(self, cats: dict[str, float]) -> str:
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt

        plt.rcParams["svg.fonttype"] = "none"
        plt.rcParams["svg.hashsalt"] = "masstrail"
        if self.fig is None:
            self.fig, self.ax = plt.subplots()
        ax = self.ax
        ax.clear()
        labels, values = _plain(list(cats)), list(cats.values())
        self.fig.set_size_inches(4.5, 0.35 * len(labels) + 0.8)
        ax.barh(labels[::-1], values[::-1], color="#4a7a8c")
        ax.set_xlabel("input mass, g")
        for side in ("top", "right"):
            ax.spines[side].set_visible(False)
        buf = io.StringIO()
        no_stamp = {"Creator": None, "Date": None, "Format": None, "Type": None}
        self.fig.savefig(buf, format="svg", bbox_inches="tight", metadata=no_stamp)
        text = buf.getvalue()
        return text[text.index("<svg") :]

    def close(self) -> None:
        if self.fig is not None:
            import matplotlib.pyplot as plt

            plt.close(self.fig)
