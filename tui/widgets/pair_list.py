"""The scored pairs inside a cluster, weakest first; the pair cursor picks whose evidence shows."""

from __future__ import annotations

from rich.text import Text
from textual.widgets import Static

from tui.widgets.histogram import fmt_prob
from tui.widgets.text_table import text_table

TYPE_STYLE = {"same_person": "#6cc4b4", "review": "bold #e8b04b", "household": "#8fb8de",
              "shared_identity": "bold #f07c6c", "none": "dim"}


class PairList(Static):
    """Record A, record B, match probability and link type of each pair."""

    def __init__(self, **kwargs) -> None:
        super().__init__(**kwargs)
        self.pairs: list[dict] = []
        self.total = 0
        self.cursor = 0
        self.rows: list[list[str]] = []

    def show(self, pairs: list[dict], total: int) -> None:
        self.pairs, self.total, self.cursor = pairs, total, 0
        self.redraw()

    def redraw(self) -> None:
        rows = []
        for row in self.pairs:
            link = str(row.get("link_type") or "")
            rows.append([row["record_id_a"], row["record_id_b"], fmt_prob(float(row["prob"])),
                         Text(link.replace("_", " "), style=TYPE_STYLE.get(link, ""))])
        if self.total > len(self.pairs):
            rows.append([Text(f"{self.total - len(self.pairs)} more", style="dim"), "", "", ""])
        self.rows = [[c.plain if isinstance(c, Text) else str(c) for c in r] for r in rows]
        if not rows:
            self.update(Text("No scored pairs inside this item.", style="dim"))
            return
        self.update(text_table(["A", "B", "prob", "link"], rows,
                               cursor_row=self.cursor if self.pairs else None).text)

    def move(self, delta: int) -> dict | None:
        """Move the pair cursor; returns the pair now selected."""
        if not self.pairs:
            return None
        self.cursor = min(max(self.cursor + delta, 0), len(self.pairs) - 1)
        self.redraw()
        return self.pair_at(self.cursor)

    def pair_at(self, row: int) -> dict | None:
        """The pair on a row (None past the end or with no pairs)."""
        if 0 <= row < len(self.pairs):
            return self.pairs[row]
        return None
