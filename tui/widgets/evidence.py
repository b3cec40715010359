"""The evidence behind one pair's score, field by field.

For the pair picked in the pair list: each compared field's level (what the comparison found,
in the words of the level catalogue), the match weight that level adds (in bits; positive
points to one person, negative to two) and the values compared on each side. The prior and
the total close the table, the total with its match probability.
"""

from __future__ import annotations

import math

from rich.text import Text
from textual.widgets import Static

from tui.widgets.text_table import text_table

FOR = "#6cc4b4"
AGAINST = "#f07c6c"
BAR_BITS = 2.0
MAX_BAR = 4
MAX_VALUE = 22


def weight_text(w: float) -> Text:
    """Signed weight with a short bar: a block per two bits, up to four."""
    if w is None or (isinstance(w, float) and math.isnan(w)):
        return Text("")
    n = min(MAX_BAR, int(round(abs(w) / BAR_BITS)))
    style = FOR if w > 0 else (AGAINST if w < 0 else "dim")
    return Text(f"{w:+6.1f} " + ("█" * n).ljust(MAX_BAR), style=style)


class EvidenceTable(Static):
    """Field, weight, level found and the two values compared, for one pair."""

    def __init__(self, **kwargs) -> None:
        super().__init__(**kwargs)
        self.rows: list[list[str]] = []

    def show(self, evidence: list[dict] | None, a: str = "A", b: str = "B") -> None:
        rows = []
        for row in evidence or []:
            closing = row["field"] in ("prior", "total")
            if row["field"] == "total":
                found = row["meaning"].replace("match probability", "p =")
            elif closing:
                found = ""
            else:
                found = str(row["level"]).replace("_", " ")
            rows.append([Text(row["field"], style="bold" if closing else ""), weight_text(row["weight"]),
                         Text(found), Text(str(row["value_a"])[:MAX_VALUE]),
                         Text(str(row["value_b"])[:MAX_VALUE])])
        self.rows = [[c.plain for c in r] for r in rows]
        self.header = ["field", "weight", "found", a, b]
        if not rows:
            self.update(Text("No scored pair to explain.", style="dim"))
            return
        self.update(text_table(self.header, rows, max_width=MAX_VALUE).text)
