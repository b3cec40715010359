"""A text histogram of match weights with the review and auto-merge thresholds marked."""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

from rich.text import Text
from textual.widgets import Static

if TYPE_CHECKING:
    from tui.retune import Histogram

BLOCKS = " ▁▂▃▄▅▆▇█"
HEIGHT = 10
BAR_STYLE = {0: "#6cc4b4", 1: "#e8b04b", 2: "#7d8fa0"}
MARK = {"review": "R", "auto": "A"}


class WeightHistogram(Static):
    """Columns of block characters, one per bin, on a log scale; markers underneath."""

    def show(self, hist: "Histogram | None", review_w: float, auto_w: float, active: str) -> None:
        import numpy as np

        text = Text(no_wrap=True)
        if hist is None or hist.counts.sum() == 0:
            text.append("No scored pairs in this run.")
            self.update(text)
            return
        counts = hist.counts
        scale = np.log10(counts + 1.0)
        top = float(scale.max()) or 1.0
        eighths = np.round(scale / top * HEIGHT * 8).astype(int)
        mids = (hist.edges[:-1] + hist.edges[1:]) / 2
        band = np.where(mids >= auto_w, 0, np.where(mids >= review_w, 1, 2))
        peak = int(counts.max())
        for row in range(HEIGHT, 0, -1):
            label = f"{peak:>9,} " if row == HEIGHT else ("        1 " if row == 1 else " " * 10)
            text.append(label, style="dim")
            for i, e in enumerate(eighths):
                fill = min(max(e - (row - 1) * 8, 0), 8)
                text.append(BLOCKS[fill], style=BAR_STYLE[int(band[i])])
            text.append("\n")
        text.append(" " * 10)
        marks = [" "] * len(counts)
        for name, w in (("review", review_w), ("auto", auto_w)):
            pos = int(np.clip(np.searchsorted(hist.edges, w, side="right") - 1, 0, len(counts) - 1))
            marks[pos] = MARK[name]
        for m in marks:
            style = "bold reverse" if m != " " and m == MARK[active] else "bold"
            text.append(m, style=style)
        text.append("\n" + " " * 10)
        axis = [" "] * len(counts)
        step = max(1, len(counts) // 6)
        for i in range(0, len(counts), step):
            label = f"{hist.edges[i]:.0f}"
            if i + len(label) <= len(axis):
                axis[i:i + len(label)] = list(label)
        text.append("".join(axis), style="dim")
        text.append("  bits\n", style="dim")
        if hist.below or hist.above:
            text.append(" " * 10 + f"outside the chart: {hist.below:,} below, {hist.above:,} above\n",
                        style="dim")
        text.append(" " * 10 + "bar height: pairs per bin, log scale", style="dim")
        self.update(text)


def fmt_prob(p: float) -> str:
    """A probability with enough digits to tell values near 0 or 1 apart."""
    if p >= 0.9999 and p < 1.0:
        return f"{p:.6f}"
    return f"{p:.4f}" if p >= 0.001 or p == 0 else f"{p:.1e}"


def fmt_weight(w: float) -> str:
    return "∞" if math.isinf(w) else f"{w:+.1f}"
